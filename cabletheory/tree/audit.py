r"""The audit of Rall's conditions for collapsing a tree into one equivalent cylinder.

Three conditions, each measured where it can fail (Rall 1959, 1964):

* the 3/2 power rule at every branch point, :math:`\sum d_{child}^{3/2} / d_{parent}^{3/2} = 1`;
* :math:`d^{3/2}` constant along every branch (a taper inside a branch breaks it too);
* the same electrotonic distance from the root to every tip.

Each function takes the shared :class:`~cabletheory.tree.geometry.Layout` and returns one part
of the audit; :func:`find_departures` turns the parts into reasons and a list of departures.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..cable import semi_infinite_input_conductance
from ..errors import InputError
from .geometry import Layout

__all__ = ["BranchPoints", "Stem", "Tips", "Tolerances", "Violation", "audit_branch_points", "audit_stems",
           "audit_tips", "branch_diameter_changes", "find_departures", "tip_end_ratios"]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]


@dataclass(frozen=True, slots=True)
class Tolerances:
    """How far a tree may stray from Rall's conditions and still be called reducible.

    branch_ratio : largest allowed |Σ d_child^{3/2} / d_parent^{3/2} − 1| at a branch point,
        and largest relative change of d^{3/2} along one branch (default 0.05)
    tip_spread : largest allowed difference between the largest and smallest tip
        electrotonic distance, in units of λ (default 0.05)
    """

    branch_ratio: float = 0.05
    tip_spread: float = 0.05

    def __post_init__(self) -> None:
        for name in ("branch_ratio", "tip_spread"):
            value = getattr(self, name)
            if not (math.isfinite(value) and value >= 0):
                raise InputError(f"tolerance {name} must be finite and >= 0, got {value!r}")


@dataclass(frozen=True, slots=True)
class BranchPoints:
    """Branch points (nodes with two or more children), one entry each, SI."""

    ids: tuple[str, ...]
    ratios: Array  # Σ d_child^{3/2} / d_parent^{3/2}
    parent_diameters: Array  # m
    children: IntArray
    electrotonic_distances: Array
    lines: IntArray
    pieces: IntArray  # index of the piece that ends at each branch point


@dataclass(frozen=True, slots=True)
class Tips:
    """Terminal nodes, one entry each, SI."""

    ids: tuple[str, ...]
    electrotonic_distances: Array
    path_lengths: Array  # m, along the tree from the root node
    stems: tuple[str, ...]  # label of the stem dendrite each tip belongs to
    lines: IntArray
    pieces: IntArray  # index of the piece that ends at each tip
    ends: Array  # conductance from each tip to rest, S (0 sealed, inf killed)


@dataclass(frozen=True, slots=True)
class Stem:
    """One stem dendrite (a subtree attached to the root node)."""

    id: str
    type: int
    diameter: float  # m, at the root
    tips: int
    tip_distance_min: float
    tip_distance_max: float
    worst_ratio: float  # the branch ratio farthest from 1 (1.0 if it has no branch point)
    worst_branch_change: float  # largest relative change of d^{3/2} along one of its branches
    input_conductance: float  # S, exact, this stem alone
    membrane_area: float  # m²
    reducible: bool  # this stem alone meets the conditions within the tolerances


@dataclass(frozen=True, slots=True)
class Violation:
    """One departure from Rall's conditions beyond the tolerance."""

    kind: str  # "branch_ratio", "branch_diameter", "tip_distance" or "tip_end"
    id: str  # branch point, branch (first–last point) or tip
    value: float
    limit: float
    line: int


def audit_branch_points(lay: Layout) -> BranchPoints:
    r"""The 3/2 power rule at every branch point: :math:`\sum d_{child}^{3/2} / d_{parent}^{3/2}`.

    Children contribute their proximal diameter, the parent its distal one (m).

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491 (the 3/2 power rule).
    """
    t = lay.tree
    parents = t.parents
    child = parents >= 0
    sum_child = np.bincount(parents[child], weights=t.proximal_diameters[child] ** 1.5, minlength=len(t))
    bp = np.flatnonzero(lay.children >= 2)
    d_parent = t.distal_diameters[bp]
    return BranchPoints(ids=tuple(t.labels[i] for i in bp.tolist()), ratios=sum_child[bp] / d_parent**1.5,
                        parent_diameters=d_parent.copy(), children=lay.children[bp].copy(),
                        electrotonic_distances=lay.end[bp].copy(), lines=t.lines[bp].copy(), pieces=bp)


def audit_tips(lay: Layout, loads: Array) -> Tips:
    """Electrotonic distance X and path length (m) from the root to every tip, its stem and its end.

    ``loads`` : conductance to rest at each piece's distal node, S (:func:`~.geometry.tip_loads`).
    """
    t = lay.tree
    tip = np.flatnonzero(lay.children == 0)
    return Tips(ids=tuple(t.labels[i] for i in tip.tolist()), electrotonic_distances=lay.end[tip].copy(),
                path_lengths=lay.path_lengths[tip].copy(),
                stems=tuple(t.labels[i] for i in lay.stems[tip].tolist()), lines=t.lines[tip].copy(), pieces=tip,
                ends=np.asarray(loads, dtype=float)[tip].copy())


def branch_diameter_changes(lay: Layout) -> Array:
    r"""Relative change of :math:`d^{3/2}` along each branch, :math:`\max/\min - 1` (0 for a uniform one).

    Pieces of zero length carry no membrane and are skipped.
    """
    t = lay.tree
    w0, w1 = t.proximal_diameters**1.5, t.distal_diameters**1.5
    real = t.lengths > 0
    count = lay.branch_count
    lo = np.full(count, np.inf)
    hi = np.zeros(count)
    np.minimum.at(lo, lay.branches[real], np.minimum(w0, w1)[real])
    np.maximum.at(hi, lay.branches[real], np.maximum(w0, w1)[real])
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(np.isfinite(lo) & (lo > 0), hi / lo - 1.0, 0.0)


def tip_end_ratios(lay: Layout, tips: Tips, membrane_resistivity: float, axial_resistivity: float) -> Array:
    r"""End-conductance ratio :math:`B = G_{end}/G_\infty(d_{tip})` of every tip (0 sealed, inf killed).

    Rall's reduction keeps a leaky end only when every tip has the same B: then the tips'
    conductances add up to B times the trunk's :math:`G_\infty` (both scale as :math:`d^{3/2}`).
    """
    g_inf = semi_infinite_input_conductance(membrane_resistivity, axial_resistivity,
                                            lay.tree.distal_diameters[tips.pieces])
    return np.asarray(tips.ends / g_inf, dtype=float)


def _first_pieces(lay: Layout) -> IntArray:
    """Index of the first (most proximal) piece of each branch."""
    first = np.full(lay.branch_count, len(lay.tree), dtype=np.int64)
    np.minimum.at(first, lay.branches, np.arange(len(lay.tree)))
    return first


def audit_stems(lay: Layout, branch_points: BranchPoints, tips: Tips, changes: Array, input_conductances: Array,
                tolerances: Tolerances) -> tuple[Stem, ...]:
    """Each stem dendrite on its own: its tips, worst branch ratio, worst branch, conductance (S), area (m²)."""
    t = lay.tree
    tip_x = tips.electrotonic_distances
    tip_stem = lay.stems[tips.pieces]
    bp_stem = lay.stems[branch_points.pieces]
    branch_stem = lay.stems[_first_pieces(lay)]
    stem_area = np.bincount(lay.stems, weights=lay.areas, minlength=len(t))
    stems = []
    for s in np.flatnonzero(t.parents < 0).tolist():
        mine = tip_x[tip_stem == s]
        rs = branch_points.ratios[bp_stem == s]
        worst = float(rs[np.argmax(np.abs(rs - 1.0))]) if rs.size else 1.0
        worst_change = float(changes[branch_stem == s].max())
        ok = (abs(worst - 1.0) <= tolerances.branch_ratio and worst_change <= tolerances.branch_ratio
              and float(mine.max() - mine.min()) <= tolerances.tip_spread)
        stems.append(Stem(id=t.labels[s], type=int(t.types[s]), diameter=float(t.proximal_diameters[s]),
                          tips=int(mine.size), tip_distance_min=float(mine.min()),
                          tip_distance_max=float(mine.max()), worst_ratio=worst, worst_branch_change=worst_change,
                          input_conductance=float(input_conductances[s]), membrane_area=float(stem_area[s]),
                          reducible=ok))
    return tuple(stems)


def find_departures(lay: Layout, branch_points: BranchPoints, tips: Tips, changes: Array,
                    tolerances: Tolerances, end_ratios: Array | None = None
                    ) -> tuple[tuple[str, ...], tuple[Violation, ...]]:
    """Why the tree is not reducible (one plain sentence per broken condition) and every departure.

    Departures are listed worst first within each condition; an empty reason list means the
    tree meets Rall's conditions within ``tolerances``.
    """
    t = lay.tree
    tol = tolerances
    ratios = branch_points.ratios
    violations: list[Violation] = []
    reasons: list[str] = []
    bad_bp = np.flatnonzero(np.abs(ratios - 1.0) > tol.branch_ratio)
    for k in bad_bp[np.argsort(-np.abs(ratios[bad_bp] - 1.0), kind="stable")].tolist():
        violations.append(Violation("branch_ratio", branch_points.ids[k], float(ratios[k]), tol.branch_ratio,
                                    int(branch_points.lines[k])))
    if bad_bp.size:
        k = int(bad_bp[np.argmax(np.abs(ratios[bad_bp] - 1.0))])
        reasons.append(f"3/2 rule: {bad_bp.size} of {ratios.size} branch points have Σd_child^3/2 / "
                       f"d_parent^3/2 outside 1 ± {tol.branch_ratio:g} (worst: point {branch_points.ids[k]}, "
                       f"ratio {ratios[k]:.4g})")
    bad_branch = np.flatnonzero(changes > tol.branch_ratio)
    if bad_branch.size:
        first = _first_pieces(lay)
        last = np.full(lay.branch_count, -1, dtype=np.int64)
        np.maximum.at(last, lay.branches, np.arange(len(t)))
        for b in bad_branch[np.argsort(-changes[bad_branch], kind="stable")].tolist():
            name = t.labels[first[b]] if first[b] == last[b] else f"{t.labels[first[b]]}–{t.labels[last[b]]}"
            violations.append(Violation("branch_diameter", name, float(changes[b]), tol.branch_ratio,
                                        int(t.lines[first[b]])))
        worst_branch = violations[-bad_branch.size]
        reasons.append(f"diameter changes: d^3/2 varies by more than {100 * tol.branch_ratio:g} % along "
                       f"{bad_branch.size} of {changes.size} branches (worst: branch {worst_branch.id}, "
                       f"{100 * worst_branch.value:.3g} %)")
    tip_x = tips.electrotonic_distances
    spread = float(tip_x.max() - tip_x.min())
    if spread > tol.tip_spread:
        mid = 0.5 * (float(tip_x.max()) + float(tip_x.min()))
        far = np.flatnonzero(np.abs(tip_x - mid) > 0.5 * tol.tip_spread)
        for k in far[np.argsort(-np.abs(tip_x[far] - mid), kind="stable")].tolist():
            violations.append(Violation("tip_distance", tips.ids[k], float(tip_x[k]), tol.tip_spread,
                                        int(tips.lines[k])))
        kmin, kmax = int(np.argmin(tip_x)), int(np.argmax(tip_x))
        reasons.append(f"tip distances: X ranges from {tip_x[kmin]:.4g} (tip {tips.ids[kmin]}) to "
                       f"{tip_x[kmax]:.4g} (tip {tips.ids[kmax]}), spread {spread:.4g} > {tol.tip_spread:g}")
    if end_ratios is not None:
        _tip_end_departures(tips, end_ratios, tol, reasons, violations)
    return tuple(reasons), tuple(violations)


def _tip_end_departures(tips: Tips, ratios: Array, tol: Tolerances, reasons: list[str],
                        violations: list[Violation]) -> None:
    """Tips whose end-conductance ratio B differs from the others' (all sealed or all killed is fine)."""
    killed = np.isinf(ratios)
    if killed.all() or not np.any(ratios):
        return
    if killed.any():  # the fewer of killed and not killed are the odd ones
        odd = np.flatnonzero(killed if 2 * int(killed.sum()) <= killed.size else ~killed)
    else:
        typical = float(np.median(ratios))
        odd = np.flatnonzero(np.abs(ratios - typical) > tol.branch_ratio * max(typical, float(ratios.max())))
    if not odd.size:
        return
    for k in odd.tolist():
        violations.append(Violation("tip_end", tips.ids[k], float(ratios[k]), tol.branch_ratio, int(tips.lines[k])))
    reasons.append(f"tip ends: {odd.size} of {ratios.size} tips end differently from the others (end-conductance "
                   f"ratio B from {float(ratios.min()):.4g} to {float(ratios.max()):.4g}); the reduction needs "
                   "the same B at every tip")
