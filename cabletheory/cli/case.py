"""The cable case shared by ``charge``, ``reference`` and ``compare``: model and stimulus options.

One set of options, one reader, so that a command line written for one command means the same
to the others: the cylinder (``--Rm --Ri --Cm --diameter --length --end``), the model
(``--soma-diameter`` for a ball and stick, ``--infinite``, ``--length inf`` for a semi-infinite
cable) and the stimulus (``--shape``, ``--current``/``--voltage``, ``--duration``,
``--time-to-peak``, ``--at``).
"""

from __future__ import annotations

import argparse
import math

from ..errors import InputError
from ..units import format_quantity, parse_quantity
from .common import add_cable_options, parse_end, read_cylinder

STIMULI = {
    "step": "current step switched on at t = 0 and held",
    "pulse": "rectangular current pulse from t = 0 lasting --duration",
    "alpha": "alpha-function current I(t/tp)e^(1-t/tp) peaking at --time-to-peak",
    "clamp": "voltage-clamp step of --voltage at t = 0 (at the origin; anywhere on an infinite cable)",
}


def add_case_options(parser: argparse.ArgumentParser) -> None:
    """Cable, model and stimulus options shared by ``charge``, ``reference`` and ``compare``.

    The stimulus amplitude (``--current`` or ``--voltage``) is required by all three: there is no
    default, so a forgotten amplitude is an error rather than a silent 100 pA.
    """
    add_cable_options(parser, length_required=False)
    model = parser.add_argument_group("model (default: the cylinder above, its origin sealed)")
    model.add_argument("--soma-diameter", metavar="D",
                       help="spherical soma at the origin (ball and stick), e.g. '20 um'; same Rm and Cm")
    model.add_argument("--infinite", action="store_true",
                       help="infinite cable (no --length, --end or soma); positions may be negative")
    group = parser.add_argument_group("stimulus")
    group.add_argument("--shape", "--stimulus", dest="stimulus", choices=list(STIMULI), metavar="SHAPE",
                       help="step, pulse, alpha or clamp (default step; clamp when --voltage is given)")
    group.add_argument("--current", "--amplitude", dest="current", metavar="I",
                       help="current of a step or pulse, peak of an alpha current (bare: pA; required unless "
                            "--voltage); --amplitude is the same option")
    group.add_argument("--voltage", metavar="V", help="voltage-clamp step from rest, e.g. '10 mV' (bare: mV)")
    group.add_argument("--duration", metavar="T", help="pulse duration, e.g. '0.5 ms' (bare: ms)")
    group.add_argument("--time-to-peak", metavar="T", help="time to peak of an alpha current, e.g. '1 ms'")
    group.add_argument("--at", metavar="X",
                       help="stimulus position from the origin, e.g. '200 um' (default 0: the origin, or "
                            "the soma of a ball and stick)")


def _stimulus_shape(args: argparse.Namespace) -> str:
    shape = args.stimulus or ("clamp" if args.voltage else "step")
    if shape == "clamp":
        if not args.voltage:
            raise InputError("--shape clamp needs --voltage, the clamp step, e.g. '10 mV'")
        if args.current:
            raise InputError("--current: a voltage clamp injects no set current; give --voltage only")
    elif args.voltage:
        raise InputError(f"--voltage applies to a voltage clamp, not to --shape {shape}; "
                         "give --current for a current stimulus")
    if args.duration and shape != "pulse":
        raise InputError(f"--duration applies to --shape pulse, not {shape}")
    if args.time_to_peak and shape != "alpha":
        raise InputError(f"--time-to-peak applies to --shape alpha, not {shape}")
    if shape == "pulse" and not args.duration:
        raise InputError("--shape pulse needs --duration, e.g. '0.5 ms'")
    if shape == "alpha" and not args.time_to_peak:
        raise InputError("--shape alpha needs --time-to-peak, e.g. '1 ms'")
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
    if not args.current:
        raise InputError("--current/--voltage: no stimulus given; add e.g. '--current 100pA' (or '--voltage 10mV' "
                         "for a clamp)")
    current = parse_quantity(args.current, "current", "--current", allow_negative=True)
    if shape == "pulse":
        return tr.CurrentPulse(current, parse_quantity(args.duration, "time", "--duration"), site)
    if shape == "alpha":
        return tr.AlphaCurrent(current, parse_quantity(args.time_to_peak, "time", "--time-to-peak"), site)
    return tr.CurrentStep(current, site)


