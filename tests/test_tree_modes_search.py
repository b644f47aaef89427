"""The search for a tree's decay rates: Newton steps inside brackets kept by the eigenvalue count.

The count is Wittrick & Williams' (1971) [WittrickWilliams1971] [MEM]; the brackets the faster search
returns must be those plain bisection on the same count returns (to the same width, 4e-16 of the
rate), every one still holding its rate, and Newton's step from near a rate must land on it to
rounding (the slope of ln|D| by a complex step, Squire & Trapp 1998 [SquireTrapp1998]).
"""

from __future__ import annotations

import pathlib

import numpy as np
import pytest

from cabletheory.inputs import read_outline_value
from cabletheory.morphology import read_morphology
from cabletheory.tree import build_tree
from cabletheory.tree_laplace import PassiveTree, _network
from cabletheory.tree_modes import _bisect_rates, _count, _count_and_slope

DATA = pathlib.Path(__file__).resolve().parents[1] / "cabletheory" / "data" / "morphologies"


def _net(name: str, tips):
    tree = build_tree(read_morphology(str(DATA / name), read_outline_value))
    return _network(PassiveTree(tree, 2.0, 1.5, 0.01, tips=tips), [])


def _plain_bisection(net, indices, high):
    lo, hi = np.zeros(indices.size), np.full(indices.size, high)
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        above = _count(net, mid) > indices
        hi, lo = np.where(above, mid, hi), np.where(above, lo, mid)
        if np.all(hi - lo <= 4e-16 * hi):
            break
    return lo, hi


@pytest.mark.parametrize("tips", [None, "killed", 1e-9])
def test_the_search_brackets_what_bisection_brackets(tips):
    net = _net("lumenia_lw1_conforming.swc", tips)
    high = 5000.0
    indices = np.arange(int(_count(net, np.array([high]))[0]))
    assert indices.size >= 8
    lo, hi = _bisect_rates(net, indices, np.zeros(indices.size), np.full(indices.size, high))
    assert np.all(hi - lo <= 4e-16 * hi)
    assert np.all(_count(net, lo) <= indices)
    assert np.all(_count(net, hi) > indices)
    plain_lo, plain_hi = _plain_bisection(net, indices, high)
    np.testing.assert_allclose(0.5 * (lo + hi), 0.5 * (plain_lo + plain_hi), rtol=1e-15, atol=0)


def test_a_newton_step_from_near_a_rate_lands_on_it():
    net = _net("lumenia_pv7_interneuron.swc", None)
    high = 400.0
    indices = np.arange(int(_count(net, np.array([high]))[0]))
    lo, hi = _plain_bisection(net, indices, high)
    rates = 0.5 * (lo + hi)
    for near in (rates * (1 - 1e-7), rates * (1 + 1e-7)):
        _, slope = _count_and_slope(net, near)
        np.testing.assert_allclose(near + 1.0 / slope, rates, rtol=1e-12)
