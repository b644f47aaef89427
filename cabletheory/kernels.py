r"""Closed-form kernels of passive cables, dimensionless: infinite-cable responses and steady states.

The solutions every time course is built from: the point source of an infinite cable for a
current step (Hodgkin & Rushton 1946) and for an alpha current, the voltage-clamped
semi-infinite cable, and the steady Green's function of a finite cylinder with a soma. Written
with the scaled complementary error function and :math:`e^{-2(\cdot)}` so that they stay finite
for any X and T. X = x/λ, T = t/τm, L = ℓ/λ.

Every result assumes a passive, linear membrane with uniform Rm, Ri and Cm.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .cable import voltage_ratio
from .errors import InputError

__all__ = [
    "clamp_steady",
    "end_weights",
    "hodgkin_rushton",
    "point_source_alpha",
    "point_source_step",
    "semi_infinite_clamp",
    "steady_green",
]

Array = NDArray[np.float64]

_CHUNK = 1 << 16  # points per table of repeated erfc integrals in point_source_alpha (40 values each)


# --------------------------------------------------------------------------------------
# closed-form kernels (dimensionless)
# --------------------------------------------------------------------------------------
def _erfc_parts(distance: ArrayLike, T: ArrayLike) -> tuple[Array, Array, Array, Array, Array]:
    """u = d/(2√T), z = u - √T, w = u + √T, E = exp(-d²/(4T) - T), e^{-d} for T > 0."""
    d = np.abs(np.asarray(distance, dtype=float))
    T = np.asarray(T, dtype=float)
    root = np.sqrt(T)
    with np.errstate(divide="ignore", invalid="ignore"):
        u = d / (2.0 * root)
    z = u - root
    w = u + root
    big_e = np.exp(-(u * u + T))
    return d, z, w, big_e, np.exp(-d)


def point_source_step(distance: ArrayLike, normalised_time: ArrayLike) -> Array:
    r"""Infinite cable, current step I at one point: :math:`V/(I R_\infty)` at distance |X - X0|.

    .. math:: \frac{V}{IR_\infty} = \frac14\left[e^{-d}\,\mathrm{erfc}\!\left(\frac{d}{2\sqrt T}
              - \sqrt T\right) - e^{d}\,\mathrm{erfc}\!\left(\frac{d}{2\sqrt T} + \sqrt T\right)\right]

    evaluated as :math:`\tfrac14 e^{-d^2/4T - T}[\mathrm{erfcx}(z) - \mathrm{erfcx}(w)]`
    (z ≥ 0) or :math:`\tfrac14[2e^{-d} - e^{-d^2/4T-T}(\mathrm{erfcx}(-z) + \mathrm{erfcx}(w))]`
    (z < 0), finite for every d ≥ 0 and T. Near the source at early times (z < 1/2 and T < 1)
    both forms subtract nearly equal numbers, so there the same value is summed as
    :math:`\tfrac14[e^{d}\mathrm{erf}(w) - e^{-d}\mathrm{erf}(z) - 2\sinh d]`, which keeps its
    relative accuracy (at d = 0 it is :math:`\mathrm{erf}\sqrt T/2` exactly). Final value
    :math:`e^{-d}/2`; 0 for T ≤ 0.

    Parameters
    ----------
    distance : d = |X - X0|, dimensionless
    normalised_time : T = t/τm

    References
    ----------
    Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444; Jack, Noble & Tsien (1975) ch. 3
    (recalled from memory).
    """
    from scipy.special import erfcx

    T = np.asarray(normalised_time, dtype=float)
    positive = T > 0
    Tp = np.where(positive, T, 1.0)
    with np.errstate(over="ignore", invalid="ignore"):
        _, z, w, big_e, e_d = _erfc_parts(distance, Tp)
        neg = z < 0
        first, second = erfcx(np.abs(z)), erfcx(w)  # each once: np.where evaluates both of its forms
        value = np.where(neg, 2.0 * e_d - big_e * (first + second), big_e * (first - second))
        near = (z < 0.5) & (Tp < 1.0)
        if near.any():
            from scipy.special import erf

            d = np.broadcast_to(np.abs(np.asarray(distance, dtype=float)), value.shape)
            zn, wn, dn = np.broadcast_to(z, value.shape)[near], np.broadcast_to(w, value.shape)[near], d[near]
            value = np.array(value, dtype=float)
            value[near] = np.exp(dn) * erf(wn) - np.exp(-dn) * erf(zn) - 2.0 * np.sinh(dn)
    return np.where(positive, 0.25 * value, 0.0)


def hodgkin_rushton(position: ArrayLike, normalised_time: ArrayLike) -> Array:
    r"""Hodgkin-Rushton step response relative to its final value at the injection site.

    .. math:: \frac{V(X,T)}{V(0,\infty)} = \frac12\left[e^{-X}\mathrm{erfc}\!\left(\frac{X}{2\sqrt T}
              - \sqrt T\right) - e^{X}\mathrm{erfc}\!\left(\frac{X}{2\sqrt T} + \sqrt T\right)\right]

    for a semi-infinite cable injected at its sealed end, or an infinite cable injected at X = 0
    (|X| then). At X = 0 it is :math:`\mathrm{erf}\sqrt T` (0.8427 at T = 1).

    References
    ----------
    Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444 (recalled from memory).
    """
    return 2.0 * point_source_step(position, normalised_time)


def semi_infinite_clamp(distance: ArrayLike, normalised_time: ArrayLike) -> Array:
    r"""Semi-infinite cable clamped to :math:`V_0` at X = 0 from T = 0: :math:`V/V_0` at X = d.

    .. math:: \frac{V}{V_0} = \frac12\left[e^{-d}\,\mathrm{erfc}\!\left(\frac{d}{2\sqrt T} - \sqrt T\right)
              + e^{d}\,\mathrm{erfc}\!\left(\frac{d}{2\sqrt T} + \sqrt T\right)\right]

    (scaled-erfc form as in :func:`point_source_step`). Exactly 1 at d = 0 for T > 0; 0 for T ≤ 0.

    References
    ----------
    Jack, Noble & Tsien (1975) ch. 3; Rall W (1969) Biophys. J. 9:1483 (voltage clamp)
    (both recalled from memory).
    """
    from scipy.special import erfcx

    T = np.asarray(normalised_time, dtype=float)
    positive = T > 0
    Tp = np.where(positive, T, 1.0)
    with np.errstate(over="ignore", invalid="ignore"):
        _, z, w, big_e, e_d = _erfc_parts(distance, Tp)
        za = np.abs(z)
        value = np.where(z < 0, 2.0 * e_d - big_e * (erfcx(za) - erfcx(w)), big_e * (erfcx(za) + erfcx(w)))
    return np.where(positive, 0.5 * value, 0.0)


_SERIES_TERMS = 19  # terms of the series in b of point_source_alpha (x ≤ 1: the last is below 1e-18)
_FORWARD_UP_TO = 1.5  # u up to which the repeated erfc integrals are recurred upwards (beyond: downwards)
_DOWNWARD_EXTRA = 80  # start of the downward recurrence above the highest order needed ...
_QUICKER_FROM, _DOWNWARD_EXTRA_FAR = 4.0, 24  # ... and above this u, where it converges faster


def point_source_alpha(distance: ArrayLike, normalised_time: ArrayLike, time_to_peak: float) -> Array:
    r"""Infinite cable, alpha current :math:`I(T) = I_{peak}(T/a)e^{1-T/a}` at one point: :math:`V/(I_{peak}R_\infty)`.

    The convolution of the point-source impulse response with the alpha function in closed form:
    with :math:`b = 1 - 1/a`, :math:`u = d/(2\sqrt T)` and :math:`r = \sqrt b`,

    .. math:: \frac{V}{I_{peak}R_\infty} = \frac{e}{2a}\,\frac{\partial\Psi}{\partial b},\qquad
              \Psi(b) = e^{-T-u^2}\,\frac{\mathrm{erfcx}(u - r\sqrt T) - \mathrm{erfcx}(u + r\sqrt T)}{2r}

    which is the inverse Laplace transform of
    :math:`(e/a)\,e^{-d\sqrt{1+p}}/(2\sqrt{1+p}\,(p + 1/a)^2)`.

    Where :math:`x = \sqrt{|b|T} \le 1` (every T when a = 1), the transform is expanded in b instead:
    with p' = p + 1, :math:`(p' - b)^{-2} = \sum_k (k+1)b^k p'^{-k-2}`, and the inverse transform
    of :math:`e^{-d\sqrt{p'}}/p'^{1+n/2}` is :math:`(4T)^{n/2}\,i^n\mathrm{erfc}(u)`, so

    .. math:: \frac{V}{I_{peak}R_\infty} = \frac{e}{2a}\,e^{-T}(4T)^{3/2}
              \sum_{k\ge0}(k+1)(4bT)^k\,i^{2k+3}\mathrm{erfc}(u)

    whose terms fall like :math:`x^{2k}/\Gamma(k + 5/2)` (19 terms reach 1e-18). The repeated
    integrals of erfc, scaled by :math:`e^{u^2}`, come from their three-term recurrence
    :math:`2n\,i^n\mathrm{erfc} = -2u\,i^{n-1}\mathrm{erfc} + i^{n-2}\mathrm{erfc}`, upwards from
    :math:`\mathrm{erfcx}(u)` for u ≤ 1.5 and downwards (Miller's method, normalised by
    :math:`\mathrm{erfcx}(u)`) above, where the upward direction loses digits; measured within
    2e-13 of mpmath.

    For a < 1 (b < 0, the usual synaptic case) with :math:`s = \sqrt{1/a - 1}` and
    :math:`x = s\sqrt T \ge 1`, the derivative is taken in closed form, with one Faddeeva
    value :math:`W = w(x + iu)` (upper half plane, so bounded) and :math:`E = e^{-T-u^2}`:

    .. math:: \frac{\partial\Psi}{\partial b} = E\left[\frac{T\,\mathrm{Im}W}{s}
              + \frac{d\,\mathrm{Re}W - 2\sqrt{T/\pi}}{2s^2} + \frac{\mathrm{Im}W}{2s^3}\right]

    (r = is turns the two erfc terms into complex conjugates, and the Gaussian terms of their
    derivatives combine into :math:`2\sqrt{T/\pi}\,E`). Its terms cancel to a relative
    :math:`\sim\max(x^2, u^2)\,\epsilon` (measured against mpmath: about 1e-11 at most where
    u ≤ 12, 1e-10 at u = 25 where the value is below 1e-270; below x = 1 they cancel as 1/x², so
    the series is used there). For a > 1 (b > 0) the same derivative in real form
    (:func:`_alpha_closed_form_real`, two real scaled erfc values) takes :math:`x \ge 1`.

    Parameters
    ----------
    distance : d = |X - X0|
    normalised_time : T = t/τm
    time_to_peak : a = t_peak/τm > 0

    References
    ----------
    Rall W (1967) J. Neurophysiol. 30:1138 (alpha-function input, recalled from memory);
    Abramowitz & Stegun (1964) 29.3.88 (inverse Laplace transform of
    :math:`e^{-k\sqrt p}/(\sqrt p(p - b))`), ch. 7 (repeated integrals of erfc, their recurrence)
    and ch. 29 (their Laplace transforms); Gautschi W (1961) Math. Comp. 15:227 (the recurrence
    run downwards) (all recalled from memory).
    """
    a = float(time_to_peak)
    if not a > 0:
        raise InputError(f"time to peak must be positive, got {time_to_peak!r}")
    d_all, T_all = np.broadcast_arrays(np.abs(np.asarray(distance, dtype=float)),
                                       np.asarray(normalised_time, dtype=float))
    out = np.zeros(d_all.shape)
    positive = T_all > 0
    d = d_all[positive]
    T = T_all[positive]
    if d.size == 0:
        return out
    b0 = 1.0 - 1.0 / a
    result = np.empty(d.size)
    near = np.arange(d.size)
    if b0 != 0:
        s_b = math.sqrt(abs(b0))
        closed = s_b * np.sqrt(T) >= 1.0
        if closed.any():
            form = _alpha_closed_form if b0 < 0 else _alpha_closed_form_real
            result[closed] = form(d[closed], T[closed], a, s_b)
            near = np.flatnonzero(~closed)
    if near.size:
        result[near] = _alpha_series(d[near], T[near], a, b0)
    out[positive] = result
    return out


def _repeated_erfc_scaled(u: Array, highest: int) -> Array:
    r""":math:`e^{u^2}\,i^n\mathrm{erfc}(u)` for n = 0 .. ``highest`` (rows) and u ≥ 0 (columns).

    Upwards from :math:`i^{-1}\mathrm{erfc} = (2/\sqrt\pi)e^{-u^2}` and :math:`\mathrm{erfcx}(u)`
    where u ≤ :data:`_FORWARD_UP_TO`; downwards from order ``highest`` + :data:`_DOWNWARD_EXTRA`
    (zero and one) elsewhere (+ :data:`_DOWNWARD_EXTRA_FAR` above u = :data:`_QUICKER_FROM`: the
    unwanted solution then fades faster), rescaled on the way and normalised by
    :math:`\mathrm{erfcx}(u)`.
    """
    from scipy.special import erfcx

    table = np.empty((highest + 1, u.size))
    scaled = erfcx(u)
    near = np.flatnonzero(u <= _FORWARD_UP_TO)
    if near.size:
        un = u[near]
        previous = np.full(near.size, 2.0 / math.sqrt(math.pi))
        current = scaled[near]
        up = np.empty((highest + 1, near.size))
        up[0] = current
        for n in range(1, highest + 1):
            previous, current = current, (0.5 * previous - un * current) / n
            up[n] = current
        table[:, near] = up
    for far, extra in ((np.flatnonzero((u > _FORWARD_UP_TO) & (u <= _QUICKER_FROM)), _DOWNWARD_EXTRA),
                       (np.flatnonzero(u > _QUICKER_FROM), _DOWNWARD_EXTRA_FAR)):
        if far.size == 0:
            continue
        uf = u[far]
        upper = np.zeros(far.size)  # order m + 1
        current = np.ones(far.size)  # order m
        down = np.empty((highest + 1, far.size))
        for m in range(highest + extra, 0, -1):
            upper, current = current, 2 * (m + 1) * upper + 2 * uf * current  # order m - 1
            if m - 1 <= highest:
                down[m - 1] = current
            if m % 16 == 0:  # keep the unnormalised values in range
                rescale = 1.0 / current
                upper, current = upper * rescale, current * rescale
                down[m - 1:] *= rescale
        table[:, far] = down * (scaled[far] / down[0])
    return table


def _alpha_series(d: Array, T: Array, a: float, b: float) -> Array:
    r""":func:`point_source_alpha` where :math:`x = \sqrt{|b|T} \le 1`: its series in b."""
    root = np.sqrt(T)
    u = d / (2 * root)
    total = np.zeros(d.size)
    for s in range(0, d.size, _CHUNK):  # the table of orders holds 40 values per point
        part = slice(s, s + _CHUNK)
        orders = _repeated_erfc_scaled(u[part], 2 * _SERIES_TERMS + 1)
        power = np.ones(orders.shape[1])
        ratio = 4 * b * T[part]
        for k in range(_SERIES_TERMS):
            total[part] += (k + 1) * power * orders[2 * k + 3]
            power = power * ratio
    return (math.e / (2 * a)) * np.exp(-(T + u * u)) * (4 * T) ** 1.5 * total


def _alpha_closed_form(d: Array, T: Array, a: float, s: float) -> Array:
    r""":func:`point_source_alpha` for a < 1 where :math:`x = s\sqrt T \ge 1` (its closed form)."""
    from scipy.special import wofz

    root = np.sqrt(T)
    u = d / (2 * root)
    w = wofz(s * root + 1j * u)
    gauss = np.exp(-(T + u * u))
    bracket = T * w.imag / s + (d * w.real - 2 * np.sqrt(T / np.pi)) / (2 * s * s) + w.imag / (2 * s**3)
    return (math.e / (2 * a)) * gauss * bracket


def _alpha_closed_form_real(d: Array, T: Array, a: float, s: float) -> Array:
    r""":func:`point_source_alpha` for a > 1 where :math:`x = s\sqrt T \ge 1`, :math:`s = \sqrt b` real.

    With :math:`E = e^{-T-u^2}`, :math:`P = E\,\mathrm{erfcx}(u - x)` (or
    :math:`2e^{(b-1)T - sd} - E\,\mathrm{erfcx}(x - u)` when u < x) and
    :math:`Q = E\,\mathrm{erfcx}(u + x)`, Ψ = (P - Q)/(2s), and

    .. math:: \frac{\partial\Psi}{\partial b} = \frac{T(P - Q)}{2s}
              + \frac{4\sqrt{T/\pi}\,E - d(P + Q)}{4s^2} - \frac{P - Q}{4s^3}

    (the derivatives in s of the two erfc terms share the Gaussian :math:`e^{-u^2 - bT}`): the
    real counterpart of :func:`_alpha_closed_form`, with the same cancellation, from two real
    scaled erfc values instead of complex Faddeeva values.
    """
    from scipy.special import erfcx

    root = np.sqrt(T)
    u = d / (2 * root)
    x = s * root
    gauss = np.exp(-(T + u * u))
    z = u - x
    first = np.where(z >= 0, gauss * erfcx(np.abs(z)),
                     2.0 * np.exp((s * s - 1.0) * T - s * d) - gauss * erfcx(np.abs(z)))
    second = gauss * erfcx(u + x)
    difference = first - second
    bracket = (T * difference / (2 * s) + (4 * np.sqrt(T / np.pi) * gauss - d * (first + second)) / (4 * s * s)
               - difference / (4 * s**3))
    return (math.e / (2 * a)) * bracket


# --------------------------------------------------------------------------------------
# steady states
# --------------------------------------------------------------------------------------
def end_weights(end_conductance_ratio: float) -> tuple[float, float]:
    r"""The far end as a pair of weights: :math:`(w_s, w_k)` with :math:`B = w_k/w_s` and the larger 1.

    A leaky end :math:`\psi = \cosh(L-X) + B\sinh(L-X)` is written
    :math:`w_s\cosh(L-X) + w_k\sinh(L-X)`, which is finite for every B: (1, 0) sealed, (0, 1)
    killed (B = inf, exactly), (1, B) for B <= 1 and (1/B, 1) above. The one definition for the
    float paths (eigenvalues, images, steady states, the Laplace domain); :mod:`cabletheory.precise`
    has the mpmath counterpart.

    Parameters
    ----------
    end_conductance_ratio : B = G_end/G∞ (0 sealed, inf killed)

    Raises
    ------
    InputError : B negative or NaN
    """
    b = float(end_conductance_ratio)
    if not b >= 0:
        raise InputError(f"end conductance ratio B must be >= 0 (inf for killed), got {b!r}")
    return (1.0, b) if b <= 1.0 else (1.0 / b, 1.0)


def steady_green(position: ArrayLike, source: ArrayLike, electrotonic_length: float,
                 end_conductance_ratio: float = 0.0, soma_ratio: float = 0.0) -> Array:
    r"""Steady voltage at X for a steady current I at X0, in units of :math:`IR_\infty`.

    .. math:: g(X, X_0) = \frac{\varphi(X_<)\,\psi(X_>)}{y\,\psi(0) - \psi'(0)},\quad
              \varphi = \cosh X + y\sinh X,\quad \psi = \cosh(L-X) + B\sinh(L-X)

    with a soma of ratio :math:`y = G_S/G_\infty` at X = 0 (y = 0: sealed origin). Written with
    :math:`e^{-2(\cdot)}` so that any L (including inf) stays finite. With y = 0 it equals
    :func:`cabletheory.cable.transfer_resistance` / R∞.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491; Rall & Rinzel (1973) Biophys. J. 13:648.
    """
    x = np.asarray(position, dtype=float)
    x0 = np.asarray(source, dtype=float)
    L = float(electrotonic_length)
    y = float(soma_ratio)
    near = np.minimum(x, x0)
    far = np.maximum(x, x0)
    w_s, w_k = end_weights(end_conductance_ratio)
    # e = exp(-2u) and 1 - e = -expm1(-2u): the latter keeps short cables (L -> 0) accurate
    e_near, d_near = np.exp(-2 * near), -np.expm1(-2 * near)
    rest = np.inf if math.isinf(L) else L - far
    e_rest, d_rest = np.exp(-2 * np.asarray(rest)), -np.expm1(-2 * np.asarray(rest))
    e_l, d_l = math.exp(-2 * L), -math.expm1(-2 * L)
    phi = 0.5 * ((1 + e_near) + y * d_near)
    psi = 0.5 * (w_s * (1 + e_rest) + w_k * d_rest)
    wronskian = 0.5 * (y * (w_s * (1 + e_l) + w_k * d_l) + (w_s * d_l + w_k * (1 + e_l)))
    return np.exp(near - far) * phi * psi / wronskian


def clamp_steady(position: Array, L: float, B: float) -> Array:
    """V(X)/V(0) for a clamp at X = 0: (cosh(L-X) + B sinh(L-X))/(cosh L + B sinh L)
    (:func:`cabletheory.cable.voltage_ratio`)."""
    return voltage_ratio(position, L, B)
