r"""High-precision (mpmath) evaluation of the transient solutions of :mod:`cabletheory.transient`.

The same closed forms, image sums and eigen-series are evaluated point by point with
``mpmath`` at a chosen number of decimal digits (``mp.workdps``): eigenvalues are re-solved
with ``mpmath.findroot`` in a bracket around the float root, erfc is mpmath's, and the alpha
convolution is differentiated with ``mpmath.diff`` at raised precision (on a finite cable, the
Laplace-domain solution's slope at the input's double pole, as in the float path's residue
series). Truncation counts come from the same rigorous tail bounds as the float path
(:mod:`cabletheory.truncation`, so neither path imports the other). It is slow (a few ms per
point) and meant for checks, the benchmark and ``charge(..., precision=digits)``.

All quantities are dimensionless: X = x/λ, T = t/τm, L = ℓ/λ, voltage in units of
:math:`IR_\infty` (current) or of the clamp step.

References
----------
Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444; Rall W (1969) Biophys. J. 9:1483.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np

from . import eigen
from .errors import ConvergenceError
from .truncation import Shape, alpha_residue_tail, clamp_image_tail, current_bound, image_tail

__all__ = [
    "clamp_grid",
    "clamp_value",
    "current_grid",
    "current_value",
    "eigenvalues",
    "point_source_alpha",
    "point_source_step",
    "semi_infinite_clamp",
]

MAX_PRECISE_MODES = 20_000


def point_source_step(distance, T):
    r"""mpmath :math:`\tfrac14[e^{-d}\mathrm{erfc}(d/2\sqrt T - \sqrt T) - e^{d}\mathrm{erfc}(d/2\sqrt T + \sqrt T)]`.

    Hodgkin & Rushton (1946); 0 for T ≤ 0.
    """
    d, T = mp.mpf(abs(distance)), mp.mpf(T)
    if T <= 0:
        return mp.mpf(0)
    root = mp.sqrt(T)
    u = d / (2 * root)
    return (mp.exp(-d) * mp.erfc(u - root) - mp.exp(d) * mp.erfc(u + root)) / 4


def semi_infinite_clamp(distance, T):
    r"""mpmath clamp response of a semi-infinite cable; 0 for T ≤ 0.

    .. math:: \tfrac12[e^{-d}\mathrm{erfc}(d/2\sqrt T - \sqrt T) + e^{d}\mathrm{erfc}(d/2\sqrt T + \sqrt T)]
    """
    d, T = mp.mpf(abs(distance)), mp.mpf(T)
    if T <= 0:
        return mp.mpf(0)
    root = mp.sqrt(T)
    u = d / (2 * root)
    return (mp.exp(-d) * mp.erfc(u - root) + mp.exp(d) * mp.erfc(u + root)) / 2


def point_source_alpha(distance, T, time_to_peak):
    r"""mpmath alpha-current response of an infinite cable, :math:`V/(I_{peak}R_\infty)`.

    .. math:: \frac{e}{2a}e^{-T}\frac{\partial}{\partial b}\Phi(b),\quad
              \Phi = \frac{e^{bT}}{2\sqrt b}\left[e^{-d\sqrt b}\mathrm{erfc}(u - \sqrt{bT})
              - e^{d\sqrt b}\mathrm{erfc}(u + \sqrt{bT})\right],\ b = 1 - 1/a

    (derivative by ``mpmath.diff`` with 30 guard digits).
    """
    d, T, a = mp.mpf(abs(distance)), mp.mpf(T), mp.mpf(time_to_peak)
    if T <= 0:
        return mp.mpf(0)
    root = mp.sqrt(T)
    u = d / (2 * root)

    def phi(b):
        r = mp.sqrt(b)
        return mp.exp(b * T) / (2 * r) * (mp.exp(-d * r) * mp.erfc(u - r * root)
                                          - mp.exp(d * r) * mp.erfc(u + r * root))

    b0 = 1 - 1 / a
    with mp.extradps(30):
        derivative = mp.diff(phi, b0)
        if isinstance(derivative, mp.mpc):
            derivative = derivative.real
        return mp.e / (2 * a) * mp.exp(-T) * derivative


def _weights(B):
    B = mp.mpf(B) if not math.isinf(B) else mp.inf
    return (mp.mpf(1), B) if B <= 1 else (1 / B, mp.mpf(1))


def eigenvalues(L, B, count, origin="sealed", soma_ratio=0.0):
    """The first ``count`` eigenvalues in mpmath, refined from the verified float roots."""
    floats = eigen._eigenvalues(float(L), float(B), count, origin, float(soma_ratio))
    L = mp.mpf(L)
    y = mp.mpf(soma_ratio)
    w_s, w_k = _weights(B)

    def f(a):
        if origin == "sealed":
            return (w_k - w_s * y * a * a) * mp.cos(a * L) - a * (w_s + y * w_k) * mp.sin(a * L)
        return w_s * mp.cos(a * L) + w_k * mp.sin(a * L) / a

    out = []
    for a in floats:
        if a == 0.0:
            out.append(mp.mpf(0))
            continue
        delta = 1e-9 * max(1.0, a)
        lo, hi = mp.mpf(a - delta), mp.mpf(a + delta)
        if mp.sign(f(lo)) == mp.sign(f(hi)):
            raise ConvergenceError(f"no sign change around the float root {a!r}")
        out.append(mp.findroot(f, (lo, hi), solver="anderson"))
    return out


def _steady(X, X0, L, B, y):
    near, far = min(X, X0), max(X, X0)
    w_s, w_k = _weights(B)
    if mp.isinf(L):
        return (mp.cosh(near) + y * mp.sinh(near)) * mp.exp(-far) / (1 + y)
    psi = w_s * mp.cosh(L - far) + w_k * mp.sinh(L - far)
    wr = y * (w_s * mp.cosh(L) + w_k * mp.sinh(L)) + w_s * mp.sinh(L) + w_k * mp.cosh(L)
    return (mp.cosh(near) + y * mp.sinh(near)) * psi / wr


def _alpha_mode(mu, T, a):
    """∫_0^T (s/a) e^{1-s/a} e^{-μ(T-s)} ds in mpmath."""
    c = 1 / a
    k = mu - c
    if abs(k * T) < mp.mpf(10) ** (-mp.mp.dps // 3):
        return mp.e / a * T * T * mp.exp(-c * T) * (mp.mpf(1) / 2 - k * T / 6)
    z = k * T
    return mp.e / a * T * T * (mp.exp(-c * T) * (z - 1) + mp.exp(-mu * T)) / (z * z)


def _shape_value(kind, T, D, a):
    if T <= 0:
        return mp.mpf(0)
    if kind == "step":
        return mp.mpf(1)
    if kind == "pulse":
        return mp.mpf(1) if T <= D else mp.mpf(0)
    return T / a * mp.exp(1 - T / a)


def current_value(X, X0, T, L, B, y, kind, D, a, tol, infinite=False, _cache=None, delayed=None):
    """One value of :func:`cabletheory.transient.current_response` in mpmath (current mp.dps).

    ``delayed`` (pulse): T - D formed by the caller from the SI times, default T - D. Where the
    eigen-series would need more than :data:`MAX_PRECISE_MODES` modes (a soma or a leaky end at
    very early times), the value is the float contour inversion of :mod:`cabletheory.laplace`
    with its error estimate as the bound.
    """
    X, X0, T = mp.mpf(X), mp.mpf(X0), mp.mpf(T)
    D, a = mp.mpf(D), mp.mpf(a) if a else mp.mpf(0)
    Td = T - D if delayed is None else mp.mpf(delayed)
    if T <= 0:
        return mp.mpf(0), 0.0

    def kern(d, t):
        if kind == "alpha":
            return point_source_alpha(d, t, a)
        v = point_source_step(d, t)
        return v - point_source_step(d, Td + (t - T)) if kind == "pulse" else v

    if infinite:
        return kern(X - X0, T), 0.0
    if math.isinf(L):
        return kern(X - X0, T) + kern(X + X0, T), 0.0
    Lm = mp.mpf(L)
    if kind == "alpha":  # the residue series, a few ms per point, before the images (mpmath.diff of erfc forms)
        done = _alpha_by_residues(X, X0, T, Lm, B, y, a, tol, _cache)
        if done is not None:
            return done
    # images for sealed/killed ends when few reflections suffice
    if y == 0 and (B == 0 or math.isinf(B)):
        sign = 1 if B == 0 else -1
        tf = float(T)
        K = 1
        factor = 2 if kind == "pulse" else 1
        while K <= 12 and factor * float(image_tail(np.float64(K), np.float64(tf), float(L))) > tol:
            K += 1
        if K <= 12:
            total = mp.mpf(0)
            for k in range(-K, K + 1):
                s = sign ** abs(k)
                total += s * (kern(X - X0 - 2 * k * Lm, T) + kern(X + X0 - 2 * k * Lm, T))
            return total, float(image_tail(np.float64(K), np.float64(tf), float(L)))
    if kind == "pulse":
        def bound(n, t):
            return eigen.tail_bound(n, t, float(L), kind="step")

        tf = np.array([float(Td) if Td > 0 else float(T)])
    else:
        bound = current_bound(Shape(kind, float(D), float(a)), float(L))
        tf = np.array([float(T)])
    n = 1
    while float(bound(n, tf)[0]) > tol:
        n *= 2
        if n > MAX_PRECISE_MODES:
            return _inverted(float(X), float(X0), float(T), float(Td), float(L), float(B), float(y), kind, float(a))
    alphas = _eigenvalues_kept(L, B, y, n, _cache)
    ym = mp.mpf(y)
    total = mp.mpf(0)
    f = (mp.mpf(1) if Td <= 0 else mp.mpf(0)) if kind == "pulse" else _shape_value(kind, T, D, a)
    g = _steady(X, X0, Lm, B, ym)
    for al in alphas:
        mu = 1 + al * al
        r = _residue(al, X, X0, Lm, ym)
        if kind == "step":
            total += r * mp.exp(-mu * T) / mu
        elif kind == "pulse":
            # before the end of the pulse a step; after it the difference of two steps (no steady state)
            total += r * (mp.exp(-mu * T) if Td <= 0 else mp.exp(-mu * T) - mp.exp(-mu * Td)) / mu
        else:
            total += r * (f / mu - _alpha_mode(mu, T, a))
    return f * g - total, float(bound(n, tf)[0])


def _eigenvalues_kept(L, B, y, n, cache):
    """The first n eigenvalues of a sealed-origin cable (with a soma y), kept in ``cache`` (a dict, or
    None) for the other points of a table."""
    key = (float(L), float(B), float(y), n)
    if cache is not None and key in cache:
        return cache[key]
    alphas = eigenvalues(L, B, n, "sealed", y)
    if cache is not None:
        cache[key] = alphas
    return alphas


def _residue(al, X, X0, L, y):
    """A mode's residue r_n(X, X0) = φ_n(X)φ_n(X0)/‖φ_n‖² in mpmath, φ_n = cos α_nX - yα_n sin α_nX
    (Rall 1969 [Rall1969]; the norm with the soma's share, as cabletheory.eigen.mode_norms)."""
    if al == 0:
        norm = L + y
    else:
        norm = L / 2 * (1 + (y * al) ** 2) + (1 - (y * al) ** 2) * mp.sin(2 * al * L) / (4 * al) \
            + y * mp.cos(al * L) ** 2
    return (mp.cos(al * X) - y * al * mp.sin(al * X)) * (mp.cos(al * X0) - y * al * mp.sin(al * X0)) / norm


_RESONANCE = mp.mpf(10) ** -6  # a mode this close to 1/a leaves the alpha current to the quasi-steady series
_ALPHA_MODES = 4096  # residue series longer than this leave the alpha current to the images or that series


def _green(s, X, X0, L, B, y):
    """The Laplace-domain voltage at X for a unit current at X0 (cabletheory.laplace.green) in mpmath."""
    q = mp.sqrt(1 + s)
    near, far = min(X, X0), max(X, X0)
    w_s, w_k = _weights(B)
    phi = mp.cosh(q * near) + y * q * mp.sinh(q * near)
    psi = w_s * mp.cosh(q * (L - far)) + w_k * mp.sinh(q * (L - far)) / q
    wronskian = y * q * q * (w_s * mp.cosh(q * L) + w_k * mp.sinh(q * L) / q) + w_s * q * mp.sinh(q * L) \
        + w_k * mp.cosh(q * L)
    return phi * psi / wronskian


def _alpha_by_residues(X, X0, T, L, B, y, a, tol, cache):
    r"""An alpha current on a finite cable from the residues of its transform (the float path's
    :func:`cabletheory.finite_cable._alpha_by_residues`, without taking modes out):

    .. math:: V = \frac ea\Big[e^{-cT}\big(T\hat G(-c) + \hat G'(-c)\big)
              + \sum_n\frac{r_n e^{-\mu_nT}}{(\mu_n - c)^2}\Big],\quad c = 1/a,

    :math:`\hat G'` by ``mpmath.diff``, cut by :func:`cabletheory.truncation.alpha_residue_tail`;
    (value, bound), or None where a mode lies within 1e-6 of c or more than 4,096 modes are needed
    (the caller's images or quasi-steady series take it).
    """
    tf = np.array([float(T)])
    n = 1
    while float(alpha_residue_tail(n, tf, float(L), float(a))[0]) > tol:
        n *= 2
        if n > _ALPHA_MODES:
            return None
    alphas = _eigenvalues_kept(L, B, y, n, cache)
    c = 1 / a
    if any(abs(1 + al * al - c) < _RESONANCE for al in alphas):
        return None
    pole_key = ("alpha pole", float(X), float(X0), float(L), float(B), float(y), float(a), mp.mp.dps)
    if cache is not None and pole_key in cache:
        value, slope = cache[pole_key]
    else:
        with mp.extradps(20):
            def transform(s):
                return mp.re(_green(s, X, X0, L, B, mp.mpf(y)))

            value, slope = transform(-c), mp.diff(transform, -c)
        if cache is not None:
            cache[pole_key] = (value, slope)
    ym = mp.mpf(y)
    with mp.extradps(20):
        total = mp.exp(-c * T) * (T * value + slope)
        for al in alphas:
            mu = 1 + al * al
            total += _residue(al, X, X0, L, ym) * mp.exp(-mu * T) / (mu - c) ** 2
        return +(mp.e / a * total), float(alpha_residue_tail(n, tf, float(L), float(a))[0])


def _inverted(X, X0, T, Td, L, B, y, kind, a):
    """The float contour inversion (cabletheory.laplace) of one value: (mpf value, bound)."""
    from . import laplace

    if kind == "alpha":
        v, e = laplace.current_inversion([X], X0, [T], L, B, y, shape="alpha", time_to_peak=a)
    else:
        v, e = laplace.current_inversion([X], X0, [T], L, B, y)
        if kind == "pulse":
            v2, e2 = laplace.current_inversion([X], X0, [Td], L, B, y)
            v, e = v - v2, e + e2
    return mp.mpf(float(v[0, 0])), float(e[0, 0])


def clamp_value(X, T, L, B, tol, infinite=False, source=0.0, _cache=None):
    """One value of :func:`cabletheory.transient.clamp_response` in mpmath (current mp.dps)."""
    X, T = mp.mpf(X), mp.mpf(T)
    if T <= 0:
        return mp.mpf(0), 0.0
    if infinite:
        return semi_infinite_clamp(X - mp.mpf(source), T), 0.0
    if math.isinf(L):
        return semi_infinite_clamp(X, T), 0.0
    Lm = mp.mpf(L)
    if B == 0 or math.isinf(B):
        sigma = 1 if B == 0 else -1
        K = 1
        while K <= 12 and float(clamp_image_tail(np.float64(K), np.float64(float(T)), float(L))) > tol:
            K += 1
        if K <= 12:
            total = mp.mpf(0)
            for k in range(K):
                total += (-sigma) ** k * (semi_infinite_clamp(X + 2 * k * Lm, T)
                                          + sigma * semi_infinite_clamp(2 * Lm - X + 2 * k * Lm, T))
            return total, float(clamp_image_tail(np.float64(K), np.float64(float(T)), float(L)))
    tf = np.array([float(T)])
    n = 1
    while float(eigen.tail_bound(n, tf, float(L), kind="clamp", origin="clamped")[0]) > tol:
        n *= 2
        if n > MAX_PRECISE_MODES:
            raise ConvergenceError(f"precise eigen-series needs more than {MAX_PRECISE_MODES} modes at T = {T}")
    key = ("clamp", float(L), float(B), n)
    if _cache is not None and key in _cache:
        alphas = _cache[key]
    else:
        alphas = eigenvalues(L, B, n, "clamped")
        if _cache is not None:
            _cache[key] = alphas
    w_s, w_k = _weights(B)
    steady = (w_s * mp.cosh(Lm - X) + w_k * mp.sinh(Lm - X)) / (w_s * mp.cosh(Lm) + w_k * mp.sinh(Lm))
    total = mp.mpf(0)
    for al in alphas:
        mu = 1 + al * al
        norm = Lm / 2 - mp.sin(2 * al * Lm) / (4 * al)
        total += al * mp.sin(al * X) / (mu * norm) * mp.exp(-mu * T)
    return steady - total, float(eigen.tail_bound(n, tf, float(L), kind="clamp", origin="clamped")[0])


def current_grid(X, X0, T, L, B, y, kind, D, a, tol, digits, infinite=False, delayed=None):
    """:func:`current_value` on the grid T × X at ``digits`` decimal digits; float arrays out.
    ``delayed``: T - D per T for a pulse, formed by the caller (default T - D)."""
    out = np.zeros((len(T), len(X)))
    bound = np.zeros_like(out)
    cache: dict = {}
    with mp.workdps(int(digits)):
        for i, t in enumerate(T):
            later = None if delayed is None else float(delayed[i])
            for j, x in enumerate(X):
                v, b = current_value(float(x), float(X0), float(t), float(L), float(B), float(y), kind, D, a, tol,
                                     infinite=infinite, _cache=cache, delayed=later)
                out[i, j] = float(v)
                bound[i, j] = b
    return out, bound, (f"mpmath at {int(digits)} digits (images or eigen-series per point; a contour inversion in "
                        "floats where the series would need too many modes)")


def clamp_grid(X, T, L, B, tol, digits, infinite=False, source=0.0):
    """:func:`clamp_value` on the grid T × X at ``digits`` decimal digits; float arrays out."""
    out = np.zeros((len(T), len(X)))
    bound = np.zeros_like(out)
    cache: dict = {}
    with mp.workdps(int(digits)):
        for i, t in enumerate(T):
            for j, x in enumerate(X):
                v, b = clamp_value(float(x), float(t), float(L), float(B), tol, infinite=infinite, source=source,
                                   _cache=cache)
                out[i, j] = float(v)
                bound[i, j] = b
    return out, bound, (f"mpmath at {int(digits)} digits (images or eigen-series per point; a contour inversion in "
                        "floats where the series would need too many modes)")
