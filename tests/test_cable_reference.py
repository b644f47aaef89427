"""Closed forms of one cylinder against published and independently computed values.

Each check names its source and its key in docs/sources.md. "Computed" values are the named
formula evaluated to 10 significant digits at 40-digit precision with mpmath [mpmath2023]; [MEM]
marks a detail recalled from memory, [CP] common practice.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from cabletheory import cable

# The demo cable of docs/sources.md (invented numbers): d = 2 µm, Rm = 20 000 Ω·cm², Ri = 200 Ω·cm,
# Cm = 1 µF/cm², ℓ = 500 µm. SI: Rm = 2 Ω·m², Ri = 2 Ω·m, Cm = 0.01 F/m².
RM, RI, CM, D, ELL = 2.0, 2.0, 0.01, 2e-6, 500e-6
LAM = cable.length_constant(RM, RI, D)
R_INF = cable.semi_infinite_input_resistance(RM, RI, D)
L = cable.electrotonic_length(ELL, LAM)
TAU = cable.membrane_time_constant(RM, CM)


@pytest.mark.parametrize(
    ("name", "value", "expected", "unit_scale"),
    [
        # computed; λ = √(Rm d/(4Ri)), Rall 1959 [Rall1959]; Hodgkin & Rushton 1946 [HodgkinRushton1946] [MEM]; [CP]
        ("length constant (µm)", LAM, 707.1067812, 1e-6),
        # τm = Rm Cm, Rall 1969 abstract [Rall1969]
        ("time constant (ms)", TAU, 20.0, 1e-3),
        # r_a = 4Ri/(πd²) [CP], in Ω/cm
        ("axial resistance per length (Ω/cm)", cable.axial_resistance_per_length(RI, D), 6.366197724e9, 1e2),
        # r_m = Rm/(πd) [CP], in Ω·cm
        ("membrane resistance per length (Ω·cm)", cable.membrane_resistance_per_length(RM, D), 3.183098862e7,
         1e-2),
        # R∞ = (2/π)√(Rm Ri) d^(-3/2), Rall 1959 [Rall1959] [MEM], computed
        ("semi-infinite input resistance (MΩ)", R_INF, 450.1581581, 1e6),
        ("electrotonic length", L, 0.7071067812, 1.0),
        # sealed R∞ coth L; killed R∞ tanh L and leaky forms: Rall 1959 [Rall1959] [MEM], computed
        ("sealed input resistance (MΩ)", cable.input_resistance(R_INF, L, 0.0), 739.3466931, 1e6),
        ("killed input resistance (MΩ)", cable.input_resistance(R_INF, L, math.inf), 274.0830103, 1e6),
        ("leaky B=0.5 input resistance (MΩ)", cable.input_resistance(R_INF, L, 0.5), 529.5528737, 1e6),
        ("leaky B=1 input resistance (MΩ)", cable.input_resistance(R_INF, L, 1.0), 450.1581581, 1e6),
        ("leaky B=2 input resistance (MΩ)", cable.input_resistance(R_INF, L, 2.0), 382.6669203, 1e6),
        # V(0) = I R_in with I = 100 pA, sealed (computed)
        ("V(0) for 100 pA, sealed (mV)", 100e-12 * cable.input_resistance(R_INF, L, 0.0), 73.93466931, 1e-3),
        # mC: c_m = Cm π d [CP]: 0.01 F/m² · π · 2e-6 m = 6.283185307e-8 F/m
        ("membrane capacitance per length (F/m)", cable.membrane_capacitance_per_length(CM, D), 6.283185307e-8,
         1.0),
    ],
)
def test_demo_cable_values(name, value, expected, unit_scale):
    """Demo cable of docs/sources.md, 10 significant digits computed with mpmath [mpmath2023]."""
    assert float(value) / unit_scale == pytest.approx(expected, rel=2e-10), name


@pytest.mark.parametrize(
    ("position", "end", "expected"),
    [
        # computed; profiles Rall 1959 [Rall1959], Jack, Noble & Tsien 1975 ch. 4 [JackNobleTsien1975] [MEM]
        (L / 2, 0.0, 0.8433766820),
        (L, 0.0, 0.7932781817),
        (L / 2, math.inf, 0.4702988586),
        (L, math.inf, 0.0),
        (L / 2, 1.0, 0.7021885013),
        (L, 1.0, 0.4930686914),
    ],
)
def test_demo_profile(position, end, expected):
    assert float(cable.voltage_ratio(position, L, end)) == pytest.approx(expected, rel=1e-9, abs=1e-12)


@pytest.mark.parametrize(
    ("electrotonic_length", "expected"),
    [(1.0, 0.6480542737), (2.0, 0.2658022288), (0.7071067812, 0.7932781817)],  # computed
)
def test_sealed_far_end_attenuation(electrotonic_length, expected):
    """1/cosh L (Rall 1959 [Rall1959])."""
    assert float(cable.far_end_voltage_ratio(electrotonic_length, 0.0)) == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize(
    ("frequency", "lambda_f_um", "z_inf_mohm", "z_inf_deg", "z_sealed_mohm", "z_sealed_deg", "attenuation"),
    [
        # computed; formulas Koch 1999 ch. 2 [Koch1999] [MEM], Rall & Rinzel 1973 abstract [RallRinzel1973]
        (10, 619.4629984, 355.2192841, -25.74405637, 469.8578769, -41.97083981, 0.7757168883),
        (100, 271.1023147, 126.7870247, -42.72506735, 120.8122622, -41.97365288, 0.3240784218),
        (1000, 88.85197452, 40.15626558, -44.77203215, 40.15644138, -44.77056993, 0.007196273427),
    ],
)
def test_demo_cable_ac(frequency, lambda_f_um, z_inf_mohm, z_inf_deg, z_sealed_mohm, z_sealed_deg, attenuation):
    lam_f = cable.length_constant_at_frequency(LAM, frequency, TAU)
    assert float(lam_f) * 1e6 == pytest.approx(lambda_f_um, rel=1e-9)
    z_inf = complex(cable.input_impedance(R_INF, math.inf, 0.0, frequency, TAU))
    assert abs(z_inf) / 1e6 == pytest.approx(z_inf_mohm, rel=1e-9)
    assert math.degrees(np.angle(z_inf)) == pytest.approx(z_inf_deg, rel=1e-9)
    z_in = complex(cable.input_impedance(R_INF, L, 0.0, frequency, TAU))
    assert abs(z_in) / 1e6 == pytest.approx(z_sealed_mohm, rel=1e-9)
    assert math.degrees(np.angle(z_in)) == pytest.approx(z_sealed_deg, rel=1e-9)
    z_far = complex(cable.transfer_impedance(R_INF, L, 0.0, frequency, TAU, L))
    assert abs(z_far / z_in) == pytest.approx(attenuation, rel=1e-9)


def test_ac_length_constant_against_high_frequency_form():
    """Slow membrane, thin neurite (docs/sources.md, invented): d 1.5 µm, Rm 40 kΩ·cm², Ri 120 Ω·cm,
    Cm 0.9 µF/cm², so τ = 36 ms and λ_DC = 1118.033989 µm. At 200 Hz the exact AC length constant
    λ/Re(q) is 232.4953145 µm, below the high-frequency approximation √(d/(4πf Ri Cm)) = 235.0789931 µm
    (both forms: Koch 1999 ch. 2 [Koch1999] [MEM]; values computed with mpmath [mpmath2023])."""
    lam = cable.length_constant(4.0, 1.2, 1.5e-6)
    tau = cable.membrane_time_constant(4.0, 0.009)
    assert float(tau) == pytest.approx(0.036, rel=1e-12)
    assert float(lam) * 1e6 == pytest.approx(1118.033989, rel=1e-9)
    exact = float(cable.length_constant_at_frequency(lam, 200.0, tau))
    assert exact * 1e6 == pytest.approx(232.4953145, rel=1e-9)
    high_frequency = math.sqrt(1.5e-6 / (4 * math.pi * 200.0 * 1.2 * 0.009))  # √(d / (4π f Ri Cm))
    assert high_frequency * 1e6 == pytest.approx(235.0789931, rel=1e-9)
    assert exact < high_frequency


def test_compartment_advice_rule():
    """Common practice [CP]: compartments no longer than 0.1 of the length constant at 100 Hz. For the demo cable
    λ_100 = 271.1023147 µm (computed, Koch 1999 [Koch1999]), so 500 µm needs ceil(500 / 27.11) = 19 compartments."""
    lam_100 = cable.length_constant_at_frequency(LAM, 100.0, TAU)
    assert int(cable.compartments_needed(ELL, lam_100)) == 19
    assert int(cable.compartments_needed(ELL, lam_100, fraction=0.05)) == 37
    assert int(cable.compartments_needed(1e-9, lam_100)) == 1
    with pytest.raises(ValueError, match="fraction"):
        cable.compartments_needed(ELL, lam_100, fraction=0.0)


def test_semi_infinite_cable_is_the_long_limit():
    """L = inf reproduces e^(-X) and R∞ exactly (Hodgkin & Rushton 1946 [HodgkinRushton1946] [MEM])."""
    x = np.array([0.0, 0.5, 1.0, 3.0])
    assert cable.voltage_ratio(x, math.inf, 0.0) == pytest.approx(np.exp(-x), rel=1e-14)
    assert float(cable.input_resistance(R_INF, math.inf, 0.0)) == pytest.approx(float(R_INF), rel=1e-14)
    assert float(cable.input_resistance(R_INF, math.inf, math.inf)) == pytest.approx(float(R_INF), rel=1e-14)


def test_cylinder_summary_matches_functions():
    c = cable.Cylinder(RM, RI, CM, D, ELL, end_conductance=0.5 / float(R_INF))
    s = cable.summarise(c, [0.0, ELL / 2, ELL], frequency=100.0)
    assert s.end_conductance_ratio == pytest.approx(0.5, rel=1e-14)
    assert s.input_resistance / 1e6 == pytest.approx(529.5528737, rel=1e-9)  # computed, Rall 1959 [Rall1959]
    assert s.voltage_ratio[0] == pytest.approx(1.0, rel=1e-15)
    assert s.transfer_resistance[0] == pytest.approx(s.input_resistance, rel=1e-14)
    assert s.compartments_needed == 19


@pytest.mark.parametrize("field", ["membrane_resistivity", "axial_resistivity", "membrane_capacitance", "diameter"])
@pytest.mark.parametrize("bad", [0.0, -1.0, math.nan, math.inf])
def test_cylinder_rejects_impossible_values(field, bad):
    values = {"membrane_resistivity": RM, "axial_resistivity": RI, "membrane_capacitance": CM, "diameter": D,
              "length": ELL}
    values[field] = bad
    with pytest.raises(ValueError, match=field):
        cable.Cylinder(**values)


def test_cylinder_rejects_negative_end_and_length():
    with pytest.raises(ValueError, match="end_conductance"):
        cable.Cylinder(RM, RI, CM, D, ELL, end_conductance=-1e-9)
    with pytest.raises(ValueError, match="length"):
        cable.Cylinder(RM, RI, CM, D, 0.0)


def test_positions_outside_the_cable_are_refused():
    with pytest.raises(ValueError, match=r"\[0, L\]"):
        cable.voltage_ratio(1.5, 1.0, 0.0)
    with pytest.raises(ValueError, match=r"\[0, L\]"):
        cable.transfer_resistance(1.0, 1.0, 0.0, 0.5, -0.1)
