r"""Closed-form steady-state and sinusoidal results for one uniform passive cylinder.

Conventions (Rall 1959; Jack, Noble & Tsien 1975):

* all arguments and results are SI floats or numpy arrays (m, s, Ω, S, F, Hz);
* ``X = x / λ`` is electrotonic position, ``L = ℓ / λ`` electrotonic length;
* input is applied at ``X = 0``, which is the origin of the cylinder;
* the far end at ``X = L`` is described by Rall's end-conductance ratio
  ``B = G_end / G∞``: ``B = 0`` is a sealed end, ``B = inf`` a killed end
  (short-circuited to rest), ``B = 1`` looks like a semi-infinite continuation;
* ``L = inf`` is a semi-infinite cable (the far end then plays no role).

Every result assumes a passive, linear membrane with uniform Rm, Ri and Cm.

Numerically stable forms are used throughout: hyperbolic functions are written with
``exp(-2u)`` and ``expm1`` so that ``L`` up to 1000 (and beyond) and frequencies up to
100 kHz stay finite, and killed ends (``B = inf``) are handled by dividing through by B.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import InputError

__all__ = [
    "CableSummary",
    "Cylinder",
    "UniformMembrane",
    "axial_resistance_per_length",
    "compartments_needed",
    "electrotonic_length",
    "far_end_voltage_ratio",
    "input_conductance",
    "input_impedance",
    "input_resistance",
    "length_constant",
    "length_constant_at_frequency",
    "membrane_capacitance_per_length",
    "membrane_resistance_per_length",
    "membrane_time_constant",
    "semi_infinite_input_conductance",
    "semi_infinite_input_resistance",
    "summarise",
    "transfer_impedance",
    "transfer_resistance",
    "voltage_ratio",
    "wavenumber",
]

Array = NDArray[np.float64]
# q = √(1 + iωτm): a complex scalar or array (exactly 1 in the steady state)
Wavenumber = np.complex128 | NDArray[np.complex128]


# --------------------------------------------------------------------------------------
# cable constants
# --------------------------------------------------------------------------------------
def length_constant(membrane_resistivity: ArrayLike, axial_resistivity: ArrayLike,
                    diameter: ArrayLike) -> Array:
    r"""Length constant of a cylinder.

    .. math:: \lambda = \sqrt{\frac{R_m d}{4 R_i}} = \sqrt{r_m / r_i}

    Parameters
    ----------
    membrane_resistivity : Rm, specific membrane resistance, Ω·m²
    axial_resistivity : Ri, specific axial (cytoplasmic) resistivity, Ω·m
    diameter : d, m

    Returns
    -------
    λ in m.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491, eq. for λ; Hodgkin AL & Rushton WAH (1946)
    Proc. R. Soc. B 133:444.
    """
    return np.sqrt(np.asarray(membrane_resistivity) * diameter / (4.0 * np.asarray(axial_resistivity)))


def membrane_time_constant(membrane_resistivity: ArrayLike, membrane_capacitance: ArrayLike) -> Array:
    r"""Membrane time constant :math:`\tau_m = R_m C_m`.

    Parameters
    ----------
    membrane_resistivity : Rm, Ω·m²
    membrane_capacitance : Cm, specific membrane capacitance, F/m²

    Returns
    -------
    τm in s.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (abstract: τm = Rm·Cm).
    """
    return np.asarray(membrane_resistivity) * np.asarray(membrane_capacitance)


def membrane_resistance_per_length(membrane_resistivity: ArrayLike, diameter: ArrayLike) -> Array:
    r"""Membrane resistance of unit length of cylinder, :math:`r_m = R_m / (\pi d)`, in Ω·m.

    References
    ----------
    Common practice; Jack, Noble & Tsien (1975) ch. 3 (recalled from memory).
    """
    return np.asarray(membrane_resistivity) / (np.pi * np.asarray(diameter))


def axial_resistance_per_length(axial_resistivity: ArrayLike, diameter: ArrayLike) -> Array:
    r"""Axial (core) resistance per unit length, :math:`r_i = 4 R_i / (\pi d^2)`, in Ω/m.

    References
    ----------
    Common practice; Rall (1959).
    """
    return 4.0 * np.asarray(axial_resistivity) / (np.pi * np.asarray(diameter) ** 2)


def membrane_capacitance_per_length(membrane_capacitance: ArrayLike, diameter: ArrayLike) -> Array:
    r"""Membrane capacitance per unit length, :math:`c_m = C_m \pi d`, in F/m.

    References
    ----------
    Common practice.
    """
    return np.asarray(membrane_capacitance) * np.pi * np.asarray(diameter)


def semi_infinite_input_resistance(membrane_resistivity: ArrayLike, axial_resistivity: ArrayLike,
                                   diameter: ArrayLike) -> Array:
    r"""Input resistance of a semi-infinite cylinder injected at its end.

    .. math:: R_\infty = r_i \lambda = \frac{2}{\pi}\sqrt{R_m R_i}\, d^{-3/2}

    A doubly infinite cylinder injected in its middle has :math:`R_\infty / 2`.

    Returns
    -------
    R∞ in Ω.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491 (G∞ = π d^{3/2} / (2 √(Rm Ri))).
    """
    d = np.asarray(diameter, dtype=float)
    return 2.0 / np.pi * np.sqrt(np.asarray(membrane_resistivity) * axial_resistivity) * d**-1.5


def semi_infinite_input_conductance(membrane_resistivity: ArrayLike, axial_resistivity: ArrayLike,
                                    diameter: ArrayLike) -> Array:
    r"""Input conductance of a semi-infinite cylinder, :math:`G_\infty = 1/R_\infty`, in S.

    .. math:: G_\infty = \frac{\pi d^{3/2}}{2\sqrt{R_m R_i}}

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491.
    """
    return 1.0 / semi_infinite_input_resistance(membrane_resistivity, axial_resistivity, diameter)


def electrotonic_length(length: ArrayLike, length_constant: ArrayLike) -> Array:
    r"""Electrotonic length :math:`L = \ell / \lambda` (dimensionless); ``inf`` stays ``inf``.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483.
    """
    return np.asarray(length, dtype=float) / np.asarray(length_constant)


def wavenumber(frequency: ArrayLike, time_constant: ArrayLike) -> NDArray[np.complex128]:
    r"""Complex electrotonic wavenumber :math:`q = \sqrt{1 + i\omega\tau_m}`, :math:`\omega = 2\pi f`.

    Phasors vary as :math:`e^{i\omega t}`; at ``f = 0`` the value is exactly 1, so every
    sinusoidal result below reduces to its steady-state counterpart.

    References
    ----------
    Jack, Noble & Tsien (1975) ch. 4; Koch C (1999) Biophysics of Computation, ch. 2
    (both recalled from memory).
    """
    omega_tau = 2.0 * np.pi * np.asarray(frequency, dtype=float) * np.asarray(time_constant)
    return np.sqrt(1.0 + 1j * omega_tau)


def length_constant_at_frequency(length_constant: ArrayLike, frequency: ArrayLike,
                       time_constant: ArrayLike) -> Array:
    r"""Length constant for a sinusoid of frequency f, :math:`\lambda_f = \lambda / \mathrm{Re}\,q`.

    .. math:: \lambda_f = \lambda \sqrt{\frac{2}{1 + \sqrt{1 + \omega^2 \tau_m^2}}}

    At high frequency this tends to :math:`\sqrt{d / (4\pi f R_i C_m)}`.

    References
    ----------
    Koch C (1999) ch. 2 (recalled from memory); the exact form is evaluated here rather
    than the high-frequency approximation.
    """
    return np.asarray(length_constant) / wavenumber(frequency, time_constant).real


def compartments_needed(length: ArrayLike, length_constant_at_frequency: ArrayLike,
                    fraction: float = 0.1) -> NDArray[np.int64]:
    r"""Number of equal compartments so that each is at most ``fraction`` of :math:`\lambda_f`, the length
    constant at the rule frequency (:func:`length_constant_at_frequency`).

    .. math:: n = \max\left(1, \left\lceil \frac{\ell}{\text{fraction}\cdot\lambda_f}\right\rceil\right)

    The default (0.1 of the length constant at 100 Hz) is a rule of common practice for
    compartmental models; it is advice, not an error bound.
    """
    if not fraction > 0:
        raise InputError(f"fraction must be positive, got {fraction!r}")
    ratio = np.asarray(length, dtype=float) / (fraction * np.asarray(length_constant_at_frequency))
    # a tiny tolerance keeps 5.000000000001 from becoming 6 through rounding noise
    return np.maximum(1, np.ceil(ratio - 1e-9)).astype(np.int64)


# --------------------------------------------------------------------------------------
# finite cylinder: one stable kernel for every end condition and frequency
# --------------------------------------------------------------------------------------
def _split_ratio(ratio: ArrayLike) -> tuple[NDArray, NDArray]:
    """Return (w_sealed, w_killed) with ratio = w_killed / w_sealed and max weight 1.

    ``B`` enters every formula as ``(term_sealed + B * term_killed)`` in numerator and
    denominator; dividing both by ``max(1, |B|)`` keeps ``B = inf`` exact.
    """
    b = np.asarray(ratio)
    big = np.abs(b) > 1.0
    with np.errstate(divide="ignore", invalid="ignore"):
        w_sealed = np.where(big, 1.0 / np.where(big, b, 1.0), 1.0)
    w_killed = np.where(big, 1.0, b)
    return w_sealed, w_killed


def _decay(q: Wavenumber, u: ArrayLike) -> tuple[NDArray, NDArray]:
    """Return ``(exp(-2qu), 1 - exp(-2qu))`` for u ≥ 0, exact at u = inf and accurate near 0."""
    u = np.asarray(u, dtype=float)
    infinite = np.isinf(u)
    arg = -2.0 * q * np.where(infinite, 0.0, u)
    return np.where(infinite, 0.0, np.exp(arg)), np.where(infinite, 1.0, -np.expm1(arg))


def _far_factor(q: Wavenumber, u: ArrayLike, ratio: ArrayLike) -> NDArray:
    r"""``[cosh(qu) + (B/q) sinh(qu)] * 2 e^{-qu}``, times ``1/max(1,|B|)``; u ≥ 0 may be inf."""
    w_sealed, w_killed = _split_ratio(ratio)
    e, one_minus_e = _decay(q, u)
    return w_sealed * (1.0 + e) + w_killed / q * one_minus_e


def _green(q: Wavenumber, electrotonic_length: ArrayLike, ratio: ArrayLike, position: ArrayLike,
           source: ArrayLike) -> NDArray:
    r"""Dimensionless Green's function :math:`g = V(X)\,/\,(I R_\infty)` (times q for AC).

    Sealed origin at X = 0, far end at L with end-conductance ratio B:

    .. math:: g(X, X_0) = \frac{\cosh(qX_<)\,[\cosh q(L-X_>) + (B/q)\sinh q(L-X_>)]}
                               {q\,[\sinh qL + (B/q)\cosh qL]}

    written with ``exp(-2·)`` so that nothing overflows.
    """
    L = np.asarray(electrotonic_length, dtype=float)
    x = np.asarray(position, dtype=float)
    x0 = np.asarray(source, dtype=float)
    near = np.minimum(x, x0)
    far = np.maximum(x, x0)
    with np.errstate(invalid="ignore"):
        w_sealed, w_killed = _split_ratio(ratio)
        # denominator: [sinh qL + (B/q) cosh qL] * 2 e^{-qL}
        e_l, one_minus_e_l = _decay(q, L)
        denom = w_sealed * one_minus_e_l + w_killed / q * (1.0 + e_l)
        # L - far is nan when both are inf (semi-infinite cable, far = inf): treat as inf
        rest = np.where(np.isinf(L) & np.isinf(far), np.inf, L - far)
        numer = np.exp(-q * (far - near)) * (1.0 + _decay(q, near)[0]) * _far_factor(q, rest, ratio)
    return numer / (2.0 * q * denom)


def _check_positions(position: ArrayLike, electrotonic_length: ArrayLike) -> None:
    x = np.asarray(position, dtype=float)
    if np.any(x < 0) or np.any(x > np.asarray(electrotonic_length)):
        raise InputError("electrotonic position must lie in [0, L]")


def input_resistance(semi_infinite_resistance: ArrayLike, electrotonic_length: ArrayLike,
                     end_conductance_ratio: ArrayLike = 0.0) -> Array:
    r"""Input resistance at X = 0 of a finite cylinder whose far end has ratio B.

    .. math:: R_{in} = R_\infty \frac{1 + B \tanh L}{B + \tanh L}

    Sealed end (B = 0): :math:`R_\infty \coth L`; killed end (B = ∞): :math:`R_\infty \tanh L`;
    B = 1: :math:`R_\infty` for every L.

    Parameters
    ----------
    semi_infinite_resistance : R∞ of the same cylinder, Ω
    electrotonic_length : L (inf for a semi-infinite cable)
    end_conductance_ratio : B = G_end / G∞ (0 sealed, inf killed)

    Returns
    -------
    R_in in Ω.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491 (recalled from memory); Rall (1977) Handbook of
    Physiology sect. 1 vol. 1; symbol B as in London, Meunier & Segev (1999) Table 1.
    """
    g = _green(np.complex128(1.0), electrotonic_length, end_conductance_ratio, 0.0, 0.0)
    return np.asarray(semi_infinite_resistance) * g.real


def input_conductance(semi_infinite_conductance: ArrayLike, electrotonic_length: ArrayLike,
                      end_conductance_ratio: ArrayLike = 0.0) -> Array:
    r"""Input conductance at X = 0, :math:`G_{in} = G_\infty (B + \tanh L)/(1 + B\tanh L)`, in S.

    Sealed end: :math:`G_\infty \tanh L` (Rall 1959).
    """
    g = _green(np.complex128(1.0), electrotonic_length, end_conductance_ratio, 0.0, 0.0)
    return np.asarray(semi_infinite_conductance) / g.real


def voltage_ratio(position: ArrayLike, electrotonic_length: ArrayLike,
                  end_conductance_ratio: ArrayLike = 0.0) -> Array:
    r"""Steady voltage profile :math:`V(X)/V(0)` for input (current or voltage) at X = 0.

    .. math:: \frac{V(X)}{V(0)} = \frac{\cosh(L-X) + B\sinh(L-X)}{\cosh L + B \sinh L}

    sealed: :math:`\cosh(L-X)/\cosh L`; killed: :math:`\sinh(L-X)/\sinh L`;
    semi-infinite: :math:`e^{-X}`.

    References
    ----------
    Rall W (1959); Jack, Noble & Tsien (1975) ch. 4 (recalled from memory).
    """
    _check_positions(position, electrotonic_length)
    return _ratio(np.complex128(1.0), position, electrotonic_length, end_conductance_ratio).real


def _ratio(q: Wavenumber, position: ArrayLike, electrotonic_length: ArrayLike, ratio: ArrayLike) -> NDArray:
    # V(X)/V(0) = g(X, 0) / g(0, 0)
    return _green(q, electrotonic_length, ratio, position, 0.0) / _green(q, electrotonic_length, ratio, 0.0, 0.0)


def far_end_voltage_ratio(electrotonic_length: ArrayLike, end_conductance_ratio: ArrayLike = 0.0) -> Array:
    r"""Steady attenuation to the far end, :math:`V(L)/V(0) = 1/(\cosh L + B\sinh L)`.

    Sealed: :math:`1/\cosh L`; killed: 0; semi-infinite (L = ∞): 0.

    References
    ----------
    Rall W (1959); Rall & Rinzel (1973) Biophys. J. 13:648.
    """
    L = np.asarray(electrotonic_length, dtype=float)
    w_sealed, _ = _split_ratio(end_conductance_ratio)
    # 1/(cosh L + B sinh L) = 2 e^{-L} / [(1 + e^{-2L}) + B (1 - e^{-2L})], divided by max(1, B)
    return 2.0 * np.exp(-L) * w_sealed / _far_factor(np.complex128(1.0), L, end_conductance_ratio).real


def transfer_resistance(semi_infinite_resistance: ArrayLike, electrotonic_length: ArrayLike,
                        end_conductance_ratio: ArrayLike, position: ArrayLike,
                        source: ArrayLike = 0.0) -> Array:
    r"""Steady transfer resistance :math:`V(X)/I(X_0)` between two points of the cylinder.

    With a sealed origin at X = 0 and end ratio B at X = L,

    .. math:: R_{X,X_0} = R_\infty\,
              \frac{\cosh X_<\,[\cosh(L-X_>) + B\sinh(L-X_>)]}{\sinh L + B\cosh L},

    :math:`X_< = \min(X, X_0)`, :math:`X_> = \max(X, X_0)`. It is symmetric in X and X0
    (reciprocity); with X0 = 0 it equals :math:`R_{in} V(X)/V(0)`.

    References
    ----------
    Rall & Rinzel (1973) Biophys. J. 13:648; Koch C (1999) ch. 3 (recalled from memory).
    """
    _check_positions(position, electrotonic_length)
    _check_positions(source, electrotonic_length)
    g = _green(np.complex128(1.0), electrotonic_length, end_conductance_ratio, position, source)
    return np.asarray(semi_infinite_resistance) * g.real


def input_impedance(semi_infinite_resistance: ArrayLike, electrotonic_length: ArrayLike,
                    end_conductance_ratio: ArrayLike, frequency: ArrayLike,
                    time_constant: ArrayLike) -> NDArray[np.complex128]:
    r"""Complex input impedance at X = 0 for a sinusoid of frequency f.

    .. math:: Z_{in} = \frac{R_\infty}{q}\,\frac{1 + (B/q)\tanh qL}{B/q + \tanh qL},
              \qquad q = \sqrt{1 + i\omega\tau_m}

    The end conductance is taken as purely resistive. Sealed end:
    :math:`(R_\infty/q)\coth qL`; semi-infinite: :math:`R_\infty/q`. Phase is negative
    (capacitive) for phasors :math:`e^{i\omega t}`.

    Returns
    -------
    Z_in in Ω (complex).

    References
    ----------
    Rall W & Rinzel J (1973) Biophys. J. 13:648; Koch C (1999) ch. 2 (recalled from memory).
    """
    q = wavenumber(frequency, time_constant)
    return np.asarray(semi_infinite_resistance) * _green(q, electrotonic_length, end_conductance_ratio, 0.0, 0.0)


def transfer_impedance(semi_infinite_resistance: ArrayLike, electrotonic_length: ArrayLike,
                       end_conductance_ratio: ArrayLike, frequency: ArrayLike, time_constant: ArrayLike,
                       position: ArrayLike, source: ArrayLike = 0.0) -> NDArray[np.complex128]:
    r"""Complex transfer impedance :math:`V(X)/I(X_0)` at frequency f.

    .. math:: Z_{X,X_0} = R_\infty\,\frac{\cosh qX_<\,[\cosh q(L-X_>) + (B/q)\sinh q(L-X_>)]}
                                       {q\,[\sinh qL + (B/q)\cosh qL]}

    With X0 = 0 the ratio to :func:`input_impedance` is the sinusoidal attenuation, e.g.
    :math:`\cosh q(L-X)/\cosh qL` for a sealed end.

    References
    ----------
    Rall W & Rinzel J (1973) Biophys. J. 13:648; Koch C (1999) ch. 2 (recalled from memory).
    """
    _check_positions(position, electrotonic_length)
    _check_positions(source, electrotonic_length)
    q = wavenumber(frequency, time_constant)
    return np.asarray(semi_infinite_resistance) * _green(q, electrotonic_length, end_conductance_ratio,
                                                         position, source)


# --------------------------------------------------------------------------------------
# parameter and result objects
# --------------------------------------------------------------------------------------
class UniformMembrane:
    """Derived constants shared by every uniform cable description.

    Subclasses are frozen dataclasses with the fields ``membrane_resistivity`` (Ω·m²),
    ``axial_resistivity`` (Ω·m), ``membrane_capacitance`` (F/m²) and ``diameter`` (m).
    """

    __slots__ = ()
    membrane_resistivity: float
    axial_resistivity: float
    membrane_capacitance: float
    diameter: float

    def _check_membrane(self) -> None:
        """Raise ValueError unless Rm, Ri, Cm and d are finite and positive."""
        for name in ("membrane_resistivity", "axial_resistivity", "membrane_capacitance", "diameter"):
            value = getattr(self, name)
            if not (np.isfinite(value) and value > 0):
                raise InputError(f"{name} must be finite and positive, got {value!r}")

    @property
    def length_constant(self) -> float:
        """λ in m (:func:`length_constant`)."""
        return float(length_constant(self.membrane_resistivity, self.axial_resistivity, self.diameter))

    @property
    def time_constant(self) -> float:
        """τm in s (:func:`membrane_time_constant`)."""
        return float(membrane_time_constant(self.membrane_resistivity, self.membrane_capacitance))

    @property
    def semi_infinite_input_resistance(self) -> float:
        """R∞ in Ω (:func:`semi_infinite_input_resistance`)."""
        return float(semi_infinite_input_resistance(self.membrane_resistivity, self.axial_resistivity,
                                                    self.diameter))


@dataclass(frozen=True, slots=True)
class Cylinder(UniformMembrane):
    """A uniform passive cylinder in SI units; input is applied at its origin (X = 0).

    ``length = inf`` is a semi-infinite cable. ``end_conductance`` is the conductance (S)
    from the far end to rest: 0 sealed, ``inf`` killed (short-circuited to rest).
    """

    membrane_resistivity: float  # Rm, Ω·m²
    axial_resistivity: float  # Ri, Ω·m
    membrane_capacitance: float  # Cm, F/m²
    diameter: float  # d, m
    length: float  # ℓ, m (inf: semi-infinite)
    end_conductance: float = 0.0  # G_end, S (0 sealed, inf killed)

    def __post_init__(self) -> None:
        self._check_membrane()
        if not self.length > 0:
            raise InputError(f"length must be positive (inf for semi-infinite), got {self.length!r}")
        if not self.end_conductance >= 0:
            raise InputError(f"end_conductance must be >= 0 (inf for killed), got {self.end_conductance!r}")

    @property
    def electrotonic_length(self) -> float:
        return float(electrotonic_length(self.length, self.length_constant))

    @property
    def end_conductance_ratio(self) -> float:
        """Rall's B = G_end / G∞ (0 sealed, inf killed)."""
        return float(self.end_conductance * self.semi_infinite_input_resistance)


@dataclass(frozen=True, slots=True)
class CableSummary:
    """Steady-state (and optionally sinusoidal) results for a :class:`Cylinder`, all SI."""

    cylinder: Cylinder
    length_constant: float
    membrane_time_constant: float
    electrotonic_length: float
    membrane_resistance_per_length: float
    axial_resistance_per_length: float
    membrane_capacitance_per_length: float
    semi_infinite_input_resistance: float
    semi_infinite_input_conductance: float
    end_conductance_ratio: float
    input_resistance: float
    input_conductance: float
    far_end_voltage_ratio: float
    positions: Array  # m, where the profile is evaluated
    electrotonic_positions: Array  # X = x/λ at each position
    voltage_ratio: Array  # V(x)/V(0)
    transfer_resistance: Array  # Ω, from the origin to each position
    frequency: float | None = None  # Hz
    input_impedance: complex | None = None  # Ω
    transfer_impedance: NDArray[np.complex128] | None = None  # Ω, at each position
    ac_voltage_ratio: Array | None = None  # |V(x)/V(0)| at ``frequency`` = |Z_transfer / Z_in|
    length_constant_at_frequency: float | None = None  # m
    compartments_needed: int | None = None
    compartment_fraction: float = 0.1
    advice_frequency: float = 100.0  # Hz


def summarise(cylinder: Cylinder, positions: ArrayLike = (), frequency: float | None = None,
              compartment_fraction: float = 0.1, advice_frequency: float = 100.0) -> CableSummary:
    """Evaluate every closed form of this module for one cylinder.

    ``positions`` are physical distances from the origin (m), each in [0, ℓ].
    Compartment advice uses the length constant at ``advice_frequency`` (default 100 Hz, common practice) and is
    omitted for a semi-infinite cable.
    """
    lam = cylinder.length_constant
    tau = cylinder.time_constant
    r_inf = cylinder.semi_infinite_input_resistance
    L = cylinder.electrotonic_length
    b = cylinder.end_conductance_ratio
    x = np.atleast_1d(np.asarray(positions, dtype=float))
    if np.any(x < 0) or np.any(x > cylinder.length):
        raise InputError("positions must lie between 0 and the cable's length")
    X = x / lam
    z_in = z_x = lam_f = None
    if frequency is not None:
        z_in = complex(input_impedance(r_inf, L, b, frequency, tau))
        z_x = transfer_impedance(r_inf, L, b, frequency, tau, X)
        lam_f = float(length_constant_at_frequency(lam, frequency, tau))
    n_seg = None
    if np.isfinite(cylinder.length):
        n_seg = int(compartments_needed(cylinder.length, length_constant_at_frequency(lam, advice_frequency, tau),
                                        compartment_fraction))
    r_in = float(input_resistance(r_inf, L, b))
    return CableSummary(
        cylinder=cylinder,
        length_constant=lam,
        membrane_time_constant=tau,
        electrotonic_length=L,
        membrane_resistance_per_length=float(membrane_resistance_per_length(cylinder.membrane_resistivity,
                                                                            cylinder.diameter)),
        axial_resistance_per_length=float(axial_resistance_per_length(cylinder.axial_resistivity,
                                                                      cylinder.diameter)),
        membrane_capacitance_per_length=float(membrane_capacitance_per_length(cylinder.membrane_capacitance,
                                                                              cylinder.diameter)),
        semi_infinite_input_resistance=r_inf,
        semi_infinite_input_conductance=1.0 / r_inf,
        end_conductance_ratio=b,
        input_resistance=r_in,
        input_conductance=1.0 / r_in,
        far_end_voltage_ratio=float(far_end_voltage_ratio(L, b)),
        positions=x,
        electrotonic_positions=X,
        voltage_ratio=voltage_ratio(X, L, b),
        transfer_resistance=transfer_resistance(r_inf, L, b, X),
        frequency=frequency,
        input_impedance=z_in,
        transfer_impedance=z_x,
        ac_voltage_ratio=None if z_x is None or z_in is None else np.abs(z_x / z_in),
        length_constant_at_frequency=lam_f,
        compartments_needed=n_seg,
        compartment_fraction=compartment_fraction,
        advice_frequency=advice_frequency,
    )
