r"""Numerical inversion of Laplace transforms on two contours, each with an error estimate.

Every transform inverted here, :math:`F(s)`, has its singularities on the closed negative real
axis (every passive cable and tree: poles at the decay rates, branch cuts on
:math:`(-\infty, -1]`, the input's poles at 0 or :math:`-1/a`); it is real on the real axis, so
:math:`F(\bar s) = \overline{F(s)}` and only the upper half of a contour is summed. The Bromwich
integral is moved onto a contour :math:`s(u)`, u real, and summed by the trapezoid rule:

.. math:: f(t) \approx \mathrm{Im}\sum_{k=0}^{N} w_k\, e^{s_k t} F(s_k), \qquad
          s_k = s(kh),\ w_k = \frac h\pi\, s'(kh)

(:math:`w_0` halved). This module owns both contours: their nodes and weights, their error
estimates and the grouping of times into windows.

**Parabolic contour** (:func:`invert`), one contour per time: :math:`s(u) = \mu(1 + iu)^2`,
:math:`s'(u) = 2i\mu(1+iu)`. With :math:`h = 3/N` and :math:`\mu = \pi N/(12t)` the
discretisation and truncation errors both fall like :math:`e^{-2\pi N/3}` (Weideman & Trefethen
2007 [WeidemanTrefethen2007], section 3, parabolic contour, [MEM]), while rounding is amplified by
about :math:`e^{\mu t} = e^{\pi N/12}`. Each t is inverted twice, with :data:`COARSE` and
:data:`FINE` nodes; the finer value is returned with the estimate

.. math:: 2|f_{N_1} - f_{N_2}| + \kappa\,\epsilon\,\sum_k |w_k e^{s_k t}F(s_k)|

(the first term is about the coarse value's error, :math:`e^{-2\pi N_1/3}` relative, which
exceeds the fine value's by :math:`e^{2\pi(N_2-N_1)/3} \approx 3\cdot10^5`; the second bounds
the rounding of the sum, ε the float64 epsilon, κ = :data:`ROUNDING_FACTOR`). It needs no scale
of the answer; values of order :math:`10^{-13}` of the transform's scale are its floor. The
cylinder and soma-plus-cylinder time courses use it.

**Hyperbolic contour** (:func:`invert_windowed`), one contour for a window of times
:math:`[t_0, \Lambda t_0]`: :math:`s(u) = \mu\,(1 + \sin(iu - \alpha))`. The error model of
Weideman & Trefethen (2007) balances three terms: the discretisation errors from the two edges
of the strip of analyticity, :math:`e^{\mu\Lambda t_0 - 2\pi\alpha/h}` and
:math:`e^{-\pi(\pi - 2\alpha)/h}`, and the truncation :math:`e^{\mu t_0(1 - \sin\alpha\cosh Nh)}`.
Equating them gives

.. math:: \mu t_0 = \frac{4\pi\alpha - \pi^2}{h\Lambda},\qquad
          h = \frac{1}{N}\,\mathrm{arccosh}\frac{(\pi - 2\alpha)\Lambda + 4\alpha - \pi}{(4\alpha - \pi)\sin\alpha},
          \qquad \text{error} \approx e^{-\pi(\pi - 2\alpha)/h},

and α is chosen to minimise that error plus the rounding error
:math:`\epsilon\,e^{\mu\Lambda t_0(1 - \sin\alpha)}`. The model leaves out a constant that
belongs to the transform (the size of :math:`e^{st}F(s)s'(u)` near the edges of the strip): a
step-like transform, whose sF tends to the final value, has one of the order of that value, but
a double pole near the origin (:math:`t e^{-at}`, an alpha current) or near the contour's edge
has a larger one. It is measured at no further evaluation of F: the same values summed on every
k-th node (k = 2, 3; step kh) have the model
:math:`m_{kh}(t) = e^{\mu t - 2\pi\alpha/(kh)} + e^{-\pi(\pi - 2\alpha)/(kh)}`, far larger than the
fine sum's, so their difference from the fine sum is their own error, and

.. math:: C = \max_{k,\,t}\; k\,\frac{|f_h(t) - f_{kh}(t)|}{m_{kh}(t)}

over the window's times (the factor k: a double pole's error term carries a factor 1/h; two
strides, because one of them can sit where a pole's error term nearly vanishes). The estimate of
each value is then

.. math:: \text{MODEL\_SAFETY}\cdot\text{model}(N)\cdot\max(C, |\text{scale}|)
          + \text{WINDOW\_ROUNDING\_FACTOR}\cdot\epsilon\sum_k|\text{terms}|,

with the scale the caller gives (for example the final voltage of a step) as a floor. The times
are grouped into windows (chosen to minimise the number of evaluations of F); N per window
starts at the smallest whose model meets the tolerance with C equal to :data:`FIRST_ALLOWANCE`
times the scale (step-like transforms measure 2 to 8 times, so they need one evaluation per
window), or to the previous window's C if larger, and grows, the window evaluated again, until
the estimate meets it or N reaches :data:`MAX_NODES`, which the result's notes then say. A
transform that is costly to evaluate, such as a whole tree's, is evaluated at a few dozen points
for any number of times. The tree time courses use it.

Neither estimate is a proof. Both are checked against mpmath [mpmath2023] references at 30-40
digits (Talbot's method [Talbot1979]) across their ranges in ``tests/test_contour.py``,
``tests/test_tree_time.py`` and the accuracy property tests, where they exceed the true error
everywhere.

References
----------
Weideman JAC & Trefethen LN (2007) Parabolic and hyperbolic contours for computing the
Bromwich integral. Math. Comp. 76:1341-1356 [WeidemanTrefethen2007] (both contours and their
error analyses; recalled from memory).
Talbot A (1979) The accurate numerical inversion of Laplace transforms. J. Inst. Math. Appl.
23:97-120 [Talbot1979] (the idea of deforming the Bromwich line; recalled from memory).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import InputError

__all__ = ["COARSE", "FINE", "FIRST_ALLOWANCE", "MAX_NODES", "MODEL_SAFETY", "ROUNDING_FACTOR", "SAFETY", "STRIDES",
           "WINDOW_ROUNDING_FACTOR", "Contour", "Inversion", "coarse_model", "convergence_rate",
           "hyperbolic_contour", "invert", "invert_windowed", "parabolic_contour"]

Array = NDArray[np.float64]
ComplexArray = NDArray[np.complex128]
Transform = Callable[[NDArray[np.complex128]], NDArray[np.complex128]]

EPS = float(np.finfo(float).eps)
COARSE = 16  # parabolic: nodes of the comparison inversion
FINE = 20  # parabolic: nodes of the returned inversion
ROUNDING_FACTOR = 4.0  # parabolic: κ, ulps allowed per unit of the summed magnitudes
SAFETY = 2.0  # parabolic: factor on the coarse-fine difference
MODEL_SAFETY = 20.0  # hyperbolic: factor on the error model times max(measured constant, scale)
WINDOW_ROUNDING_FACTOR = 8.0  # hyperbolic: ulps allowed per unit of the summed magnitudes
MAX_NODES = 80  # hyperbolic: most nodes per window
FIRST_ALLOWANCE = 10.0  # hyperbolic: the constant over the scale that a first node count allows for (steps: 2-8)
_LEAST_NODES = 6  # hyperbolic: fewest nodes per window
_CHUNK = 1 << 20  # transform values per call, and times × nodes per temporary array


# --------------------------------------------------------------------------------------
# the contours: nodes and weights
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Contour:
    """Nodes s_k and weights w_k of a contour: ``f(t) ≈ Im Σ_k w_k·exp(s_k·t)·F(s_k)``.

    ``nodes`` and ``weights`` have the nodes on their last axis (a parabola has one row per
    time). ``first`` and ``last`` are the window of times it serves (s); ``predicted`` is the
    relative error of the hyperbolic error model (without :data:`MODEL_SAFETY`; NaN for a
    parabola, whose error is estimated from two node counts).
    """

    nodes: ComplexArray
    weights: ComplexArray
    first: float
    last: float
    predicted: float


def parabolic_contour(times: ArrayLike, count: int) -> Contour:
    r"""The parabola :math:`s = \mu(1 + iu)^2`, :math:`\mu = \pi N/(12t)`, h = 3/N, for each t > 0.

    Returns nodes and weights of shape (nt, N + 1) (Weideman & Trefethen 2007
    [WeidemanTrefethen2007], parabolic contour, recalled from memory).
    """
    t = np.atleast_1d(np.asarray(times, dtype=float)).ravel()
    h = 3.0 / count
    u = np.arange(count + 1, dtype=float) * h
    weight = np.full(u.size, h / np.pi)
    weight[0] *= 0.5
    mu = np.pi * count / (12.0 * t)
    nodes = mu[:, None] * ((1.0 + 1j * u) ** 2)[None, :]
    weights = 2j * mu[:, None] * (1.0 + 1j * u)[None, :] * weight[None, :]
    return Contour(nodes=nodes, weights=weights, first=float(t.min(initial=math.inf)),
                   last=float(t.max(initial=-math.inf)), predicted=math.nan)


@functools.lru_cache(maxsize=4096)  # a few hundred (N, Λ) per tolerance; too few and they evict each other
def _hyperbolic_design(count: int, ratio: float) -> tuple[float, float, float, float]:
    """(α, h, μ·t0, predicted error) for N = ``count`` and Λ = ``ratio`` (Weideman & Trefethen 2007)."""
    alpha = np.linspace(math.pi / 4 + 1e-4, math.pi / 2 - 1e-4, 4000)
    arg = ((math.pi - 2 * alpha) * ratio + 4 * alpha - math.pi) / ((4 * alpha - math.pi) * np.sin(alpha))
    h = np.arccosh(arg) / count
    discretisation = np.exp(-math.pi * (math.pi - 2 * alpha) / h)
    mu_last = (4 * math.pi * alpha - math.pi**2) / h  # μ·Λ·t0
    with np.errstate(over="ignore"):
        rounding = EPS * np.exp(mu_last * (1 - np.sin(alpha)))
    total = discretisation + rounding
    k = int(np.argmin(total))
    return float(alpha[k]), float(h[k]), float(mu_last[k] / ratio), float(total[k])


def hyperbolic_contour(first: float, last: float, count: int) -> Contour:
    r"""The hyperbola :math:`s = \mu(1 + \sin(iu - \alpha))` for times in [first, last], N + 1 nodes.

    Parameters
    ----------
    first, last : the window's first and last time, s (0 < first <= last)
    count : N, the number of nodes beyond the real axis (N + 1 evaluations of F)

    References
    ----------
    Weideman & Trefethen (2007) Math. Comp. 76:1341 [WeidemanTrefethen2007] (hyperbolic contour;
    parameters derived in this module's docstring from their error analysis).
    """
    if not (0 < first <= last and math.isfinite(last)):
        raise InputError(f"the time window must satisfy 0 < first <= last, got {first!r}, {last!r}")
    alpha, h, mu_t0, predicted = _hyperbolic_design(int(count), float(last / first))
    mu = mu_t0 / first
    u = h * np.arange(count + 1)
    nodes = mu * (1.0 + np.sin(1j * u - alpha))
    weights = (h / math.pi) * 1j * mu * np.cos(1j * u - alpha)
    weights[0] *= 0.5
    return Contour(nodes=nodes, weights=weights, first=first, last=last, predicted=predicted)


# --------------------------------------------------------------------------------------
# the trapezoid sums and the rounding of them
# --------------------------------------------------------------------------------------
def _rounding(magnitude: Array, ulps: float) -> Array:
    """Rounding error of a sum whose terms have the summed magnitude ``magnitude``: ulps·ε·Σ|terms|."""
    return ulps * EPS * magnitude


def _evaluate(transform: Transform, s: ComplexArray) -> ComplexArray:
    """F at every s (any shape), in chunks; returns shape (*s.shape, *trailing)."""
    flat = s.ravel()
    parts = [np.asarray(transform(flat[i:i + _CHUNK])) for i in range(0, flat.size, _CHUNK)]
    values = np.concatenate(parts, axis=0) if len(parts) > 1 else parts[0]
    return values.reshape(s.shape + values.shape[1:])


def _parabola_sum(transform: Transform, t: Array, count: int) -> tuple[Array, Array]:
    """Trapezoid sum on each t's own parabola (t > 0): (value, Σ|terms|)."""
    c = parabolic_contour(t, count)
    # s_k t = (μt)(1 + iu_k)² with μt = πN/12 for every t: one row, free of t's rounding
    u = np.arange(count + 1, dtype=float) * (3.0 / count)
    factor = np.exp((np.pi * count / 12.0) * (1.0 + 1j * u) ** 2)[None, :] * c.weights
    values = _evaluate(transform, c.nodes)
    terms = factor[(..., *(None,) * (values.ndim - 2))] * values
    return np.sum(terms.imag, axis=1), np.sum(np.abs(terms), axis=1)


def _window_sum(contour: Contour, weighted: ComplexArray, t: Array) -> tuple[Array, Array]:
    """Trapezoid sum on one contour shared by the times ``t`` (weighted = w_k F(s_k), (N + 1, m)):
    (values (nt, m), Σ|terms| (nt, m))."""
    kernel = np.exp(np.outer(t, contour.nodes))  # (times, N + 1)
    return (kernel @ weighted).imag, np.abs(kernel) @ np.abs(weighted)


# --------------------------------------------------------------------------------------
# inversion
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Inversion:
    """Values of the inverse transform and their estimated errors, both shaped (nt, *trailing).

    ``values`` and ``error_estimate`` are in the units of f; times t ≤ 0 give 0 with estimate 0.
    ``nodes`` is the number of contour nodes N of the returned values (the largest, over
    windows); ``method`` says how they were computed, in plain words; ``notes`` names any window
    whose estimate stayed above the tolerance asked for; ``evaluations`` counts the values of s
    at which the transform was evaluated.
    """

    values: Array
    error_estimate: Array
    nodes: int
    method: str = ""
    notes: tuple[str, ...] = ()
    evaluations: int = 0


def invert(transform: Transform, times: ArrayLike, *, coarse: int = COARSE, fine: int = FINE) -> Inversion:
    r"""Inverse Laplace transform :math:`f(t)` on parabolas (one per time), with an error estimate.

    Parameters
    ----------
    transform : maps a 1-D complex array of s (in the reciprocal of the time unit) to an array
        of shape ``(len(s), *trailing)`` (for example one column per position); it must be real
        on the real axis, analytic off the closed negative real axis and bounded by a power of
        1/|s| at infinity there. It is called on about (coarse + fine + 2)·nt values of s.
    times : t, in the time unit of s (any shape; flattened); t ≤ 0 gives 0
    coarse, fine : node counts of the two inversions (module docstring); fine > coarse ≥ 4

    Returns
    -------
    :class:`Inversion` with ``values`` and ``error_estimate`` of shape ``(nt, *trailing)``.

    References
    ----------
    Weideman JAC & Trefethen LN (2007) Math. Comp. 76:1341 [WeidemanTrefethen2007] (parabolic contour,
    recalled from memory).
    """
    if not (4 <= coarse < fine):
        raise InputError(f"contour nodes: need 4 <= coarse < fine, got {coarse}, {fine}")
    t = np.atleast_1d(np.asarray(times, dtype=float)).ravel()
    live = np.flatnonzero(t > 0)
    probe = np.asarray(transform(np.array([1.0 + 0j])))
    trailing = probe.shape[1:]
    values = np.zeros((t.size, *trailing))
    estimate = np.zeros((t.size, *trailing))
    if live.size:
        tl = t[live]
        rough, _ = _parabola_sum(transform, tl, coarse)
        best, magnitude = _parabola_sum(transform, tl, fine)
        values[live] = best
        estimate[live] = SAFETY * np.abs(best - rough) + _rounding(magnitude, ROUNDING_FACTOR)
    return Inversion(values=values, error_estimate=estimate, nodes=fine, evaluations=(coarse + fine + 2) * live.size,
                     method=f"Laplace transform inverted on parabolic contours ({fine + 1} nodes, "
                            f"checked against {coarse + 1})")


@functools.lru_cache(maxsize=1024)
def _nodes_needed(ratio: float, target: float) -> int | None:
    """The smallest N whose error model for windows of ratio Λ = ``ratio``, times
    :data:`MODEL_SAFETY`, is at most ``target`` (relative); None beyond :data:`MAX_NODES`."""
    for count in range(_LEAST_NODES, MAX_NODES + 1):
        if MODEL_SAFETY * _hyperbolic_design(count, ratio)[3] <= target:
            return count
    return None


def _windows(times: Array, tolerance: float) -> list[tuple[Array, int]]:
    """Group sorted positive times into windows; pick the window ratio with the fewest evaluations."""
    span = float(times[-1] / times[0])
    best: tuple[float, list[tuple[Array, int]]] | None = None
    for ratio in sorted({min(r, max(span, 1.0)) for r in (2.0, 4.0, 8.0, 16.0, 32.0, 64.0, 128.0)}):
        count = _nodes_needed(ratio, tolerance) or MAX_NODES
        groups = []
        start = 0
        while start < times.size:
            stop = int(np.searchsorted(times, times[start] * ratio * (1 + 1e-12), side="right"))
            groups.append((times[start:stop], count))
            start = stop
        cost = sum(c + 1 for _, c in groups) + (1e9 if _nodes_needed(ratio, tolerance) is None else 0)
        if best is None or cost < best[0]:
            best = (cost, groups)
    assert best is not None
    return best[1]


def coarse_model(first: float, last: float, count: int, times: ArrayLike, stride: int = 2) -> Array:
    r"""The error model of the same window's sum on every ``stride``-th node (step kh), at each time.

    .. math:: m_{kh}(t) = e^{\mu t - 2\pi\alpha/(kh)} + e^{-\pi(\pi - 2\alpha)/(kh)}

    the two discretisation terms of Weideman & Trefethen (2007) [WeidemanTrefethen2007] with h
    multiplied by k = ``stride`` (dimensionless; α, h, μ those of :func:`hyperbolic_contour` for
    ``count`` nodes over [first, last] s; ``times`` s). Dividing the measured difference of the two
    sums by it gives the transform's own constant in the model (module docstring).
    """
    alpha, h, mu_t0, _ = _hyperbolic_design(int(count), float(last / first))
    t = np.asarray(times, dtype=float)
    wide = stride * h
    with np.errstate(over="ignore"):
        return (np.exp((mu_t0 / first) * t - 2 * math.pi * alpha / wide)
                + math.exp(-math.pi * (math.pi - 2 * alpha) / wide))


STRIDES = (2, 3)  # hyperbolic: the coarser sums (every 2nd and every 3rd node) that measure the constant


@dataclass(frozen=True, slots=True)
class _Pass:
    """One window summed on one contour: values and Σ|terms| (nt, m), the measured constant per
    signal (m,), and the node count."""

    values: Array
    magnitude: Array
    constant: Array
    count: int
    predicted: float


def _window_pass(transform: Transform, window: Array, count: int) -> _Pass:
    """Sum the window on N = ``count`` nodes (step h) and on every k-th one (kh, k in
    :data:`STRIDES`), at the same values of F; the transform's constant is the largest ratio of
    a coarse sum's difference from the fine one to that sum's error model, over times and strides."""
    contour = hyperbolic_contour(float(window[0]), float(window[-1]), count)
    weighted = contour.weights[:, None] * np.asarray(transform(contour.nodes))  # (N + 1, m)
    models = [coarse_model(contour.first, contour.last, count, window, k) for k in STRIDES]
    step = max(1, _CHUNK // contour.nodes.size)
    values, magnitude, constant = [], [], np.zeros(weighted.shape[1])
    for start in range(0, window.size, step):
        part = window[start:start + step]
        kernel = np.exp(np.outer(part, contour.nodes))  # (times, N + 1)
        fine = (kernel @ weighted).imag
        values.append(fine)
        magnitude.append(np.abs(kernel) @ np.abs(weighted))
        for k, model in zip(STRIDES, models, strict=True):
            # every k-th node: weights k·w_j (w_0 stays halved), the trapezoid rule of step kh
            coarse = k * (kernel[:, ::k] @ weighted[::k]).imag
            # × k: a double pole's error term carries a factor 1/h, so step kh sees k times less of it
            ratio = k * np.abs(fine - coarse) / model[start:start + step, None]
            constant = np.maximum(constant, np.max(ratio, axis=0))
    return _Pass(values=np.concatenate(values), magnitude=np.concatenate(magnitude), constant=constant,
                 count=count, predicted=contour.predicted)


def invert_windowed(transform: Transform, times: ArrayLike, *, tolerance: float, scale: float) -> Inversion:
    r"""Inverse Laplace transform on hyperbolas shared by windows of times, with an error estimate.

    Each window is summed on N nodes and, at no further evaluation of F, on every other node;
    the difference measures the transform's own constant C in the error model (module
    docstring). The estimate of each value is

    .. math:: \text{MODEL\_SAFETY}\cdot\text{model}(N)\cdot\max(C, |\text{scale}|)
              + \text{rounding},

    and N grows (the window is evaluated again) until that meets ``tolerance``·|scale| or
    reaches :data:`MAX_NODES`; a window that stops at the cap is named in ``notes``, with the
    estimate it has.

    Parameters
    ----------
    transform : ``F(s)`` for a vector of complex s (1/s), returning shape (n_s, m) (m signals
        sharing the transform's singularities, all on the negative real axis)
    times : s; values at t <= 0 are 0 (the signals start from rest)
    tolerance : error allowed relative to ``scale``
    scale : the reference size of the signals (e.g. the final voltage of a step at its site),
        in the units of f

    Returns
    -------
    :class:`Inversion` with values and error estimates of shape (n_t, m), a ``method`` that
    lists the windows and their nodes, and ``notes``.

    References
    ----------
    Weideman & Trefethen (2007) Math. Comp. 76:1341 [WeidemanTrefethen2007].
    """
    t = np.atleast_1d(np.asarray(times, dtype=float)).ravel()
    positive = np.unique(t[t > 0])
    size = abs(float(scale))
    goal = tolerance * size
    values: dict[float, Array] = {}
    errors: dict[float, Array] = {}
    parts: list[str] = []
    notes: list[str] = []
    m = None
    most = 0
    evaluations = 0
    prior = FIRST_ALLOWANCE  # the constant over the scale that a window's first node count allows for
    for window, first_count in (_windows(positive, tolerance) if positive.size else []):
        ratio = float(window[-1] / window[0])
        count = max(first_count, _nodes_needed(ratio, tolerance / prior) or MAX_NODES)
        while True:
            done = _window_pass(transform, window, count)
            evaluations += count + 1
            weight = np.maximum(done.constant, size)  # per signal: max(C, |scale|)
            heaviest = float(weight.max(initial=0.0))
            if MODEL_SAFETY * done.predicted * heaviest <= goal or count >= MAX_NODES:
                break
            # C belongs to the transform: take the count whose model meets the goal with it
            wanted = _nodes_needed(ratio, goal / heaviest) or MAX_NODES
            count = min(MAX_NODES, max(wanted, count + 1))
        prior = max(FIRST_ALLOWANCE, heaviest / size) if size > 0 else FIRST_ALLOWANCE
        m = done.values.shape[1]
        estimate = _rounding(done.magnitude, WINDOW_ROUNDING_FACTOR) + MODEL_SAFETY * done.predicted * weight
        for j, tt in enumerate(window.tolist()):
            values[tt] = done.values[j]
            errors[tt] = estimate[j]
        parts.append(f"{window[0]:.3g}..{window[-1]:.3g} s: {count + 1} nodes")
        reached = float(estimate.max(initial=0.0))
        if reached > goal:
            relative = f"{reached / size:.2g} of the scale" if size > 0 else f"{reached:.2g}"
            cap = " (the most allowed)" if count >= MAX_NODES else ""
            notes.append(f"times {window[0]:.3g}..{window[-1]:.3g} s: the error estimate, {relative}, exceeds the "
                         f"tolerance {tolerance:.2g} with {count + 1} contour nodes{cap}")
        most = max(most, count)
    if m is None:
        m = np.asarray(transform(np.array([1.0 + 0j]))).shape[1]
    out = np.zeros((t.size, m))
    err = np.zeros((t.size, m))
    for i, tt in enumerate(t.tolist()):
        if tt > 0:
            out[i], err[i] = values[tt], errors[tt]
    method = ("Laplace transform inverted on hyperbolic contours (Weideman & Trefethen 2007), each window "
              "checked against the sums on its every second and third node; windows "
              + ("; ".join(parts) if parts else "none (all times at rest)"))
    return Inversion(values=out, error_estimate=err, nodes=most, method=method, notes=tuple(notes),
                     evaluations=evaluations)


def convergence_rate(nodes: int) -> float:
    """The predicted relative discretisation error :math:`e^{-2\\pi N/3}` of N nodes on the parabola
    (Weideman & Trefethen 2007 [WeidemanTrefethen2007], recalled from memory); for documentation and tests."""
    return math.exp(-2.0 * math.pi * nodes / 3.0)
