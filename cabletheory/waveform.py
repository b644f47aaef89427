r"""What one reads off a response: peak, time to peak, rise time, half-width and attenuation.

These are the figures an experimenter takes from a recorded EPSP-like response, here taken from
the exact time course of a :class:`~cabletheory.case.Case` (:func:`cabletheory.transient.charge`)
or of a whole tree's :class:`~cabletheory.tree_case.TreeCase` (:func:`cabletheory.tree_time.tree_response`),
rather than from samples, so that they do not depend on an output grid:

* **peak**: the extreme voltage (largest magnitude, with its sign). For a held stimulus (current
  step, voltage clamp) the voltage rises monotonically to its final value (Rall 1969), and the
  peak is that final value, reached only as t → ∞ (no time to peak, no half-width);
* **time to peak**: when the peak is reached;
* **rise time**: from 10 % to 90 % of the peak (of the final value for a held stimulus);
* **half-width**: the time spent above half the peak;
* **attenuation**: the peak at a position divided by the peak at the stimulus site (for a clamp,
  by the clamp step), the figure whose decay with distance Rall & Rinzel (1973) and Jack, Noble &
  Tsien (1975, ch. 7) tabulate (recalled from memory).

Each time is found by searching the exact solution, first on a grid spanning
:data:`WINDOW_TIME_CONSTANTS` membrane time constants (linear and logarithmic samples together),
then by successive refinement of the bracketing interval (:data:`ZOOMS` rounds of
:data:`ZOOM_POINTS` samples), so that every time is located to a relative
:math:`(\text{grid step}/\text{window}) \cdot \text{ZOOM\_POINTS}^{-\text{ZOOMS}}` of the window,
below 1e-9 (the evaluation's own truncation error aside). A feature that does not occur inside
the window (a response still above half its peak at its end) is reported as not a number.

Every figure assumes a passive, linear membrane with uniform Rm, Ri and Cm: an active dendrite's
EPSP shape is not described by them.

References
----------
Rall W (1969) Biophys. J. 9:1483 (monotone charging under a held input);
Rall W & Rinzel J (1973) Biophys. J. 13:648 (attenuation of transients along branches);
Jack JJB, Noble D & Tsien RW (1975) Electric Current Flow in Excitable Cells, ch. 7 (EPSP shape
indices: time to peak and half-width against distance; recalled from memory).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Protocol

import numpy as np
from numpy.typing import NDArray

from .case import Case
from .transient import charge

__all__ = ["WINDOW_TIME_CONSTANTS", "ResponseFeatures", "response_features"]

Array = NDArray[np.float64]

WINDOW_TIME_CONSTANTS = 12.0  # the search window, in τm, after the end of a pulse or the peak of an alpha input
GRID_POINTS = 400  # linear samples of the window (plus half as many logarithmic ones from 1e-6 of it)
ZOOM_POINTS = 48  # samples of each refinement round
ZOOMS = 4  # refinement rounds


Sampler = Callable[[Array], tuple[Array, Array | None]]


class SelfSampling(Protocol):
    """A case that evaluates its own exact response (a whole tree's
    :class:`~cabletheory.tree_case.TreeCase`, a later layer than this module)."""

    @property
    def shape(self) -> str: ...

    @property
    def membrane_time_constant(self) -> float: ...

    @property
    def stimulus(self) -> object: ...

    def sampler(self, labels: Sequence[str] | None, tolerance: float) -> tuple[Sampler, list[str], float]:
        """(``run(times) -> (voltage (nT, n + 1), final voltage or None)`` at the ``n`` recorded points
        and, last, the stimulus site; the ``n`` labels; the clamp step, or 0)."""
        ...


@dataclass(frozen=True, slots=True)
class ResponseFeatures:
    """The features of the response at one position (SI; nan where a feature does not exist).

    Attributes
    ----------
    position : m from the origin on a cable; the point label on a tree
    peak : V, the extreme voltage with its sign (the final voltage of a held stimulus)
    time_to_peak : s (nan for a held stimulus, whose peak is only reached as t → ∞)
    rise_time : s, from 10 % to 90 % of the peak
    half_width : s, time above half the peak (nan for a held stimulus, or if the window ends first)
    attenuation : peak here / peak at the stimulus site (or the clamp step); 1 at the site
    held : True for a step or clamp (monotone charging to a final value)
    """

    position: float | str
    peak: float
    time_to_peak: float
    rise_time: float
    half_width: float
    attenuation: float
    held: bool


def _window(case: Case | SelfSampling) -> float:
    s = case.stimulus
    extra = getattr(s, "duration", 0.0) + 3.0 * getattr(s, "time_to_peak", 0.0)
    return WINDOW_TIME_CONSTANTS * case.membrane_time_constant + extra


def _grid(window: float) -> Array:
    linear = np.linspace(0.0, window, GRID_POINTS + 1)
    logarithmic = np.geomspace(window * 1e-6, window, GRID_POINTS // 2)
    return np.unique(np.concatenate([linear, logarithmic]))


def _refine(evaluate: Callable[[Array], Array], lo: Array, hi: Array,
            pick: Callable[[int, Array, Array], int]) -> Array:
    """Shrink each bracket [lo[j], hi[j]] around the sample that ``pick(j, t, v)`` chooses (an index), for
    ZOOMS rounds; ``evaluate(times)`` gives the voltage at every position for each time (one solver
    call per round for all positions). Brackets that are nan stay nan."""
    lo, hi = lo.copy(), hi.copy()
    live = np.flatnonzero(np.isfinite(lo))
    for _ in range(ZOOMS):
        if live.size == 0:
            break
        grids = [np.linspace(lo[j], hi[j], ZOOM_POINTS + 1) for j in live]
        v = evaluate(np.concatenate(grids))
        for n, (j, t) in enumerate(zip(live, grids, strict=True)):
            rows = slice(n * (ZOOM_POINTS + 1), (n + 1) * (ZOOM_POINTS + 1))
            k = pick(int(j), t, v[rows, j])
            lo[j], hi[j] = t[max(k - 1, 0)], t[min(k + 1, t.size - 1)]
    return 0.5 * (lo + hi)


def _bracket(t: Array, s: Array, level: float, after: int, rising: bool) -> tuple[float, float]:
    """The grid interval in which s first crosses ``level`` after sample ``after`` (nan if never)."""
    hits = np.flatnonzero(s[after:] >= level if rising else s[after:] <= level)
    if hits.size == 0:
        return math.nan, math.nan
    k = after + int(hits[0])
    return (float(t[k - 1]), float(t[k])) if k > 0 else (float(t[0]), float(t[0]))


def response_features(case: Case | SelfSampling, positions: Sequence[float] | Sequence[str] | Array | None = None, *,
                      tolerance: float = 1e-10) -> tuple[ResponseFeatures, ...]:
    """Peak, time to peak, 10–90 % rise time, half-width and attenuation of the exact response.

    The same search serves every cell kind: a :class:`~cabletheory.case.Case` (cylinder, ball and
    stick, semi-infinite or infinite cable; its exact solution is
    :func:`cabletheory.transient.charge`) and a :class:`~cabletheory.tree_case.TreeCase` (a whole
    tree; its solution is :func:`cabletheory.tree_time.tree_response`, whose values carry an error
    estimate rather than a bound).

    Parameters
    ----------
    case : the cell and stimulus
    positions : where to read the response: m from the origin on a cable (default: the case's
        positions, else the stimulus site); point labels on a tree (default: the case's labels)
    tolerance : truncation error allowed in the exact solution, relative to the case's reference voltage

    Returns
    -------
    One :class:`ResponseFeatures` per position, in order (on a tree ``position`` is the label).
    """
    if isinstance(case, Case):
        x = np.asarray(case.positions if positions is None else positions, dtype=float).ravel()
        if x.size == 0:
            x = np.array([case.stimulus.position])
        case.check_positions(x)
        everywhere = np.append(x, case.stimulus.position)  # the site last: the scale of every attenuation

        def sample(times: Array) -> tuple[Array, Array | None]:
            r = charge(case.cell, case.stimulus, times, everywhere, tolerance=tolerance, modes=0)
            return r.voltage, r.steady_state

        run: Sampler = sample
        where: Sequence[float | str] = [float(v) for v in x]
        clamp = case.amplitude
    else:
        run, where, clamp = case.sampler(None if positions is None else [str(p) for p in positions], tolerance)
    return _features(run, _window(case), case.shape, clamp, where)


def _features(run: Sampler, window: float, shape: str, clamp: float,
              where: Sequence[float | str]) -> tuple[ResponseFeatures, ...]:
    """The features at ``len(where)`` sites from ``run(times) -> (voltage (nT, n), final voltage or None)``,
    whose last column is the stimulus site (the scale of every attenuation; ``clamp`` for a clamp)."""
    held = shape in ("step", "clamp")

    def evaluate(times: Array) -> Array:
        return run(times)[0]

    t = _grid(window)
    voltage, steady_state = run(t)
    n = voltage.shape[1]
    if held:
        final = steady_state if steady_state is not None else np.full(n, math.nan)
        peak = np.asarray(final, dtype=float)
        time_to_peak = np.full(n, math.nan)
        k_peak = np.full(n, t.size - 1)
    else:
        k_peak = np.argmax(np.abs(voltage), axis=0)
        sign0 = np.sign(voltage[k_peak, np.arange(n)])
        lo = t[np.maximum(k_peak - 1, 0)]
        hi = t[np.minimum(k_peak + 1, t.size - 1)]
        time_to_peak = _refine(lambda tt: evaluate(tt) * sign0, lo, hi, lambda j, tt, vv: int(np.argmax(vv)))
        peak = np.array([evaluate(np.array([time_to_peak[j]]))[0, j] for j in range(n)])
    sign = np.where(peak < 0, -1.0, 1.0)
    size = np.abs(peak)
    s = voltage * sign

    def crossing(fraction: float, rising: bool, after: Array) -> Array:
        """When each response first crosses ``fraction`` of its peak after sample ``after``."""
        level = fraction * size
        lo, hi = np.full(n, math.nan), np.full(n, math.nan)
        for j in np.flatnonzero(size > 0):
            lo[j], hi[j] = _bracket(t, s[:, j], level[j], int(after[j]), rising)

        def first(j: int, tt: Array, vv: Array) -> int:
            inside = np.flatnonzero(vv >= level[j] if rising else vv <= level[j])
            return int(inside[0]) if inside.size else tt.size - 1

        return _refine(lambda tt: evaluate(tt) * sign, lo, hi, first)

    start = np.zeros(n, dtype=int)
    rise = crossing(0.9, True, start) - crossing(0.1, True, start)
    half_width = np.full(n, math.nan) if held else crossing(0.5, False, k_peak) - crossing(0.5, True, start)
    site_peak = clamp if shape == "clamp" else peak[-1]
    return tuple(
        ResponseFeatures(where[j], float(peak[j]), float(time_to_peak[j]), float(rise[j]), float(half_width[j]),
                         float(peak[j] / site_peak) if site_peak else math.nan, held)
        for j in range(len(where)))
