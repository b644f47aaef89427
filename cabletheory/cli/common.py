"""Pieces shared by several commands: membrane and cable options, the truncation option.

JSON quantities, tables, atomic writing and the words that describe a cylinder live in
:mod:`cabletheory.output`, below both front ends."""

from __future__ import annotations

import argparse
import math
from typing import Any

from ..cable import Cylinder
from ..errors import InputError

# the output helpers live below both front ends (cabletheory.output); these names stay importable
# from here for the commands, so that one command line reads the same whichever module it imports
from ..output import dump_json, echo_cylinder, end_description, quantity, table, write_atomically
from ..units import parse_quantity

__all__ = ["DEFAULT_CM", "add_cable_options", "add_membrane_options", "add_truncation_option", "dump_json",
           "echo_cylinder", "end_description", "parse_end", "quantity", "read_cylinder", "read_membrane",
           "read_truncation", "read_truncation_voltage", "table", "whole_number", "write_atomically"]

# Cm ≈ 1 µF/cm² is common practice (Gentet, Stuart & Clements 2000 measured 0.9); Rm and Ri vary
# tenfold between cells, so they have no default.
DEFAULT_CM = "1 µF/cm²"


def add_membrane_options(group: argparse._ActionsContainer) -> None:
    """--Rm --Ri (required) and --Cm (default 1 µF/cm²): the membrane and cytoplasm, uniform."""
    group.add_argument("--Rm", required=True, metavar="R",
                       help="specific membrane resistance, uniform, e.g. '20 kΩ·cm²' or 20000")
    group.add_argument("--Ri", required=True, metavar="R", help="axial resistivity, e.g. '150 Ω·cm' or 150")
    group.add_argument("--Cm", default=DEFAULT_CM, metavar="C",
                       help=f"specific membrane capacitance (default {DEFAULT_CM})")


def read_membrane(args: argparse.Namespace) -> tuple[float, float, float]:
    """(Rm in Ω·m², Ri in Ω·m, Cm in F/m²) from the membrane options, each checked."""
    return (parse_quantity(args.Rm, "membrane_resistivity", "--Rm"),
            parse_quantity(args.Ri, "axial_resistivity", "--Ri"),
            parse_quantity(args.Cm, "membrane_capacitance", "--Cm"))


def add_cable_options(parser: argparse.ArgumentParser, *, length_required: bool = True,
                      diameter_required: bool = True) -> None:
    """--Rm --Ri --Cm --diameter --length --end, shared by every command about one cylinder."""
    group = parser.add_argument_group("cable (bare numbers: Ω·cm², Ω·cm, µF/cm², µm, nS)")
    add_membrane_options(group)
    group.add_argument("--diameter", required=diameter_required, metavar="D", help="cylinder diameter, e.g. 2um")
    group.add_argument("--length", required=length_required, metavar="LEN",
                       help="cylinder length, e.g. 500um; 'inf' for a semi-infinite cable")
    group.add_argument("--end", default="sealed", metavar="END",
                       help="far end: sealed, killed, or a conductance to rest such as 0.5nS (default sealed)")


def whole_number(low: int, high: int):
    """An argparse ``type`` accepting whole numbers from ``low`` to ``high`` with a one-line message
    (``choices=range(...)`` would list every allowed value)."""

    def convert(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
        if not low <= value <= high:
            raise argparse.ArgumentTypeError(f"{value} is not between {low} and {high}")
        return value

    return convert


def parse_end(text: str) -> float:
    """The ``--end`` option: 'sealed' -> 0, 'killed' -> inf, else a conductance in S (bare numbers in nS);
    the one far-end reader of :func:`cabletheory.inputs.read_end`."""
    from ..inputs import read_end

    return read_end(text, "--end")


def read_cylinder(args: argparse.Namespace) -> Cylinder:
    """Build the :class:`Cylinder` from parsed cable options (every value checked, in SI)."""
    membrane_resistivity, axial_resistivity, membrane_capacitance = read_membrane(args)
    return Cylinder(
        membrane_resistivity=membrane_resistivity,
        axial_resistivity=axial_resistivity,
        membrane_capacitance=membrane_capacitance,
        diameter=parse_quantity(args.diameter, "length", "--diameter"),
        length=parse_quantity(args.length, "length", "--length", allow_inf=True),
        end_conductance=parse_end(args.end),
    )


def add_truncation_option(group: argparse._ActionsContainer, default: str) -> None:
    """``--truncation``: the error allowed in the exact series, absolute or relative (one meaning in
    ``charge``, ``reference`` and ``compare``)."""
    group.add_argument("--truncation", default=default, metavar="ERR",
                       help="truncation error allowed in every exact value: a voltage such as '1e-9 mV' "
                            "(absolute), or a plain number or percentage such as 1e-10, relative to the "
                            "case's reference voltage (the final voltage at the stimulus site of a step of "
                            f"the same amplitude; the clamp step for a clamp) (default {default})")


def _truncation(text: str) -> tuple[float, bool]:
    """(value, relative): a plain number or a percentage is relative, anything else a voltage."""
    raw = text.strip()
    if raw.endswith("%"):
        return parse_quantity(raw[:-1], "dimensionless", "--truncation") / 100.0, True
    try:
        return float(raw), True
    except ValueError:
        return parse_quantity(raw, "voltage", "--truncation"), False


def read_truncation(text: str, case: Any) -> float:
    """The ``--truncation`` text as a fraction of the case's reference voltage, in (0, 1)."""
    value, relative = _truncation(text)
    if relative:
        if not (math.isfinite(value) and 0 < value < 1):
            raise InputError(f"--truncation: {text.strip()!r} must lie between 0 and 1 (or be a voltage such "
                             "as '1e-9 mV')")
        return value
    reference = case.reference_voltage
    if not reference > 0:
        raise InputError("--truncation: the case's reference voltage is 0; give a relative truncation such as 1e-10")
    return min(value / reference, 1e-2)


def read_truncation_voltage(text: str, case: Any) -> float:
    """The ``--truncation`` text as an absolute voltage bound (V)."""
    value, relative = _truncation(text)
    if not relative:
        return value
    return read_truncation(text, case) * case.reference_voltage
