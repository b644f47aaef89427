"""The drawings of a tree (cabletheory.tree_figure): where every node is put, how pieces are
coloured, and that the images are real PNG/SVG files; matplotlib only when drawing."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from cabletheory.errors import InputError
from cabletheory.inputs import read_outline_value
from cabletheory.morphology import read_morphology
from cabletheory.tree import build_tree
from cabletheory.tree_figure import (
    MAP_QUANTITIES,
    MapColouring,
    _strokes,
    dendrogram_layout,
    draw_map,
    draw_reduction_cost,
    map_colouring,
    swc_layout,
)
from cabletheory.tree_laplace import PassiveTree
from cabletheory.tree_time import electrotonic_map

DATA = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"


def demo_tree():
    return build_tree(read_morphology(str(DATA / "lumenia_demo.outline"), read_outline_value))


def test_dendrogram_puts_nodes_at_their_path_distance_and_parents_between_children():
    tree = demo_tree()
    x, y = dendrogram_layout(tree)
    labels = ["root", *tree.labels]
    at = dict(zip(labels, zip(x.tolist(), y.tolist(), strict=True), strict=True))
    assert at["trunk"][0] == pytest.approx(300e-6)
    assert at["left.a"][0] == pytest.approx(800e-6)
    tips = ["left.a", "left.b", "right.a", "right.b"]
    assert len({at[t][1] for t in tips}) == 4  # every tip on its own row
    assert at["left"][1] == pytest.approx(0.5 * (at["left.a"][1] + at["left.b"][1]))
    assert at["trunk"][1] == pytest.approx(0.5 * (at["left"][1] + at["right"][1]))
    assert at["root"][1] == at["trunk"][1]


def test_swc_layout_uses_the_files_coordinates():
    points = read_morphology(str(DATA / "lumenia_lw1_conforming.swc"), read_outline_value)
    tree = build_tree(points)
    x, y, radius = swc_layout(tree, points)
    k = tree.labels.index("3")
    row = int(np.flatnonzero(points.ids == 3)[0])
    assert x[k + 1] == pytest.approx(points.positions[row, 0])
    assert y[k + 1] == pytest.approx(points.positions[row, 1])
    assert radius > 0  # a soma


def test_strokes_run_from_the_near_value_to_the_far_value():
    parents = np.array([-1, 0])
    x = np.array([0.0, 1.0, 2.0])
    y = np.zeros(3)
    segments, colour = _strokes(parents, x, y, np.array([1.0, 2.0, 8.0]), True, 4)
    assert segments.shape == (8, 2, 2)
    assert segments[0, 0, 0] == 0.0
    assert segments[-1, 1, 0] == 2.0
    assert np.all(np.diff(colour) > 0)
    # logarithmic: the midpoint of the second piece is the geometric mean of 2 and 8
    assert np.sqrt(colour[5] * colour[6]) == pytest.approx(4.0, rel=1e-12)
    _, linear = _strokes(parents, x, y, np.array([0.0, 1.0, 3.0]), False, 2)
    assert linear.tolist() == pytest.approx([0.25, 0.75, 1.5, 2.5])


@pytest.mark.parametrize("name", sorted(MAP_QUANTITIES))
def test_every_colouring_draws(name):
    tree = demo_tree()
    m = electrotonic_map(PassiveTree(tree, 2.0, 2.0, 0.01, tips="killed"), 0.0)
    colouring = map_colouring(m, name)
    if not colouring.log:
        assert colouring.values[1] == pytest.approx(getattr(m, MAP_QUANTITIES[name][0])[1] * 1e3)
    image = draw_map(tree, colouring, image_format="png")
    assert image[:8] == b"\x89PNG\r\n\x1a\n"


def test_reduction_cost_figure_and_format_check():
    t = np.linspace(0, 0.04, 30)
    svg = draw_reduction_cost(t, 1e-3 * (1 - np.exp(-t / 0.02)), 1e-3 * (1 - np.exp(-t / 0.018)),
                              reduced_model="equivalent cylinder", when=0.02, largest=1e-5, title="test",
                              note="Passive membrane assumed.", image_format="svg")
    assert svg.lstrip().startswith(b"<?xml")
    with pytest.raises(InputError, match="image format"):
        draw_map(demo_tree(), MapColouring("x", "x", np.ones(8), False), image_format="gif")


def test_importing_the_module_does_not_load_matplotlib():
    code = "import sys, cabletheory.tree_figure; print('matplotlib' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False"
