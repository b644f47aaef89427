"""Features of a response (cabletheory.waveform): peak, time to peak, rise time, half-width, attenuation.

External checks:
* an isopotential cell (a sealed cylinder of L = 1e-3, which differs from a lumped RC circuit by
  O(L²)) driven by an alpha current, against the RC circuit's closed-form response solved for its
  peak and half-maximum times with scipy.optimize.brentq [SciPy2020]; the RC response is the
  convolution of the input with e^(-t/τm), common practice [CP];
* the steady attenuation of a held step along a sealed cylinder, cosh(L - X)/cosh(L) [Rall1959];
* the 10-90 % rise time of a step at the origin of a sealed cylinder, against times found with
  brentq on the package's own independent Rall series (verify.sealed_step_voltage, itself checked
  against [Rall1969] in tests/test_verify.py).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from cabletheory.case import build_case
from cabletheory.verify import sealed_step_voltage
from cabletheory.waveform import response_features

RM, RI, CM, D = 2.0, 2.0, 0.01, 2e-6  # 20 kΩ·cm², 200 Ω·cm, 1 µF/cm², 2 µm: λ = 707.1 µm, τm = 20 ms
LAMBDA, TAU = math.sqrt(RM * D / (4 * RI)), RM * CM


def case(**values):
    return build_case({"membrane_resistivity": RM, "axial_resistivity": RI, "membrane_capacitance": CM,
                       "diameter": D, **values})


def rc_alpha(t, tp, tau=TAU):
    """V(t) / (R I_peak) of an RC circuit driven by I_peak (t/tp) e^(1 - t/tp): the convolution
    (e/tp) ∫ s e^(-s/tp) e^(-(t-s)/τ) ds / τ in closed form."""
    k = 1 / tp - 1 / tau
    return math.e / (tp * tau) * math.exp(-t / tau) * (1 - math.exp(-k * t) * (1 + k * t)) / k**2


@pytest.mark.parametrize("time_to_peak", [0.2e-3, 1e-3, 5e-3])
def test_isopotential_alpha_response_matches_the_rc_circuit(time_to_peak):
    short = case(length=1e-3 * LAMBDA, shape="alpha", current=1e-10, time_to_peak=time_to_peak)
    (f,) = response_features(short)
    peak_time = brentq(lambda t: (rc_alpha(t * (1 + 1e-7), time_to_peak) - rc_alpha(t * (1 - 1e-7), time_to_peak)),
                       0.1 * time_to_peak, 50 * TAU, xtol=1e-15)
    peak = rc_alpha(peak_time, time_to_peak)
    up = brentq(lambda t: rc_alpha(t, time_to_peak) - peak / 2, 1e-12, peak_time, xtol=1e-15)
    down = brentq(lambda t: rc_alpha(t, time_to_peak) - peak / 2, peak_time, 60 * TAU, xtol=1e-15)
    t10 = brentq(lambda t: rc_alpha(t, time_to_peak) - peak / 10, 1e-12, peak_time, xtol=1e-15)
    t90 = brentq(lambda t: rc_alpha(t, time_to_peak) - 0.9 * peak, 1e-12, peak_time, xtol=1e-15)
    assert f.time_to_peak == pytest.approx(peak_time, rel=1e-5)
    assert f.half_width == pytest.approx(down - up, rel=1e-5)
    assert f.rise_time == pytest.approx(t90 - t10, rel=1e-5)
    assert not f.held
    assert f.attenuation == 1.0


@pytest.mark.parametrize("X", [0.0, 0.25, 0.7, 1.0])
def test_held_step_attenuates_as_rall_cosh(X):
    L = 1.0
    c = case(length=L * LAMBDA, current=1e-10, positions=[X * LAMBDA])
    (f,) = response_features(c)
    assert f.held
    assert math.isnan(f.time_to_peak)
    assert math.isnan(f.half_width)
    assert f.attenuation == pytest.approx(math.cosh(L - X) / math.cosh(L), rel=1e-10)


def test_step_rise_time_from_the_independent_series():
    from cabletheory.cable import Cylinder

    cylinder = Cylinder(RM, RI, CM, D, 500e-6)
    c = case(length=500e-6, current=1e-10, positions=[0.0, 250e-6])
    for f in response_features(c):

        def v(t, x=f.position):
            return float(np.ravel(sealed_step_voltage(cylinder, 1e-10, [t], [x], 1e-15)[0])[0])

        t10 = brentq(lambda t, fp=f.peak: v(t) - 0.1 * fp, 1e-9, 10 * TAU, xtol=1e-14)
        t90 = brentq(lambda t, fp=f.peak: v(t) - 0.9 * fp, 1e-9, 10 * TAU, xtol=1e-14)
        assert f.rise_time == pytest.approx(t90 - t10, rel=1e-6)


def test_pulse_peaks_at_its_end_at_the_site_and_later_further_away():
    """Under a current pulse the site charges while the current flows, so its peak is at the end of
    the pulse; farther along the cable the peak is smaller and later (Rall 1967, recalled from memory)."""
    c = case(length=500e-6, shape="pulse", current=1e-10, duration=1e-3, positions=[0.0, 250e-6, 500e-6])
    site, middle, end = response_features(c)
    assert site.time_to_peak == pytest.approx(1e-3, rel=1e-6)
    assert site.peak > middle.peak > end.peak > 0
    assert site.time_to_peak < middle.time_to_peak < end.time_to_peak
    assert site.half_width < middle.half_width < end.half_width


def test_negative_input_gives_negative_peak_and_positive_attenuation():
    c = case(cell="infinite", shape="alpha", current=-1e-10, time_to_peak=1e-3, positions=[0.0, 1e-4])
    site, away = response_features(c)
    assert site.peak < 0
    assert away.peak < 0
    assert 0 < away.attenuation < 1


def test_clamp_is_held_and_a_killed_end_has_no_response():
    c = case(length=500e-6, end=math.inf, voltage=0.01, positions=[0.0, 250e-6, 500e-6])
    site, middle, end = response_features(c)
    assert site.peak == pytest.approx(0.01)
    assert site.attenuation == pytest.approx(1.0)
    assert 0 < middle.attenuation < 1
    assert end.peak == 0.0
    assert math.isnan(end.rise_time)


def test_features_do_not_depend_on_a_sampling_grid():
    """The grid of the search is the module's own: asking at one position or at several gives the
    same figures for that position."""
    one = response_features(case(length=500e-6, shape="alpha", current=1e-10, time_to_peak=1e-3,
                                 positions=[250e-6]))[0]
    many = response_features(case(length=500e-6, shape="alpha", current=1e-10, time_to_peak=1e-3,
                                  positions=[0.0, 100e-6, 250e-6]))[2]
    assert one.time_to_peak == pytest.approx(many.time_to_peak, rel=1e-8)
    assert np.isclose(one.half_width, many.half_width, rtol=1e-8)
