r"""Sites of a tree: the value (:class:`Site`, a piece and a distance along it) and its text: a point
label, the soma, or a distance along a branch.

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
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .errors import InputError
from .tree import Tree
from .tree.geometry import branch_ids

__all__ = ["ROOT_WORDS", "NodeSites", "Site", "TreePoint", "TreeSites", "in_words", "node_sites", "root_site",
           "site_at", "site_on_branch", "sites_along", "tree_site"]

Array = NDArray[np.float64]


# --------------------------------------------------------------------------------------
# sites as values
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Site:
    """A point of a tree: ``distance`` (m) from the proximal end of piece ``piece``.

    ``piece = -1`` is the root node (the soma, or the root point without a soma); the distal
    node of piece i is ``Site(i, tree.lengths[i])``.
    """

    piece: int
    distance: float = 0.0


def root_site() -> Site:
    """The root node (soma)."""
    return Site(-1, 0.0)


def site_at(tree: Tree, label: str) -> Site:
    """The site named by a point label (SWC id or piece name) or by the root's label, 'root' or 'soma'."""
    text = str(label).strip()
    if text in ("root", "soma", tree.root_label):
        return root_site()
    try:
        i = tree.labels.index(text)
    except ValueError:
        raise InputError(f"{tree.source}: no point {text!r} in the tree") from None
    return Site(i, float(tree.lengths[i]))


def site_on_branch(tree: Tree, branch: int, distance: float) -> Site:
    """The site ``distance`` (m) from the proximal end of branch ``branch``.

    Branches are the unbranched runs of pieces between the root, branch points and tips,
    numbered as :func:`cabletheory.tree.geometry.branch_ids` numbers them (parents first).
    """
    parents = np.asarray(tree.parents)
    children = np.bincount(parents[parents >= 0], minlength=len(tree))
    ids = branch_ids(parents, children)
    pieces = np.flatnonzero(ids == int(branch))
    if not (isinstance(branch, int | np.integer) and pieces.size):
        raise InputError(f"{tree.source}: branch {branch!r} does not exist (0..{int(ids.max())})")
    ends = np.cumsum(np.asarray(tree.lengths)[pieces])
    x = float(distance)
    if not (math.isfinite(x) and 0.0 <= x <= ends[-1] * (1 + 1e-12)):
        raise InputError(f"{tree.source}: distance {x!r} m lies outside branch {branch} (0..{float(ends[-1])!r} m)")
    k = min(int(np.searchsorted(ends, x, side="left")), pieces.size - 1)
    if k and x - float(ends[k - 1]) <= 1e-12 * float(ends[-1]):
        k -= 1  # on the node between two pieces: the end of the first
    start = float(ends[k - 1]) if k else 0.0
    length = float(tree.lengths[pieces[k]])
    at_end = abs(float(ends[k]) - x) <= 1e-12 * float(ends[-1])
    return Site(int(pieces[k]), length if at_end else min(max(x - start, 0.0), length))


def node_sites(tree: Tree) -> NodeSites:
    """The root and the distal node of every piece, in the tree's order (root first)."""
    return NodeSites(tuple(np.asarray(tree.lengths, dtype=float).tolist()))


class NodeSites(Sequence[Site]):
    """The root's site, then ``Site(i, lengths[i])`` for every piece i: a sequence whose sites are
    made when read (a tree of 100,000 points need not make them all to be mapped)."""

    __slots__ = ("lengths",)

    def __init__(self, lengths: tuple[float, ...]) -> None:
        self.lengths = lengths

    def __len__(self) -> int:
        return len(self.lengths) + 1

    def __getitem__(self, index):  # type: ignore[no-untyped-def, override]
        if isinstance(index, slice):
            return tuple(self[k] for k in range(*index.indices(len(self))))
        k = int(index) + (len(self) if int(index) < 0 else 0)
        if k == 0:
            return root_site()
        if k < 0:
            k = len(self)  # out of range: the lengths' own IndexError
        return Site(k - 1, self.lengths[k - 1])

    def __iter__(self):  # type: ignore[no-untyped-def]
        yield root_site()
        for i, ell in enumerate(self.lengths):
            yield Site(i, ell)

    def __eq__(self, other: object) -> bool:
        if isinstance(other, NodeSites):
            return self.lengths == other.lengths
        return isinstance(other, Sequence) and tuple(self) == tuple(other)

    def __hash__(self) -> int:
        return hash(self.lengths)

    def __repr__(self) -> str:
        return f"NodeSites({len(self)} sites)"


def _chain(tree: Tree, piece: int) -> list[int]:
    out = []
    while piece >= 0:
        out.append(piece)
        piece = int(tree.parents[piece])
    return out


def sites_along(tree: Tree, start: Site, end: Site, count: int) -> tuple[tuple[Site, ...], Array]:
    """``count`` sites equally spaced along the tree's path from ``start`` to ``end``, ends included.

    Returns the sites and their path distance from ``start`` (m). The path is the unique one
    through the tree (up to the nearest common point, then down).
    """
    if not (isinstance(count, int) and count >= 2):
        raise InputError(f"count must be a whole number >= 2, got {count!r}")
    (i, xa), (j, xb) = _check_site(tree, start), _check_site(tree, end)
    ell = np.asarray(tree.lengths, dtype=float)
    ca, cb = _chain(tree, i), _chain(tree, j)
    common = next((k for k in ca if k in set(cb)), None)
    if common is None:
        ia, ib = len(ca), len(cb)
    else:
        ia, ib = ca.index(common), cb.index(common)
    if common is not None and ia == 0 and ib == 0:
        legs = [(i, xa, xb)]
    elif common is not None and ia == 0:
        legs = [(i, xa, ell[i]), *((k, 0.0, ell[k]) for k in reversed(cb[1:ib])), (j, 0.0, xb)]
    elif common is not None and ib == 0:
        legs = [(i, xa, 0.0), *((k, ell[k], 0.0) for k in ca[1:ia]), (j, ell[j], xb)]
    else:
        legs = ([(i, xa, 0.0)] if i >= 0 else []) + [(k, ell[k], 0.0) for k in ca[1:ia]]
        legs += [(k, 0.0, ell[k]) for k in reversed(cb[1:ib])] + ([(j, 0.0, xb)] if j >= 0 else [])
    if not legs:
        return (start,) * count, np.zeros(count)
    spans = np.array([abs(b - a) for _, a, b in legs])
    edges = np.concatenate(([0.0], np.cumsum(spans)))
    wanted = np.linspace(0.0, edges[-1], count)
    sites = []
    for d in wanted.tolist():
        k = min(int(np.searchsorted(edges, d, side="right")) - 1, len(legs) - 1)
        piece, a, b = legs[k]
        x = a + math.copysign(min(d - edges[k], spans[k]), b - a)
        sites.append(Site(int(piece), float(min(max(x, 0.0), ell[piece]))))
    return tuple(sites), wanted


def _check_site(tree: Tree, site: Site) -> tuple[int, float]:
    if not isinstance(site, Site):
        raise InputError(f"a site must be a Site (piece, distance), got {site!r}")
    i, x = int(site.piece), float(site.distance)
    if i == -1:
        return -1, 0.0
    if not 0 <= i < len(tree):
        raise InputError(f"{tree.source}: piece {i} does not exist (0..{len(tree) - 1})")
    ell = float(tree.lengths[i])
    if not (math.isfinite(x) and -1e-12 * ell <= x <= ell * (1 + 1e-12)):
        raise InputError(f"{tree.source}: distance {x!r} m lies outside piece {tree.labels[i]} (0..{ell!r} m)")
    if x <= 1e-12 * ell:
        return i, 0.0
    if x >= ell * (1 - 1e-12):
        return i, ell
    return i, x


# --------------------------------------------------------------------------------------
# sites as text
# --------------------------------------------------------------------------------------

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
