"""``cabletheory demo``: the main jobs on bundled, invented data (the Tidewater Station scenario).

The Tidewater Station is an invented field lab that models the sensory interneurons of an
invented intertidal sea slug, *Lumenia vadosa*. Every number here is made up, chosen to sit in
realistic ranges. Each step prints the command it runs, so the tour doubles as a tutorial.
"""

from __future__ import annotations

import argparse
import os
import shlex
import tempfile
from importlib import resources

from .. import PASSIVE_CAVEAT


def _data(name: str) -> str:
    return str(resources.files("cabletheory") / "data" / name)


CELL = ["--Rm", "20 kΩ·cm²", "--Ri", "200 Ω·cm", "--Cm", "1 µF/cm²"]
DENDRITE = [*CELL, "--diameter", "2 µm", "--length", "500 µm", "--end", "sealed"]
RUN = [*DENDRITE, "--current", "100 pA", "--rest", "-62 mV", "--onset", "1 ms", "--pass-within", "20 uV"]


def steps(scratch: str | None = None) -> list[tuple[str, list[str]]]:
    """(story, argv) for each step of the tour; steps whose command is not built are skipped.
    Files the tour writes go to the folder ``scratch`` (default: the system's temporary folder)."""
    survey_table = os.path.join(scratch or tempfile.gettempdir(), "lumenia_survey.csv")
    return [
        ("A mantle-edge interneuron's main dendrite, 2 µm across and 500 µm long, sealed at its tip: "
         "how far does a steady signal from the soma reach, and what does it look like at 100 Hz?",
         ["cable", "--Rm", "20 kΩ·cm²", "--Ri", "200 Ω·cm", "--Cm", "1 µF/cm²", "--diameter", "2 µm",
          "--length", "500 µm", "--end", "sealed", "--frequency", "100 Hz", "--positions", "0:500:125 µm"]),
        ("The same dendrite with its 20 µm soma: after a 100 pA step at the soma, how fast do the soma and the "
         "dendrite's tip charge, and which time constants would peeling the soma's curve reveal?",
         ["charge", *DENDRITE, "--soma-diameter", "20 µm", "--current", "100 pA", "--times", "0:40:5 ms",
          "--positions", "0, 250, 500 µm", "--modes", "3"]),
        ("An experimenter who recorded only the soma's charging curve of that cell would peel τ0 = 20 ms, "
         "τ1 = 1.621 ms and C1/C0 = 0.0984 from it, and measure R_N = 504.8 MΩ. Does Rall's inverse problem "
         "give the cell back?",
         ["peel", "--tau0", "20 ms", "--tau1", "1.621 ms", "--c1-over-c0", "0.0984", "--input-resistance",
          "504.8 MΩ", "--Cm", "1 µF/cm²", "--Ri", "200 Ω·cm"]),
        ("A reconstructed wide-field interneuron (invented, type LW-1) grown to Rall's rules: does it collapse "
         "into one equivalent cylinder, and what is it?",
         ["tree", _data("morphologies/lumenia_lw1_conforming.swc"), "--Rm", "20 kΩ·cm²", "--Ri", "150 Ω·cm"]),
        ("A realistic-looking interneuron (invented, type PV-7): which branch points and tips stop it from "
         "being reduced, and what does the exact input resistance say?",
         ["tree", _data("morphologies/lumenia_pv7_interneuron.swc"), "--Rm", "20 kΩ·cm²", "--Ri", "150 Ω·cm"]),
        ("The station's archive holds 33 reconstructions from two tide pools, three of them damaged in transfer. "
         "Which cells could be reduced, and what would the reduction cost? One row per cell, in parallel:",
         ["survey", _data("archive"), "--Rm", "20 kΩ·cm²", "--Ri", "150 Ω·cm", "--output", survey_table,
          "--show", "3"]),
        ("The station's simulator charged the dendrite of step 1 with a 100 pA step on a coarse grid. Is it "
         "accurate to 20 µV? (A failing verdict is the expected answer here.)",
         ["compare", _data("runs/lumenia_coarse.csv"), *RUN]),
        ("The same simulation on a grid ten times finer in space and time:",
         ["compare", _data("runs/lumenia_refined.csv"), *RUN]),
    ]


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser("demo", help="a tour of the main jobs on bundled, invented data",
                                   description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from . import COMMANDS, main

    print("Tidewater Station demo: invented data about the sea slug Lumenia vadosa.")
    print(f"({PASSIVE_CAVEAT})")
    status = 0  # a failing verdict (status 1) is part of the story, not a failure of the demo
    with tempfile.TemporaryDirectory(prefix="cabletheory-demo-") as scratch:
        for number, (story, argv) in enumerate(steps(scratch), start=1):
            if argv[0] not in COMMANDS:
                continue
            print(f"\n=== step {number}: {story}\n$ cabletheory {shlex.join(argv)}\n", flush=True)
            step_status = main(argv)
            if step_status == 2:  # bad input: the bundled data or this tour is broken
                status = 2
    return status
