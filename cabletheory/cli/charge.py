"""``cabletheory charge``: voltage time course of a passive cable after a current or clamp step."""

from __future__ import annotations

import argparse
import csv
import io
import math

import numpy as np

from .. import PASSIVE_CAVEAT
from ..errors import InputError
from ..transient import (
    AlphaCurrent,
    BallAndStick,
    CurrentPulse,
    InfiniteCable,
    Response,
    VoltageStep,
    charge,
)
from ..units import format_quantity, parse_quantity, parse_series
from .case import add_case_options, read_model, read_stimulus
from .common import dump_json, echo_cylinder, quantity, table, whole_number, write_atomically


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
    out = parser.add_argument_group("output")
    out.add_argument("--times", metavar="TIMES",
                     help="times after onset: a list '0, 1, 5 ms' or a range '0:20:2 ms' (bare: ms; "
                          "default 0 to 2τm in 10 steps)")
    out.add_argument("--positions", metavar="POSITIONS",
                     help="where to report the voltage: a list or range with units (bare: µm; default the "
                          "stimulus site)")
    out.add_argument("--tolerance", default="1e-10", metavar="REL",
                     help="truncation error allowed, relative to the final voltage at the stimulus site "
                          "(default 1e-10)")
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
    out.add_argument("--output", metavar="FILE", help="write the JSON/CSV/text to FILE instead of the screen")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    model = read_model(args)
    infinite = isinstance(model, InfiniteCable)
    stimulus = read_stimulus(args, model)
    cylinder = model.cylinder if isinstance(model, BallAndStick) else model
    length = math.inf if infinite else cylinder.length
    tau = cylinder.time_constant
    default_times = list(np.linspace(0.0, 2 * tau, 11))
    times = default_times if args.times is None else parse_series(args.times, "time", "--times")
    if args.positions is None:
        positions = [stimulus.position]
    else:
        positions = parse_series(args.positions, "length", "--positions", allow_negative=infinite)
        beyond = [p for p in positions if p > length]
        if beyond:
            raise InputError(f"--positions: {format_quantity(beyond[0], 'length')} lies beyond the cable's length "
                             f"{format_quantity(length, 'length')}")
    tolerance = parse_quantity(args.tolerance, "dimensionless", "--tolerance")
    if not tolerance < 1:
        raise InputError(f"--tolerance: {args.tolerance!r} must be below 1, e.g. 1e-10")
    if len(times) * len(positions) > 2_000_000:
        raise InputError("--times/--positions: more than 2 000 000 grid points; use fewer")
    response = charge(model, stimulus, times, positions, tolerance=tolerance, precision=args.precision,
                      modes=args.modes)
    if args.json:
        text = dump_json(as_json(model, stimulus, response))
    elif args.csv:
        text = as_csv(model, stimulus, response)
    else:
        text = as_text(model, stimulus, response, args.digits)
    if args.output:
        write_atomically(args.output, text if text.endswith("\n") else text + "\n")
    else:
        print(text)
    return 0


def _model_name(model) -> str:
    if isinstance(model, InfiniteCable):
        return "infinite cable"
    if isinstance(model, BallAndStick):
        return "ball and stick"
    return "semi-infinite cylinder" if math.isinf(model.length) else "finite cylinder"


def _shape(stimulus) -> str:
    """The command line's word for the stimulus (``--shape``)."""
    if isinstance(stimulus, VoltageStep):
        return "clamp"
    if isinstance(stimulus, CurrentPulse):
        return "pulse"
    if isinstance(stimulus, AlphaCurrent):
        return "alpha"
    return "step"


def _stimulus_rows(stimulus, digits: int = 4) -> list[tuple[str, str]]:
    def fmt(value: float, kind: str) -> str:
        return format_quantity(value, kind, digits)

    if isinstance(stimulus, VoltageStep):
        rows = [("stimulus", "voltage-clamp step"), ("clamp step", fmt(stimulus.amplitude, "voltage"))]
    elif isinstance(stimulus, CurrentPulse):
        rows = [("stimulus", "current pulse"), ("current", fmt(stimulus.amplitude, "current")),
                ("duration", fmt(stimulus.duration, "time"))]
    elif isinstance(stimulus, AlphaCurrent):
        rows = [("stimulus", "alpha current"), ("peak current", fmt(stimulus.peak, "current")),
                ("time to peak", fmt(stimulus.time_to_peak, "time"))]
    else:
        rows = [("stimulus", "current step"), ("current", fmt(stimulus.amplitude, "current"))]
    rows.append(("applied at", fmt(stimulus.position, "length") if stimulus.position else "0 (origin)"))
    return rows


def as_json(model, stimulus, r: Response) -> dict:
    """The response as one JSON object; every quantity is ``{"value": SI, "unit": SI unit}``."""
    if isinstance(model, InfiniteCable):
        cable = {
            "membrane_resistivity": quantity(model.membrane_resistivity, "membrane_resistivity"),
            "axial_resistivity": quantity(model.axial_resistivity, "axial_resistivity"),
            "membrane_capacitance": quantity(model.membrane_capacitance, "membrane_capacitance"),
            "diameter": quantity(model.diameter, "length"),
        }
    else:
        c = model.cylinder if isinstance(model, BallAndStick) else model
        cable = {
            "membrane_resistivity": quantity(c.membrane_resistivity, "membrane_resistivity"),
            "axial_resistivity": quantity(c.axial_resistivity, "axial_resistivity"),
            "membrane_capacitance": quantity(c.membrane_capacitance, "membrane_capacitance"),
            "diameter": quantity(c.diameter, "length"),
            "length": quantity(c.length, "length"),
            "end_conductance": quantity(c.end_conductance, "conductance"),
        }
        if isinstance(model, BallAndStick):
            cable["soma_diameter"] = quantity(model.soma_diameter, "length")
    # the keys of the "stimulus" object of reference and compare (cabletheory.verify.split_stimulus);
    # an alpha current's amplitude is its peak
    stim: dict = {"shape": _shape(stimulus)}
    if isinstance(stimulus, VoltageStep):
        stim["amplitude"] = quantity(stimulus.amplitude, "voltage")
    elif isinstance(stimulus, AlphaCurrent):
        stim["amplitude"] = quantity(stimulus.peak, "current")
    else:
        stim["amplitude"] = quantity(stimulus.amplitude, "current")
    stim["position"] = quantity(stimulus.position, "length")
    if isinstance(stimulus, CurrentPulse):
        stim["duration"] = quantity(stimulus.duration, "time")
    if isinstance(stimulus, AlphaCurrent):
        stim["time_to_peak"] = quantity(stimulus.time_to_peak, "time")
    out: dict = {
        "inputs": {"model": _model_name(model), "cable": cable, "stimulus": stim,
                   "tolerance": quantity(r.tolerance, "dimensionless"),
                   "precision_digits": r.precision},
        "length_constant": quantity(r.length_constant, "length"),
        "membrane_time_constant": quantity(r.membrane_time_constant, "time"),
        "times": quantity(r.times, "time"),
        "positions": quantity(r.positions, "length"),
        "voltage": quantity(r.voltage, "voltage"),
        "time_constants": quantity(r.time_constants, "time"),
        "coefficients": quantity(r.coefficients, "dimensionless"),
        "error_bound": quantity(r.error_bound, "voltage"),
        "reference_voltage": quantity(r.reference_voltage, "voltage"),
        "method": r.method,
        "assumptions": PASSIVE_CAVEAT,
    }
    if isinstance(model, BallAndStick):
        out["conductance_ratio"] = quantity(model.conductance_ratio, "dimensionless")
    if r.steady_state is not None:
        out["steady_state"] = quantity(r.steady_state, "voltage")
    if r.notes:
        out["notes"] = list(r.notes)
    return out


def as_csv(model, stimulus, r: Response) -> str:
    """Long-format CSV with SI units in the header: one row per (time, position), after the same
    ``#`` lines as a reference table (parameters with units, method, error bound, assumptions)."""
    from ..verify import csv_header, describe_case

    description, shape, parameters = describe_case(model, stimulus)
    buffer = io.StringIO()
    buffer.write(csv_header("cabletheory charge: exact voltage time course", description, r.method,
                            r.error_bound, PASSIVE_CAVEAT, shape,
                            {**parameters, "tolerance": (r.tolerance, "1")}))
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["time_s", "position_m", "voltage_V"])
    for i, t in enumerate(r.times):
        for j, x in enumerate(r.positions):
            writer.writerow([repr(float(t)), repr(float(x)), repr(float(r.voltage[i, j]))])
    return buffer.getvalue().rstrip("\n")


def as_text(model, stimulus, r: Response, digits: int = 4) -> str:
    """A readable report: inputs echoed with units, the voltage table, time constants, bound, caveat."""

    def fmt(value: float, kind: str) -> str:
        return format_quantity(value, kind, digits)

    if isinstance(model, InfiniteCable):
        echo = [("Rm (specific membrane resistance)", fmt(model.membrane_resistivity, "membrane_resistivity")),
                ("Ri (axial resistivity)", fmt(model.axial_resistivity, "axial_resistivity")),
                ("Cm (specific membrane capacitance)", fmt(model.membrane_capacitance, "membrane_capacitance")),
                ("diameter", fmt(model.diameter, "length")), ("length", "infinite (both directions)")]
    else:
        c = model.cylinder if isinstance(model, BallAndStick) else model
        echo = echo_cylinder(c)
        if isinstance(model, BallAndStick):
            echo.append(("soma diameter (sphere)", fmt(model.soma_diameter, "length")))
    echo += _stimulus_rows(stimulus, digits)
    echo.append(("tolerance (relative)", f"{r.tolerance:g}"))
    if r.precision is not None:
        echo.append(("precision", f"mpmath, {r.precision} digits"))
    blocks = [table(echo, f"Inputs ({_model_name(model)})")]
    derived = [("length constant λ", fmt(r.length_constant, "length")),
               ("membrane time constant τm", fmt(r.membrane_time_constant, "time"))]
    if isinstance(model, BallAndStick):
        derived.append(("conductance ratio ρ = G_D/G_S", fmt(model.conductance_ratio, "dimensionless")))
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
