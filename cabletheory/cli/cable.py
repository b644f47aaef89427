"""``cabletheory cable``: steady-state and sinusoidal closed forms for one uniform cylinder."""

from __future__ import annotations

import argparse
import dataclasses
import math

import numpy as np

from .. import PASSIVE_CAVEAT
from ..cable import CableSummary, Cylinder, summarise
from ..errors import InputError
from ..output import CYLINDER_LABELS, dump_json, echo_cylinder, input_resistance_label, quantity, table
from ..units import format_quantity, parse_quantity, parse_series
from .common import add_cable_options, read_cylinder, whole_number


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "cable",
        help="length constant, time constant, input resistance and impedance of one cylinder",
        description="Steady-state and sinusoidal closed forms for one uniform passive cylinder with input "
                    "at its origin (X = 0) and a sealed, killed or leaky far end.",
        epilog=PASSIVE_CAVEAT,
    )
    add_cable_options(parser, length_required=False)
    parser.add_argument("--vary", metavar="INPUT=VALUES",
                        help="tabulate the results over several values of one input, e.g. 'diameter=0.5, 1, 2, 4 um' "
                             f"or 'length=100:1000:100 um'; INPUT is one of {', '.join(VARIABLE)}")
    parser.add_argument("--frequency", metavar="F",
                        help="also give the impedance and the length constant at this frequency (bare: Hz)")
    parser.add_argument("--positions", metavar="POSITIONS",
                        help="distances from the origin for the voltage profile: a list '0, 100, 200 um' "
                             "or a range '0:500:50 um' (bare: µm)")
    parser.add_argument("--rule-fraction", default="0.1", metavar="FRACTION",
                        help="compartment advice (rule of thumb): longest compartment as a fraction of the "
                             "length constant at the rule frequency (default 0.1)")
    parser.add_argument("--rule-frequency", default="100 Hz", metavar="F",
                        help="compartment advice (rule of thumb): frequency whose length constant sets the "
                             "compartment size (default 100 Hz)")
    parser.add_argument("--digits", type=whole_number(2, 15), default=4, metavar="N",
                        help="significant digits in the human-readable output (default 4)")
    parser.add_argument("--json", action="store_true", help="print one JSON object with SI values")
    parser.set_defaults(run=run)


# the inputs --vary can step through: option word -> (Cylinder field, quantity kind)
VARIABLE = {"Rm": ("membrane_resistivity", "membrane_resistivity"), "Ri": ("axial_resistivity", "axial_resistivity"),
            "Cm": ("membrane_capacitance", "membrane_capacitance"), "diameter": ("diameter", "length"),
            "length": ("length", "length")}


def run(args: argparse.Namespace) -> int:
    no_length = args.length is None
    if no_length:
        if args.end != "sealed":
            raise InputError(f"--end: without --length there is no far end; drop --end {args.end!r} or give --length")
        args.length = "inf"
    cylinder = read_cylinder(args)
    if math.isinf(cylinder.length) and cylinder.end_conductance != 0:
        raise InputError(f"--end: a semi-infinite cable (--length inf) has no far end; drop --end {args.end!r}")
    if args.vary is not None:
        return _run_sweep(args, cylinder)
    frequency = None
    if args.frequency is not None:
        frequency = parse_quantity(args.frequency, "frequency", "--frequency", allow_zero=True)
    fraction = parse_quantity(args.rule_fraction, "dimensionless", "--rule-fraction")
    if fraction > 1:
        raise InputError(f"--rule-fraction: {args.rule_fraction!r} exceeds 1; expected e.g. 0.1")
    advice_frequency = parse_quantity(args.rule_frequency, "frequency", "--rule-frequency")
    positions: list[float] = []
    if args.positions is not None:
        positions = parse_series(args.positions, "length", "--positions")
        beyond = [p for p in positions if p > cylinder.length]
        if beyond:
            raise InputError(f"--positions: {format_quantity(beyond[0], 'length')} lies beyond the cable's length "
                             f"{format_quantity(cylinder.length, 'length')}")
    summary = summarise(cylinder, positions, frequency, fraction, advice_frequency)
    if args.json:
        out = as_json(summary)
        if no_length:
            out["inputs"]["length"] = None
        print(dump_json(out))
    else:
        print(as_text(summary, args.digits, no_length=no_length))
    return 0


def _run_sweep(args: argparse.Namespace, cylinder: Cylinder) -> int:
    """``--vary INPUT=VALUES``: the main results for each value of one input, the others as given."""
    name, sep, values_text = args.vary.partition("=")
    name = name.strip()
    if not sep or name not in VARIABLE:
        raise InputError(f"--vary: {args.vary!r} is not INPUT=VALUES with INPUT one of {', '.join(VARIABLE)} "
                         "(e.g. 'diameter=0.5, 1, 2 um')")
    if args.positions is not None:
        raise InputError("--positions: a profile is given for one cable; leave out --vary or --positions")
    field, kind = VARIABLE[name]
    values = parse_series(values_text, kind, f"--vary {name}", allow_zero=False, max_points=1000)
    frequency = None
    if args.frequency is not None:
        frequency = parse_quantity(args.frequency, "frequency", "--frequency", allow_zero=True)
    rows = []
    for value in values:
        try:
            varied = dataclasses.replace(cylinder, **{field: value})
        except ValueError as exc:
            raise InputError(f"--vary {name}: {exc}") from None
        rows.append(summarise(varied, (), frequency))
    if args.json:
        print(dump_json(sweep_json(name, kind, values, rows)))
    else:
        print(sweep_text(name, kind, values, rows, args.digits))
    return 0


_SWEEP_COLUMNS = (("length constant λ", "length_constant", "length"),
                  ("τm", "membrane_time_constant", "time"),
                  ("L = ℓ/λ", "electrotonic_length", "dimensionless"),
                  ("R∞", "semi_infinite_input_resistance", "resistance"),
                  ("R_in", "input_resistance", "resistance"),
                  ("V(ℓ)/V(0)", "far_end_voltage_ratio", "dimensionless"))


def sweep_json(name: str, kind: str, values: list[float], rows: list[CableSummary]) -> dict:
    """One JSON object: the varied input, the inputs held fixed, and one object per value."""
    fixed = as_json(rows[0])["inputs"]
    fixed.pop(VARIABLE[name][0], None)
    out_rows = []
    for value, s in zip(values, rows, strict=True):
        row = {VARIABLE[name][0]: quantity(value, kind)}
        row.update({key: quantity(getattr(s, key), k) for _label, key, k in _SWEEP_COLUMNS})
        if s.input_impedance is not None:
            row["input_impedance_magnitude"] = quantity(abs(s.input_impedance), "resistance")
        out_rows.append(row)
    return {"varied": VARIABLE[name][0], "fixed_inputs": fixed, "rows": out_rows, "assumptions": PASSIVE_CAVEAT}


def sweep_text(name: str, kind: str, values: list[float], rows: list[CableSummary], digits: int = 4) -> str:
    """A table with one row per value of the varied input."""
    header = [name] + [label for label, _key, _k in _SWEEP_COLUMNS]
    with_z = rows[0].input_impedance is not None and rows[0].frequency is not None
    if with_z:
        header.append(f"|Z_in| at {format_quantity(rows[0].frequency or 0.0, 'frequency', digits)}")
    lines = []
    for value, s in zip(values, rows, strict=True):
        line = [format_quantity(value, kind, digits)]
        line += [format_quantity(getattr(s, key), k, digits) for _label, key, k in _SWEEP_COLUMNS]
        if with_z and s.input_impedance is not None:
            line.append(format_quantity(abs(s.input_impedance), "resistance", digits))
        lines.append(line)
    widths = [max(len(h), *(len(r[j]) for r in lines)) for j, h in enumerate(header)]
    fixed = [f"{label.split(' (')[0]} {value}" for label, value in echo_cylinder(rows[0].cylinder)
             if not label.startswith(name if name != "length" else "length")]
    title = f"Results as {name} varies (input at the origin)"
    out = [title, "-" * len(title), "  " + "  ".join(h.rjust(w) for h, w in zip(header, widths, strict=True))]
    out += ["  " + "  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True)) for r in lines]
    out += ["", "Held fixed: " + "; ".join(fixed), "", f"Note: {PASSIVE_CAVEAT}"]
    return "\n".join(out)


def as_json(s: CableSummary) -> dict:
    """The summary as one JSON object; every quantity is ``{"value": SI, "unit": SI unit}``."""
    c = s.cylinder
    out: dict = {
        "inputs": {
            "membrane_resistivity": quantity(c.membrane_resistivity, "membrane_resistivity"),
            "axial_resistivity": quantity(c.axial_resistivity, "axial_resistivity"),
            "membrane_capacitance": quantity(c.membrane_capacitance, "membrane_capacitance"),
            "diameter": quantity(c.diameter, "length"),
            "length": quantity(c.length, "length"),
            "end_conductance": quantity(c.end_conductance, "conductance"),
        },
        "length_constant": quantity(s.length_constant, "length"),
        "membrane_time_constant": quantity(s.membrane_time_constant, "time"),
        "electrotonic_length": quantity(s.electrotonic_length, "dimensionless"),
        "membrane_resistance_per_length": {"value": s.membrane_resistance_per_length, "unit": "ohm*m"},
        "axial_resistance_per_length": {"value": s.axial_resistance_per_length, "unit": "ohm/m"},
        "membrane_capacitance_per_length": {"value": s.membrane_capacitance_per_length, "unit": "F/m"},
        "semi_infinite_input_resistance": quantity(s.semi_infinite_input_resistance, "resistance"),
        "semi_infinite_input_conductance": quantity(s.semi_infinite_input_conductance, "conductance"),
        "end_conductance_ratio": quantity(s.end_conductance_ratio, "dimensionless"),
        "input_resistance": quantity(s.input_resistance, "resistance"),
        "input_conductance": quantity(s.input_conductance, "conductance"),
        "far_end_voltage_ratio": quantity(s.far_end_voltage_ratio, "dimensionless"),
        "compartment_advice": {
            "compartments": s.compartments_needed,
            "fraction_of_length_constant": s.compartment_fraction,
            "frequency": quantity(s.advice_frequency, "frequency"),
        },
        "assumptions": PASSIVE_CAVEAT,
    }
    if s.positions.size:
        out["profile"] = {
            "positions": quantity(s.positions, "length"),
            "electrotonic_positions": quantity(s.positions / s.length_constant, "dimensionless"),
            "voltage_ratio": quantity(s.voltage_ratio, "dimensionless"),
            "transfer_resistance": quantity(s.transfer_resistance, "resistance"),
        }
    if s.frequency is not None and s.input_impedance is not None and s.length_constant_at_frequency is not None:
        out["frequency"] = quantity(s.frequency, "frequency")
        out["input_impedance_magnitude"] = quantity(abs(s.input_impedance), "resistance")
        out["input_impedance_phase"] = quantity(math.atan2(s.input_impedance.imag, s.input_impedance.real),
                                                "angle")
        out["length_constant_at_frequency"] = quantity(s.length_constant_at_frequency, "length")
        if s.transfer_impedance is not None and s.positions.size:
            out["profile"]["transfer_impedance_magnitude"] = quantity(np.abs(s.transfer_impedance), "resistance")
            out["profile"]["transfer_impedance_phase"] = quantity(np.angle(s.transfer_impedance), "angle")
    return out


def as_text(s: CableSummary, digits: int = 4, *, no_length: bool = False) -> str:
    """A readable report: inputs echoed with units, results with units, the profile, the caveat.

    ``no_length``: the user gave no length; only what holds for any length (and R∞) is shown."""

    def fmt(value: float, kind: str) -> str:
        return format_quantity(value, kind, digits)

    def per_length(value: float, unit_label: str, scale: float) -> str:
        return f"{fmt(value * scale, 'dimensionless')} {unit_label}"

    echo = echo_cylinder(s.cylinder)
    if no_length:
        echo = [row for row in echo if row[0] not in ("length", "far end")] + [("length", "not given")]
    blocks = [table(echo, "Inputs")]
    labels = CYLINDER_LABELS
    rows = [
        (labels["length_constant"], fmt(s.length_constant, "length")),
        (labels["membrane_time_constant"], fmt(s.membrane_time_constant, "time")),
        (labels["electrotonic_length"], fmt(s.electrotonic_length, "dimensionless")),
        ("membrane resistance × length r_m", per_length(s.membrane_resistance_per_length, "MΩ·cm", 1e-4)),
        ("axial resistance per length r_i", per_length(s.axial_resistance_per_length, "MΩ/cm", 1e-8)),
        ("membrane capacitance per length c_m", per_length(s.membrane_capacitance_per_length, "pF/cm", 1e10)),
        (labels["semi_infinite_input_resistance"], fmt(s.semi_infinite_input_resistance, "resistance")),
        (labels["semi_infinite_input_conductance"], fmt(s.semi_infinite_input_conductance, "conductance")),
    ]
    if not math.isinf(s.cylinder.length) and 0 < s.cylinder.end_conductance < math.inf:
        rows.append((labels["end_conductance_ratio"], fmt(s.end_conductance_ratio, "dimensionless")))
    rows += [
        (input_resistance_label(s.cylinder), fmt(s.input_resistance, "resistance")),
        (labels["input_conductance"], fmt(s.input_conductance, "conductance")),
        (labels["far_end_voltage_ratio"], fmt(s.far_end_voltage_ratio, "dimensionless")),
    ]
    if no_length:
        rows = [row for row in rows if not row[0].startswith(("electrotonic length", "input ", "far-end"))]
    blocks.append(table(rows, "Steady state (input at the origin)"))
    if s.frequency is not None and s.input_impedance is not None and s.length_constant_at_frequency is not None:
        z = s.input_impedance
        phase = math.degrees(math.atan2(z.imag, z.real))
        blocks.append(table([
            (labels["input_impedance_magnitude"], fmt(abs(z), "resistance")),
            (labels["input_impedance_phase"], f"{fmt(phase, 'dimensionless')}°"),
            (labels["length_constant_at_frequency"].format(frequency=fmt(s.frequency, "frequency")),
             fmt(s.length_constant_at_frequency, "length")),
        ], f"Sinusoidal input at {fmt(s.frequency, 'frequency')}"))
    if s.positions.size:
        blocks.append(_profile_table(s, digits))
    if s.compartments_needed is not None:
        blocks.append(
            f"Compartment advice: {s.compartments_needed} equal compartment"
            f"{'s' if s.compartments_needed != 1 else ''} keep{'s' if s.compartments_needed == 1 else ''} each "
            f"within {s.compartment_fraction:g} of the length constant at {fmt(s.advice_frequency, 'frequency')} "
            "(a rule of common practice, not an error bound; `advise` measures the error).")
    if no_length:
        blocks.append("Without --length: λ, τm and the per-length values hold for any length of this cylinder; "
                      "R∞ is the input resistance of a semi-infinite one.")
    blocks.append(f"Note: {PASSIVE_CAVEAT}")
    return "\n\n".join(blocks)


def _profile_table(s: CableSummary, digits: int) -> str:
    header = ["x", "X = x/λ", "V(x)/V(0)", "transfer R"]
    if s.transfer_impedance is not None:
        header += ["|transfer Z|", "phase"]
    lines = []
    for i, x in enumerate(s.positions):
        row = [format_quantity(x, "length", digits) if x > 0 else "0",
               format_quantity(x / s.length_constant, "dimensionless", digits),
               format_quantity(s.voltage_ratio[i], "dimensionless", digits),
               format_quantity(s.transfer_resistance[i], "resistance", digits)]
        if s.transfer_impedance is not None:
            z = complex(s.transfer_impedance[i])
            row += [format_quantity(abs(z), "resistance", digits),
                    f"{format_quantity(math.degrees(math.atan2(z.imag, z.real)), 'dimensionless', digits)}°"]
        lines.append(row)
    widths = [max(len(h), *(len(r[j]) for r in lines)) for j, h in enumerate(header)]
    title = "Profile (input at the origin)"
    out = [title, "-" * len(title), "  " + "  ".join(h.rjust(w) for h, w in zip(header, widths, strict=True))]
    out += ["  " + "  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True)) for r in lines]
    return "\n".join(out)
