"""Passive models fitted directly to traces (cabletheory.fit_model).

Synthetic recordings are the package's exact soma responses (cabletheory.transient.charge, checked
against Rall 1969 [Rall1969] and mpmath [mpmath2023] in other tests) plus seeded Gaussian noise;
the fit must give back the parameters that made them, with intervals that hold them, and say in
words when the data cannot separate parameters (Rall et al. 1992 [Rall1992]). Published parameter
sets serve as check points: Johnston 1981 [Johnston1981] (mean CA3 cell).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from cabletheory.errors import InputError
from cabletheory.fit_model import fit_model, model_case
from cabletheory.inverse import membrane_properties
from cabletheory.transient import charge


def trace(model, tau, L, rho, r_n, *, current=100e-12, dt=0.1e-3, samples=600, noise=0.1e-3, seed=1,
          duration=None):
    case, _ = model_case(model, tau, L, rho, r_n, current, duration=duration)
    t = np.arange(1, samples + 1) * dt
    v = charge(case.cell, case.stimulus, t, [0.0]).voltage[:, 0]
    return t, v + np.random.default_rng(seed).normal(0.0, noise, t.size)


def test_model_case_reproduces_the_cell_it_was_built_from():
    """The equivalent cell has the requested τm, L, ρ and input resistance (Rall 1959 [Rall1959]:
    R_N = 1/(G_S + G_D), G_D = G∞ tanh L)."""
    case, props = model_case("ball-and-stick", 0.02, 1.0, 5.0, 200e6, 100e-12)
    assert case.membrane_time_constant == pytest.approx(0.02, rel=1e-12)
    assert case.cylinder.electrotonic_length == pytest.approx(1.0, rel=1e-12)
    assert case.cell.conductance_ratio == pytest.approx(5.0, rel=1e-9)
    steady = charge(case.cell, case.stimulus, [100.0], [0.0]).voltage[0, 0]
    assert steady / 100e-12 == pytest.approx(200e6, rel=1e-9)
    assert props.membrane_resistivity == pytest.approx(0.02 / 0.01, rel=1e-12)


def test_ball_and_stick_recovery():
    """τm = 20 ms, L = 1, ρ = 5, R_N = 200 MΩ (the project's check case): every estimate within its
    95 % interval and within a few per cent; the fitted case's own charge is the fitted curve."""
    t, y = trace("ball-and-stick", 0.02, 1.0, 5.0, 200e6, samples=1000, dt=0.06e-3, noise=0.1e-3)
    f = fit_model(t, y, current=100e-12, window=(0.0, None))
    truth = {"membrane_time_constant": 0.02, "electrotonic_length": 1.0, "conductance_ratio": 5.0,
             "input_resistance": 200e6}
    for name, value in truth.items():
        lo, hi = f.interval(name)
        assert lo < value < hi, name
        assert f.value(name) == pytest.approx(value, rel=0.15), name
    again = charge(f.case.cell, f.case.stimulus, f.times, [0.0]).voltage[:, 0]
    assert again == pytest.approx(f.fitted, abs=1e-9)
    assert not f.residual_check.structured
    assert f.converged


def test_cylinder_recovery_and_a_wrong_model_is_flagged():
    """A sealed cylinder with L = 1 (Rall 1969 [Rall1969]: τ0/τ1 = 1 + π²) is recovered by the
    cylinder fit; the same data fitted as a ball and stick send ρ to the top of its range or make it
    inseparable, and a ball and stick's data fitted as a cylinder leave structured residuals."""
    t, y = trace("cylinder", 0.02, 1.0, math.inf, 150e6, noise=0.05e-3)
    f = fit_model(t, y, model="cylinder", current=100e-12, window=(0.0, None))
    assert f.value("electrotonic_length") == pytest.approx(1.0, rel=0.05)
    lo, hi = f.interval("electrotonic_length")
    assert lo < 1.0 < hi
    t2, y2 = trace("ball-and-stick", 0.02, 1.0, 2.0, 150e6, noise=0.05e-3)
    wrong = fit_model(t2, y2, model="cylinder", current=100e-12, window=(0.0, None))
    assert wrong.residual_check.structured


def test_short_record_cannot_separate_tau_from_input_resistance():
    """A record of only a fifth of τm never shows the steady state: τm, R_N (and L, ρ) trade off,
    and the fit says so in words (Rall et al. 1992 [Rall1992])."""
    t, y = trace("ball-and-stick", 0.02, 1.0, 5.0, 200e6, dt=0.02e-3, samples=200, noise=0.2e-3)
    f = fit_model(t, y, current=100e-12, window=(0.0, None))
    assert not f.condition.separable
    assert any("cannot separate" in n or "flat" in n or "edge" in n for n in f.notes)


def test_published_check_point_johnston_1981():
    """Johnston 1981 [Johnston1981]: mean CA3 cell L = 0.94, ρ = 1.51, τm = 23.6 ms. The exact
    response with noise is fitted back within its intervals."""
    t, y = trace("ball-and-stick", 0.0236, 0.94, 1.51, 60e6, current=200e-12, dt=0.1e-3, samples=800,
                 noise=0.05e-3, seed=4)
    f = fit_model(t, y, current=200e-12, window=(0.0, None))
    for name, value in (("membrane_time_constant", 0.0236), ("electrotonic_length", 0.94),
                        ("conductance_ratio", 1.51)):
        lo, hi = f.interval(name)
        assert lo < value < hi, name


def test_pulse_response_and_unknown_current():
    """A 30 ms pulse, on and off, fitted without the current: V∞ = I·R_N is determined, R_N is not,
    and a note says so; τm and L come back."""
    t, y = trace("ball-and-stick", 0.02, 1.0, 5.0, 200e6, duration=0.03, samples=600, noise=0.05e-3)
    f = fit_model(t, y, duration=0.03, window=(0.0, None))
    assert not f.current_known
    assert any("not given" in n for n in f.notes)
    assert f.value("membrane_time_constant") == pytest.approx(0.02, rel=0.05)
    assert f.value("input_resistance") * f.current == pytest.approx(200e6 * 100e-12, rel=0.02)


def test_coverage_of_model_intervals():
    """Over 25 noise draws of a fast cylinder fit, the 95 % interval of L holds the truth in 21 to 25
    draws (Binomial(25, 0.95): P(X ≤ 20) ≈ 0.7 %; Bates & Watts 1988 [BatesWatts1988]). The larger
    coverage check (200 draws) is that of the exponential fit."""
    case, _ = model_case("cylinder", 0.02, 1.0, math.inf, 150e6, 100e-12)
    t = np.arange(1, 201) * 0.3e-3
    v = charge(case.cell, case.stimulus, t, [0.0]).voltage[:, 0]
    rng = np.random.default_rng(21)
    hits = 0
    for _ in range(25):
        f = fit_model(t, v + rng.normal(0, 0.2e-3, t.size), model="cylinder", current=100e-12, window=(0.0, None))
        lo, hi = f.interval("electrotonic_length")
        hits += lo <= 1.0 <= hi
    assert 21 <= hits <= 25


def test_membrane_properties_follow_the_assumed_cm_and_ri():
    """Rm = τm/Cm; the equivalent cell's diameter follows Rall's G∞ (Rall 1959 [Rall1959])."""
    t, y = trace("ball-and-stick", 0.02, 1.0, 5.0, 200e6, noise=0.05e-3)
    f = fit_model(t, y, current=100e-12, window=(0.0, None), membrane_capacitance=0.009, axial_resistivity=1.5)
    p = f.properties
    assert p.membrane_resistivity == pytest.approx(f.value("membrane_time_constant") / 0.009, rel=1e-12)
    expected = membrane_properties(f.value("membrane_time_constant"), f.value("electrotonic_length"),
                                   f.value("conductance_ratio"), input_resistance=f.value("input_resistance"),
                                   membrane_capacitance=0.009, axial_resistivity=1.5)
    assert p.diameter == pytest.approx(expected.diameter, rel=1e-12)


def test_refusals():
    t, y = trace("cylinder", 0.02, 1.0, math.inf, 150e6)
    with pytest.raises(InputError, match="model"):
        fit_model(t, y, model="tree")
    with pytest.raises(InputError, match="current"):
        fit_model(t, y, current=0.0)
    with pytest.raises(InputError, match="samples"):
        fit_model(t[:5], y[:5], window=(0.0, None))
