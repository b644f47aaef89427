"""The alpha-current point source of an infinite cable (kernels.point_source_alpha) against mpmath.

For a < 1 and x = sqrt((1/a - 1) T) >= 1 the value comes from a closed-form derivative with one
Faddeeva value, for a > 1 and x = sqrt((1 - 1/a) T) >= 1 from its real form with two scaled erfc
values; elsewhere from a series in b of repeated integrals of erfc.
All are checked against an independent route: ``precise.point_source_alpha``, which
differentiates the erfc form with ``mpmath.diff`` at 30 guard digits (the mpmath development
team 2023 [mpmath2023]), on both sides of x = 1, at the source and away from it, for a below and
above 1.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

from cabletheory import precise
from cabletheory.kernels import point_source_alpha


def _cases():
    for a in (0.004, 0.05, 0.3, 0.8, 1.0, 3.0, 40.0):
        s = math.sqrt(abs(1 / a - 1))
        edge = 1.0 / (s * s) if s > 0 else 1.0  # x = 1 here (b < 0)
        for T in sorted({1e-4, 0.3 * edge, 0.99 * edge, 1.01 * edge, 3 * edge, 0.5, 4.0}):
            for d in (0.0, 0.3, 2.0, 6.0):
                yield a, T, d


CASES = list(_cases())


@pytest.mark.parametrize("a", sorted({c[0] for c in CASES}))
def test_point_source_alpha_matches_mpmath(a):
    with mp.workdps(30):
        for case_a, T, d in CASES:
            if case_a != a:
                continue
            exact = float(precise.point_source_alpha(d, T, a))
            value = float(point_source_alpha(np.array([d]), np.array([T]), a)[0])
            # absolute: rounding of values of order 1 (the peak is 1 in units of I_peak R∞);
            # relative: where the value is not negligible
            assert abs(value - exact) <= 1e-14 + 1e-10 * abs(exact), (a, T, d, value, exact)


@pytest.mark.parametrize("a", [0.05, 3.0])
def test_closed_form_and_series_agree_across_x_equal_1(a):
    """Just below and just above x = 1 the two routes give one smooth function (no step at the
    switch), for a < 1 (Faddeeva form) and a > 1 (real scaled-erfc form)."""
    edge = 1.0 / abs(1 / a - 1)
    d = np.array([0.0, 0.5, 1.5])
    below = point_source_alpha(d, np.full(3, edge * (1 - 1e-12)), a)
    above = point_source_alpha(d, np.full(3, edge * (1 + 1e-12)), a)
    np.testing.assert_allclose(below, above, rtol=1e-11, atol=1e-16)


@pytest.mark.parametrize("a", [1.0, 0.9, 1.2])
def test_series_in_b_matches_mpmath(a):
    """Where sqrt(|b| T) <= 1 (every time when a = 1) the value is a series in b of repeated erfc
    integrals, recurred upwards for u <= 1.5 and downwards beyond: both sides of that switch, far
    from the source (u = 12) and at late times, within 1e-12 relative of the 30-digit value."""
    b = abs(1 - 1 / a)
    times = [1e-5, 0.2, 6.0] if b == 0 else [1e-5, 0.2 / b, 0.98 / b]
    with mp.workdps(30):
        for T in times:
            for u in (0.0, 1.0, 1.49, 1.51, 4.0, 12.0):
                d = 2 * u * math.sqrt(T)
                exact = float(precise.point_source_alpha(d, T, a))
                value = float(point_source_alpha(np.array([d]), np.array([T]), a)[0])
                assert abs(value - exact) <= 1e-12 * abs(exact), (a, T, u, value, exact)
