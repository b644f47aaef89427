"""``advise`` for time courses on a whole tree: compartments per piece and the time step.

External check: the advice is verified here by solves of our own, independent of the search that
found it: the package's compartmental discretisation of the branched tree (second order in Δx
[CP]; Crank–Nicolson, Crank & Nicolson 1947 [CrankNicolson1947]) at the advised compartments and
time step, against the exact tree time course (Laplace-domain recursion, Holmes 1986
[Holmes1986], inverted on a contour, Weideman & Trefethen 2007 [WeidemanTrefethen2007]). The error
must fall with the refinements as a second-order scheme's does, not merely sit under one tolerance.
"""

from __future__ import annotations

import itertools
import json
import pathlib

import numpy as np
import pytest

from cabletheory import compartment as cp
from cabletheory.case import CurrentStep
from cabletheory.cli import main
from cabletheory.inputs import read_outline_value
from cabletheory.morphology import read_morphology
from cabletheory.tree import build_tree
from cabletheory.tree_laplace import PassiveTree, root_site, site_at, site_on_branch
from cabletheory.tree_time import tree_response
from cabletheory.verify.advice import advise_tree_course

ROOT = pathlib.Path(__file__).resolve().parents[1]
DEMO = ROOT / "cabletheory" / "data" / "morphologies" / "lumenia_demo.outline"
RM, RI, CM = 2.0, 2.0, 0.01  # SI: 20 kΩ·cm², 200 Ω·cm, 1 µF/cm²
TIMES = np.arange(0, 41) * 0.25e-3  # 0 to 10 ms


@pytest.fixture(scope="module")
def demo():
    tree = build_tree(read_morphology(str(DEMO), read_outline_value))
    cell = PassiveTree(tree, RM, RI, CM)
    sites = (root_site(), site_at(tree, "left.a"), site_on_branch(tree, 4, 150e-6))  # branch 4 is 'right'
    exact = tree_response(cell, CurrentStep(1.0), TIMES, root_site(), sites, tolerance=1e-11).voltage
    return tree, cell, sites, exact


def _solve(tree, sites, counts, step, scheme="crank-nicolson", source=None):
    """Our own run: the tree cut into ``counts`` compartments per piece, 1 A from t = 0 at the soma or
    at the far end of piece ``source``."""
    c = cp.discretise_tree(tree.parents, tree.lengths, tree.distal_diameters, RM, RI, CM, counts,
                           soma_area=tree.soma_area)
    current = np.zeros(c.size)
    current[0 if source is None else cp.branch_nodes(c, source)[-1]] = 1.0
    v = cp.integrate(c, current, TIMES, scheme=scheme, step=step)
    out = []
    for s in sites:
        if s.piece < 0:
            out.append(v[:, 0])
        else:
            out.append(cp.sample(c, v, [c.distance[c.proximal[s.piece]] + s.distance], branch=s.piece)[:, 0])
    return np.array(out).T


def _error(course, exact):
    return float(np.max(np.abs(course - exact) / np.max(np.abs(exact), axis=0)))


@pytest.fixture(scope="module")
def advice(demo):
    _tree, cell, sites, _exact = demo
    return {target: advise_tree_course(cell, sites, target, times=TIMES) for target in (0.04, 0.01, 0.0025)}


def test_the_advised_compartments_and_step_meet_the_target_in_our_own_solve(demo, advice):
    tree, _cell, sites, exact = demo
    for target, a in advice.items():
        error = _error(_solve(tree, sites, a.compartments, a.time_step.step), exact)
        assert error <= target, (target, error)
        assert error == pytest.approx(a.time_step.error, rel=1e-6)  # the advice reports what a run gives


def test_a_four_times_tighter_target_about_doubles_the_compartments(advice):
    """Second order in Δx: a quarter of the error needs half the spacing (twice the compartments)."""
    totals = [int(advice[t].compartments.sum()) for t in (0.04, 0.01, 0.0025)]
    for coarse, fine in itertools.pairwise(totals):
        assert 1.5 <= fine / coarse <= 2.6, totals


def test_refining_the_advised_grid_shows_second_order(demo, advice):
    """With a negligible time step, the advised grid and its halvings lose a factor near 4 each."""
    tree, _cell, sites, exact = demo
    base = advice[0.04].compartments
    errors = [_error(_solve(tree, sites, base * k, 2e-6), exact) for k in (1, 2, 4)]
    ratios = [a / b for a, b in itertools.pairwise(errors)]
    assert all(3.4 <= r <= 4.6 for r in ratios), (errors, ratios)


def test_backward_euler_needs_a_smaller_step_than_crank_nicolson(demo, advice):
    _tree, cell, sites, _exact = demo
    euler = advise_tree_course(cell, sites, 0.01, times=TIMES, scheme="backward-euler")
    assert euler.time_step.order == 1
    assert euler.time_step.step < advice[0.01].time_step.step
    assert euler.time_step.error <= 0.01


def test_a_step_at_a_tip_is_advised_and_verified_in_our_own_solve(demo):
    tree, cell, _sites, _exact = demo
    tip = site_at(tree, "right.b")
    read = (root_site(), tip)
    exact = tree_response(cell, CurrentStep(1.0), TIMES, tip, read, tolerance=1e-11).voltage
    a = advise_tree_course(cell, read, 0.01, times=TIMES, stimulus_at=tip)
    error = _error(_solve(tree, read, a.compartments, a.time_step.step, source=tree.labels.index("right.b")), exact)
    assert error <= 0.01
    assert error == pytest.approx(a.time_step.error, rel=1e-6)
    np.testing.assert_allclose(a.site_peaks, np.max(exact, axis=0), rtol=1e-9)  # exact values to 1e-10


def test_the_command_line_reads_tree_points(capsys):
    status = main(["advise", "--Rm", "20000", "--Ri", "200", "--morphology", str(DEMO), "--quantity", "time-course",
                   "--read-at", "soma, left.a, branch right +150 um", "--times", "0:10:0.25 ms", "--target", "1%",
                   "--json"])
    out, err = capsys.readouterr()
    assert status == 0, err
    report = json.loads(out)
    assert report["read_at"] == ["soma", "left.a", "branch right +150 um"]
    assert report["branches"] == ["trunk", "left", "left.a", "left.b", "right", "right.a", "right.b"]
    assert report["time_step"]["relative_error"] <= 0.01
    assert len(report["peak_voltage_per_current"]["value"]) == 3


@pytest.mark.parametrize(("argv", "fragment"), [
    (["--morphology", str(DEMO), "--quantity", "time-course", "--read-at", "soma, 9999"], "--read-at: no point '9999'"),
    (["--parents", "-1,0", "--lengths", "100,100", "--diameters", "2,1", "--quantity", "time-course"],
     "--morphology FILE"),
    (["--morphology", str(DEMO), "--end", "killed"], "--end: a tree has tips"),
    (["--morphology", str(DEMO), "--quantity", "time-course", "--stimulus-at", "branch right +150 um"],
     "--stimulus-at: give the soma or a point"),
    (["--diameter", "2", "--length", "500", "--quantity", "time-course", "--stimulus-at", "100"],
     "--stimulus-at: only a time course on a tree"),
])
def test_bad_tree_advice_is_one_line(capsys, argv, fragment):
    assert main(["advise", "--Rm", "20000", "--Ri", "200", *argv]) == 2
    err = capsys.readouterr().err
    assert fragment in err
    assert err.count("\n") == 1


def test_tips_sets_the_tree_tips_as_in_charge(capsys):
    """--tips killed: a killed tip is held at rest, so reading at that tip is refused; read elsewhere it
    gives a smaller soma peak than sealed tips (current leaks out of the tips)."""
    base = ["advise", "--Rm", "20000", "--Ri", "200", "--morphology", str(DEMO), "--quantity", "time-course",
            "--times", "0:5:0.25 ms", "--json"]
    assert main([*base, "--tips", "killed", "--read-at", "left.a"]) == 2
    assert "--read-at: left.a is a killed tip" in capsys.readouterr().err
    peaks = []
    for tips in ("sealed", "killed"):
        assert main([*base, "--tips", tips]) == 0
        peaks.append(json.loads(capsys.readouterr().out)["peak_voltage_per_current"]["value"][0])
    assert peaks[1] < peaks[0]
    assert main([*base[:-1], "--tips", "killed", "--end", "0.5 nS"]) == 2
    assert "--tips" in capsys.readouterr().err
