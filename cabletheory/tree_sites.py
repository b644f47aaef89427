r"""Sites of a tree written as text: a point label, the soma, or a distance along a branch.

The one syntax every command uses for a place on a reconstructed tree (``--stimulus-at``,
``--positions``, ``--read-at``, a simulator file's columns; docs/verify.md, "On a whole tree"):

* a **point**: the morphology's own label, an SWC point id (``412``) or an outline branch name
  (``left.a``: the far end of that branch), or ``soma`` / ``root`` for the root node (the SWC id
  of the root point also works);
* a **distance along a branch**: ``branch LABEL +DISTANCE``, where LABEL is the point at the far
  end of the branch (a tip or the branch point it ends at, as ``cabletheory tree`` names branches
  "first–last") and DISTANCE is measured from the branch's start (the branch point or soma it
  leaves) towards that end: ``branch 443 +25 um``. A bare distance is in µm.

A ``V@`` (or ``V at``, ``Vm@``, ``@``) in front is allowed, as in a simulator file's header.
Unknown labels, distances beyond a branch or below 0, a branch named by a point inside it and a
label that could mean two points are refused with a message that says so. Each site's
:attr:`TreePoint.label` is its text in this syntax and reads back to the same site.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from .errors import InputError
from .tree import Tree
from .tree.geometry import branch_ids
from .tree_laplace import Site, root_site, site_on_branch

__all__ = ["ROOT_WORDS", "TreePoint", "TreeSites", "in_words", "tree_site"]

# (text, kind, where) -> SI value: the unit parser of the command line (units.parse_quantity)
LengthParser = Callable[[str, str, str], float]
# distances the core reads without a unit library
_SIMPLE_UNITS = {"m": 1.0, "cm": 1e-2, "mm": 1e-3, "um": 1e-6, "µm": 1e-6, "μm": 1e-6, "micron": 1e-6,
                 "microns": 1e-6, "nm": 1e-9}
_WITH_UNIT = re.compile(r"^(?P<number>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(?P<unit>[A-Za-zµμ]+)$")


ROOT_WORDS = ("soma", "root")
_PREFIX = re.compile(r"^(?:(?:v|vm|voltage)\s*@|(?:v|vm|voltage)\s+at\s+|@)\s*", re.IGNORECASE)
_BRANCH = re.compile(r"^branch\s+(?P<label>[^\s+]+)\s*\+\s*(?P<distance>\S.*?)\s*$", re.IGNORECASE)
_NUMBER = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")
_DISTANCE = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?\s*[A-Za-zµμ]+$")


@dataclass(frozen=True, slots=True)
class TreePoint:
    """One site of a tree and its text in the column syntax (``'412'``, ``'soma'``,
    ``'branch 443 +25 um'``), which reads back to the same site."""

    site: Site
    label: str


class TreeSites:
    """Reads the site texts of one tree (the syntax of this module's docstring).

    Parameters
    ----------
    tree : the morphology
    parse : ``(text, kind, where) -> SI value`` for distances with a unit (the command line's unit
        parser); without it m, cm, mm, µm (um) and nm are read
    distance_unit : factor (m) of a bare distance, default 1e-6 (µm)
    """

    def __init__(self, tree: Tree, parse: LengthParser | None = None, distance_unit: float = 1e-6) -> None:
        self.tree = tree
        self.parse = parse
        self.distance_unit = distance_unit
        parents = np.asarray(tree.parents)
        children = np.bincount(parents[parents >= 0], minlength=len(tree))
        self._ids = branch_ids(parents, children)
        self._last: dict[int, int] = {}  # branch -> its far-end piece (parents come before children)
        self._first: dict[int, int] = {}
        for i, b in enumerate(self._ids.tolist()):
            self._first.setdefault(b, i)
            self._last[b] = i
        self._index = {label: i for i, label in enumerate(tree.labels)}

    # ------------------------------------------------------------------ the syntax
    def point(self, text: str) -> TreePoint:
        """The site a text names (raises InputError saying what is wrong)."""
        raw = text.strip()
        body = _PREFIX.sub("", raw, count=1).strip()
        if not body:
            raise InputError(f"{raw!r} names no point; write e.g. 'V@412', 'V@soma' or 'V@branch 443 +25 um'")
        m = _BRANCH.match(body)
        if m:
            return self._on_branch(m.group("label"), m.group("distance"))
        if _DISTANCE.match(body) and body not in self._index:
            raise InputError(f"{body!r} is a distance, not a point of the tree; on a tree write "
                             f"'branch LABEL +{body}' (the branch named by its far end) or a point label")
        if " " in body or "\t" in body:
            raise InputError(f"{body!r} is not a point label; write a label ('412', 'soma') or "
                             "'branch LABEL +DISTANCE' ('branch 443 +25 um')")
        site = self._labelled(body)
        return TreePoint(site, self._root_word() if site.piece == -1 else body)

    def _root_word(self) -> str:
        return "soma" if self.tree.soma_area is not None else "root"

    def _is_root(self, label: str) -> bool:
        """The root's word, its label, or the SWC id of the root point ('soma (point 1)', 'root point 1')."""
        root = self.tree.root_label
        return (label.lower() in ROOT_WORDS or label == root
                or root in (f"soma (point {label})", f"root point {label}"))

    def _labelled(self, label: str) -> Site:
        tree = self.tree
        is_root = self._is_root(label)
        if label in self._index:
            if is_root:
                raise InputError(f"{label!r} is ambiguous: the root's word and the name of a point of "
                                 f"{tree.source}; rename the branch")
            i = self._index[label]
            return Site(i, float(tree.lengths[i]))
        if is_root:
            return root_site()
        hint = ""
        if tree.numeric_ids and _NUMBER.match(label):
            ids = sorted(int(x) for x in tree.labels)
            hint = f" (its points run from {ids[0]} to {ids[-1]}, soma/root aside)"
        raise InputError(f"no point {label!r} in {tree.source}{hint}")

    def _on_branch(self, label: str, distance_text: str) -> TreePoint:
        tree = self.tree
        if self._is_root(label):
            raise InputError(f"'branch {label}': the root is not a branch; name a branch by the point at its far "
                             "end")
        if label not in self._index:
            raise InputError(f"'branch {label}': no point {label!r} in {tree.source}")
        piece = self._index[label]
        b = int(self._ids[piece])
        last, first = self._last[b], self._first[b]
        name = tree.labels[last] if first == last else f"{tree.labels[first]}–{tree.labels[last]}"
        if piece != last:
            raise InputError(f"'branch {label}': point {label} lies inside the branch {name}; a branch is "
                             f"named by its far end, 'branch {tree.labels[last]} +...'")
        text = distance_text.strip()
        x = self._distance(text, f"'branch {label} +{text}'")
        pieces = np.flatnonzero(self._ids == b)
        length = float(np.sum(np.asarray(tree.lengths)[pieces]))
        if not (math.isfinite(x) and x >= 0):
            raise InputError(f"'branch {label} +{text}': the distance must be 0 or more")
        if x > length * (1 + 1e-9) + 1e-15:
            raise InputError(f"'branch {label} +{text}' lies beyond the end of the branch "
                             f"{name}, which is {length * 1e6:.6g} µm long")
        site = site_on_branch(tree, b, min(x, length))
        return TreePoint(site, f"branch {label} +{x * 1e6:.15g} um")

    def _distance(self, text: str, where: str) -> float:
        """A distance in m: bare in ``distance_unit``, else by the unit parser (or a simple unit)."""
        if _NUMBER.match(text):
            return float(text) * self.distance_unit
        if self.parse is not None:
            return self.parse(text, "length", where)
        m = _WITH_UNIT.match(text)
        if m is None or m.group("unit") not in _SIMPLE_UNITS:
            raise InputError(f"{where}: cannot read {text!r} as a distance; write e.g. '25 um'")
        return float(m.group("number")) * _SIMPLE_UNITS[m.group("unit")]

    def key(self, site: Site) -> tuple[int, float]:
        """One key per physical point: a site at the start of a piece is its parent's far end."""
        tree = self.tree
        piece, distance = site.piece, site.distance
        while piece >= 0 and distance <= 1e-12 * max(float(tree.lengths[piece]), 1e-300):
            parent = int(tree.parents[piece])
            piece, distance = parent, (float(tree.lengths[parent]) if parent >= 0 else 0.0)
        if piece >= 0 and abs(distance - float(tree.lengths[piece])) <= 1e-12 * float(tree.lengths[piece]):
            distance = float(tree.lengths[piece])
        return piece, distance


# the reader of the tree last asked about: a case names its points one at a time, and indexing a
# tree's labels costs more than reading a label (held by identity: a Tree is frozen)
_LAST: tuple[Tree, LengthParser | None, TreeSites] | None = None


def tree_site(tree: Tree, text: str, parse: LengthParser | None = None) -> Site:
    """The site of ``tree`` that ``text`` names (a point label, 'soma', 'branch 443 +25 um')."""
    global _LAST
    last = _LAST
    if last is not None and last[0] is tree and last[1] is parse:
        sites = last[2]
    else:
        sites = TreeSites(tree, parse)
        _LAST = (tree, parse, sites)
    return sites.point(text).site


def in_words(label: str, site: Site | None = None) -> str:
    """A site's text for a sentence: 'the soma', 'point 412', 'branch 443 +25 um'."""
    text = label.strip()
    if (site is not None and site.piece == -1) or text.lower() in ROOT_WORDS:
        return "the soma" if text.lower() != "root" else "the root"
    return text if text.lower().startswith(("branch ", "v@", "@")) else f"point {text}"
