r"""Branched passive trees: geometry, Rall's reduction conditions, exact input resistance.

A :class:`Tree` is a list of *segments* (uniform cylinders or frusta), parents before
children; segment ``i`` joins its parent's distal end (or the *root node*, the soma or the
input point) to its own distal node ``i``. :func:`tree_from_swc` and
:func:`tree_from_sections` build one from :mod:`cabletheory.morphology`;
:func:`analyse_tree` audits it and reduces it:

* **audit** (Rall 1959, 1964): the ratio :math:`\sum d_{child}^{3/2} / d_{parent}^{3/2}` at
  every branch point, the change of :math:`d^{3/2}` along every unbranched section, the
  electrotonic distance of every tip from the root, per stem dendrite and overall;
* **equivalent cylinder**: diameter :math:`D = (\sum_{stems} d^{3/2})^{2/3}`, membrane area
  equal to the tree's (Rall's cylinder preserves it, because membrane area per unit X is
  proportional to :math:`d^{3/2}`); for a tree that meets the conditions its electrotonic length
  is the common tip distance;
* **exact steady-state input resistance** of any tree, conforming or not, by combining
  segments from the tips inward: a segment loaded at its far end by conductance
  :math:`G_L` has input conductance
  :math:`G_\infty (B + \tanh L)/(1 + B \tanh L)`, :math:`B = G_L/G_\infty`
  (:func:`cabletheory.cable.input_conductance`); for a frustum the exact Bessel-function
  solution of the tapered cable equation is used (:func:`frustum_transfer`);
* **equivalent cable**: the profile :math:`\sum d^{3/2}` over the tree against electrotonic
  distance from the root, which is flat for a reducible tree.

Everything is in SI and every algorithm is iterative and linear in the number of segments
(no recursion, so trees of any depth work). The model is passive and linear, with Rm and Ri
uniform over the tree (:data:`cabletheory.PASSIVE_CAVEAT`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .cable import input_conductance, length_constant, semi_infinite_input_conductance
from .errors import FileFormatError, InputError
from .morphology import SectionList, SwcPoints

__all__ = [
    "BranchPoints",
    "EquivalentCable",
    "EquivalentCylinder",
    "Stem",
    "Tips",
    "Tolerances",
    "Tree",
    "TreeReport",
    "Violation",
    "analyse_tree",
    "build_tree",
    "electrotonic_distances",
    "exact_input_conductances",
    "frustum_electrotonic_length",
    "frustum_transfer",
    "prune_empty_branches",
    "sample_profile",
    "scale_lengths",
    "segment_electrotonic_lengths",
    "tree_from_sections",
    "tree_from_swc",
]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

SOMA, AXON = 1, 2
# a frustum whose end diameters differ by less than this fraction is treated as the cylinder
# with the same electrotonic length: there the Bessel form loses digits to cancellation and the
# cylinder's error (proportional to the taper) is smaller; both stay below about 1e-9 relative
# (measured against 40-digit mpmath in tests/test_tree_taper.py)
_TAPER_THRESHOLD = 3e-7


# --------------------------------------------------------------------------------------
# the tree
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Tree:
    """Segments of a neuron in SI units, every parent before its children.

    Attributes
    ----------
    source : file (or description) the tree came from
    labels : name of each segment's distal point (SWC id or section name)
    parents : parent segment of each segment; -1 = attached to the root node
    lengths : axial length of each segment, m
    proximal_diameters, distal_diameters : m (equal for cylinders)
    types : SWC type of each segment's distal point (3 for hand-written sections)
    lines : line of the file that defined each segment
    soma_area : membrane area of the lumped (isopotential) soma at the root node, m²;
        ``None`` when there is no soma and input is applied at the root point
    soma_convention : how the soma was read ("none", "sphere", "cylinders", "outline")
    root_label : name of the root node (the soma or the root point)
    geometry : "cylinders" (each segment has its distal point's diameter) or "frusta"
    notes : conventions used and everything left out, in plain words
    numeric_ids : labels are SWC ids (integers)
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

    def __post_init__(self) -> None:
        n = len(self.labels)
        for name in ("parents", "lengths", "proximal_diameters", "distal_diameters", "types", "lines"):
            if np.asarray(getattr(self, name)).shape != (n,):
                raise ValueError(f"Tree.{name} must have one entry per segment ({n})")
        p = np.asarray(self.parents)
        if n and np.any((p < -1) | (p >= np.arange(n))):
            raise ValueError("Tree.parents: each parent must be -1 or an earlier segment")
        if np.any(~np.isfinite(self.lengths)) or np.any(np.asarray(self.lengths) < 0):
            raise ValueError("Tree.lengths must be finite and >= 0")
        for name in ("proximal_diameters", "distal_diameters"):
            d = np.asarray(getattr(self, name))
            if np.any(~np.isfinite(d)) or np.any(d <= 0):
                raise ValueError(f"Tree.{name} must be finite and positive")

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
                   lines=tree.lines[keep], notes=notes)


def prune_empty_branches(tree: Tree) -> Tree:
    """Drop terminal branches of zero length (no membrane); with sealed tips they change nothing.

    A segment is dropped when its length is 0 and every segment beyond it is dropped too.
    """
    n = len(tree)
    parents = tree.parents.tolist()
    empty = (np.asarray(tree.lengths) == 0).tolist()
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
    return _points_subset(tree, keep, (*tree.notes, f"{dropped} zero-length terminal segment(s) ignored "
                                                    "(no membrane)"))


def scale_lengths(tree: Tree, factor: float) -> Tree:
    """The same tree with every length multiplied by ``factor`` (diameters unchanged)."""
    return replace(tree, lengths=np.asarray(tree.lengths) * factor)


def tree_from_sections(sections: SectionList) -> Tree:
    """One segment per hand-written section; a stated end diameter makes it a frustum."""
    tapered = bool(np.any(sections.end_diameters != sections.diameters))
    soma_area = None if sections.soma_diameter is None else math.pi * sections.soma_diameter**2
    notes = ["sections as written: uniform cylinders" + (", frusta where an end diameter is given"
                                                         if tapered else "")]
    notes.append("soma: a sphere of the stated diameter (area π d²), lumped at the root"
                 if soma_area is not None else
                 "no soma: input is applied at the root point and no soma membrane is included")
    return Tree(source=sections.source, labels=sections.names, parents=sections.parents.copy(),
                lengths=sections.lengths.copy(), proximal_diameters=sections.diameters.copy(),
                distal_diameters=sections.end_diameters.copy(),
                types=np.full(len(sections), 3, dtype=np.int64), lines=sections.lines.copy(),
                soma_area=soma_area, soma_convention="sphere" if soma_area is not None else "none",
                root_label="soma" if soma_area is not None else "root",
                geometry="frusta" if tapered else "cylinders", notes=tuple(notes), numeric_ids=False)


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


def tree_from_swc(points: SwcPoints, *, taper: bool = False, types: set[int] | None = None,
                  include_axon: bool = False) -> Tree:
    """Turn SWC points into segments.

    Parameters
    ----------
    points : from :func:`cabletheory.morphology.read_swc`
    taper : False (default): the segment between a point and its parent is a cylinder with
        the point's own diameter. True: a frustum from the parent's diameter to the point's.
    types : keep only points of these SWC types (default: every type except the axon);
        a point whose parent is dropped is dropped too
    include_axon : keep the axon (type 2) in the default selection

    The soma (the root and the type-1 points connected to it through type-1 points) is
    lumped into one isopotential node; see :func:`_soma_area` for its conventions. A
    segment that starts on a soma point starts at that point's surface: its length is the
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
    proximal = distal.copy()
    if taper:
        use_parent = ~(from_root & has_soma)
        proximal = np.where(use_parent, 2.0 * points.radii[par], distal)
    new_index = np.cumsum(keep_arr) - 1
    seg_parents = np.where(from_root, -1, new_index[par]).astype(np.int64)
    notes = [("segments: each is a frustum from its parent point's diameter to its own" if taper else
              "segments: each is a cylinder with its own point's diameter (use frusta for tapers)")]
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


def build_tree(morphology: SwcPoints | SectionList, *, taper: bool = False, types: set[int] | None = None,
               include_axon: bool = False) -> Tree:
    """:func:`tree_from_swc` or :func:`tree_from_sections`, whichever fits ``morphology``."""
    if isinstance(morphology, SectionList):
        return tree_from_sections(morphology)
    return tree_from_swc(morphology, taper=taper, types=types, include_axon=include_axon)


# --------------------------------------------------------------------------------------
# geometry: electrotonic lengths
# --------------------------------------------------------------------------------------
def frustum_electrotonic_length(length: ArrayLike, proximal_diameter: ArrayLike, distal_diameter: ArrayLike,
                                membrane_resistivity: float, axial_resistivity: float) -> Array:
    r"""Exact electrotonic length of a frustum (linear taper) of the given axial length.

    With :math:`\lambda(x) = \sqrt{R_m d(x) / (4 R_i)}` and :math:`d` linear in x,

    .. math:: L = \int_0^\ell \frac{dx}{\lambda(x)}
              = \frac{2\ell}{\sqrt{R_m/(4R_i)}\,(\sqrt{d_0} + \sqrt{d_1})}
              = \frac{\ell}{\lambda(\bar d)},\qquad \sqrt{\bar d} = \frac{\sqrt{d_0} + \sqrt{d_1}}{2}.

    For :math:`d_0 = d_1` it is :math:`\ell/\lambda`. Axial length is used (the slant of the
    membrane is neglected, as in the one-dimensional cable equation).

    Parameters
    ----------
    length : ℓ, m
    proximal_diameter, distal_diameter : d0, d1, m
    membrane_resistivity : Rm, Ω·m²
    axial_resistivity : Ri, Ω·m

    Returns
    -------
    L (dimensionless).

    References
    ----------
    Rall W (1962) Ann. N.Y. Acad. Sci. 96:1071 (electrotonic distance as the integral of
    dx/λ along a tapering cable; recalled from memory); the integral itself is elementary.
    """
    root_mean = 0.5 * (np.sqrt(np.asarray(proximal_diameter, dtype=float)) + np.sqrt(distal_diameter))
    lam = length_constant(membrane_resistivity, axial_resistivity, root_mean**2)
    return np.asarray(length, dtype=float) / lam


def segment_electrotonic_lengths(tree: Tree, membrane_resistivity: float, axial_resistivity: float) -> Array:
    """Electrotonic length of every segment (exact for frusta, ℓ/λ for cylinders)."""
    return frustum_electrotonic_length(tree.lengths, tree.proximal_diameters, tree.distal_diameters,
                                       membrane_resistivity, axial_resistivity)


def _accumulate(parents: IntArray, increments: Array) -> Array:
    """value[i] = value[parent[i]] + increments[i], root = 0 (parents precede children)."""
    p = parents.tolist()
    inc = increments.tolist()
    out = [0.0] * len(p)
    for i, j in enumerate(p):
        out[i] = inc[i] if j < 0 else out[j] + inc[i]
    return np.asarray(out, dtype=float)


def electrotonic_distances(tree: Tree, membrane_resistivity: float, axial_resistivity: float) -> Array:
    """Electrotonic distance from the root node to each segment's distal node."""
    return _accumulate(tree.parents, segment_electrotonic_lengths(tree, membrane_resistivity,
                                                                  axial_resistivity))


# --------------------------------------------------------------------------------------
# exact input conductance, tips inward
# --------------------------------------------------------------------------------------
def frustum_transfer(length: ArrayLike, proximal_diameter: ArrayLike, distal_diameter: ArrayLike,
                     membrane_resistivity: float, axial_resistivity: float) -> tuple[Array, Array, Array, Array]:
    r"""Two-port (transmission) matrix of a passive frustum at steady state, scaled.

    :math:`[V_0, I_0]^T = T\,[V_1, I_1]^T` relates voltage and axial current at the proximal
    end to those at the distal end. For a linear taper :math:`d = d_0 + s x` the steady cable
    equation :math:`(d^2 V')' = (4R_i/R_m)\, d\, V` has the solutions

    .. math:: V = d^{-1/2}\,[A\, I_1(z) + B\, K_1(z)], \qquad z = \frac{2\sqrt{c\,d}}{|s|},
              \quad c = \frac{4 R_i}{R_m},

    and with :math:`P = \tfrac{z}{2} I_2(z)`, :math:`Q = \tfrac{z}{2} K_2(z)`,
    :math:`k = \pi s / (4 R_i)`, subscripts 0, 1 for the two ends and the Wronskian
    :math:`I_1K_2 + I_2K_1 = 1/z`:

    .. math::
        T_{11} &= 2\sqrt{d_1/d_0}\,[I_1(z_0) Q_1 + K_1(z_0) P_1],\\
        T_{12} &= \frac{2}{k\sqrt{d_0 d_1}}\,[K_1(z_0) I_1(z_1) - I_1(z_0) K_1(z_1)],\\
        T_{21} &= 2k\sqrt{d_0 d_1}\,[Q_0 P_1 - P_0 Q_1],\\
        T_{22} &= 2\sqrt{d_0/d_1}\,[P_0 K_1(z_1) + Q_0 I_1(z_1)].

    A segment loaded at its far end by :math:`G_L` then has input conductance
    :math:`(T_{21} + T_{22} G_L)/(T_{11} + T_{12} G_L)`. The returned matrix is multiplied
    by :math:`e^{-L}` (L from :func:`frustum_electrotonic_length`; :math:`|z_1 - z_0| = L`)
    and evaluated with exponentially scaled Bessel functions, so nothing overflows. For a
    cylinder (and tapers below 3e-7 relative) it is the uniform-cable matrix
    :math:`[[\cosh L, R_\infty \sinh L], [G_\infty \sinh L, \cosh L]]` times :math:`e^{-L}`.

    Parameters
    ----------
    length : ℓ, m; proximal_diameter, distal_diameter : d0, d1, m;
    membrane_resistivity : Rm, Ω·m²; axial_resistivity : Ri, Ω·m

    Returns
    -------
    (T11, T12 in Ω, T21 in S, T22), each times :math:`e^{-L}`.

    References
    ----------
    The order-1 modified Bessel solution of the cable equation for a linearly tapering
    cylinder is derived here (reduction of :math:`u V'' + 2V' = \kappa V` to Bessel's equation);
    tests/test_tree_taper.py checks it against scipy.integrate.solve_bvp and a fine chain of
    cylinders. Transmission matrices of cylinders: Rall & Rinzel (1973) Biophys. J. 13:648
    (recalled from memory).
    """
    from scipy.special import ive, kve

    ell = np.atleast_1d(np.asarray(length, dtype=float))
    d0 = np.broadcast_to(np.asarray(proximal_diameter, dtype=float), ell.shape)
    d1 = np.broadcast_to(np.asarray(distal_diameter, dtype=float), ell.shape)
    big_l = frustum_electrotonic_length(ell, d0, d1, membrane_resistivity, axial_resistivity)
    decay = np.exp(-2.0 * big_l)
    half_cosh = 0.5 * (1.0 + decay)  # cosh L · e^{-L}
    half_sinh = 0.5 * -np.expm1(-2.0 * big_l)  # sinh L · e^{-L}
    d_eff = (0.5 * (np.sqrt(d0) + np.sqrt(d1))) ** 2
    g_inf = semi_infinite_input_conductance(membrane_resistivity, axial_resistivity, d_eff)
    t11 = half_cosh.copy()
    t22 = half_cosh.copy()
    t12 = half_sinh / g_inf
    t21 = half_sinh * g_inf
    tapered = (np.abs(d1 - d0) > _TAPER_THRESHOLD * 0.5 * (d0 + d1)) & (ell > 0)
    if np.any(tapered):
        a, b, L_t = d0[tapered], d1[tapered], big_l[tapered]
        slope = (b - a) / ell[tapered]
        c = 4.0 * axial_resistivity / membrane_resistivity
        z0 = 2.0 * np.sqrt(c * a) / np.abs(slope)
        z1 = 2.0 * np.sqrt(c * b) / np.abs(slope)
        k = np.pi * slope / (4.0 * axial_resistivity)
        i1_0, i1_1 = ive(1, z0), ive(1, z1)
        k1_0, k1_1 = kve(1, z0), kve(1, z1)
        p0, p1 = 0.5 * z0 * ive(2, z0), 0.5 * z1 * ive(2, z1)
        q0, q1 = 0.5 * z0 * kve(2, z0), 0.5 * z1 * kve(2, z1)
        # (I at 0, K at 1) carries e^{z0 - z1}; (K at 0, I at 1) carries e^{z1 - z0}; scale by e^{-L}
        jump = z1 - z0
        e_ik = np.exp(-jump - L_t)
        e_ki = np.exp(jump - L_t)
        ratio = np.sqrt(b / a)
        t11[tapered] = 2.0 * ratio * (i1_0 * q1 * e_ik + k1_0 * p1 * e_ki)
        t12[tapered] = 2.0 / (k * np.sqrt(a * b)) * (k1_0 * i1_1 * e_ki - i1_0 * k1_1 * e_ik)
        t21[tapered] = 2.0 * k * np.sqrt(a * b) * (q0 * p1 * e_ki - p0 * q1 * e_ik)
        t22[tapered] = 2.0 / ratio * (p0 * k1_1 * e_ik + q0 * i1_1 * e_ki)
    return t11, t12, t21, t22


def _segment_maps(tree: Tree, membrane_resistivity: float, axial_resistivity: float
                  ) -> tuple[Array, Array, Array, Array]:
    """Coefficients (a, b, c, d) with G_in = (a G_L + b) / (c G_L + d) for every segment."""
    if tree.geometry == "frusta" and np.any(tree.proximal_diameters != tree.distal_diameters):
        t11, t12, t21, t22 = frustum_transfer(tree.lengths, tree.proximal_diameters, tree.distal_diameters,
                                              membrane_resistivity, axial_resistivity)
        return t22, t21, t12, t11
    # cylinders: G_in = G∞ (B + tanh L)/(1 + B tanh L) with B = G_L/G∞ (cable.input_conductance)
    g_inf = semi_infinite_input_conductance(membrane_resistivity, axial_resistivity, tree.distal_diameters)
    t = np.tanh(segment_electrotonic_lengths(tree, membrane_resistivity, axial_resistivity))
    one = np.ones_like(t)
    return one, g_inf * t, t / g_inf, one


def exact_input_conductances(tree: Tree, membrane_resistivity: float, axial_resistivity: float, *,
                             killed_tips: bool = False) -> tuple[Array, float]:
    r"""Exact steady input conductance of every segment looking away from the root, and of the root.

    Segments are combined from the tips inward: the load of a segment is the sum of its
    children's input conductances (0 at a sealed tip, infinite at a killed one), and

    .. math:: G_{in} = G_\infty \frac{B + \tanh L}{1 + B\tanh L},\qquad B = G_{load}/G_\infty

    for a cylinder (:func:`cabletheory.cable.input_conductance`; Rall 1959), or the
    two-port of :func:`frustum_transfer` for a frustum. The loop visits each segment once
    (linear time, no recursion).

    Returns
    -------
    (G_in of each segment in S, total conductance of the dendrites at the root node in S);
    the soma is not included.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491; Rall & Rinzel (1973) Biophys. J. 13:648.
    """
    a, b, c, d = (v.tolist() for v in _segment_maps(tree, membrane_resistivity, axial_resistivity))
    parents = tree.parents.tolist()
    n = len(parents)
    inf = math.inf
    load = [0.0] * n
    if killed_tips:
        has_child = np.zeros(n, dtype=bool)
        has_child[tree.parents[tree.parents >= 0]] = True
        load = np.where(has_child, 0.0, inf).tolist()
    g_in = [0.0] * n
    root = 0.0
    for i in range(n - 1, -1, -1):
        gl = load[i]
        # a killed (infinite) load gives the limit a/c; a zero-length killed segment shorts its parent
        g = (a[i] * gl + b[i]) / (c[i] * gl + d[i]) if gl != inf else (a[i] / c[i] if c[i] > 0 else inf)
        g_in[i] = g
        p = parents[i]
        if p >= 0:
            load[p] += g
        else:
            root += g
    return np.asarray(g_in, dtype=float), root


# --------------------------------------------------------------------------------------
# audit and reduction
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Tolerances:
    """How far a tree may stray from Rall's conditions and still be called reducible.

    branch_ratio : largest allowed |Σ d_child^{3/2} / d_parent^{3/2} − 1| at a branch point,
        and largest relative change of d^{3/2} along one unbranched section (default 0.05)
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


@dataclass(frozen=True, slots=True)
class Tips:
    """Terminal nodes, one entry each, SI."""

    ids: tuple[str, ...]
    electrotonic_distances: Array
    path_lengths: Array  # m, along the tree from the root node
    stems: tuple[str, ...]  # label of the stem dendrite each tip belongs to
    lines: IntArray


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
    worst_section_change: float  # largest relative change of d^{3/2} along one of its sections
    input_conductance: float  # S, exact, this stem alone
    membrane_area: float  # m²
    reducible: bool  # this stem alone meets the conditions within the tolerances


@dataclass(frozen=True, slots=True)
class Violation:
    """One departure from Rall's conditions beyond the tolerance."""

    kind: str  # "branch_ratio", "section_diameter" or "tip_distance"
    id: str  # branch point, section (first–last point) or tip
    value: float
    limit: float
    line: int


@dataclass(frozen=True, slots=True)
class EquivalentCylinder:
    """Rall's equivalent cylinder: trunk diameter, the tree's membrane area, SI."""

    diameter: float  # m, (Σ d_stem^{3/2})^{2/3}
    length: float  # m
    electrotonic_length: float
    length_constant: float  # m
    membrane_area: float  # m²
    semi_infinite_input_resistance: float  # Ω


@dataclass(frozen=True, slots=True)
class EquivalentCable:
    """Σ d^{3/2} over the tree against electrotonic distance X from the root (a step function).

    ``diameter_sum[k]`` holds on ``positions[k] <= X < positions[k + 1]``; the last value is 0.
    For frusta each segment contributes its mean (area-preserving) value.
    """

    positions: Array  # X, dimensionless, increasing, from 0 to the farthest tip
    diameter_sum: Array  # Σ d^{3/2}, m^{3/2}
    trunk: float  # D^{3/2} of the equivalent cylinder, m^{3/2}

    @property
    def equivalent_diameters(self) -> Array:
        """(Σ d^{3/2})^{2/3} on each interval, m."""
        return self.diameter_sum ** (2.0 / 3.0)


@dataclass(frozen=True, slots=True)
class TreeReport:
    """Everything :func:`analyse_tree` finds, in SI. Formatting is left to the front ends."""

    tree: Tree
    membrane_resistivity: float
    axial_resistivity: float
    membrane_capacitance: float
    killed_tips: bool
    tolerances: Tolerances
    segments: int
    sections: int
    branch_points: BranchPoints
    tips: Tips
    stems: tuple[Stem, ...]
    tip_distance_min: float
    tip_distance_max: float
    tip_distance_mean: float
    membrane_area: float  # m², dendrites (not the soma)
    reducible: bool
    reasons: tuple[str, ...]
    violations: tuple[Violation, ...]
    equivalent_cylinder: EquivalentCylinder
    equivalent_cable: EquivalentCable
    soma_area: float | None  # m²
    soma_conductance: float | None  # S
    dendritic_input_conductance: float  # S, exact, all stems together
    input_resistance: float  # Ω, exact, at the root node (soma included when there is one)
    reduced_input_resistance: float  # Ω, soma + equivalent cylinder (or the cylinder alone)
    difference_percent: float  # 100 (reduced − exact) / exact
    conductance_ratio: float | None  # ρ = G_D / G_S of the ball-and-stick model
    exact_conductance_ratio: float | None  # exact dendritic conductance / G_S
    membrane_time_constant: float  # s
    notes: tuple[str, ...] = field(default_factory=tuple)


def _section_ids(parents: IntArray, children: IntArray) -> IntArray:
    """Section index of each segment: a new section starts at the root and after a branch point."""
    p = parents.tolist()
    ch = children.tolist()
    out = [0] * len(p)
    count = 0
    for i, j in enumerate(p):
        if j < 0 or ch[j] != 1:
            out[i] = count
            count += 1
        else:
            out[i] = out[j]
    return np.asarray(out, dtype=np.int64)


def _stem_ids(parents: IntArray) -> IntArray:
    p = parents.tolist()
    out = [0] * len(p)
    for i, j in enumerate(p):
        out[i] = i if j < 0 else out[j]
    return np.asarray(out, dtype=np.int64)


def _profile(x_start: Array, x_end: Array, weights: Array) -> tuple[Array, Array]:
    """Step function Σ w over segments covering X (half-open [start, end))."""
    use = x_end > x_start
    s, e, w = x_start[use], x_end[use], weights[use]
    positions = np.unique(np.concatenate(([0.0], s, e)))
    order_s = np.argsort(s, kind="stable")
    order_e = np.argsort(e, kind="stable")
    cum_s = np.concatenate(([0.0], np.cumsum(w[order_s])))
    cum_e = np.concatenate(([0.0], np.cumsum(w[order_e])))
    started = cum_s[np.searchsorted(s[order_s], positions, side="right")]
    ended = cum_e[np.searchsorted(e[order_e], positions, side="right")]
    values = started - ended
    values[np.abs(values) < 1e-12 * max(float(np.max(np.abs(w), initial=0.0)), 1e-300)] = 0.0
    return positions, np.maximum(values, 0.0)


def sample_profile(cable: EquivalentCable, count: int = 20) -> tuple[Array, Array, Array]:
    """Average the equivalent-cable profile over ``count`` equal bins of X.

    Returns (bin starts, bin ends, mean Σ d^{3/2} in each bin in m^{3/2}); exact averages of
    the step function (its integral is piecewise linear).
    """
    if count < 1:
        raise InputError(f"profile bins must be >= 1, got {count}")
    x = cable.positions
    top = float(x[-1]) if x.size else 0.0
    edges = np.linspace(0.0, top, count + 1)
    integral = np.concatenate(([0.0], np.cumsum(cable.diameter_sum[:-1] * np.diff(x))))
    at_edges = np.interp(edges, x, integral)
    width = np.diff(edges)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(width > 0, np.diff(at_edges) / np.where(width > 0, width, 1.0), 0.0)
    return edges[:-1], edges[1:], mean


def analyse_tree(tree: Tree, membrane_resistivity: float, axial_resistivity: float,
                 membrane_capacitance: float = 0.01, *, tolerances: Tolerances | None = None,
                 killed_tips: bool = False) -> TreeReport:
    """Audit Rall's conditions, reduce to an equivalent cylinder, and compute exact input resistance.

    Parameters
    ----------
    tree : from :func:`build_tree`
    membrane_resistivity : Rm, Ω·m² (uniform)
    axial_resistivity : Ri, Ω·m (uniform)
    membrane_capacitance : Cm, F/m² (only the time constant uses it)
    tolerances : see :class:`Tolerances`
    killed_tips : all tips short-circuited to rest instead of sealed (default sealed)

    The exact input resistance holds for any tree; the reduced model is the soma (if any)
    plus the equivalent cylinder with the same tip condition. Rm and Ri are assumed
    uniform and the membrane passive; these are not checked.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491; Rall W (1964) in Neural Theory and Modeling (Reiss,
    ed.), Stanford Univ. Press, 73–97 (3/2 rule, equal tip distances, equivalent cylinder);
    Rall W (1969) Biophys. J. 9:1483 (ρ = G_D/G_S).
    """
    for name, value in (("membrane_resistivity", membrane_resistivity),
                        ("axial_resistivity", axial_resistivity),
                        ("membrane_capacitance", membrane_capacitance)):
        if not (math.isfinite(value) and value > 0):
            raise InputError(f"{name} must be finite and positive, got {value!r}")
    tol = tolerances or Tolerances()
    t = tree if killed_tips else prune_empty_branches(tree)
    n = len(t)
    if n == 0:
        raise InputError(f"{t.source}: no dendritic segments left to analyse (check the type selection)")
    rm, ri = membrane_resistivity, axial_resistivity
    parents = t.parents
    d0, d1, ell = t.proximal_diameters, t.distal_diameters, t.lengths
    dx = segment_electrotonic_lengths(t, rm, ri)
    x_end = _accumulate(parents, dx)
    x_start = np.where(parents >= 0, x_end[np.maximum(parents, 0)], 0.0)  # exactly the parent's end
    path = _accumulate(parents, ell)
    areas = np.pi * 0.5 * (d0 + d1) * ell
    total_area = float(areas.sum())
    if total_area <= 0:
        raise InputError(f"{t.source}: the dendrites have no membrane (every length is 0)")
    children = np.bincount(parents[parents >= 0], minlength=n).astype(np.int64)
    stems_idx = np.flatnonzero(parents < 0)
    stem_of = _stem_ids(parents)
    labels = t.labels

    # branch points: Σ d_child^{3/2} / d_parent^{3/2}
    child_mask = parents >= 0
    sum_child = np.bincount(parents[child_mask], weights=d0[child_mask] ** 1.5, minlength=n)
    bp = np.flatnonzero(children >= 2)
    ratios = sum_child[bp] / d1[bp] ** 1.5
    branch_points = BranchPoints(ids=tuple(labels[i] for i in bp.tolist()), ratios=ratios,
                                 parent_diameters=d1[bp].copy(), children=children[bp].copy(),
                                 electrotonic_distances=x_end[bp].copy(), lines=t.lines[bp].copy())
    # tips
    tip_idx = np.flatnonzero(children == 0)
    tip_x = x_end[tip_idx]
    tips = Tips(ids=tuple(labels[i] for i in tip_idx.tolist()), electrotonic_distances=tip_x.copy(),
                path_lengths=path[tip_idx].copy(),
                stems=tuple(labels[i] for i in stem_of[tip_idx].tolist()), lines=t.lines[tip_idx].copy())
    # d^{3/2} along unbranched sections (segments of zero length carry no membrane: skipped)
    section = _section_ids(parents, children)
    n_sec = int(section.max()) + 1
    w0, w1 = d0**1.5, d1**1.5
    real = ell > 0
    lo = np.full(n_sec, np.inf)
    hi = np.zeros(n_sec)
    np.minimum.at(lo, section[real], np.minimum(w0, w1)[real])
    np.maximum.at(hi, section[real], np.maximum(w0, w1)[real])
    with np.errstate(invalid="ignore", divide="ignore"):
        change = np.where(np.isfinite(lo) & (lo > 0), hi / lo - 1.0, 0.0)

    # exact input conductance, tips inward
    g_in, g_dend = exact_input_conductances(t, rm, ri, killed_tips=killed_tips)
    g_soma = None if t.soma_area is None else t.soma_area / rm
    g_total = g_dend + (g_soma or 0.0)
    r_exact = 1.0 / g_total if g_total > 0 else math.inf

    # equivalent cylinder: trunk diameter, same membrane area
    stem_w = d0[stems_idx] ** 1.5
    trunk = float(stem_w.sum())
    diameter = trunk ** (2.0 / 3.0)
    lam = float(length_constant(rm, ri, diameter))
    eq_length = total_area / (math.pi * diameter)
    eq_l = eq_length / lam
    g_inf = float(semi_infinite_input_conductance(rm, ri, diameter))
    g_cyl = float(input_conductance(g_inf, eq_l, math.inf if killed_tips else 0.0))
    r_reduced = 1.0 / (g_cyl + (g_soma or 0.0))
    cylinder = EquivalentCylinder(diameter=diameter, length=eq_length, electrotonic_length=eq_l,
                                  length_constant=lam, membrane_area=math.pi * diameter * eq_length,
                                  semi_infinite_input_resistance=1.0 / g_inf)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean_w = np.where(dx > 0, np.sqrt(4.0 * ri / rm) * areas / np.pi / np.where(dx > 0, dx, 1.0), 0.0)
    positions, values = _profile(x_start, x_end, mean_w)
    cable = EquivalentCable(positions=positions, diameter_sum=values, trunk=trunk)

    # stems
    stems = []
    stem_area = np.bincount(stem_of, weights=areas, minlength=n)
    tip_stem = stem_of[tip_idx]
    bp_stem = stem_of[bp]
    first = np.full(n_sec, n, dtype=np.int64)
    np.minimum.at(first, section, np.arange(n))
    section_stem = stem_of[first]
    for s in stems_idx.tolist():
        mine = tip_x[tip_stem == s]
        rs = ratios[bp_stem == s]
        worst = float(rs[np.argmax(np.abs(rs - 1.0))]) if rs.size else 1.0
        worst_change = float(change[section_stem == s].max())
        ok = (abs(worst - 1.0) <= tol.branch_ratio and worst_change <= tol.branch_ratio
              and float(mine.max() - mine.min()) <= tol.tip_spread)
        stems.append(Stem(id=labels[s], type=int(t.types[s]), diameter=float(d0[s]), tips=int(mine.size),
                          tip_distance_min=float(mine.min()), tip_distance_max=float(mine.max()),
                          worst_ratio=worst, worst_section_change=worst_change,
                          input_conductance=float(g_in[s]), membrane_area=float(stem_area[s]), reducible=ok))

    # verdict
    violations: list[Violation] = []
    reasons: list[str] = []
    bad_bp = np.flatnonzero(np.abs(ratios - 1.0) > tol.branch_ratio)
    for k in bad_bp[np.argsort(-np.abs(ratios[bad_bp] - 1.0), kind="stable")].tolist():
        violations.append(Violation("branch_ratio", branch_points.ids[k], float(ratios[k]), tol.branch_ratio,
                                    int(branch_points.lines[k])))
    if bad_bp.size:
        k = int(bad_bp[np.argmax(np.abs(ratios[bad_bp] - 1.0))])
        reasons.append(f"3/2 rule: {bad_bp.size} of {bp.size} branch points have Σd_child^3/2 / d_parent^3/2 "
                       f"outside 1 ± {tol.branch_ratio:g} (worst: point {branch_points.ids[k]}, ratio "
                       f"{ratios[k]:.4g})")
    bad_sec = np.flatnonzero(change > tol.branch_ratio)
    if bad_sec.size:
        last = np.full(n_sec, -1, dtype=np.int64)
        np.maximum.at(last, section, np.arange(n))
        for s in bad_sec[np.argsort(-change[bad_sec], kind="stable")].tolist():
            name = labels[first[s]] if first[s] == last[s] else f"{labels[first[s]]}–{labels[last[s]]}"
            violations.append(Violation("section_diameter", name, float(change[s]), tol.branch_ratio,
                                        int(t.lines[first[s]])))
        worst_section = violations[-bad_sec.size]
        reasons.append(f"diameter changes: d^3/2 varies by more than {100 * tol.branch_ratio:g} % along "
                       f"{bad_sec.size} of {n_sec} unbranched sections (worst: section {worst_section.id}, "
                       f"{100 * worst_section.value:.3g} %)")
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
    tau = rm * membrane_capacitance
    return TreeReport(
        tree=t, membrane_resistivity=rm, axial_resistivity=ri, membrane_capacitance=membrane_capacitance,
        killed_tips=killed_tips, tolerances=tol, segments=n, sections=n_sec, branch_points=branch_points,
        tips=tips, stems=tuple(stems), tip_distance_min=float(tip_x.min()), tip_distance_max=float(tip_x.max()),
        tip_distance_mean=float(tip_x.mean()), membrane_area=total_area, reducible=not reasons,
        reasons=tuple(reasons), violations=tuple(violations), equivalent_cylinder=cylinder,
        equivalent_cable=cable, soma_area=t.soma_area, soma_conductance=g_soma,
        dendritic_input_conductance=g_dend, input_resistance=r_exact, reduced_input_resistance=r_reduced,
        difference_percent=100.0 * (r_reduced - r_exact) / r_exact,
        conductance_ratio=None if g_soma is None else g_cyl / g_soma,
        exact_conductance_ratio=None if g_soma is None else g_dend / g_soma,
        membrane_time_constant=tau, notes=t.notes,
    )
