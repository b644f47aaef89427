"""An alpha current on a finite cylinder from the residues of its transform, against mpmath.

The float path (``finite_cable._alpha_by_residues``: the input's double pole at s = -1/a through
``laplace.green_near_real``, the modes near it exactly, the rest as a series cut by
``truncation.alpha_residue_tail``) is compared with an independent route: the transform
:math:`(e/a)/(s + 1/a)^2\\cdot\\hat G(X, X_0; s)` inverted by mpmath's Talbot method
(``mpmath.invertlaplace``; the mpmath development team 2023 [mpmath2023], Talbot 1979
[Talbot1979]), with :math:`\\hat G` solved by hand in ``tests/laplace_reference.py`` (Rall 1969
[Rall1969]; Jack, Noble & Tsien 1975 [JackNobleTsien1975] ch. 7), and its slope in s by
``mpmath.diff``.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from laplace_reference import DIGITS, Case, green

from cabletheory import eigen, laplace
from cabletheory.finite_cable import _alpha_by_residues, current_response
from cabletheory.truncation import alpha_residue_tail

ROUNDING = 2e-14  # float rounding of sums of terms of order e/a times the residues (measured: below 1e-14)


def _talbot(X: float, X0: float, T: float, L: float, B: float, y: float, a: float) -> float:
    """The alpha current's voltage by Talbot inversion of the hand-solved transform (laplace_reference)."""
    case = Case("ball" if y else "cylinder", "alpha", L=L, B=mp.inf if math.isinf(B) else B, y=y, source=X0,
                time_to_peak=a)
    return float(case.value(T, X))


@pytest.mark.parametrize(("L", "B", "y", "c"), [
    (1.0, 0.0, 0.0, 10.0), (1.3, 0.7, 0.4, 3.0), (0.6, math.inf, 0.0, 0.4), (2.0, 0.0, 1.2, 250.0),
])
def test_value_and_slope_near_a_real_point_match_mpmath(L, B, y, c):
    """G̃(-c) and dG̃/ds(-c), with the modes within the clearance taken out, against mpmath.diff."""
    X = np.array([0.0, 0.45 * L, L])
    X0 = 0.3 * L
    clear = 6 * max(1.0, math.sqrt(c))
    alpha = eigen._eigenvalues(L, B, 40, "sealed", y)
    mu = 1 + alpha**2
    near = np.abs(mu - c) < clear
    residues = eigen.mode_residues(alpha, X, X0, L, soma_ratio=y)
    value, slope = laplace.green_near_real(-c, X, X0, L, B, y, poles=mu[near], residues=residues[near], clear=clear)
    with mp.workdps(DIGITS):
        for j, x in enumerate(X):
            def tilde(s, x=x, j=j):
                return mp.re(green(s, mp.mpf(float(x)), X0, L, mp.inf if math.isinf(B) else B, y)) - sum(
                    mp.mpf(r) / (s + mp.mpf(m)) for m, r in zip(mu[near], residues[near, j], strict=True))
            exact_value = float(tilde(mp.mpf(-c)))
            exact_slope = float(mp.diff(tilde, mp.mpf(-c)))
            assert abs(value[j] - exact_value) <= 1e-14 * max(1.0, abs(exact_value)), (x, value[j], exact_value)
            assert abs(slope[j] - exact_slope) <= 1e-14 * max(1.0, abs(exact_slope)), (x, slope[j], exact_slope)


# (L, B, y, X0, time to peak): short and long times to peak, a mode exactly at the input's pole
# (a = 1/μ1 on the sealed cylinder, a = 1 = 1/μ0) or near it, killed and leaky ends, somas
CASES = [
    (1.0, 0.0, 0.0, 0.0, 0.1),
    (1.0, 0.0, 0.0, 0.0, 1.0 / (1.0 + math.pi**2)),
    (1.0, 0.0, 0.0, 0.5, 1.0),
    (0.8, math.inf, 0.0, 0.2, 0.001),
    (0.05, math.inf, 0.0, 0.01, 0.001),  # a short killed cable whose first mode lies 12 from 1/a = 1000
    (0.5, 0.6, 0.0, 0.1, 3.0),
    (1.5, 0.0, 0.8, 0.0, 0.05),
    (2.0, 0.3, 0.4, 0.7, 30.0),
]


@pytest.mark.parametrize(("L", "B", "y", "X0", "a"), CASES)
def test_alpha_current_within_its_bound_of_talbot(L, B, y, X0, a):
    X = np.array([0.0, 0.6 * L])
    T = np.array([1e-3, 0.04, 1.7])
    v, bound, method = current_response(X, X0, T, L, B, y, shape="alpha", time_to_peak=a, tolerance=1e-10)
    assert "eigen-series" in method
    assert np.all(bound <= 1e-10)
    for i, t in enumerate(T):
        for j, x in enumerate(X):
            exact = _talbot(float(x), X0, float(t), L, B, y, a)
            assert abs(v[i, j] - exact) <= bound[i, j] + ROUNDING, (t, x, v[i, j], exact, bound[i, j])


def test_rounding_of_parts_that_cancel_is_inside_the_bound():
    """Found by the accuracy fuzz (benchmarks/fuzz_accuracy.py --cases 600 --seed 7): the input at
    the far end of a leaky cylinder (L = 3.51, B = 557), a time to peak of 1.36e-4 τm, read at the
    origin at T = 1.82e-5, where the true value is many orders of magnitude below the parts. The double
    pole's terms and a thousand modes cancel; their rounding (3.7e-14 here) must lie inside the
    stated bound with no allowance, as the bound's own rounding term promises."""
    L, B, a, T = 10**0.5456964177276005, 556.6790259787775, 10**-3.8654466792764466, 10**-4.739378386942784
    v, bound, method = current_response([0.0], L, [T], L, B, 0.0, shape="alpha", time_to_peak=a, tolerance=1e-12)
    assert "eigen-series" in method
    exact = _talbot(0.0, L, T, L, B, 0.0, a)
    # measured: error 5.5e-14, the modes' tail 2.4e-14, the bound with its rounding term 6.4e-13
    assert abs(v[0, 0] - exact) <= bound[0, 0] <= 1e-12, (v[0, 0], exact, bound[0, 0])


@pytest.mark.parametrize(("L", "B", "y", "a"), [
    (1.0, 0.0, 0.0, 0.1), (0.7, math.inf, 0.0, 0.002), (1.2, 0.5, 0.6, 2.0), (3.0, 0.0, 0.0, 0.3),
    (0.2, 0.0, 0.0, 30.0), (5.0, math.inf, 0.0, 0.01),
])
def test_alpha_residue_tail_bounds_the_modes_left_out(L, B, y, a):
    """The series cut after N modes stays within alpha_residue_tail(N) of the Talbot value, and the
    bound is not loose by more than 50 times somewhere (so a wrong bound would fail)."""
    X = np.array([0.0, 0.5 * L])
    X0 = 0.0
    T = np.array([0.0005, 0.002, 0.03, 0.4])
    exact = np.array([[_talbot(float(x), X0, float(t), L, B, y, a) for x in X] for t in T])
    alpha = eigen._eigenvalues(L, B, 400, "sealed", y)
    residues = eigen.mode_residues(alpha, X, X0, L, soma_ratio=y)
    tightest = 0.0
    checked = 0
    for N in (2, 3, 4, 6, 8, 11, 16, 23, 32, 45, 64):
        stated = alpha_residue_tail(N, T, L, a)
        factor, spatial, _ = _alpha_by_residues(X, X0, T, L, B, y, a, alpha[:N], residues[:N])
        values = factor(slice(0, spatial.shape[0]), np.arange(T.size)) @ spatial
        for i in range(T.size):
            if not 1e-13 < stated[i] < 1.0:
                continue  # the bound does not apply yet (modes below the input's rate) or is at rounding level
            error = np.abs(values[i] - exact[i]).max()
            assert error <= stated[i] + ROUNDING, (N, T[i], error, stated[i])
            tightest = max(tightest, error / stated[i])
            checked += 1
    assert checked >= 4
    assert tightest >= 0.02


@pytest.mark.parametrize("a", [0.1, 1000.0, 0.001])
def test_small_early_values_keep_their_digits(a):
    """Far points just after the onset (values down to 1e-40) take images, and every early value
    keeps about 10 digits relative to itself, where the residue series alone would only be within
    its rounding, about ε·g·min(1, e·a, e/a), of the exact value."""
    L = 1.0
    X = np.array([0.0, 0.55, 0.8, 1.0])
    T = np.array([0.005, 0.02])
    v, _, method = current_response(X, 0.0, T, L, 0.0, shape="alpha", time_to_peak=a)
    assert "images where a value is small" in method
    tiny = 0
    for i, t in enumerate(T):
        for j, x in enumerate(X):
            exact = _talbot(float(x), 0.0, float(t), L, 0.0, 0.0, a)
            assert abs(v[i, j] - exact) <= 1e-9 * abs(exact), (t, x, v[i, j], exact)
            tiny += abs(exact) < 1e-12
    assert tiny >= 2


@pytest.mark.parametrize(("L", "B", "y", "a"), [
    (1.0, 0.0, 0.0, 0.1), (0.8, 0.6, 0.3, 2.0), (1.0, math.inf, 0.0, 0.001), (1.0, 0.0, 0.0, 1 / (1 + math.pi**2)),
])
def test_mpmath_path_matches_talbot(L, B, y, a):
    """cabletheory.precise (30 digits: the residue series, or where a mode meets 1/a the images and
    the quasi-steady series) within its bound plus float rounding of the Talbot value."""
    from cabletheory import precise

    X = np.array([0.0, 0.4 * L])
    T = np.array([1e-3, 2.0])
    values, bound, _ = precise.current_grid(X, 0.0, T, L, B, y, "alpha", 0.0, a, 1e-16, 30)
    for i, t in enumerate(T):
        for j, x in enumerate(X):
            exact = _talbot(float(x), 0.0, float(t), L, B, y, a)
            assert abs(values[i, j] - exact) <= bound[i, j] + 1e-16, (t, x, values[i, j], exact)
