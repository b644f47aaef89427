"""The case options shared by ``charge``, ``reference`` and ``compare``: cell, stimulus and sites.

One set of options, read by :func:`cabletheory.inputs.read_case` and checked by
:func:`cabletheory.case.build_case`, so that a command line written for one command means the same
to the others and to the terminal app: the cylinder (``--Rm --Ri --Cm --diameter --length
--end``), the cell (``--soma-diameter`` for a ball and stick, ``--infinite``, ``--length inf`` for
a semi-infinite cable) and the stimulus (``--shape``, ``--current`` or ``--voltage``,
``--duration``, ``--time-to-peak``, ``--stimulus-at``). Nothing here decides what a valid case is.
"""

from __future__ import annotations

import argparse

from ..case import STIMULUS_SHAPES, Case
from ..inputs import read_case
from .common import add_cable_options

# canonical case field -> the option that sets it (the label of every message about that field)
OPTIONS: dict[str, str] = {
    "cell": "--infinite",
    "membrane_resistivity": "--Rm",
    "axial_resistivity": "--Ri",
    "membrane_capacitance": "--Cm",
    "diameter": "--diameter",
    "length": "--length",
    "end": "--end",
    "soma_diameter": "--soma-diameter",
    "shape": "--shape",
    "current": "--current",
    "voltage": "--voltage",
    "duration": "--duration",
    "time_to_peak": "--time-to-peak",
    "stimulus_at": "--stimulus-at",
    "positions": "--positions",
}


def add_case_options(parser: argparse.ArgumentParser) -> None:
    """Cable, cell and stimulus options shared by ``charge``, ``reference`` and ``compare``.

    The stimulus amplitude (``--current`` or ``--voltage``) has no default, so a forgotten amplitude
    is an error rather than a silent 100 pA.
    """
    add_cable_options(parser, length_required=False, diameter_required=False)
    cell = parser.add_argument_group("cell (default: the cylinder above, its origin sealed)")
    cell.add_argument("--soma-diameter", metavar="D",
                      help="spherical soma at the origin (ball and stick), e.g. '20 um'; same Rm and Cm")
    cell.add_argument("--infinite", action="store_true",
                      help="infinite cable (no --length, --end or soma); positions may be negative")
    group = parser.add_argument_group("stimulus")
    group.add_argument("--shape", choices=list(STIMULUS_SHAPES), metavar="SHAPE",
                       help="step, pulse, alpha or clamp (default step; clamp when --voltage is given)")
    group.add_argument("--current", metavar="I",
                       help="current of a step or pulse, peak of an alpha current (bare: pA; required unless "
                            "--voltage)")
    group.add_argument("--voltage", metavar="V", help="voltage-clamp step from rest, e.g. '10 mV' (bare: mV)")
    group.add_argument("--duration", metavar="T", help="pulse duration, e.g. '0.5 ms' (bare: ms)")
    group.add_argument("--time-to-peak", metavar="T", help="time to peak of an alpha current, e.g. '1 ms'")
    group.add_argument("--stimulus-at", metavar="X",
                       help="where the stimulus is applied, from the origin, e.g. '200 um' (default 0: the "
                            "origin, or the soma of a ball and stick)")


def case_texts(args: argparse.Namespace, positions: str | None = None) -> dict[str, str | None]:
    """The texts of the case options, keyed by canonical field (None: not given)."""
    texts: dict[str, str | None] = {
        "cell": "infinite" if args.infinite else None,
        "membrane_resistivity": args.Rm,
        "axial_resistivity": args.Ri,
        "membrane_capacitance": args.Cm,
        "diameter": args.diameter,
        "length": args.length,
        "end": None if args.end is None else args.end,
        "soma_diameter": args.soma_diameter,
        "shape": args.shape,
        "current": args.current,
        "voltage": args.voltage,
        "duration": args.duration,
        "time_to_peak": args.time_to_peak,
        "stimulus_at": args.stimulus_at,
        "positions": positions,
    }
    if args.infinite and args.end == "sealed":  # the default far end means "not given"
        texts["end"] = None
    return texts


def read_case_options(args: argparse.Namespace, positions: str | None = None) -> Case:
    """The :class:`~cabletheory.case.Case` the options describe (``positions``: the text of the
    recording positions, when the command has them)."""
    return read_case(case_texts(args, positions), OPTIONS)
