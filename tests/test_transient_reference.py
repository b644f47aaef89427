"""Transient responses against published values, vetted tables and mpmath's Talbot inversion.

Each check names its source and its key in docs/sources.md; the tabulated values are the named
formula evaluated to 10 digits with mpmath [mpmath2023] ("computed"). Talbot inversions
(mpmath.invertlaplace, method='talbot', Talbot 1979 [Talbot1979]) use Laplace-domain solutions
written out here.
"""

import math

import mpmath as mp
import numpy as np
import pytest

from cabletheory import cable
from cabletheory.cable import Cylinder
from cabletheory.transient import (
    AlphaCurrent,
    BallAndStick,
    CurrentStep,
    InfiniteCable,
    VoltageStep,
    charge,
    clamp_response,
    current_response,
    hodgkin_rushton,
    point_source_alpha,
    semi_infinite_clamp,
    steady_green,
)

# demo cable of docs/sources.md (invented numbers): d = 2 µm, Rm = 20 kΩ·cm², Ri = 200 Ω·cm, Cm = 1 µF/cm²
RM, RI, CM, DIAM = 2.0, 2.0, 0.01, 2e-6


def cylinder(L, end_ratio=0.0):
    lam = cable.length_constant(RM, RI, DIAM)
    r_inf = cable.semi_infinite_input_resistance(RM, RI, DIAM)
    return Cylinder(RM, RI, CM, DIAM, L * lam if math.isfinite(L) else math.inf, end_ratio / r_inf)


@pytest.mark.parametrize(("T", "erf_value"), [(0.1, 0.3452791540), (0.25, 0.5204998778), (0.5, 0.6826894921),
                                              (1, 0.8427007929), (2, 0.9544997361), (3, 0.9856941216)])
def test_hodgkin_rushton_at_the_injection_site(T, erf_value):
    """V(0,T)/V(0,∞) = erf √T: 0.8427 at T = 1 against 1 − e⁻¹ = 0.632 isopotential (Hodgkin & Rushton
    1946 [HodgkinRushton1946] [MEM]; computed)."""
    assert hodgkin_rushton(0.0, T) == pytest.approx(erf_value, rel=1e-10)
    assert hodgkin_rushton(0.0, T) > 1 - math.exp(-T)


@pytest.mark.parametrize(("T", "x1", "x2"), [(0.5, 0.1220984503, 0.01149718144), (1, 0.2336124405, 0.05038561852),
                                             (2, 0.3264228249, 0.1038891572), (5, 0.3663799236, 0.1340169979)])
def test_hodgkin_rushton_away_from_the_site(T, x1, x2):
    """H-R values at X = 1, 2 (computed; formula Hodgkin & Rushton 1946 [HodgkinRushton1946] [MEM])."""
    assert hodgkin_rushton(1.0, T) == pytest.approx(x1, rel=1e-9)
    assert hodgkin_rushton(2.0, T) == pytest.approx(x2, rel=1e-9)


@pytest.mark.parametrize(("X", "t_half"), [(0, 0.2274682116), (1, 0.7398186465), (2, 1.243256822),
                                           (3, 1.744934933), (4, 2.245937509), (6, 3.247084836)])
def test_half_time_table(X, t_half):
    """Half of the local final value e^(−X) is reached at T_half (computed from Hodgkin & Rushton
    1946 [HodgkinRushton1946])."""
    assert hodgkin_rushton(X, t_half) / math.exp(-X) == pytest.approx(0.5, abs=2e-10)


@pytest.mark.parametrize(("L", "column"), [
    (0.5, [0.1629208867, 0.4394235514, 0.6599931969, 0.8749184873]),
    (1.0, [0.2629635738, 0.5374585210, 0.7198225011, 0.8969294391]),
    (2.0, [0.3328586273, 0.6581489934, 0.8140014926, 0.9344959202]),
    (math.inf, [0.3452791540, 0.6826894921, 0.8427007929, 0.9544997361]),
])
def test_finite_sealed_charging_table(L, column):
    """Current step into a sealed cylinder at X = 0, V(0,T)/V(0,∞) (computed from the eigenfunction
    series of Rall 1969 [Rall1969])."""
    r = charge(cylinder(L), CurrentStep(1e-10), np.array([0.1, 0.5, 1.0, 2.0]) * 0.02, [0.0])
    np.testing.assert_allclose(r.voltage[:, 0] / r.steady_state[0], column, rtol=1e-9)
    assert r.error_bound < 1e-9 * r.steady_state[0]


@pytest.mark.parametrize(("L", "rho", "column"), [
    (1.0, 5.0, [0.2124536900, 0.5166979813, 0.7082003630, 0.8926645328]),
    (1.5, 10.0, [0.2685445896, 0.5989840481, 0.7678738291, 0.9152664747]),
])
def test_ball_and_stick_soma_step(L, rho, column):
    """Soma voltage for a current step, V(T)/V(∞) (computed; Rall 1969 [Rall1969])."""
    model = BallAndStick.with_conductance_ratio(cylinder(L), rho)
    assert model.conductance_ratio == pytest.approx(rho, rel=1e-12)
    r = charge(model, CurrentStep(1e-10), np.array([0.1, 0.5, 1.0, 2.0]) * 0.02, [0.0])
    np.testing.assert_allclose(r.voltage[:, 0] / r.steady_state[0], column, rtol=1e-9)
    # the final value is I / (G_S + G_D) (Rall 1959 [Rall1959])
    g_d = 1 / cable.input_resistance(cylinder(L).semi_infinite_input_resistance, L, 0.0)
    assert r.steady_state[0] == pytest.approx(1e-10 / (model.soma_conductance + g_d), rel=1e-12)
    assert r.coefficients[1, 0] / r.coefficients[0, 0] == pytest.approx(
        {5.0: 0.2033855102, 10.0: 0.3957138258}[rho], rel=1e-9)


def test_demo_tree_ball_and_stick_time_constants():
    """Demo tree + 20 µm soma: ρ = 7.596794008, τ1..3 = 2.158878925, 0.5802766523, 0.2580943240 ms
    (computed; demo tree of docs/sources.md, Rall 1969 [Rall1969])."""
    trunk = Cylinder(RM, RI, CM, 4e-6, 0.9954565254 * cable.length_constant(RM, RI, 4e-6))
    model = BallAndStick(trunk, 20e-6)
    assert model.conductance_ratio == pytest.approx(7.596794008, rel=1e-8)
    r = charge(model, CurrentStep(1e-10), [0.01], [0.0], modes=4)
    np.testing.assert_allclose(r.time_constants[1:], [2.158878925e-3, 0.5802766523e-3, 0.2580943240e-3], rtol=1e-8)


def test_steady_state_matches_cable_module():
    """Large T gives the steady state of cabletheory.cable (input and transfer resistance)."""
    for B in (0.0, 0.5, 2.0, math.inf):
        c = cylinder(1.3, B)
        x = np.array([0.0, 0.3, 0.9]) * c.length
        r = charge(c, CurrentStep(2e-10, 0.3 * c.length), [60 * c.time_constant], x)
        X = x / c.length_constant
        expected = 2e-10 * cable.transfer_resistance(c.semi_infinite_input_resistance, c.electrotonic_length,
                                                     c.end_conductance_ratio, X, 0.3 * c.electrotonic_length)
        np.testing.assert_allclose(r.voltage[0], expected, rtol=1e-12)
        np.testing.assert_allclose(r.steady_state, expected, rtol=1e-12)
        clamp = charge(c, VoltageStep(0.01), [60 * c.time_constant], x)
        np.testing.assert_allclose(clamp.voltage[0], 0.01 * cable.voltage_ratio(X, c.electrotonic_length,
                                                                                c.end_conductance_ratio),
                                   rtol=1e-12)


# ---------------------------------------------------------------- Talbot inversion (mpmath)
def talbot(F, T):
    with mp.workdps(30):
        return float(mp.invertlaplace(F, T, method="talbot"))


@pytest.mark.parametrize("T", [0.05, 0.4, 1.5])
def test_sealed_cylinder_against_talbot(T):
    """tanh L·coth(L√(1+s))/(s√(1+s)) is V(0)/V(0,∞) of a sealed cylinder (Laplace transform of the
    cable equation; inverted by mpmath's Talbot method)."""
    L = 0.8
    v, _, _ = current_response([0.0], 0.0, [T], L, 0.0)
    expected = talbot(lambda s: mp.tanh(L) / (mp.tanh(L * mp.sqrt(1 + s)) * s * mp.sqrt(1 + s)), T)
    assert v[0, 0] * math.tanh(L) == pytest.approx(expected, abs=1e-11)


@pytest.mark.parametrize("T", [0.03, 0.5, 2.0])
def test_green_function_soma_leaky_end_against_talbot(T):
    """Ball and stick with a leaky end, input at X0, voltage at X: φ(X<)ψ(X>)/(s·Wr) with
    φ = cosh qX + yq sinh qX, ψ = cosh q(L−X) + (B/q) sinh q(L−X), Wr = yq²ψ(0) − ψ'(0), q = √(1+s)."""
    L, B, y, X, X0 = 1.1, 0.6, 0.35, 0.8, 0.3

    def F(s):
        q = mp.sqrt(1 + s)

        def psi(x):
            return mp.cosh(q * (L - x)) + B / q * mp.sinh(q * (L - x))

        wr = y * q * q * psi(0) + q * mp.sinh(q * L) + B * mp.cosh(q * L)
        return (mp.cosh(q * X0) + y * q * mp.sinh(q * X0)) * psi(X) / (s * wr)

    v, bound, _ = current_response([X], X0, [T], L, B, y)
    assert v[0, 0] == pytest.approx(talbot(F, T), abs=1e-10)
    assert bound.max() <= 1e-10


@pytest.mark.parametrize("T", [0.02, 0.3, 1.0])
def test_clamp_leaky_end_against_talbot(T):
    """Voltage clamp at X = 0, leaky far end: ψ(X)/(s ψ(0)) (Laplace transform, Talbot inversion)."""
    L, B, X = 0.9, 1.7, 0.35

    def F(s):
        q = mp.sqrt(1 + s)
        return (mp.cosh(q * (L - X)) + B / q * mp.sinh(q * (L - X))) / (s * (mp.cosh(q * L) + B / q * mp.sinh(q * L)))

    v, _, _ = clamp_response([X], [T], L, B)
    assert v[0, 0] == pytest.approx(talbot(F, T), abs=1e-10)
    assert semi_infinite_clamp(X, T) == pytest.approx(talbot(lambda s: mp.exp(-X * mp.sqrt(1 + s)) / s, T),
                                                      abs=1e-12)


@pytest.mark.parametrize(("d", "T", "a"), [(0.0, 0.2, 0.25), (0.5, 1.0, 1.0), (1.2, 2.0, 3.0), (0.3, 0.05, 0.05)])
def test_alpha_point_source_against_talbot(d, T, a):
    """Alpha current on an infinite cable: (e/a)·e^{−d√(1+s)}/(2√(1+s)(s + 1/a)²) (Talbot), including
    a = 1 where the closed form's parameter b = 1 − 1/a vanishes."""
    expected = talbot(lambda s: mp.e / a * mp.exp(-d * mp.sqrt(1 + s)) / (2 * mp.sqrt(1 + s) * (s + 1 / a) ** 2), T)
    assert point_source_alpha(d, T, a) == pytest.approx(expected, abs=1e-12)


def test_alpha_on_finite_cylinder_against_talbot():
    """Alpha current at X0 of a killed-end cylinder, read at X (eigen-series and images both)."""
    L, X, X0, a = 1.0, 0.2, 0.6, 0.15

    def F(s):
        q = mp.sqrt(1 + s)
        near, far = min(X, X0), max(X, X0)
        g = mp.cosh(q * near) * mp.sinh(q * (L - far)) / (q * mp.cosh(q * L))
        return g * mp.e / a / (s + 1 / a) ** 2

    T = np.array([0.004, 0.1, 0.8])
    v, _, _ = current_response([X], X0, T, L, math.inf, shape="alpha", time_to_peak=a)
    for i, t in enumerate(T):
        assert v[i, 0] == pytest.approx(talbot(F, float(t)), abs=1e-10)


def test_infinite_cable_si():
    """An infinite cable injected mid-cable reaches R∞/2·I (225.0790790 MΩ, computed; [CP])."""
    model = InfiniteCable(RM, RI, CM, DIAM)
    r = charge(model, CurrentStep(1e-10, 1e-4), [0.0, 0.02, 50.0], [1e-4, -2e-4])
    assert r.voltage[0].tolist() == [0.0, 0.0]
    assert r.voltage[2, 0] == pytest.approx(1e-10 * 225.0790790e6, rel=1e-9)
    assert r.voltage[1, 0] == pytest.approx(1e-10 * 225.0790790e6 * 0.8427007929, rel=1e-9)
    alpha = charge(model, AlphaCurrent(1e-10, 0.002, 0.0), [0.01], [0.0])
    assert alpha.voltage[0, 0] > 0
    assert alpha.steady_state is None


def test_semi_infinite_is_the_end_injected_hodgkin_rushton():
    """--length inf: V(X,T) = I R∞ · H-R curve (Hodgkin & Rushton 1946 [HodgkinRushton1946] [MEM])."""
    c = cylinder(math.inf)
    r = charge(c, CurrentStep(1e-10), [0.02], [0.0, c.length_constant])
    np.testing.assert_allclose(r.voltage[0] / (1e-10 * c.semi_infinite_input_resistance),
                               [0.8427007929, 0.2336124405], rtol=1e-9)


def test_steady_green_equals_cable_transfer_resistance():
    """steady_green with no soma is transfer_resistance / R∞ (cable.py, Rall & Rinzel 1973 [RallRinzel1973])."""
    X = np.linspace(0, 1.4, 8)
    for B in (0.0, 0.4, math.inf):
        np.testing.assert_allclose(steady_green(X, 0.5, 1.4, B),
                                   cable.transfer_resistance(1.0, 1.4, B, X, 0.5), rtol=1e-13)
