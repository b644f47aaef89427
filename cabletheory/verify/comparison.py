r"""Compare a recording with an exact solution, and measure observed orders of convergence.

* :func:`compare` evaluates an :class:`ExactCase` at exactly the recorded points and reports
  maximum and RMS absolute and relative errors, where and when the worst error occurs, the
  error of every sample, and a verdict against a tolerance;
* :func:`convergence` estimates the observed orders in Δx and Δt from several runs and sets
  them beside the scheme's theoretical orders (second order in Δx for the usual three-point
  difference [CP]; first order in Δt for backward Euler, second for Crank–Nicolson, Crank &
  Nicolson 1947).

Every exact answer assumes a passive, linear membrane with uniform properties; so does every
verdict. A simulator with active conductances is outside what this package can check.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .. import compartment as cp
from ..errors import FileFormatError, InputError
from .reading import Recording

__all__ = [
    "Comparison",
    "Convergence",
    "ExactCase",
    "OrderEstimate",
    "compare",
    "convergence",
]

Array = NDArray[np.float64]


# ======================================================================================
# exact cases and comparison
# ======================================================================================
@dataclass(frozen=True, slots=True)
class ExactCase:
    """An exact solution that can be evaluated at any (time, position) pairs.

    ``evaluate(times, positions)`` takes two equal-length arrays (s, m) and returns
    ``(voltage, bound)``: the exact voltage from rest (V) and a bound on its numerical
    error (V) at each pair. ``parameters`` maps a name to ``(SI value, SI unit)``.
    """

    evaluate: Callable[[Array, Array], tuple[Array, Array]]
    description: str
    method: str
    parameters: Mapping[str, tuple[float, str]] = field(default_factory=dict)
    length: float = math.inf  # m, positions must lie in [start, length]
    start: float = 0.0  # m; -inf for an infinite cable (positions on both sides of the input)
    stimulus_shape: str = "step"  # the command line's word: step, pulse, alpha or clamp


@dataclass(frozen=True, slots=True)
class Comparison:
    """Errors of one recording against the exact solution (SI; errors = simulated − exact).

    Relative errors are divided by the largest |exact voltage| of the run (``scale``), not
    point by point, so that samples near rest (e.g. at t = 0) do not blow them up. ``exact`` and
    ``errors`` hold every sample, in the recording's order, so that no view recomputes them.
    """

    name: str
    samples: int
    max_abs_error: float  # V
    rms_abs_error: float  # V
    max_rel_error: float  # 1
    rms_rel_error: float  # 1
    scale: float  # V, max |exact|
    worst_time: float  # s
    worst_position: float  # m
    worst_line: int
    worst_simulated: float  # V
    worst_exact: float  # V
    tolerance: float  # V if absolute, else fraction of scale
    relative: bool
    passed: bool
    reference_bound: float  # V, largest error bound of the exact values
    sites: Array  # m
    site_max_abs_error: Array  # V, worst error at each site
    exact: Array  # V, the exact voltage at every sample (0 before the onset)
    errors: Array  # V, simulated − exact at every sample
    used: NDArray[np.bool_] | None = None  # the samples counted in the figures (None: all)
    hints: tuple[str, ...] = ()  # what looks wrong about the file's units, rest or onset, and what to try


def compare(recording: Recording, exact: ExactCase, tolerance: float, *, relative: bool = False,
            skip_onset: bool = False) -> Comparison:
    """Compare a recording with the exact solution at exactly its recorded points.

    Parameters
    ----------
    recording : from :func:`read_recording`
    exact : the exact case (same parameters and stimulus as the simulation)
    tolerance : largest acceptable error, V (``relative=False``) or a fraction of the
        largest exact voltage (``relative=True``)
    skip_onset : leave the samples recorded exactly at the onset (t = 0) out of every figure:
        simulators differ on whether the sample at the switch already includes the stimulus

    The verdict passes when the maximum error is within the tolerance. Samples before the
    stimulus onset (negative time) are compared with rest (0 V). The result's ``hints`` say what
    looks wrong when the figures suggest a unit, resting-potential or onset mistake
    (:func:`diagnose`).
    """
    if not (math.isfinite(tolerance) and tolerance > 0):
        raise InputError(f"tolerance must be positive, got {tolerance!r}")
    beyond = recording.positions > exact.length * (1 + 1e-9)
    if np.any(beyond):
        k = int(np.argmax(beyond))
        raise FileFormatError(f"{recording.name}:{int(recording.lines[k])}: position "
                              f"{recording.positions[k]:.6g} m lies beyond the cable's length "
                              f"{exact.length:.6g} m")
    before = recording.positions < exact.start
    if np.any(before):
        k = int(np.argmax(before))
        raise FileFormatError(f"{recording.name}:{int(recording.lines[k])}: position "
                              f"{recording.positions[k]:.6g} m lies before the cable's origin")
    positions = np.minimum(recording.positions, exact.length)
    after = recording.times >= 0
    v_exact = np.zeros(recording.times.size)
    bound = np.zeros(recording.times.size)
    if np.any(after):
        v_exact[after], bound[after] = exact.evaluate(recording.times[after], positions[after])
    err = recording.voltage - v_exact
    used = ~(recording.times == 0) if skip_onset else np.ones(err.size, dtype=bool)
    if not used.any():
        raise InputError(f"{recording.name}: every sample is at the onset; nothing is left to compare")
    counted = np.where(used, np.abs(err), -1.0)
    k = int(np.argmax(counted))
    max_abs = float(abs(err[k]))
    rms_abs = float(np.sqrt(np.mean(err[used] ** 2)))
    scale = float(np.max(np.abs(v_exact[used])))
    max_rel = max_abs / scale if scale > 0 else math.inf
    rms_rel = rms_abs / scale if scale > 0 else math.inf
    sites = np.unique(recording.positions)
    site_err = np.array([np.max(counted[recording.positions == s], initial=0.0) for s in sites])
    passed = (max_rel if relative else max_abs) <= tolerance
    hints = diagnose(recording, v_exact, err, used)
    return Comparison(name=recording.name, samples=int(used.sum()), max_abs_error=max_abs, rms_abs_error=rms_abs,
                      max_rel_error=max_rel, rms_rel_error=rms_rel, scale=scale,
                      worst_time=float(recording.times[k]), worst_position=float(recording.positions[k]),
                      worst_line=int(recording.lines[k]), worst_simulated=float(recording.voltage[k]),
                      worst_exact=float(v_exact[k]), tolerance=float(tolerance), relative=relative,
                      passed=bool(passed), reference_bound=float(np.max(bound)) if bound.size else 0.0,
                      sites=sites, site_max_abs_error=site_err, exact=v_exact, errors=err,
                      used=None if used.all() else used, hints=hints)


def diagnose(recording: Recording, exact: Array, errors: Array, used: NDArray[np.bool_]) -> tuple[str, ...]:
    """What looks wrong when a recording is far from the exact solution, and what to try.

    The rules, each checked on the samples counted: (1) no exact voltage above 0, yet the file
    records a response (the onset is probably later than the file's clock says); (2) the samples
    before the onset sit far from 0 (the resting potential was probably not subtracted); (3) the
    worst error exceeds half the largest exact voltage while a unit was assumed rather than read
    from the file (the file is probably in other units, e.g. SI); (4) the simulated and exact
    peaks differ by a factor near 1000 (a unit prefix mix-up). Each hint names the option to use.
    """
    hints: list[str] = []
    v, t = recording.voltage[used], recording.times[used]
    peak_exact = float(np.max(np.abs(exact[used]), initial=0.0))
    peak_file = float(np.max(np.abs(v), initial=0.0))
    if peak_exact == 0 and peak_file > 0:
        hints.append("the exact voltage is 0 at every sample (all at or before the onset?): check --onset, the "
                     "stimulus onset on the file's own clock")
    before = v[t < 0]
    if before.size and abs(float(np.median(before))) > max(1e-3, 0.5 * peak_exact):
        hints.append(f"the samples before the onset sit at {float(np.median(before)) * 1e3:.4g} mV, not at rest: "
                     "give --rest (the resting potential, or 'first')")
    worst = float(np.max(np.abs(errors[used]), initial=0.0))
    if recording.assumed and peak_exact > 0 and worst > 0.5 * peak_exact:
        assumed = ", ".join(f"{k} in {recording.units[k]}" for k in recording.assumed)
        hints.append(f"the file declares no unit for {', '.join(recording.assumed)} (read as {assumed}); if it "
                     "holds other units, put them in the header ('time (s)') or give --time-unit, --voltage-unit "
                     "or --position-unit")
    if peak_exact > 0 and peak_file > 0:
        ratio = peak_file / peak_exact
        for factor, word in ((1e3, "1000 times larger"), (1e-3, "1000 times smaller")):
            if 0.5 * factor < ratio < 2 * factor:
                hints.append(f"the file's peak is about {word} than the exact one: a unit prefix (V against mV, "
                             "s against ms) looks mixed up")
    return tuple(hints)


# ======================================================================================
# observed order of convergence
# ======================================================================================
@dataclass(frozen=True, slots=True)
class OrderEstimate:
    """One observed order: the least-squares slope of log(error) against log(spacing)."""

    axis: str  # "space", "time" or "joint"
    observed: float
    expected: float
    runs: tuple[int, ...]  # indices of the runs used
    verdict: str  # "matches", "below expected", "above expected"
    note: str


@dataclass(frozen=True, slots=True)
class Convergence:
    """Observed orders from several runs, beside the scheme's theoretical ones."""

    errors: Array  # V, max abs error of each run
    spacings: Array  # m, Δx of each run (nan if unknown)
    steps: Array  # s, Δt of each run (nan if unknown)
    scheme: str
    estimates: tuple[OrderEstimate, ...]


ORDER_TOLERANCE = 0.3  # how far an observed order may sit from the theoretical one and still "match"


def _slope(h: Array, e: Array) -> float:
    x, y = np.log(h), np.log(e)
    x = x - x.mean()
    return float(np.sum(x * (y - y.mean())) / np.sum(x * x))


def _verdict(observed: float, expected: float) -> tuple[str, str]:
    if abs(observed - expected) <= ORDER_TOLERANCE:
        return "matches", "the discretisation behaves as its scheme predicts"
    if observed < expected:
        return "below expected", ("the other discretisation (space or time) or a fixed error may dominate, "
                                  "the grids may not yet be fine enough, or the scheme is not what it claims")
    return "above expected", "errors may cancel at these points, or the grids are too coarse to tell"


def _groups(values: Array) -> list[NDArray[np.int64]]:
    """Indices of runs sharing (to 1e-9) the same value; nan values never group."""
    out: list[NDArray[np.int64]] = []
    seen = np.zeros(values.size, dtype=bool)
    for i in range(values.size):
        if seen[i] or not np.isfinite(values[i]):
            continue
        same = np.flatnonzero(np.isfinite(values) & np.isclose(values, values[i], rtol=1e-9, atol=0))
        seen[same] = True
        out.append(same)
    return out


def convergence(errors: ArrayLike, spacings: ArrayLike, steps: ArrayLike, scheme: str) -> Convergence:
    """Observed orders of convergence in space and time from several runs.

    Runs sharing a time step and differing in Δx give the order in space; runs sharing Δx
    and differing in Δt give the order in time (the largest such group is used). When every
    run changes both, the order is reported against Δx ("joint"), and the expected value is
    ``min(p_x, p_t·k)`` where Δt ∝ Δx^k across the runs.

    Parameters
    ----------
    errors : max abs error of each run, V (any consistent measure)
    spacings : Δx of each run, m (nan when unknown)
    steps : Δt of each run, s (nan when unknown)
    scheme : "backward-euler" or "crank-nicolson" (sets the expected time order)
    """
    e = np.asarray(errors, dtype=float)
    dx = np.asarray(spacings, dtype=float)
    dt = np.asarray(steps, dtype=float)
    if not (e.shape == dx.shape == dt.shape) or e.ndim != 1:
        raise InputError("errors, spacings and steps need one value per run")
    if e.size < 2:
        raise InputError("an observed order needs at least two runs")
    if np.any(~np.isfinite(e)) or np.any(e <= 0):
        raise InputError("every run's error must be finite and positive to estimate an order")
    p_space, p_time = cp.expected_order(scheme)
    estimates: list[OrderEstimate] = []
    for axis, fixed, varying, expected in (("space", dt, dx, p_space), ("time", dx, dt, p_time)):
        best: NDArray[np.int64] | None = None
        for group in _groups(fixed):
            distinct = np.unique(varying[group][np.isfinite(varying[group])])
            if distinct.size >= 2 and (best is None or group.size > best.size):
                best = group[np.isfinite(varying[group])]
        if best is None and np.all(np.isnan(fixed)) and np.all(np.isfinite(varying)) \
                and np.unique(varying).size >= 2 and axis == "space" and np.all(np.isnan(dt)):
            best = np.arange(e.size)  # only Δx known: assume Δt fixed or negligible
        if best is None and np.all(np.isnan(fixed)) and np.all(np.isfinite(varying)) \
                and np.unique(varying).size >= 2 and axis == "time" and np.all(np.isnan(dx)):
            best = np.arange(e.size)
        if best is not None:
            observed = _slope(varying[best], e[best])
            verdict, note = _verdict(observed, expected)
            estimates.append(OrderEstimate(axis, observed, float(expected), tuple(int(i) for i in best),
                                           verdict, note))
    if not estimates and np.all(np.isfinite(dx)) and np.all(np.isfinite(dt)) and np.unique(dx).size >= 2:
        k = _slope(dx, dt) if np.unique(dt).size >= 2 else 0.0
        joint_expected = min(p_space, p_time * k) if k > 0 else p_space
        observed = _slope(dx, e)
        verdict, note = _verdict(observed, joint_expected)
        estimates.append(OrderEstimate("joint", observed, float(joint_expected), tuple(range(e.size)), verdict,
                                       f"Δx and Δt refined together (Δt ∝ Δx^{k:.2g}); {note}"))
    if not estimates:
        raise InputError("cannot estimate an order: give each run's Δx and/or Δt (they must differ "
                         "between runs), e.g. with --dx and --dt or '# dx = 25 um' lines in the files")
    return Convergence(errors=e, spacings=dx, steps=dt, scheme=scheme, estimates=tuple(estimates))
