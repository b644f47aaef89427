"""verify.exact_case: the one rule choosing the exact answer for ``reference``, ``compare`` and the app.

Reference values, computed with mpmath [mpmath2023] (docs/sources.md): the demo cable (R∞ coth L,
R∞ tanh L; Rall 1959 [Rall1959]), the charging series and the ball and stick of Rall 1969 [Rall1969].
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from cabletheory import transient as tr
from cabletheory import verify as vf
from cabletheory.cable import Cylinder
from cabletheory.case import Case
from cabletheory.errors import InputError

UM, MS = 1e-6, 1e-3
DEMO = Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM)  # demo cable of docs/sources.md
ONE_LAMBDA = Cylinder(2.0, 2.0, 0.01, 2 * UM, DEMO.length_constant)  # L = 1
SERIES = "eigenfunction series (Rall 1969) truncated by its tail bound"  # sealed_step_case's method


@pytest.mark.parametrize(("model", "stimulus", "independent_series"), [
    (DEMO, tr.CurrentStep(1e-10), True),
    (DEMO, tr.CurrentStep(1e-10, 100 * UM), False),  # not at the origin
    (DEMO, tr.CurrentPulse(1e-10, 1 * MS), False),
    (Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM, math.inf), tr.CurrentStep(1e-10), False),  # killed end
    (Cylinder(2.0, 2.0, 0.01, 2 * UM, math.inf), tr.CurrentStep(1e-10), False),  # semi-infinite
    (tr.BallAndStick(DEMO, 20 * UM), tr.CurrentStep(1e-10), False),
    (tr.InfiniteCable.like(DEMO), tr.AlphaCurrent(1e-10, 1 * MS), False),
])
def test_the_independent_series_only_for_a_sealed_step_at_the_origin(model, stimulus, independent_series):
    case = vf.exact_case(Case(model, stimulus), 1e-12)
    assert (case.method == SERIES) is independent_series
    assert case.parameters["stimulus_position"] == (stimulus.position, "m")
    assert case.stimulus_shape == {"CurrentStep": "step", "CurrentPulse": "pulse", "AlphaCurrent": "alpha",
                                   "VoltageStep": "clamp"}[type(stimulus).__name__]


def test_sealed_step_follows_the_rall_charging_curve():
    """Computed from the Rall 1969 series [Rall1969]: L = 1, V(0, T = 1)/V(0, ∞) = 0.7198225011 with
    V(0, ∞) = I R∞ coth L."""
    case = vf.exact_case(Case(ONE_LAMBDA, tr.CurrentStep(1e-10)), 1e-15)
    final = 1e-10 * ONE_LAMBDA.semi_infinite_input_resistance / math.tanh(1.0)
    v, _ = case.evaluate(np.array([ONE_LAMBDA.time_constant]), np.array([0.0]))
    assert v[0] / final == pytest.approx(0.7198225011, rel=1e-9)


def test_killed_pulse_is_the_difference_of_two_steps_and_settles_to_rest():
    """Linearity [CP]: a pulse of length d is a step at 0 minus a step at d; the killed cable's
    step settles to I R∞ tanh L = 27.40830103 mV at the origin (computed, Rall 1959 [Rall1959])."""
    killed = Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM, math.inf)
    site, d = 200 * UM, 1 * MS
    pulse = vf.exact_case(Case(killed, tr.CurrentPulse(2e-10, d, site)), 1e-15)
    step = vf.exact_case(Case(killed, tr.CurrentStep(2e-10, site)), 1e-15)
    t = np.array([0.5, 1.5, 3.0, 10.0]) * MS
    x = np.array([0.0, 100.0, 200.0, 400.0]) * UM
    v_pulse, _ = pulse.evaluate(t, x)
    v_late, _ = step.evaluate(t, x)
    v_early, _ = step.evaluate(np.maximum(t - d, 0.0), x)
    np.testing.assert_allclose(v_pulse, v_late - v_early, rtol=0, atol=1e-13)
    origin = vf.exact_case(Case(killed, tr.CurrentStep(1e-10)), 1e-15)
    v, _ = origin.evaluate(np.array([50 * DEMO.time_constant]), np.array([0.0]))
    assert v[0] == pytest.approx(27.40830103e-3, rel=1e-9)


@pytest.mark.parametrize("tolerance", [0.0, -1e-9, math.inf, math.nan])
def test_a_tolerance_that_is_not_a_positive_voltage_is_refused(tolerance):
    with pytest.raises(InputError, match="exact tolerance"):
        vf.exact_case(Case(DEMO, tr.CurrentStep(1e-10)), tolerance)
