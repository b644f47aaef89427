"""cabletheory.contour (parabolic-contour inversion) and cabletheory.laplace (soma + cylinder transform).

Known transform pairs (Abramowitz & Stegun 1964 [AbramowitzStegun1964], table 29.3, [MEM]; one
pair is re-checked here by mpmath's Talbot inversion [mpmath2023]) and the independent Laplace-domain reference
of tests/laplace_reference.py. The error estimate must exceed the true error at every point.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from laplace_reference import Case
from scipy.special import erf, erfc

from cabletheory import contour, laplace
from cabletheory.errors import InputError

TIMES = np.geomspace(1e-12, 1e6, 37)


@pytest.mark.parametrize(("name", "transform", "exact"), [
    # A&S 29.3.8 [MEM]: 1/(s(s+1)) <-> 1 - e^{-t}
    ("exponential", lambda s: 1 / (s * (s + 1)), lambda t: -np.expm1(-t)),
    # A&S 29.3.44 with a shift [MEM]: 1/(s√(s+1)) <-> erf√t (Hodgkin & Rushton 1946 [HodgkinRushton1946])
    ("erf", lambda s: 1 / (s * np.sqrt(s + 1)), lambda t: erf(np.sqrt(t))),
    # A&S 29.3.83 [MEM]: e^{-k√s}/s <-> erfc(k/(2√t)), k = 1e-3
    ("erfc", lambda s: np.exp(-1e-3 * np.sqrt(s)) / s, lambda t: erfc(1e-3 / (2 * np.sqrt(t)))),
    # A&S 29.3.7 [MEM]: 1/(s+1)^2 <-> t e^{-t}
    ("alpha", lambda s: 1 / (s + 1) ** 2, lambda t: t * np.exp(-t)),
])
def test_known_pairs(name, transform, exact):
    result = contour.invert(lambda s: transform(s)[:, None], TIMES)
    want = exact(TIMES)
    error = np.abs(result.values[:, 0] - want)
    assert np.all(error <= result.error_estimate[:, 0]), name
    assert np.all(result.error_estimate[:, 0] <= 1e-12)  # the estimate is useful, not just safe


def test_known_pair_checked_by_talbot():
    """The erf pair above, independently by mpmath's Talbot inversion at 30 digits."""
    with mp.workdps(30):
        talbot = mp.invertlaplace(lambda s: 1 / (s * mp.sqrt(s + 1)), 0.37, method="talbot")
    assert float(talbot) == pytest.approx(erf(math.sqrt(0.37)), rel=1e-14)


def test_rest_before_onset_and_shapes():
    result = contour.invert(lambda s: (1 / s)[:, None, None] * np.ones((1, 2, 3)), [-1.0, 0.0, 2.0])
    assert result.values.shape == (3, 2, 3)
    assert np.all(result.values[:2] == 0)
    assert np.all(result.error_estimate[:2] == 0)
    np.testing.assert_allclose(result.values[2], 1.0, rtol=1e-13)
    with pytest.raises(InputError, match="coarse"):
        contour.invert(lambda s: s[:, None], [1.0], coarse=20, fine=20)


def test_estimate_tracks_node_count():
    """Fewer nodes: a larger true error, and the estimate still covers it (e^{-2πN/3} decay,
    Weideman & Trefethen 2007 [WeidemanTrefethen2007] [MEM])."""
    result = contour.invert(lambda s: (1 / (s * np.sqrt(s + 1)))[:, None], TIMES, coarse=6, fine=8)
    error = np.abs(result.values[:, 0] - erf(np.sqrt(TIMES)))
    assert error.max() > 1e-8
    assert np.all(error <= result.error_estimate[:, 0])


def test_green_reduces_to_steady_state():
    """At s → 0 the transform times s is the steady voltage, (cosh X + y sinh X)·ψ/W at s = 0
    (Rall 1959 [Rall1959], 1969; sealed end: cosh(L-X)/sinh L at y = 0; the demo cable of
    docs/sources.md, computed)."""
    L = 0.7071067812
    got = laplace.green(np.array([1e-300 + 0j]), [0.0, L / 2, L], 0.0, L)[0].real
    np.testing.assert_allclose(got, [739.3466931 / 450.1581581, 0.8433766820 * 739.3466931 / 450.1581581,
                                     0.7932781817 * 739.3466931 / 450.1581581], rtol=2e-9)


@settings(derandomize=True, max_examples=60, deadline=None)
@given(L=st.floats(-4, 3), T=st.floats(-12, 6), y=st.floats(-3, 3), b=st.sampled_from([0.0, 0.3, 1.0, 7.0, math.inf]),
       where=st.sampled_from(["soma", "end", "inside"]), site=st.sampled_from(["soma", "end", "inside", "source"]),
       shape=st.sampled_from(["step", "alpha"]), a=st.floats(-4, 1))
def test_ball_and_stick_against_reference(L, T, y, b, where, site, shape, a):
    """Soma + cylinder, any end, source and site: the inversion is within its estimate of the
    40-digit Talbot reference (tests/laplace_reference.py)."""
    L, T, y, a = 10.0**L, 10.0**T, 10.0**y, 10.0**a
    x0 = {"soma": 0.0, "end": L, "inside": 0.37 * L}[where]
    x = {"soma": 0.0, "end": L, "inside": 0.81 * L, "source": x0}[site]
    v, e = laplace.current_inversion([x], x0, [T], L, b, y, shape=shape, time_to_peak=a)
    want = Case("ball", shape, L=mp.mpf(L), B=mp.inf if math.isinf(b) else b, y=y, source=x0,
                time_to_peak=a).value(T, x)
    assert abs(v[0, 0] - float(want)) <= e[0, 0]
    assert e[0, 0] <= 1e-12 + 1e-11 * abs(float(want))  # useful, not merely safe


@pytest.mark.parametrize(("name", "transform", "exact"), [
    # three of the pairs above (Abramowitz & Stegun 1964 [AbramowitzStegun1964], table 29.3, [MEM])
    ("exponential", lambda s: 1 / (s * (s + 1)), lambda t: -np.expm1(-t)),
    ("erf", lambda s: 1 / (s * np.sqrt(s + 1)), lambda t: erf(np.sqrt(t))),
    ("erfc", lambda s: np.exp(-1e-3 * np.sqrt(s)) / s, lambda t: erfc(1e-3 / (2 * np.sqrt(t)))),
])
@pytest.mark.parametrize("tolerance", [1e-6, 1e-11])
def test_known_pairs_on_hyperbolic_windows(name, transform, exact, tolerance):
    """The hyperbolic contours shared by windows of times (Weideman & Trefethen 2007
    [WeidemanTrefethen2007] [MEM]), on step-like transforms (sF tends to the final value 1, the
    scale given): within the estimate everywhere, and the estimate within the tolerance."""
    times = np.concatenate(([-1.0, 0.0], np.geomspace(1e-8, 1e4, 61)))
    result = contour.invert_windowed(lambda s: transform(s)[:, None], times, tolerance=tolerance, scale=1.0)
    error = np.abs(result.values[:, 0] - np.where(times > 0, exact(np.maximum(times, 1e-300)), 0.0))
    assert np.all(error <= result.error_estimate[:, 0]), name
    assert result.error_estimate.max() <= tolerance
    assert np.all(result.values[:2] == 0)
    assert "hyperbolic" in result.method


A_VALUES = [1e-3, 1e-2, 0.1, 1.0, 10.0]
WIDE_TIMES = np.geomspace(1e-8, 1e4, 61)


def _double(a):
    """1/(s+a)^2 <-> t e^{-at}, peak 1/(ae) at t = 1/a (A&S 29.3.7 [AbramowitzStegun1964] [MEM])."""
    return (lambda s: (1 / (s + a) ** 2)[:, None]), (lambda t: t * np.exp(-a * t)), 1 / (a * math.e)


def _triple(a):
    """1/(s+a)^3 <-> t^2 e^{-at}/2, peak 2/(ae)^2 at t = 2/a (A&S 29.3.7 with n = 3 [AbramowitzStegun1964] [MEM])."""
    return (lambda s: (1 / (s + a) ** 3)[:, None]), (lambda t: t**2 * np.exp(-a * t) / 2), 2 / (a * math.e) ** 2


@pytest.mark.parametrize("a", A_VALUES)
@pytest.mark.parametrize("tolerance", [1e-4, 1e-8, 1e-11])
@pytest.mark.parametrize("pair", [_double, _triple], ids=["double", "triple"])
def test_hyperbolic_estimate_holds_for_poles_near_the_origin(pair, a, tolerance):
    """A double or triple pole at -a, scaled by its own peak (the alpha shape; Weideman & Trefethen
    2007 [WeidemanTrefethen2007] [MEM] do not track the transform's constant): the constant measured
    from the sums on every second and third node keeps the estimate above the true error, and the
    nodes grow until the estimate meets the tolerance."""
    transform, exact, peak = pair(a)
    result = contour.invert_windowed(transform, WIDE_TIMES, tolerance=tolerance, scale=peak)
    error = np.abs(result.values[:, 0] - exact(WIDE_TIMES))
    assert np.all(error <= result.error_estimate[:, 0])
    assert result.error_estimate.max() <= tolerance * peak
    assert result.notes == ()


def test_hyperbolic_estimate_does_not_lean_on_the_scale():
    """t e^{-at} (A&S 29.3.7 [AbramowitzStegun1964] [MEM]) with a scale 1000 times below its peak:
    the measured constant, not the scale, sets the estimate; it still holds and meets the
    tolerance, at more nodes (and more evaluations) than with the peak as the scale."""
    transform, exact, peak = _double(0.1)
    honest = contour.invert_windowed(transform, WIDE_TIMES, tolerance=1e-8, scale=peak)
    small = contour.invert_windowed(transform, WIDE_TIMES, tolerance=1e-8, scale=peak / 1000)
    error = np.abs(small.values[:, 0] - exact(WIDE_TIMES))
    assert np.all(error <= small.error_estimate[:, 0])
    assert small.error_estimate.max() <= 1e-8 * peak / 1000
    assert small.nodes > honest.nodes
    assert small.evaluations > honest.evaluations


def test_hyperbolic_nodes_stop_at_the_cap_and_say_so():
    """At 1e-13 of the peak of t e^{-at}, a = 0.01 (A&S 29.3.7 [AbramowitzStegun1964] [MEM]), the
    rounding of the sums keeps the estimate above the tolerance: the nodes stop at MAX_NODES, the
    notes say so, and the estimate still holds (it is not trimmed to the tolerance)."""
    transform, exact, peak = _double(0.01)
    result = contour.invert_windowed(transform, WIDE_TIMES, tolerance=1e-13, scale=peak)
    error = np.abs(result.values[:, 0] - exact(WIDE_TIMES))
    assert np.all(error <= result.error_estimate[:, 0])
    assert result.nodes == contour.MAX_NODES
    assert result.error_estimate.max() > 1e-13 * peak
    assert result.notes
    assert all("exceeds the tolerance" in n for n in result.notes)
    assert any("(the most allowed)" in n for n in result.notes)


def test_hyperbolic_estimate_for_nearly_coincident_poles():
    """A double pole at -1000 beside a simple pole at -1036 (an alpha current of 1 ms time to peak
    meeting a decay rate of the cell): the 40-digit Talbot inversion of mpmath [mpmath2023]
    [Talbot1979] is within the estimate, from 10 µs to 1 s."""
    t = np.geomspace(1e-5, 1.0, 25)
    with mp.workdps(40):
        exact = np.array([float(mp.invertlaplace(lambda p: 1 / ((p + 1000) ** 2 * (p + 1036)), x, method="talbot"))
                          for x in t])
    peak = float(np.abs(exact).max())
    for tolerance in (1e-6, 1e-10):
        result = contour.invert_windowed(lambda s: (1 / ((s + 1000) ** 2 * (s + 1036)))[:, None], t,
                                         tolerance=tolerance, scale=peak)
        assert np.all(np.abs(result.values[:, 0] - exact) <= result.error_estimate[:, 0])
        assert result.error_estimate.max() <= tolerance * peak


@pytest.mark.parametrize("a", [*A_VALUES, 100.0])
@pytest.mark.parametrize("pair", [_double, _triple], ids=["double", "triple"])
def test_parabolic_estimate_holds_for_poles_near_the_origin(pair, a):
    """The per-time parabolas do not share the hyperbolas' weakness: their estimate is a difference
    of two node counts, which carries the transform's constant (A&S 29.3.7 [AbramowitzStegun1964] [MEM])."""
    transform, exact, peak = pair(a)
    times = np.geomspace(1e-8, 1e6, 81)
    result = contour.invert(transform, times)
    error = np.abs(result.values[:, 0] - exact(times))
    assert np.all(error <= result.error_estimate[:, 0])
    assert result.error_estimate.max() <= 1e-12 * max(peak, 1.0)
