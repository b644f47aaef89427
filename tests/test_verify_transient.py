"""verify.transient_case: every transient of cabletheory.transient as an exact case for comparison.

Outside references named beside each check (keys of docs/sources.md): values computed with mpmath
[mpmath2023] from Rall 1959 [Rall1959], Rall 1969 [Rall1969] and Hodgkin & Rushton 1946
[HodgkinRushton1946], the independent eigen-series of verify.sealed_step_voltage (Rall 1969), and
scipy quadrature [SciPy2020] of the Hodgkin & Rushton (1946) impulse response.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from cabletheory import transient as tr
from cabletheory import verify as vf
from cabletheory.cable import Cylinder
from cabletheory.case import Case
from cabletheory.errors import FileFormatError, InputError
from cabletheory.units import parse_quantity

UM, MS = 1e-6, 1e-3
RM, RI, CM, D = 2.0, 2.0, 0.01, 2 * UM  # demo cable's membrane and diameter (docs/sources.md)
DEMO = Cylinder(RM, RI, CM, D, 500 * UM)
LAMBDA = DEMO.length_constant  # 707.1067812 µm
TAU = DEMO.time_constant  # 20 ms
R_INF = DEMO.semi_infinite_input_resistance  # 450.1581581 MΩ, computed


def parse(text: str, kind: str, where: str) -> float:
    return parse_quantity(text, kind, where, allow_zero=True, allow_negative=True)


def test_sealed_step_agrees_with_the_independent_series() -> None:
    """Same case, two codes: transient.charge (images / eigen-series) and verify.sealed_step_voltage
    (Rall 1969 [Rall1969] cosine series, written separately) agree to 1e-12 of the final value."""
    times = np.array([0.0, 0.1, 1.0, 5.0, 20.0, 60.0]) * MS
    sites = np.array([0.0, 125.0, 250.0, 500.0]) * UM
    tt, xx = np.meshgrid(times, sites, indexing="ij")
    case = vf.transient_case(Case(DEMO, tr.CurrentStep(100e-12)), 1e-15)
    v, bound = case.evaluate(tt, xx)
    other, _ = vf.sealed_step_voltage(DEMO, 100e-12, tt, xx, 1e-15)
    assert v.shape == tt.shape
    assert v == pytest.approx(other, abs=1e-12 * 73.93466931e-3)
    assert np.all(v[0] == 0.0)  # rest at the onset
    assert np.all(bound < 1e-12)


@pytest.mark.parametrize(("model", "final"), [
    (tr.InfiniteCable.like(DEMO), 0.5 * R_INF),  # V(0,∞) = I R∞/2 ([CP])
    (Cylinder(RM, RI, CM, D, math.inf), R_INF),  # semi-infinite, injected at its end: I R∞
])
def test_injection_site_charges_as_erf_root_t(model, final: float) -> None:
    """V(0,T)/V(0,∞) = erf√T: 0.3452791540, 0.6826894921, 0.8427007929, 0.9544997361 at T = 0.1, 0.5, 1, 2
    (Hodgkin & Rushton 1946 [HodgkinRushton1946]; computed)."""
    case = vf.transient_case(Case(model, tr.CurrentStep(1e-9)), 1e-15)
    T = np.array([0.1, 0.5, 1.0, 2.0])
    v, _ = case.evaluate(T * TAU, np.zeros(4))
    assert v / (1e-9 * final) == pytest.approx([0.3452791540, 0.6826894921, 0.8427007929, 0.9544997361],
                                               abs=1e-9)


def test_infinite_cable_is_symmetric_and_takes_negative_positions() -> None:
    """X = ±1 of an infinite cable injected at 0: V(1,T)/V(0,∞) = 0.2336124405 at T = 1 (computed,
    Hodgkin & Rushton 1946 [HodgkinRushton1946])."""
    case = vf.transient_case(Case(tr.InfiniteCable.like(DEMO), tr.CurrentStep(1e-9, 0.0)))
    assert case.start == -math.inf
    v, _ = case.evaluate(np.full(2, TAU), np.array([-LAMBDA, LAMBDA]))
    assert v / (0.5e-9 * R_INF) == pytest.approx([0.2336124405] * 2, abs=1e-9)


def test_pulse_is_the_difference_of_two_steps() -> None:
    """Pulse of 0.4 τm at X = 0, sealed L = 1: V(T)/V_step(∞) = S(T) - S(T - 0.4) with S computed
    from the Rall 1969 series [Rall1969]: S(0.5) - S(0.1) = 0.5374585210 - 0.2629635738."""
    cylinder = Cylinder(RM, RI, CM, D, LAMBDA)  # L = 1
    final = 1e-9 * R_INF / math.tanh(1.0)  # I R∞ coth L
    case = vf.transient_case(Case(cylinder, tr.CurrentPulse(1e-9, 0.4 * TAU)))
    v, _ = case.evaluate(np.array([0.1, 0.5]) * TAU, np.zeros(2))
    assert v / final == pytest.approx([0.2629635738, 0.5374585210 - 0.2629635738], abs=1e-9)


def test_alpha_current_matches_quadrature_of_the_impulse_response() -> None:
    """Infinite cable, alpha current at X = 0: V = ∫ I(s) h(T - s) ds with the Hodgkin & Rushton (1946)
    [HodgkinRushton1946] impulse response h(T) = R∞ e^{-T} / (2√(πT)) per τm (the T-derivative of
    erf√T / 2), by scipy quad [SciPy2020]."""
    from scipy.integrate import quad

    a = 0.1  # time to peak, τm
    case = vf.transient_case(Case(tr.InfiniteCable.like(DEMO), tr.AlphaCurrent(1e-9, a * TAU)))
    T = np.array([0.05, 0.1, 0.3, 1.0])
    v, _ = case.evaluate(T * TAU, np.zeros(T.size))
    expected = []
    for t in T:
        value, _ = quad(lambda s, t=t: (s / a) * math.exp(1 - s / a) * math.exp(-(t - s)) / (2 * math.sqrt(math.pi)),
                        0.0, t, weight="alg", wvar=(0.0, -0.5), epsabs=1e-13, epsrel=1e-12)
        expected.append(value)
    assert v / (1e-9 * R_INF) == pytest.approx(expected, rel=1e-9)


def test_voltage_clamp_relaxes_with_the_clamped_time_constant() -> None:
    """Clamp at X = 0, sealed far end, L = 1: V(L,∞)/V0 = 1/cosh 1 = 0.6480542737 (Rall 1959 [Rall1959]) and
    the approach rate 3.467401100 per τm (computed, Rall 1969 [Rall1969])."""
    cylinder = Cylinder(RM, RI, CM, D, LAMBDA)
    case = vf.transient_case(Case(cylinder, tr.VoltageStep(0.01)))
    T = np.array([1.5, 2.0, 40.0])
    far, _ = case.evaluate(T * TAU, np.full(3, LAMBDA))
    near, _ = case.evaluate(T * TAU, np.zeros(3))
    assert near == pytest.approx(0.01, rel=1e-12)
    assert far[-1] / 0.01 == pytest.approx(0.6480542737, rel=1e-9)
    rate = math.log((far[-1] - far[0]) / (far[-1] - far[1])) / 0.5
    assert rate == pytest.approx(3.467401100, rel=1e-8)


def test_ball_and_stick_soma_charging() -> None:
    """Current step at the soma, L = 1, ρ = 5: V/V∞ = 0.2124536900, 0.5166979813, 0.7082003630,
    0.8926645328 at T = 0.1, 0.5, 1, 2 (computed; Rall 1969 [Rall1969] / Durand 1984 [Durand1984] [MEM])."""
    cylinder = Cylinder(RM, RI, CM, D, LAMBDA)
    model = tr.BallAndStick.with_conductance_ratio(cylinder, 5.0)
    g_d = math.tanh(1.0) / R_INF
    final = 1e-9 / (g_d + g_d / 5.0)  # I / (G_D + G_S)
    case = vf.transient_case(Case(model, tr.CurrentStep(1e-9, 0.0)))
    T = np.array([0.1, 0.5, 1.0, 2.0])
    v, _ = case.evaluate(T * TAU, np.zeros(4))
    assert v / final == pytest.approx([0.2124536900, 0.5166979813, 0.7082003630, 0.8926645328], abs=1e-9)
    assert case.parameters["conductance_ratio"][0] == pytest.approx(5.0, rel=1e-12)
    assert "ball and stick" in case.description


def test_scattered_points_and_grid_points_agree() -> None:
    """Paired points far from a full grid are evaluated site by site; same values as on the grid."""
    case = vf.transient_case(Case(Cylinder(RM, RI, CM, D, 500 * UM, math.inf), tr.CurrentStep(1e-10, 200 * UM)))
    rng = np.random.default_rng(7)
    t = rng.uniform(0, 40 * MS, 3000)
    x = rng.uniform(0, 500 * UM, 3000)  # 3000 × 3000 grid: too big, so site by site
    v, b = case.evaluate(t, x)
    sub = slice(0, 40)
    grid = tr.charge(Cylinder(RM, RI, CM, D, 500 * UM, math.inf), tr.CurrentStep(1e-10, 200 * UM), t[sub], x[sub])
    assert v[sub] == pytest.approx(np.diag(grid.voltage), abs=1e-13)  # within the bounds; mode counts differ
    assert np.all(b < 1.1e-12)  # the 1e-12 V asked for plus the rounding allowance


def test_compare_reads_both_sides_of_an_infinite_cable() -> None:
    """A long file with negative positions: accepted for an infinite cable, refused otherwise."""
    case = vf.transient_case(Case(tr.InfiniteCable.like(DEMO), tr.CurrentPulse(1e-10, 1 * MS, 0.0)))
    times = np.array([0.5, 1.0, 2.0, 4.0]) * MS
    sites = np.array([-300.0, 0.0, 300.0]) * UM
    tt, xx = np.meshgrid(times, sites, indexing="ij")
    v, _ = case.evaluate(tt.ravel(), xx.ravel())
    v[5] += 3e-6  # +3 µV at (1 ms, 300 µm)
    rows = [f"{float(t / MS)!r},{float(x / UM)!r},{float(u * 1e3)!r}"
            for t, x, u in zip(tt.ravel(), xx.ravel(), v, strict=True)]
    text = "time (ms),position (um),voltage (mV)\n" + "\n".join(rows) + "\n"
    rec = vf.read_recording(text, "both.csv", parse, allow_negative_positions=True)
    result = vf.compare(rec, case, 5e-6)
    assert result.max_abs_error == pytest.approx(3e-6, rel=1e-6)
    assert (result.worst_time, result.worst_position) == pytest.approx((1 * MS, 300 * UM))
    assert result.passed
    with pytest.raises(FileFormatError, match=r":2:2.*negative position"):
        vf.read_recording(text, "both.csv", parse)
    cylinder_case = vf.transient_case(Case(DEMO, tr.CurrentPulse(1e-10, 1 * MS, 0.0)))
    with pytest.raises(FileFormatError, match="before the cable's origin"):
        vf.compare(rec, cylinder_case, 5e-6)


def test_parameters_and_bad_tolerance() -> None:
    case = vf.transient_case(Case(Cylinder(RM, RI, CM, D, 500 * UM, 1e-9), tr.AlphaCurrent(1e-10, 2 * MS, 100 * UM)))
    p = case.parameters
    assert p["end_conductance"] == (1e-9, "S")
    assert p["time_to_peak"] == (2 * MS, "s")
    assert p["stimulus_position"] == (100 * UM, "m")
    assert "leaky" in case.description
    assert "alpha" in case.description
    semi = vf.transient_case(Case(Cylinder(RM, RI, CM, D, math.inf), tr.VoltageStep(0.01)))
    assert '"value": "inf"' in vf.reference_json(vf.reference_table(semi, [1 * MS], [0.0]))
    with pytest.raises(InputError, match="exact tolerance"):
        vf.transient_case(Case(DEMO, tr.CurrentStep(1e-10)), -1.0)
