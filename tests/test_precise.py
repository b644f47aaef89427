"""The numpy evaluators against the same solutions in mpmath at 30 digits (cabletheory.precise)."""

import math

import mpmath as mp
import numpy as np
import pytest

from cabletheory import precise
from cabletheory.cable import Cylinder
from cabletheory.transient import (
    ROUNDING_ALLOWANCE,
    BallAndStick,
    CurrentStep,
    charge,
    clamp_response,
    current_response,
    point_source_alpha,
    point_source_step,
)

X = np.array([0.0, 0.35, 0.8])
T = np.array([2e-6, 0.01, 0.2, 1.5])


@pytest.mark.parametrize(("L", "B", "y", "shape"), [
    (0.8, 0.0, 0.0, "step"), (0.8, math.inf, 0.0, "pulse"), (0.8, 0.0, 0.0, "alpha"),
    (0.8, 0.6, 0.0, "step"), (0.8, 0.0, 0.4, "pulse"), (math.inf, 0.0, 0.0, "alpha"),
])
def test_float_matches_mpmath(L, B, y, shape):
    """Every float value lies within its reported bound (+ rounding allowance) of the 30-digit value."""
    t = T if (y == 0 and B in (0.0, math.inf)) or math.isinf(L) else T[1:]
    x = X if math.isfinite(L) else X * 2
    v, bound, _ = current_response(x, 0.3, t, L, B, y, shape=shape, duration=0.1, time_to_peak=0.2,
                                   tolerance=1e-11)
    p, pb, _ = precise.current_grid(x, 0.3, t, L, B, y, shape, 0.1, 0.2, 1e-16, 30)
    assert np.all(pb <= 1e-16)
    assert np.all(np.abs(v - p) <= bound + pb + ROUNDING_ALLOWANCE)


@pytest.mark.parametrize("B", [0.0, 0.5, math.inf])
def test_clamp_matches_mpmath(B):
    v, bound, _ = clamp_response(X, T, 0.9, B, tolerance=1e-11)
    p, pb, _ = precise.clamp_grid(X, T, 0.9, B, 1e-16, 30)
    assert np.all(np.abs(v - p) <= bound + pb + ROUNDING_ALLOWANCE)


def test_point_kernels_at_extremes():
    """Scaled-erfc forms stay accurate where the plain products under/overflow (d = 40, T = 1e-3 ... 400)."""
    with mp.workdps(40):
        for d, t in [(40.0, 1e-3), (40.0, 400.0), (0.0, 1e-12), (3.0, 700.0)]:
            exact = float(precise.point_source_step(d, t))
            # absolute accuracy relative to the final value 1/2 (the tolerance contract)
            assert point_source_step(d, t) == pytest.approx(exact, rel=1e-12, abs=1e-15)
        for d, t, a in [(0.0, 1e-4, 1e-3), (2.0, 300.0, 50.0), (1.0, 0.7, 1.0)]:
            exact = float(precise.point_source_alpha(d, t, a))
            assert point_source_alpha(d, t, a) == pytest.approx(exact, rel=1e-10, abs=1e-15)


def test_eigenvalues_refined_in_mpmath():
    """mpmath roots of the same pole-free equation agree with the float roots (ball and stick, leaky end)."""
    from cabletheory import eigen

    with mp.workdps(30):
        roots = precise.eigenvalues(1.3, 0.7, 6, "sealed", 0.25)
    np.testing.assert_allclose([float(r) for r in roots], eigen._eigenvalues(1.3, 0.7, 6, "sealed", 0.25),
                               rtol=1e-14)


def test_charge_precision_option():
    """charge(..., precision=30) uses mpmath and agrees with the float path."""
    model = BallAndStick(Cylinder(2.0, 2.0, 0.01, 2e-6, 5e-4), 2e-5)
    fast = charge(model, CurrentStep(1e-10), [0.001, 0.01], [0.0, 4e-4])
    slow = charge(model, CurrentStep(1e-10), [0.001, 0.01], [0.0, 4e-4], precision=30)
    assert slow.precision == 30
    assert "mpmath" in slow.method
    np.testing.assert_allclose(fast.voltage, slow.voltage, atol=fast.error_bound + slow.error_bound)
