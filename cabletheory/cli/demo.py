"""``cabletheory demo``: the main jobs on bundled, invented data (the Tidewater Station scenario).

The Tidewater Station is an invented field lab that models the sensory interneurons of an
invented intertidal sea slug, *Lumenia vadosa*. Every number here is made up, chosen to sit in
realistic ranges. Each step prints the command it runs, so the tour doubles as a tutorial.
"""

from __future__ import annotations

import argparse
import shlex
from importlib import resources

from .. import PASSIVE_CAVEAT


def _data(name: str) -> str:
    return str(resources.files("cabletheory") / "data" / name)


def steps() -> list[tuple[str, list[str]]]:
    """(story, argv) for each step of the tour; steps whose command is not built are skipped."""
    return [
        ("A mantle-edge interneuron's main dendrite, 2 µm across and 500 µm long, sealed at its tip: "
         "how far does a steady signal from the soma reach, and what does it look like at 100 Hz?",
         ["cable", "--Rm", "20 kΩ·cm²", "--Ri", "200 Ω·cm", "--Cm", "1 µF/cm²", "--diameter", "2 µm",
          "--length", "500 µm", "--end", "sealed", "--frequency", "100 Hz", "--at", "0:500:125 µm"]),
    ]


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser("demo", help="a tour of the main jobs on bundled, invented data",
                                   description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from . import COMMANDS, main

    print("Tidewater Station demo: invented data about the sea slug Lumenia vadosa.")
    print(f"({PASSIVE_CAVEAT})")
    status = 0
    for number, (story, argv) in enumerate(steps(), start=1):
        if argv[0] not in COMMANDS:
            continue
        print(f"\n=== step {number}: {story}\n$ cabletheory {shlex.join(argv)}\n", flush=True)
        status = max(status, main(argv))
    return status
