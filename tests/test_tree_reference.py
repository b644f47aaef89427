"""Trees against outside references: published conditions, vetted values, an independent solver.

* Rall (1959, 1964) [Rall1959] [Rall1964]: a tree obeying the 3/2 rule with every tip at the same electrotonic
  distance has exactly the input resistance of its equivalent cylinder, R∞·coth L (sealed) or
  R∞·tanh L (killed).
* The demo tree of docs/sources.md (trunk 4 µm × 300 µm, daughters 4·2^(−2/3) µm × 300 µm,
  granddaughters 4·4^(−2/3) µm × 200 µm; Rm 20 kΩ·cm², Ri 200 Ω·cm): computed values
  (10 significant digits, exact evaluation of Rall's formulas with mpmath [mpmath2023], confirmed
  by an independent branched-tree solver); formula sources Rall 1959/1964 and, for ρ, Rall 1969
  [Rall1969].
* scipy.sparse [SciPy2020]: the compartmental steady state of cabletheory.compartment (a finite-volume
  discretisation solved with scipy.sparse.linalg.splu, no closed form involved) converges to
  the exact input resistance at second order.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from pathlib import Path

import numpy as np
import pytest

from cabletheory.cable import input_conductance, semi_infinite_input_conductance
from cabletheory.compartment import discretise_tree, node_input_resistance
from cabletheory.morphology import Outline, read_swc
from cabletheory.tree import (
    Tolerances,
    Tree,
    analyse_tree,
    build_tree,
    exact_input_conductances,
    tree_from_outline,
)

RM = 2.0  # Ω·m² = 20 kΩ·cm²
RI = 2.0  # Ω·m = 200 Ω·cm
CM = 0.01  # F/m² = 1 µF/cm²
UM = 1e-6
DATA = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"


def outline_tree(parents, lengths, diameters, soma_diameter=None, end_diameters=None) -> Tree:
    n = len(parents)
    d = np.asarray(diameters, dtype=float)
    return tree_from_outline(Outline(
        source="test", names=tuple(f"s{i}" for i in range(n)), parents=np.asarray(parents, dtype=np.int64),
        lengths=np.asarray(lengths, dtype=float), diameters=d,
        end_diameters=d if end_diameters is None else np.asarray(end_diameters, dtype=float),
        lines=np.arange(1, n + 1, dtype=np.int64), soma_diameter=soma_diameter))


def demo(granddaughter_1=200.0, daughter_scale=1.0, soma=None) -> Tree:
    """The demo tree of docs/sources.md (µm in, SI out)."""
    d0, d1, d2 = 4.0, 4.0 * 2 ** (-2 / 3) * daughter_scale, 4.0 * 4 ** (-2 / 3)
    parents = [-1, 0, 0, 1, 1, 2, 2]
    lengths = np.array([300, 300, 300, granddaughter_1, 200, 200, 200]) * UM
    diameters = np.array([d0, d1, d1, d2, d2, d2, d2]) * UM
    return outline_tree(parents, lengths, diameters, None if soma is None else soma * UM)


# --------------------------------------------------------------------------------------
# demo tree, computed (Rall 1959 [Rall1959], 1964 [Rall1964]; ρ: Rall 1969 [Rall1969])
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(("tree_kwargs", "expected_mohm"), [
    ({}, 209.5027757),  # R_in(root) = R∞ coth L_eq
    ({"granddaughter_1": 240.0}, 207.7253383),  # one granddaughter 20 % longer
    ({"daughter_scale": 1.2}, 194.7746655),  # both daughters 20 % thicker, GR = 0.7607257743
    ({"soma": 20.0}, 185.1329030),  # with a 20 µm spherical soma: R_N = 1/(G_S + G_D)
])
def test_demo_tree_input_resistance(tree_kwargs, expected_mohm):
    """Demo tree, computed; formula sources Rall 1959/1964 (R_in) [Rall1959] [Rall1964], Rall 1969 (soma) [Rall1969]."""
    report = analyse_tree(demo(**tree_kwargs), RM, RI, CM)
    assert report.input_resistance / 1e6 == pytest.approx(expected_mohm, rel=1e-9)


def test_demo_tree_reduction():
    """Demo tree, computed: L_eq, area, R∞, ρ, G_S, G_D (Rall 1959/1964 [Rall1959] [Rall1964], 1969 [Rall1969])."""
    report = analyse_tree(demo(soma=20.0), RM, RI, CM)
    cyl = report.equivalent_cylinder
    assert report.reducible
    assert report.reasons == ()
    assert cyl.electrotonic_length == pytest.approx(0.9954565254, rel=1e-9)
    assert cyl.diameter == pytest.approx(4e-6, rel=1e-12)
    assert cyl.length == pytest.approx(995.4565254e-6, rel=1e-9)
    assert cyl.membrane_area == pytest.approx(12509.27563e-12, rel=1e-9)
    assert report.membrane_area == pytest.approx(12509.27563e-12, rel=1e-9)
    assert cyl.semi_infinite_input_resistance / 1e6 == pytest.approx(159.1549431, rel=1e-9)
    assert report.conductance_ratio == pytest.approx(7.596794008, rel=1e-9)
    assert report.soma_conductance == pytest.approx(0.6283185307e-9, rel=1e-9)
    assert report.dendritic_input_conductance == pytest.approx(4.773206449e-9, rel=1e-9)
    assert report.reduced_input_resistance / 1e6 == pytest.approx(185.1329030, rel=1e-9)
    np.testing.assert_allclose(report.tips.electrotonic_distances, 0.9954565254, rtol=1e-9)
    np.testing.assert_allclose(report.branch_points.ratios, 1.0, rtol=1e-12)
    assert report.membrane_time_constant == pytest.approx(0.020, rel=1e-12)


def test_violations_are_found_and_named():
    """The sensitivity cases of the demo tree (computed) break Rall's conditions; the audit says where."""
    thick = analyse_tree(demo(daughter_scale=1.2), RM, RI, CM)
    assert not thick.reducible
    ratios = {v.id: v.value for v in thick.violations if v.kind == "branch_ratio"}
    # at the trunk the daughters are too thick: ratio 1/GR with GR = 0.7607257743 from the sheet;
    # at each daughter the (unchanged) granddaughters are now too thin: ratio = GR
    assert ratios == pytest.approx({"s0": 1 / 0.7607257743, "s1": 0.7607257743, "s2": 0.7607257743},
                                   rel=1e-9)
    assert "3/2 rule: 3 of 3 branch points" in thick.reasons[0]
    assert thick.difference_percent == pytest.approx(
        100 * (thick.reduced_input_resistance - thick.input_resistance) / thick.input_resistance, rel=1e-12)
    assert thick.difference_percent > 1.0  # the cylinder overstates R_in: the tree is leakier near the root

    longer = analyse_tree(demo(granddaughter_1=240.0), RM, RI, CM)
    assert not longer.reducible
    tips = [v for v in longer.violations if v.kind == "tip_distance"]
    assert tips[0].id == "s3"
    assert longer.tip_distance_max - longer.tip_distance_min == pytest.approx(40e-6 / 629.9605249e-6, rel=1e-8)
    relaxed = analyse_tree(demo(granddaughter_1=240.0), RM, RI, CM, tolerances=Tolerances(tip_spread=0.07))
    assert relaxed.reducible


# --------------------------------------------------------------------------------------
# Rall 1959 [Rall1959]: a conforming tree equals its equivalent cylinder to 1e-12
# --------------------------------------------------------------------------------------
def conforming_tree(seed: int, depth: int = 5, target: float = 1.3, stems: int = 3) -> Tree:
    """Uneven 3/2-rule splits, random branch lengths, every tip at X = target."""
    rng = np.random.default_rng(seed)
    parents, lengths, diameters = [], [], []
    stack = [(-1, d, target, depth) for d in rng.uniform(1.0, 3.0, stems) * UM]
    while stack:
        parent, d, remaining, levels = stack.pop()
        dx = remaining if levels == 0 else remaining * rng.uniform(0.1, 0.5)
        lam = math.sqrt(RM * d / (4 * RI))
        parents.append(parent)
        lengths.append(dx * lam)
        diameters.append(d)
        me = len(parents) - 1
        if levels:
            shares = rng.dirichlet(np.ones(rng.integers(2, 4)))
            for share in shares:
                stack.append((me, (share * d**1.5) ** (2 / 3), remaining - dx, levels - 1))
    # parents must precede children: the stack order already guarantees it
    return outline_tree(parents, lengths, diameters)


@pytest.mark.parametrize("seed", [1, 2, 3, 4])
@pytest.mark.parametrize("killed", [False, True])
def test_conforming_tree_equals_equivalent_cylinder(seed, killed):
    """Rall (1959) [Rall1959]: R_in = R∞ coth L (sealed tips) or R∞ tanh L (killed tips), to 1e-12."""
    tree = conforming_tree(seed)
    report = analyse_tree(tree, RM, RI, CM, killed_tips=killed)
    cyl = report.equivalent_cylinder
    assert report.reducible, report.reasons
    assert cyl.electrotonic_length == pytest.approx(1.3, rel=1e-12)
    r_inf = cyl.semi_infinite_input_resistance
    expected = r_inf * (math.tanh(1.3) if killed else 1.0 / math.tanh(1.3))
    assert report.input_resistance == pytest.approx(expected, rel=1e-12)
    assert report.reduced_input_resistance == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("seed", [1, 2])
@pytest.mark.parametrize("ratio", [0.3, 2.5])
def test_leaky_tips_with_one_ratio_reduce_exactly(seed, ratio):
    """Rall (1959): with the same end-conductance ratio B at every tip, the tree is its equivalent
    cylinder with that B: G_in = G∞ (B + tanh L)/(1 + B tanh L), to 1e-12 [Rall1959]."""
    base = conforming_tree(seed)
    tips = np.ones(len(base), dtype=bool)
    tips[base.parents[base.parents >= 0]] = False
    ends = np.where(tips, ratio * semi_infinite_input_conductance(RM, RI, base.distal_diameters), 0.0)
    report = analyse_tree(dataclasses.replace(base, ends=ends), RM, RI, CM)
    assert report.reducible, report.reasons
    assert report.end_conductance_ratio == pytest.approx(ratio, rel=1e-12)
    g_inf = 1.0 / report.equivalent_cylinder.semi_infinite_input_resistance
    expected = 1.0 / float(input_conductance(g_inf, 1.3, ratio))
    assert report.input_resistance == pytest.approx(expected, rel=1e-12)
    assert report.reduced_input_resistance == pytest.approx(expected, rel=1e-12)


def test_tips_that_end_differently_are_a_departure():
    """One killed tip among sealed ones: the exact value changes, the audit names the odd tip."""
    tree = demo()
    ends = np.zeros(len(tree))
    ends[3] = math.inf  # the first granddaughter is held at rest
    report = analyse_tree(dataclasses.replace(tree, ends=ends), RM, RI, CM)
    sealed = analyse_tree(tree, RM, RI, CM)
    assert not report.reducible
    assert [v.id for v in report.violations if v.kind == "tip_end"] == ["s3"]
    assert report.input_resistance < sealed.input_resistance
    # an end asked for at every tip overrides the tree's own
    assert analyse_tree(dataclasses.replace(tree, ends=ends), RM, RI, CM,
                        tip_conductance=math.inf).input_resistance == pytest.approx(
        analyse_tree(tree, RM, RI, CM, killed_tips=True).input_resistance, rel=1e-15)


def test_one_leaky_cylinder_is_cable_input_conductance():
    """A single branch with end=G: G_in = G∞ (B + tanh L)/(1 + B tanh L), B = G/G∞ [Rall1959]."""
    d, ell, leak = 2e-6, 400e-6, 0.7e-9
    tree = dataclasses.replace(outline_tree([-1], [ell], [d]), ends=np.array([leak]))
    g_inf = float(semi_infinite_input_conductance(RM, RI, d))
    expected = float(input_conductance(g_inf, ell / math.sqrt(RM * d / (4 * RI)), leak / g_inf))
    assert 1.0 / analyse_tree(tree, RM, RI, CM).input_resistance == pytest.approx(expected, rel=1e-14)


def test_one_step_is_cable_input_conductance():
    """The recursion step is cable.input_conductance with B = G_load/G∞ (Rall 1959 [Rall1959])."""
    d, ell, load = 1.5e-6, 180e-6, 0.8e-9
    tree = outline_tree([-1, 0], [ell, 1e-6], [d, 1e-6])
    g_in, _ = exact_input_conductances(tree, RM, RI)
    g_inf = float(semi_infinite_input_conductance(RM, RI, d))
    lam = math.sqrt(RM * d / (4 * RI))
    expected = float(input_conductance(g_inf, ell / lam, g_in[1] / g_inf))
    assert g_in[0] == pytest.approx(expected, rel=1e-14)
    del load


# --------------------------------------------------------------------------------------
# independent solver: sparse compartmental steady state
# --------------------------------------------------------------------------------------
def _compartmental(tree: Tree, compartments: int) -> float:
    c = discretise_tree(tree.parents, tree.lengths, tree.distal_diameters, RM, RI, CM, compartments,
                        soma_area=tree.soma_area)
    return node_input_resistance(c, 0)


@pytest.mark.parametrize("tree_kwargs", [{}, {"daughter_scale": 1.2, "soma": 20.0}])
def test_compartmental_solve_converges_to_exact(tree_kwargs):
    """scipy.sparse steady state converges at second order to the exact tips-inward result."""
    tree = demo(**tree_kwargs)
    exact = analyse_tree(tree, RM, RI, CM).input_resistance
    errors = [abs(_compartmental(tree, n) - exact) / exact for n in (4, 8, 16, 32)]
    orders = [math.log2(a / b) for a, b in itertools.pairwise(errors)]
    assert errors[-1] < 1e-4
    assert all(1.9 < p < 2.1 for p in orders), orders


def test_compartmental_solve_of_the_bundled_nonconforming_cell():
    """The realistic demo cell (outline soma, 5 stems): second-order convergence to the exact value."""
    tree = build_tree(read_swc(DATA / "lumenia_pv7_interneuron.swc"))
    report = analyse_tree(tree, RM, RI, CM)
    assert not report.reducible
    errors = [abs(_compartmental(report.tree, n) - report.input_resistance) / report.input_resistance
              for n in (1, 2, 4)]
    assert errors[-1] < 1e-5
    assert math.log2(errors[0] / errors[1]) > 1.9
    assert math.log2(errors[1] / errors[2]) > 1.9


def test_each_stem_is_judged_on_its_own():
    """Two stems: one obeys the 3/2 rule, the other has daughters as thick as their parent."""
    d, half = 2e-6, 2e-6 * 2 ** (-2 / 3)
    lam = math.sqrt(RM * d / (4 * RI))
    lam_half = math.sqrt(RM * half / (4 * RI))
    parents = [-1, 0, 0, -1, 3, 3]
    lengths = [0.4 * lam, 0.6 * lam_half, 0.6 * lam_half, 0.4 * lam, 0.6 * lam, 0.6 * lam]
    diameters = [d, half, half, d, d, d]
    report = analyse_tree(outline_tree(parents, lengths, diameters), RM, RI)
    assert [s.reducible for s in report.stems] == [True, False]
    assert report.stems[1].worst_ratio == pytest.approx(2.0, rel=1e-12)
    assert report.stems[0].tip_distance_max == pytest.approx(1.0, rel=1e-12)
    assert report.stems[1].tip_distance_min == pytest.approx(1.0, rel=1e-12)  # equal X, wrong diameters
    assert not report.reducible
    assert report.reasons[0].startswith("3/2 rule: 1 of 2 branch points")
    assert sum(s.input_conductance for s in report.stems) == pytest.approx(report.dendritic_input_conductance,
                                                                          rel=1e-14)
