"""The tree itself: pieces of membrane in SI units, and building one from a morphology file.

A :class:`Tree` is a list of *pieces* (uniform cylinders or frusta), parents before children;
piece ``i`` joins its parent's distal end (or the *root node*: the soma, or the input point) to
its own distal node ``i``. An SWC file gives one piece per point (the stretch from its parent
point); a tree outline gives one piece per branch. Consecutive pieces without a branch point
between them form one *branch*.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray

from ..errors import FileFormatError, InputError
from ..morphology import Outline, SwcPoints

__all__ = ["SWC_NAMES", "Tree", "build_tree", "prune_empty_branches", "scale_lengths", "tree_from_outline",
           "tree_from_swc"]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

SOMA, AXON = 1, 2


@dataclass(frozen=True, slots=True)
class Tree:
    """Pieces of a neuron in SI units, every parent before its children.

    Attributes
    ----------
    source : file (or description) the tree came from
    labels : name of each piece's distal point (SWC id or branch name)
    parents : parent piece of each piece; -1 = attached to the root node
    lengths : axial length of each piece, m
    proximal_diameters, distal_diameters : m (equal for cylinders)
    types : SWC type of each piece's distal point (3 for the branches of an outline)
    lines : line of the file that defined each piece
    soma_area : membrane area of the lumped (isopotential) soma at the root node, m²;
        ``None`` when there is no soma and input is applied at the root point
    soma_convention : how the soma was read ("none", "sphere", "cylinders", "outline")
    root_label : name of the root node (the soma or the root point)
    geometry : "cylinders" (each piece has its distal point's diameter) or "frusta"
    notes : conventions used and everything left out, in plain words
    numeric_ids : labels are SWC ids (integers)
    ends : conductance from each piece's distal node to rest, S (0 sealed, inf killed); only
        tips may have one. ``None``: every tip sealed.
    """

    source: str
    labels: tuple[str, ...]
    parents: IntArray
    lengths: Array
    proximal_diameters: Array
    distal_diameters: Array
    types: IntArray
    lines: IntArray
    soma_area: float | None = None
    soma_convention: str = "none"
    root_label: str = "root"
    geometry: str = "cylinders"
    notes: tuple[str, ...] = ()
    numeric_ids: bool = False
    ends: Array | None = None

    def __post_init__(self) -> None:
        n = len(self.labels)
        for name in ("parents", "lengths", "proximal_diameters", "distal_diameters", "types", "lines"):
            if np.asarray(getattr(self, name)).shape != (n,):
                raise InputError(f"Tree.{name} must have one entry per piece ({n})")
        p = np.asarray(self.parents)
        if n and np.any((p < -1) | (p >= np.arange(n))):
            raise InputError("Tree.parents: each parent must be -1 or an earlier piece")
        if np.any(~np.isfinite(self.lengths)) or np.any(np.asarray(self.lengths) < 0):
            raise InputError("Tree.lengths must be finite and >= 0")
        for name in ("proximal_diameters", "distal_diameters"):
            d = np.asarray(getattr(self, name))
            if np.any(~np.isfinite(d)) or np.any(d <= 0):
                raise InputError(f"Tree.{name} must be finite and positive")
        if self.ends is not None:
            e = np.asarray(self.ends)
            if e.shape != (n,) or np.any(np.isnan(e)) or np.any(e < 0):
                raise InputError("Tree.ends must have one conductance >= 0 per piece")
            if n and np.any(e[p[p >= 0]] != 0):
                raise InputError("Tree.ends: only tips may have an end conductance")

    def tip_conductances(self) -> Array:
        """Conductance from each piece's distal node to rest, S (zeros when every tip is sealed)."""
        return np.zeros(len(self.labels)) if self.ends is None else np.asarray(self.ends, dtype=float)

    def __len__(self) -> int:
        return len(self.labels)


def _points_subset(tree: Tree, keep: NDArray[np.bool_], notes: tuple[str, ...]) -> Tree:
    new_index = np.cumsum(keep) - 1
    parents = np.asarray(tree.parents)[keep]
    mapped = np.where(parents >= 0, new_index[np.maximum(parents, 0)], -1)
    return replace(tree, labels=tuple(lab for lab, k in zip(tree.labels, keep, strict=True) if k),
                   parents=mapped.astype(np.int64), lengths=tree.lengths[keep],
                   proximal_diameters=tree.proximal_diameters[keep],
                   distal_diameters=tree.distal_diameters[keep], types=tree.types[keep],
                   lines=tree.lines[keep], notes=notes,
                   ends=None if tree.ends is None else np.asarray(tree.ends)[keep])


def prune_empty_branches(tree: Tree) -> Tree:
    """Drop sealed terminal branches of zero length (no membrane); they change nothing.

    A piece is dropped when its length is 0, its end (if a tip) is sealed and every piece
    beyond it is dropped too.
    """
    n = len(tree)
    parents = tree.parents.tolist()
    empty = ((np.asarray(tree.lengths) == 0) & (tree.tip_conductances() == 0)).tolist()
    alive = [False] * n  # has some membrane at or beyond it
    for i in range(n - 1, -1, -1):
        if not empty[i]:
            alive[i] = True
        if alive[i] and parents[i] >= 0:
            alive[parents[i]] = True
    keep = np.asarray(alive, dtype=bool)
    dropped = int(n - keep.sum())
    if dropped == 0:
        return tree
    return _points_subset(tree, keep, (*tree.notes, f"{dropped} zero-length terminal piece(s) ignored "
                                                    "(no membrane)"))


def scale_lengths(tree: Tree, factor: float) -> Tree:
    """The same tree with every length multiplied by ``factor`` (diameters unchanged)."""
    return replace(tree, lengths=np.asarray(tree.lengths) * factor)


def tree_from_outline(outline: Outline) -> Tree:
    """One piece per branch of a tree outline; a diameter written ``d0..d1`` makes it a frustum."""
    tapered = bool(np.any(outline.end_diameters != outline.diameters))
    soma_area = None if outline.soma_diameter is None else math.pi * outline.soma_diameter**2
    notes = ["branches as written: uniform cylinders" + (", frusta where a taper d0..d1 is given"
                                                         if tapered else "")]
    notes.append("soma: a sphere of the stated diameter (area π d²), lumped at the root"
                 if soma_area is not None else
                 "no soma: input is applied at the root point and no soma membrane is included")
    ends = None if outline.ends is None or not np.any(outline.ends) else outline.ends.copy()
    if ends is not None:
        notes.append(f"tip ends as written: {int(np.count_nonzero(np.isinf(ends)))} killed, "
                     f"{int(np.count_nonzero(np.isfinite(ends) & (ends > 0)))} leaky, the other tips sealed")
    return Tree(source=outline.source, labels=outline.names, parents=outline.parents.copy(),
                lengths=outline.lengths.copy(), proximal_diameters=outline.diameters.copy(),
                distal_diameters=outline.end_diameters.copy(),
                types=np.full(len(outline), 3, dtype=np.int64), lines=outline.lines.copy(),
                soma_area=soma_area, soma_convention="sphere" if soma_area is not None else "none",
                root_label="soma" if soma_area is not None else "root",
                geometry="frusta" if tapered else "cylinders", notes=tuple(notes), numeric_ids=False,
                ends=ends)


def _soma_area(points: SwcPoints, soma: NDArray[np.bool_], taper: bool) -> tuple[float, str, str]:
    """(area m², convention, note) for the soma points (the root and its type-1 descendants)."""
    idx = np.flatnonzero(soma)
    pos, radii, parents, lines = points.positions, points.radii, points.parents, points.lines
    if idx.size == 1:
        r = float(radii[0])
        if r <= 0:
            raise FileFormatError(f"{points.source}:{lines[0]}: single-point soma has radius {r * 1e6:g} µm; "
                                  "expected a positive radius")
        return 4 * math.pi * r * r, "sphere", (f"soma: one point, read as a sphere of radius "
                                               f"{r * 1e6:.4g} µm (area 4πr²), lumped at the root")
    xyz = pos[idx]
    centre = xyz.mean(axis=0)
    extent = float(np.max(np.linalg.norm(xyz - centre, axis=1)))
    planar = float(np.ptp(xyz[:, 2])) <= 1e-3 * max(extent, 1e-12)
    if idx.size >= 3 and planar and extent > 0 and float(np.mean(radii[idx])) < 0.25 * extent:
        # an outline: points on the soma's contour in one plane, in file order
        ring = xyz[np.argsort(lines[idx])]
        x, y = ring[:, 0], ring[:, 1]
        projected = 0.5 * abs(float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))
        if projected > 0:
            d = 2.0 * math.sqrt(projected / math.pi)
            return math.pi * d * d, "outline", (
                f"soma: {idx.size} points read as an outline in one plane; the soma is taken as the sphere "
                f"with the outline's projected area (diameter {d * 1e6:.4g} µm), lumped at the root")
    bad = idx[radii[idx] <= 0]
    if bad.size:
        raise FileFormatError(f"{points.source}:{lines[bad[0]]}: soma point {points.ids[bad[0]]} has radius 0; "
                              "a soma made of cylinders needs positive radii")
    child = idx[1:]
    seg_len = np.linalg.norm(pos[child] - pos[parents[child]], axis=1)
    d1 = 2 * radii[child]
    d0 = 2 * radii[parents[child]] if taper else d1
    area = float(np.sum(math.pi * 0.5 * (d0 + d1) * seg_len))
    if area <= 0:
        r = float(np.max(radii[idx]))
        return 4 * math.pi * r * r, "sphere", (f"soma: {idx.size} coincident points, read as a sphere of the "
                                               f"largest radius {r * 1e6:.4g} µm, lumped at the root")
    return area, "cylinders", (f"soma: {idx.size} points read as a chain of {'frusta' if taper else 'cylinders'} "
                               "(lateral area, no end caps), lumped and isopotential at the root")


_FIRST_PIECE_NOTE = ("the first piece of a branch (after a branch point, or on the soma) is a cylinder of its "
                     "first point's diameter, because a branch point's diameter belongs to its parent branch")


def _taper_start_diameters(parent_points: IntArray, from_root: NDArray[np.bool_], has_soma: bool, distal: Array,
                           radii: Array, point_count: int) -> Array:
    """Proximal diameter (m) of each kept piece read as a frustum (``taper=True``).

    A piece runs from its parent point's diameter to its own when the parent point continues
    one branch (it has exactly one kept child and is not the soma). Where the parent point is a
    branch point (two or more kept children) or the soma, the parent point's diameter is the
    parent branch's own (its end), not the daughters': each daughter's first piece then
    starts at the daughter's own first diameter and is a cylinder, so that the diameters on
    the two sides of a branch point are those the reconstruction gives, and a tree whose
    branches are uniform is the same with frusta as with cylinders. Without a soma the root
    point is the first point of the one stem it carries (a frustum from its diameter), or, with
    several stems, a branch point like any other.

    This reading of a branch point's diameter is the package's convention (docs/tree.md,
    "Reading morphologies"); an SWC file gives one diameter per point and no more.
    """
    kept_children = np.bincount(parent_points, minlength=point_count)
    continues = (kept_children[parent_points] == 1) & ~(from_root & has_soma)
    return np.where(continues, 2.0 * radii[parent_points], distal)


def tree_from_swc(points: SwcPoints, *, taper: bool = False, types: set[int] | None = None,
                  include_axon: bool = False) -> Tree:
    """Turn SWC points into pieces.

    Parameters
    ----------
    points : from :func:`cabletheory.morphology.read_swc`
    taper : False (default): the piece between a point and its parent is a cylinder with
        the point's own diameter. True: a frustum from the parent's diameter to the point's,
        except the first piece of each branch after a branch point or on the soma, a cylinder
        with its own point's diameter (:func:`_taper_start_diameters`).
    types : keep only points of these SWC types (default: every type except the axon);
        a point whose parent is dropped is dropped too
    include_axon : keep the axon (type 2) in the default selection

    The soma (the root and the type-1 points connected to it through type-1 points) is
    lumped into one isopotential node; see :func:`_soma_area` for its conventions. A
    piece that starts on a soma point starts at that point's surface: its length is the
    distance minus the soma point's radius. Without a soma the root point is the input point.
    """
    n = len(points)
    ptypes = points.types.tolist()
    parents = points.parents.tolist()
    has_soma = ptypes[0] == SOMA
    soma = [False] * n
    if has_soma:
        soma[0] = True
        for i in range(1, n):
            soma[i] = ptypes[i] == SOMA and soma[parents[i]]
    soma_arr = np.asarray(soma, dtype=bool)
    wanted = types if types is not None else {t for t in set(ptypes) if t != AXON or include_axon}
    keep = [False] * n
    anchored = [False] * n  # the root node: soma points, or the root point without soma
    anchored[0] = True
    if has_soma:
        anchored = soma
    dropped_by_type = 0
    for i in range(1, n):
        if anchored[i]:
            continue
        p = parents[i]
        if (keep[p] or anchored[p]) and ptypes[i] in wanted:
            keep[i] = True
        else:
            dropped_by_type += 1
    keep_arr = np.asarray(keep, dtype=bool)
    idx = np.flatnonzero(keep_arr)
    par = points.parents[idx]
    from_root = np.asarray(anchored, dtype=bool)[par]
    delta = np.linalg.norm(points.positions[idx] - points.positions[par], axis=1)
    if has_soma:
        delta = np.where(from_root, np.maximum(delta - points.radii[par], 0.0), delta)
    distal = 2.0 * points.radii[idx]
    proximal = _taper_start_diameters(par, from_root, has_soma, distal, points.radii, n) if taper else distal.copy()
    new_index = np.cumsum(keep_arr) - 1
    seg_parents = np.where(from_root, -1, new_index[par]).astype(np.int64)
    notes = [(f"pieces: each is a frustum from its parent point's diameter to its own; {_FIRST_PIECE_NOTE}"
              if taper else "pieces: each is a cylinder with its own point's diameter (use frusta for tapers)")]
    if has_soma:
        area, convention, soma_note = _soma_area(points, soma_arr, taper)
        notes.append(soma_note)
        notes.append("dendrites attached to the soma start at its surface (soma point radius subtracted)")
    else:
        area, convention = None, "none"
        notes.append(f"no soma: input is applied at the root point {points.ids[0]} and no soma membrane "
                     "is included")
    if types is None:
        excluded = "axon excluded" if not include_axon else "axon included"
        notes.append(f"types: all non-soma types kept, {excluded}")
    else:
        notes.append("types kept: " + ", ".join(f"{t} ({SWC_NAMES.get(t, 'custom')})" for t in sorted(types)))
    if dropped_by_type:
        notes.append(f"{dropped_by_type} point(s) left out by type selection")
    if points.reordered:
        notes.append(f"{points.reordered} point(s) came before their parent in the file and were reordered")
    return Tree(source=points.source, labels=tuple(str(i) for i in points.ids[idx].tolist()),
                parents=seg_parents, lengths=delta, proximal_diameters=proximal, distal_diameters=distal,
                types=points.types[idx].copy(), lines=points.lines[idx].copy(), soma_area=area,
                soma_convention=convention,
                root_label=f"soma (point {points.ids[0]})" if has_soma else f"root point {points.ids[0]}",
                geometry="frusta" if taper else "cylinders", notes=tuple(notes), numeric_ids=True)


SWC_NAMES = {0: "undefined", 1: "soma", 2: "axon", 3: "basal dendrite", 4: "apical dendrite"}


def build_tree(morphology: SwcPoints | Outline, *, taper: bool = False, types: set[int] | None = None,
               include_axon: bool = False) -> Tree:
    """:func:`tree_from_swc` or :func:`tree_from_outline`, whichever fits ``morphology``."""
    if isinstance(morphology, Outline):
        return tree_from_outline(morphology)
    return tree_from_swc(morphology, taper=taper, types=types, include_axon=include_axon)

