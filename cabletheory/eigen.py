r"""Eigenvalues, mode shapes, residues and tail bounds of finite passive cables.

A finite cylinder of electrotonic length L (X = x/λ, T = t/τm) whose far end X = L has
Rall's end-conductance ratio B = G_end/G∞ (0 sealed, inf killed), and whose origin X = 0 is
either *sealed*, carries a *lumped soma* of conductance G_S with the same τm (ball and stick),
or is *clamped* to rest (voltage clamp at X = 0).  Modes vary as
:math:`\varphi_n(X)\,e^{-(1+\alpha_n^2)T}`, so the equalising time constants are

.. math:: \tau_n = \frac{\tau_m}{1 + \alpha_n^2}.

With :math:`y = G_S/G_\infty = 1/\rho_\infty` (``soma_ratio``; 0 without a soma) the eigenvalue
equations are written without poles (Rall 1969; Durand 1984):

.. math::
    F(\alpha) &= (B - y\alpha^2)\cos\alpha L - \alpha(1 + yB)\sin\alpha L = 0
        && \text{(sealed origin or soma)}\\
    D(\alpha) &= \cos\alpha L + B\,\frac{\sin\alpha L}{\alpha} = 0
        && \text{(clamped origin)}

(killed ends, B = inf, are handled by dividing through by B). The sealed cylinder gives
:math:`\alpha_n = n\pi/L`; the ball and stick with a sealed far end gives
:math:`\tan\alpha L = -\alpha/\rho_\infty = -\alpha\tanh L/\rho`.

Root n lies in its own branch, ``((n-1/2)π/L, (n+1/2)π/L)`` for F and ``(nπ/L, (n+1)π/L)``
for D, where the equation changes sign; every root is found by a bracketed method
(``scipy.optimize.brentq`` for the first roots, vectorised bisection beyond) and then verified.

Mode n contributes to the Green's function (voltage at X per unit current at X0, in units of
R∞ and per unit T) the residue

.. math:: r_n(X, X_0) = \frac{\varphi_n(X)\varphi_n(X_0)}{N_n},\quad
          \varphi_n = \cos\alpha_n X - y\alpha_n\sin\alpha_n X,\quad
          N_n = \int_0^L\varphi_n^2\,dX + y\,\varphi_n(0)^2,

and :math:`|r_n| \le 4/L` whenever :math:`\alpha_n \ge 1/L` (because
:math:`N_n \ge (1 + y^2\alpha_n^2)(L/2 - 1/(4\alpha_n))` and
:math:`\varphi_n^2 \le 1 + y^2\alpha_n^2`). That bound, and :math:`\alpha_n \ge` the lower end of
branch n, give the rigorous tail bounds of :func:`tail_bound`.

References
----------
Rall W (1969) Time constants and electrotonic length of membrane cylinders and neurons.
Biophys. J. 9:1483-1508.
Durand D (1984) The somatic shunt cable model for neurons. Biophys. J. 46:645-653 (recalled from
memory).
Jack JJB, Noble D & Tsien RW (1975) Electric Current Flow in Excitable Cells, ch. 3 and 7
(recalled from memory).
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import ConvergenceError, InputError
from .kernels import end_weights

__all__ = [
    "ORIGINS",
    "ball_and_stick_coefficients",
    "branch_lower_bounds",
    "clamp_mode_coefficients",
    "coefficient_electrotonic_length",
    "eigenvalue_function",
    "eigenvalues",
    "mode_norms",
    "mode_residues",
    "mode_shapes",
    "peeling_electrotonic_length",
    "soma_ratio",
    "tail_bound",
    "time_constants",
]

Array = NDArray[np.float64]

ORIGINS = ("sealed", "clamped")
_BRENTQ_ROOTS = 64  # roots found one by one with brentq; the rest by vectorised bisection
_EPS = np.finfo(float).eps


# --------------------------------------------------------------------------------------
# parameters
# --------------------------------------------------------------------------------------
def _check_length(electrotonic_length: float) -> float:
    L = float(electrotonic_length)
    if not (math.isfinite(L) and L > 0):
        raise InputError(f"electrotonic length must be finite and positive for eigenvalues, got {L!r}")
    return L


def soma_ratio(electrotonic_length: float, end_conductance_ratio: float = 0.0, *,
               conductance_ratio: float | None = None,
               semi_infinite_conductance_ratio: float | None = None) -> float:
    r"""Soma-to-cylinder ratio :math:`y = G_S/G_\infty` from Rall's ρ or from ρ∞.

    .. math:: \rho_\infty = G_\infty/G_S, \qquad
              \rho = \frac{G_D}{G_S}, \quad G_D = G_\infty\frac{B + \tanh L}{1 + B\tanh L},
              \qquad y = \frac{1}{\rho_\infty} = \frac{G_D/G_\infty}{\rho}

    Give at most one of the two ratios; with neither there is no soma (y = 0). ρ = inf also
    means no soma.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (ρ, "dendritic to soma conductance ratio").
    """
    if conductance_ratio is not None and semi_infinite_conductance_ratio is not None:
        raise InputError("give either conductance_ratio (ρ) or semi_infinite_conductance_ratio (ρ∞), not both")
    ratio = conductance_ratio if conductance_ratio is not None else semi_infinite_conductance_ratio
    if ratio is None:
        return 0.0
    if not ratio > 0:
        raise InputError(f"conductance ratio must be positive (inf: no soma), got {ratio!r}")
    if math.isinf(ratio):
        return 0.0
    if semi_infinite_conductance_ratio is not None:
        return 1.0 / ratio
    L = _check_length(electrotonic_length)
    w_s, w_k = end_weights(end_conductance_ratio)
    t = math.tanh(L)
    dendrite = (w_k + w_s * t) / (w_s + w_k * t)  # G_D / G∞
    return dendrite / ratio


# --------------------------------------------------------------------------------------
# eigenvalue equations
# --------------------------------------------------------------------------------------
def eigenvalue_function(alpha: ArrayLike, electrotonic_length: float, end_conductance_ratio: float = 0.0,
                        *, origin: str = "sealed", soma_ratio: float = 0.0) -> Array:
    r"""Pole-free eigenvalue function whose positive zeros are the :math:`\alpha_n`.

    .. math::
        F(\alpha) = (w_k - w_s y\alpha^2)\cos\alpha L - \alpha(w_s + y w_k)\sin\alpha L
        \quad\text{(sealed origin, soma ratio y)}

        D(\alpha) = w_s\cos\alpha L + w_k L\,\mathrm{sinc}(\alpha L)
        \quad\text{(clamped origin)}

    with :math:`B = w_k/w_s` and :math:`\max(w_s, w_k) = 1`, so B = inf (killed end) is exact.
    Neither has a pole for real α, unlike :math:`\alpha\tan\alpha L = B`.

    Parameters
    ----------
    alpha : α ≥ 0, dimensionless (spatial frequency in units of 1/λ)
    electrotonic_length : L
    end_conductance_ratio : B = G_end/G∞ at X = L
    origin : "sealed" (optionally with a soma) or "clamped"
    soma_ratio : y = G_S/G∞ (0: no soma)

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (sealed, killed, leaky, clamped and soma cases).
    """
    a = np.asarray(alpha, dtype=float)
    L = float(electrotonic_length)
    w_s, w_k = end_weights(end_conductance_ratio)
    if origin == "sealed":
        y = float(soma_ratio)
        return (w_k - w_s * y * a * a) * np.cos(a * L) - a * (w_s + y * w_k) * np.sin(a * L)
    if origin == "clamped":
        return w_s * np.cos(a * L) + w_k * L * np.sinc(a * L / np.pi)
    raise InputError(f"origin must be one of {ORIGINS}, got {origin!r}")


def branch_lower_bounds(count: int, electrotonic_length: float, end_conductance_ratio: float = 0.0, *,
                        origin: str = "sealed", soma_ratio: float = 0.0, start: int = 0) -> Array:
    r"""Lower ends of the branches holding roots ``start .. start+count-1``: :math:`\alpha_n \ge a_n`.

    Sealed origin: :math:`a_n = \max(0, (n - 1/2)\pi/L)`; clamped origin: :math:`a_n = n\pi/L`.
    """
    n = np.arange(start, start + count, dtype=float)
    L = float(electrotonic_length)
    if origin == "clamped":
        return n * np.pi / L
    return np.maximum(0.0, (n - 0.5) * np.pi / L)


def _closed_form(n: NDArray, L: float, w_s: float, w_k: float, origin: str, y: float) -> Array | None:
    """Exact roots where the equation reduces to sin or cos (no root finding needed)."""
    if origin == "sealed" and y == 0.0:
        if w_k == 0.0:  # sealed-sealed: sin αL = 0
            return n * np.pi / L
        if w_s == 0.0:  # sealed-killed: cos αL = 0
            return (n + 0.5) * np.pi / L
    if origin == "clamped":
        if w_k == 0.0:  # clamped-sealed: cos αL = 0
            return (n + 0.5) * np.pi / L
        if w_s == 0.0:  # clamped-killed: sin αL = 0, α > 0
            return (n + 1.0) * np.pi / L
    return None


def eigenvalues(electrotonic_length: float, end_conductance_ratio: float = 0.0, count: int = 10, *,
                origin: str = "sealed", conductance_ratio: float | None = None,
                semi_infinite_conductance_ratio: float | None = None, start: int = 0) -> Array:
    r"""The eigenvalues :math:`\alpha_n` (n = start .. start+count-1), ascending and verified.

    For a sealed origin without a leaky or killed end (B = 0), :math:`\alpha_0 = 0` (the
    :math:`\tau_0 = \tau_m` mode) is included. With a soma, give Rall's ``conductance_ratio``
    ρ = G_D/G_S or ``semi_infinite_conductance_ratio`` ρ∞ = G∞/G_S.

    Parameters
    ----------
    electrotonic_length : L (finite)
    end_conductance_ratio : B = G_end/G∞ at X = L (0 sealed, inf killed)
    count : number of roots
    origin : "sealed" (input or soma at X = 0) or "clamped" (voltage clamp at X = 0)
    conductance_ratio, semi_infinite_conductance_ratio : soma, see :func:`soma_ratio`
    start : index of the first root returned

    Returns
    -------
    α_n, dimensionless.

    Raises
    ------
    ConvergenceError
        if a root fails verification (|F| not at rounding level or outside its branch).

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; sealed cylinder :math:`\alpha_n = n\pi/L`, killed end
    :math:`(n+1/2)\pi/L`; ball and stick :math:`\tan\alpha L = -\alpha\tanh L/\rho`.
    """
    L = _check_length(electrotonic_length)
    if origin not in ORIGINS:
        raise InputError(f"origin must be one of {ORIGINS}, got {origin!r}")
    if count < 0 or start < 0:
        raise InputError("count and start must be >= 0")
    y = soma_ratio(L, end_conductance_ratio, conductance_ratio=conductance_ratio,
                   semi_infinite_conductance_ratio=semi_infinite_conductance_ratio)
    if origin == "clamped" and y != 0.0:
        raise InputError("a clamped origin has no soma (the clamp fixes the soma voltage)")
    return _eigenvalues(L, float(end_conductance_ratio), count, origin, y, start)


def _eigenvalues(L: float, B: float, count: int, origin: str, y: float, start: int = 0) -> Array:
    w_s, w_k = end_weights(B)
    n = np.arange(start, start + count, dtype=float)
    exact = _closed_form(n, L, w_s, w_k, origin, y)
    if exact is not None:
        return exact

    def f(a: ArrayLike) -> Array:
        return eigenvalue_function(a, L, B, origin=origin, soma_ratio=y)

    if origin == "sealed":
        lo = np.maximum(0.0, (n - 0.5) * np.pi / L)
        hi = (n + 0.5) * np.pi / L
    else:
        lo = n * np.pi / L
        hi = (n + 1.0) * np.pi / L
    roots = np.empty(count)
    zero_mode = (origin == "sealed") & (w_k == 0.0) & (n == 0)  # α0 = 0 when B = 0
    roots[zero_mode] = 0.0
    todo = np.flatnonzero(~zero_mode)
    first = todo[: max(0, _BRENTQ_ROOTS - start)]
    rest = todo[len(first):]
    if first.size:
        from scipy.optimize import brentq

        for i in first:
            roots[i] = brentq(lambda a: float(f(a)), lo[i], hi[i], xtol=1e-300, rtol=4 * _EPS, maxiter=400)
    if rest.size:
        roots[rest] = _bisect(f, lo[rest], hi[rest])
    _verify(f, roots[todo], lo[todo], hi[todo], L, w_s, w_k, origin, y)
    return roots


def _bisect(f: Callable[[Array], Array], lo: Array, hi: Array) -> Array:
    """Vectorised bisection on brackets with a sign change, to the last bit."""
    lo = lo.copy()
    hi = hi.copy()
    f_lo = np.sign(f(lo))
    for _ in range(1100):  # bound only; ~60 halvings reach the last bit
        mid = 0.5 * (lo + hi)
        active = (mid > lo) & (mid < hi)
        if not active.any():
            break
        f_mid = np.sign(f(mid))
        left = (f_mid == f_lo) & active
        lo = np.where(left, mid, lo)
        hi = np.where(active & ~left, mid, hi)
        exact = (f_mid == 0) & active
        lo = np.where(exact, mid, lo)
        hi = np.where(exact, mid, hi)
    return 0.5 * (lo + hi)


def _verify(f: Callable[[Array], Array], roots: Array, lo: Array, hi: Array, L: float, w_s: float,
            w_k: float, origin: str, y: float) -> None:
    """Every root lies strictly inside its branch and F vanishes there to rounding level."""
    if roots.size == 0:
        return
    inside = (roots > lo) & (roots < hi)
    if origin == "sealed":
        scale = np.abs(w_k - w_s * y * roots**2) + roots * (w_s + y * w_k)
        slope = scale * (1.0 + roots * L) + 2 * w_s * y * roots**2
    else:
        scale = w_s + w_k * L * np.ones_like(roots)
        slope = scale * (1.0 + roots * L)
    residual = np.abs(f(roots))
    good = inside & (residual <= 64 * _EPS * slope + 1e-300)
    if not good.all():
        i = int(np.flatnonzero(~good)[0])
        raise ConvergenceError(
            f"eigenvalue {roots[i]!r} (bracket {lo[i]!r}..{hi[i]!r}, L = {L!r}) failed verification: "
            f"|F| = {residual[i]:.3g} > {64 * _EPS * slope[i]:.3g}")


def time_constants(time_constant: float, electrotonic_length: float, end_conductance_ratio: float = 0.0,
                   count: int = 5, *, origin: str = "sealed", conductance_ratio: float | None = None,
                   semi_infinite_conductance_ratio: float | None = None) -> Array:
    r"""Equalising time constants :math:`\tau_n = \tau_m/(1 + \alpha_n^2)`, slowest first, in s.

    Parameters
    ----------
    time_constant : τm, s
    electrotonic_length, end_conductance_ratio, count, origin, conductance_ratio,
    semi_infinite_conductance_ratio : as for :func:`eigenvalues`

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483: sealed cylinder :math:`\tau_n = \tau_0/(1 + (n\pi/L)^2)`.
    """
    alpha = eigenvalues(electrotonic_length, end_conductance_ratio, count, origin=origin,
                        conductance_ratio=conductance_ratio,
                        semi_infinite_conductance_ratio=semi_infinite_conductance_ratio)
    return float(time_constant) / (1.0 + alpha**2)


def peeling_electrotonic_length(tau0_over_tau_n: ArrayLike, mode: int = 1) -> Array:
    r"""Electrotonic length of a sealed cylinder from peeled time constants ("peeling").

    .. math:: L = \frac{n\pi}{\sqrt{\tau_0/\tau_n - 1}}

    Parameters
    ----------
    tau0_over_tau_n : ratio of the slowest (τ0 = τm) to the n-th time constant, > 1
    mode : n (1 for the first equalising time constant)

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (basis for estimating electrotonic length).
    """
    r = np.asarray(tau0_over_tau_n, dtype=float)
    if np.any(~(r > 1)):
        raise InputError("tau0/tau_n must exceed 1 (the equalising time constants are shorter than τ0)")
    if mode < 1:
        raise InputError(f"mode must be >= 1, got {mode!r}")
    return mode * np.pi / np.sqrt(r - 1.0)


def coefficient_electrotonic_length(c1_over_c0: ArrayLike) -> Array:
    r"""Electrotonic length of a sealed cylinder from the step-response coefficient ratio.

    For a current step at X = 0, :math:`C_1/C_0 = 2/(1 + (\pi/L)^2)`, so

    .. math:: L = \frac{\pi}{\sqrt{2C_0/C_1 - 1}}

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (coefficients of the sealed-cylinder series).
    """
    r = np.asarray(c1_over_c0, dtype=float)
    if np.any(~((r > 0) & (r < 2))):
        raise InputError("C1/C0 must lie in (0, 2) for a sealed cylinder")
    return np.pi / np.sqrt(2.0 / r - 1.0)


# --------------------------------------------------------------------------------------
# mode shapes, norms, residues
# --------------------------------------------------------------------------------------
def mode_shapes(alpha: ArrayLike, position: ArrayLike, *, origin: str = "sealed",
                soma_ratio: float = 0.0) -> Array:
    r"""Mode shapes :math:`\varphi_n(X)`, shape ``alpha.shape + position.shape``.

    Sealed origin / soma: :math:`\varphi = \cos\alpha X - y\alpha\sin\alpha X` (so φ(0) = 1);
    clamped origin: :math:`\chi = \sin\alpha X`.
    """
    a = np.asarray(alpha, dtype=float)[(...,) + (None,) * np.ndim(position)]
    x = np.asarray(position, dtype=float)
    if origin == "clamped":
        return np.sin(a * x)
    if soma_ratio == 0:
        return np.cos(a * x)
    return np.cos(a * x) - soma_ratio * a * np.sin(a * x)


def mode_norms(alpha: ArrayLike, electrotonic_length: float, *, origin: str = "sealed",
               soma_ratio: float = 0.0) -> Array:
    r"""Norms :math:`N_n` of the modes in the inner product that makes them orthogonal.

    .. math::
        N_n = \frac{L}{2}(1 + y^2\alpha^2) + (1 - y^2\alpha^2)\frac{\sin 2\alpha L}{4\alpha}
              + y\cos^2\alpha L
        \qquad\text{(sealed origin, soma ratio y)}

        N_n = \frac{L}{2} - \frac{\sin 2\alpha L}{4\alpha}\qquad\text{(clamped origin)}

    The inner product is :math:`\langle u, v\rangle = \int_0^L uv\,dX + y\,u(0)v(0)`: the soma
    holds the charge of a length y of cylinder (same τm). At α = 0: :math:`N_0 = L + y`.
    """
    a = np.asarray(alpha, dtype=float)
    L = float(electrotonic_length)
    half_sinc = 0.5 * L * np.sinc(2 * a * L / np.pi)  # sin(2αL)/(4α), exact at α = 0
    if origin == "clamped":
        return 0.5 * L - half_sinc
    y = float(soma_ratio)
    return 0.5 * L * (1 + (y * a) ** 2) + (1 - (y * a) ** 2) * half_sinc + y * np.cos(a * L) ** 2


def mode_residues(alpha: ArrayLike, position: ArrayLike, source: ArrayLike, electrotonic_length: float,
                  *, soma_ratio: float = 0.0) -> Array:
    r"""Residues :math:`r_n(X, X_0) = \varphi_n(X)\varphi_n(X_0)/N_n` of the Green's function.

    The voltage at X for unit charge injected at X0 at T = 0 is, in units of
    :math:`R_\infty Q/\tau_m`, :math:`\sum_n r_n(X, X_0)\,e^{-(1+\alpha_n^2)T}`; a current step
    I at X0 gives :math:`V/(IR_\infty) = g(X, X_0) - \sum_n r_n e^{-(1+\alpha_n^2)T}/(1+\alpha_n^2)`.
    ``position`` and ``source`` broadcast; the result has shape ``alpha.shape + broadcast``.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (sealed: :math:`r_0 = 1/L`, :math:`r_n = (2/L)
    \cos(n\pi X/L)\cos(n\pi X_0/L)`); Bluman & Tuckwell (1987) J. Neurosci. Methods 20:151
    (Green's function with a lumped soma).
    """
    x, x0 = np.asarray(position, dtype=float), np.asarray(source, dtype=float)
    a = np.asarray(alpha, dtype=float)
    if x0.ndim == 0:  # one source: its shapes once per mode, not once per position
        x = np.asarray(x)
        at_source = mode_shapes(a, x0, soma_ratio=soma_ratio)[(...,) + (None,) * x.ndim]
    else:
        x, x0 = np.broadcast_arrays(x, x0)
        at_source = mode_shapes(a, x0, soma_ratio=soma_ratio)
    norms = mode_norms(a, electrotonic_length, soma_ratio=soma_ratio)[(...,) + (None,) * x.ndim]
    return (mode_shapes(a, x, soma_ratio=soma_ratio) * at_source) / norms


def clamp_mode_coefficients(alpha: ArrayLike, position: ArrayLike, electrotonic_length: float) -> Array:
    r"""Coefficients of the voltage-clamp step response at X (clamp at X = 0).

    .. math:: \frac{V(X,T)}{V_0} = \frac{\cosh(L-X) + B\sinh(L-X)}{\cosh L + B\sinh L}
              - \sum_n \frac{\alpha_n\sin\alpha_n X}{(1+\alpha_n^2)\,N_n}e^{-(1+\alpha_n^2)T}

    Returns the factors :math:`\alpha_n\sin(\alpha_n X)/((1+\alpha_n^2)N_n)`, shape
    ``alpha.shape + position.shape``.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (voltage-clamp time constants); Jack, Noble & Tsien (1975)
    ch. 3 (recalled from memory).
    """
    a = np.asarray(alpha, dtype=float)
    norms = mode_norms(a, electrotonic_length, origin="clamped")
    factor = a / ((1 + a * a) * norms)
    return factor[(...,) + (None,) * np.ndim(position)] * mode_shapes(a, position, origin="clamped")


def ball_and_stick_coefficients(electrotonic_length: float, conductance_ratio: float, count: int = 5,
                                end_conductance_ratio: float = 0.0) -> tuple[Array, Array]:
    r"""Eigenvalues and step-response coefficients at the soma of a ball and stick.

    A current step into the soma gives

    .. math:: \frac{V(T)}{V(\infty)} = 1 - \sum_{n\ge0} C_n e^{-(1+\alpha_n^2)T},\qquad
              C_n = \frac{r_n(0,0)}{(1+\alpha_n^2)\,g(0,0)}

    which for a sealed far end equals :math:`C_0 = (1+\rho)/(1+\rho L\coth L)` and
    :math:`C_n = 2(1+\rho)/[(1+\alpha_n^2)(1 + \rho L\coth L\sec^2\alpha_n L)]`.

    Parameters
    ----------
    electrotonic_length : L of the cylinder
    conductance_ratio : ρ = G_D/G_S (inf: no soma, the sealed cylinder)
    count : number of modes (n = 0 .. count-1)
    end_conductance_ratio : B at the far end (0 sealed)

    Returns
    -------
    (α_n, C_n), both dimensionless.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Durand D (1984) Biophys. J. 46:645 (recalled from memory).
    """
    L = _check_length(electrotonic_length)
    y = soma_ratio(L, end_conductance_ratio, conductance_ratio=conductance_ratio)
    alpha = _eigenvalues(L, float(end_conductance_ratio), count, "sealed", y)
    residue = mode_residues(alpha, 0.0, 0.0, L, soma_ratio=y)
    w_s, w_k = end_weights(end_conductance_ratio)
    t = math.tanh(L)
    steady = (w_s + w_k * t) / (y * (w_s + w_k * t) + (w_k + w_s * t))  # g(0,0) = 1/(y + G_D/G∞)
    return alpha, residue / ((1 + alpha**2) * steady)


# --------------------------------------------------------------------------------------
# truncation bounds
# --------------------------------------------------------------------------------------
def tail_bound(first_excluded: int | ArrayLike, normalised_time: ArrayLike, electrotonic_length: float, *,
               kind: str = "step", origin: str = "sealed", rate: float = 0.0) -> Array:
    r"""Rigorous bound on the modes ``n >= first_excluded`` of a series, per time T (an array of
    counts broadcasts against the times: :func:`cabletheory.truncation.modes_needed` tries several
    counts in one call).

    With :math:`a_n` the branch lower bounds (:math:`\alpha_n \ge a_n \ge 1/L` for n ≥ 1), the
    residue bound :math:`|r_n| \le 4/L`, and the integral test for decreasing terms on a lattice
    of spacing π/L,

    .. math:: \sum_{n\ge N} c(\alpha_n)e^{-(1+\alpha_n^2)T}
              \le c(a_N)e^{-(1+a_N^2)T} + \frac{L}{\pi}\int_{a_N}^\infty c(\alpha)e^{-(1+\alpha^2)T}d\alpha

    ``kind``:

    * ``"impulse"``: :math:`c = 4/L`; integral :math:`\le (4/L)e^{-T}\sqrt\pi\,\mathrm{erfc}(a\sqrt T)/(2\sqrt T)`;
    * ``"step"`` (steady state subtracted): :math:`c = 4/(L(1+\alpha^2))`; the integral is bounded
      by the smaller of :math:`e^{-T}\sqrt\pi\,\mathrm{erfc}(a\sqrt T)/(2\sqrt T(1+a^2))` and
      :math:`\pi/2 - \arctan a` (times 4/L), so it stays finite at T = 0;
    * ``"clamp"``: :math:`c = 4\alpha/(L(1+\alpha^2)) \le (4/L)\min(1/2, 1/\alpha)` (clamped origin,
      :math:`N_n \ge L/4`), a decreasing majorant; it diverges at T = 0 (use images there);
    * ``"smooth"`` (input with bounded derivative after subtracting the quasi-steady state):
      :math:`c = (4/L)\,\mathrm{rate}/(1+\alpha^2)^2`, where ``rate`` bounds |dI/dT| in units of
      the amplitude; integral :math:`\le (4/L)\,\mathrm{rate}/(3a^3)`.
    """
    T = np.asarray(normalised_time, dtype=float)
    L = float(electrotonic_length)
    if np.ndim(first_excluded) == 0:
        N = int(first_excluded)  # type: ignore[arg-type]
        if N < 1:
            raise InputError("tail bounds need first_excluded >= 1")
        a: float | Array = float(branch_lower_bounds(1, L, origin=origin, start=N)[0])
    else:  # several counts at once (a column against a row of times, say): the same lower ends
        counts = np.asarray(first_excluded, dtype=float)
        if np.any(counts < 1):
            raise InputError("tail bounds need first_excluded >= 1")
        a = counts * np.pi / L if origin == "clamped" else np.maximum(0.0, (counts - 0.5) * np.pi / L)
    k = 4.0 / L
    lattice = L / np.pi
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        decay = np.exp(-(1 + a * a) * T)
        if kind == "impulse":
            from scipy.special import erfc

            integral = np.where(T > 0, np.exp(-T) * np.sqrt(np.pi) * erfc(a * np.sqrt(T)) / (2 * np.sqrt(T)),
                                np.inf)
            out = k * (decay + lattice * integral)
        elif kind == "step":
            from scipy.special import erfc

            gaussian = np.where(T > 0, np.exp(-T) * np.sqrt(np.pi) * erfc(a * np.sqrt(T))
                                / (2 * np.sqrt(T) * (1 + a * a)), np.inf)
            integral = np.minimum(gaussian, np.pi / 2 - np.arctan(a))
            out = k * (decay / (1 + a * a) + lattice * integral)
        elif kind == "clamp":
            # α/(1+α²) ≤ min(1/2, 1/α), which decreases; ∫ e^{-α²T}/α ≤ e^{-a²T}/(2Ta²) for a ≥ 1
            m = np.maximum(a, 1.0)
            integral = np.where(T > 0, np.exp(-T) * (np.maximum(0.0, 1.0 - a) / 2
                                                     + np.exp(-m * m * T) / (2 * T * m * m)), np.inf)
            out = k * (np.minimum(0.5, 1.0 / a) * decay + lattice * integral)
        elif kind == "smooth":
            out = k * rate * (1.0 / (1 + a * a) ** 2 + lattice / (3 * a**3)) * np.ones_like(T)
        else:
            raise InputError(f"unknown tail kind {kind!r}")
    return out
