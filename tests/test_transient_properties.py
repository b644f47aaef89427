"""Physical identities of the transient solutions (hypothesis, fixed seed)."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cabletheory.cable import Cylinder
from cabletheory.transient import (
    CurrentPulse,
    CurrentStep,
    VoltageStep,
    charge,
    clamp_response,
    current_response,
    steady_green,
)

lengths = st.floats(0.2, 3.0)
fractions = st.floats(0.0, 1.0)
times = st.floats(1e-4, 5.0)
ends = st.sampled_from([0.0, 0.3, 1.0, 5.0, math.inf])
somas = st.sampled_from([0.0, 0.2, 1.5])


@settings(derandomize=True, deadline=None, max_examples=40)
@given(L=lengths, a=fractions, b=fractions, T=times, B=ends, y=somas)
def test_reciprocity(L, a, b, T, B, y):
    """G(X, X0) = G(X0, X) for the time-dependent Green's function (reciprocity, [CP])."""
    X, X0 = a * L, b * L
    v1, _, _ = current_response([X], X0, [T], L, B, y)
    v2, _, _ = current_response([X0], X, [T], L, B, y)
    assert v1[0, 0] == pytest.approx(v2[0, 0], abs=3e-10)


@settings(derandomize=True, deadline=None, max_examples=25)
@given(L=lengths, B=ends, y=somas, X0=fractions)
def test_step_rises_monotonically_to_the_steady_state(L, B, y, X0):
    """A current step charges every point monotonically from 0 to the steady state ([CP])."""
    T = np.concatenate([[0.0], np.geomspace(1e-4, 40, 60)])
    X = np.linspace(0, L, 5)
    v, _, _ = current_response(X, X0 * L, T, L, B, y)
    assert np.all(v[0] == 0.0)
    assert np.all(np.diff(v, axis=0) >= -1e-10)
    np.testing.assert_allclose(v[-1], steady_green(X, X0 * L, L, B, y), rtol=1e-9, atol=1e-12)


@settings(derandomize=True, deadline=None, max_examples=25)
@given(L=lengths, T=times, X0=fractions, D=st.floats(0.01, 1.0))
def test_pulse_is_the_difference_of_two_steps(L, T, X0, D):
    """Superposition: a pulse of duration D is step(T) − step(T − D) ([CP])."""
    X = np.linspace(0, L, 4)
    pulse, _, _ = current_response(X, X0 * L, [T], L, 0.4, shape="pulse", duration=D)
    step, _, _ = current_response(X, X0 * L, [T, T - D], L, 0.4)
    np.testing.assert_allclose(pulse[0], step[0] - step[1], atol=3e-10)


@settings(derandomize=True, deadline=None, max_examples=25)
@given(L=lengths, T=times, a=fractions)
def test_end_limits(L, T, a):
    """B → 0 gives the sealed end, B → ∞ the killed end (leaky-end forms: Rall 1959 [Rall1959],
    1977 [Rall1977] [MEM])."""
    X = [a * L]
    sealed, _, _ = current_response(X, 0.0, [T], L, 0.0)
    nearly_sealed, _, _ = current_response(X, 0.0, [T], L, 1e-9)
    killed, _, _ = current_response(X, 0.0, [T], L, math.inf)
    nearly_killed, _, _ = current_response(X, 0.0, [T], L, 1e9)
    assert nearly_sealed[0, 0] == pytest.approx(sealed[0, 0], rel=1e-7)
    assert nearly_killed[0, 0] == pytest.approx(killed[0, 0], rel=1e-7, abs=1e-9)
    assert killed[0, 0] <= nearly_sealed[0, 0] + 1e-10


@settings(derandomize=True, deadline=None, max_examples=25)
@given(T=times, a=st.floats(0.0, 3.0))
def test_b_equal_one_is_semi_infinite(T, a):
    """B = 1 at any L looks like a semi-infinite continuation only in the steady state; at L large the
    finite cable matches the semi-infinite one at every T (Rall 1959 [Rall1959]; [CP])."""
    finite, _, _ = current_response([a], 0.0, [T], 12.0, 1.0)
    semi, _, _ = current_response([a], 0.0, [T], math.inf)
    assert finite[0, 0] == pytest.approx(semi[0, 0], abs=1e-10)


def test_images_and_series_agree_where_both_apply():
    """Images (small T) and the eigen-series give the same values (two exact representations)."""
    from cabletheory import finite_cable, kernels

    X = np.linspace(0, 1, 6)
    T = np.array([0.02, 0.05, 0.1])
    for B in (0.0, math.inf):
        images = finite_cable._point_images(kernels.point_source_step, X, 0.3, T, 1.0, 1.0 if B == 0 else -1.0, 4)
        series, _, _ = current_response(X, 0.3, T, 1.0, B)
        np.testing.assert_allclose(images, series, atol=1e-11)
        clamp_img = finite_cable._clamp_images(X, T, 1.0, 1.0 if B == 0 else -1.0, 4)
        clamp_ser, _, _ = clamp_response(X, T, 1.0, B)
        np.testing.assert_allclose(clamp_img, clamp_ser, atol=1e-11)


def test_tiny_and_huge_times_stay_finite():
    """T = 1e-12 and T = 1e4 and long cables (L = 200) give finite values; T = 0 gives exactly 0."""
    for L, B in ((200.0, 0.0), (1.0, 0.5), (0.5, math.inf)):
        v, bound, _ = current_response([0.0, 0.5], 0.0, [0.0, 1e-12, 1e-6, 1e4], L, B)
        assert np.all(np.isfinite(v))
        assert np.all(bound <= 1e-10)
        assert v[0].tolist() == [0.0, 0.0]
        np.testing.assert_allclose(v[-1], steady_green(np.array([0.0, 0.5]), 0.0, L, B), rtol=1e-12)


def test_linearity_in_amplitude_and_clamp_sign():
    """Responses scale with the stimulus amplitude and sign (linear membrane)."""
    c = Cylinder(2.0, 2.0, 0.01, 2e-6, 4e-4, 1e-10)
    t = [0.001, 0.01]
    a = charge(c, CurrentPulse(1e-10, 0.002, 1e-4), t, [0.0, 2e-4])
    b = charge(c, CurrentPulse(-3e-10, 0.002, 1e-4), t, [0.0, 2e-4])
    np.testing.assert_allclose(b.voltage, -3 * a.voltage, rtol=1e-13)
    up = charge(c, VoltageStep(0.01), t, [2e-4])
    down = charge(c, VoltageStep(-0.02), t, [2e-4])
    np.testing.assert_allclose(down.voltage, -2 * up.voltage, rtol=1e-13)
    assert charge(c, CurrentStep(1e-10), [0.0], [0.0]).voltage[0, 0] == 0.0
