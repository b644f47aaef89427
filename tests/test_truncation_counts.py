"""Term counts of the exact time courses (cabletheory.truncation): each time gets the smallest
candidate count whose tail bound meets the tolerance, and the bound reported is that count's."""

from __future__ import annotations

import numpy as np
import pytest

from cabletheory import eigen
from cabletheory.truncation import _CANDIDATES, MAX_MODES, modes_needed


def _brute_force(T, tol, bound):
    need, achieved = [], []
    for t in T:
        ok = [n for n in _CANDIDATES if bound(int(n), np.array([t]))[0] <= tol]
        need.append(ok[0] if ok else MAX_MODES + 1)
        achieved.append(bound(int(ok[0]), np.array([t]))[0] if ok else np.inf)
    return np.array(need), np.array(achieved)


def test_each_time_gets_the_smallest_count_whose_bound_meets_the_tolerance():
    T = np.concatenate(([1e-9, 1e-4], np.geomspace(1e-3, 30.0, 40), [0.0]))
    L = 1.3

    def bound(n, t):
        return eigen.tail_bound(n, t, L, kind="step")

    need, achieved = modes_needed(T, 1e-10, L, bound)
    want_need, want_achieved = _brute_force(T, 1e-10, bound)
    np.testing.assert_array_equal(need, want_need)
    np.testing.assert_array_equal(achieved, want_achieved)
    assert need[-1] == MAX_MODES + 1  # T = 0: no count reaches the tolerance


def test_a_bound_that_does_not_fall_with_the_count_still_gets_its_first_success():
    T = np.linspace(0.1, 2.0, 7)

    def bound(n, t):  # meets 1 only at n = 5 and from n = 40 on, for early times
        return np.where((n == 5) | (n >= 40) | (t > 1.0), 0.5, 2.0) * np.ones_like(t)

    need, achieved = modes_needed(T, 1.0, 1.0, bound)
    np.testing.assert_array_equal(need, np.where(T > 1.0, 1, 5))
    np.testing.assert_array_equal(achieved, np.full(T.shape, 0.5))


@pytest.mark.parametrize(("kind", "origin"), [("step", "sealed"), ("clamp", "clamped"), ("impulse", "sealed")])
def test_counts_tried_eight_at_a_time_are_the_counts_tried_one_at_a_time(kind, origin):
    T = np.concatenate((np.geomspace(1e-6, 40.0, 60), [0.0]))
    L = 0.7

    def bound(n, t):
        return eigen.tail_bound(n, t, L, kind=kind, origin=origin)

    one = modes_needed(T, 1e-9, L, bound)
    several = modes_needed(T, 1e-9, L, bound, several=True)
    np.testing.assert_array_equal(several[0], one[0])
    np.testing.assert_allclose(several[1], one[1], rtol=1e-14)
    capped = modes_needed(T, 1e-9, L, bound, most=40, several=True)
    np.testing.assert_array_equal(capped[0], np.where(one[0] <= 40, one[0], MAX_MODES + 1))


def test_a_tail_bound_of_several_counts_is_each_count_s_bound():
    T = np.array([0.0, 1e-3, 0.2, 3.0])
    counts = np.array([1, 2, 7, 50])
    together = eigen.tail_bound(counts[:, None], T[None, :], 2.0, kind="step")
    for i, n in enumerate(counts):
        np.testing.assert_allclose(together[i], eigen.tail_bound(int(n), T, 2.0, kind="step"), rtol=1e-14)
