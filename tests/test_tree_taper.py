"""Tapered pieces (frusta): exact electrotonic length and the exact two-port, checked independently.

* scipy.integrate.quad [SciPy2020] of dx/λ(x) for the electrotonic length (the definition, Rall 1962
  [Rall1962] [MEM]);
* scipy.integrate.solve_bvp of the tapered steady cable equation (d²V')' = (4Ri/Rm) d V with
  a sealed or loaded far end, for the input conductance (no Bessel functions involved);
* mpmath at 40 digits, unscaled Bessel functions, for tiny tapers where cancellation threatens;
* a fine chain of cylinders converges to the frustum at second order.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

from cabletheory.morphology import Outline
from cabletheory.tree import (
    analyse_tree,
    frustum_electrotonic_length,
    frustum_transfer,
    tree_from_outline,
)

RM, RI = 2.0, 2.0  # 20 kΩ·cm², 200 Ω·cm
UM = 1e-6


@pytest.mark.parametrize(("ell", "d0", "d1"), [(200e-6, 2e-6, 1e-6), (80e-6, 0.5e-6, 3e-6), (1e-3, 4e-6, 4e-6)])
def test_electrotonic_length_is_the_integral_of_dx_over_lambda(ell, d0, d1):
    """Definition L = ∫ dx/λ(x) (Rall 1962 [Rall1962] [MEM]); integrated numerically by scipy.integrate.quad."""
    from scipy.integrate import quad

    def inverse_lambda(x):
        d = d0 + (d1 - d0) * x / ell
        return 1.0 / math.sqrt(RM * d / (4 * RI))

    expected, _ = quad(inverse_lambda, 0.0, ell, epsabs=0, epsrel=1e-13)
    assert float(frustum_electrotonic_length(ell, d0, d1, RM, RI)) == pytest.approx(expected, rel=1e-12)


def _bvp_input_conductance(ell, d0, d1, load):
    """Solve (d²V')' = (4Ri/Rm) d V on [0, ℓ], V(0) = 1, -(π d1²/4Ri) V'(ℓ) = load·V(ℓ).

    In the scaled variables ξ = x/ℓ, δ = d/d0 the equation is (δ² V_ξ)_ξ = α δ V with
    α = 4Ri ℓ²/(Rm d0); W = δ² V_ξ, and the axial current is -(π d0²/(4Ri ℓ)) W.
    """
    from scipy.integrate import solve_bvp

    alpha = 4 * RI * ell**2 / (RM * d0)
    ratio = d1 / d0
    current_scale = np.pi * d0**2 / (4 * RI * ell)

    def rhs(xi, y):  # y = [V, W]
        delta = 1.0 + (ratio - 1.0) * xi
        return np.vstack([y[1] / delta**2, alpha * delta * y[0]])

    def bc(ya, yb):
        return np.array([ya[0] - 1.0, current_scale * yb[1] + load * yb[0]])

    xi = np.linspace(0, 1, 401)
    sol = solve_bvp(rhs, bc, xi, np.vstack([np.ones_like(xi), np.zeros_like(xi)]), tol=1e-8,
                    bc_tol=1e-12, max_nodes=100000)
    assert sol.success, sol.message
    return -current_scale * sol.sol(0.0)[1]  # axial current into the piece for V(0) = 1


@pytest.mark.parametrize(("ell", "d0", "d1"), [(300e-6, 3e-6, 1e-6), (150e-6, 0.8e-6, 2.4e-6),
                                               (1500e-6, 2e-6, 0.6e-6)])
@pytest.mark.parametrize("load", [0.0, 1e-9])
def test_frustum_input_conductance_matches_solve_bvp(ell, d0, d1, load):
    """Exact Bessel two-port against scipy.integrate.solve_bvp on the tapered cable equation."""
    t11, t12, t21, t22 = (float(v[0]) for v in frustum_transfer(ell, d0, d1, RM, RI))
    g_in = (t21 + t22 * load) / (t11 + t12 * load)
    assert g_in == pytest.approx(_bvp_input_conductance(ell, d0, d1, load), rel=1e-8)


def _mp_transfer(ell, d0, d1):
    ell, d0, d1 = mp.mpf(ell), mp.mpf(d0), mp.mpf(d1)
    s = (d1 - d0) / ell
    c = mp.mpf(4) * RI / RM
    k = mp.pi * s / (4 * RI)
    z0, z1 = 2 * mp.sqrt(c * d0) / abs(s), 2 * mp.sqrt(c * d1) / abs(s)

    def i1(z):
        return mp.besseli(1, z)

    def k1(z):
        return mp.besselk(1, z)

    def p(z):
        return z / 2 * mp.besseli(2, z)

    def q(z):
        return z / 2 * mp.besselk(2, z)

    return [2 * mp.sqrt(d1 / d0) * (i1(z0) * q(z1) + k1(z0) * p(z1)),
            2 / (k * mp.sqrt(d0 * d1)) * (k1(z0) * i1(z1) - i1(z0) * k1(z1)),
            2 * k * mp.sqrt(d0 * d1) * (q(z0) * p(z1) - p(z0) * q(z1)),
            2 * mp.sqrt(d0 / d1) * (p(z0) * k1(z1) + q(z0) * i1(z1))]


@pytest.mark.parametrize("relative_taper", [0.5, 1e-3, 1e-5, 1e-6, 3e-7, 1e-7, 1e-9, 0.0])
def test_transfer_matrix_against_mpmath_for_any_taper(relative_taper):
    """40-digit mpmath (unscaled Bessel I1, K1, I2, K2) vs the scaled float evaluation; < 2e-9 everywhere."""
    mp.mp.dps = 40
    ell, d0 = 50e-6, 1e-6
    d1 = d0 * (1 + relative_taper)
    got = np.array([float(v[0]) for v in frustum_transfer(ell, d0, d1, RM, RI)])
    got *= math.exp(float(frustum_electrotonic_length(ell, d0, d1, RM, RI)))
    if relative_taper == 0.0:
        lam = math.sqrt(RM * d0 / (4 * RI))
        g_inf = math.pi * d0**1.5 / (2 * math.sqrt(RM * RI))
        L = ell / lam
        expected = [math.cosh(L), math.sinh(L) / g_inf, g_inf * math.sinh(L), math.cosh(L)]
    else:
        expected = [float(v) for v in _mp_transfer(ell, d0, d1)]
    np.testing.assert_allclose(got, expected, rtol=2e-9)


@pytest.mark.parametrize(("d0", "d1"), [(3e-6, 0.7e-6), (0.7e-6, 3e-6)])
def test_reciprocity_determinant_is_one(d0, d1):
    """A passive two-port is reciprocal: det T = 1 (here T·e^{-L}, so det = e^{-2L})."""
    t11, t12, t21, t22 = (float(v[0]) for v in frustum_transfer(400e-6, d0, d1, RM, RI))
    big_l = float(frustum_electrotonic_length(400e-6, d0, d1, RM, RI))
    assert t11 * t22 - t12 * t21 == pytest.approx(math.exp(-2 * big_l), rel=1e-12)


def _one_frustum(d0, d1, ell, pieces):
    """A frustum cut into ``pieces`` frusta, and the same cut into cylinders (mean diameter)."""
    edges = d0 + (d1 - d0) * np.linspace(0, 1, pieces + 1)
    names = tuple(f"p{i}" for i in range(pieces))
    parents = np.arange(-1, pieces - 1, dtype=np.int64)
    lengths = np.full(pieces, ell / pieces)
    lines = np.arange(1, pieces + 1, dtype=np.int64)
    frusta = tree_from_outline(Outline("f", names, parents, lengths, edges[:-1], edges[1:], lines))
    mid = 0.5 * (edges[:-1] + edges[1:])
    cylinders = tree_from_outline(Outline("c", names, parents, lengths, mid, mid, lines))
    return frusta, cylinders


def test_chain_of_cylinders_converges_to_the_frustum():
    """Cylinders of the mid diameter converge at second order; frusta cut in pieces change nothing."""
    whole = analyse_tree(_one_frustum(3e-6, 0.8e-6, 600e-6, 1)[0], RM, RI).input_resistance
    cut, _ = _one_frustum(3e-6, 0.8e-6, 600e-6, 7)
    assert analyse_tree(cut, RM, RI).input_resistance == pytest.approx(whole, rel=1e-12)
    errors = [abs(analyse_tree(_one_frustum(3e-6, 0.8e-6, 600e-6, n)[1], RM, RI).input_resistance - whole) / whole
              for n in (10, 20, 40)]
    assert math.log2(errors[0] / errors[1]) == pytest.approx(2.0, abs=0.1)
    assert math.log2(errors[1] / errors[2]) == pytest.approx(2.0, abs=0.1)


def test_frustum_tree_equivalent_cable_keeps_area():
    """Each frustum contributes its area-preserving mean d^3/2 to the equivalent cable."""
    tree, _ = _one_frustum(3e-6, 1e-6, 500e-6, 1)
    report = analyse_tree(tree, RM, RI)
    cable = report.equivalent_cable
    integral = float(np.sum(cable.diameter_sum[:-1] * np.diff(cable.positions)))
    area_factor = math.pi * math.sqrt(RM / (4 * RI))  # membrane area per unit X per unit d^3/2
    assert integral * area_factor == pytest.approx(report.membrane_area, rel=1e-12)
    assert report.membrane_area == pytest.approx(math.pi * 2e-6 * 500e-6, rel=1e-12)
    assert not report.reducible  # a taper changes d^3/2 along the branch
    assert report.violations[0].kind == "branch_diameter"
