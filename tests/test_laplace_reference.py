"""The independent reference of tests/laplace_reference.py against vetted values and closed forms.

Before the reference judges the code, it is itself checked: against computed ten-digit values of
the invented check cases (docs/sources.md, "Where the ten-digit numbers come from"; mpmath
[mpmath2023]) and against textbook closed forms evaluated by mpmath (erf, erfc, exponentials),
which share no code with it.
"""

from __future__ import annotations

import mpmath as mp
import pytest
from laplace_reference import Case

RTOL_TABLE = 2e-9  # the tables carry 10 significant digits


@pytest.mark.parametrize(("L", "T", "want"), [
    # computed: V(0,T)/V(0,∞), current step at the origin of a sealed cylinder (series derived
    # from Rall 1969 [Rall1969]; the same values as tests/test_laplace.py)
    (0.5, 0.1, 0.1629208867), (0.5, 2.0, 0.8749184873), (1.0, 0.5, 0.5374585210), (1.0, 1.0, 0.7198225011),
    (2.0, 0.1, 0.3328586273), (2.0, 2.0, 0.9344959202),
])
def test_sealed_cylinder_charging(L, T, want):
    value = Case("cylinder", "step", L=mp.mpf(L)).value(T, 0)
    assert float(value * mp.tanh(L)) == pytest.approx(want, rel=RTOL_TABLE)


@pytest.mark.parametrize(("L", "rho", "T", "want"), [
    # computed: soma voltage of a ball and stick, V(T)/V(∞) (Rall 1969 [Rall1969] model);
    # ρ = G_D/G_S = tanh L / y for a sealed far end
    (1.0, 5.0, 0.1, 0.2124536900), (1.0, 5.0, 1.0, 0.7082003630), (1.0, 5.0, 2.0, 0.8926645328),
    (1.5, 10.0, 0.5, 0.5989840481), (1.5, 10.0, 2.0, 0.9152664747),
])
def test_ball_and_stick_soma(L, rho, T, want):
    y = mp.tanh(L) / rho
    value = Case("ball", "step", L=mp.mpf(L), y=y).value(T, 0)
    assert float(value * (y + mp.tanh(L))) == pytest.approx(want, rel=RTOL_TABLE)


@pytest.mark.parametrize(("X", "T", "want"), [
    # computed from Hodgkin & Rushton (1946) [HodgkinRushton1946] [MEM]: semi-infinite cable, step at X = 0
    (0.0, 0.25, 0.5204998778), (0.0, 3.0, 0.9856941216), (1.0, 0.5, 0.1220984503), (1.0, 5.0, 0.3663799236),
    (2.0, 1.0, 0.05038561852), (2.0, 2.0, 0.1038891572),
])
def test_semi_infinite_hodgkin_rushton(X, T, want):
    assert float(Case("cylinder", "step").value(T, X)) == pytest.approx(want, rel=RTOL_TABLE)
    # a doubly infinite cable injected at 0 carries half of it ([CP]: two halves in parallel)
    assert float(2 * Case("infinite", "step").value(T, X)) == pytest.approx(want, rel=RTOL_TABLE)


@pytest.mark.parametrize("T", [1e-12, 1e-6, 0.3, 40.0])
@pytest.mark.parametrize("X", [0.0, 0.5, 3.0])
def test_clamp_closed_form(T, X):
    """Semi-infinite cable clamped at X = 0: ½[e^{-X}erfc(X/2√T - √T) + e^{X}erfc(X/2√T + √T)]
    (Jack, Noble & Tsien 1975 [JackNobleTsien1975] ch. 3, [MEM]), evaluated directly with mpmath."""
    with mp.workdps(40):
        r = mp.sqrt(T)
        u = X / (2 * r)
        want = (mp.exp(-X) * mp.erfc(u - r) + mp.exp(X) * mp.erfc(u + r)) / 2
        got = Case("cylinder", "clamp").value(T, X)
        assert abs(got - want) <= mp.mpf(10) ** -25 * max(1, abs(want))


@pytest.mark.parametrize("T", [1e-12, 1e-4, 0.7, 9.0])
def test_alpha_on_infinite_cable_by_quadrature(T):
    """An alpha current on an infinite cable: the convolution of the point-source impulse response
    e^{-d²/4τ-τ}/(2√(πτ)) (in units of IR∞ per τm; it integrates to erf√T/2 at d = 0, the
    Hodgkin & Rushton 1946 [HodgkinRushton1946] step [MEM]) with (τ/a)e^{1-τ/a}, by mpmath.quad."""
    a, d = mp.mpf("0.05"), mp.mpf("0.3")
    with mp.workdps(30):
        def impulse(tau):
            return mp.exp(-d * d / (4 * tau) - tau) / (2 * mp.sqrt(mp.pi * tau))

        want = mp.quad(lambda tau: impulse(tau) * (T - tau) / a * mp.exp(1 - (T - tau) / a), [0, T / 2, T])
        got = Case("infinite", "alpha", time_to_peak=a).value(T, d)
        assert abs(got - want) <= mp.mpf(10) ** -20 * max(mp.mpf(10) ** -10, abs(want))


def test_killed_end_is_zero_and_sealed_matches_steady():
    """V = 0 at a killed end at every time; at late times a sealed cylinder reaches
    cosh(L-X)/sinh L (Rall 1959 [Rall1959]; the demo cable of docs/sources.md)."""
    L = mp.mpf("0.7071067812")
    assert Case("cylinder", "step", L=L, B=mp.inf, source=L / 3).value(0.4, L) == 0
    late = Case("cylinder", "step", L=L).value(60, L / 2)
    assert float(late) == pytest.approx(float(mp.cosh(L / 2) / mp.sinh(L)), rel=1e-15)


def test_pulse_is_step_difference():
    """A pulse equals a step minus the step delayed by its duration (linearity, [CP])."""
    step = Case("cylinder", "step", L=mp.mpf(2), B=mp.mpf("0.5"), source=mp.mpf("0.3"))
    pulse = Case("cylinder", "pulse", L=mp.mpf(2), B=mp.mpf("0.5"), source=mp.mpf("0.3"), duration=mp.mpf("0.2"))
    assert pulse.value(0.5, 1.0) == pytest.approx(step.value(0.5, 1.0) - step.value(0.3, 1.0), rel=1e-25)
