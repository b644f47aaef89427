r"""Numerical inversion of Laplace transforms on a parabolic contour, with an error estimate.

For a transform :math:`F(s)` whose singularities lie on the closed negative real axis
(every passive cable: poles at :math:`s = -(1+\alpha_n^2)`, branch cuts on
:math:`(-\infty, -1]`, the input's poles at 0 or :math:`-1/a`), the Bromwich integral is moved
onto the parabola :math:`s(u) = \mu(1 + iu)^2`, u real, and summed by the trapezoid rule:

.. math:: f(t) \approx \frac h\pi\sum_{k=0}^{N}{}' \,\mathrm{Im}\!\left[e^{s_k t}F(s_k)s'(u_k)\right],
          \quad u_k = kh,\ s'(u) = 2i\mu(1+iu)

(the prime halves the k = 0 term; :math:`F(\bar s) = \overline{F(s)}` for a real f). With
:math:`h = 3/N` and :math:`\mu = \pi N/(12t)` the discretisation and truncation errors both fall
like :math:`e^{-2\pi N/3}` (Weideman & Trefethen 2007 [WeidemanTrefethen2007], section 3, parabolic contour,
[MEM]), while rounding is amplified by about :math:`e^{\mu t} = e^{\pi N/12}`.

Error estimate. Each t is inverted twice, with :data:`COARSE` and :data:`FINE` nodes; the
finer value is returned with the estimate

.. math:: 2|f_{N_1} - f_{N_2}| + \kappa\,\epsilon\,\frac h\pi\sum_k |e^{s_k t}F(s_k)s'(u_k)|

(the first term is about the coarse value's error, :math:`e^{-2\pi N_1/3}` relative, which
exceeds the fine value's by :math:`e^{2\pi(N_2-N_1)/3} \approx 3\cdot10^5`; the second bounds
the rounding of the sum, ε the float64 epsilon, κ = :data:`ROUNDING_FACTOR`). The estimate is
not a proof: it is checked against mpmath [mpmath2023] references at 40 digits across the whole range of
cable problems in ``tests/test_contour.py`` and the accuracy property tests, where it exceeds
the true error everywhere. Values of order :math:`10^{-13}` of the transform's scale are the
floor; ask for less and the estimate says so.

References
----------
Weideman JAC & Trefethen LN (2007) Parabolic and hyperbolic contours for computing the
Bromwich integral. Math. Comp. 76:1341-1356 [WeidemanTrefethen2007] (recalled from memory).
Talbot A (1979) The accurate numerical inversion of Laplace transforms. J. Inst. Math. Appl.
23:97-120 [Talbot1979] (the idea of deforming the Bromwich line; recalled from memory).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import InputError

__all__ = ["COARSE", "FINE", "ROUNDING_FACTOR", "SAFETY", "Inversion", "convergence_rate", "invert"]

Array = NDArray[np.float64]
Transform = Callable[[NDArray[np.complex128]], NDArray[np.complex128]]

COARSE = 16  # nodes of the comparison inversion
FINE = 20  # nodes of the returned inversion
ROUNDING_FACTOR = 4.0  # κ: ulps allowed per unit of the summed magnitudes
SAFETY = 2.0  # factor on the coarse-fine difference
_CHUNK = 1 << 20  # transform values per call


@dataclass(frozen=True, slots=True)
class Inversion:
    """Values of the inverse transform and their estimated errors, both shaped (nt, *trailing).

    ``values`` and ``error_estimate`` are in the units of f; times t ≤ 0 give 0 with estimate 0.
    ``nodes`` is the number of contour nodes of the returned values.
    """

    values: Array
    error_estimate: Array
    nodes: int


def _nodes(count: int) -> tuple[Array, float]:
    h = 3.0 / count
    return np.arange(count + 1, dtype=float) * h, h


def _sum(transform: Transform, t: Array, count: int) -> tuple[Array, Array]:
    """Trapezoid sum on the parabola for every t (> 0): (value, Σ|terms|·h/π)."""
    u, h = _nodes(count)
    weight = np.ones(u.size)
    weight[0] = 0.5
    mu = np.pi * count / (12.0 * t)  # (nt,)
    z = (1.0 + 1j * u) ** 2  # s/μ
    s = mu[:, None] * z[None, :]  # (nt, N+1)
    ds = 2j * mu[:, None] * (1.0 + 1j * u)[None, :]
    factor = np.exp(mu[:, None] * t[:, None] * z[None, :]) * ds * (weight * h / np.pi)[None, :]
    flat = s.ravel()
    parts = [np.asarray(transform(flat[i:i + _CHUNK])) for i in range(0, flat.size, _CHUNK)]
    values = np.concatenate(parts, axis=0) if len(parts) > 1 else parts[0]
    trailing = values.shape[1:]
    values = values.reshape(s.shape + trailing)
    extra = (None,) * len(trailing)
    terms = factor[(..., *extra)] * values
    return np.sum(terms.imag, axis=1), np.sum(np.abs(terms), axis=1)


def invert(transform: Transform, times: ArrayLike, *, coarse: int = COARSE, fine: int = FINE) -> Inversion:
    r"""Inverse Laplace transform :math:`f(t)` of ``transform`` at many times, with an error estimate.

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
        rough, _ = _sum(transform, tl, coarse)
        best, magnitude = _sum(transform, tl, fine)
        values[live] = best
        estimate[live] = SAFETY * np.abs(best - rough) + ROUNDING_FACTOR * np.finfo(float).eps * magnitude
    return Inversion(values=values, error_estimate=estimate, nodes=fine)


def convergence_rate(nodes: int) -> float:
    """The predicted relative discretisation error :math:`e^{-2\\pi N/3}` of N nodes (Weideman &
    Trefethen 2007 [WeidemanTrefethen2007], recalled from memory); for documentation and tests."""
    return math.exp(-2.0 * math.pi * nodes / 3.0)
