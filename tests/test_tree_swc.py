"""From SWC points to pieces: soma conventions, type selection, tapers, the bundled cells.

Geometry facts used as checks are elementary [CP]: sphere area 4πr², lateral area of a
cylinder π d ℓ, the area of a polygon (shoelace formula).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from cabletheory.errors import FileFormatError, InputError
from cabletheory.inputs import read_outline_value
from cabletheory.morphology import parse_swc, read_morphology
from cabletheory.tree import analyse_tree, build_tree, tree_from_swc

RM, RI = 2.0, 2.0
UM = 1e-6
DATA = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"

ONE_POINT_SOMA = """1 1 0 0 0 6 -1
2 3 16 0 0 1 1
3 3 26 0 0 1 2
4 2 -16 0 0 0.5 1
5 2 -30 0 0 0.5 4
6 4 0 20 0 1.5 1
"""


def test_one_point_soma_is_a_sphere_and_stems_start_at_its_surface():
    tree = tree_from_swc(parse_swc(ONE_POINT_SOMA))
    assert tree.soma_convention == "sphere"
    assert tree.soma_area == pytest.approx(4 * math.pi * (6 * UM) ** 2)
    # axon (points 4, 5) left out by default; basal 2-3 and apical 6 kept
    assert tree.labels == ("2", "6", "3")
    np.testing.assert_allclose(tree.lengths, [10 * UM, 14 * UM, 10 * UM])
    assert tree.parents.tolist() == [-1, -1, 0]
    assert any("axon excluded" in note for note in tree.notes)


def test_axon_and_type_selection():
    points = parse_swc(ONE_POINT_SOMA)
    assert len(tree_from_swc(points, include_axon=True)) == 5
    assert tree_from_swc(points, types={3}).labels == ("2", "3")
    assert tree_from_swc(points, types={4}).labels == ("6",)
    with pytest.raises(InputError, match="no dendritic pieces"):
        analyse_tree(tree_from_swc(points, types={7}), RM, RI)


def test_three_point_soma_is_a_chain_of_cylinders_with_the_sphere_area():
    """The 3-point soma (two cylinders of length r and diameter 2r) has area 4πr² [CP]."""
    text = "1 1 0 0 0 5 -1\n2 1 0 -5 0 5 1\n3 1 0 5 0 5 1\n4 3 12 0 0 1 1\n"
    tree = tree_from_swc(parse_swc(text))
    assert tree.soma_convention == "cylinders"
    assert tree.soma_area == pytest.approx(4 * math.pi * (5 * UM) ** 2, rel=1e-12)
    assert tree.lengths[0] == pytest.approx(7 * UM)


def test_outline_soma_uses_the_projected_area():
    """A square outline of side 10 µm: projected area 100 µm², equivalent diameter 2√(100/π)."""
    text = ("1 1 -5 -5 0 0.1 -1\n2 1 5 -5 0 0.1 1\n3 1 5 5 0 0.1 2\n4 1 -5 5 0 0.1 3\n"
            "5 3 15 0 0 1 2\n")
    tree = tree_from_swc(parse_swc(text))
    assert tree.soma_convention == "outline"
    d = 2 * math.sqrt(100 / math.pi) * UM
    assert tree.soma_area == pytest.approx(math.pi * d * d, rel=1e-12)


def test_no_soma_means_input_at_the_root_point_and_no_soma_membrane():
    text = "1 3 0 0 0 1 -1\n2 3 100 0 0 1 1\n3 3 200 0 0 1 2\n"
    tree = tree_from_swc(parse_swc(text))
    assert tree.soma_area is None
    report = analyse_tree(tree, RM, RI)
    lam = math.sqrt(RM * 2 * UM / (4 * RI))
    r_inf = 2 / math.pi * math.sqrt(RM * RI) * (2 * UM) ** -1.5
    assert report.input_resistance == pytest.approx(r_inf / math.tanh(200 * UM / lam), rel=1e-12)
    assert report.conductance_ratio is None
    assert any("no soma membrane" in note for note in tree.notes)


def test_taper_option_makes_frusta_from_the_parent_diameter():
    text = "1 3 0 0 0 2 -1\n2 3 100 0 0 1 1\n"
    cylinders = tree_from_swc(parse_swc(text))
    frusta = tree_from_swc(parse_swc(text), taper=True)
    assert cylinders.proximal_diameters[0] == pytest.approx(2 * UM)
    assert frusta.proximal_diameters[0] == pytest.approx(4 * UM)
    assert frusta.distal_diameters[0] == pytest.approx(2 * UM)
    assert frusta.geometry == "frusta"


def test_zero_radius_soma_point_is_refused_when_it_is_a_sphere():
    with pytest.raises(FileFormatError, match=r":1: single-point soma has radius 0"):
        tree_from_swc(parse_swc("1 1 0 0 0 0 -1\n2 3 10 0 0 1 1\n"))


def test_bundled_conforming_cell_is_reducible():
    """The generator builds LW-1 to Rall's conditions (3/2 rule, all tips at X = 1.1)."""
    report = analyse_tree(build_tree(read_morphology(DATA / "lumenia_lw1_conforming.swc")), RM, RI)
    assert report.reducible
    np.testing.assert_allclose(report.tips.electrotonic_distances, 1.1, rtol=1e-7)
    np.testing.assert_allclose(report.branch_points.ratios, 1.0, rtol=1e-8)
    assert report.equivalent_cylinder.electrotonic_length == pytest.approx(1.1, rel=1e-7)
    assert abs(report.difference_percent) < 1e-5
    assert len(report.stems) == 3


def test_bundled_realistic_cell_is_not_reducible_and_says_why():
    report = analyse_tree(build_tree(read_morphology(DATA / "lumenia_pv7_interneuron.swc")), RM, RI)
    assert not report.reducible
    kinds = {v.kind for v in report.violations}
    assert kinds == {"branch_ratio", "branch_diameter", "tip_distance"}
    assert len(report.reasons) == 3
    assert report.tree.soma_convention == "outline"
    assert {s.type for s in report.stems} == {3, 4}
    assert abs(report.difference_percent) > 1.0


def test_bundled_demo_tree_file():
    """The outline demo file holds the demo tree of docs/sources.md (Rall 1959
    [Rall1959], 1964 [Rall1964])."""
    report = analyse_tree(build_tree(read_morphology(DATA / "lumenia_demo.outline", read_outline_value)), RM, RI)
    assert report.reducible
    assert report.input_resistance / 1e6 == pytest.approx(185.1329030, rel=1e-9)
    assert report.conductance_ratio == pytest.approx(7.596794008, rel=1e-9)


def test_reordering_is_reported():
    tree = tree_from_swc(parse_swc("3 3 20 0 0 1 2\n2 3 10 0 0 1 1\n1 1 0 0 0 5 -1\n"))
    assert any("2 point(s) came before their parent" in note for note in tree.notes)
