"""``cabletheory reference``: an exact solution on a grid, to CSV, JSON or NPZ, with metadata."""

from __future__ import annotations

import argparse
import math
from pathlib import Path

import numpy as np

from .. import PASSIVE_CAVEAT
from ..cable import Cylinder
from ..errors import InputError, MissingFileError
from ..units import format_quantity, parse_quantity, parse_series
from ..verify import ExactCase, Recording, read_recording, reference_csv, reference_json, reference_npz, reference_table
from .common import add_cable_options, parse_end, read_cylinder, write_atomically

FORMATS = ("csv", "json", "npz")


STIMULI = {
    "step": "current step switched on at t = 0 and held",
    "pulse": "rectangular current pulse from t = 0 lasting --duration",
    "alpha": "alpha-function current I(t/tp)e^(1-t/tp) peaking at --time-to-peak",
    "clamp": "voltage-clamp step of --voltage at t = 0 (at the origin; anywhere on an infinite cable)",
}
DEFAULT_CURRENT = "100 pA"


def add_case_options(parser: argparse.ArgumentParser) -> None:
    """Cable, model and stimulus options shared by ``reference`` and ``compare``."""
    add_cable_options(parser, length_required=False)
    model = parser.add_argument_group("model (default: the cylinder above, its origin sealed)")
    model.add_argument("--soma-diameter", metavar="D",
                       help="spherical soma at the origin (ball and stick), e.g. '20 um'; same Rm and Cm")
    model.add_argument("--infinite", action="store_true",
                       help="infinite cable (no --length, --end or soma); positions may be negative")
    group = parser.add_argument_group("stimulus")
    group.add_argument("--stimulus", "--shape", dest="stimulus", choices=list(STIMULI), metavar="SHAPE",
                       help="step, pulse, alpha or clamp (default step; clamp when --voltage is given); "
                            "--shape is the same option, as in 'cabletheory charge'")
    group.add_argument("--current", "--amplitude", dest="current", metavar="I",
                       help=f"current of a step or pulse, peak of an alpha current (bare: pA; default "
                            f"{DEFAULT_CURRENT}); --amplitude is the same option")
    group.add_argument("--voltage", metavar="V", help="voltage-clamp step from rest, e.g. '10 mV' (bare: mV)")
    group.add_argument("--duration", metavar="T", help="pulse duration, e.g. '0.5 ms' (bare: ms)")
    group.add_argument("--time-to-peak", metavar="T", help="time to peak of an alpha current, e.g. '1 ms'")
    group.add_argument("--at", metavar="X",
                       help="stimulus position from the origin, e.g. '200 um' (default 0: the origin, or "
                            "the soma of a ball and stick)")
    group.add_argument("--exact-tolerance", default="1e-9 mV", metavar="V",
                       help="bound on the exact solution's own error (default 1e-9 mV)")


def _stimulus_shape(args: argparse.Namespace) -> str:
    shape = args.stimulus or ("clamp" if args.voltage else "step")
    if shape == "clamp":
        if not args.voltage:
            raise InputError("--stimulus clamp needs --voltage, the clamp step, e.g. '10 mV'")
        if args.current:
            raise InputError("--current: a voltage clamp injects no set current; give --voltage only")
    elif args.voltage:
        raise InputError(f"--voltage applies to a voltage clamp, not to --stimulus {shape}; "
                         "give --current for a current stimulus")
    if args.duration and shape != "pulse":
        raise InputError(f"--duration applies to --stimulus pulse, not {shape}")
    if args.time_to_peak and shape != "alpha":
        raise InputError(f"--time-to-peak applies to --stimulus alpha, not {shape}")
    if shape == "pulse" and not args.duration:
        raise InputError("--stimulus pulse needs --duration, e.g. '0.5 ms'")
    if shape == "alpha" and not args.time_to_peak:
        raise InputError("--stimulus alpha needs --time-to-peak, e.g. '1 ms'")
    return shape


def read_model(args: argparse.Namespace):  # -> Cylinder | transient.BallAndStick | transient.InfiniteCable
    """The cable model the options describe (every value checked, in SI)."""
    from .. import transient as tr

    sealed = parse_end(args.end) == 0
    if args.infinite:
        if args.length is not None:
            raise InputError("--infinite: an infinite cable has no --length; give one or the other")
        if args.soma_diameter:
            raise InputError("--soma-diameter: a ball and stick needs a finite --length, not --infinite")
        if not sealed:
            raise InputError("--end: an infinite cable has no far end")
        cylinder = read_cylinder(argparse.Namespace(**{**vars(args), "length": "inf"}))
        return tr.InfiniteCable.like(cylinder)
    if args.length is None:
        raise InputError("--length: give the cable length ('inf' for a semi-infinite cable) or --infinite")
    cylinder = read_cylinder(args)
    if math.isinf(cylinder.length):
        if not sealed:
            raise InputError("--end: a semi-infinite cable (--length inf) has no far end")
        if args.soma_diameter:
            raise InputError("--soma-diameter: a ball and stick needs a finite --length")
        return cylinder
    if args.soma_diameter:
        return tr.BallAndStick(cylinder, parse_quantity(args.soma_diameter, "length", "--soma-diameter"))
    return cylinder


def read_stimulus(args: argparse.Namespace, model: object):  # -> transient.Stimulus
    """The stimulus the options describe, checked against the model."""
    from .. import transient as tr

    shape = _stimulus_shape(args)
    infinite = isinstance(model, tr.InfiniteCable)
    site = parse_quantity(args.at, "length", "--at", allow_zero=True, allow_negative=infinite) if args.at else 0.0
    if not infinite:
        length = model.cylinder.length if isinstance(model, tr.BallAndStick) else model.length
        if site > length:
            raise InputError(f"--at: {format_quantity(site, 'length')} lies beyond the cable's end "
                             f"({format_quantity(length, 'length')})")
        if shape == "clamp" and site != 0:
            raise InputError("--at: a voltage clamp on a cylinder or ball and stick is at the origin; only an "
                             "--infinite cable takes it elsewhere")
    if shape == "clamp":
        return tr.VoltageStep(parse_quantity(args.voltage, "voltage", "--voltage", allow_negative=True), site)
    current = parse_quantity(args.current or DEFAULT_CURRENT, "current", "--current", allow_negative=True)
    if shape == "pulse":
        return tr.CurrentPulse(current, parse_quantity(args.duration, "time", "--duration"), site)
    if shape == "alpha":
        return tr.AlphaCurrent(current, parse_quantity(args.time_to_peak, "time", "--time-to-peak"), site)
    return tr.CurrentStep(current, site)


def build_case(args: argparse.Namespace) -> ExactCase:
    """The exact case the options describe.

    A current step at the origin of a finite sealed cylinder uses the independent series of
    :func:`~cabletheory.verify.sealed_step_case`; every other case the exact transients of
    :mod:`cabletheory.transient` (:func:`~cabletheory.verify.transient_case`).
    """
    from .. import transient as tr
    from ..verify import sealed_step_case, transient_case

    tolerance = parse_quantity(args.exact_tolerance, "voltage", "--exact-tolerance")
    model = read_model(args)
    stimulus = read_stimulus(args, model)
    if (type(model) is Cylinder and math.isfinite(model.length) and model.end_conductance == 0
            and type(stimulus) is tr.CurrentStep and stimulus.position == 0):
        return sealed_step_case(model, stimulus.amplitude, tolerance)
    return transient_case(model, stimulus, tolerance)


def allows_negative_positions(args: argparse.Namespace) -> bool:
    """Positions below 0 make sense only on an infinite cable."""
    return bool(getattr(args, "infinite", False))


def parser_for_quantities(text: str, kind: str, where: str) -> float:
    """The :data:`~cabletheory.verify.QuantityParser` the command line gives the core."""
    return parse_quantity(text, kind, where, allow_zero=True, allow_negative=True)


def read_run(path: str, args: argparse.Namespace) -> Recording:
    """Read one simulator output file with the layout options of ``args``."""
    p = Path(path)
    if not p.is_file():
        raise MissingFileError(f"{path}: no such file")
    try:
        text = p.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(f"{path}: not a UTF-8 text file") from None
    rest: float | str = 0.0
    if getattr(args, "rest", None):
        rest = "first" if args.rest.strip().lower() == "first" else parse_quantity(
            args.rest, "voltage", "--rest", allow_zero=True, allow_negative=True)
    onset = parse_quantity(args.onset, "time", "--onset", allow_zero=True, allow_negative=True) \
        if getattr(args, "onset", None) else 0.0
    site = parse_quantity(args.site, "length", "--site", allow_zero=True) if getattr(args, "site", None) else None
    return read_recording(text, path, parser_for_quantities, time_unit=args.time_unit,
                          position_unit=args.position_unit, voltage_unit=args.voltage_unit,
                          resting_potential=rest, time_offset=onset, site=site,
                          allow_negative_positions=allows_negative_positions(args))


def add_layout_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("reading simulator files (see docs/verify.md for the layouts)")
    group.add_argument("--time-unit", metavar="UNIT", help="unit of the time column if its header has none "
                                                          "(default ms)")
    group.add_argument("--position-unit", metavar="UNIT", help="unit of positions if not declared (default µm)")
    group.add_argument("--voltage-unit", metavar="UNIT", help="unit of voltages if not declared (default mV)")
    group.add_argument("--rest", metavar="V",
                       help="resting potential to subtract, e.g. '-65 mV', or 'first' to use each site's "
                            "first sample (default 0: the file already holds deviations from rest)")
    group.add_argument("--onset", metavar="T", help="stimulus onset in the file's clock (default 0)")
    group.add_argument("--site", metavar="X", help="position of the only voltage column of a wide table "
                                                   "whose header does not say it")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "reference",
        help="exact solution on a grid, to CSV/JSON/NPZ with metadata (to check a simulator)",
        description="Write the exact voltage of a passive cable case on a grid of times and positions, with "
                    "every parameter, the method, the tool version and the error bound of the values.",
        epilog=PASSIVE_CAVEAT,
    )
    add_case_options(parser)
    grid = parser.add_argument_group("grid")
    grid.add_argument("--times", metavar="RANGE", help="times since onset: '0:20:0.5 ms' or '1, 2, 5 ms'")
    grid.add_argument("--positions", metavar="RANGE", help="recording positions: '0:500:100 um' or '0, 250 um'")
    grid.add_argument("--like", metavar="FILE",
                      help="take the times and positions of an existing simulator output file instead")
    add_layout_options(parser)
    parser.add_argument("--output", "-o", metavar="FILE",
                        help="file to write (.csv, .json or .npz); default: CSV to standard output")
    parser.add_argument("--format", choices=FORMATS, help="file format (default: from the file name)")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    case = build_case(args)
    inputs: list[str] = []
    if args.like:
        if args.times or args.positions:
            raise InputError("give either --like FILE or --times/--positions, not both")
        recording = read_run(args.like, args)
        inputs.append(args.like)
        if recording.layout == "wide":
            times = np.unique(recording.times)
            positions = recording.sites
            layout = "wide"
        else:
            times, positions, layout = recording.times, recording.positions, "long"
        if np.any(times < 0):
            raise InputError(f"{args.like}: times before the onset; give --onset")
    else:
        if not (args.times and args.positions):
            raise InputError("give --times and --positions (or --like FILE)")
        times = np.array(parse_series(args.times, "time", "--times"))
        positions = np.array(parse_series(args.positions, "length", "--positions",
                                          allow_negative=allows_negative_positions(args)))
        layout = "wide"
    table = reference_table(case, times, positions, layout=layout)
    fmt = args.format or (Path(args.output).suffix.lstrip(".").lower() if args.output else "csv")
    if fmt not in FORMATS:
        raise InputError(f"--output: cannot tell the format of {args.output!r}; use .csv, .json or .npz or "
                         "give --format")
    data: str | bytes = {"csv": reference_csv, "json": reference_json, "npz": reference_npz}[fmt](table)
    if args.output is None:
        if isinstance(data, bytes):
            raise InputError("NPZ is binary; give --output FILE.npz")
        print(data, end="")
        return 0
    write_atomically(args.output, data, protected=inputs)
    print(f"wrote {args.output} ({fmt.upper()}, {table.times.size} times × {table.positions.size} positions"
          f"{'' if layout == 'wide' else ' paired'}; largest error bound "
          f"{format_quantity(table.largest_bound, 'voltage')})")
    return 0
