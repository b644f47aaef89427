r"""Time courses of passive cables: current steps, pulses and alpha currents, voltage-clamp steps.

Everything inside is dimensionless: X = x/λ, T = t/τm, L = ℓ/λ, and voltages in units of
:math:`I R_\infty` (current input; I the amplitude, or the peak of an alpha current) or of the
clamp step :math:`V_0`. :func:`charge` converts SI in and out.

Two exact representations are combined, chosen per time point so that every returned value
has a truncation error below the requested tolerance, and the bound is reported:

* **images** (small T): sums of infinite-cable solutions (Hodgkin & Rushton 1946) reflected at
  sealed (+) or killed (-) ends; the erfc products are evaluated with the scaled complementary
  error function so that they stay finite for any X and T. Tail bound:
  :math:`4e^{-(KL)^2/T}[\sqrt{T/\pi} + T/(4L)]` after K reflections per side.
* **eigen-series** (large T): :math:`\sum_n r_n(X,X_0)\,h_n(T)` over the modes of
  :mod:`cabletheory.eigen`, with the steady state subtracted so that terms fall like
  :math:`e^{-(1+\alpha_n^2)T}/(1+\alpha_n^2)`; tail bounds from :func:`cabletheory.eigen.tail_bound`.
* a **leaky end** (0 < B < ∞) at small T is bracketed: for a non-negative input the voltage
  lies between the killed-end and sealed-end image sums (comparison principle), so their
  mean is used when half their difference is below the tolerance; otherwise the eigen-series.
* semi-infinite and infinite cables use the closed forms directly.

The tolerance is relative to the reference voltage of the stimulus: the final voltage at
the stimulus site for a current step of the same amplitude (peak for an alpha current), or
the clamp step. Floating-point rounding is not part of the truncation bound; the reported
``error_bound`` adds an allowance of :data:`ROUNDING_ALLOWANCE` times the reference voltage
(measured against mpmath at 30 digits in the tests).

Every result assumes a passive, linear membrane with uniform Rm, Ri and Cm.

References
----------
Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444 (infinite cable, erfc solution).
Rall W (1969) Biophys. J. 9:1483 (eigen-series, equalising time constants, voltage clamp).
Jack JJB, Noble D & Tsien RW (1975) Electric Current Flow in Excitable Cells, ch. 3 (images,
recalled from memory).
Rall W (1967) J. Neurophysiol. 30:1138 (alpha-function synaptic input, recalled from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from . import eigen
from .cable import Cylinder, UniformMembrane, voltage_ratio
from .errors import ConvergenceError, InputError

__all__ = [
    "ROUNDING_ALLOWANCE",
    "AlphaCurrent",
    "BallAndStick",
    "CurrentPulse",
    "CurrentStep",
    "InfiniteCable",
    "Response",
    "VoltageStep",
    "charge",
    "clamp_response",
    "current_response",
    "hodgkin_rushton",
    "point_source_alpha",
    "point_source_step",
    "semi_infinite_clamp",
    "steady_green",
]

Array = NDArray[np.float64]

ROUNDING_ALLOWANCE = 1e-12  # relative to the reference voltage; measured against mpmath (tests/test_precise.py)
MAX_MODES = 200_000  # eigen-series longer than this are refused (ConvergenceError)
_IMAGE_COST = 25.0  # cost of one image term relative to one eigen term (erfcx vs multiply-add)
_CHUNK = 1 << 22  # elements per temporary array in the series sums


# --------------------------------------------------------------------------------------
# stimuli
# --------------------------------------------------------------------------------------
def _finite(value: float, name: str, *, positive: bool = False, allow_zero: bool = True) -> float:
    v = float(value)
    if not math.isfinite(v):
        raise InputError(f"{name} must be finite, got {value!r}")
    if positive and not (v > 0 or (allow_zero and v == 0)):
        raise InputError(f"{name} must be {'non-negative' if allow_zero else 'positive'}, got {value!r}")
    return v


@dataclass(frozen=True, slots=True)
class CurrentStep:
    """A current step of ``amplitude`` (A) switched on at t = 0 at ``position`` (m from the origin)."""

    amplitude: float
    position: float = 0.0

    def __post_init__(self) -> None:
        _finite(self.amplitude, "current amplitude")
        _finite(self.position, "stimulus position")


@dataclass(frozen=True, slots=True)
class CurrentPulse:
    """A rectangular current pulse: ``amplitude`` (A) from t = 0 to ``duration`` (s), at ``position`` (m)."""

    amplitude: float
    duration: float
    position: float = 0.0

    def __post_init__(self) -> None:
        _finite(self.amplitude, "current amplitude")
        _finite(self.duration, "pulse duration", positive=True, allow_zero=False)
        _finite(self.position, "stimulus position")

    @property
    def charge(self) -> float:
        """Injected charge, C."""
        return self.amplitude * self.duration


@dataclass(frozen=True, slots=True)
class AlphaCurrent:
    r"""An alpha-function current :math:`I(t) = I_{peak}\,(t/t_p)\,e^{1 - t/t_p}` at ``position`` (m).

    ``peak`` in A is reached at ``time_to_peak`` :math:`t_p` (s); the injected charge is
    :math:`e\,I_{peak}t_p` (:attr:`charge`).
    """

    peak: float
    time_to_peak: float
    position: float = 0.0

    def __post_init__(self) -> None:
        _finite(self.peak, "peak current")
        _finite(self.time_to_peak, "time to peak", positive=True, allow_zero=False)
        _finite(self.position, "stimulus position")

    @property
    def charge(self) -> float:
        """Injected charge :math:`e I_{peak} t_p`, C."""
        return math.e * self.peak * self.time_to_peak


@dataclass(frozen=True, slots=True)
class VoltageStep:
    """A voltage-clamp step of ``amplitude`` (V, from rest) at t = 0.

    On a finite or semi-infinite cylinder (and a ball and stick, whose clamped soma then plays
    no role) the clamp is at the origin, ``position = 0``; on an :class:`InfiniteCable` it may
    be anywhere.
    """

    amplitude: float
    position: float = 0.0

    def __post_init__(self) -> None:
        _finite(self.amplitude, "clamp amplitude")
        _finite(self.position, "clamp position")


Stimulus = CurrentStep | CurrentPulse | AlphaCurrent | VoltageStep


# --------------------------------------------------------------------------------------
# models besides cable.Cylinder
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class BallAndStick:
    r"""A lumped spherical soma (diameter ``soma_diameter``, m) at the origin of a finite cylinder.

    The soma has the cylinder's Rm and Cm (same τm): :math:`G_S = \pi d_S^2/R_m`. Rall's
    conductance ratio is :math:`\rho = G_D/G_S` with :math:`G_D` the cylinder's input
    conductance; :math:`\rho_\infty = G_\infty/G_S`.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Durand D (1984) Biophys. J. 46:645 (recalled from memory).
    """

    cylinder: Cylinder
    soma_diameter: float

    def __post_init__(self) -> None:
        if not (math.isfinite(self.soma_diameter) and self.soma_diameter > 0):
            raise InputError(f"soma diameter must be finite and positive, got {self.soma_diameter!r}")
        if not math.isfinite(self.cylinder.length):
            raise InputError("a ball and stick needs a finite cylinder length")

    @classmethod
    def with_conductance_ratio(cls, cylinder: Cylinder, conductance_ratio: float) -> BallAndStick:
        """The ball and stick whose soma gives Rall's ρ = G_D/G_S (soma diameter solved for)."""
        if not (math.isfinite(conductance_ratio) and conductance_ratio > 0):
            raise InputError(f"conductance ratio ρ must be finite and positive, got {conductance_ratio!r}")
        from .cable import input_conductance

        g_d = float(input_conductance(1.0 / cylinder.semi_infinite_input_resistance, cylinder.electrotonic_length,
                                      cylinder.end_conductance_ratio))
        g_s = g_d / conductance_ratio
        return cls(cylinder, math.sqrt(g_s * cylinder.membrane_resistivity / math.pi))

    @property
    def soma_conductance(self) -> float:
        """G_S = π d_S² / Rm, S."""
        return math.pi * self.soma_diameter**2 / self.cylinder.membrane_resistivity

    @property
    def soma_ratio(self) -> float:
        """y = G_S / G∞ = 1/ρ∞ (dimensionless)."""
        return self.soma_conductance * self.cylinder.semi_infinite_input_resistance

    @property
    def semi_infinite_conductance_ratio(self) -> float:
        """ρ∞ = G∞ / G_S."""
        return 1.0 / self.soma_ratio

    @property
    def conductance_ratio(self) -> float:
        """Rall's ρ = G_D / G_S."""
        c = self.cylinder
        return float(steady_green(0.0, 0.0, c.electrotonic_length, c.end_conductance_ratio) ** -1
                     / self.soma_ratio)


@dataclass(frozen=True, slots=True)
class InfiniteCable(UniformMembrane):
    """A doubly infinite uniform cylinder; positions are distances along it (m, any sign)."""

    membrane_resistivity: float  # Rm, Ω·m²
    axial_resistivity: float  # Ri, Ω·m
    membrane_capacitance: float  # Cm, F/m²
    diameter: float  # d, m

    def __post_init__(self) -> None:
        try:
            self._check_membrane()
        except ValueError as exc:
            raise InputError(str(exc)) from None

    @classmethod
    def like(cls, cylinder: Cylinder) -> InfiniteCable:
        """The infinite cable with the membrane, cytoplasm and diameter of ``cylinder``."""
        return cls(cylinder.membrane_resistivity, cylinder.axial_resistivity, cylinder.membrane_capacitance,
                   cylinder.diameter)


Model = Cylinder | BallAndStick | InfiniteCable


# --------------------------------------------------------------------------------------
# result
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Response:
    """Voltage (deviation from rest) on a grid of times and positions, all SI.

    Attributes
    ----------
    times : s, shape (nT,)
    positions : m, shape (nX,)
    voltage : V, shape (nT, nX), ``voltage[i, j]`` at ``times[i]``, ``positions[j]``
    error_bound : V, bound on the truncation error of every value plus the rounding allowance
    time_constants : s, equalising time constants τ_n of the modes, slowest first (empty for
        semi-infinite and infinite cables)
    coefficients : shape (len(time_constants), nX); C_n of the *step* response at each
        position, ``V/V(∞) = 1 - Σ C_n exp(-t/τ_n)`` (current step, or clamp step), whatever the
        stimulus shape; nan where the final voltage is 0
    method : how the values were computed (images / eigen-series, terms, time ranges)
    steady_state : V, final voltage at each position for a step stimulus; None for a pulse or
        alpha current (whose final voltage is 0)
    reference_voltage : V, the scale of the tolerance (see module docstring)
    tolerance : requested truncation error relative to ``reference_voltage``
    length_constant, membrane_time_constant : λ (m) and τm (s) used for X and T
    """

    times: Array
    positions: Array
    voltage: Array
    error_bound: float
    time_constants: Array
    coefficients: Array
    method: str
    steady_state: Array | None
    reference_voltage: float
    tolerance: float
    length_constant: float
    membrane_time_constant: float
    precision: int | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)


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
    (z < 0), finite for every d ≥ 0 and T. Final value :math:`e^{-d}/2`; 0 for T ≤ 0.

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
        za = np.abs(z)
        value = np.where(neg, 2.0 * e_d - big_e * (erfcx(za) + erfcx(w)), big_e * (erfcx(za) - erfcx(w)))
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


_CIRCLE = 32  # trapezoid nodes for the Cauchy derivative in point_source_alpha


def point_source_alpha(distance: ArrayLike, normalised_time: ArrayLike, time_to_peak: float) -> Array:
    r"""Infinite cable, alpha current :math:`I(T) = I_{peak}(T/a)e^{1-T/a}` at one point: :math:`V/(I_{peak}R_\infty)`.

    The convolution of the point-source impulse response with the alpha function in closed form:
    with :math:`b = 1 - 1/a`, :math:`u = d/(2\sqrt T)` and :math:`r = \sqrt b`,

    .. math:: \frac{V}{I_{peak}R_\infty} = \frac{e}{2a}\,\frac{\partial\Psi}{\partial b},\qquad
              \Psi(b) = e^{-T-u^2}\,\frac{\mathrm{erfcx}(u - r\sqrt T) - \mathrm{erfcx}(u + r\sqrt T)}{2r}

    which is the inverse Laplace transform of
    :math:`(e/a)\,e^{-d\sqrt{1+p}}/(2\sqrt{1+p}\,(p + 1/a)^2)`. Ψ is an entire function of b (even in
    r), so its derivative is taken exactly by the trapezoid rule on a circle around b (Cauchy's
    formula; 32 nodes give rounding-level accuracy), which also covers a = 1 (b = 0) and b < 0
    (complex r, Faddeeva function :func:`scipy.special.wofz`).

    Parameters
    ----------
    distance : d = |X - X0|
    normalised_time : T = t/τm
    time_to_peak : a = t_peak/τm > 0

    References
    ----------
    Rall W (1967) J. Neurophysiol. 30:1138 (alpha-function input, recalled from memory);
    Abramowitz & Stegun (1964) 29.3.88 (inverse Laplace transform of
    :math:`e^{-k\sqrt p}/(\sqrt p(p - b))`, recalled from memory).
    """
    from scipy.special import wofz

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
    theta = 2 * np.pi * (np.arange(_CIRCLE) + 0.5) / _CIRCLE
    node = np.exp(1j * theta)[:, None]
    result = np.empty(d.size)
    step = max(1, _CHUNK // (4 * _CIRCLE))
    for s in range(0, d.size, step):
        dd = d[s:s + step][None, :]
        tt = T[s:s + step][None, :]
        # circle radius: keep |b| T of order 1 on the circle and away from b = 0
        radius = np.where(abs(b0) * tt < 0.5, 1.0 / tt, np.minimum(abs(b0) / 2, 1.0 / tt))
        b = b0 + radius * node
        r = np.sqrt(b)
        root = np.sqrt(tt)
        u = dd / (2 * root)
        scale = np.exp(-(tt + u * u))
        with np.errstate(over="ignore", invalid="ignore"):
            z1 = u - r * root
            z2 = u + r * root
            first = np.where(z1.real >= 0, scale * wofz(1j * z1),
                             2.0 * np.exp((b - 1.0) * tt - dd * r) - scale * wofz(-1j * z1))
            second = scale * wofz(1j * z2)  # Re z2 ≥ 0 always
            psi = (first - second) / (2 * r)
        derivative = np.mean(psi * np.conj(node), axis=0) / radius[0]
        result[s:s + step] = (math.e / (2 * a)) * derivative.real
    out[positive] = result
    return out


# --------------------------------------------------------------------------------------
# steady states
# --------------------------------------------------------------------------------------
def _weights(end_conductance_ratio: float) -> tuple[float, float]:
    b = float(end_conductance_ratio)
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
    w_s, w_k = _weights(end_conductance_ratio)
    # e = exp(-2u) and 1 - e = -expm1(-2u): the latter keeps short cables (L -> 0) accurate
    e_near, d_near = np.exp(-2 * near), -np.expm1(-2 * near)
    rest = np.inf if math.isinf(L) else L - far
    e_rest, d_rest = np.exp(-2 * np.asarray(rest)), -np.expm1(-2 * np.asarray(rest))
    e_l, d_l = math.exp(-2 * L), -math.expm1(-2 * L)
    phi = 0.5 * ((1 + e_near) + y * d_near)
    psi = 0.5 * (w_s * (1 + e_rest) + w_k * d_rest)
    wronskian = 0.5 * (y * (w_s * (1 + e_l) + w_k * d_l) + (w_s * d_l + w_k * (1 + e_l)))
    return np.exp(near - far) * phi * psi / wronskian


def _clamp_steady(position: Array, L: float, B: float) -> Array:
    """V(X)/V(0) for a clamp at X = 0: (cosh(L-X) + B sinh(L-X))/(cosh L + B sinh L)
    (:func:`cabletheory.cable.voltage_ratio`)."""
    return voltage_ratio(position, L, B)


# --------------------------------------------------------------------------------------
# stimulus shapes in T
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class _Shape:
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


def _alpha_mode(mu: Array, T: Array, a: float) -> Array:
    r"""∫_0^T (s/a) e^{1-s/a} e^{-μ(T-s)} ds, stable for every μ and T ≥ 0.

    With c = 1/a, k = μ - c, z = kT: :math:`(e/a)T^2[e^{-cT}(z - 1) + e^{-\mu T}]/z^2`, and the
    series :math:`(e/a)T^2e^{-cT}\sum_j (-z)^j/(j+2)!` for |z| < 1.
    """
    c = 1.0 / a
    z = (mu - c) * T
    e_c = np.exp(-c * T)
    small = np.abs(z) < 1.0
    zs = np.where(small, z, 0.0)
    series = np.zeros_like(zs)
    term = np.full_like(zs, 0.5)
    for j in range(22):
        series = series + term
        term = term * (-zs) / (j + 3)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        direct = (e_c * (z - 1.0) + np.exp(-mu * T)) / np.where(small, 1.0, z * z)
    return (math.e / a) * T * T * np.where(small, e_c * series, direct)


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


def _image_tail(K: Array | float, T: Array, L: float) -> Array:
    """Bound on the point-source images with |k| > K (k-th reflection pair at distance ≥ 2KL)."""
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        return np.where(T > 0, 4 * np.exp(-(K * L) ** 2 / T) * (np.sqrt(T / np.pi) + T / (4 * L)), 0.0)


def _clamp_image_tail(K: Array | float, T: Array, L: float) -> Array:
    """Bound on the clamp images with k ≥ K (distances ≥ 2KL)."""
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        return np.where(T > 0, 2 * np.exp(-(K * L) ** 2 / T) * (1 + np.sqrt(T) / (L * np.sqrt(np.pi))), 0.0)


def _reflections_needed(T: Array, L: float, tol: float, tail) -> Array:
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


def _point_images(kernel, X: Array, X0: float, T: Array, L: float, sign: float, K: int) -> Array:
    """Σ_k sign^|k| [kernel(|X - X0 - 2kL|) + kernel(|X + X0 - 2kL|)] on the grid T × X."""
    Tc = T[:, None]
    total = np.zeros((T.size, X.size))
    for k in range(-K, K + 1):
        s = sign ** abs(k)
        shift = 2 * k * L if k else 0.0
        if X0 == 0.0:
            total += 2 * s * kernel(np.abs(X - shift)[None, :], Tc)
        else:
            total += s * (kernel(np.abs(X - X0 - shift)[None, :], Tc) + kernel(np.abs(X + X0 - shift)[None, :], Tc))
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


def _shape_images(shape: _Shape, X: Array, X0: float, T: Array, L: float, sign: float, K: int) -> Array:
    if shape.kind == "alpha":
        a = shape.time_to_peak
        return _point_images(lambda d, t: point_source_alpha(d, t, a), X, X0, T, L, sign, K)
    values = _point_images(point_source_step, X, X0, T, L, sign, K)
    if shape.kind == "pulse":
        values = values - _point_images(point_source_step, X, X0, T - shape.duration, L, sign, K)
    return values


def _modes_needed(T: Array, tol: float, L: float, bound) -> tuple[Array, Array]:
    """Smallest mode count N per T with bound(N, T) ≤ tol (N ≤ MAX_MODES), and that bound."""
    candidates = np.unique(np.round(np.geomspace(1, MAX_MODES, 90)).astype(int))
    need = np.full(T.shape, MAX_MODES + 1)
    achieved = np.full(T.shape, np.inf)
    for n in candidates[::-1]:
        b = bound(int(n), T)
        ok = b <= tol
        need = np.where(ok, n, need)
        achieved = np.where(ok, b, achieved)
    return need, achieved


def _current_bound(shape: _Shape, L: float):
    def bound(n: int, T: Array) -> Array:
        if shape.kind == "step":
            return eigen.tail_bound(n, T, L, kind="step")
        if shape.kind == "pulse":
            return eigen.tail_bound(n, np.where(T > shape.duration, T - shape.duration, T), L, kind="step")  # noqa: SIM300
        return (2 * eigen.tail_bound(n, T / 2, L, kind="step")
                + eigen.tail_bound(n, T, L, kind="smooth", rate=1.0) * shape.slope_bound(T))
    return bound


def _series(time_factor, spatial: Array, T: Array, count: int) -> Array:
    """Σ_n time_factor(n-slice, T)[:, n] · spatial[n, :] in chunks of modes (matrix products)."""
    total = np.zeros((T.size, spatial.shape[1]))
    step = max(1, _CHUNK // max(1, T.size + spatial.shape[1]))
    for s in range(0, count, step):
        e = min(count, s + step)
        total += time_factor(slice(s, e)) @ spatial[s:e]
    return total


def current_response(position: ArrayLike, source: float, normalised_time: ArrayLike, electrotonic_length: float,
                     end_conductance_ratio: float = 0.0, soma_ratio: float = 0.0, *, shape: str = "step",
                     duration: float = 0.0, time_to_peak: float = 0.0,
                     tolerance: float = 1e-10) -> tuple[Array, Array, str]:
    r"""Voltage :math:`V/(IR_\infty)` on the grid T × X for a current input at X0 on a cylinder.

    The cylinder has a sealed origin (or a soma of ratio :math:`y = G_S/G_\infty`) and a far end
    of ratio B at X = L (L = inf: semi-infinite, y must be 0). ``shape`` is ``"step"``,
    ``"pulse"`` (of ``duration`` in τm) or ``"alpha"`` (``time_to_peak`` in τm, I is the peak).

    .. math:: \frac{V}{IR_\infty} = g(X,X_0)\,f(T) - \sum_n r_n(X,X_0)\,h_n(T)

    (eigen-series; :math:`h_n = e^{-\mu_n T}/\mu_n` for a step, :math:`\mu_n = 1+\alpha_n^2`) or the
    image sum of :func:`point_source_step` / :func:`point_source_alpha`, per T, whichever needs
    fewer operations for a truncation error ≤ ``tolerance`` (absolute, in units of
    :math:`IR_\infty`).

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
    shp = _Shape(shape, duration, time_to_peak)
    if shape not in ("step", "pulse", "alpha"):
        raise InputError(f"shape must be step, pulse or alpha, got {shape!r}")
    out = np.zeros((T.size, X.size))
    bound = np.zeros((T.size, X.size))
    plan = _Plan()
    live = np.flatnonzero(T > 0)
    if math.isinf(L):
        if y != 0:
            raise InputError("a soma needs a finite cylinder")
        Tl = T[live]
        out[live] = _shape_images(shp, X, X0, Tl, math.inf, 1.0, 0)
        return out, bound, "closed form (semi-infinite cable: source and its image in the sealed end)"
    w_s, w_k = _weights(B)
    images_exact = y == 0 and (w_k == 0 or w_s == 0)
    leaky = y == 0 and not images_exact
    sign = 1.0 if w_k == 0 else -1.0
    Tl = T[live]
    mode_bound = _current_bound(shp, L)
    tol = float(tolerance)  # in units of the kernel's scale, so it may exceed 1
    if not (math.isfinite(tol) and tol > 0):
        raise InputError(f"tolerance must be finite and positive, got {tolerance!r}")
    n_need, _ = _modes_needed(Tl, tol, L, mode_bound)
    use_eigen = np.ones(Tl.size, dtype=bool)
    if images_exact or leaky:
        tails = [_image_tail]
        reflections = _reflections_needed(Tl, L, tol / (2 if shp.kind == "pulse" else 1), tails[0])
        cost_images = (2 * reflections + 1) * 2 * _IMAGE_COST * (2 if leaky else 1) * (2 if shp.kind == "pulse" else 1)
        cost_images *= 16 if shp.kind == "alpha" else 1
        prefer = cost_images < n_need
        for k in np.unique(reflections[prefer]).astype(int):
            idx = np.flatnonzero(prefer & (reflections == k))
            Tk = Tl[idx]
            tail = _image_tail(np.float64(k), Tk, L)
            if shp.kind == "pulse":
                tail = tail + _image_tail(np.float64(k), Tk - shp.duration, L)
            if images_exact:
                values = _shape_images(shp, X, X0, Tk, L, sign, k)
                err = np.broadcast_to(tail[:, None], values.shape)
                accepted = np.ones(idx.size, dtype=bool)
            else:
                upper = _shape_images(shp, X, X0, Tk, L, 1.0, k)
                lower = _shape_images(shp, X, X0, Tk, L, -1.0, k)
                values = 0.5 * (upper + lower)
                err = 0.5 * np.abs(upper - lower) + tail[:, None]
                accepted = np.all(err <= tol, axis=1)
            rows = live[idx[accepted]]
            out[rows] = values[accepted]
            bound[rows] = err[accepted]
            use_eigen[idx[accepted]] = False
        img_T = Tl[~use_eigen]
        plan.add("sealed/killed bracket of images" if leaky else "images", img_T,
                 int(reflections[~use_eigen].max()) if img_T.size else 0, "reflections per side")
    idx = np.flatnonzero(use_eigen)
    if idx.size:
        Te = Tl[idx]
        if np.any(n_need[idx] > MAX_MODES):
            worst = Te[n_need[idx] > MAX_MODES].min()
            raise ConvergenceError(f"the eigen-series needs more than {MAX_MODES} modes at T = {worst:.3g} "
                                   f"for tolerance {tol:.3g}; choose a later time or a looser tolerance")
        count = int(n_need[idx].max())
        alpha = eigen._eigenvalues(L, B, count, "sealed", y)
        mu = 1.0 + alpha**2
        residues = eigen.mode_residues(alpha, X, X0, L, soma_ratio=y)  # (count, nX)
        steady = steady_green(X, X0, L, B, y)
        Tc = Te[:, None]
        if shp.kind == "step":
            values = steady[None, :] - _series(lambda s: np.exp(-mu[s] * Tc) / mu[s], residues, Te, count)
        elif shp.kind == "pulse":
            D = shp.duration
            after = Tc > D
            values = np.where(after, 0.0, steady[None, :]) - _series(
                lambda s: np.where(after, np.expm1(-mu[s] * D) * np.exp(-mu[s] * np.where(after, Tc - D, 0.0)),
                                   np.exp(-mu[s] * Tc)) / mu[s], residues, Te, count)
        else:
            a = shp.time_to_peak
            f = shp.value(Te)[:, None]
            values = f * steady[None, :] - _series(lambda s: f / mu[s] - _alpha_mode(mu[s], Tc, a), residues, Te,
                                                   count)
        out[live[idx]] = values
        bound[live[idx]] = mode_bound(count, Te)[:, None]
        plan.add("eigen-series", Te, count, "modes")
    return out, bound, plan.text()


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
    w_s, w_k = _weights(B)
    leaky = w_s != 0 and w_k != 0
    sigma = 1.0 if w_k == 0 else -1.0
    plan = _Plan()

    def mode_bound(n: int, t: Array) -> Array:
        return eigen.tail_bound(n, t, L, kind="clamp", origin="clamped")

    n_need, _ = _modes_needed(Tl, tol, L, mode_bound)
    reflections = _reflections_needed(Tl, L, tol, _clamp_image_tail)
    prefer = 2 * reflections * _IMAGE_COST * (2 if leaky else 1) < n_need
    use_eigen = np.ones(Tl.size, dtype=bool)
    for k in np.unique(reflections[prefer]).astype(int):
        idx = np.flatnonzero(prefer & (reflections == k))
        Tk = Tl[idx]
        tail = _clamp_image_tail(np.float64(k), Tk, L)[:, None]
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
        alpha = eigen._eigenvalues(L, B, count, "clamped", 0.0)
        mu = 1.0 + alpha**2
        coefficients = eigen.clamp_mode_coefficients(alpha, X, L)
        Tc = Te[:, None]
        values = _clamp_steady(X, L, B)[None, :] - _series(lambda s: np.exp(-mu[s] * Tc), coefficients, Te, count)
        out[live[idx]] = values
        bound[live[idx]] = mode_bound(count, Te)[:, None]
        plan.add("eigen-series", Te, count, "modes")
    return out, bound, plan.text()


# --------------------------------------------------------------------------------------
# SI entry point
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class _Geometry:
    length_constant: float
    time_constant: float
    semi_infinite_resistance: float
    electrotonic_length: float  # inf: semi-infinite; nan: doubly infinite
    end_conductance_ratio: float
    soma_ratio: float
    physical_length: float


def _geometry(model: Model) -> _Geometry:
    if isinstance(model, BallAndStick):
        c = model.cylinder
        return _Geometry(c.length_constant, c.time_constant, c.semi_infinite_input_resistance,
                         c.electrotonic_length, c.end_conductance_ratio, model.soma_ratio, c.length)
    if isinstance(model, Cylinder):
        return _Geometry(model.length_constant, model.time_constant, model.semi_infinite_input_resistance,
                         model.electrotonic_length, model.end_conductance_ratio, 0.0, model.length)
    if isinstance(model, InfiniteCable):
        return _Geometry(model.length_constant, model.time_constant, model.semi_infinite_input_resistance,
                         math.nan, 0.0, 0.0, math.nan)
    raise InputError(f"model must be a Cylinder, BallAndStick or InfiniteCable, got {type(model).__name__}")


def _shape_of(stimulus: Stimulus, tau: float) -> _Shape:
    if isinstance(stimulus, CurrentStep):
        return _Shape("step")
    if isinstance(stimulus, CurrentPulse):
        return _Shape("pulse", duration=stimulus.duration / tau)
    if isinstance(stimulus, AlphaCurrent):
        return _Shape("alpha", time_to_peak=stimulus.time_to_peak / tau)
    raise InputError(f"unknown stimulus {type(stimulus).__name__}")


def _amplitude(stimulus: Stimulus) -> float:
    return stimulus.peak if isinstance(stimulus, AlphaCurrent) else stimulus.amplitude


def charge(model: Model, stimulus: Stimulus, times: ArrayLike, positions: ArrayLike, *,
           tolerance: float = 1e-10, precision: int | None = None, modes: int = 5) -> Response:
    r"""Voltage time course of a passive cable model for one stimulus, on a grid of times × positions.

    Parameters
    ----------
    model : :class:`~cabletheory.cable.Cylinder` (finite with a sealed, killed or leaky far end,
        or semi-infinite with ``length = inf``; input side sealed), :class:`BallAndStick`, or
        :class:`InfiniteCable`
    stimulus : :class:`CurrentStep`, :class:`CurrentPulse`, :class:`AlphaCurrent` (at
        ``position``, m from the origin) or :class:`VoltageStep` (clamp at the origin; anywhere on an
        infinite cable). Position 0 of a ball and stick is the soma.
    times : s; the stimulus starts at t = 0, and t ≤ 0 gives exactly 0 (rest)
    positions : m from the origin, within the cable (any sign on an infinite cable)
    tolerance : truncation error allowed, relative to the reference voltage (module docstring)
    precision : None for numpy floats; a number of decimal digits to evaluate the same series
        and erfc forms with mpmath (:mod:`cabletheory.precise`; slow, for checks)
    modes : how many time constants and coefficients to report (finite cables)

    Returns
    -------
    :class:`Response`, voltage in V (deviation from rest) indexed [time, position].

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Hodgkin & Rushton (1946) Proc. R. Soc. B 133:444.
    """
    geo = _geometry(model)
    t = np.atleast_1d(np.asarray(times, dtype=float)).ravel()
    x = np.atleast_1d(np.asarray(positions, dtype=float)).ravel()
    if not (np.isfinite(t).all() and np.isfinite(x).all()):
        raise InputError("times and positions must be finite")
    if not (isinstance(tolerance, int | float) and 0 < tolerance < 1):
        raise InputError(f"tolerance must lie in (0, 1), got {tolerance!r}")
    if modes < 0:
        raise InputError(f"modes must be >= 0, got {modes!r}")
    infinite = isinstance(model, InfiniteCable)
    if not infinite:
        if np.any(x < 0) or np.any(x > geo.physical_length * (1 + 1e-12)):
            raise InputError("positions must lie between 0 and the cable's length")
        x = np.minimum(x, geo.physical_length)
    lam, tau = geo.length_constant, geo.time_constant
    X = x / lam
    T = t / tau
    L, B, y = geo.electrotonic_length, geo.end_conductance_ratio, geo.soma_ratio
    source = stimulus.position
    if not infinite:
        if isinstance(stimulus, VoltageStep) and source != 0:
            raise InputError("a voltage clamp on a cylinder or ball and stick is applied at the origin (position 0)")
        if not (0 <= source <= geo.physical_length):
            raise InputError("the stimulus position must lie between 0 and the cable's length")
    X0 = source / lam
    amplitude = _amplitude(stimulus)
    clamp = isinstance(stimulus, VoltageStep)
    notes: list[str] = []
    if clamp:
        scale = amplitude
        reference = abs(amplitude)
        tol = tolerance
        if isinstance(model, BallAndStick):
            notes.append("the clamp fixes the soma voltage, so the soma does not change the voltage")
    else:
        shape = _shape_of(stimulus, tau)
        scale = amplitude * geo.semi_infinite_resistance
        site = 0.5 if infinite else float(steady_green(X0, X0, L, B, y))
        reference = abs(scale) * site
        tol = tolerance * site
    if precision is not None:
        from . import precise

        if clamp:
            values, bounds, method = precise.clamp_grid(X, T, L, B, tol, precision, infinite=infinite, source=X0)
        else:
            values, bounds, method = precise.current_grid(X, X0, T, L, B, y, shape.kind, shape.duration,
                                                           shape.time_to_peak, tol, precision, infinite=infinite)
    elif infinite:
        d = np.abs(X - X0)[None, :]
        Tc = T[:, None]
        if clamp:
            values = semi_infinite_clamp(d, Tc)
        elif shape.kind == "alpha":
            values = point_source_alpha(d, Tc, shape.time_to_peak)
        else:
            values = point_source_step(d, Tc)
            if shape.kind == "pulse":
                values = values - point_source_step(d, Tc - shape.duration)
        values = np.broadcast_to(values, (T.size, X.size)).copy()
        bounds = np.zeros_like(values)
        method = "closed form (infinite cable, Hodgkin-Rushton)"
    elif clamp:
        values, bounds, method = clamp_response(X, T, L, B, tolerance=tol)
    else:
        values, bounds, method = current_response(X, X0, T, L, B, y, shape=shape.kind, duration=shape.duration,
                                                  time_to_peak=shape.time_to_peak, tolerance=tol)
    # time constants and step coefficients
    if math.isfinite(L) and modes > 0:
        origin = "clamped" if clamp else "sealed"
        yy = 0.0 if clamp else y
        alpha = eigen._eigenvalues(L, B, modes, origin, yy)
        mu = 1 + alpha**2
        time_constants = tau / mu
        if clamp:
            final = _clamp_steady(X, L, B)
            amplitudes = eigen.clamp_mode_coefficients(alpha, X, L)
        else:
            final = steady_green(X, X0, L, B, y)
            amplitudes = eigen.mode_residues(alpha, X, X0, L, soma_ratio=y) / mu[:, None]
        with np.errstate(divide="ignore", invalid="ignore"):
            coefficients = np.where(final[None, :] > 0, amplitudes / np.where(final > 0, final, 1.0)[None, :], np.nan)
    else:
        time_constants = np.zeros(0)
        coefficients = np.zeros((0, X.size))
    steady: Array | None = None
    if clamp:
        steady = scale * (np.exp(-np.abs(X - X0)) if infinite else _clamp_steady(X, L, B))
    elif shape.kind == "step":
        steady = scale * (0.5 * np.exp(-np.abs(X - X0)) if infinite else steady_green(X, X0, L, B, y))
    error_bound = float(np.max(bounds, initial=0.0)) * abs(scale) + ROUNDING_ALLOWANCE * reference
    return Response(times=t, positions=x, voltage=scale * values, error_bound=error_bound,
                    time_constants=time_constants, coefficients=coefficients, method=method, steady_state=steady,
                    reference_voltage=reference, tolerance=float(tolerance), length_constant=lam,
                    membrane_time_constant=tau, precision=precision, notes=tuple(notes))
