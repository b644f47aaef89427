"""The sympy derivations (cabletheory.symbolic) against themselves, the numeric modules and the literature.

Each derived expression is turned into a numeric function and compared with an independent
route: the closed forms of ``cabletheory.cable`` (steady state, sinusoidal impedance), the
root finder and residues of ``cabletheory.eigen``, scipy quadrature of the orthogonality
integrals, and published or computed values with their sources (keys of docs/sources.md).
Derivations are cached, so the whole file derives each case once.
"""

from __future__ import annotations

import functools
import math
import subprocess
import sys

import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, optimize

from cabletheory import cable, eigen
from cabletheory.errors import InputError
from cabletheory.symbolic import ENDS, ORIGINS, PARTS, derive, symbol, to_numeric

CASES = [(o, e) for o in ORIGINS for e in ENDS]
B_LEAKY = 0.6
RHO = 5.0
EIGEN_END = {"sealed": 0.0, "killed": math.inf, "leaky": B_LEAKY}


def _names(d) -> list[str]:
    names = ["L"]
    if d.end == "leaky":
        names.append("B")
    if d.origin == "soma":
        names.append("rho" if d.soma_parameter == "rho" else "rho_inf")
    return names


def _values(d, L: float, rho: float = RHO) -> list[float]:
    values = [L]
    if d.end == "leaky":
        values.append(B_LEAKY)
    if d.origin == "soma":
        values.append(rho if d.soma_parameter == "rho" else 1.0 / _soma_ratio(d.end, L, rho))
    return values


def _soma_ratio(end: str, L: float, rho: float) -> float:
    """y = G_S/G∞ from Rall's ρ, through cabletheory.eigen (independent of the derivation)."""
    return eigen.soma_ratio(L, EIGEN_END[end], conductance_ratio=rho)


@functools.cache
def _fn(origin: str, end: str, field: str, extra: tuple[str, ...], modules: str = "numpy"):
    d = derive(origin, end)
    return to_numeric(getattr(d, field), [*extra, *_names(d)], modules)


def _alphas(origin: str, end: str, L: float, count: int = 6, rho: float = RHO) -> np.ndarray:
    """Positive eigenvalues from cabletheory.eigen (its own root finder)."""
    kwargs = {"conductance_ratio": rho} if origin == "soma" else {}
    roots = eigen.eigenvalues(L, EIGEN_END[end], count + 1, origin="clamped" if origin == "clamp" else "sealed",
                              **kwargs)
    return roots[roots > 0][:count]


# --------------------------------------------------------------------------------------
# the derivation itself: ODE and boundary conditions hold
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(("origin", "end"), CASES)
def test_eigenfunction_solves_the_separated_equation(origin, end):
    """φ'' + α²φ = 0 identically, and φ meets the homogeneous origin condition identically."""
    d = derive(origin, end)
    X, a = symbol("X"), symbol("alpha")
    phi = d.eigenfunction
    assert sp.expand(sp.diff(phi, X, 2) + a**2 * phi) == 0
    if origin == "current":
        assert sp.diff(phi, X).subs(X, 0) == 0
    elif origin == "clamp":
        assert phi.subs(X, 0) == 0
    else:  # soma: φ'(0) = -(α²/ρ∞) φ(0), from (V + ∂V/∂T)/ρ∞ - ∂V/∂X = 0 with V ∝ e^{-(1+α²)T}
        rho_inf = symbol("rho") * _r_in_symbolic(end)
        lhs = sp.diff(phi, X).subs(X, 0) + a**2 * phi.subs(X, 0) / rho_inf
        f = to_numeric(lhs, ["alpha", *_names(d)])
        for alpha in (0.3, 1.3, 7.0):
            assert abs(f(alpha, *_values(d, 0.9))) < 1e-12


@pytest.mark.parametrize(("origin", "end"), CASES)
def test_eigenfunction_meets_end_condition_at_the_roots(origin, end):
    """At the roots α_n from cabletheory.eigen, φ'(L) + Bφ(L) = 0 (φ(L) = 0 killed) and the
    derived eigenvalue equation vanishes."""
    d = derive(origin, end)
    X, a = symbol("X"), symbol("alpha")
    end_expr = {"sealed": sp.diff(d.eigenfunction, X), "killed": d.eigenfunction,
                "leaky": sp.diff(d.eigenfunction, X) + symbol("B") * d.eigenfunction}[end]
    bc = to_numeric(end_expr.subs(X, symbol("L")), ["alpha", *_names(d)])
    eq = to_numeric(d.eigenvalue_equation, ["alpha", *_names(d)])
    for L in (0.5, 1.0, 1.7):
        alpha = _alphas(origin, end, L)
        scale = 1 + alpha**2
        np.testing.assert_allclose(bc(alpha, *_values(d, L)) / scale, 0, atol=1e-12)
        np.testing.assert_allclose(eq(alpha, *_values(d, L)) / scale, 0, atol=1e-12)
    del a


@pytest.mark.parametrize(("origin", "end"), CASES)
def test_steady_state_solves_the_boundary_value_problem(origin, end):
    d = derive(origin, end)
    X, L, B = symbol("X"), symbol("L"), symbol("B")
    v = d.steady_state
    assert sp.simplify(sp.diff(v, X, 2) - v) == 0
    end_value = {"sealed": sp.diff(v, X), "killed": v, "leaky": sp.diff(v, X) + B * v}[end].subs(X, L)
    assert sp.simplify(end_value) == 0
    origin_value = {"current": -sp.diff(v, X) - 1, "clamp": v - 1,
                    "soma": v / (symbol("rho") * _r_in_symbolic(end)) - sp.diff(v, X) - 1}[origin]
    f = to_numeric(origin_value.subs(X, 0), _names(d))
    assert abs(f(*_values(d, 0.8))) < 1e-13


def _r_in_symbolic(end: str):
    """G∞/G_D of the cylinder, typed in from Rall (1959) [Rall1959] [MEM] as an independent input."""
    L, B = symbol("L"), symbol("B")
    return {"sealed": 1 / sp.tanh(L), "killed": sp.tanh(L), "leaky": (1 + B * sp.tanh(L)) / (B + sp.tanh(L))}[end]


# --------------------------------------------------------------------------------------
# steady state and Green's function against cabletheory.cable
# --------------------------------------------------------------------------------------
GRID_L = np.array([0.2, 0.7071067812, 1.0, 2.5, 6.0])


@pytest.mark.parametrize("end", ENDS)
def test_steady_state_equals_cable_closed_forms(end):
    """V(X)/(I R∞) = input_resistance · voltage_ratio (cable.py, Rall 1959 [Rall1959]) on a grid, rtol 1e-12."""
    d = derive("current", end)
    f = _fn("current", end, "steady_state", ("X",))
    for L in GRID_L:
        X = np.linspace(0, L, 9)
        want = cable.input_resistance(1.0, L, EIGEN_END[end]) * cable.voltage_ratio(X, L, EIGEN_END[end])
        np.testing.assert_allclose(f(X, *_values(d, L)), want, rtol=1e-12, atol=1e-300)


@pytest.mark.parametrize("end", ENDS)
def test_clamp_steady_state_is_the_voltage_ratio(end):
    d = derive("clamp", end)
    f = _fn("clamp", end, "steady_state", ("X",))
    for L in GRID_L:
        X = np.linspace(0, L, 9)
        np.testing.assert_allclose(f(X, *_values(d, L)), cable.voltage_ratio(X, L, EIGEN_END[end]),
                                   rtol=1e-12, atol=1e-15)


@pytest.mark.parametrize("end", ENDS)
def test_soma_steady_state_is_parallel_conductance(end):
    """Soma input: V = voltage_ratio / (G_S/G∞ + G_D/G∞) (soma and cylinder in parallel, [CP])."""
    d = derive("soma", end)
    f = _fn("soma", end, "steady_state", ("X",))
    for L in GRID_L:
        X = np.linspace(0, L, 9)
        y = _soma_ratio(end, L, RHO)
        g_d = 1 / cable.input_resistance(1.0, L, EIGEN_END[end])
        want = cable.voltage_ratio(X, L, EIGEN_END[end]) / (y + g_d)
        np.testing.assert_allclose(f(X, *_values(d, L)), want, rtol=1e-12, atol=1e-15)
        # Rall's ρ is G_D/G_S by definition
        assert g_d / y == pytest.approx(RHO, rel=1e-12)


@pytest.mark.parametrize("end", ENDS)
def test_point_source_equals_transfer_resistance(end):
    """Green's function vs cable.transfer_resistance(X, X0) (Rall & Rinzel 1973 [RallRinzel1973]), both orders."""
    d = derive("current", end)
    f = _fn("current", end, "point_source", ("X", "X0"))
    for L in (0.4, 1.3, 3.0):
        X, X0 = np.meshgrid(np.linspace(0, L, 7), np.linspace(0, L, 5))
        want = cable.transfer_resistance(1.0, L, EIGEN_END[end], X, X0)
        np.testing.assert_allclose(f(X, X0, *_values(d, L)), want, rtol=1e-12)


@pytest.mark.parametrize(("origin", "far_ratio"), [("clamp", lambda L, y: math.inf), ("soma", lambda L, y: y)])
def test_point_source_by_reflection(origin, far_ratio):
    """Reflect X -> L - X: a clamped origin is a killed end and a soma is a leaky end with
    B = G_S/G∞ in the steady state, so cable.transfer_resistance (sealed origin) applies to the
    sealed-end cases with the roles swapped."""
    end = "sealed"
    d = derive(origin, end)
    f = _fn(origin, end, "point_source", ("X", "X0"))
    for L in (0.4, 1.3):
        X, X0 = np.meshgrid(np.linspace(0, L, 6), np.linspace(0, L, 4))
        y = _soma_ratio(end, L, RHO) if origin == "soma" else 0.0
        want = cable.transfer_resistance(1.0, L, far_ratio(L, y), L - X, L - X0)
        np.testing.assert_allclose(f(X, X0, *_values(d, L)), want, rtol=1e-11, atol=1e-15)


@pytest.mark.parametrize("end", ENDS)
def test_laplace_green_equals_transfer_impedance(end):
    """V̂(X, X0; s) at s = iωτm is the sinusoidal transfer impedance (cable.transfer_impedance)."""
    d = derive("current", end)
    f = _fn("current", end, "laplace_point_source", ("X", "X0", "s"))
    tau = 0.02
    for L in (0.5, 1.7):
        X, X0 = np.meshgrid(np.linspace(0, L, 5), np.linspace(0, L, 3))
        for freq in (3.0, 100.0, 2000.0):
            s = 2j * np.pi * freq * tau
            want = cable.transfer_impedance(1.0, L, EIGEN_END[end], freq, tau, X, X0)
            np.testing.assert_allclose(f(X, X0, s, *_values(d, L)), want, rtol=1e-11)


@pytest.mark.parametrize(("origin", "end"), CASES)
def test_final_value_theorem(origin, end):
    """lim_{s→0} s·V̂(X, s) is the derived steady state (exactly, after cancelling s)."""
    d = derive(origin, end)
    s, X = symbol("s"), symbol("X")
    final = (s * d.laplace).subs(s, 0)
    f = to_numeric(final - d.steady_state, ["X", *_names(d)])
    for L in (0.3, 1.0, 2.2):
        np.testing.assert_allclose(f(np.linspace(0, L, 5), *_values(d, L)), 0, atol=1e-14)
    green0 = to_numeric(d.laplace_point_source.subs(s, 0) - d.point_source, ["X", "X0", *_names(d)])
    assert np.max(np.abs(green0(np.linspace(0, 1, 5), 0.4, *_values(d, 1.0)))) < 1e-14
    del X


# --------------------------------------------------------------------------------------
# eigenvalue equations against published forms, values computed with mpmath [mpmath2023]
# --------------------------------------------------------------------------------------
def _root_near(eq, guess: float, *args) -> float:
    return optimize.brentq(lambda a: eq(a, *args), guess * (1 - 1e-6), guess * (1 + 1e-6), xtol=1e-15, rtol=1e-15)


BALL_AND_STICK = [
    # L, ρ, α1, α2, α3, C0, C1 -- computed: exact evaluation of Rall (1969)'s [Rall1969]
    # ball-and-stick eigenvalue equation tan(αL) = -α tanh(L)/ρ and its residues
    (1.0, 1.0, 2.124399385, 4.970647600, 8.016334927, 0.8646647168, 0.1261786720),
    (1.0, 5.0, 2.745502743, 5.578830082, 8.511022013, 0.7931077428, 0.1613066229),
    (1.0, 10.0, 2.922580840, 5.863213357, 8.832618940, 0.7784660520, 0.1559937099),
    (0.5, 5.0, 5.362856424, 10.98080117, 16.84961905, 0.9360544490, 0.05210307147),
    (1.5, 5.0, 1.876121710, 3.788057819, 5.746428583, 0.6461384568, 0.2592302700),
    (1.5, 10.0, 1.976382173, 3.959375132, 5.953667013, 0.6260005019, 0.2477170535),
    (2.0, 10.0, 1.499037430, 3.000793862, 4.507432016, 0.5058333061, 0.3054727779),
]


@pytest.mark.parametrize(("L", "rho", "a1", "a2", "a3", "c0", "c1"), BALL_AND_STICK)
def test_ball_and_stick_against_rall_1969_table(L, rho, a1, a2, a3, c0, c1):
    """Computed values (Rall 1969 form [Rall1969]): the derived equation has roots at the tabulated
    α_n (rtol 2e-9, 10 printed digits) and the derived coefficients give C0 and C1 normalised
    to the final soma voltage."""
    d = derive("soma", "sealed")
    eq = to_numeric(d.eigenvalue_equation, ["alpha", "L", "rho"])
    for guess in (a1, a2, a3):
        assert _root_near(eq, guess, L, rho) == pytest.approx(guess, rel=2e-9)
    v_inf = to_numeric(d.steady_state, ["X", "L", "rho"])(0.0, L, rho)
    c_zero = to_numeric(d.zero_mode_coefficient, ["X", "L", "rho"])(0.0, L, rho) / v_inf
    coeff = to_numeric(d.coefficient, ["alpha", "X", "L", "rho"])
    assert c_zero == pytest.approx(c0, rel=2e-9)
    assert coeff(_root_near(eq, a1, L, rho), 0.0, L, rho) / v_inf == pytest.approx(c1, rel=2e-9)


def test_ball_and_stick_rho_inf_form_agrees():
    """The ρ∞ = G∞/G_S parameterisation gives the same roots (ρ∞ = ρ coth L, Rall 1969 [Rall1969])."""
    d = derive("soma", "sealed", soma_parameter="rho_inf")
    eq = to_numeric(d.eigenvalue_equation, ["alpha", "L", "rho_inf"])
    assert _root_near(eq, 2.745502743, 1.0, 5.0 / math.tanh(1.0)) == pytest.approx(2.745502743, rel=2e-9)
    assert "ρ_∞" in d.text("modes")


@pytest.mark.parametrize(("origin", "end", "L", "decay_rates"), [
    # computed (Rall 1969 [Rall1969]): killed/clamped L = 1 and 2, τm/τ_n = 1 + α_n², α_n = (2n+1)π/(2L)
    ("current", "killed", 1.0, (3.467401100, 23.20660990, 62.68502751)),
    ("clamp", "sealed", 1.0, (3.467401100, 23.20660990, 62.68502751)),
    ("current", "killed", 2.0, (1.616850275, 6.551652476, 16.42125688)),
    ("clamp", "sealed", 2.0, (1.616850275, 6.551652476, 16.42125688)),
    # both ends killed, L = 1: α_n = nπ/L
    ("clamp", "killed", 1.0, (10.86960440, 40.47841760)),
    # sealed cylinder, τ0/τ_n = 1 + (nπ/L)² (Holmes 2015 [Holmes2015], quoting Rall 1969 [Rall1969])
    ("current", "sealed", 1.0, (10.86960440, 40.47841760, 89.82643961)),
    ("current", "sealed", 0.5, (40.47841760, 158.9136704, 356.3057584)),
    ("current", "sealed", 2.0, (3.467401100, 10.86960440, 23.20660990)),
])
def test_time_constant_ratios_against_checks(origin, end, L, decay_rates):
    d = derive(origin, end)
    eq = to_numeric(d.eigenvalue_equation, ["alpha", "L"])
    for rate in decay_rates:
        guess = math.sqrt(rate - 1)
        assert 1 + _root_near(eq, guess, L) ** 2 == pytest.approx(rate, rel=2e-9)


def test_zero_mode_exists_exactly_for_sealed_ends_without_clamp():
    """τ0 = τm appears only when nothing leaks at either end (Rall 1969 [Rall1969]: no τm component with a
    killed end)."""
    have = {(o, e) for o, e in CASES if derive(o, e).zero_mode is not None}
    assert have == {("current", "sealed"), ("soma", "sealed")}


@pytest.mark.parametrize(("L", "c0", "c1"), [
    # computed: C0 = tanh L / L, C1 = 2 C0/(1 + (π/L)²), derived from Rall (1969)'s series [Rall1969]
    (0.5, 0.9242343145, 0.04566553582),
    (1.0, 0.7615941560, 0.1401328195),
    (2.0, 0.4820137900, 0.2780259774),
])
def test_sealed_cylinder_coefficients(L, c0, c1):
    d = derive("current", "sealed")
    v_inf = to_numeric(d.steady_state, ["X", "L"])(0.0, L)
    assert to_numeric(d.zero_mode_coefficient, ["X", "L"])(0.0, L) / v_inf == pytest.approx(c0, rel=1e-9)
    assert to_numeric(d.coefficient, ["alpha", "X", "L"])(math.pi / L, 0.0, L) / v_inf == pytest.approx(c1, rel=1e-9)


# --------------------------------------------------------------------------------------
# coefficients: orthogonality integrals by quadrature, and cabletheory.eigen
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(("origin", "end"), CASES)
def test_coefficients_equal_projection_by_quadrature(origin, end):
    """c_n(X) = <V_ss, φ_n> φ_n(X)/N_n with <u, w> = ∫ u w dX (+ u(0)w(0)/ρ∞ for a soma),
    evaluated by scipy.integrate.quad, independent of the Green's-identity shortcut."""
    d = derive(origin, end)
    L = 1.3
    values = _values(d, L)
    phi = to_numeric(d.eigenfunction, ["alpha", "X", *_names(d)])
    v_ss = to_numeric(d.steady_state, ["X", *_names(d)])
    coeff = to_numeric(d.coefficient, ["alpha", "X", *_names(d)])
    norm = to_numeric(d.mode_norm, ["alpha", *_names(d)])
    y = _soma_ratio(end, L, RHO) if origin == "soma" else 0.0
    for alpha in _alphas(origin, end, L, 4):
        inner = integrate.quad(lambda x, a=alpha: v_ss(x, *values) * phi(a, x, *values), 0, L, epsabs=1e-14)[0]
        inner += y * v_ss(0.0, *values) * phi(alpha, 0.0, *values)
        sq = integrate.quad(lambda x, a=alpha: phi(a, x, *values) ** 2, 0, L, epsabs=1e-14)[0]
        assert norm(alpha, *values) == pytest.approx(sq + y * phi(alpha, 0.0, *values) ** 2, rel=1e-11)
        X = np.array([0.0, 0.4, L])
        np.testing.assert_allclose(coeff(alpha, X, *values), inner * phi(alpha, X, *values) / norm(alpha, *values),
                                   rtol=1e-9, atol=1e-13)


@pytest.mark.parametrize(("origin", "end"), CASES)
def test_modes_against_eigen_module(origin, end):
    """Derived φ, N and c against cabletheory.eigen.mode_shapes / mode_norms / residues."""
    d = derive(origin, end)
    L = 0.9
    values = _values(d, L)
    y = _soma_ratio(end, L, RHO) if origin == "soma" else 0.0
    eigen_origin = "clamped" if origin == "clamp" else "sealed"
    alpha = _alphas(origin, end, L, 5)
    X = np.linspace(0, L, 4)
    phi = to_numeric(d.eigenfunction, ["alpha", "X", *_names(d)])(alpha[:, None], X, *values)
    np.testing.assert_allclose(phi, eigen.mode_shapes(alpha, X, origin=eigen_origin, soma_ratio=y),
                               rtol=1e-12, atol=1e-14)
    norm = to_numeric(d.mode_norm, ["alpha", *_names(d)])(alpha, *values)
    np.testing.assert_allclose(norm, eigen.mode_norms(alpha, L, origin=eigen_origin, soma_ratio=y), rtol=1e-12)
    coeff = to_numeric(d.coefficient, ["alpha", "X", *_names(d)])(alpha[:, None], X, *values)
    if origin == "clamp":
        want = eigen.clamp_mode_coefficients(alpha, X, L)
    else:  # a step of current at X0 = 0: r_n(X, 0)/(1 + α²)
        want = eigen.mode_residues(alpha, X, 0.0, L, soma_ratio=y) / (1 + alpha[:, None] ** 2)
    np.testing.assert_allclose(coeff, want, rtol=1e-11, atol=1e-14)
    impulse = to_numeric(d.impulse_coefficient, ["alpha", "X", "X0", *_names(d)])(alpha[:, None], X, 0.3, *values)
    if origin != "clamp":
        np.testing.assert_allclose(impulse, eigen.mode_residues(alpha, X, 0.3, L, soma_ratio=y), rtol=1e-11,
                                   atol=1e-14)


def test_ball_and_stick_coefficients_match_eigen():
    d = derive("soma", "sealed")
    L, rho = 1.5, 10.0
    alpha, c = eigen.ball_and_stick_coefficients(L, rho, count=5)
    v_inf = to_numeric(d.steady_state, ["X", "L", "rho"])(0.0, L, rho)
    assert c[0] == pytest.approx(to_numeric(d.zero_mode_coefficient, ["X", "L", "rho"])(0.0, L, rho) / v_inf,
                                 rel=1e-12)
    derived = to_numeric(d.coefficient, ["alpha", "X", "L", "rho"])(alpha[1:], 0.0, L, rho) / v_inf
    np.testing.assert_allclose(c[1:], derived, rtol=1e-11)


# --------------------------------------------------------------------------------------
# physical identities (hypothesis, fixed seed)
# --------------------------------------------------------------------------------------
@settings(derandomize=True, deadline=None, max_examples=40)
@given(L=st.floats(0.05, 5.0), x=st.floats(0, 1), x0=st.floats(0, 1), origin=st.sampled_from(ORIGINS))
def test_green_function_is_reciprocal(L, x, x0, origin):
    """G(X, X0) = G(X0, X) for every origin and a leaky end (reciprocity, [CP])."""
    d = derive(origin, "leaky")
    f = _fn(origin, "leaky", "point_source", ("X", "X0"))
    values = _values(d, L)
    assert f(x * L, x0 * L, *values) == pytest.approx(f(x0 * L, x * L, *values), rel=1e-10, abs=1e-14)


@settings(derandomize=True, deadline=None, max_examples=30)
@given(L=st.floats(0.05, 4.0), x=st.floats(0, 1), origin=st.sampled_from(ORIGINS))
def test_leaky_end_limits(L, x, origin):
    """B → 0 gives the sealed end, B → ∞ the killed end (Rall 1959 [Rall1959] [MEM]); a soma is held at
    fixed ρ∞ = G∞/G_S, since Rall's ρ itself depends on the end through G_D."""
    parameter = "rho_inf" if origin == "soma" else "rho"
    names = ["X", "L"]
    soma = []
    if origin == "soma":
        names.append("rho_inf")
        soma = [RHO / math.tanh(L)]
    leaky = to_numeric(derive(origin, "leaky", soma_parameter=parameter).steady_state, [*names[:2], "B", *names[2:]])
    sealed = to_numeric(derive(origin, "sealed", soma_parameter=parameter).steady_state, names)
    killed = to_numeric(derive(origin, "killed", soma_parameter=parameter).steady_state, names)
    X = x * L
    assert leaky(X, L, 1e-12, *soma) == pytest.approx(sealed(X, L, *soma), rel=1e-9, abs=1e-12)
    assert leaky(X, L, 1e12, *soma) == pytest.approx(killed(X, L, *soma), rel=1e-9, abs=1e-11)


# --------------------------------------------------------------------------------------
# to_numeric, rendering, laziness
# --------------------------------------------------------------------------------------
def test_to_numeric_names_unbound_symbols():
    d = derive("current", "leaky")
    with pytest.raises(InputError, match=r"unbound symbol\(s\) B"):
        to_numeric(d.steady_state, ["X", "L"])
    with pytest.raises(InputError, match="modules"):
        to_numeric(d.steady_state, ["X", "L", "B"], modules="tensorflow")


def test_to_numeric_mpmath_keeps_precision():
    import mpmath

    f = to_numeric(derive("current", "sealed").steady_state, ["X", "L"], modules="mpmath")
    with mpmath.workdps(40):
        value = f(mpmath.mpf(0), mpmath.mpf(1))
        assert abs(value - mpmath.coth(1)) < mpmath.mpf(10) ** -38


@pytest.mark.parametrize(("origin", "end"), CASES)
def test_text_and_latex_render_every_part(origin, end):
    d = derive(origin, end)
    text = d.text()
    assert "passive, linear membrane" in text
    assert "I·R∞" in text
    latex = d.latex()
    assert "\\cosh" in latex or "\\sinh" in latex
    for part in PARTS:
        assert d.latex(part).startswith("% Passive cylinder")
    ascii_text = d.text("modes", unicode=False)
    assert "cos" in ascii_text or "sin" in ascii_text
    data = d.as_json("steady")
    assert data["origin"] == origin
    assert data["parts"][-1]["label"].startswith("steady state")
    with pytest.raises(InputError, match="part"):
        d.text("everything")


def test_bad_case_names_are_input_errors():
    with pytest.raises(InputError, match="origin"):
        derive("axon", "sealed")
    with pytest.raises(InputError, match="end"):
        derive("current", "open")
    with pytest.raises(InputError, match="soma_parameter"):
        derive("soma", "sealed", soma_parameter="ratio")


def test_derivations_are_cached():
    assert derive("current", "sealed") is derive("current", "sealed")


def test_sympy_is_not_imported_with_the_module():
    code = "import sys, cabletheory.symbolic, cabletheory.cli.derive; print('sympy' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_one_part_derived_alone_reads_as_in_the_full_derivation():
    """``derive(..., part=P)`` (what ``derive --part P`` runs: a fifth of the time for the steady
    state) derives only that part, in a fresh derivation, and prints it exactly as the full
    derivation does; the parts it did not derive are refused, never shown empty."""
    from cabletheory import symbolic

    symbolic._derive.cache_clear()
    symbolic._ALL_DONE.clear()
    alone = {part: derive("soma", "leaky", part=part) for part in ("steady", "point")}
    assert alone["steady"].eigenfunction is None
    assert alone["steady"].laplace is None
    with pytest.raises(InputError, match="was not derived"):
        alone["steady"].text("modes")
    full = derive("soma", "leaky")
    for part, d in alone.items():
        assert d.text(part) == full.text(part)
        assert d.latex(part) == full.latex(part)
    # a full derivation, once made, serves the parts not asked for before
    assert derive("soma", "leaky", part="modes").derived == PARTS
