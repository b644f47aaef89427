"""Sums of exponentials fitted to traces (cabletheory.fit_exponentials, cabletheory.fit_stats).

Synthetic recordings are made by the package's exact time courses (cabletheory.transient.charge,
itself checked against Rall 1969 [Rall1969] and mpmath [mpmath2023] elsewhere) or by explicit sums
of exponentials, plus seeded Gaussian noise. The statistics are checked against scipy
[SciPy2020] (linear regression standard errors), the textbook formulas they implement
(Hurvich & Tsai 1989 [HurvichTsai1989]; Wald & Wolfowitz 1940 [WaldWolfowitz1940]) and, for the
intervals, their coverage over many noise draws (a 95 % interval should hold the truth in about
95 % of draws; Bates & Watts 1988 [BatesWatts1988]).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from cabletheory import fit_stats, inverse
from cabletheory.errors import ConvergenceError, InputError
from cabletheory.fit_exponentials import decompose, fit_exponentials, peel_start, peeling_from_fit
from cabletheory.fit_model import model_case
from cabletheory.transient import charge

T = np.linspace(0.1e-3, 60e-3, 200)
TAUS = (20e-3, 3e-3)
AMPS = (-7e-3, -2e-3)


def two_exponentials(t):
    return 10e-3 + AMPS[0] * np.exp(-t / TAUS[0]) + AMPS[1] * np.exp(-t / TAUS[1])


def soma_trace(tau, L, rho, r_n, current=100e-12, dt=0.05e-3, samples=2000, noise=0.05e-3, seed=1):
    """Exact soma response of a ball and stick (charge) plus seeded noise."""
    case, _ = model_case("ball-and-stick", tau, L, rho, r_n, current)
    t = np.arange(1, samples + 1) * dt
    v = charge(case.cell, case.stimulus, t, [0.0]).voltage[:, 0]
    return t, v + np.random.default_rng(seed).normal(0.0, noise, t.size)


# --------------------------------------------------------------------------------------
# statistics
# --------------------------------------------------------------------------------------
def test_linearised_covariance_matches_scipy_linear_regression():
    """For a straight line the linearised covariance is exact: the slope's standard error equals
    scipy.stats.linregress's [SciPy2020]."""
    from scipy.stats import linregress

    rng = np.random.default_rng(3)
    x = np.linspace(0, 1, 50)
    y = 2.0 + 3.0 * x + rng.normal(0, 0.1, x.size)
    fit = linregress(x, y)
    J = np.column_stack([np.ones_like(x), x])
    chi = float(np.sum((fit.intercept + fit.slope * x - y) ** 2))
    cov, _ = fit_stats.linearised_covariance(J, chi)
    assert math.sqrt(cov[1, 1]) == pytest.approx(fit.stderr, rel=1e-10)
    assert math.sqrt(cov[0, 0]) == pytest.approx(fit.intercept_stderr, rel=1e-10)


def test_profile_interval_of_a_straight_line_is_the_t_interval():
    """For a model linear in its parameters the profile interval equals the linearised Student-t interval
    (Bates & Watts 1988, ch. 6 [BatesWatts1988]): profiled over the slope (the intercept re-fitted at each
    slope), the ends match scipy.stats.linregress's slope ± t·stderr [SciPy2020]; a grid that stops inside
    the interval leaves that side open."""
    from scipy.stats import linregress, t

    rng = np.random.default_rng(5)
    x = np.linspace(0, 1, 40)
    y = 1.0 - 2.0 * x + rng.normal(0, 0.2, x.size)
    fit = linregress(x, y)
    half = float(t.ppf(0.975, x.size - 2)) * fit.stderr
    best = float(np.sum((fit.intercept + fit.slope * x - y) ** 2))

    def profile(slope):
        intercept = np.mean(y - slope * x)
        return float(np.sum((intercept + slope * x - y) ** 2))

    grid = np.linspace(fit.slope - 3 * half, fit.slope + 3 * half, 2001)
    chi = np.array([profile(b) for b in grid])
    lo, hi, low_open, high_open, threshold = fit_stats.profile_interval(grid, chi, best, x.size - 2, 0.95)
    assert not low_open
    assert not high_open
    assert lo == pytest.approx(fit.slope - half, abs=1e-4 * half)
    assert hi == pytest.approx(fit.slope + half, abs=1e-4 * half)
    assert threshold == pytest.approx(best / (x.size - 2) * float(t.ppf(0.975, x.size - 2)) ** 2)
    short = grid[grid < fit.slope + 0.5 * half]
    lo2, hi2, low_open2, high_open2, _ = fit_stats.profile_interval(short, chi[:short.size], best, x.size - 2, 0.95)
    assert high_open2
    assert not low_open2
    assert hi2 == short[-1]
    assert lo2 == pytest.approx(lo)


def test_aicc_formula():
    """AICc = N ln(χ²/N) + 2k + 2k(k+1)/(N-k-1), k = p + 1 (Hurvich & Tsai 1989 [HurvichTsai1989]),
    evaluated by hand for N = 20, p = 2, χ² = 5."""
    expected = 20 * math.log(5 / 20) + 6 + 2 * 3 * 4 / 16
    assert fit_stats.aicc(5.0, 20, 2) == pytest.approx(expected, rel=1e-14)


def test_runs_test_by_hand():
    """Signs + + - - + - (n+ = 3, n- = 3, R = 4): E[R] = 4, Var[R] = 2·9·12/(36·5) = 1.2
    (Wald & Wolfowitz 1940 [WaldWolfowitz1940]), so z = 0."""
    runs, z, p = fit_stats.runs_test(np.array([1.0, 2.0, -1.0, -3.0, 0.5, -0.2]))
    assert runs == 4
    assert z == pytest.approx(0.0, abs=1e-14)
    assert p == pytest.approx(0.5, abs=1e-14)


def test_runs_test_flags_a_missed_component_and_passes_noise():
    """One exponential fitted to a two-exponential curve leaves long runs; two do not."""
    y = two_exponentials(T) + np.random.default_rng(5).normal(0, 0.05e-3, T.size)
    assert fit_exponentials(T, y, 1).residual_check.structured
    assert not fit_exponentials(T, y, 2).residual_check.structured


def test_identifiability_names_a_correlated_pair():
    """Two nearly parallel columns are reported as inseparable (Rall et al. 1992 [Rall1992])."""
    x = np.linspace(0, 1, 100)
    J = np.column_stack([x, x * 1.0001 + 1e-6, np.cos(x)])
    cov, _ = fit_stats.linearised_covariance(J, 1.0)
    report = fit_stats.identifiability(J, cov, ("a", "b", "c"))
    assert not report.separable
    assert report.correlated[0][:2] == ("a", "b")
    assert any("cannot separate a from b" in s for s in report.statements())


# --------------------------------------------------------------------------------------
# fits
# --------------------------------------------------------------------------------------
def test_peeling_start_is_near_the_truth():
    """The peeled starting guess (Rall 1969 [Rall1969]) lands within 10 % of the slow and 50 % of
    the fast time constant (a start, not an estimate)."""
    start = peel_start(T, two_exponentials(T), 2)
    assert start[0] == pytest.approx(TAUS[0], rel=0.1)
    assert start[1] == pytest.approx(TAUS[1], rel=0.5)


def test_recovery_and_choice_of_two_exponentials():
    """A noisy two-exponential charging curve: AICc chooses two, the intervals hold the truth."""
    y = two_exponentials(T) + np.random.default_rng(7).normal(0, 0.05e-3, T.size)
    d = decompose(T, y, window=(0.0, None))
    f = d.fit
    assert f.components == 2
    for k in range(2):
        lo, hi = f.time_constant_intervals[k]
        assert lo < TAUS[k] < hi
        assert f.time_constants[k] == pytest.approx(TAUS[k], rel=0.1)
    assert f.offset == pytest.approx(10e-3, rel=0.01)
    assert f.coefficients == pytest.approx([0.7, 0.2], rel=0.1)


def test_one_exponential_is_rarely_split():
    """Data with one exponential: AICc and the admissibility rules keep one in at least 9 of 10
    noise draws (AICc's penalty makes a spurious second term unlikely, not impossible)."""
    counts = []
    for seed in range(10):
        y = 5e-3 * (1 - np.exp(-T / 0.02)) + np.random.default_rng(seed).normal(0, 0.05e-3, T.size)
        counts.append(decompose(T, y, window=(0.0, None)).fit.components)
    assert counts.count(1) >= 9, counts


def test_decay_without_offset():
    """A decay to rest (offset fixed at 0) is fitted with the same machinery."""
    y = 7e-3 * np.exp(-T / TAUS[0]) + 2e-3 * np.exp(-T / TAUS[1])
    f = fit_exponentials(T, y + np.random.default_rng(9).normal(0, 0.02e-3, T.size), 2, offset=False)
    assert f.offset == 0.0
    assert f.coefficients is None
    assert f.time_constants == pytest.approx(TAUS, rel=0.05)


def test_coverage_of_the_95_percent_intervals():
    """Over 200 noise draws the 95 % intervals of τ0, τ1 and both amplitudes each hold the truth in
    about 95 % of draws (Bates & Watts 1988 [BatesWatts1988]). Binomial(200, 0.95) has sd 3.1, so
    176..199 (about 0.95 ± 2.5 sd) is accepted; intervals that were too narrow or too wide by a
    factor of 1.5 would fall outside (coverage 0.83 or 0.995)."""
    rng = np.random.default_rng(12)
    v = two_exponentials(T)
    hits = np.zeros(4, dtype=int)
    draws = 200
    for _ in range(draws):
        f = fit_exponentials(T, v + rng.normal(0, 0.1e-3, T.size), 2)
        tau, amp = f.time_constant_intervals, f.amplitude_intervals
        hits += [tau[0, 0] <= TAUS[0] <= tau[0, 1], tau[1, 0] <= TAUS[1] <= tau[1, 1],
                 amp[0, 0] <= AMPS[0] <= amp[0, 1], amp[1, 0] <= AMPS[1] <= amp[1, 1]]
    assert np.all(hits >= 176), hits
    assert np.all(hits <= 199), hits


def test_bootstrap_intervals_agree_with_the_covariance_and_are_seeded():
    """The residual bootstrap (Efron & Tibshirani 1993 [EfronTibshirani1993]) gives intervals of the
    same width as the linearised ones (within 40 %) and the same numbers for the same seed."""
    y = two_exponentials(T) + np.random.default_rng(13).normal(0, 0.1e-3, T.size)
    a = fit_exponentials(T, y, 2, bootstrap=100, seed=4)
    b = fit_exponentials(T, y, 2, bootstrap=100, seed=4)
    assert np.array_equal(a.bootstrap_time_constant_intervals, b.bootstrap_time_constant_intervals)
    width = np.diff(a.time_constant_intervals, axis=1).ravel()
    boot = np.diff(a.bootstrap_time_constant_intervals, axis=1).ravel()
    assert boot == pytest.approx(width, rel=0.4)


def test_given_window_is_respected():
    y = two_exponentials(T)
    d = decompose(T, y, window=(5e-3, 40e-3))
    assert d.window[0] >= 5e-3
    assert d.window[1] <= 40e-3
    assert not d.window_chosen


def test_window_rule_skips_an_electrode_artefact():
    """A fast, large electrode transient (τ = 0.15 ms) in the first samples: the chosen window
    starts after it, or the artefact is taken up as an extra fastest component; either way the two
    slow time constants are recovered."""
    t = np.arange(1, 1201) * 0.05e-3
    y = two_exponentials(t) + 20e-3 * np.exp(-t / 0.15e-3)
    y = y + np.random.default_rng(14).normal(0, 0.05e-3, t.size)
    d = decompose(t, y)
    assert d.fit.time_constants[:2] == pytest.approx(TAUS, rel=0.1)


def test_refusals():
    with pytest.raises(InputError, match="differ in length"):
        fit_exponentials(T, T[:-1], 1)
    with pytest.raises(InputError, match="window is too short"):
        fit_exponentials(T[:8], T[:8], 3)
    with pytest.raises(InputError, match="at least 10"):
        decompose(T, two_exponentials(T), window=(1.0, None))
    with pytest.raises(InputError, match="does not change"):
        decompose(T, np.zeros_like(T), window=(0.0, None))
    noise = np.random.default_rng(2).normal(0, 1e-3, T.size)
    with pytest.raises(ConvergenceError, match="no sum of exponentials"):
        decompose(T, noise, max_components=2, window=(0.0, None))


# --------------------------------------------------------------------------------------
# into the inverse problem
# --------------------------------------------------------------------------------------
def test_round_trip_through_peel_ball_and_stick():
    """Exact ball-and-stick charging (L = 1, ρ = 5, τm = 20 ms; the project's check case, Rall 1969
    [Rall1969]) plus noise: the fit's τ0/τ1 and C1/C0 give back L and ρ within their intervals and the
    same L as cabletheory.inverse given those two ratios."""
    t, y = soma_trace(0.02, 1.0, 5.0, 200e6)
    fit = decompose(t, y).fit
    p = peeling_from_fit(fit)
    assert p.electrotonic_length == pytest.approx(1.0, rel=0.05)
    assert p.conductance_ratio == pytest.approx(5.0, rel=0.35)
    assert p.electrotonic_length_interval[0] < 1.0 < p.electrotonic_length_interval[1]
    assert p.conductance_ratio_interval[0] < 5.0 < p.conductance_ratio_interval[1]
    direct = inverse.estimate_from_peeling(p.time_constant_ratio, p.coefficient_ratio)
    assert direct.solutions[0].electrotonic_length == pytest.approx(p.electrotonic_length, rel=1e-12)
    assert p.membrane_time_constant == pytest.approx(0.02, rel=0.01)


def test_published_check_point_johnston_1981():
    """Johnston 1981 [Johnston1981]: mean CA3 cell L = 0.94, ρ = 1.51, τm = 23.6 ms. The exact soma
    response of that ball and stick, with noise, fitted as exponentials and inverted, gives back L
    within 5 % and ρ within 25 %."""
    t, y = soma_trace(0.0236, 0.94, 1.51, 50e6, current=200e-12, dt=0.05e-3, samples=2400, noise=0.02e-3, seed=3)
    p = peeling_from_fit(decompose(t, y).fit)
    assert p.electrotonic_length == pytest.approx(0.94, rel=0.05)
    assert p.conductance_ratio == pytest.approx(1.51, rel=0.25)
    assert p.membrane_time_constant == pytest.approx(0.0236, rel=0.01)


def test_one_exponential_cannot_be_inverted():
    f = fit_exponentials(T, 5e-3 * (1 - np.exp(-T / 0.02)), 1)
    with pytest.raises(InputError, match="two exponentials"):
        peeling_from_fit(f)
