r"""A simulator's output recorded at the points of a tree: the column syntax and the reader.

A tree site is written in one of two ways (docs/verify.md, "On a whole tree"):

* a **point**: the morphology's own label, an SWC point id (``412``) or an outline branch name
  (``left.a``: the far end of that branch), or ``soma`` / ``root`` for the root node;
* a **distance along a branch**: ``branch LABEL +DISTANCE``, where LABEL is the point at the far
  end of the branch (a tip or the branch point it ends at, as ``cabletheory tree`` names branches
  "first–last") and DISTANCE is measured from the branch's start (the branch point or soma it
  leaves) towards that end: ``branch 443 +25 um``. A bare distance is in µm, or in the unit of
  ``--position-unit``.

In a wide table's header the site follows ``V@`` (or ``V at``, ``Vm@``, ``@``) and the voltage
unit comes last in brackets: ``V@412 (mV)``, ``V@soma (mV)``, ``V@branch 443 +25 um (mV)``. A
long table's site column is named ``point`` (or ``site``, ``position``) and holds the same texts.

Each distinct site read gets a number (0, 1, 2 ... in the order first met); the
:class:`~cabletheory.verify.reading.Recording` holds those numbers as its positions and
:class:`TreeRecording` the sites they stand for. Two columns naming one point are refused, as are
unknown labels, distances beyond a branch, a branch named by a point inside it, and a label that
could mean two points.

Every exact answer assumes a passive, linear membrane with uniform properties; so does every
verdict. A simulator with active conductances is outside what this package can check.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..tree import Tree
from ..tree.geometry import branch_ids
from ..tree_laplace import Site, root_site, site_on_branch
from .reading import QuantityParser, Recording, read_recording

__all__ = ["TreePoint", "TreePoints", "TreeRecording", "read_tree_recording"]

ROOT_WORDS = ("soma", "root")
_PREFIX = re.compile(r"^(?:(?:v|vm|voltage)\s*@|(?:v|vm|voltage)\s+at\s+|@)\s*", re.IGNORECASE)
_BRANCH = re.compile(r"^branch\s+(?P<label>[^\s+]+)\s*\+\s*(?P<distance>\S.*?)\s*$", re.IGNORECASE)
_NUMBER = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")
_DISTANCE = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?\s*[A-Za-zµμ]+$")
_VOLTAGE_WORDS = {"v", "vm", "v_m", "voltage", "potential", "membrane potential"}


@dataclass(frozen=True, slots=True)
class TreePoint:
    """One site of a tree and its text in the column syntax (``'412'``, ``'soma'``,
    ``'branch 443 +25 um'``), which reads back to the same site."""

    site: Site
    label: str


class TreePoints:
    """Reads site texts of the column syntax into numbers (one per distinct site), for
    :func:`cabletheory.verify.reading.read_recording`'s ``read_site``.

    Parameters
    ----------
    tree : the morphology
    parse : ``(text, kind, where) -> SI value`` for distances with a unit
    distance_unit : factor (m) of a bare distance, default 1e-6 (µm)
    """

    def __init__(self, tree: Tree, parse: QuantityParser, distance_unit: float = 1e-6) -> None:
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
        self.points: list[TreePoint] = []
        self._numbers: dict[tuple[int, float], int] = {}

    def __call__(self, text: str, where: str) -> float:
        point = self.point(text)
        key = self._key(point.site)
        if key not in self._numbers:
            self._numbers[key] = len(self.points)
            self.points.append(point)
        return float(self._numbers[key])

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
        if body.lower() in _VOLTAGE_WORDS and body not in self._index:
            raise InputError("the column does not say where it was recorded; name the point in the header "
                             "('V@412 (mV)') or give --column-at")
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
        if _NUMBER.match(text):
            x = float(text) * self.distance_unit
        else:
            x = self.parse(text, "length", f"'branch {label} +{text}'")
        pieces = np.flatnonzero(self._ids == b)
        length = float(np.sum(np.asarray(tree.lengths)[pieces]))
        if not (math.isfinite(x) and x >= 0):
            raise InputError(f"'branch {label} +{text}': the distance must be 0 or more")
        if x > length * (1 + 1e-9) + 1e-15:
            raise InputError(f"'branch {label} +{text}' lies beyond the end of the branch "
                             f"{name}, which is {length * 1e6:.6g} µm long")
        site = site_on_branch(tree, b, min(x, length))
        return TreePoint(site, f"branch {label} +{x * 1e6:.15g} um")

    def _key(self, site: Site) -> tuple[int, float]:
        """One key per physical point: a site at the start of a piece is its parent's far end."""
        tree = self.tree
        piece, distance = site.piece, site.distance
        while piece >= 0 and distance <= 1e-12 * max(float(tree.lengths[piece]), 1e-300):
            parent = int(tree.parents[piece])
            piece, distance = parent, (float(tree.lengths[parent]) if parent >= 0 else 0.0)
        if piece >= 0 and abs(distance - float(tree.lengths[piece])) <= 1e-12 * float(tree.lengths[piece]):
            distance = float(tree.lengths[piece])
        return piece, distance


@dataclass(frozen=True, slots=True)
class TreeRecording:
    """A simulator's output recorded at tree points: the recording, whose positions are the numbers
    0, 1, 2 ... of ``points``, and the points themselves."""

    recording: Recording
    points: tuple[TreePoint, ...]

    @property
    def sites(self) -> tuple[Site, ...]:
        return tuple(p.site for p in self.points)

    @property
    def labels(self) -> tuple[str, ...]:
        return tuple(p.label for p in self.points)


def read_tree_recording(text: str, name: str, parse: QuantityParser, tree: Tree, *,
                        columns: str | Mapping[str, str] | None = None, time_unit: str | None = None,
                        distance_unit: str | None = None, voltage_unit: str | None = None,
                        resting_potential: float | str = 0.0, time_offset: float = 0.0) -> TreeRecording:
    """Read a simulator's CSV (or tab-separated) output recorded at points of ``tree``.

    The layouts, units, offsets and checks are those of
    :func:`cabletheory.verify.reading.read_recording`; only the sites differ (the column syntax of
    this module's docstring).

    Parameters
    ----------
    columns : where the voltage columns were recorded when the header does not say it: one site
        text for a file's single voltage column (``'412'``), or column names (any case) mapped to
        site texts (``{'v_soma': 'soma', 'v_tip': '443'}``): the command line's ``--column-at``
    distance_unit : unit of bare distances in ``branch LABEL +DISTANCE`` (default µm)
    the others : as for :func:`~cabletheory.verify.reading.read_recording`

    Raises
    ------
    FileFormatError : naming the file, line and column of the first problem
    InputError : a ``columns`` entry that names no site (naming ``--column-at``)
    """
    factor = 1e-6 if distance_unit is None else parse(f"1 {distance_unit}", "length", "--position-unit")
    points = TreePoints(tree, parse, factor)
    site: float | dict[str, float] | None = None

    def resolve(text: str, label: str) -> float:
        try:
            return points(text, label)
        except InputError as exc:
            raise InputError(f"{label}: {exc}") from None

    if isinstance(columns, str):
        site = resolve(columns, "--column-at")
    elif columns is not None:
        site = {key.strip().lower(): resolve(value, f"--column-at {key.strip()}") for key, value in columns.items()}
    recording = read_recording(text, name, parse, time_unit=time_unit, voltage_unit=voltage_unit,
                               resting_potential=resting_potential, time_offset=time_offset, site=site,
                               read_site=points)
    used = sorted({int(k) for k in np.unique(recording.positions)})
    if used != list(range(len(points.points))):  # a --column-at entry for a column the file lacks: drop it
        keep = {old: new for new, old in enumerate(used)}
        recording = _renumber(recording, keep)
        kept = tuple(points.points[i] for i in used)
        return TreeRecording(recording, kept)
    return TreeRecording(recording, tuple(points.points))


def _renumber(recording: Recording, keep: Mapping[int, int]) -> Recording:
    from dataclasses import replace

    positions = np.array([keep[int(p)] for p in recording.positions], dtype=float)
    return replace(recording, positions=positions)
