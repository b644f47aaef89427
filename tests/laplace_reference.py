r"""An independent high-precision reference for every exact time course: Laplace domain + Talbot.

Nothing here calls the code under test. Each model is written as its boundary-value problem
in the Laplace domain (s in units of 1/τm, X = x/λ, voltage in units of :math:`IR_\infty` for a
current input or of the clamp step), solved by hand, and inverted with the general-purpose
``mpmath.invertlaplace(..., method="talbot")`` (mpmath [mpmath2023]; Talbot 1979
[Talbot1979]) at :data:`DIGITS` decimal digits.

The transformed cable equation is :math:`\hat V'' = q^2\hat V` with :math:`q = \sqrt{1+s}`
(Hodgkin & Rushton 1946 [HodgkinRushton1946]; Rall 1969 [Rall1969]; Jack, Noble & Tsien 1975
[JackNobleTsien1975] ch. 3 and 7, [MEM]).
With a unit current injected at :math:`X_0` (in units of :math:`G_\infty`) the Green's function is

.. math:: \hat G(X, X_0; s) = \frac{\varphi(X_<)\,\psi(X_>)}{\varphi'\psi - \varphi\psi'}

where :math:`\varphi` meets the origin's condition and :math:`\psi` the far end's:

* origin sealed (:math:`\varphi'(0)=0`) or a lumped soma of conductance :math:`yG_\infty` and the
  same τm (:math:`\varphi'(0) = y(1+s)\varphi(0)`, Rall 1969 ball and stick):
  :math:`\varphi = \cosh qX + \tfrac{y(1+s)}{q}\sinh qX`;
* far end at L with conductance :math:`BG_\infty` (:math:`\psi'(L) = -B\psi(L)`; B = 0 sealed,
  B = ∞ killed): :math:`\psi = \cosh q(L-X) + \tfrac Bq\sinh q(L-X)`; L = ∞: :math:`\psi = e^{-qX}`;
* infinite cable: :math:`\hat G = e^{-q|X-X_0|}/(2q)`.

A clamp step :math:`V_0` at X = 0 gives :math:`\hat V/V_0 = \psi(X)/(s\,\psi(0))` (on an infinite
cable, clamped at :math:`X_0`: :math:`e^{-q|X-X_0|}/s`). Stimuli: a current step has
transform 1/s; an alpha current :math:`(T/a)e^{1-T/a}` has :math:`(e/a)/(s+1/a)^2`; a pulse of
duration D is a step minus a step delayed by D, and the delayed time :math:`t - d` is formed
exactly from the float inputs before dividing by τm.

Hyperbolic functions are written with :math:`e^{-2q(\cdot)}` (Re q > 0), so the working numbers
stay of order one whatever L and s are. The module is checked against computed ten-digit values
(docs/sources.md, "Where the ten-digit numbers come from") and closed forms in
``tests/test_laplace_reference.py``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import mpmath as mp

DIGITS = 40  # working decimal digits of the inversion


def _ratio(B):
    """(w_s, w_k) with ψ ∝ w_s cosh + w_k sinh/q: B ≤ 1 → (1, B); B > 1 → (1/B, 1); B = ∞ → (0, 1)."""
    if mp.inf == B:
        return mp.mpf(0), mp.mpf(1)
    B = mp.mpf(B)
    return (mp.mpf(1), B) if B <= 1 else (1 / B, mp.mpf(1))


def _psi_scaled(q, rest, B):
    """ψ at distance ``rest`` from the far end divided by e^{q·rest}/2 (rest may be 0)."""
    w_s, w_k = _ratio(B)
    e = mp.exp(-2 * q * rest)
    return w_s * (1 + e) + w_k * (1 - e) / q


def green(s, X, X0, L, B=0, y=0):
    r"""Laplace-domain voltage at X for a unit current at X0 on a cylinder (module docstring).

    ``L = mp.inf`` is a semi-infinite cable (sealed origin, y = 0 allowed or a soma); B may be
    ``mp.inf`` (killed end). Units: :math:`IR_\infty`, s in 1/τm.
    """
    q = mp.sqrt(1 + s)
    near, far = min(X, X0), max(X, X0)
    e_near = mp.exp(-2 * q * near)
    phi = (1 + e_near) + y * (1 + s) / q * (1 - e_near)  # φ(X<)·2e^{-qX<}
    if mp.inf == L:
        # ψ = e^{-qX}; Wronskian φ'ψ - φψ' at 0 = y(1+s) + q
        return mp.exp(q * (near - far)) * phi / 2 / (y * (1 + s) + q)
    w_s, w_k = _ratio(B)
    psi = _psi_scaled(q, L - far, B)  # ψ(X>)·2e^{-q(L-X>)}
    e_l = mp.exp(-2 * q * L)
    # W = y(1+s)ψ(0) - ψ'(0), scaled by 2e^{-qL}
    wronskian = y * (1 + s) * (w_s * (1 + e_l) + w_k * (1 - e_l) / q) + (w_s * q * (1 - e_l) + w_k * (1 + e_l))
    return mp.exp(q * (near - far)) * phi * psi / (2 * wronskian)


def infinite_green(s, X, X0):
    """Infinite cable: e^{-q|X-X0|}/(2q)."""
    q = mp.sqrt(1 + s)
    return mp.exp(-q * abs(X - X0)) / (2 * q)


def clamp_transfer(s, X, L, B=0):
    """V̂/V0 · s for a clamp at X = 0 of a cylinder (L may be mp.inf): ψ(X)/ψ(0)."""
    q = mp.sqrt(1 + s)
    if mp.inf == L:
        return mp.exp(-q * X)
    return mp.exp(-q * X) * _psi_scaled(q, L - X, B) / _psi_scaled(q, L, B)


def _digits(digits: int | None) -> int:
    """The working digits asked for, or :data:`DIGITS` (read when called, so it can be set)."""
    return DIGITS if digits is None else digits


def invert(transform, T, digits: int | None = None) -> mp.mpf:
    """f(T) from its transform by mpmath's Talbot inversion at :data:`DIGITS` digits, or ``digits``
    (0 for T ≤ 0)."""
    if T <= 0:
        return mp.mpf(0)
    with mp.workdps(_digits(digits)):
        value = mp.invertlaplace(transform, T, method="talbot")
    return mp.re(value)


@dataclass(frozen=True)
class Case:
    """A dimensionless case: model, stimulus, source; every length in λ, time in τm.

    model: "cylinder" (finite or L = inf), "ball" (soma ratio y = G_S/G∞ at X = 0), "infinite".
    stimulus: "step", "pulse" (``duration``), "alpha" (``time_to_peak``) or "clamp".
    """

    model: str
    stimulus: str
    L: object = mp.inf
    B: object = 0
    y: object = 0
    source: object = 0
    duration: object = 0
    time_to_peak: object = 1

    def transfer(self, s, X):
        """Transform of the response to a unit *impulse-like* input shape factor 1 (no 1/s)."""
        if self.stimulus == "clamp":
            if self.model == "infinite":
                return mp.exp(-mp.sqrt(1 + s) * abs(X - self.source))
            return clamp_transfer(s, X, self.L, self.B)
        if self.model == "infinite":
            return infinite_green(s, X, self.source)
        return green(s, X, self.source, self.L, self.B, self.y if self.model == "ball" else 0)

    def input_transform(self, s):
        if self.stimulus == "alpha":
            a = self.time_to_peak
            return mp.e / a / (s + 1 / a) ** 2
        return 1 / s

    def value(self, T, X, delayed=None, digits: int | None = None) -> mp.mpf:
        """Dimensionless voltage at T (τm) and X (λ); ``delayed`` = T - D formed by the caller
        for a pulse (defaults to T - duration)."""
        with mp.workdps(_digits(digits)):
            X = mp.mpf(X)

            def F(s):
                return self.input_transform(s) * self.transfer(s, X)

            v = invert(F, T, digits)
            if self.stimulus == "pulse":
                later = T - self.duration if delayed is None else delayed
                v -= invert(F, later, digits)
            return v


def si_case(model, stimulus, digits: int | None = None):
    """The dimensionless :class:`Case` of a cabletheory model and stimulus, and the SI scales
    (λ in m, τm in s, voltage unit in V). Only the models' plain attributes are read (membrane
    constants, diameter, length, end conductance, soma diameter) and λ, τm, R∞ are recomputed
    here from their textbook formulas (λ = √(Rm d/(4 Ri)), τm = Rm Cm, R∞ = (2/π)√(Rm Ri) d^{-3/2},
    Rall 1959 [Rall1959], [CP])."""
    kind = type(model).__name__
    cyl = model.cylinder if kind == "BallAndStick" else model
    with mp.workdps(_digits(digits)):
        rm, ri, cm, d = (mp.mpf(cyl.membrane_resistivity), mp.mpf(cyl.axial_resistivity),
                         mp.mpf(cyl.membrane_capacitance), mp.mpf(cyl.diameter))
        lam = mp.sqrt(rm * d / (4 * ri))
        tau = rm * cm
        r_inf = 2 / mp.pi * mp.sqrt(rm * ri) * d ** mp.mpf(-1.5)
        if kind == "InfiniteCable":
            L, B, y, name = mp.inf, 0, 0, "infinite"
        else:
            L = mp.inf if math.isinf(cyl.length) else mp.mpf(cyl.length) / lam
            g = cyl.end_conductance
            B = mp.inf if math.isinf(g) else mp.mpf(g) * r_inf
            y, name = 0, "cylinder"
            if kind == "BallAndStick":
                y = mp.pi * mp.mpf(model.soma_diameter) ** 2 / rm * r_inf
                name = "ball"
        stim = type(stimulus).__name__
        shape = {"CurrentStep": "step", "CurrentPulse": "pulse", "AlphaCurrent": "alpha", "VoltageStep": "clamp"}[stim]
        amplitude = mp.mpf(stimulus.peak if shape == "alpha" else stimulus.amplitude)
        unit = amplitude if shape == "clamp" else amplitude * r_inf
        case = Case(name, shape, L=L, B=B, y=y, source=mp.mpf(stimulus.position) / lam,
                    duration=mp.mpf(getattr(stimulus, "duration", 0)) / tau,
                    time_to_peak=mp.mpf(getattr(stimulus, "time_to_peak", 1)) / tau)
    return case, lam, tau, unit


def si_voltage(model, stimulus, t: float, x: float, digits: int | None = None) -> mp.mpf:
    """Voltage (V, from rest) of a cabletheory model at time t (s) and position x (m), from the
    Laplace-domain solution above; t and x are taken as exact binary numbers. ``digits`` (default
    :data:`DIGITS`) sets the working digits; fewer are enough only where a test has measured it."""
    case, lam, tau, unit = si_case(model, stimulus, digits)
    with mp.workdps(_digits(digits)):
        t = mp.mpf(t)
        delayed = (t - mp.mpf(stimulus.duration)) / tau if case.stimulus == "pulse" else None
        return unit * case.value(t / tau, mp.mpf(x) / lam, delayed, digits)
