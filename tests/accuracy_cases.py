"""Cases across the whole range of the exact time courses, for the accuracy tests and the fuzz.

A case is drawn from plain numbers (so hypothesis and a seeded random generator can both
drive it): model, L, B, soma ratio y, stimulus, its site and parameters, recording sites and
times. ``check`` runs ``transient.charge`` and compares every value with the independent
Laplace-domain reference of tests/laplace_reference.py, returning the worst error/bound ratio.

The membrane is the demo cable of docs/sources.md (Rm 20 000 Ω·cm², Ri 200 Ω·cm, Cm 1 µF/cm²,
d 2 µm: λ = 707.1 µm, τm = 20 ms, R∞ = 450.2 MΩ); sizes are set through L, B and y.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import mpmath as mp
import numpy as np
from laplace_reference import si_voltage

from cabletheory import cable, transient

MEMBRANE = {"membrane_resistivity": 2.0, "axial_resistivity": 2.0, "membrane_capacitance": 0.01, "diameter": 2e-6}
_BASE = cable.Cylinder(**MEMBRANE, length=1.0)
LAMBDA = _BASE.length_constant
TAU = _BASE.time_constant
R_INF = _BASE.semi_infinite_input_resistance

MODELS = ("cylinder", "semi-infinite", "infinite", "ball")
STIMULI = ("step", "pulse", "alpha", "clamp")
SITES = ("origin", "end", "inside", "near end", "source")


@dataclass(frozen=True)
class Draw:
    """Plain numbers describing one case (exponents are log10)."""

    model: str
    stimulus: str
    log_length: float = 0.0  # L = 10**log_length (finite cylinder, ball)
    end: float = 0.0  # B: 0 sealed, inf killed, else a ratio
    log_soma: float = 0.0  # y = 10**log_soma (ball)
    source: str = "origin"  # origin, end, inside (current inputs)
    inside: float = 0.37  # fraction of L for "inside"
    log_duration: float = -1.0  # pulse duration in τm
    log_peak: float = -1.0  # alpha time to peak in τm
    log_time: float = 0.0  # T = 10**log_time
    after_switch: int = 0  # > 0: T is that many ulps after the pulse's end instead
    sites: tuple[str, ...] = ("origin", "inside")


def build(draw: Draw):
    """(model, stimulus, times in s, positions in m) of a draw."""
    L = 10.0**draw.log_length
    if draw.model == "infinite":
        model = transient.InfiniteCable(**MEMBRANE)
        length = math.inf
    else:
        length = math.inf if draw.model == "semi-infinite" else L * LAMBDA
        g_end = 0.0 if draw.model == "semi-infinite" else draw.end / R_INF
        cyl = cable.Cylinder(**MEMBRANE, length=length, end_conductance=g_end)
        model = cyl
        if draw.model == "ball":
            y = 10.0**draw.log_soma
            model = transient.BallAndStick(cyl, math.sqrt(y * MEMBRANE["membrane_resistivity"] / (math.pi * R_INF)))
    finite = math.isfinite(length)
    span = length if finite else 3 * LAMBDA
    where = {"origin": 0.0, "end": span, "inside": draw.inside * span}
    x0 = 0.0 if draw.stimulus == "clamp" and draw.model != "infinite" else where.get(draw.source, 0.0)
    if draw.stimulus == "step":
        stim = transient.CurrentStep(1e-10, x0)
    elif draw.stimulus == "pulse":
        stim = transient.CurrentPulse(1e-10, 10.0**draw.log_duration * TAU, x0)
    elif draw.stimulus == "alpha":
        stim = transient.AlphaCurrent(1e-10, 10.0**draw.log_peak * TAU, x0)
    else:
        stim = transient.VoltageStep(0.01, x0)
    positions = []
    for site in draw.sites:
        if site == "near end":
            positions.append(span * (1 - 1e-9) if finite else 1e-9 * LAMBDA)
        elif site == "source":
            positions.append(x0)
        else:
            positions.append(where[site])
    if draw.stimulus == "pulse" and draw.after_switch:
        t = stim.duration
        for _ in range(draw.after_switch):
            t = math.nextafter(t, math.inf)
        times = [t]
    else:
        times = [10.0**draw.log_time * TAU]
    return model, stim, np.array(times), np.array(positions)


def check(draw: Draw, tolerance: float = 1e-10) -> tuple[float, str]:
    """Worst |value - reference| / bound over the draw's grid (0 when every value is exact), and
    a description of the worst point. Raises whatever ``charge`` raises."""
    model, stim, times, positions = build(draw)
    response = transient.charge(model, stim, times, positions, tolerance=tolerance, modes=0)
    worst, where = 0.0, ""
    for i, t in enumerate(times):
        for j, x in enumerate(positions):
            want = si_voltage(model, stim, float(t), float(x))
            got = response.voltage[i, j]
            bound = response.bounds[i, j]
            error = abs(mp.mpf(got) - want)
            ratio = float(error / bound) if bound > 0 else (0.0 if error == 0 else math.inf)
            if ratio >= worst:
                worst = ratio
                where = (f"t={t!r} x={x!r} got={got!r} want={float(want)!r} bound={bound:.3g} "
                         f"method={response.method}")
    return worst, where
