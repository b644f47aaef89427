"""Every stated bound holds and every time gets an answer (docs/accuracy.md, the accuracy contract).

Each value of ``transient.charge`` (and of the exact cases of ``verify``) is compared with the
independent Laplace-domain reference of tests/laplace_reference.py: the model's transform
written from its boundary-value problem (Rall 1969 [Rall1969]; Jack, Noble & Tsien 1975
[JackNobleTsien1975] [MEM]) and inverted by mpmath's Talbot routine [mpmath2023] [Talbot1979] at
40 digits. A value whose error exceeds its own bound fails.

The property test draws cases across the whole range (L 1e-4..1000, T 1e-12..1e6, B 0..∞,
soma ratio 1e-3..1e3, every model and stimulus, sites at the ends, 1 nm from the far end and
inside, times a few ulps after a pulse ends); the regression tests replay the cases reported
in the issue "Every stated bound holds and every time gets an answer". The 10,000-case fuzz is
``benchmarks/fuzz_accuracy.py`` (README, "Accuracy").
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from accuracy_cases import LAMBDA, MEMBRANE, R_INF, SITES, TAU, Draw, check
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from laplace_reference import si_voltage

from cabletheory import cable, transient, verify
from cabletheory.case import Case


def _within(response, model, stimulus, *, relative: float | None = None, digits: int | None = None) -> None:
    """Every value within its own bound of the reference (and, if given, of ``relative`` × |value|);
    the reference at ``digits`` working digits (default: laplace_reference.DIGITS, 40)."""
    for i, t in enumerate(response.times):
        for j, x in enumerate(response.positions):
            want = si_voltage(model, stimulus, float(t), float(x), digits=digits)
            error = float(abs(mp.mpf(response.voltage[i, j]) - want))
            assert error <= response.bounds[i, j], (t, x, response.voltage[i, j], float(want), response.bounds[i, j])
            assert response.bounds[i, j] <= response.error_bound
            if relative is not None:
                assert response.bounds[i, j] <= relative * abs(float(want)), (t, x, response.bounds[i, j], float(want))


# --------------------------------------------------------------------------------------
# the property test: the whole range
# --------------------------------------------------------------------------------------
draws = st.builds(
    Draw,
    model=st.sampled_from(["cylinder", "semi-infinite", "infinite", "ball"]),
    stimulus=st.sampled_from(["step", "pulse", "alpha", "clamp"]),
    log_length=st.floats(-4, 3),
    end=st.sampled_from([0.0, math.inf, 1e-3, 0.5, 1.0, 30.0, 1e3]),
    log_soma=st.floats(-3, 3),
    source=st.sampled_from(["origin", "end", "inside"]),
    inside=st.floats(0.0, 1.0),
    log_duration=st.floats(-6, 1),
    log_peak=st.floats(-4, 1),
    log_time=st.floats(-12, 6),
    after_switch=st.sampled_from([0, 0, 0, 1, 2, 6]),
    sites=st.lists(st.sampled_from(SITES), min_size=1, max_size=2, unique=True).map(tuple),
)


@settings(derandomize=True, max_examples=50, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(draw=draws)
def test_every_value_within_its_bound(draw):
    worst, where = check(draw)
    assert worst <= 1.0, where


# --------------------------------------------------------------------------------------
# regression: the numbered cases of the issue
# --------------------------------------------------------------------------------------
def _demo_cylinder(length: float = 500e-6, end_conductance: float = 0.0) -> cable.Cylinder:
    # the demo cable of docs/sources.md: Rm 20 000 Ω·cm², Ri 200 Ω·cm, Cm 1 µF/cm², d 2 µm, ℓ 500 µm
    return cable.Cylinder(**MEMBRANE, length=length, end_conductance=end_conductance)


PULSE_GRID = np.arange(21) * 0.1 * 1e-3  # 0:2:0.1 ms as a user types it; 3 × 0.1 ms = 0.30000000000000004 ms
# The pulse-grid cases (items 1 and 2: moderate times, values far from underflow) take their
# reference at 20 working digits instead of 40: measured over every value of both items, the
# 20-digit reference differs from the 40-digit one by at most 3.7e-21 of the value and 1.2e-10 of
# the value's bound (the bounds are 2e-14 V and more), so the check keeps its full power. The
# property test and the early-time items keep 40 digits: there the values are tiny beside the
# contour's integrand and 20 digits are not enough.
PULSE_GRID_DIGITS = 20


@pytest.mark.parametrize("model", ["finite", "semi-infinite", "infinite"])
def test_item1_just_after_a_pulse(model):
    """Item 1: one to six floating-point steps after a 0.3 ms pulse ends, every value keeps its bound."""
    m = {"finite": _demo_cylinder(), "semi-infinite": _demo_cylinder(math.inf),
         "infinite": transient.InfiniteCable(**MEMBRANE)}[model]
    pulse = transient.CurrentPulse(100e-12, 0.3e-3)
    after = [0.3e-3]
    for _ in range(6):
        after.append(math.nextafter(after[-1], 1.0))
    times = np.concatenate([PULSE_GRID, after])
    response = transient.charge(m, pulse, times, [0.0, 100e-6])
    assert 0.30000000000000004e-3 in times
    _within(response, m, pulse, digits=PULSE_GRID_DIGITS)


def test_item2_ball_and_stick_on_the_pulse_grid():
    """Item 2: the same grid on a ball and stick is answered (no mode-count refusal), within bounds."""
    model = transient.BallAndStick(_demo_cylinder(), 20e-6)
    pulse = transient.CurrentPulse(100e-12, 0.3e-3)
    response = transient.charge(model, pulse, PULSE_GRID, [0.0, 250e-6])
    _within(response, model, pulse, digits=PULSE_GRID_DIGITS)


@pytest.mark.parametrize("L", [0.5, 1.0, 2.0, 10.0, 100.0, 1000.0])
def test_item3_ball_and_stick_at_every_early_time(L):
    """Item 3: a soma plus cylinder answers every T from 1e-12 on, for L up to 1000."""
    cyl = _demo_cylinder(L * LAMBDA)
    model = transient.BallAndStick.with_conductance_ratio(cyl, 5.0)
    step = transient.CurrentStep(1e-10)
    times = np.array([1e-12, 1e-11, 1e-10, 1e-8, 1e-6, 1e-4, 1e-2, 1.0]) * TAU
    response = transient.charge(model, step, times, [0.0, 0.5 * L * LAMBDA, L * LAMBDA])
    _within(response, model, step)


@pytest.mark.parametrize(("L", "T"), [(1000.0, 1e-8), (1000.0, 1e-6), (1000.0, 1e-10), (1000.0, 1e-12),
                                      (100.0, 1e-6), (100.0, 1e-3), (1e-4, 1e-12), (1.0, 1e-12)])
def test_item4_sealed_series_of_reference_and_compare(L, T):
    """Item 4: the sealed-cylinder case of ``verify.exact_case`` states a bound that holds (the
    factor L in its tail) and answers tiny T."""
    cyl = _demo_cylinder(L * LAMBDA)
    case = verify.exact_case(Case(cyl, transient.CurrentStep(1e-10)), tolerance=1e-15)
    x = np.array([0.0, 0.3 * L * LAMBDA, L * LAMBDA])
    t = np.full(x.shape, T * TAU)
    voltage, bound = case.evaluate(t, x)
    for v, b, xx in zip(voltage, bound, x, strict=True):
        want = si_voltage(cyl, transient.CurrentStep(1e-10), T * TAU, float(xx))
        assert abs(mp.mpf(v) - want) <= b


@pytest.mark.parametrize("offset", [0.0, 1e-9, 1e-7])
@pytest.mark.parametrize("stimulus", ["step", "pulse", "alpha"])
def test_item5_injection_at_and_near_a_killed_end(offset, stimulus):
    """Item 5: a current at a killed end gives V = 0 exactly (answered, not refused); within a
    nanometre of the end every value keeps its bound."""
    cyl = _demo_cylinder(end_conductance=math.inf)
    x0 = cyl.length - offset
    stim = {"step": transient.CurrentStep(1e-10, x0), "pulse": transient.CurrentPulse(1e-10, 1e-4, x0),
            "alpha": transient.AlphaCurrent(1e-10, 1e-4, x0)}[stimulus]
    times = np.array([1e-9, 1e-6, 1e-4, 1e-3, 0.1])
    response = transient.charge(cyl, stim, times, [0.0, x0, cyl.length], tolerance=1e-10)
    if offset == 0.0:
        assert np.all(response.voltage == 0.0)
    _within(response, cyl, stim)
    case = verify.exact_case(Case(cyl, stim), tolerance=1e-15)
    voltage, bound = case.evaluate(times, np.full(times.shape, x0))
    assert np.all(np.isfinite(voltage))
    assert np.all(bound >= 0)


def test_item6_short_cable_early_values_right_to_their_digits():
    """Item 6: L = 6.3e-5 at T = 2.8e-12. Each value has a bound of its own (``bounds``), and the
    value itself is right to its digits (images, not a series subtracted from a steady state
    10^4 times larger)."""
    cyl = _demo_cylinder(6.3e-5 * LAMBDA)
    step = transient.CurrentStep(100e-12)
    response = transient.charge(cyl, step, [2.8e-12 * TAU, 1e-9 * TAU], [0.0, cyl.length])
    _within(response, cyl, step)
    for i, t in enumerate(response.times):
        want = si_voltage(cyl, step, float(t), 0.0)
        assert abs(mp.mpf(response.voltage[i, 0]) - want) <= 1e-13 * abs(want)


def test_per_value_bounds_are_reported():
    """The per-value bounds sit beside the values and the largest is ``error_bound``."""
    response = transient.charge(_demo_cylinder(), transient.CurrentStep(1e-10), [1e-4, 1e-2], [0.0, 5e-4])
    assert response.bounds.shape == response.voltage.shape
    assert response.error_bound == pytest.approx(float(response.bounds.max()))
    assert R_INF > 0


def test_fuzz_find_site_beside_an_input_far_down_a_long_cable():
    """Found by benchmarks/fuzz_accuracy.py (seed 1): a ball and stick of L = 463, input at its
    far end, read 0.33 µm away at T = 1e-12. Dividing positions by λ rounds the 0.33 µm distance
    by 2e-7 of itself; the bound carries that position rounding."""
    draw = Draw(model="ball", stimulus="step", log_length=2.665959608869766, end=231.24083596336808,
                log_soma=-1.7244379390957403, source="end", log_time=-11.967370609453953, sites=("near end",))
    worst, where = check(draw)
    assert worst <= 1.0, where
