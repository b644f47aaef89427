"""Eigenvalues, time constants and coefficients against published and vetted values.

Sources: Rall W (1969) Biophys. J. 9:1483 (sealed-cylinder time constants, peeling) [Rall1969]; values
computed from its formulas with mpmath [mpmath2023] (named beside each table; keys of docs/sources.md).
"""

import math

import numpy as np
import pytest

from cabletheory import eigen
from cabletheory.errors import InputError


@pytest.mark.parametrize(("L", "ratios"), [
    (0.5, [40.47841760, 158.9136704, 356.3057584]),
    (1.0, [10.86960440, 40.47841760, 89.82643961]),
    (1.5, [5.386490845, 18.54596338, 40.47841760]),
    (2.0, [3.467401100, 10.86960440, 23.20660990]),
])
def test_sealed_time_constants_rall_1969(L, ratios):
    """τ0/τn = 1 + (nπ/L)² (Rall 1969 [Rall1969]; computed)."""
    tau = eigen.time_constants(0.02, L, 0.0, 4)
    assert tau[0] == pytest.approx(0.02, rel=1e-15)
    np.testing.assert_allclose(tau[0] / tau[1:], ratios, rtol=1e-9)


@pytest.mark.parametrize(("ratio", "L"), [(3, 2.221441469), (5, 1.570796327), (10, 1.047197551),
                                          (20, 0.7207307841)])
def test_peeling_rall_1969(ratio, L):
    """L = π/√(τ0/τ1 − 1) (Rall 1969 [Rall1969] abstract; computed)."""
    assert eigen.peeling_electrotonic_length(ratio) == pytest.approx(L, rel=1e-9)


def test_peeling_round_trip_and_coefficient_estimate():
    """Both estimates of L (Rall 1969 [Rall1969]): τ ratio and C1/C0 = 2/(1+π²) at L = 1 (computed)."""
    tau = eigen.time_constants(1.0, 1.3, 0.0, 3)
    assert eigen.peeling_electrotonic_length(tau[0] / tau[2], mode=2) == pytest.approx(1.3, rel=1e-12)
    assert eigen.coefficient_electrotonic_length(0.1839993367) == pytest.approx(1.0, rel=1e-9)
    with pytest.raises(InputError):
        eigen.peeling_electrotonic_length(0.5)


@pytest.mark.parametrize(("L", "B", "origin", "expected"), [
    (1.0, math.inf, "sealed", [3.467401100, 23.20660990, 62.68502751]),
    (2.0, math.inf, "sealed", [1.616850275, 6.551652476, 16.42125688]),
    (1.0, 0.0, "clamped", [3.467401100, 23.20660990, 62.68502751]),
    (2.0, 0.0, "clamped", [1.616850275, 6.551652476, 16.42125688]),
    (1.0, math.inf, "clamped", [10.86960440, 40.47841760]),
])
def test_killed_and_clamped_time_constants(L, B, origin, expected):
    """τm/τn for killed ends and voltage clamp (computed; Rall 1969 [Rall1969] derives these time
    constants, its exact equations are recalled from memory [MEM])."""
    alpha = eigen.eigenvalues(L, B, len(expected), origin=origin)
    np.testing.assert_allclose(1 + alpha**2, expected, rtol=1e-9)


BALL_AND_STICK = [  # L, ρ, α1..3, C0, C1 — computed (Rall 1969 [Rall1969])
    (1, 1, [2.124399385, 4.970647600, 8.016334927], 0.8646647168, 0.1261786720),
    (1, 5, [2.745502743, 5.578830082, 8.511022013], 0.7931077428, 0.1613066229),
    (1, 10, [2.922580840, 5.863213357, 8.832618940], 0.7784660520, 0.1559937099),
    (0.5, 5, [5.362856424, 10.98080117, 16.84961905], 0.9360544490, 0.05210307147),
    (1.5, 5, [1.876121710, 3.788057819, 5.746428583], 0.6461384568, 0.2592302700),
    (1.5, 10, [1.976382173, 3.959375132, 5.953667013], 0.6260005019, 0.2477170535),
    (2, 10, [1.499037430, 3.000793862, 4.507432016], 0.5058333061, 0.3054727779),
    (1, math.inf, [math.pi, 2 * math.pi, 3 * math.pi], 0.7615941560, 0.1401328195),
]


@pytest.mark.parametrize(("L", "rho", "alphas", "c0", "c1"), BALL_AND_STICK)
def test_ball_and_stick_table(L, rho, alphas, c0, c1):
    """tan αL = −α tanh L/ρ and soma step coefficients (Rall 1969 [Rall1969]; computed)."""
    alpha, c = eigen.ball_and_stick_coefficients(L, rho, 4)
    assert alpha[0] == 0.0
    np.testing.assert_allclose(alpha[1:], alphas, rtol=1e-9)
    assert c[0] == pytest.approx(c0, rel=1e-9)
    assert c[1] == pytest.approx(c1, rel=1e-9)


def test_ball_and_stick_closed_form_coefficients():
    """C_n = 2(1+ρ)/[(1+α²)(1 + ρL coth L sec² αL)] (residues derived from Rall 1969 [Rall1969])."""
    L, rho = 1.3, 4.0
    alpha, c = eigen.ball_and_stick_coefficients(L, rho, 8)
    k = rho * L / math.tanh(L)
    assert c[0] == pytest.approx((1 + rho) / (1 + k), rel=1e-13)
    np.testing.assert_allclose(c[1:], 2 * (1 + rho) / ((1 + alpha[1:] ** 2) * (1 + k / np.cos(alpha[1:] * L) ** 2)),
                               rtol=1e-11)


def test_small_rho_limit():
    """ρ → 0: α1 L → π/2; at ρ = 1e-6, L = 1: 1.570797163 (computed)."""
    assert eigen.eigenvalues(1.0, 0.0, 2, conductance_ratio=1e-6)[1] == pytest.approx(1.570797163, rel=1e-9)


def test_johnston_1981_ca3_values():
    """Johnston (1981) CA3 means (L, ρ) = (0.94, 1.51): τ0/τ1 = 6.855225442 ([Johnston1981]; computed)."""
    alpha, c = eigen.ball_and_stick_coefficients(0.94, 1.51, 2)
    assert 1 + alpha[1] ** 2 == pytest.approx(6.855225442, rel=1e-9)
    assert c[1] / c[0] == pytest.approx(0.1523926029, rel=1e-9)


CASES = [(B, y, "sealed") for B in (0.0, 0.3, 1.0, 4.0, math.inf) for y in (0.0, 0.2)]
CASES += [(B, 0.0, "clamped") for B in (0.0, 0.3, 1.0, 4.0, math.inf)]


@pytest.mark.parametrize(("B", "y", "origin"), CASES)
def test_roots_many_and_verified(B, y, origin):
    """Past the brentq roots (vectorised bisection) every root is in its branch and F vanishes."""
    L = 1.7
    alpha = eigen._eigenvalues(L, B, 300, origin, y)
    assert np.all(np.diff(alpha) > 0)
    lower = eigen.branch_lower_bounds(300, L, origin=origin)
    assert np.all(alpha >= lower)
    f = eigen.eigenvalue_function(alpha, L, B, origin=origin, soma_ratio=y)
    assert np.all(np.abs(f) < 1e-10 * (1 + alpha) ** 2)


def test_residues_sum_to_steady_state():
    """Σ r_n/μ_n = g(X, X0) (steady state), a completeness check of the mode norms (soma + leaky end)."""
    from cabletheory.transient import steady_green

    L, B, y = 1.2, 0.7, 0.4
    alpha = eigen._eigenvalues(L, B, 20000, "sealed", y)
    r = eigen.mode_residues(alpha, np.array([0.0, 0.5, 1.2]), 0.3, L, soma_ratio=y)
    total = np.sum(r / (1 + alpha**2)[:, None], axis=0)
    np.testing.assert_allclose(total, steady_green(np.array([0.0, 0.5, 1.2]), 0.3, L, B, y), atol=1e-4)


def test_tail_bound_is_a_bound():
    """The rigorous tail bound exceeds the actual tail of the step series (sealed, soma, leaky)."""
    for B, y in [(0.0, 0.0), (0.5, 0.0), (0.0, 0.3), (math.inf, 0.1)]:
        L = 0.8
        alpha = eigen._eigenvalues(L, B, 4000, "sealed", y)
        r = np.abs(eigen.mode_residues(alpha, 0.0, 0.0, L, soma_ratio=y))
        for T in (1e-3, 0.05, 1.0):
            terms = r * np.exp(-(1 + alpha**2) * T) / (1 + alpha**2)
            for n in (1, 5, 40):
                assert terms[n:].sum() <= eigen.tail_bound(n, T, L, kind="step")


def test_bad_inputs():
    with pytest.raises(InputError):
        eigen.eigenvalues(-1.0, 0.0, 3)
    with pytest.raises(InputError):
        eigen.eigenvalues(1.0, -0.5, 3)
    with pytest.raises(InputError):
        eigen.eigenvalues(1.0, 0.0, 3, origin="middle")
    with pytest.raises(InputError):
        eigen.soma_ratio(1.0, conductance_ratio=1.0, semi_infinite_conductance_ratio=2.0)


@pytest.mark.parametrize("B", [0.0, 0.3, 1.0, 7.0, 1e300, math.inf])
def test_end_weights_carry_the_ratio_with_the_larger_weight_one(B):
    """w_k/w_s = B and max(w_s, w_k) = 1, exact at sealed (1, 0) and killed (0, 1); one definition
    serves eigen, images and the Laplace domain (a fact of the representation [CP])."""
    from cabletheory.kernels import end_weights

    w_s, w_k = end_weights(B)
    assert max(w_s, w_k) == 1.0
    assert (w_k / w_s if w_s else math.inf) == pytest.approx(B, rel=1e-15)
    if B == 0.0:
        assert (w_s, w_k) == (1.0, 0.0)
    if math.isinf(B):
        assert (w_s, w_k) == (0.0, 1.0)


@pytest.mark.parametrize("B", [-0.1, math.nan])
def test_eigenvalues_refuse_a_negative_or_nan_end_ratio(B):
    with pytest.raises(InputError, match="end conductance ratio B"):
        eigen.time_constants(0.02, 1.0, B, 3)
