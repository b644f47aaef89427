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
    CurrentStep,
    InfiniteCable,
    Response,
    VoltageStep,
    charge,
)
from ..units import format_quantity, parse_quantity, parse_series
from .common import add_cable_options, dump_json, echo_cylinder, quantity, read_cylinder, table, write_atomically

SHAPES = ("step", "pulse", "alpha")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "charge",
        help="voltage time course after a current step, pulse, alpha current or voltage-clamp step",
        description="Exact voltage time course (deviation from rest) of a passive cylinder, ball and stick, "
                    "semi-infinite or infinite cable, on a grid of times and positions, with a bound on the "
                    "truncation error of every value.",
        epilog=PASSIVE_CAVEAT,
    )
    add_cable_options(parser, length_required=False)
    cell = parser.add_argument_group("cell")
    cell.add_argument("--infinite", action="store_true",
                      help="a doubly infinite cable (no --length); positions may be negative")
    cell.add_argument("--soma-diameter", metavar="D",
                      help="add a spherical soma of this diameter at the origin, same Rm and Cm (bare: µm)")
    stim = parser.add_argument_group("stimulus (starts at t = 0)")
    kind = stim.add_mutually_exclusive_group(required=True)
    kind.add_argument("--current", metavar="I", help="injected current, e.g. 100pA (bare: pA); peak for alpha")
    kind.add_argument("--voltage", metavar="V", help="voltage-clamp step at the origin, e.g. 10mV (bare: mV)")
    stim.add_argument("--at", default="0", metavar="X",
                      help="where the stimulus is applied, distance from the origin (bare: µm; default 0)")
    stim.add_argument("--shape", default="step", choices=SHAPES,
                      help="current shape: step (default), pulse of --duration, alpha with --time-to-peak")
    stim.add_argument("--duration", metavar="T", help="pulse duration, e.g. 0.5ms (bare: ms)")
    stim.add_argument("--time-to-peak", metavar="T", help="alpha current: time to its peak, e.g. 1ms (bare: ms)")
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
    out.add_argument("--precision", type=int, metavar="DIGITS", choices=range(16, 101),
                     help="evaluate with mpmath at this many digits instead of numpy (slow; for checks)")
    out.add_argument("--modes", type=int, default=5, choices=range(0, 51), metavar="N",
                     help="time constants and coefficients to list (default 5)")
    out.add_argument("--digits", type=int, default=4, choices=range(2, 16), metavar="N",
                     help="significant digits in the human-readable output (default 4)")
    fmt = out.add_mutually_exclusive_group()
    fmt.add_argument("--json", action="store_true", help="print one JSON object with SI values")
    fmt.add_argument("--csv", action="store_true", help="print CSV rows: time, position, voltage (SI)")
    out.add_argument("--output", metavar="FILE", help="write the JSON/CSV/text to FILE instead of the screen")
    parser.set_defaults(run=run)


def _model(args: argparse.Namespace):
    if args.infinite:
        if args.length is not None:
            raise InputError("--infinite: give no --length (an infinite cable has none)")
        if args.soma_diameter is not None:
            raise InputError("--soma-diameter: a soma needs a finite cylinder, not --infinite")
        if args.end != "sealed":
            raise InputError("--end: an infinite cable has no end")
        return InfiniteCable(
            membrane_resistivity=parse_quantity(args.Rm, "membrane_resistivity", "--Rm"),
            axial_resistivity=parse_quantity(args.Ri, "axial_resistivity", "--Ri"),
            membrane_capacitance=parse_quantity(args.Cm, "membrane_capacitance", "--Cm"),
            diameter=parse_quantity(args.diameter, "length", "--diameter"),
        )
    if args.length is None:
        raise InputError("--length: required (e.g. 500um, or 'inf' for a semi-infinite cable; or use --infinite)")
    cylinder = read_cylinder(args)
    if args.soma_diameter is None:
        return cylinder
    soma = parse_quantity(args.soma_diameter, "length", "--soma-diameter")
    if math.isinf(cylinder.length):
        raise InputError("--soma-diameter: a ball and stick needs a finite --length")
    return BallAndStick(cylinder, soma)


def _stimulus(args: argparse.Namespace, infinite: bool):
    at = parse_quantity(args.at, "length", "--at", allow_zero=True, allow_negative=infinite)
    if args.voltage is not None:
        if args.shape != "step":
            raise InputError(f"--shape {args.shape}: a voltage clamp is a step")
        if at != 0 and not infinite:
            raise InputError("--at: a voltage clamp on a cylinder is applied at the origin (--at 0)")
        return VoltageStep(parse_quantity(args.voltage, "voltage", "--voltage", allow_negative=True), at)
    current = parse_quantity(args.current, "current", "--current", allow_negative=True)
    if args.shape != "pulse" and args.duration is not None:
        raise InputError("--duration: only for --shape pulse")
    if args.shape != "alpha" and args.time_to_peak is not None:
        raise InputError("--time-to-peak: only for --shape alpha")
    if args.shape == "pulse":
        if args.duration is None:
            raise InputError("--duration: required for --shape pulse, e.g. 0.5ms")
        return CurrentPulse(current, parse_quantity(args.duration, "time", "--duration"), at)
    if args.shape == "alpha":
        if args.time_to_peak is None:
            raise InputError("--time-to-peak: required for --shape alpha, e.g. 1ms")
        return AlphaCurrent(current, parse_quantity(args.time_to_peak, "time", "--time-to-peak"), at)
    return CurrentStep(current, at)


def run(args: argparse.Namespace) -> int:
    model = _model(args)
    infinite = isinstance(model, InfiniteCable)
    stimulus = _stimulus(args, infinite)
    cylinder = model.cylinder if isinstance(model, BallAndStick) else model
    length = math.inf if infinite else cylinder.length
    if not infinite and stimulus.position > length:
        raise InputError(f"--at: {format_quantity(stimulus.position, 'length')} lies beyond the cable's length "
                         f"{format_quantity(length, 'length')}")
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
        text = as_csv(response)
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
    stim: dict = {"kind": type(stimulus).__name__, "position": quantity(stimulus.position, "length")}
    if isinstance(stimulus, VoltageStep):
        stim["amplitude"] = quantity(stimulus.amplitude, "voltage")
    elif isinstance(stimulus, AlphaCurrent):
        stim["peak"] = quantity(stimulus.peak, "current")
        stim["time_to_peak"] = quantity(stimulus.time_to_peak, "time")
    else:
        stim["amplitude"] = quantity(stimulus.amplitude, "current")
        if isinstance(stimulus, CurrentPulse):
            stim["duration"] = quantity(stimulus.duration, "time")
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


def as_csv(r: Response) -> str:
    """Long-format CSV with SI units in the header: one row per (time, position)."""
    buffer = io.StringIO()
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
        if r.positions.size == 1 and np.all(np.isfinite(r.coefficients[:, 0])):
            rows = [(label, f"{value}  C{n} = {fmt(r.coefficients[n, 0], 'dimensionless')}")
                    for n, (label, value) in enumerate(rows)]
        blocks.append(table(rows, "Equalising time constants (slowest first; C_n of the step response)"))
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
