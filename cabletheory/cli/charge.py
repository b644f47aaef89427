"""``cabletheory charge``: voltage time course of a passive cable after a current or clamp step."""

from __future__ import annotations

import argparse
import csv
import io
import math

import numpy as np

from .. import PASSIVE_CAVEAT
from ..case import Case
from ..errors import InputError
from ..output import dump_json, echo_cylinder, quantity, table, write_atomically
from ..transient import Response, charge
from ..units import format_quantity, parse_series
from ..waveform import ResponseFeatures, response_features
from .case import add_case_options, read_case_options
from .common import add_truncation_option, read_truncation, whole_number
from .features import FEATURE_POSITIONS, features_json, features_table
from .tree_charge import add_tree_options, run_tree


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "charge",
        help="voltage time course after a current step, pulse, alpha current or voltage-clamp step",
        description="Exact voltage time course (deviation from rest) of a passive cylinder, ball and stick, "
                    "semi-infinite or infinite cable, on a grid of times and positions, with a bound on the "
                    "truncation error of every value.",
        epilog=PASSIVE_CAVEAT,
    )
    add_case_options(parser)
    add_tree_options(parser)
    out = parser.add_argument_group("output")
    out.add_argument("--times", metavar="TIMES",
                     help="times after onset: a list '0, 1, 5 ms' or a range '0:20:2 ms' (bare: ms; "
                          "default 0 to 2τm in 10 steps)")
    out.add_argument("--positions", metavar="POSITIONS",
                     help="where to report the voltage: a list or range with units (bare: µm; default the "
                          "stimulus site)")
    add_truncation_option(out, "1e-10")
    out.add_argument("--precision", type=whole_number(16, 100), metavar="DIGITS",
                     help="evaluate with mpmath at this many digits instead of numpy (slow; for checks)")
    out.add_argument("--modes", type=whole_number(0, 50), default=5, metavar="N",
                     help="time constants and coefficients to list (default 5)")
    out.add_argument("--digits", type=whole_number(2, 15), default=4, metavar="N",
                     help="significant digits in the human-readable output (default 4)")
    fmt = out.add_mutually_exclusive_group()
    fmt.add_argument("--json", action="store_true", help="print one JSON object with SI values")
    fmt.add_argument("--csv", action="store_true",
                     help="print CSV rows: time, position, voltage (SI), after '#' lines with the parameters, "
                          "method, error bound and assumptions")
    out.add_argument("--no-features", dest="features", action="store_false",
                     help="leave out the response features (peak, time to peak, rise time, half-width, "
                          "attenuation), which are read off the exact solution at up to "
                          f"{FEATURE_POSITIONS} positions")
    out.add_argument("--output", metavar="FILE", help="write the JSON/CSV/text to FILE instead of the screen")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    if args.morphology is not None:
        times = None if args.times is None else parse_series(args.times, "time", "--times")
        text = run_tree(args, times)
        if args.output is not None:
            write_atomically(args.output, text + "\n")
        else:
            print(text)
        return 0
    case = read_case_options(args, args.positions)
    if not case.positions:
        case = case.with_positions([case.stimulus.position])
    tau = case.membrane_time_constant
    default_times = list(np.linspace(0.0, 2 * tau, 11))
    times = default_times if args.times is None else parse_series(args.times, "time", "--times")
    if len(times) * len(case.positions) > 2_000_000:
        raise InputError("--times/--positions: more than 2 000 000 grid points; use fewer")
    tolerance = read_truncation(args.truncation, case)
    response = charge(case.cell, case.stimulus, times, case.positions, tolerance=tolerance,
                      precision=args.precision, modes=args.modes)
    features: tuple[ResponseFeatures, ...] | None = None
    if args.features and not args.csv and len(case.positions) <= FEATURE_POSITIONS:
        features = response_features(case, tolerance=tolerance)
    if args.json:
        text = dump_json(as_json(case, response, features))
    elif args.csv:
        text = as_csv(case, response)
    else:
        text = as_text(case, response, args.digits, features)
    if args.output is not None:
        if not args.output.strip():
            raise InputError("--output: empty file name; give a file such as 'course.json'")
        write_atomically(args.output, text if text.endswith("\n") else text + "\n")
    else:
        print(text)
    return 0


_CELL_NAMES = {"infinite": "infinite cable", "ball-and-stick": "ball and stick"}


def _cell_name(case: Case) -> str:
    if case.kind == "cylinder":
        return "semi-infinite cylinder" if math.isinf(case.length) else "finite cylinder"
    return _CELL_NAMES[case.kind]


_STIMULUS_WORDS = {"step": ("current step", "current"), "pulse": ("current pulse", "current"),
                   "alpha": ("alpha current", "peak current"), "clamp": ("voltage-clamp step", "clamp step")}


def _stimulus_rows(case: Case, digits: int = 4) -> list[tuple[str, str]]:
    """The stimulus echoed as (label, value with unit) rows, from the case's own shape and parameters."""
    parameters = case.parameters()
    what, amplitude_label = _STIMULUS_WORDS[case.shape]
    rows = [("stimulus", what), (amplitude_label, format_quantity(case.amplitude, "voltage" if case.shape == "clamp"
                                                                  else "current", digits))]
    if "pulse_duration" in parameters:
        rows.append(("duration", format_quantity(parameters["pulse_duration"][0], "time", digits)))
    if "time_to_peak" in parameters:
        rows.append(("time to peak", format_quantity(parameters["time_to_peak"][0], "time", digits)))
    site = case.stimulus.position
    rows.append(("applied at", format_quantity(site, "length", digits) if site else "0 (origin)"))
    return rows


def as_json(case: Case, r: Response, features: tuple[ResponseFeatures, ...] | None = None) -> dict:
    """The response as one JSON object; every quantity is ``{"value": SI, "unit": SI unit}``; ``inputs``
    holds the case in the form of :meth:`cabletheory.case.Case.to_json`."""
    out: dict = {
        "inputs": {**case.to_json(), "truncation": quantity(r.tolerance, "dimensionless"),
                   "precision_digits": r.precision},
        "length_constant": quantity(r.length_constant, "length"),
        "membrane_time_constant": quantity(r.membrane_time_constant, "time"),
        "times": quantity(r.times, "time"),
        "positions": quantity(r.positions, "length"),
        "voltage": quantity(r.voltage, "voltage"),
        "time_constants": quantity(r.time_constants, "time"),
        "coefficients": quantity(r.coefficients, "dimensionless"),
        "error_bound": quantity(r.bounds, "voltage"),
        "largest_error_bound": quantity(r.error_bound, "voltage"),
        "reference_voltage": quantity(r.reference_voltage, "voltage"),
        "method": r.method,
        "assumptions": PASSIVE_CAVEAT,
    }
    parameters = case.parameters()
    if "conductance_ratio" in parameters:
        out["conductance_ratio"] = quantity(parameters["conductance_ratio"][0], "dimensionless")
    if r.steady_state is not None:
        out["steady_state"] = quantity(r.steady_state, "voltage")
    if r.notes:
        out["notes"] = list(r.notes)
    if features is not None:
        out["features"] = features_json(features)
    return out


def as_csv(case: Case, r: Response) -> str:
    """Long-format CSV with SI units in the header: one row per (time, position), after the same
    ``#`` lines as a reference table (parameters with units, method, error bound, assumptions)."""
    from ..verify.tables import csv_header

    buffer = io.StringIO()
    buffer.write(csv_header("cabletheory charge: exact voltage time course", case.describe(), r.method,
                            r.error_bound, PASSIVE_CAVEAT, case.shape,
                            {**case.parameters(), "truncation": (r.tolerance, "1")}))
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["time_s", "position_m", "voltage_V"])
    for i, t in enumerate(r.times):
        for j, x in enumerate(r.positions):
            writer.writerow([repr(float(t)), repr(float(x)), repr(float(r.voltage[i, j]))])
    return buffer.getvalue().rstrip("\n")


def as_text(case: Case, r: Response, digits: int = 4, features: tuple[ResponseFeatures, ...] | None = None) -> str:
    """A readable report: inputs echoed with units, the voltage table, time constants, bound, caveat."""

    def fmt(value: float, kind: str) -> str:
        return format_quantity(value, kind, digits)

    cylinder = case.cylinder
    stimulus = case.stimulus
    if cylinder is None:
        m = case.membrane
        echo = [("Rm (specific membrane resistance)", fmt(m.membrane_resistivity, "membrane_resistivity")),
                ("Ri (axial resistivity)", fmt(m.axial_resistivity, "axial_resistivity")),
                ("Cm (specific membrane capacitance)", fmt(m.membrane_capacitance, "membrane_capacitance")),
                ("diameter", fmt(m.diameter, "length")), ("length", "infinite (both directions)")]
    else:
        echo = echo_cylinder(cylinder)
    parameters = case.parameters()
    if "soma_diameter" in parameters:
        echo.append(("soma diameter (sphere)", fmt(parameters["soma_diameter"][0], "length")))
    echo += _stimulus_rows(case, digits)
    echo.append(("truncation (relative)", f"{r.tolerance:g}"))
    if r.precision is not None:
        echo.append(("precision", f"mpmath, {r.precision} digits"))
    blocks = [table(echo, f"Inputs ({_cell_name(case)})")]
    derived = [("length constant λ", fmt(r.length_constant, "length")),
               ("membrane time constant τm", fmt(r.membrane_time_constant, "time"))]
    if "conductance_ratio" in parameters:
        derived.append(("conductance ratio ρ = G_D/G_S", fmt(parameters["conductance_ratio"][0], "dimensionless")))
    blocks.append(table(derived, "Cable"))
    blocks.append(_voltage_table(r, digits))
    if r.time_constants.size:
        rows = [(f"τ{n}", f"{fmt(tc, 'time')}  (τm/τ{n} = {fmt(r.membrane_time_constant / tc, 'dimensionless')})")
                for n, tc in enumerate(r.time_constants)]
        # coefficients at the stimulus site when it is reported, else at the first position
        at_site = np.flatnonzero(np.isclose(r.positions, stimulus.position, rtol=0.0, atol=1e-12))
        column = int(at_site[0]) if at_site.size else 0
        title = "Equalising time constants (slowest first)"
        if r.coefficients.size and np.all(np.isfinite(r.coefficients[:, column])):
            x = r.positions[column]
            where = format_quantity(x, "length", digits) if x else "0"
            title += f" and coefficients C_n of the step response at {where}"
            rows = [(label, f"{value}  C{n} = {fmt(r.coefficients[n, column], 'dimensionless')}")
                    for n, (label, value) in enumerate(rows)]
        blocks.append(table(rows, title))
    if features:
        blocks.append(features_table(features, digits))
    blocks.append(f"Error bound: every voltage above is within {fmt(r.error_bound, 'voltage')} of the exact "
                  f"solution ({r.method}).")
    for note in r.notes:
        blocks.append(f"Note: {note}.")
    blocks.append(f"Note: {PASSIVE_CAVEAT}")
    return "\n\n".join(blocks)


def _voltage_table(r: Response, digits: int) -> str:
    header = ["t"] + [f"V at {format_quantity(x, 'length', digits) if x else '0'}" for x in r.positions]
    lines = []
    for i, t in enumerate(r.times):
        lines.append([format_quantity(t, "time", digits) if t else "0"]
                     + [format_quantity(v, "voltage", digits) for v in r.voltage[i]])
    if r.steady_state is not None:
        lines.append(["final"] + [format_quantity(v, "voltage", digits) for v in r.steady_state])
    widths = [max(len(h), *(len(row[j]) for row in lines)) for j, h in enumerate(header)]
    title = "Voltage (deviation from rest)"
    out = [title, "-" * len(title), "  " + "  ".join(h.rjust(w) for h, w in zip(header, widths, strict=True))]
    out += ["  " + "  ".join(c.rjust(w) for c, w in zip(row, widths, strict=True)) for row in lines]
    return "\n".join(out)
