"""Rm, Ri and Cm of a reconstructed cell fitted to its soma response (cabletheory.fit_tree).

The recordings are the exact tree time courses of cabletheory.tree_time (checked against mpmath
and against Rall's equivalent cylinder in tests/test_tree_time.py; Rall 1959 [Rall1959], Rall
1969 [Rall1969]) with seeded noise. The fit must give the membrane back within its intervals; with
a soma shunt it must say that Rm and the shunt are not separable from one charging curve (Rall et
al. 1992 [Rall1992]; Major et al. 1994 [Major1994]).
"""

from __future__ import annotations

import numpy as np
import pytest

from cabletheory.errors import InputError
from cabletheory.fit_tree import _cell, fit_morphology
from cabletheory.morphology import Outline
from cabletheory.transient import CurrentStep
from cabletheory.tree.model import tree_from_outline
from cabletheory.tree_laplace import root_site
from cabletheory.tree_time import tree_response

UM = 1e-6


def unequal_tree(soma=None):
    """A small unbranched-at-equal-distances tree (no equivalent cylinder), so that Ri and Rm are
    not folded into one electrotonic length."""
    parents = [-1, 0, 0, 1, 1, 2]
    lengths = np.array([150, 400, 120, 250, 600, 300]) * UM
    d = np.array([3.0, 1.6, 2.0, 1.0, 0.9, 1.2]) * UM
    return tree_from_outline(Outline(
        source="test", names=tuple(f"b{i}" for i in range(6)), parents=np.asarray(parents, dtype=np.int64),
        lengths=lengths, diameters=d, end_diameters=d, lines=np.arange(1, 7, dtype=np.int64),
        soma_diameter=None if soma is None else soma * UM))


TRUTH = {"membrane_resistivity": 2.5, "axial_resistivity": 1.2, "membrane_capacitance": 0.009}


def recording(tree, params, noise=0.05e-3, seed=3, samples=600, dt=0.1e-3):
    t = np.arange(1, samples + 1) * dt
    v = tree_response(_cell(tree, params), CurrentStep(-40e-12), t, root_site(), [root_site()]).voltage[:, 0]
    return t, v + np.random.default_rng(seed).normal(0.0, noise, t.size)


def test_membrane_recovered_within_intervals():
    tree = unequal_tree(soma=12.0)
    t, y = recording(tree, TRUTH)
    f = fit_morphology(t, y, tree, -40e-12, window=(0.0, None))
    for name, value in TRUTH.items():
        lo, hi = f.interval(name)
        assert lo < value < hi, name
        assert f.value(name) == pytest.approx(value, rel=0.1), name
    assert f.membrane_time_constant == pytest.approx(2.5 * 0.009, rel=0.03)
    assert not f.residual_check.structured


def test_a_soma_shunt_is_reported_as_inseparable():
    """One charging curve barely tells a leak at the soma from a lower Rm: the fit says so."""
    tree = unequal_tree(soma=12.0)
    truth = dict(TRUTH, soma_shunt=0.3e-9)
    t, y = recording(tree, truth)
    f = fit_morphology(t, y, tree, -40e-12, shunt=True, window=(0.0, None))
    assert "soma_shunt" in f.names
    assert not f.condition.separable
    assert any("g_shunt" in n for n in f.notes)


def test_refusals():
    tree = unequal_tree()
    t, y = recording(tree, TRUTH, samples=50)
    with pytest.raises(InputError, match="soma"):
        fit_morphology(t, y, tree, -40e-12, shunt=True)
    with pytest.raises(InputError, match="current"):
        fit_morphology(t, y, tree, 0.0)


def test_a_cell_without_shunt_ends_converged_with_the_shunt_stated_as_undetermined():
    """Fitted with a shunt, a recording of a cell that has none: the search over all four stops in a flat
    valley, so the shunt is profiled (Raue et al. 2009 [Raue2009]: a profile that stays under the threshold
    up to the grid's end means the data do not bound it there), fixed at the low end, and Rm, Ri, Cm are
    fitted to convergence and come back within their intervals."""
    tree = unequal_tree(soma=12.0)
    t, y = recording(tree, TRUTH)
    f = fit_morphology(t, y, tree, -40e-12, shunt=True, window=(0.0, None))
    profile = f.shunt_profile
    assert f.converged
    assert profile is not None
    assert not profile.determined
    assert profile.low_open
    assert not profile.high_open
    assert f.value("soma_shunt") == profile.fixed == pytest.approx(profile.shunts[0])
    assert f.interval("soma_shunt") == profile.interval
    assert profile.interval[1] > 0.3e-9  # the flat valley reaches past the soma's own conductance
    assert any(n.startswith("the data do not determine the soma shunt") for n in f.notes)
    assert not any("stopped after" in n and "without meeting" in n and "values are the best" in n for n in f.notes)
    for name, value in TRUTH.items():
        lo, hi = f.interval(name)
        assert lo < value < hi, name
    inside = (profile.shunts >= profile.interval[0]) & (profile.shunts <= profile.interval[1])
    assert np.ptp(profile.chi_square[inside]) <= profile.threshold


@pytest.mark.parametrize("shunt", [3e-9, 1e-8])
def test_a_strong_shunt_is_determined_by_its_profile(shunt):
    """A shunt twenty (or seventy) times the soma's own membrane conductance changes the charging curve
    beyond what Rm, Ri and Cm can make up: the profile rises above its threshold on both sides, and its
    interval holds the true shunt (Bates & Watts 1988, ch. 6 [BatesWatts1988]). At 10 nS the profile's
    minimum lies between two grid points, which must be searched before the threshold is taken."""
    tree = unequal_tree(soma=12.0)
    truth = dict(TRUTH, soma_shunt=shunt)
    t, y = recording(tree, truth)
    f = fit_morphology(t, y, tree, -40e-12, shunt=True, window=(0.0, None))
    profile = f.shunt_profile
    assert profile is not None
    assert profile.determined
    assert f.converged
    lo, hi = f.interval("soma_shunt")
    assert lo < shunt < hi
    assert hi / lo < 10
    assert lo < f.value("soma_shunt") < hi
    assert any(n.startswith("the data determine the soma shunt") for n in f.notes)


def test_no_profile_without_a_shunt():
    tree = unequal_tree(soma=12.0)
    t, y = recording(tree, TRUTH, samples=200)
    assert fit_morphology(t, y, tree, -40e-12, window=(0.0, None)).shunt_profile is None
