r"""Branched passive trees: building them, their electrotonic geometry, Rall's audit and reduction.

The jobs live in one module each, in the order they run:

* :mod:`.model` -- the :class:`Tree` (pieces of membrane, parents first) and building one from an
  SWC file or a tree outline (:func:`build_tree`);
* :mod:`.geometry` -- electrotonic lengths and distances (exact for frusta), the shared
  :class:`Layout`, and the exact steady-state input conductance of every piece, combined from the
  tips inward (:func:`exact_input_conductances`);
* :mod:`.audit` -- Rall's conditions: the 3/2 power rule at branch points, constant
  :math:`d^{3/2}` along branches, equal tip distances;
* :mod:`.reduction` -- the equivalent cylinder and the equivalent-cable profile;
* :mod:`.report` -- :func:`analyse_tree`, a short composition of the above, and its
  :class:`TreeReport`.

Everything is in SI and every algorithm is iterative and linear in the number of pieces (no
recursion, so trees of any depth work). The model is passive and linear, with Rm and Ri uniform
over the tree (:data:`cabletheory.PASSIVE_CAVEAT`).
"""

from __future__ import annotations

from .audit import BranchPoints, Stem, Tips, Tolerances, Violation
from .geometry import (
    Layout,
    electrotonic_distances,
    exact_input_conductances,
    frustum_electrotonic_length,
    frustum_transfer,
    layout,
    piece_electrotonic_lengths,
    tip_loads,
)
from .model import SWC_NAMES, Tree, build_tree, prune_empty_branches, scale_lengths, tree_from_outline, tree_from_swc
from .reduction import EquivalentCable, EquivalentCylinder, sample_profile
from .report import TreeReport, analyse_tree, describe_tips

__all__ = [
    "SWC_NAMES",
    "BranchPoints",
    "EquivalentCable",
    "EquivalentCylinder",
    "Layout",
    "Stem",
    "Tips",
    "Tolerances",
    "Tree",
    "TreeReport",
    "Violation",
    "analyse_tree",
    "build_tree",
    "describe_tips",
    "electrotonic_distances",
    "exact_input_conductances",
    "frustum_electrotonic_length",
    "frustum_transfer",
    "layout",
    "piece_electrotonic_lengths",
    "prune_empty_branches",
    "sample_profile",
    "scale_lengths",
    "tip_loads",
    "tree_from_outline",
    "tree_from_swc",
]
