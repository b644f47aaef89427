"""The inverse problem (cabletheory.inverse) against published and vetted values.

Sources: Rall W (1969) Biophys. J. 9:1483 (peeling, time constants and electrotonic length)
[Rall1969]; Johnston D (1981) Cell. Mol. Neurobiol. 1:41 (CA3 cells, L and ρ from the first two
exponentials) [Johnston1981]; values computed from their formulas with mpmath [mpmath2023] (named
beside each table; keys of docs/sources.md). Forward problems are recomputed with cabletheory.eigen,
an independent route (root finding on the eigenvalue equation and mode norms) from the closed-form
inversion under test.
"""

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cabletheory import eigen, inverse
from cabletheory.errors import InputError


# --------------------------------------------------------------------------------------
# sealed cylinder
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(("ratio", "L"), [(3, 2.221441469), (5, 1.570796327), (10, 1.047197551),
                                          (20, 0.7207307841)])
def test_cylinder_peeling_table(ratio, L):
    """L = π/√(τ0/τ1 − 1): peeling (Rall 1969 [Rall1969]), computed."""
    assert inverse.cylinder_length_from_time_constants(ratio) == pytest.approx(L, rel=1e-9)


def test_cylinder_peeling_worked_example():
    """τ0 = 20 ms, τ1 = 2 ms give L = π/3 = 1.047197551 (Rall 1969 [Rall1969])."""
    assert inverse.cylinder_length_from_time_constants(0.020 / 0.002) == pytest.approx(math.pi / 3, rel=1e-14)


@pytest.mark.parametrize(("L", "ratios"), [
    (0.5, [40.47841760, 158.9136704, 356.3057584]),
    (1.0, [10.86960440, 40.47841760, 89.82643961]),
    (2.0, [3.467401100, 10.86960440, 23.20660990]),
])
def test_cylinder_length_from_every_mode(L, ratios):
    """τ0/τn of a sealed cylinder (Rall 1969 [Rall1969], computed) give back L from modes 1, 2 and 3."""
    for mode, ratio in enumerate(ratios, start=1):
        assert inverse.cylinder_length_from_time_constants(ratio, mode) == pytest.approx(L, rel=1e-9)


def test_cylinder_length_from_coefficients():
    """C1/C0 = 2/(1+π²) = 0.1839993367 at L = 1 (computed, Rall 1969 [Rall1969]; C0 = 0.7615941560,
    C1 = 0.1401328195)."""
    assert inverse.cylinder_length_from_coefficients(0.1401328195 / 0.7615941560) == pytest.approx(1.0, rel=1e-9)


def test_pure_cylinder_estimates_agree_and_show_no_soma():
    """For a sealed cylinder C1/C0 = 2τ1/τ0 (derived from Rall 1969 [Rall1969]): κ = 1, both L agree, no finite ρ."""
    e = inverse.estimate_from_peeling(10.0, 0.2)
    assert e.cylinder_index == pytest.approx(1.0, rel=1e-15)
    assert e.cylinder_length_coefficients == pytest.approx(e.cylinder_length, rel=1e-14)
    assert e.cylinder_consistent is True
    assert e.solutions == ()
    assert any("no clear evidence of a soma" in n for n in e.notes)


@settings(derandomize=True, deadline=None, max_examples=40)
@given(L=st.floats(0.1, 5.0))
def test_cylinder_round_trip(L):
    """Forward with eigen (ρ = inf, the sealed cylinder; Rall 1969 [Rall1969]), inverse with both estimates."""
    alpha, coef = eigen.ball_and_stick_coefficients(L, math.inf, 3)
    e = inverse.estimate_from_peeling(1 + alpha[1] ** 2, coef[1] / coef[0],
                                      second_time_constant_ratio=1 + alpha[2] ** 2)
    assert e.cylinder_length == pytest.approx(L, rel=1e-12)
    assert e.cylinder_length_second == pytest.approx(L, rel=1e-12)
    assert e.cylinder_length_coefficients == pytest.approx(L, rel=1e-10)
    assert e.cylinder_index == pytest.approx(1.0, rel=1e-10)


def test_cylinder_slope_matches_finite_difference():
    """dL/d(τ0/τ1) = −L/(2(τ0/τ1 − 1)), differentiating Rall's L = π/√(r − 1)."""
    r, h = 8.0, 1e-6
    e = inverse.estimate_from_peeling(r)
    numeric = (inverse.cylinder_length_from_time_constants(r + h)
               - inverse.cylinder_length_from_time_constants(r - h)) / (2 * h)
    assert e.cylinder_length_slope == pytest.approx(numeric, rel=1e-6)


# --------------------------------------------------------------------------------------
# ball and stick
# --------------------------------------------------------------------------------------
def test_inverse_problem_check_value():
    """Computed ball-and-stick row L = 1, ρ = 5 (Rall 1969 [Rall1969]): (8.537785309, 0.2033855102) -> (1, 5)."""
    solutions = inverse.ball_and_stick_from_peeling(8.537785309, 0.2033855102)
    assert [(s.electrotonic_length, s.conductance_ratio) for s in solutions] == [
        (pytest.approx(1.0, rel=1e-9), pytest.approx(5.0, rel=1e-9))]
    s = solutions[0]
    assert abs(s.time_constant_residual) < 1e-12
    assert abs(s.coefficient_residual) < 1e-12
    # the predicted next mode and C0, C1: computed row L = 1, ρ = 5
    assert s.second_time_constant_ratio == pytest.approx(32.12334509, rel=1e-8)
    assert s.coefficients[:2] == (pytest.approx(0.7931077428, rel=1e-8), pytest.approx(0.1613066229, rel=1e-8))


BALL_AND_STICK = [  # L, ρ, α1, C0, C1 — computed (Rall 1969 [Rall1969]; Durand 1984 [Durand1984] [MEM])
    (1, 1, 2.124399385, 0.8646647168, 0.1261786720),
    (1, 5, 2.745502743, 0.7931077428, 0.1613066229),
    (1, 10, 2.922580840, 0.7784660520, 0.1559937099),
    (0.5, 5, 5.362856424, 0.9360544490, 0.05210307147),
    (1.5, 5, 1.876121710, 0.6461384568, 0.2592302700),
    (1.5, 10, 1.976382173, 0.6260005019, 0.2477170535),
    (2, 10, 1.499037430, 0.5058333061, 0.3054727779),
]


@pytest.mark.parametrize(("L", "rho", "alpha1", "c0", "c1"), BALL_AND_STICK)
def test_ball_and_stick_table_inverted(L, rho, alpha1, c0, c1):
    """Every computed ball-and-stick row: (1 + α1², C1/C0) gives back (L, ρ)."""
    (s,) = inverse.ball_and_stick_from_peeling(1 + alpha1**2, c1 / c0)
    assert s.electrotonic_length == pytest.approx(L, rel=1e-8)
    assert s.conductance_ratio == pytest.approx(rho, rel=1e-7)


@pytest.mark.parametrize(("L", "rho", "ratio", "c_ratio"), [
    (0.94, 1.51, 6.855225442, 0.1523926029),
    (0.96, 2.44, 7.647598686, 0.1779798937),
])
def test_johnston_1981_ca3(L, rho, ratio, c_ratio):
    """Johnston (1981) CA3 means [Johnston1981]: L = 0.94, ρ = 1.51 (exact two-exponential
    method) and L = 0.96, ρ = 2.44 (Gorman–Mirolli-type); the peeled values those imply are
    computed with the ball-and-stick equations (Rall 1969 [Rall1969]). τ0 = 23.6 ms, τ1 = 3.442629305 ms
    for the first."""
    (s,) = inverse.ball_and_stick_from_peeling(ratio, c_ratio)
    assert s.electrotonic_length == pytest.approx(L, rel=1e-8)
    assert s.conductance_ratio == pytest.approx(rho, rel=1e-7)


def test_johnston_time_constants_in_seconds():
    """τ0 = 23.6 ms and τ1 = 3.442629305 ms (computed from Johnston 1981 [Johnston1981])."""
    e = inverse.estimate_from_peeling(23.6e-3 / 3.442629305e-3, 0.1523926029)
    (s,) = e.solutions
    assert (s.electrotonic_length, s.conductance_ratio) == (pytest.approx(0.94, rel=1e-8),
                                                            pytest.approx(1.51, rel=1e-7))
    assert e.cylinder_index < 1
    assert e.cylinder_consistent is False
    assert any("evidence of a soma" in n for n in e.notes)


def test_coefficient_ratio_is_not_monotone_in_rho():
    """Computed: at L = 1, ρ = 2, 3, 5, 7, 10, 20 give these C1/C0 (forward, eigen)."""
    expected = [0.1841685391, 0.1972825536, 0.2033855102, 0.2028834290, 0.2003860149, 0.1943295458]
    got = []
    for rho in (2, 3, 5, 7, 10, 20):
        _, coef = eigen.ball_and_stick_coefficients(1.0, rho, 2)
        got.append(coef[1] / coef[0])
    np.testing.assert_allclose(got, expected, rtol=1e-9)


def test_two_rho_for_one_coefficient_ratio_at_known_length():
    """Computed: at L = 1, ρ = 7 gives C1/C0 = 0.2028834290, and ρ = 3 and 5 give
    0.1972825536 and 0.2033855102, so a second ρ in (3, 5) has the same C1/C0. Both are returned and
    each reproduces C1/C0 through eigen.ball_and_stick_coefficients."""
    rhos = inverse.conductance_ratios_at_length(1.0, 0.2028834290)
    assert len(rhos) == 2
    assert 3 < rhos[0] < 5
    assert rhos[1] == pytest.approx(7.0, rel=1e-8)
    for rho in rhos:
        _, coef = eigen.ball_and_stick_coefficients(1.0, rho, 2)
        assert coef[1] / coef[0] == pytest.approx(0.2028834290, rel=1e-9)


def test_time_constant_ratio_separates_the_two_rho():
    """The two ρ of the previous test have different τ0/τ1, so (τ0/τ1, C1/C0) picks one (a fitter
    needs both τ0/τ1 and C1/C0)."""
    for rho in inverse.conductance_ratios_at_length(1.0, 0.2028834290):
        alpha, coef = eigen.ball_and_stick_coefficients(1.0, rho, 2)
        solutions = inverse.ball_and_stick_from_peeling(1 + alpha[1] ** 2, coef[1] / coef[0])
        assert [(s.electrotonic_length, s.conductance_ratio) for s in solutions] == [
            (pytest.approx(1.0, rel=1e-9), pytest.approx(rho, rel=1e-8))]


@settings(derandomize=True, deadline=None, max_examples=60)
@given(L=st.floats(0.1, 4.0), log_rho=st.floats(-2.0, 3.0))
def test_ball_and_stick_round_trip(L, log_rho):
    """Forward with eigen (Rall 1969 [Rall1969] eigenvalue equation, residues), inverse with the κ relation:
    exactly one solution, equal to the start."""
    rho = 10.0**log_rho
    alpha, coef = eigen.ball_and_stick_coefficients(L, rho, 2)
    solutions = inverse.ball_and_stick_from_peeling(1 + alpha[1] ** 2, coef[1] / coef[0])
    assert len(solutions) == 1
    assert solutions[0].electrotonic_length == pytest.approx(L, rel=1e-9)
    assert solutions[0].conductance_ratio == pytest.approx(rho, rel=1e-7)


@settings(derandomize=True, deadline=None, max_examples=40)
@given(L=st.floats(0.1, 4.0), log_rho=st.floats(-2.0, 3.0))
def test_cylinder_index_depends_on_theta_only(L, log_rho):
    """(τ0/τ1)(C1/C0)/2 = g(α1 L), checked against eigen's residues (independent route)."""
    alpha, coef = eigen.ball_and_stick_coefficients(L, 10.0**log_rho, 2)
    kappa = 0.5 * (1 + alpha[1] ** 2) * coef[1] / coef[0]
    assert inverse.index_function(alpha[1] * L) == pytest.approx(kappa, rel=1e-10)


def test_index_function_rises_from_zero_to_one():
    """g(π/2) = 0 (ρ -> 0), g(π) = 1 (the cylinder), increasing in between: hence at most one solution."""
    theta = np.linspace(math.pi / 2, math.pi, 20001)
    g = np.array([inverse.index_function(t) for t in theta])
    assert abs(g[0]) < 1e-15
    assert g[-1] == pytest.approx(1.0, rel=1e-15)
    assert np.all(np.diff(g) > 0)


def test_length_bounds_contain_every_ball_and_stick():
    """π/(2α1) < L < π/α1 for the first root (derived: α_n in ((n−½)π/L, nπ/L))."""
    for L, rho, alpha1, _, _ in BALL_AND_STICK:
        lo, hi = inverse.length_bounds(1 + alpha1**2)
        assert lo < L < hi
        del rho


# --------------------------------------------------------------------------------------
# no solution, bad input
# --------------------------------------------------------------------------------------
def test_no_ball_and_stick_above_the_cylinder():
    with pytest.raises(InputError, match=r"C1/C0 .* must lie in \(0, 2τ1/τ0\) = \(0, 0\.2\)"):
        inverse.ball_and_stick_from_peeling(10.0, 0.25)


@pytest.mark.parametrize("ratio", [1.0, 0.5, -3.0, math.inf, math.nan])
def test_time_constant_ratio_must_exceed_one(ratio):
    with pytest.raises(InputError, match="τ0/τ1"):
        inverse.ball_and_stick_from_peeling(ratio, 0.1)
    with pytest.raises(InputError, match="τ0/τ1"):
        inverse.estimate_from_peeling(ratio)


def test_neither_model_note():
    e = inverse.estimate_from_peeling(10.0, 0.3)
    assert e.solutions == ()
    assert e.cylinder_consistent is False
    assert any("neither a sealed cylinder" in n for n in e.notes)


def test_coefficient_ratio_beyond_any_cylinder_is_not_consistent():
    """C1/C0 = 2τ1/τ0 < 2 for every sealed cylinder (Rall 1969 [Rall1969]), so C1/C0 >= 2 never agrees."""
    e = inverse.estimate_from_peeling(1.05, 2.05, uncertainty=0.1)
    assert math.isnan(e.cylinder_length_coefficients)
    assert e.cylinder_consistent is False


def test_second_time_constant_must_be_shorter():
    with pytest.raises(InputError, match="τ0/τ2"):
        inverse.estimate_from_peeling(10.0, second_time_constant_ratio=5.0)


@pytest.mark.parametrize("bad", [0.0, 0.5, -0.1, math.nan])
def test_uncertainty_range(bad):
    with pytest.raises(InputError, match="uncertainty"):
        inverse.estimate_from_peeling(10.0, uncertainty=bad)


def test_sensitivity_rows():
    """τ1 ± 5 % moves the cylinder L as π/√(τ0/τ1 ∓ … − 1) (Rall 1969 [Rall1969]); ρ near a cylinder is fragile."""
    e = inverse.estimate_from_peeling(8.537785309, 0.2033855102)
    rows = {(p.changed, p.factor): p for p in e.sensitivity}
    assert set(rows) == {("tau1", 0.95), ("tau1", 1.05), ("C1", 0.95), ("C1", 1.05)}
    longer = rows[("tau1", 1.05)]
    assert longer.cylinder_length == pytest.approx(math.pi / math.sqrt(8.537785309 / 1.05 - 1), rel=1e-14)
    for p in e.sensitivity:
        for L, rho in p.solutions:
            alpha, coef = eigen.ball_and_stick_coefficients(L, rho, 2)
            assert 1 + alpha[1] ** 2 == pytest.approx(p.time_constant_ratio, rel=1e-9)
            assert coef[1] / coef[0] == pytest.approx(p.coefficient_ratio, rel=1e-9)


# --------------------------------------------------------------------------------------
# membrane properties
# --------------------------------------------------------------------------------------
def test_membrane_properties_recover_the_demo_tree():
    """Demo tree of docs/sources.md with a 20 µm soma, computed (Rall 1959 [Rall1959], 1964 [Rall1964]):
    L = 0.9954565254, ρ = 7.596794008, R_N = 185.1329030 MΩ, Rm = 20 000 Ω·cm², Ri = 200 Ω·cm,
    Cm = 1 µF/cm² give back d = 4 µm, λ = 1000 µm, ℓ = 995.4565254 µm, R∞ = 159.1549431 MΩ,
    G_S = 0.6283185307 nS, G_D = 4.773206449 nS, a 20 µm sphere and 12509.27563 µm² of dendrite."""
    p = inverse.membrane_properties(0.020, 0.9954565254, 7.596794008, input_resistance=185.1329030e6,
                                    membrane_capacitance=0.01, axial_resistivity=2.0)
    assert p.membrane_time_constant == 0.020
    assert p.membrane_resistivity == pytest.approx(2.0, rel=1e-15)  # 20 000 Ω·cm²
    assert p.diameter == pytest.approx(4e-6, rel=1e-8)
    assert p.length_constant == pytest.approx(1000e-6, rel=1e-8)
    assert p.length == pytest.approx(995.4565254e-6, rel=1e-8)
    assert p.semi_infinite_input_resistance == pytest.approx(159.1549431e6, rel=1e-8)
    assert p.soma_conductance == pytest.approx(0.6283185307e-9, rel=1e-8)
    assert p.dendrite_conductance == pytest.approx(4.773206449e-9, rel=1e-8)
    assert p.soma_diameter == pytest.approx(20e-6, rel=1e-8)
    assert p.membrane_area - p.soma_area == pytest.approx(12509.27563e-12, rel=1e-8)
    assert p.total_capacitance == pytest.approx(0.01 * p.membrane_area, rel=1e-14)


def test_membrane_properties_need_their_inputs():
    p = inverse.membrane_properties(0.02, 1.0, 5.0)
    assert p.membrane_resistivity is None
    assert p.semi_infinite_input_resistance is None
    p = inverse.membrane_properties(0.02, 1.0, 5.0, input_resistance=1e8)
    assert p.total_capacitance is not None
    assert p.membrane_area is None
    assert p.diameter is None
    assert set(inverse.CellProperties.needs) | {"electrotonic_length", "conductance_ratio"} == {
        f.name for f in dataclasses.fields(inverse.CellProperties)}


def test_membrane_properties_without_soma():
    """ρ = inf: the whole input conductance is the cylinder's, G_D = G∞ tanh L (Rall 1959 [Rall1959])."""
    p = inverse.membrane_properties(0.02, 1.0, math.inf, input_resistance=1e8)
    assert p.soma_conductance == 0.0
    assert p.semi_infinite_input_resistance == pytest.approx(1e8 * math.tanh(1.0), rel=1e-15)


@pytest.mark.parametrize(("kwargs", "field"), [
    ({"input_resistance": -1.0}, "input resistance"),
    ({"membrane_capacitance": 0.0}, "membrane capacitance"),
    ({"axial_resistivity": math.inf}, "axial resistivity"),
])
def test_membrane_properties_reject_bad_values(kwargs, field):
    with pytest.raises(InputError, match=field):
        inverse.membrane_properties(0.02, 1.0, 5.0, **kwargs)
