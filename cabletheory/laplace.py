r"""Laplace-domain solutions of a cylinder with a lumped soma, and their time courses by contour inversion.

This is the representation that answers every time, however early, for models without a
closed form or an image sum there: a ball and stick (a soma reflects each frequency
differently) and a cylinder with a leaky end near that end. Dimensionless throughout: s in
1/τm, X = x/λ, L = ℓ/λ, voltage in units of :math:`IR_\infty`.

With :math:`q = \sqrt{1+s}` the transformed cable equation :math:`\hat V'' = q^2\hat V` has, for a
unit current at :math:`X_0`, the solution

.. math:: \hat G(X,X_0;s) = \frac{\varphi(X_<)\,\psi(X_>)}{y(1+s)\psi(0) - \psi'(0)},\qquad
          \varphi = \cosh qX + \frac{y(1+s)}{q}\sinh qX,\quad
          \psi = \cosh q(L-X) + \frac Bq\sinh q(L-X)

(soma of conductance :math:`yG_\infty` with the cable's τm at X = 0, far-end conductance
:math:`BG_\infty`; Rall 1969 [Rall1969]; Jack, Noble & Tsien 1975 [JackNobleTsien1975] ch. 7, [MEM]). It reduces
to :func:`cabletheory.transient.steady_green` at s = 0. Every hyperbolic function is written
with :math:`e^{-2q(\cdot)}` (Re q > 0), so nothing overflows for any L or s.

References
----------
Rall W (1969) Biophys. J. 9:1483 [Rall1969] (ball and stick, Laplace transform method).
Jack JJB, Noble D & Tsien RW (1975) Electric Current Flow in Excitable Cells, ch. 7
[JackNobleTsien1975] (recalled from memory).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray

from . import contour
from .kernels import end_weights

__all__ = ["current_inversion", "green", "green_near_real"]

Array = NDArray[np.float64]
Complex = NDArray[np.complex128]


def green(s: ArrayLike, position: ArrayLike, source: float, electrotonic_length: float,
          end_conductance_ratio: float = 0.0, soma_ratio: float = 0.0) -> Complex:
    r"""Laplace-domain voltage :math:`\hat G(X, X_0; s)` (module docstring), shape (len(s), len(X)).

    Parameters
    ----------
    s : complex, in 1/τm, off the closed negative real axis
    position : X = x/λ, 1-D
    source : X0 = x0/λ
    electrotonic_length : L (finite)
    end_conductance_ratio : B = G_end/G∞ (0 sealed, inf killed)
    soma_ratio : y = G_S/G∞ (0: sealed origin, no soma)

    Returns
    -------
    complex array, in units of :math:`IR_\infty\cdot\tau_m` (transform of a voltage per unit current).

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 [Rall1969]; Jack, Noble & Tsien (1975) ch. 7 [JackNobleTsien1975]
    (recalled from memory).
    """
    s = np.atleast_1d(np.asarray(s, dtype=complex))[:, None]
    X = np.atleast_1d(np.asarray(position, dtype=float))[None, :]
    L = float(electrotonic_length)
    y = float(soma_ratio)
    w_s, w_k = end_weights(end_conductance_ratio)
    q = np.sqrt(1.0 + s)
    near = np.minimum(X, source)
    far = np.maximum(X, source)
    load = y * (1.0 + s) / q
    e_near = np.exp(-2.0 * q * near)
    phi = (1.0 + e_near) + load * (-np.expm1(-2.0 * q * near))  # φ(X<)·2e^{-qX<}
    rest = L - far
    e_rest = np.exp(-2.0 * q * rest)
    psi = w_s * (1.0 + e_rest) + w_k * (-np.expm1(-2.0 * q * rest)) / q  # ψ(X>)·2e^{-q(L-X>)}
    e_l = np.exp(-2.0 * q * L)
    d_l = -np.expm1(-2.0 * q * L)
    wronskian = y * (1.0 + s) * (w_s * (1.0 + e_l) + w_k * d_l / q) + (w_s * q * d_l + w_k * (1.0 + e_l))
    return np.exp(q * (near - far)) * phi * psi / (2.0 * wronskian)


_SLOPE_NODES = 24  # trapezoid nodes on the circle of green_near_real (half of them evaluated)


def green_near_real(s0: float, position: ArrayLike, source: float, electrotonic_length: float,
                    end_conductance_ratio: float = 0.0, soma_ratio: float = 0.0, *,
                    poles: ArrayLike = (), residues: ArrayLike | None = None,
                    clear: float = 1.0, magnitudes: bool = False) -> tuple[Array, ...]:
    r"""Value and slope in s of :math:`\tilde G(s) = \hat G(X,X_0;s) - \sum_k r_k/(s + \mu_k)` at a real s0.

    :math:`\hat G = \sum_n r_n/(s + \mu_n)` is :func:`green` (its poles are the cable's modes).
    The poles ``poles`` = :math:`\mu_k` with residues ``residues`` = :math:`r_k(X, X_0)` (shape
    (len(poles), len(X))) are taken out, so :math:`\tilde G` may be evaluated at or next to one of
    them; every other pole must lie at least ``clear`` from s0 (the caller takes out all poles
    nearer than that). Both numbers come from Cauchy's integral formula on a circle of radius
    :math:`\rho` around s0,

    .. math:: \tilde G(s_0) = \frac1{2\pi}\oint\tilde G\,d\theta,\qquad
              \tilde G'(s_0) = \frac1{2\pi\rho}\oint\tilde G\,e^{-i\theta}d\theta,

    summed by the trapezoid rule on 24 nodes, which converges like :math:`(\rho/\text{clear})^{24}`
    (common practice: Cauchy's formula, and the trapezoid rule on periodic analytic functions).
    :math:`\tilde G` is real on the real axis, so the nodes below it mirror those above and 16
    evaluations suffice. The radius is chosen between 0.08 and 0.2 of ``clear`` as far as possible
    from the poles taken out (on the circle they cancel against :func:`green`'s values, which
    costs digits only next to one of them): with ρ ≤ 0.2·clear the truncation is below 2e-17 of
    the values on the circle.

    Returns
    -------
    (value, slope), each of shape (len(X),): :math:`\tilde G(s_0)` in units of :math:`IR_\infty\tau_m`
    and :math:`d\tilde G/ds` in units of :math:`IR_\infty\tau_m^2`. With ``magnitudes``, also the
    largest size of the numbers each was summed from (per X: the largest :math:`|\hat G|` plus
    :math:`\sum_k|r_k/(s+\mu_k)|` on the circle, times :math:`1 + |\sqrt{1+s}|L` for the
    rounding of the phases, and that over the radius), on which their rounding scales (the value
    and slope may be far smaller than the parts that cancel in them).

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 [Rall1969] (the modes as poles of the transform).
    """
    X = np.atleast_1d(np.asarray(position, dtype=float))
    mu = np.atleast_1d(np.asarray(poles, dtype=float))
    r = np.zeros((0, X.size)) if residues is None else np.asarray(residues, dtype=float).reshape(mu.size, X.size)
    gaps = np.abs(mu + s0)  # distances of the poles taken out (at -μ_k) from s0
    candidates = float(clear) * np.array([0.2, 0.17, 0.14, 0.11, 0.08])
    if gaps.size:  # the radius whose circle passes farthest from those poles (relative to the radius)
        apart = np.min(np.abs(gaps[None, :] - candidates[:, None]), axis=1) * candidates
        radius = float(candidates[np.argmax(apart)])
    else:
        radius = float(candidates[0])
    theta = 2 * np.pi * (np.arange(_SLOPE_NODES // 2) + 0.5) / _SLOPE_NODES
    turn = np.exp(1j * theta)
    s = s0 + radius * turn
    whole = green(s, X, source, electrotonic_length, end_conductance_ratio, soma_ratio)
    values = whole - (1.0 / (s[:, None] + mu[None, :])) @ r if mu.size else whole
    value = np.mean(values.real, axis=0)
    slope = np.mean((values * np.conj(turn)[:, None]).real, axis=0) / radius
    if not magnitudes:
        return value, slope
    size = np.abs(whole) + np.abs(1.0 / (s[:, None] + mu[None, :])) @ np.abs(r) if mu.size else np.abs(whole)
    # the phases √(1+s)·X lose their last bits in proportion to their size
    largest = np.max(size * (1.0 + np.abs(np.sqrt(1.0 + s)) * float(electrotonic_length))[:, None], axis=0)
    return value, slope, largest, largest / radius


def current_inversion(position: ArrayLike, source: float, normalised_time: ArrayLike, electrotonic_length: float,
                      end_conductance_ratio: float = 0.0, soma_ratio: float = 0.0, *, shape: str = "step",
                      time_to_peak: float = 1.0) -> tuple[Array, Array]:
    r"""Voltage :math:`V/(IR_\infty)` for a current step or alpha current at X0, by contour inversion.

    .. math:: V(X,T) = \mathcal L^{-1}\big[\hat I(s)\,\hat G(X,X_0;s)\big](T),\qquad
              \hat I = \frac1s\ \text{(step)},\quad \hat I = \frac{e/a}{(s+1/a)^2}\ \text{(alpha)}

    inverted by :func:`cabletheory.contour.invert` (a pulse is a step minus a delayed step; the
    caller forms the delayed time).

    Parameters
    ----------
    position : X, 1-D; source : X0; normalised_time : T = t/τm, 1-D (T ≤ 0 gives 0)
    electrotonic_length, end_conductance_ratio, soma_ratio : L, B, y as in :func:`green`
    shape : "step" or "alpha"; time_to_peak : a = t_peak/τm (alpha)

    Returns
    -------
    (voltage, error estimate), each of shape (nT, nX), in units of :math:`IR_\infty`.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 [Rall1969]; Weideman & Trefethen (2007) Math. Comp. 76:1341
    [WeidemanTrefethen2007] (recalled
    from memory).
    """
    X = np.atleast_1d(np.asarray(position, dtype=float))
    a = float(time_to_peak)

    def transform(s: Complex) -> Complex:
        g = green(s, X, source, electrotonic_length, end_conductance_ratio, soma_ratio)
        if shape == "alpha":
            return g * ((math.e / a) / (s + 1.0 / a) ** 2)[:, None]
        return g / s[:, None]

    result = contour.invert(transform, normalised_time)
    return result.values, result.error_estimate
