"""Small trees built in tests (SI units), shared by the tree-solver test files."""

from __future__ import annotations

import math

import numpy as np

from cabletheory.morphology import Outline
from cabletheory.tree import Tree, tree_from_outline

UM = 1e-6


def outline_tree(parents, lengths, diameters, soma_diameter=None) -> Tree:
    """A tree of cylinders from parent indices, lengths and diameters (m), as an outline gives it."""
    n = len(parents)
    d = np.asarray(diameters, dtype=float)
    return tree_from_outline(Outline(
        source="test", names=tuple(f"s{i}" for i in range(n)), parents=np.asarray(parents, dtype=np.int64),
        lengths=np.asarray(lengths, dtype=float), diameters=d, end_diameters=d,
        lines=np.arange(1, n + 1, dtype=np.int64), soma_diameter=soma_diameter))


def demo(granddaughter_1=200.0, soma=None) -> Tree:
    """The demo tree of docs/sources.md (µm in, SI out): 3/2 rule at both branch points, equal tip
    distances when ``granddaughter_1`` is 200."""
    d0, d1, d2 = 4.0, 4.0 * 2 ** (-2 / 3), 4.0 * 4 ** (-2 / 3)
    lengths = np.array([300, 300, 300, granddaughter_1, 200, 200, 200]) * UM
    return outline_tree([-1, 0, 0, 1, 1, 2, 2], lengths, np.array([d0, d1, d1, d2, d2, d2, d2]) * UM,
                        None if soma is None else soma * UM)


def tapered_tree(soma=15.0) -> Tree:
    """Four frusta, three narrowing and one widening, on a soma (µm in, SI out)."""
    n = 4
    return Tree(source="tapered", labels=tuple(f"f{i}" for i in range(n)), parents=np.array([-1, 0, 0, 1]),
                lengths=np.array([200.0, 300.0, 150.0, 400.0]) * UM,
                proximal_diameters=np.array([4.0, 2.5, 1.0, 1.5]) * UM,
                distal_diameters=np.array([3.0, 1.5, 2.0, 0.4]) * UM, types=np.full(n, 3),
                lines=np.arange(1, n + 1), soma_area=None if soma is None else math.pi * (soma * UM) ** 2,
                geometry="frusta")


def stepped_cylinders(tree: Tree, k: int, soma_diameter: float) -> tuple[Tree, float]:
    """Each frustum of ``tree`` as a chain of k cylinders with its midpoint diameters (the stepped
    cable, common practice [CP]); returns the tree and the length of its last cylinder."""
    parents, lengths, diameters, last = [], [], [], {-1: -1}
    for i in range(len(tree)):
        parent = last[int(tree.parents[i])]
        a, b = tree.proximal_diameters[i], tree.distal_diameters[i]
        for j in range(k):
            parents.append(parent)
            lengths.append(tree.lengths[i] / k)
            diameters.append(a + (b - a) * (j + 0.5) / k)
            parent = len(parents) - 1
        last[i] = parent
    return outline_tree(parents, lengths, diameters, soma_diameter), lengths[-1]
