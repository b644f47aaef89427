"""Physical identities of the one-cylinder closed forms, and independent re-evaluations.

Independent references: mpmath (the textbook sinh/cosh forms at 50 digits, which would
overflow in floating point) and scipy.integrate.solve_bvp (the steady-state cable equation
V'' = V solved numerically with the end conditions, no closed form involved).
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cabletheory import cable

lengths = st.floats(min_value=1e-3, max_value=50.0)
ratios = st.floats(min_value=0.0, max_value=1e3)
fractions = st.floats(min_value=0.0, max_value=1.0)
PROPERTY = settings(derandomize=True, deadline=None, max_examples=200)


@PROPERTY
@given(L=lengths)
def test_b_zero_is_sealed_and_b_infinite_is_killed(L):
    """Rall 1959 [Rall1959]: sealed end R∞ coth L; killed end R∞ tanh L; B → ∞ approaches killed."""
    assert float(cable.input_resistance(1.0, L, 0.0)) == pytest.approx(1 / math.tanh(L), rel=1e-12)
    assert float(cable.input_resistance(1.0, L, math.inf)) == pytest.approx(math.tanh(L), rel=1e-12)
    assert float(cable.input_resistance(1.0, L, 1e12)) == pytest.approx(math.tanh(L), rel=1e-9)


@PROPERTY
@given(L=lengths, fraction=fractions)
def test_b_one_is_the_semi_infinite_cable(L, fraction):
    """B = 1 terminates the cylinder with its own characteristic conductance (Rall 1959 [Rall1959]):
    input resistance R∞ and profile e^(-X) for every L."""
    assert float(cable.input_resistance(1.0, L, 1.0)) == pytest.approx(1.0, rel=1e-13)
    x = fraction * L
    assert float(cable.voltage_ratio(x, L, 1.0)) == pytest.approx(math.exp(-x), rel=1e-12)


@PROPERTY
@given(L=lengths, b=ratios, f1=fractions, f2=fractions)
def test_transfer_resistance_is_reciprocal(L, b, f1, f2):
    """Reciprocity of a passive linear network (Rall & Rinzel 1973 [RallRinzel1973]): R(X, X0) = R(X0, X)."""
    x, x0 = f1 * L, f2 * L
    assert float(cable.transfer_resistance(1.0, L, b, x, x0)) == pytest.approx(
        float(cable.transfer_resistance(1.0, L, b, x0, x)), rel=1e-13)


@PROPERTY
@given(L=lengths, b=ratios, fraction=fractions)
def test_transfer_from_origin_is_input_resistance_times_profile(L, b, fraction):
    x = fraction * L
    expected = cable.input_resistance(1.0, L, b) * cable.voltage_ratio(x, L, b)
    assert float(cable.transfer_resistance(1.0, L, b, x)) == pytest.approx(float(expected), rel=1e-12)


@PROPERTY
@given(L=lengths, b=st.sampled_from([0.0, 0.3, 1.0, 7.0, math.inf]))
def test_profile_decreases_monotonically(L, b):
    """Steady-state voltage falls away from the input for sealed, leaky and killed ends."""
    x = np.linspace(0.0, L, 64)
    v = cable.voltage_ratio(x, L, b)
    assert v[0] == pytest.approx(1.0, rel=1e-14)
    assert np.all(np.diff(v) <= 1e-15)
    assert np.all(v >= 0.0)


@PROPERTY
@given(L=lengths, b=ratios)
def test_input_resistance_lies_between_killed_and_sealed(L, b):
    r = float(cable.input_resistance(1.0, L, b))
    assert math.tanh(L) * (1 - 1e-12) <= r <= (1 + 1e-12) / math.tanh(L)


@PROPERTY
@given(L=lengths, b=ratios, fraction=fractions)
def test_impedance_tends_to_the_dc_value(L, b, fraction):
    """As f → 0 the sinusoidal results reduce to the steady-state ones."""
    x = fraction * L
    for f in (0.0, 1e-9):
        z_in = complex(cable.input_impedance(1.0, L, b, f, 0.02))
        assert z_in.real == pytest.approx(float(cable.input_resistance(1.0, L, b)), rel=1e-9)
        assert abs(z_in.imag) <= 1e-9 * abs(z_in)
        z_x = complex(cable.transfer_impedance(1.0, L, b, f, 0.02, x))
        assert z_x.real == pytest.approx(float(cable.transfer_resistance(1.0, L, b, x)), rel=1e-9, abs=1e-300)


def _sealed_or_leaky_mp(L, b, f, tau, x):
    """The textbook cosh/sinh forms evaluated with mpmath at 50 digits (Rall & Rinzel 1973 [RallRinzel1973];
    Koch 1999 ch. 2 [Koch1999] [MEM]): Z_in = (R∞/q)(1 + (B/q) tanh qL)/((B/q) + tanh qL)."""
    with mpmath.workdps(50):
        q = mpmath.sqrt(1 + 2j * mpmath.pi * f * tau)
        bq = mpmath.mpf(b) / q
        z_in = (1 / q) * (1 + bq * mpmath.tanh(q * L)) / (bq + mpmath.tanh(q * L))
        ratio = ((mpmath.cosh(q * (L - x)) + bq * mpmath.sinh(q * (L - x)))
                 / (mpmath.cosh(q * L) + bq * mpmath.sinh(q * L)))
        return complex(z_in), complex(ratio)


@pytest.mark.parametrize("L", [0.01, 0.7, 3.0, 40.0, 400.0, 1000.0])
@pytest.mark.parametrize("b", [0.0, 0.25, 1.0, 4.0])
@pytest.mark.parametrize("f", [0.0, 10.0, 1e3, 1e5])
def test_against_mpmath_including_long_cables_and_high_frequency(L, b, f):
    """Stable forms must match the plain formulas at 50 digits where floats would overflow
    (cosh 1000 ≈ 1e434), up to L = 1000 and f = 100 kHz."""
    tau = 0.02
    x = 0.3 * L if L < 100 else 2.0  # far positions underflow to 0 in both
    z_ref, ratio_ref = _sealed_or_leaky_mp(L, b, f, tau, x)
    z = complex(cable.input_impedance(1.0, L, b, f, tau))
    assert np.isfinite(z)
    assert abs(z - z_ref) <= 1e-12 * abs(z_ref)
    ratio = complex(cable.transfer_impedance(1.0, L, b, f, tau, x) / z)
    assert abs(ratio - ratio_ref) <= 1e-11 * abs(ratio_ref) + 1e-300


def test_killed_end_against_mpmath_for_short_and_long_cables():
    """sinh(L-X)/sinh L at 50 digits; the expm1 form keeps short killed cables accurate."""
    for L in (1e-6, 1e-3, 0.5, 30.0, 1000.0):
        x = L / 3
        with mpmath.workdps(50):
            expected = float(mpmath.sinh(L - x) / mpmath.sinh(L))
            r_expected = float(mpmath.tanh(L))
        assert float(cable.voltage_ratio(x, L, math.inf)) == pytest.approx(expected, rel=1e-12)
        assert float(cable.input_resistance(1.0, L, math.inf)) == pytest.approx(r_expected, rel=1e-12)


@pytest.mark.parametrize(("L", "b"), [(0.5, 0.0), (1.3, 0.4), (2.0, 3.0), (0.8, math.inf)])
def test_profile_against_scipy_boundary_value_solver(L, b):
    """Independent route: solve V'' = V on [0, L] with V(0) = 1 and the far-end condition
    V'(L) = -B V(L) (V(L) = 0 when killed) by scipy.integrate.solve_bvp."""
    from scipy.integrate import solve_bvp

    def rhs(_x, y):
        return np.vstack([y[1], y[0]])

    def bc(ya, yb):
        far = yb[0] if math.isinf(b) else yb[1] + b * yb[0]
        return np.array([ya[0] - 1.0, far])

    mesh = np.linspace(0.0, L, 50)
    sol = solve_bvp(rhs, bc, mesh, np.vstack([np.ones_like(mesh), -np.ones_like(mesh)]), tol=1e-10,
                    max_nodes=100000)
    assert sol.success
    x = np.linspace(0.0, L, 11)
    assert cable.voltage_ratio(x, L, b) == pytest.approx(sol.sol(x)[0], rel=1e-7, abs=1e-9)
    # input resistance in units of R∞ is -1/V'(0) for V(0) = 1 (current I = -V'(0)/r_a λ)
    assert float(cable.input_resistance(1.0, L, b)) == pytest.approx(-1.0 / sol.sol(0.0)[1], rel=1e-6)


def test_arrays_broadcast():
    L = np.array([0.5, 1.0, 2.0])
    b = np.array([[0.0], [1.0], [math.inf]])
    r = cable.input_resistance(2.0, L, b)
    assert r.shape == (3, 3)
    assert r[1] == pytest.approx([2.0, 2.0, 2.0])
    assert r[0] == pytest.approx(2.0 / np.tanh(L))
    assert r[2] == pytest.approx(2.0 * np.tanh(L))
