r"""Stimulus shapes in normalised time and the truncation bounds of the image sums and eigen-series.

One place for the rules that decide how many terms an exact time course needs: the float path
(:mod:`cabletheory.finite_cable`, :mod:`cabletheory.transient`) and the high-precision path
(:mod:`cabletheory.precise`) both take their term counts from here, so that neither imports the
other. Everything is dimensionless: T = t/τm, L = ℓ/λ, voltages in units of :math:`IR_\infty`
(current input) or of the clamp step.

* images: after K reflections per side, the point-source images beyond are bounded by
  :math:`4e^{-(KL)^2/T}[\sqrt{T/\pi} + T/(4L)]` (:func:`image_tail`), the clamp images by
  :math:`2e^{-(KL)^2/T}[1 + \sqrt T/(L\sqrt\pi)]` (:func:`clamp_image_tail`);
* eigen-series: the tail bounds of :func:`cabletheory.eigen.tail_bound`, combined for a pulse
  and an alpha current in :func:`current_bound` (for an alpha current the smaller of two bounds:
  the input's slope over [T/2, T], and its decay :func:`alpha_decay_rate`; the mpmath path sums
  that series), and for the float path's residue series of an alpha current in
  :func:`alpha_residue_tail`.

References
----------
Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444; Rall W (1969) Biophys. J. 9:1483;
Jack JJB, Noble D & Tsien RW (1975) Electric Current Flow in Excitable Cells, ch. 3 (images,
recalled from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from . import eigen

__all__ = [
    "MAX_MODES",
    "Shape",
    "alpha_decay_rate",
    "alpha_residue_tail",
    "clamp_image_tail",
    "current_bound",
    "image_tail",
    "modes_needed",
    "reflections_needed",
]

Array = NDArray[np.float64]

MAX_MODES = 200_000  # eigen-series longer than this are refused (ConvergenceError)


@dataclass(frozen=True, slots=True)
class Shape:
    kind: str  # "step", "pulse" or "alpha"
    duration: float = 0.0  # pulse, in τm
    time_to_peak: float = 0.0  # alpha, in τm

    def value(self, T: Array) -> Array:
        """Input current at T in units of the amplitude (peak for alpha)."""
        if self.kind == "step":
            return (T > 0).astype(float)
        if self.kind == "pulse":
            return ((T > 0) & (T <= self.duration)).astype(float)  # noqa: SIM300
        a = self.time_to_peak
        return np.where(T > 0, (T / a) * np.exp(1 - T / a), 0.0)

    def slope_bound(self, T: Array) -> Array:
        """max |dI/dT| over [T/2, T] (alpha only), in amplitude per τm."""
        a = self.time_to_peak

        def g(s: Array) -> Array:
            return np.abs(1 - s / a) * np.exp(1 - s / a) / a

        inside = (T / 2 <= 2 * a) & (2 * a <= T)  # noqa: SIM300
        return np.maximum(np.maximum(g(T / 2), g(T)), np.where(inside, g(np.full_like(T, 2 * a)), 0.0))


def image_tail(K: Array | float, T: Array, L: float) -> Array:
    """Bound on the point-source images with |k| > K (k-th reflection pair at distance ≥ 2KL)."""
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        return np.where(T > 0, 4 * np.exp(-(K * L) ** 2 / T) * (np.sqrt(T / np.pi) + T / (4 * L)), 0.0)


def clamp_image_tail(K: Array | float, T: Array, L: float) -> Array:
    """Bound on the clamp images with k ≥ K (distances ≥ 2KL)."""
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        return np.where(T > 0, 2 * np.exp(-(K * L) ** 2 / T) * (1 + np.sqrt(T) / (L * np.sqrt(np.pi))), 0.0)


def reflections_needed(T: Array, L: float, tol: float, tail) -> Array:
    """Smallest K ≥ 1 per T with tail(K, T) ≤ tol."""
    K = np.ones_like(T)
    for _ in range(200):
        bad = tail(K, T, L) > tol
        if not bad.any():
            break
        # jump close to the answer: (KL)^2 ≥ T log(prefactor/tol)
        guess = np.ceil(np.sqrt(np.maximum(T * np.log(max(1e-300, 1.0 / tol) * 4 * (1 + T)), 0)) / L)
        K = np.where(bad, np.maximum(K + 1, guess), K)
    return K


def modes_needed(T: Array, tol: float, L: float, bound, most: int = MAX_MODES, *,
                 several: bool = False) -> tuple[Array, Array]:
    """Smallest mode count N per T with bound(N, T) ≤ tol (N ≤ ``most`` ≤ MAX_MODES), and that
    bound; MAX_MODES + 1 and inf where no count up to ``most`` will do.

    The candidate counts (about 90, spaced geometrically up to :data:`MAX_MODES`) are tried from
    the smallest, each only at the times that no smaller one has satisfied, so a grid whose late
    times need a few modes evaluates the bound a few times there (``bound`` need not decrease
    with N: the first candidate that satisfies a time is its count). With ``several``, ``bound``
    accepts a column of counts against a row of times, and eight candidates are tried per call."""
    T = np.asarray(T, dtype=float)
    need = np.full(T.shape, MAX_MODES + 1)
    achieved = np.full(T.shape, np.inf)
    flat_T = T.ravel()
    todo = np.arange(flat_T.size)
    need_flat, achieved_flat = need.reshape(-1), achieved.reshape(-1)
    candidates = _CANDIDATES[:int(np.searchsorted(_CANDIDATES, most, side="right"))]
    per = 8 if several else 1
    for first in range(0, candidates.size, per):
        if todo.size == 0:
            break
        block = candidates[first:first + per]
        if several:
            b = np.broadcast_to(bound(block[:, None], flat_T[todo][None, :]), (block.size, todo.size))
        else:
            b = np.broadcast_to(bound(int(block[0]), flat_T[todo]), todo.shape)[None, :]
        ok = b <= tol
        met = ok.any(axis=0)
        which = ok.argmax(axis=0)[met]  # the first candidate of the block that will do
        done = np.flatnonzero(met)
        need_flat[todo[done]] = block[which]
        achieved_flat[todo[done]] = b[which, done]
        todo = todo[~met]
    return need, achieved


_CANDIDATES = np.unique(np.round(np.geomspace(1, MAX_MODES, 90)).astype(int))


def alpha_decay_rate(first_excluded: int, T: Array, L: float, time_to_peak: float) -> Array:
    r"""A factor R(T) such that the alpha current's modes ``n >= first_excluded`` are bounded by
    :func:`cabletheory.eigen.tail_bound` ``(kind="smooth", rate=R)``; infinite where it does not apply.

    After the quasi-steady part, mode n of an alpha current :math:`I(s) = (s/a)e^{1-s/a}` leaves
    :math:`r_n\mu_n^{-1}\int_0^T I'(s)e^{-\mu_n(T-s)}ds` (integration by parts, I(0) = 0). With
    :math:`|I'(s)| \le (e/a)(1 + s/a)e^{-s/a}` and :math:`k_n = \mu_n - 1/a > 0`,

    .. math:: \left|\int_0^T I'(s)e^{-\mu_n(T-s)}ds
ight| \le rac{e}{a}\Big(1 + rac Ta\Big)
              rac{e^{-T/a}}{k_n} \le rac{e}{a}\Big(1 + rac Ta\Big)rac{e^{-T/a}}{\mu_n(1 - 1/(a\mu_N))}

    for n ≥ N (:math:`\mu_n \ge \mu_N \ge 1 + a_N^2`, the branch lower bound), so the tail is at most the
    smooth-input tail with this rate: unlike the bound on the slope over [T/2, T] it decays as
    :math:`e^{-T/a}` (not :math:`e^{-T/2a}`) and needs no separate term for [0, T/2].
    """
    a = float(time_to_peak)
    lower = float(eigen.branch_lower_bounds(1, L, start=int(first_excluded))[0])
    margin = 1.0 - 1.0 / (a * (1.0 + lower * lower))
    if not margin > 0:
        return np.full(np.shape(T), np.inf)
    return (np.e / a) * (1.0 + T / a) * np.exp(-T / a) / margin


def alpha_residue_tail(first_excluded: int, T: Array, L: float, time_to_peak: float) -> Array:
    r"""Bound on the modes n ≥ N of an alpha current's residue series (in :mod:`cabletheory.finite_cable`).

    With :math:`c = 1/a`, the series left after the input's double pole at s = -c is
    :math:`(e/a)\sum_n r_n e^{-\mu_nT}/(\mu_n - c)^2`. For n ≥ N the modes lie above
    :math:`m = 1 + a_N^2` (:math:`a_N` the lower end of branch N, :func:`cabletheory.eigen.branch_lower_bounds`);
    when m > c, :math:`\mu_n - c \ge \mu_n(1 - c/m)`, and with :math:`|r_n| \le 4/L` and the integral test
    on the lattice of spacing π/L (as in :func:`cabletheory.eigen.tail_bound`)

    .. math:: \sum_{n\ge N} \frac{|r_n|e^{-\mu_nT}}{(\mu_n - c)^2} \le
              \frac{4/L}{(1 - c/m)^2}\,e^{-mT}\Big[\frac1{m^2} + \frac L\pi\min\Big(
              \frac{\sqrt\pi\,\mathrm{erfcx}(a_N\sqrt T)}{2\sqrt T\,m^2}, \frac1{3a_N^3}\Big)\Big]

    (the integral of :math:`e^{-(1+\alpha^2)T}/(1+\alpha^2)^2` from :math:`a_N`, bounded once with
    :math:`(1+\alpha^2)^{-2} \le m^{-2}` and once with :math:`e^{-\alpha^2T} \le e^{-a_N^2T}`,
    :math:`(1+\alpha^2)^{-2} \le \alpha^{-4}`), times e/a. Infinite where m ≤ c (more modes are needed).
    Unlike the bounds of :func:`current_bound` it decays like :math:`e^{-\mu_NT}/\mu_N^2`, as the
    step's series does.
    """
    from scipy.special import erfcx

    a = float(time_to_peak)
    c = 1.0 / a
    lower = float(eigen.branch_lower_bounds(1, L, start=int(first_excluded))[0])
    m = 1.0 + lower * lower
    T = np.asarray(T, dtype=float)
    if not (m > c and lower > 0):
        return np.full(T.shape, np.inf)
    root = np.sqrt(T)
    with np.errstate(divide="ignore", invalid="ignore"):
        gaussian = np.where(T > 0, np.sqrt(np.pi) * erfcx(lower * root) / (2 * root * m * m), np.inf)
    integral = np.minimum(gaussian, 1.0 / (3 * lower**3))
    return (np.e / a) * (4.0 / L) / (1.0 - c / m) ** 2 * np.exp(-m * T) * (1.0 / (m * m) + (L / np.pi) * integral)


def current_bound(shape: Shape, L: float):
    def bound(n: int, T: Array) -> Array:
        if shape.kind == "step":
            return eigen.tail_bound(n, T, L, kind="step")
        if shape.kind == "pulse":
            return eigen.tail_bound(n, np.where(T > shape.duration, T - shape.duration, T), L, kind="step")  # noqa: SIM300
        smooth = eigen.tail_bound(n, T, L, kind="smooth", rate=1.0)
        split = 2 * eigen.tail_bound(n, T / 2, L, kind="step") + smooth * shape.slope_bound(T)
        return np.minimum(split, smooth * alpha_decay_rate(n, T, L, shape.time_to_peak))
    return bound
