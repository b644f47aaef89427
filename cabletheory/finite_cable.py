r"""Exact time courses on a finite cylinder, dimensionless: images at early times, eigen-series later.

:func:`current_response` (a current step, pulse or alpha current anywhere on the cylinder, with a
sealed origin or a soma) and :func:`clamp_response` (a voltage-clamp step at the origin) choose,
per time point, the representation that needs fewer operations for the requested truncation
error, and report the bound:

* **images** (small T): sums of infinite-cable solutions (Hodgkin & Rushton 1946) reflected at
  sealed (+) or killed (-) ends;
* **eigen-series** (large T): :math:`\sum_n r_n(X,X_0)\,h_n(T)` over the modes of
  :mod:`cabletheory.eigen`, with the steady state subtracted; for an alpha current the residues
  of its transform at the input's double pole and at the modes (:func:`_alpha_by_residues`), a
  series that needs as few modes as the step's, so that it takes all but the very earliest times;
* a **leaky end** (0 < B < ∞) at small T is bracketed between the killed-end and sealed-end image
  sums (comparison principle), so their mean is used when half their difference is within the
  tolerance; otherwise the eigen-series.

The truncation rules are those of :mod:`cabletheory.truncation`. X = x/λ, T = t/τm, L = ℓ/λ.

References
----------
Rall W (1969) Biophys. J. 9:1483; Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444;
Jack JJB, Noble D & Tsien RW (1975) ch. 3 (recalled from memory).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from . import contour, eigen
from .errors import ConvergenceError, InputError
from .kernels import clamp_steady, end_weights, point_source_alpha, point_source_step, semi_infinite_clamp, steady_green
from .truncation import (
    MAX_MODES,
    Shape,
    alpha_residue_tail,
    clamp_image_tail,
    current_bound,
    image_tail,
    modes_needed,
    reflections_needed,
)

__all__ = ["CONTOUR_MODES", "EARLY_REFLECTIONS", "clamp_response", "current_response"]

Array = NDArray[np.float64]

_IMAGE_COST = 25.0  # cost of one image term relative to one eigen term (erfcx vs multiply-add)
EARLY_REFLECTIONS = 4  # images with at most this many reflections per side are always preferred (step, pulse)
CONTOUR_MODES = 4000  # eigen-series needing more modes than this give way to the contour inversion


# --------------------------------------------------------------------------------------
# stimulus shapes in T
# --------------------------------------------------------------------------------------
def _alpha_mode(mu: Array, T: Array, a: float) -> Array:
    r"""∫_0^T (s/a) e^{1-s/a} e^{-μ(T-s)} ds, stable for every μ and T ≥ 0.

    With c = 1/a, k = μ - c, z = kT: :math:`(e/a)T^2[e^{-cT}(z - 1) + e^{-\mu T}]/z^2`, and the
    series :math:`(e/a)T^2e^{-cT}\sum_j (-z)^j/(j+2)!` for |z| < 1.
    """
    c = 1.0 / a
    z = (mu - c) * T
    e_c = np.exp(-c * T)
    small = np.abs(z) < 1.0
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        value = (e_c * (z - 1.0) + np.exp(-mu * T)) / np.where(small, 1.0, z * z)
    if small.any():  # the series only where it is used (few modes and times lie near μ = 1/a)
        zs = np.broadcast_to(z, value.shape)[small]
        series = np.zeros_like(zs)
        term = np.full_like(zs, 0.5)
        for j in range(22):
            series += term
            term *= -zs / (j + 3)
        value[small] = np.broadcast_to(e_c, value.shape)[small] * series
    return (math.e / a) * T * T * value


# --------------------------------------------------------------------------------------
# dimensionless engines
# --------------------------------------------------------------------------------------
@dataclass(slots=True)
class _Plan:
    """Which representation each time point uses, for the method description."""

    parts: list[str] = field(default_factory=list)

    def add(self, label: str, T: Array, count: int, unit: str) -> None:
        if T.size:
            self.parts.append(f"{label} for T in [{T.min():.3g}, {T.max():.3g}] (up to {count} {unit})")

    def text(self) -> str:
        return "; ".join(self.parts) if self.parts else "closed form"


def _point_images(kernel, X: Array, X0: float, T: Array, L: float, sign: float, K: int) -> Array:
    """Σ_k sign^|k| [kernel(|X - X0 - 2kL|) + kernel(|X + X0 - 2kL|)] on the grid T × X."""
    return _images_at(kernel, X[None, :], X0, T[:, None], L, sign, K)


def _images_at(kernel, X: Array, X0: float, T: Array, L: float, sign: float, K: int) -> Array:
    """:func:`_point_images` at X and T that broadcast (a grid, or pairs of equal-length vectors;
    at most :data:`_FEW_PAIRS` pairs take every image in one call of the kernel)."""
    if X.ndim == 1 and T.ndim == 1 and X.size <= _FEW_PAIRS and math.isfinite(L):
        order = np.arange(-K, K + 1)
        shifts = (2 * order * L)[:, None]
        weights = (sign ** np.abs(order))[:, None]
        if X0 == 0.0:
            return np.sum(2 * weights * kernel(np.abs(X - shifts), T), axis=0)
        return np.sum(weights * (kernel(np.abs(X - X0 - shifts), T) + kernel(np.abs(X + X0 - shifts), T)), axis=0)
    total = np.zeros(np.broadcast_shapes(X.shape, T.shape))
    for k in range(-K, K + 1):
        s = sign ** abs(k)
        shift = 2 * k * L if k else 0.0
        if X0 == 0.0:
            total += 2 * s * kernel(np.abs(X - shift), T)
        else:
            total += s * (kernel(np.abs(X - X0 - shift), T) + kernel(np.abs(X + X0 - shift), T))
    return total


def _clamp_images(X: Array, T: Array, L: float, sigma: float, K: int) -> Array:
    """Σ_{k<K} (-σ)^k [C(X + 2kL) + σ C(2L - X + 2kL)] on the grid T × X."""
    Tc = T[:, None]
    total = np.zeros((T.size, X.size))
    for k in range(K):
        s = (-sigma) ** k
        total += s * (semi_infinite_clamp((X + 2 * k * L)[None, :], Tc)
                      + sigma * semi_infinite_clamp((2 * L - X + 2 * k * L)[None, :], Tc))
    return total


def _shape_images(shape: Shape, X: Array, X0: float, T: Array, L: float, sign: float, K: int,
                  delayed: Array | None = None) -> Array:
    """Image sums of a step, pulse (a step minus the step delayed to ``delayed`` = T - D, formed
    by the caller without cancellation) or alpha current at X and T (and ``delayed``), which
    broadcast: :func:`_grid_images` on a grid, or pairs of equal-length vectors."""
    if shape.kind == "alpha":
        a = shape.time_to_peak
        return _images_at(lambda d, t: point_source_alpha(d, t, a), X, X0, T, L, sign, K)
    values = _images_at(point_source_step, X, X0, T, L, sign, K)
    if shape.kind == "pulse":
        later = T - shape.duration if delayed is None else delayed
        values = values - _images_at(point_source_step, X, X0, later, L, sign, K)
    return values


def _grid_images(shape: Shape, X: Array, X0: float, T: Array, L: float, sign: float, K: int,
                 delayed: Array | None = None) -> Array:
    """:func:`_shape_images` on the grid T × X."""
    return _shape_images(shape, X[None, :], X0, T[:, None], L, sign, K, None if delayed is None else delayed[:, None])


_FEW_PAIRS = 4096  # image sums at this many (X, T) pairs or fewer stack their images in one call
_SMALL = 1.0 / 16  # early values below this fraction of the largest steady voltage take images
_FLOOR = 4 * float(np.finfo(float).eps)  # ... and the eigen-series is carried below this fraction of it
_ALPHA_SMALL = 1e-5  # an alpha current's early values below this fraction of its rounding scale take images
_ROUNDING = 4.0  # an alpha residue sum's rounding bound, in ε times the sizes it is summed from
_PRODUCT = 1 << 18  # multiply-adds per matrix product in the series sums (see _series)


def _rows_of(index: NDArray[np.intp]) -> slice | NDArray[np.intp]:
    """A slice for consecutive row indices (a view, no copy), else the indices, which must
    increase strictly (every caller's do: they come from ``np.flatnonzero``)."""
    if index.size and int(index[-1]) - int(index[0]) + 1 == index.size:
        return slice(int(index[0]), int(index[-1]) + 1)
    return index


def _series(out: Array, rows: NDArray[np.intp], counts: NDArray[np.int_], time_factor, spatial: Array,
            steady: Array, row_scale: Array | None = None) -> None:
    """Write ``row_scale[i]·steady - Σ_{n < counts[i]} time_factor(modes, i)[n]·spatial[n, :]`` into
    ``out[rows[i]]`` for every series row i.

    ``time_factor(s, r)`` gives the time factors of the modes in slice ``s`` at the series rows
    ``r`` (shape (len(r), len(s))); ``row_scale`` defaults to 1. Each row gets exactly the modes
    its own bound asks for: rows are grouped by count, and each group is summed by matrix products
    of at most :data:`_PRODUCT` multiply-adds. Products that small run on one thread: a larger one
    starts the BLAS library's threads, which on a small shared machine spin against each other
    (issue 15: 16 ms of CPU for a product of 872 × 3 × 1000, against 0.3 ms in blocks of 64 rows).
    """
    nX = spatial.shape[1]
    order = np.argsort(counts, kind="stable")
    ordered = counts[order]
    starts = np.flatnonzero(np.concatenate(([True], ordered[1:] != ordered[:-1])))
    for first, last in zip(starts, [*starts[1:], order.size], strict=True):
        count = int(ordered[first])
        group = np.sort(order[first:last])
        per = max(4, _PRODUCT // max(1, count * nX))
        for s in range(0, group.size, per):
            r = group[s:s + per]
            sums = time_factor(slice(0, count), r) @ spatial[:count]
            base = steady[None, :] if row_scale is None else row_scale[r][:, None] * steady[None, :]
            target = _rows_of(rows[r])
            if isinstance(target, slice):
                np.subtract(base, sums, out=out[target])
            else:
                out[target] = base - sums


def current_response(position: ArrayLike, source: float, normalised_time: ArrayLike, electrotonic_length: float,
                     end_conductance_ratio: float = 0.0, soma_ratio: float = 0.0, *, shape: str = "step",
                     duration: float = 0.0, time_to_peak: float = 0.0, tolerance: float = 1e-10,
                     delayed_time: ArrayLike | None = None) -> tuple[Array, Array, str]:
    r"""Voltage :math:`V/(IR_\infty)` on the grid T × X for a current input at X0 on a cylinder.

    The cylinder has a sealed origin (or a soma of ratio :math:`y = G_S/G_\infty`) and a far end
    of ratio B at X = L (L = inf: semi-infinite, y must be 0). ``shape`` is ``"step"``,
    ``"pulse"`` (of ``duration`` in τm) or ``"alpha"`` (``time_to_peak`` in τm, I is the peak).

    .. math:: \frac{V}{IR_\infty} = g(X,X_0)\,f(T) - \sum_n r_n(X,X_0)\,h_n(T)

    (eigen-series; :math:`h_n = e^{-\mu_n T}/\mu_n` for a step, :math:`\mu_n = 1+\alpha_n^2`) or the
    image sum of :func:`point_source_step` / :func:`point_source_alpha`, per T, whichever needs
    fewer operations for a truncation error ≤ ``tolerance`` (absolute, in units of
    :math:`IR_\infty`); for a step or pulse, images are also preferred at early times whenever they
    need at most :data:`EARLY_REFLECTIONS` reflections, because they are then accurate relative to
    each value (the eigen-series subtracts from the steady state); such times whose eigen-series
    costs at most a quarter of the images take that series carried until its tail is below 4ε of
    the largest steady voltage g(X0, X0) (so its error is rounding, relative to that voltage), and
    images only where a value is under 1/16 of it: every value keeps its digits, and the images,
    an erfcx pair per term and point, are summed where they are needed. An alpha current's series
    (:func:`_alpha_by_residues`) takes every time at which it needs fewer operations than the
    images; its rounding is about ε·g·min(1, e·a, e/a), with g = g(X0, X0) the largest steady
    voltage (measured), so with a sealed or killed end, at times whose images need at most
    :data:`EARLY_REFLECTIONS` reflections, the series is carried until its tail is below 4ε of
    that scale and the values below 1e-5 of it (far points just after the onset) are replaced by
    their images, each point summing only the images that are not negligible beside its nearest
    one (:func:`_alpha_small_values`): every value keeps about 10 digits. A soma, or
    a leaky end whose bracket is too wide, at times whose eigen-series would need more than
    :data:`CONTOUR_MODES` modes, uses the Laplace-domain solution inverted on a contour
    (:func:`cabletheory.laplace.current_inversion`), whose error estimate is the bound there.

    ``delayed_time`` (pulse only): T - D for each T, formed by the caller from the SI times
    (``(t - duration)/τm``) so that the moments just after the pulse ends keep their digits;
    default ``T - duration``.

    Returns
    -------
    (voltage, bound, method): arrays of shape (nT, nX) in units of :math:`IR_\infty`, the
    truncation bound per point, and a description.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Hodgkin & Rushton (1946) Proc. R. Soc. B 133:444;
    Jack, Noble & Tsien (1975) ch. 3 (recalled from memory).
    """
    X = np.atleast_1d(np.asarray(position, dtype=float))
    T = np.atleast_1d(np.asarray(normalised_time, dtype=float))
    L = float(electrotonic_length)
    B = float(end_conductance_ratio)
    y = float(soma_ratio)
    X0 = float(source)
    shp = Shape(shape, duration, time_to_peak)
    if shape not in ("step", "pulse", "alpha"):
        raise InputError(f"shape must be step, pulse or alpha, got {shape!r}")
    out = np.zeros((T.size, X.size))
    bound = np.zeros((T.size, X.size))
    plan = _Plan()
    live = np.flatnonzero(T > 0)
    delayed = (T - shp.duration if delayed_time is None
               else np.atleast_1d(np.asarray(delayed_time, dtype=float)))
    if math.isinf(L):
        if y != 0:
            raise InputError("a soma needs a finite cylinder")
        Tl = T[live]
        out[live] = _grid_images(shp, X, X0, Tl, math.inf, 1.0, 0, delayed[live])
        return out, bound, "closed form (semi-infinite cable: source and its image in the sealed end)"
    w_s, w_k = end_weights(B)
    images_exact = y == 0 and (w_k == 0 or w_s == 0)
    leaky = y == 0 and not images_exact
    sign = 1.0 if w_k == 0 else -1.0
    Tl = T[live]
    Dl = delayed[live]
    tol = float(tolerance)  # in units of the kernel's scale, so it may exceed 1
    if not (math.isfinite(tol) and tol > 0):
        raise InputError(f"tolerance must be finite and positive, got {tolerance!r}")
    if shp.kind == "pulse":
        # the modes of a pulse decay from its end: bound them at T - D once the pulse is over
        effective = np.where(Dl > 0, Dl, Tl)

        def mode_bound(n: int, t: Array) -> Array:
            return eigen.tail_bound(n, t, L, kind="step")

        n_need, _ = modes_needed(effective, tol, L, mode_bound, several=True)
    else:
        effective = Tl
        if shp.kind == "alpha":
            def mode_bound(n: int, t: Array) -> Array:
                return alpha_residue_tail(n, t, L, shp.time_to_peak)
        else:
            mode_bound = current_bound(shp, L)
        n_need, _ = modes_needed(Tl, tol, L, mode_bound, several=shp.kind != "alpha")
    use_eigen = np.ones(Tl.size, dtype=bool)
    fine = np.zeros(0, dtype=np.intp)  # rows of the eigen-series to rounding level (below)
    fine_count, fine_bound = np.zeros(0, dtype=int), np.zeros(0)
    if images_exact or leaky:
        tails = [image_tail]
        reflections = reflections_needed(Tl, L, tol / (2 if shp.kind == "pulse" else 1), tails[0])
        cost_images = (2 * reflections + 1) * 2 * _IMAGE_COST * (2 if leaky else 1) * (2 if shp.kind == "pulse" else 1)
        cost_images *= 16 if shp.kind == "alpha" else 1
        if shp.kind == "alpha" and images_exact:
            # early times: the residue series carried to its rounding level, so that early values keep
            # their digits (the smallest take images below), unless the images are cheaper then
            early_rows = np.flatnonzero(reflections <= EARLY_REFLECTIONS)
            floor = min(tol, _FLOOR * _alpha_rounding_scale(X0, L, B, y, shp.time_to_peak))
            if early_rows.size and floor > 0:
                fine_need, _ = modes_needed(Tl[early_rows], floor, L, mode_bound)
                n_need[early_rows] = np.maximum(n_need[early_rows], fine_need)
        # the alpha current's residue series needs as few modes as a step's: images only where cheaper
        prefer = (cost_images < n_need) | ((reflections <= EARLY_REFLECTIONS) & (shp.kind != "alpha"))
        if images_exact and shp.kind != "alpha":
            # early times whose images were chosen for their digits, not their cost: the eigen-series
            # carried to rounding level where it is cheap, images only where a value is small
            scale = float(steady_green(X0, X0, L, B, y))  # the largest steady voltage
            floor = min(tol, _FLOOR * scale)
            maybe = np.flatnonzero(prefer & (cost_images >= n_need))
            if maybe.size and floor > 0:
                counts, reached = modes_needed(effective[maybe], floor, L, mode_bound,
                                               most=int(cost_images[maybe].max()) // 4, several=True)
                take = 4 * counts <= cost_images[maybe]
                fine, fine_count, fine_bound = maybe[take], counts[take], reached[take]
                prefer[fine] = False
        for k in np.unique(reflections[prefer]).astype(int):
            idx = np.flatnonzero(prefer & (reflections == k))
            Tk = Tl[idx]
            Dk = Dl[idx]
            tail = image_tail(np.float64(k), Tk, L)
            if shp.kind == "pulse":
                tail = tail + image_tail(np.float64(k), Dk, L)
            if images_exact:
                values = _grid_images(shp, X, X0, Tk, L, sign, k, Dk)
                err = np.broadcast_to(tail[:, None], values.shape)
                accepted = np.ones(idx.size, dtype=bool)
            else:
                upper = _grid_images(shp, X, X0, Tk, L, 1.0, k, Dk)
                lower = _grid_images(shp, X, X0, Tk, L, -1.0, k, Dk)
                values = 0.5 * (upper + lower)
                err = 0.5 * np.abs(upper - lower) + tail[:, None]
                accepted = np.all(err <= tol, axis=1)
            rows = live[idx[accepted]]
            out[rows] = values[accepted]
            bound[rows] = err[accepted]
            use_eigen[idx[accepted]] = False
        imaged = ~use_eigen
        plan.add("sealed/killed bracket of images" if leaky else "images", Tl[imaged],
                 int(reflections[imaged].max(initial=0)), "reflections per side")
        use_eigen[fine] = False
    # early times the images cannot take (a soma, or a leaky end near the end): contour inversion
    early = np.flatnonzero(use_eigen & (n_need > CONTOUR_MODES))
    if early.size:
        values, err = _inverted(shp, X, X0, Tl[early], Dl[early], L, B, y)
        accepted = np.all(err <= tol, axis=1) | (n_need[early] > MAX_MODES)
        out[live[early[accepted]]] = values[accepted]
        bound[live[early[accepted]]] = err[accepted]
        use_eigen[early[accepted]] = False
        plan.add("Laplace-domain solution inverted on a contour", Tl[early[accepted]], contour.FINE, "nodes")
    idx = np.flatnonzero(use_eigen)
    if idx.size and np.any(n_need[idx] > MAX_MODES):  # pragma: no cover - the contour takes these times
        worst = Tl[idx][n_need[idx] > MAX_MODES].min()
        raise ConvergenceError(f"the eigen-series needs more than {MAX_MODES} modes at T = {worst:.3g} "
                               f"for tolerance {tol:.3g}; choose a later time or a looser truncation")
    if idx.size or fine.size:
        count = int(n_need[idx].max(initial=0))
        alpha = eigen._eigenvalues(L, B, max(count, int(fine_count.max(initial=0)) if fine.size else 0), "sealed", y)
        mu = 1.0 + alpha**2
        residues = eigen.mode_residues(alpha, X, X0, L, soma_ratio=y)  # (modes, nX)
        steady = steady_green(X, X0, L, B, y)
        row_scale: Array | None = None
        if shp.kind == "step":
            def time_factor(s: slice, p: NDArray[np.intp]) -> Array:
                return np.exp(-mu[s] * Tl[p, None]) / mu[s]
        elif shp.kind == "pulse":
            D = shp.duration
            after = Dl > 0
            row_scale = np.where(after, 0.0, 1.0)

            def time_factor(s: slice, p: NDArray[np.intp]) -> Array:
                later = after[p, None]
                return np.where(later, np.expm1(-mu[s] * D) * np.exp(-mu[s] * np.where(later, Dl[p, None], 0.0)),
                                np.exp(-mu[s] * Tl[p, None])) / mu[s]
        else:
            factor, spatial, rounding = _alpha_by_residues(X, X0, Tl[idx], L, B, y, shp.time_to_peak, alpha,
                                                           residues)

        def summed(which: NDArray[np.intp], counts: NDArray[np.int_]) -> None:
            _series(out, live[which], counts, lambda s, r: time_factor(s, which[r]), residues, steady,
                    None if row_scale is None else row_scale[which])

        if fine.size:
            summed(fine, fine_count)
            bound[_rows_of(live[fine])] = fine_bound[:, None]
            largest = _small_values_by_images(out, bound, shp, X, X0, Tl, Dl, live, fine, reflections[fine], L, sign,
                                              _SMALL * scale)
            plan.add("eigen-series to rounding level and images where a value is small", Tl[fine],
                     int(fine_count.max()),
                     f"modes, {largest} reflections per side" if largest else "modes")
        if idx.size:
            if shp.kind == "alpha":
                # the series sums steady - Σ factor·spatial: no steady part, and the terms' sign turned
                _series(out, live[idx], np.full(idx.size, spatial.shape[0]), factor, -spatial, np.zeros(X.size))
            else:
                summed(idx, np.full(idx.size, count))  # one count for all: every row's bound is that count's
            tail = mode_bound(count, effective[idx])
            if shp.kind == "alpha":  # its parts may cancel far below their own size: their rounding
                tail = tail + rounding(np.arange(idx.size))
            bound[_rows_of(live[idx])] = tail[:, None]
            plan.add("eigen-series", Tl[idx], count, "modes")
            if shp.kind == "alpha" and images_exact:
                # the residue series' rounding is about ε·g·min(1, e·a, e/a) (measured against Talbot
                # inversion, L = 1, a = 0.001 ... 1000): early values far below it take images,
                # which keep their digits
                few = idx[reflections[idx] <= EARLY_REFLECTIONS]
                tiny = _ALPHA_SMALL * _alpha_rounding_scale(X0, L, B, y, shp.time_to_peak)
                if few.size and _alpha_small_values(out, bound, shp.time_to_peak, X, X0, Tl, live, few,
                                                    reflections[few], L, sign, tiny):
                    plan.add("images where a value is small", Tl[few], int(reflections[few].max()),
                             "reflections per side")
    return out, bound, plan.text()


def _alpha_by_residues(X: Array, X0: float, T: Array, L: float, B: float, y: float, a: float, alpha: Array,
                       residues: Array) -> tuple[Callable[[slice, NDArray[np.intp]], Array], Array,
                                                 Callable[[NDArray[np.intp]], Array]]:
    r"""An alpha current's response from the residues of its transform, as a sum of products.

    The transform of :math:`I(T) = (T/a)e^{1-T/a}` is :math:`(e/a)/(s + c)^2` with c = 1/a, and
    the cable's is :math:`\hat G(s) = \sum_n r_n/(s + \mu_n)` (:func:`cabletheory.laplace.green`),
    so the residue theorem gives the exact

    .. math:: V(X,T) = \frac ea\Big[e^{-cT}\big(T\tilde G(-c) + \tilde G'(-c)\big)
              + \sum_{n\notin R}\frac{r_n e^{-\mu_nT}}{(\mu_n - c)^2}\Big] + \sum_{n\in R} r_n A_n(T)

    where R holds the modes with :math:`|\mu_n - c| <` 6 max(1, √c) (their poles are near the double
    pole), :math:`\tilde G` is :math:`\hat G` without them (:func:`cabletheory.laplace.green_near_real`)
    and :math:`A_n` = :func:`_alpha_mode`, the same mode's exact convolution, stable for
    :math:`\mu_n` = c. The series' terms fall like :math:`e^{-\mu_nT}/\mu_n^2`, so it needs as
    many modes as the step's (bound: :func:`cabletheory.truncation.alpha_residue_tail`); the
    first ``alpha.size`` modes are summed (``residues`` their :math:`r_n(X, X_0)`).

    Returns ``(factor, spatial, rounding)``: V at the times ``T[r]`` is
    ``factor(slice(0, k), r) @ spatial`` with k = len(spatial), and ``factor(s, r)`` gives the
    columns in slice s only (the double pole's two, the modes in R, then the others);
    ``rounding(r)`` bounds the float rounding of those sums at any X, :data:`_ROUNDING`·ε times
    Σ|factor|·(the largest size each column is summed from): near the source's far side at early
    times the parts cancel to a value far below their own size.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (Laplace transform of the cable equation); Jack, Noble &
    Tsien (1975) ch. 3 and 7 (the cable's transfer impedance, recalled from memory); the residue
    theorem for inverting a rational-like transform (common practice).
    """
    from . import laplace

    count = alpha.size
    c = 1.0 / a
    # s near -c carries a rounding of about ε·c, which a pole at distance δ from the circle of
    # green_near_real amplifies as 1/δ²: so the modes taken out reach far (the mode spacing near
    # c is about 2π√c/L), and the circle passes far from them (measured: 9e-15 instead of 6e-13
    # with a third of this clearance, L = 0.05, killed end, a = 0.001)
    clear = 6.0 * max(1.0, math.sqrt(c))
    # modes with μ_n < c + clear have α_n ≥ (n - 1/2)π/L below √(c + clear - 1)
    last = int(L * math.sqrt(c + clear - 1.0) / math.pi + 0.5) + 1
    if last > count:
        alpha = eigen._eigenvalues(L, B, last, "sealed", y)
        residues = eigen.mode_residues(alpha, X, X0, L, soma_ratio=y)
    mu = 1.0 + alpha**2
    near = np.abs(mu - c) < clear
    kept = ~near & (np.arange(mu.size) < count)
    value, slope, value_size, slope_size = laplace.green_near_real(-c, X, X0, L, B, y, poles=mu[near],
                                                                   residues=residues[near], clear=clear,
                                                                   magnitudes=True)
    mu_near, mu_kept = mu[near], mu[kept]
    spatial = np.vstack([value[None, :], slope[None, :], residues[near], residues[kept]])
    scale = math.e / a
    first = 2 + mu_near.size  # columns before the kept modes
    Tc = T[:, None]
    decay = np.exp(-c * Tc)
    head = np.hstack([scale * Tc * decay, scale * decay, _alpha_mode(mu_near[None, :], Tc, a)])

    def factor(s: slice, r: NDArray[np.intp]) -> Array:
        parts = []
        if s.start < first:
            parts.append(head[r, s.start:min(s.stop, first)])
        if s.stop > first:
            m = mu_kept[max(0, s.start - first):s.stop - first]
            parts.append(np.exp(-m * Tc[r]) * (scale / (m - c) ** 2))
        return parts[0] if len(parts) == 1 else np.hstack(parts)

    # the sizes the value at a point is summed from, per column: its rounding scales on them
    # (a mode's shape cos(α_n X) loses its last bits in proportion to the phase α_n X ≤ α_n L)
    phases = 1.0 + L * np.concatenate([alpha[near], alpha[kept]])
    sizes = np.concatenate([[value_size.max(), slope_size.max()], np.abs(spatial[2:]).max(axis=1) * phases])

    def rounding(r: NDArray[np.intp]) -> Array:
        return _ROUNDING * np.finfo(float).eps * (np.abs(factor(slice(0, sizes.size), r)) @ sizes)

    return factor, spatial, rounding


def _small_values_by_images(out: Array, bound: Array, shp: Shape, X: Array, X0: float, T: Array, D: Array,
                            live: NDArray[np.intp], rows: NDArray[np.intp], reflections: Array, L: float,
                            sign: float, small: float) -> int:
    """Replace the series values below ``small`` in absolute value on the given rows (indices into
    T, D and ``live``) by image sums with their reflection counts, and their bounds by the image
    tails; return the most reflections used (0 if no value was small)."""
    block = out[_rows_of(live[rows])]
    used = 0
    for k in np.unique(reflections).astype(int):
        mine = np.flatnonzero(reflections == k)
        r, c = np.nonzero(np.abs(block[mine]) < small)
        if r.size == 0:
            continue
        p = rows[mine[r]]
        Tp, Dp = T[p], D[p]
        values = _shape_images(shp, X[c], X0, Tp, L, sign, k, Dp)
        tail = image_tail(np.float64(k), Tp, L)
        if shp.kind == "pulse":
            tail = tail + image_tail(np.float64(k), Dp, L)
        out[live[p], c] = values
        bound[live[p], c] = tail
        used = max(used, k)
    return used


def _alpha_rounding_scale(X0: float, L: float, B: float, y: float, a: float) -> float:
    """g(X0, X0)·min(1, e·a, e/a): the residue series' rounding is about ε times this (measured
    against Talbot inversion for times to peak of 0.001 to 1000 τm)."""
    return float(steady_green(X0, X0, L, B, y)) * min(1.0, math.e * min(a, 1.0 / a))


_NEGLIGIBLE = 40.0  # an image whose Gaussian factor is e^{-40} (4e-18) of the nearest one's is left out


def _alpha_small_values(out: Array, bound: Array, a: float, X: Array, X0: float, T: Array,
                        live: NDArray[np.intp], rows: NDArray[np.intp], reflections: Array, L: float, sign: float,
                        small: float) -> bool:
    """Replace an alpha current's series values below ``small`` on the given rows (indices into T
    and ``live``) by image sums with the rows' reflection counts, each point summing only the
    images within a factor e^{-40} of its nearest one (:func:`point_source_alpha` is at most
    √(T/π)·e^{-d²/4T}, the step's bound, so the ones left out are added to the bound); True if any."""
    block = out[_rows_of(live[rows])]
    r, c = np.nonzero(np.abs(block) < small)
    if r.size == 0:
        return False
    p = rows[r]
    t, x, most = T[p], X[c], reflections[r]
    top = int(most.max())
    sources = [X0] if X0 == 0.0 else [X0, -X0]
    shifts = [(k, source + 2 * k * L) for k in range(-top, top + 1) for source in sources]
    distances = np.array([np.abs(x - at) for _, at in shifts])
    allowed = np.array([np.abs(k) <= most for k, _ in shifts])
    nearest = np.min(np.where(allowed, distances, np.inf), axis=0)
    total = np.zeros(p.size)
    left_out = np.zeros(p.size)
    for (k, _), d, ok in zip(shifts, distances, allowed, strict=True):
        keep = ok & ((d * d - nearest * nearest) <= 4 * _NEGLIGIBLE * t)
        if keep.any():
            total[keep] += sign ** abs(k) * point_source_alpha(d[keep], t[keep], a)
        drop = ok & ~keep
        left_out[drop] += np.sqrt(t[drop] / np.pi) * np.exp(-d[drop] ** 2 / (4 * t[drop]))
    weight = 2.0 if X0 == 0.0 else 1.0
    out[live[p], c] = weight * total
    bound[live[p], c] = image_tail(most, t, L) + weight * left_out
    return True


def _inverted(shp: Shape, X: Array, X0: float, T: Array, delayed: Array, L: float, B: float,
              y: float) -> tuple[Array, Array]:
    """Contour inversion of the Laplace-domain solution for a step, pulse (step minus the step
    at ``delayed``) or alpha current: (values, error estimates) on the grid T × X."""
    from . import laplace

    if shp.kind == "alpha":
        return laplace.current_inversion(X, X0, T, L, B, y, shape="alpha", time_to_peak=shp.time_to_peak)
    values, err = laplace.current_inversion(X, X0, T, L, B, y)
    if shp.kind == "pulse":
        later, later_err = laplace.current_inversion(X, X0, delayed, L, B, y)
        values, err = values - later, err + later_err
    return values, err


def clamp_response(position: ArrayLike, normalised_time: ArrayLike, electrotonic_length: float,
                   end_conductance_ratio: float = 0.0, *, tolerance: float = 1e-10) -> tuple[Array, Array, str]:
    r"""Voltage :math:`V/V_0` on the grid T × X for a clamp step :math:`V_0` at X = 0 of a cylinder.

    .. math:: \frac{V}{V_0} = \frac{\cosh(L-X) + B\sinh(L-X)}{\cosh L + B\sinh L}
              - \sum_n \frac{\alpha_n\sin\alpha_nX}{(1+\alpha_n^2)N_n}e^{-(1+\alpha_n^2)T}

    (eigen-series, large T) or the images of :func:`semi_infinite_clamp` reflected at the far
    end (small T; a leaky end is bracketed between killed and sealed), per T, with truncation
    error ≤ ``tolerance``.

    Returns
    -------
    (voltage, bound, method) as in :func:`current_response`, in units of :math:`V_0`.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (voltage-clamp time constants); Jack, Noble & Tsien
    (1975) ch. 3 (recalled from memory).
    """
    X = np.atleast_1d(np.asarray(position, dtype=float))
    T = np.atleast_1d(np.asarray(normalised_time, dtype=float))
    L = float(electrotonic_length)
    B = float(end_conductance_ratio)
    tol = float(tolerance)
    out = np.zeros((T.size, X.size))
    bound = np.zeros((T.size, X.size))
    live = np.flatnonzero(T > 0)
    Tl = T[live]
    if math.isinf(L):
        out[live] = semi_infinite_clamp(X[None, :], Tl[:, None])
        return out, bound, "closed form (semi-infinite cable)"
    w_s, w_k = end_weights(B)
    leaky = w_s != 0 and w_k != 0
    sigma = 1.0 if w_k == 0 else -1.0
    plan = _Plan()

    def mode_bound(n: int, t: Array) -> Array:
        return eigen.tail_bound(n, t, L, kind="clamp", origin="clamped")

    n_need, _ = modes_needed(Tl, tol, L, mode_bound, several=True)
    reflections = reflections_needed(Tl, L, tol, clamp_image_tail)
    prefer = 2 * reflections * _IMAGE_COST * (2 if leaky else 1) < n_need
    use_eigen = np.ones(Tl.size, dtype=bool)
    for k in np.unique(reflections[prefer]).astype(int):
        idx = np.flatnonzero(prefer & (reflections == k))
        Tk = Tl[idx]
        tail = clamp_image_tail(np.float64(k), Tk, L)[:, None]
        if leaky:
            upper = _clamp_images(X, Tk, L, 1.0, k)
            lower = _clamp_images(X, Tk, L, -1.0, k)
            values = 0.5 * (upper + lower)
            err = 0.5 * np.abs(upper - lower) + tail
            accepted = np.all(err <= tol, axis=1)
        else:
            values = _clamp_images(X, Tk, L, sigma, k)
            err = np.broadcast_to(tail, values.shape)
            accepted = np.ones(idx.size, dtype=bool)
        out[live[idx[accepted]]] = values[accepted]
        bound[live[idx[accepted]]] = err[accepted]
        use_eigen[idx[accepted]] = False
    plan.add("sealed/killed bracket of images" if leaky else "images", Tl[~use_eigen],
             int(reflections[~use_eigen].max()) if (~use_eigen).any() else 0, "reflections")
    idx = np.flatnonzero(use_eigen)
    if idx.size:
        Te = Tl[idx]
        if np.any(n_need[idx] > MAX_MODES):
            worst = Te[n_need[idx] > MAX_MODES].min()
            raise ConvergenceError(f"the eigen-series needs more than {MAX_MODES} modes at T = {worst:.3g}")
        count = int(n_need[idx].max())
        counts = np.full(idx.size, count)
        alpha = eigen._eigenvalues(L, B, count, "clamped", 0.0)
        mu = 1.0 + alpha**2
        coefficients = eigen.clamp_mode_coefficients(alpha, X, L)
        rows = live[idx]
        _series(out, rows, counts, lambda s, r: np.exp(-mu[s] * Te[r, None]), coefficients, clamp_steady(X, L, B))
        bound[_rows_of(rows)] = mode_bound(count, Te)[:, None]
        plan.add("eigen-series", Te, count, "modes")
    return out, bound, plan.text()
