"""The tree's tips-inward passes kept between time courses (tree_response(..., reuse=True)), and the
solution along the paths to the sites only (_along) that tree_response reads.

A kept pass serves a later call only on the same pieces, membrane and tips at the same s; the
values are those of a fresh solve. The reference values are fresh solves (reuse=False) and, for the
changed membrane, the mpmath recursion of cabletheory.tree_precise (an independent evaluation).
"""

from __future__ import annotations

from dataclasses import replace

import mpmath
import numpy as np
import pytest
from tree_fixtures import demo, tapered_tree

from cabletheory import case, tree_laplace
from cabletheory.tree_laplace import PassiveTree, _inward_kept, _network, root_site, site_at
from cabletheory.tree_precise import transfer_impedance_precise
from cabletheory.tree_time import tree_response

TIMES = np.linspace(0.0, 0.03, 61)
S = np.array([-10.0 + 300j, 50.0 - 20j, 0.0])


@pytest.fixture(autouse=True)
def _empty_store():
    tree_laplace._KEPT.clear()
    yield
    tree_laplace._KEPT.clear()


def _cell(tree=None, rm=2.0, tips=None):
    return PassiveTree(demo(soma=20.0) if tree is None else tree, rm, 1.5, 0.01, tips=tips)


def test_moved_stimulus_and_reading_points_reuse_the_solution():
    cell = _cell()
    tree = cell.tree
    first = _inward_kept(_network(cell, [root_site(), site_at(tree, "s3")]), S)
    again = _inward_kept(_network(cell, [site_at(tree, "s5"), site_at(tree, "s6"), root_site()]), S)
    assert again is first
    assert not first.load.flags.writeable  # a caller cannot spoil what the next one reads


@pytest.mark.parametrize("change", ["membrane", "axial", "diameter", "length", "tips", "soma", "cut"])
def test_a_changed_tree_or_membrane_is_solved_again(change):
    cell = _cell()
    tree = cell.tree
    sites = [root_site(), site_at(tree, "s3")]
    kept = _inward_kept(_network(cell, sites), S)
    if change == "membrane":
        other = replace(cell, membrane_resistivity=2.5)
    elif change == "axial":
        other = replace(cell, axial_resistivity=1.2)
    elif change == "diameter":
        d = np.array(tree.distal_diameters)
        d[4] *= 1.01
        other = replace(cell, tree=replace(tree, distal_diameters=d, proximal_diameters=d))
    elif change == "length":
        ell = np.array(tree.lengths)
        ell[1] *= 0.99
        other = replace(cell, tree=replace(tree, lengths=ell))
    elif change == "tips":
        other = replace(cell, tips="killed")
    elif change == "soma":
        other = replace(cell, tree=replace(tree, soma_area=tree.soma_area * 1.1))
    else:  # a site inside a piece cuts it: another network, though the tree is the same
        other = cell
        sites = [tree_laplace.Site(2, 1e-4)]
    fresh = _inward_kept(_network(other, sites), S)
    assert fresh is not kept
    if change == "cut":  # one piece more; the same root admittance, up to rounding
        assert fresh.load.shape[0] == kept.load.shape[0] + 1
        np.testing.assert_allclose(fresh.load[0], kept.load[0], rtol=1e-12)
    else:
        assert not np.allclose(fresh.load[0], kept.load[0], rtol=1e-9, atol=0.0)


def test_a_changed_membrane_gives_the_precise_values_not_the_kept_ones():
    """After a solve at Rm = 2 Ω·m² is kept, Rm = 3 Ω·m² reads its own input impedance (mpmath
    recursion of cabletheory.tree_precise, 30 digits)."""
    s = np.array([20.0 + 100j])
    _inward_kept(_network(_cell(rm=2.0), [root_site()]), s)
    cell = _cell(rm=3.0)
    sol = _inward_kept(_network(cell, [root_site()]), s)
    with mpmath.workdps(30):
        precise = complex(transfer_impedance_precise(cell, complex(s[0]), None, root_site(), digits=30))
    assert 1.0 / sol.load[0, 0] == pytest.approx(precise, rel=1e-12)  # the root's total admittance


@pytest.mark.parametrize("make", [lambda: _cell(), lambda: PassiveTree(tapered_tree(), 2.0, 1.5, 0.01)])
@pytest.mark.parametrize("stimulus", [case.CurrentStep(1e-10), case.AlphaCurrent(2e-10, 1e-3),
                                      case.CurrentPulse(1e-10, 2e-3)])
def test_reused_time_courses_equal_fresh_ones(make, stimulus):
    cell = make()
    tree = cell.tree
    label = tree.labels[-1]
    for at, record in ((root_site(), [root_site(), site_at(tree, label)]),
                       (site_at(tree, label), [root_site()]),  # the stimulus moved: solutions reused
                       (site_at(tree, tree.labels[1]), [site_at(tree, label), root_site()])):
        kept = tree_response(cell, stimulus, TIMES, at, record, tolerance=1e-9, reuse=True)
        fresh = tree_response(cell, stimulus, TIMES, at, record, tolerance=1e-9)
        np.testing.assert_array_equal(kept.voltage, fresh.voltage)
        np.testing.assert_array_equal(kept.errors, fresh.errors)
    assert tree_laplace._KEPT  # the reused calls did keep their solutions


def test_the_store_keeps_a_bounded_number_of_values(monkeypatch):
    cell = _cell()
    net = _network(cell, [root_site()])
    per_solution = (net.size + 1) * S.size + 4 * net.size * S.size
    monkeypatch.setattr(tree_laplace, "_KEPT_VALUES", 3 * per_solution)
    for k in range(6):
        _inward_kept(net, S + k)
    assert sum(tree_laplace._kept_size(v) for v in tree_laplace._KEPT.values()) <= 3 * per_solution
    assert len(tree_laplace._KEPT) == 3
    first = _inward_kept(net, S + 5)  # the most recent is still there
    assert _inward_kept(net, S + 5) is first


# -- the sites of every node, made when read -------------------------------------------------------
def test_node_sites_read_as_the_sites_they_stand_for():
    from cabletheory.tree_laplace import Site, node_sites

    tree = demo(soma=20.0)
    explicit = (root_site(), *(Site(i, float(ell)) for i, ell in enumerate(tree.lengths)))
    sites = node_sites(tree)
    assert len(sites) == len(explicit) == len(tree) + 1
    assert tuple(sites) == explicit
    assert sites == explicit
    assert sites[-1] == explicit[-1]
    assert sites[0] == root_site()
    assert sites[2:5] == explicit[2:5]
    with pytest.raises(IndexError):
        sites[len(tree) + 1]


@pytest.mark.parametrize("make", [lambda: demo(soma=20.0), tapered_tree])
def test_the_node_network_made_from_arrays_equals_the_one_made_from_sites(make):
    from cabletheory.tree_laplace import _solve, node_sites

    cell = PassiveTree(make(), 2.0, 1.5, 0.01, tips="killed")
    from_arrays = _network(cell, None)
    from_sites = _network(cell, list(node_sites(cell.tree)))
    np.testing.assert_array_equal(from_arrays.nodes, from_sites.nodes)
    assert from_arrays.fingerprint == from_sites.fingerprint
    np.testing.assert_array_equal(_solve(from_arrays, S).total, _solve(from_sites, S).total)


def test_path_distances_are_the_sums_of_lengths_from_the_root():
    from cabletheory.cli.tree_views import _path_distances

    tree = demo()
    d = _path_distances(tree) * 1e6  # µm: s0 300, s1 and s2 300 each, s3 200 (default), s4..s6 200
    np.testing.assert_allclose(d, [0, 300, 600, 600, 800, 800, 800, 800], rtol=1e-12)


@pytest.mark.parametrize("make", [lambda: demo(soma=20.0), tapered_tree])
@pytest.mark.parametrize("tips", [None, "killed", 2e-10])
def test_the_solution_along_the_paths_equals_the_whole_solution(make, tips):
    """_along solves only between the root and the sites; each transfer impedance and voltage ratio
    it gives equals the whole tree's two passes (_solve), killed tips and frusta included."""
    from cabletheory.tree_laplace import Site, _along, _inward, _on_paths, _solve, _transfer

    cell = PassiveTree(make(), 2.0, 1.5, 0.01, tips=tips)
    tree = cell.tree
    sites = [root_site(), Site(3, 0.4 * float(tree.lengths[3])), site_at(tree, tree.labels[-1]),
             site_at(tree, tree.labels[1])]
    net = _network(cell, sites)
    s = np.array([0.0, -10.0 + 300j, 2e3 - 5e2j])
    whole = _solve(net, s)
    paths = _along(net, _inward(net, s, ratios=False), _on_paths(net, net.nodes))
    nodes = net.nodes.tolist()
    for a in nodes:
        for b in nodes:
            np.testing.assert_allclose(_transfer(net, paths, a, b), _transfer(net, whole, a, b), rtol=1e-13,
                                       atol=1e-300)
    on = _on_paths(net, net.nodes)
    assert on.size < net.size  # some pieces lie off every path, and were not solved
    np.testing.assert_allclose(paths.down[on], whole.down[on], rtol=1e-13, atol=1e-300)
