"""The alpha current's eigen-series tail bound (truncation.alpha_decay_rate) against mpmath.

The series is cut after N modes in floats and compared with the exact value by Talbot inversion
of the hand-solved transform (``tests/laplace_reference.py``: ``mpmath.invertlaplace`` at 40
digits; the mpmath development team 2023 [mpmath2023], Talbot 1979 [Talbot1979]); the
difference must stay within the bound that ``current_bound`` states for
N modes, across lengths, times to peak, times and positions where the new decay-rate bound is the
smaller one (so a bound that were too tight would fail here).
"""

from __future__ import annotations

import numpy as np
import pytest
from laplace_reference import Case

from cabletheory import eigen
from cabletheory.finite_cable import _alpha_mode
from cabletheory.kernels import steady_green
from cabletheory.truncation import Shape, alpha_decay_rate, current_bound

ROUNDING = 1e-13  # float rounding of a few-mode sum of values of order 1


def _truncated(X: np.ndarray, T: float, L: float, a: float, count: int) -> np.ndarray:
    """V/(I_peak R∞) from the first ``count`` modes (sealed ends, current at X = 0), as the mpmath path
    (``precise``) sums it: the quasi-steady part f·g minus the modes."""
    alpha = eigen._eigenvalues(L, 0.0, count, "sealed", 0.0)
    mu = 1.0 + alpha**2
    residues = eigen.mode_residues(alpha, X, 0.0, L)
    f = float(Shape("alpha", 0.0, a).value(np.array([T]))[0])
    modes = f / mu - _alpha_mode(mu, np.array([[T]]), a)[0]
    return f * steady_green(X, 0.0, L) - modes @ residues


@pytest.mark.parametrize(("L", "a"), [(1.0, 0.05), (0.5, 0.02), (1.5, 0.2)])
def test_alpha_tail_bound_holds_against_mpmath(L, a):
    X = np.array([0.0, L])
    bound = current_bound(Shape("alpha", 0.0, a), L)
    exact: dict[tuple[float, float], float] = {}
    checked = 0
    for T in (0.3, 0.8, 2.0):
        for count in (3, 8, 20):
            new = eigen.tail_bound(count, np.array([T]), L, kind="smooth", rate=1.0) * alpha_decay_rate(
                count, np.array([T]), L, a)
            stated = float(bound(count, np.array([T]))[0])
            if not np.isfinite(new[0]) or new[0] > stated * (1 + 1e-12) or stated < 1e-14:
                continue  # the older bound is the smaller here, or the tail is below rounding
            values = _truncated(X, T, L, a, count)
            for x, v in zip(X, values, strict=True):
                if (x, T) not in exact:
                    exact[x, T] = float(Case("cylinder", "alpha", L=L, time_to_peak=a).value(T, x))
                assert abs(v - exact[x, T]) <= stated + ROUNDING, (L, a, T, count, x, v, exact[x, T], stated)
            checked += 1
    assert checked >= 3  # the new bound was the one stated in several cases


def test_alpha_decay_rate_needs_the_modes_beyond_the_inputs_rate():
    """Where μ_N ≤ 1/a the bound does not apply (infinite), so the older one is used."""
    assert np.isinf(alpha_decay_rate(1, np.array([1.0]), 1.0, 0.05)).all()
    assert np.isfinite(alpha_decay_rate(10, np.array([1.0]), 1.0, 0.05)).all()
