"""Early times on a short cylinder: the eigen-series carried to rounding level beside images where
a value is small keeps every value right to its digits.

At times when at most four reflections per side reach the tolerance, cabletheory.finite_cable
sums the eigen-series until its tail is below 4ε of the largest steady voltage wherever a value is
at least 1/16 of that voltage, and the images (Hodgkin & Rushton 1946 [HodgkinRushton1946],
reflected at the ends) where a value is smaller. Checked against the independent Laplace-domain
reference of tests/laplace_reference.py (each model's transform from its boundary-value problem,
inverted by mpmath's Talbot routine [mpmath2023] [Talbot1979] at 40 digits), at points on both
sides of the switch, at the ends and at the input.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from laplace_reference import Case

from cabletheory import finite_cable
from cabletheory.kernels import steady_green


@pytest.mark.parametrize(("B", "X0", "shape"), [(0.0, 0.0, "step"), (math.inf, 0.4, "step"), (0.0, 0.7, "pulse")])
def test_early_values_are_right_to_their_digits_on_both_sides_of_the_switch(B, X0, shape):
    L, duration = 1.0, 0.05
    X = np.linspace(0.0, L, 41)
    T = np.array([0.004, 0.06, 0.4])
    V, bound, method = finite_cable.current_response(X, X0, T, L, B, shape=shape, duration=duration)
    assert "rounding level" in method
    small = finite_cable._SMALL * float(steady_green(X0, X0, L, B))
    reference = Case("cylinder", "pulse" if shape == "pulse" else "step", L=L, B=B, source=X0, duration=duration)
    sides = set()
    for i, t in enumerate(T):
        above = np.flatnonzero(np.abs(V[i]) >= small)
        below = np.flatnonzero((np.abs(V[i]) < small) & (V[i] != 0))
        # the values nearest the switch on each side, and the ends and the input
        picks = {int(np.argmin(np.abs(X - X0))), 0, X.size - 1 if B == 0 else X.size - 3}
        if above.size:
            picks.add(int(above[np.argmin(np.abs(V[i, above]))]))
            sides.add("series")
        if below.size:
            picks.add(int(below[np.argmax(np.abs(V[i, below]))]))
            sides.add("images")
        for j in sorted(picks):
            want = float(reference.value(float(t), float(X[j])))
            error = abs(V[i, j] - want)
            assert error <= bound[i, j] + 1e-15, (t, X[j], V[i, j], want, bound[i, j])
            assert error <= 1e-13 * abs(want), (t, X[j], V[i, j], want)
    assert sides == {"series", "images"}


def test_the_early_series_is_not_used_where_it_would_cost_more_than_the_images():
    """A long cable at early times: the series would need hundreds of modes; the images stay."""
    X = np.linspace(0.0, 30.0, 50)
    _, _, method = finite_cable.current_response(X, 0.0, np.array([0.05, 0.2]), 30.0, 0.0)
    assert "rounding level" not in method
    assert method.startswith("images")


@pytest.mark.parametrize(("X0", "sign"), [(0.0, 1.0), (0.3, -1.0)])
def test_image_sums_at_a_few_pairs_are_those_of_the_grid(X0, sign):
    """A few (X, T) pairs take all their images in one call of the kernel; the values are the
    grid's, term by term (the same kernel, numpy's arithmetic)."""
    from cabletheory.kernels import point_source_step

    X = np.linspace(0.0, 1.2, 13)
    T = np.array([0.003, 0.05, 0.4])
    grid = finite_cable._point_images(point_source_step, X, X0, T, 1.2, sign, 3)
    rows, cols = np.meshgrid(np.arange(T.size), np.arange(X.size), indexing="ij")
    pairs = finite_cable._images_at(point_source_step, X[cols.ravel()], X0, T[rows.ravel()], 1.2, sign, 3)
    assert pairs.size <= finite_cable._FEW_PAIRS
    np.testing.assert_allclose(pairs, grid.ravel(), rtol=1e-14, atol=1e-300)
