r"""Laplace-domain solution of a passive tree: input and transfer impedance at any complex s.

A tree (:class:`cabletheory.tree.Tree`) with membrane properties and tip conditions is a
:class:`PassiveTree`. Each piece is a uniform cylinder of diameter d, length ℓ; with
:math:`q = \sqrt{1 + s\tau}` (principal branch, Re q ≥ 0), :math:`\tau = R_m C_m`, its
characteristic admittance is :math:`G_\infty q` and its electrotonic length in the Laplace
domain :math:`u = qL`, :math:`L = \ell/\lambda`, because the membrane admittance per area is
:math:`(1 + s\tau)/R_m`. Two passes over the pieces give everything (Butz & Cowan 1974;
Koch & Poggio 1985; Holmes 1986):

* **tips inward**: a piece loaded at its distal node by :math:`Y_L` has input admittance

  .. math:: Y_{in} = G_\infty q\,\frac{Y_L + G_\infty q\tanh u}{G_\infty q + Y_L\tanh u}

  (:math:`G_\infty q\coth u` at a killed tip); a node's load is the sum of its children's
  :math:`Y_{in}` plus the tip conductance; the root adds the soma, :math:`G_S(1 + s\tau_S)`;
* **root outward**: the admittance looking back towards the root from each node, so that the
  total admittance at every node, and with it the input impedance :math:`Z_{vv} = 1/Y_{tot}`,
  is known; and the voltage ratio across each piece in each direction,

  .. math:: \frac{V_{far}}{V_{near}} = \frac{1}{\cosh u + (Y_{far}/G_\infty q)\sinh u}
            = \frac{G_\infty q\,\mathrm{sech}\,u}{G_\infty q + Y_{far}\tanh u},

  with :math:`Y_{far}` the admittance beyond the far node, away from the piece. The transfer
  impedance from node a to node b is :math:`Z_{aa}` times the ratios along the path; it is
  reciprocal, :math:`Z_{ab} = Z_{ba}`.

Only tanh, sech = 2e^{-u}/(1 + e^{-2u}) and products of ratios of modulus ≤ 1 appear, so nothing
overflows for long pieces or large |s|. Sites inside a piece are handled by cutting the piece
there (exact: a cut cylinder is two cylinders, a cut frustum two frusta); pieces of zero length are
contracted into their parent node.

**Eigenvalues** (:mod:`cabletheory.tree_modes`). The decay rates :math:`1/\tau_n` of the tree are
counted, not searched for:
with :math:`s = -\lambda` real, the number of rates below λ is the number of negative pivots of
the tips-inward elimination plus, for every piece, the number of its rates with both ends held
at rest, :math:`\#\{n \ge 1: (1 + (n\pi/L)^2)/\tau < \lambda\}` (Wittrick & Williams 1971,
recalled from memory [MEM]). Bisection on that integer count brackets every rate, multiple ones
included, with no poles to step over; a rate is seen at the root when the root admittance
vanishes there, and its residue follows from the root admittance's slope.

**Frusta** (tapered pieces) use the exact two-port of the tapered cable equation, modified Bessel
functions of order 1 and 2 (:func:`cabletheory.tree.frustum_transfer`) with every argument
multiplied by q, in exponentially scaled form; the general two-port formulas
:math:`Y_{in} = (T_{21} + T_{22}Y_L)/(T_{11} + T_{12}Y_L)` replace the symmetric ones there. For
counting, a frustum's own rates with both ends at rest have no closed form, so frusta are first
cut short enough that none of them has such a rate below the largest rate counted (a Rayleigh
bound, :math:`\mu_1 \ge d_{min}^2\pi^2/(c\,d_{max}\ell^2)`); cutting a frustum changes nothing else.
The model is passive, linear and uniform within each piece (:data:`cabletheory.PASSIVE_CAVEAT`).

References
----------
Butz EG & Cowan JD (1974) Biophys. J. 14:661 [ButzCowan1974] (transient potentials in
dendritic systems).
Koch C & Poggio T (1985) J. Neurosci. Methods 12:303 [KochPoggio1985] (Laplace-domain recursion
on trees).
Holmes WR (1986) Biol. Cybern. 55:115 [Holmes1986] (transients in branched trees by Laplace
transforms).
Wittrick WH & Williams FW (1971) Q. J. Mech. Appl. Math. 24:263 [WittrickWilliams1971] (counting
eigenvalues of a structure from its dynamic stiffness) [MEM].
Squire W & Trapp G (1998) SIAM Rev. 40:110 [SquireTrapp1998] (complex-step derivative).
"""

from __future__ import annotations

import math
import threading
from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .cable import length_constant, semi_infinite_input_conductance
from .case import end_from_word
from .errors import InputError
from .tree import Tree
from .tree_sites import (
    Site,
    _check_site,
    node_sites,
    root_site,
    site_at,
    site_on_branch,
    sites_along,
)

__all__ = [
    "PassiveTree",
    "Site",
    "input_impedance",
    "node_sites",
    "root_site",
    "site_at",
    "site_on_branch",
    "sites_along",
    "transfer_impedance",
]

Array = NDArray[np.float64]
ComplexArray = NDArray[np.complex128]
IntArray = NDArray[np.int64]

_TAPER_THRESHOLD = 3e-7  # relative end-diameter difference below which a frustum is a cylinder
_CHUNK = 400_000  # pieces × s values per temporary array


# --------------------------------------------------------------------------------------
# the cell and its sites
# --------------------------------------------------------------------------------------
def _per_piece(value: ArrayLike, count: int, name: str) -> Array:
    arr = np.asarray(value, dtype=float).ravel()
    if arr.size == 1:
        arr = np.full(count, float(arr[0]))
    if arr.size != count:
        raise InputError(f"{name}: expected one value or {count} (one per piece), got {arr.size}")
    if not (np.all(np.isfinite(arr)) and np.all(arr > 0)):
        raise InputError(f"{name} must be finite and positive")
    return arr


@dataclass(frozen=True, slots=True)
class PassiveTree:
    """A tree with its membrane, cytoplasm and tip conditions, SI.

    Attributes
    ----------
    tree : the pieces (cylinders or frusta), parents before children
    membrane_resistivity : Rm, Ω·m², one value or one per piece
    axial_resistivity : Ri, Ω·m (uniform)
    membrane_capacitance : Cm, F/m², one value or one per piece
    tips : None (default): each tip as the tree says (``Tree.ends``, sealed unless stated);
        or "sealed", "killed", or a conductance to rest in S (one value for every tip, or an
        array with one value per piece of which only the tips' are used; inf = killed)
    soma_membrane_resistivity, soma_membrane_capacitance : the soma's Rm and Cm; default the
        dendrites' (which must then be one value)
    """

    tree: Tree
    membrane_resistivity: float | Array
    axial_resistivity: float
    membrane_capacitance: float | Array
    tips: str | float | Array | None = None
    soma_membrane_resistivity: float | None = None
    soma_membrane_capacitance: float | None = None

    def __post_init__(self) -> None:
        n = len(self.tree)
        if n == 0:
            raise InputError(f"{self.tree.source}: the tree has no pieces")
        _per_piece(self.membrane_resistivity, n, "membrane_resistivity")
        _per_piece(self.membrane_capacitance, n, "membrane_capacitance")
        ri = float(self.axial_resistivity)
        if not (math.isfinite(ri) and ri > 0):
            raise InputError(f"axial_resistivity must be finite and positive, got {self.axial_resistivity!r}")
        self.tip_conductances()  # validates the tip words
        if self.tree.soma_area is not None:
            self.soma_constants()

    def tip_conductances(self) -> Array:
        """Conductance (S) from each piece's distal node to rest: 0 sealed, inf killed (tips only)."""
        n = len(self.tree)
        tip = _tips(self.tree.parents)
        if self.tips is None:
            return np.where(tip, self.tree.tip_conductances(), 0.0)
        if isinstance(self.tips, str):
            word = end_from_word(self.tips)
            if word is None:
                raise InputError(f"tips must be 'sealed', 'killed' or a conductance in S, got {self.tips!r}")
            value = np.full(n, word)
        else:
            value = np.asarray(self.tips, dtype=float).ravel()
            if value.size == 1:
                value = np.full(n, float(value[0]))
            if value.size != n:
                raise InputError(f"tips: expected one conductance or {n} (one per piece), got {value.size}")
            if np.any(np.isnan(value)) or np.any(value < 0):
                raise InputError("tip conductances must be >= 0 S (inf for a killed tip)")
        return np.where(tip, value, 0.0)

    def soma_constants(self) -> tuple[float, float]:
        """(G_S in S, τ_S in s) of the lumped soma; (0, 0) without a soma."""
        if self.tree.soma_area is None:
            return 0.0, 0.0
        rm, cm = self.soma_membrane_resistivity, self.soma_membrane_capacitance
        for name, given, default in (("soma_membrane_resistivity", rm, self.membrane_resistivity),
                                     ("soma_membrane_capacitance", cm, self.membrane_capacitance)):
            if given is None and np.asarray(default).size != 1:
                raise InputError(f"{name} is needed when the dendrites' value varies from piece to piece")
        rm_s = float(np.asarray(self.membrane_resistivity).ravel()[0]) if rm is None else float(rm)
        cm_s = float(np.asarray(self.membrane_capacitance).ravel()[0]) if cm is None else float(cm)
        if not (math.isfinite(rm_s) and rm_s > 0 and math.isfinite(cm_s) and cm_s > 0):
            raise InputError("the soma's membrane resistivity and capacitance must be finite and positive")
        return self.tree.soma_area / rm_s, rm_s * cm_s

    @property
    def time_constants(self) -> Array:
        """τ = Rm·Cm of each piece, s."""
        n = len(self.tree)
        return (_per_piece(self.membrane_resistivity, n, "membrane_resistivity")
                * _per_piece(self.membrane_capacitance, n, "membrane_capacitance"))


def _tips(parents: IntArray) -> NDArray[np.bool_]:
    has_child = np.zeros(len(parents), dtype=bool)
    p = np.asarray(parents)
    has_child[p[p >= 0]] = True
    return ~has_child


# --------------------------------------------------------------------------------------
# the network: pieces cut at the sites, zero lengths contracted
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class _Network:
    parents: IntArray  # parent piece, -1 root; node k+1 is the distal node of piece k, node 0 the root
    electrotonic: Array  # L of each piece
    g_inf: Array  # S
    tau: Array  # s
    shunt: Array  # S, conductance to rest at each piece's distal node (tips)
    killed: NDArray[np.bool_]  # distal node held at rest
    soma_conductance: float
    soma_tau: float
    nodes: IntArray  # node of each requested site
    levels: tuple[IntArray, ...]  # pieces by depth, root side first (each a run of consecutive pieces)
    depth: IntArray  # depth of each node (root 0)
    parent_node: IntArray  # node at the proximal end of each piece
    tapered: IntArray  # pieces that are frusta (the rest are cylinders)
    lengths: Array  # m, of the tapered pieces
    proximal: Array  # m, proximal diameter of the tapered pieces
    distal: Array  # m, distal diameter of the tapered pieces
    membrane_resistivity: Array  # Ω·m², of the tapered pieces
    axial_resistivity: float  # Ω·m
    spans: tuple[tuple[int, int], ...] = ()  # (first, end) of each level's pieces, root side first
    # per level, the positions within it of its killed tips and of its frusta (None: there are none)
    level_killed: tuple[IntArray | None, ...] = ()
    level_frusta: tuple[IntArray | None, ...] = ()
    fingerprint: bytes = b""  # digest of everything the solution depends on (not the sites' nodes)

    @property
    def size(self) -> int:
        return int(self.parents.size)


def _network(cell: PassiveTree, sites: Sequence[Site] | None) -> _Network:
    """The pieces of ``cell`` cut at every site inside a piece, zero-length pieces contracted into
    their proximal node, with the node of each site; built with whole-array operations (linear in
    the number of pieces and sites, apart from sorting the cuts). ``sites=None``: the sites of
    :func:`node_sites` (the root and every piece's distal node), without making them one by one."""
    tree = cell.tree
    n = len(tree)
    lengths = np.asarray(tree.lengths, dtype=float)
    diam = np.asarray(tree.distal_diameters, dtype=float)
    prox = np.asarray(tree.proximal_diameters, dtype=float)
    taper = np.abs(diam - prox) > _TAPER_THRESHOLD * 0.5 * (diam + prox)
    rm = _per_piece(cell.membrane_resistivity, n, "membrane_resistivity")
    cm = _per_piece(cell.membrane_capacitance, n, "membrane_capacitance")
    ri = float(cell.axial_resistivity)
    tip_g = np.asarray(cell.tip_conductances(), dtype=float)
    lam = np.asarray(length_constant(rm, ri, diam), dtype=float)
    ginf = np.asarray(semi_infinite_input_conductance(rm, ri, diam), dtype=float)
    parents = np.asarray(tree.parents, dtype=np.int64)
    if sites is None:
        site_piece = np.arange(-1, n, dtype=np.int64)
        site_x = np.concatenate(([0.0], lengths))
    else:
        site_piece, site_x = _check_sites(tree, sites)
    # the cuts: distinct (piece, distance) strictly inside a piece, by piece then distance
    inside = (site_piece >= 0) & (site_x > 0.0) & (site_x < lengths[np.maximum(site_piece, 0)])
    pairs = np.column_stack((site_piece[inside].astype(float), site_x[inside]))
    unique, which = np.unique(pairs, axis=0, return_inverse=True)
    cut_piece, cut_x = unique[:, 0].astype(np.int64), unique[:, 1]
    n_cuts = np.bincount(cut_piece, minlength=n)
    cut_first = np.cumsum(n_cuts) - n_cuts  # index of each piece's first cut in cut_piece
    positive = lengths != 0.0
    counts = np.where(positive, n_cuts + 1, 0)  # new pieces made of each piece
    ends = np.cumsum(counts)  # node at the distal end of a piece of positive length
    first = ends - counts  # its first new piece
    # a zero-length piece ends where it starts: at the end of its nearest ancestor of positive length
    anchor = np.where(positive, np.arange(n), parents)
    while True:
        contracted = (anchor >= 0) & ~positive[np.maximum(anchor, 0)]
        if not contracted.any():
            break
        anchor = np.where(contracted, anchor[np.maximum(anchor, 0)], anchor)  # pointer doubling
    end_node = np.where(anchor >= 0, ends[np.maximum(anchor, 0)], 0)
    start_node = np.where(parents >= 0, end_node[np.maximum(parents, 0)], 0)
    _check_zero_length_tips(tree, positive, tip_g, start_node)
    m = int(ends[-1]) if n else 0
    if m == 0:
        raise InputError(f"{tree.source}: the tree has no membrane (every piece has zero length)")
    source = np.repeat(np.arange(n), counts)
    par = np.arange(m, dtype=np.int64) - 1  # a cut piece's parent is the piece before it
    starts = first[positive]
    par[starts] = start_node[positive] - 1
    x_end = lengths[source].copy()
    cut_rank = np.arange(cut_piece.size) - cut_first[cut_piece]
    x_end[first[cut_piece] + cut_rank] = cut_x
    x_start = np.empty(m)
    x_start[0] = 0.0
    x_start[1:] = x_end[:-1]
    x_start[starts] = 0.0
    new_len = x_end - x_start
    span = lengths[source]
    d0 = prox[source] + (diam[source] - prox[source]) * x_start / span
    d1 = prox[source] + (diam[source] - prox[source]) * x_end / span
    # tip conditions: a zero-length tip's conductance at its (contracted) node, else at its distal end
    shunt = np.zeros(m)
    zero_tip = ~positive & (tip_g > 0)
    leaky = positive & (tip_g > 0) & np.isfinite(tip_g)
    tip_nodes = np.concatenate((start_node[zero_tip], end_node[leaky]))
    tip_values = np.concatenate((tip_g[zero_tip], tip_g[leaky]))
    order = np.argsort(np.concatenate((np.flatnonzero(zero_tip), np.flatnonzero(leaky))), kind="stable")
    np.add.at(shunt, tip_nodes[order] - 1, tip_values[order])  # summed in piece order
    killed = np.zeros(m, dtype=bool)
    killed[end_node[positive & np.isinf(tip_g)] - 1] = True
    # the node of every site: the root, a piece's ends, or a cut
    safe = np.maximum(site_piece, 0)
    nodes = np.where(site_piece < 0, 0, np.where(site_x == 0.0, start_node[safe], end_node[safe]))
    cut_sites = np.flatnonzero(inside)
    if cut_sites.size:
        k = np.asarray(which).ravel()
        nodes[cut_sites] = first[cut_piece[k]] + (k - cut_first[cut_piece[k]]) + 1
    depth = _depths(par)
    # number the pieces level by level (parents still come before their children), so that each
    # level is a run of consecutive pieces and the two passes work on slices, not gathered copies
    order = np.argsort(depth[1:], kind="stable")
    rank = np.empty(m, dtype=np.int64)
    rank[order] = np.arange(m)
    par = np.where(par[order] >= 0, rank[np.maximum(par[order], 0)], -1)
    source, new_len, d0, d1 = source[order], new_len[order], d0[order], d1[order]
    shunt, killed = shunt[order], killed[order]
    nodes = np.where(nodes > 0, rank[np.maximum(nodes - 1, 0)] + 1, 0)
    depth = np.concatenate(([0], depth[1:][order]))
    bounds = np.searchsorted(depth[1:], np.arange(1, int(depth.max()) + 2))
    spans = tuple((int(bounds[j]), int(bounds[j + 1])) for j in range(bounds.size - 1))
    levels = tuple(np.arange(a, b) for a, b in spans)
    g_s, tau_s = cell.soma_constants()
    piece_len = new_len
    tapered = np.flatnonzero(taper[source])
    # a frustum's steady electrotonic length, ∫dx/λ(x) (frustum_electrotonic_length of cabletheory.tree)
    electrotonic = piece_len / lam[source]
    mean_root = (0.5 * (np.sqrt(d0[tapered]) + np.sqrt(d1[tapered]))) ** 2  # L = ℓ/λ(d̄), cabletheory.tree
    electrotonic[tapered] = piece_len[tapered] / np.asarray(length_constant(rm[source][tapered], ri, mean_root))
    frustum = np.zeros(m, dtype=bool)
    frustum[tapered] = True
    level_killed = _within_levels(killed, spans)
    level_frusta = _within_levels(frustum, spans)
    net = _Network(parents=par, electrotonic=electrotonic, g_inf=ginf[source],
                   tau=(rm * cm)[source], shunt=shunt, killed=killed, soma_conductance=g_s, soma_tau=tau_s,
                   nodes=nodes.astype(np.int64), levels=levels, depth=depth, parent_node=par + 1,
                   tapered=tapered, lengths=piece_len[tapered], proximal=d0[tapered], distal=d1[tapered],
                   membrane_resistivity=rm[source][tapered], axial_resistivity=ri, spans=spans,
                   level_killed=level_killed, level_frusta=level_frusta)
    return replace(net, fingerprint=_fingerprint(net))


def _within_levels(mask: NDArray[np.bool_], spans: tuple[tuple[int, int], ...]) -> tuple[IntArray | None, ...]:
    """Per level, the positions within it where ``mask`` holds (None where it holds nowhere)."""
    hits = np.flatnonzero(mask)
    if hits.size == 0:
        return (None,) * len(spans)
    starts = np.array([a for a, _ in spans])
    level = np.searchsorted(starts, hits, side="right") - 1
    out: list[IntArray | None] = [None] * len(spans)
    for j in np.unique(level).tolist():
        out[j] = hits[level == j] - spans[j][0]
    return tuple(out)


def _fingerprint(net: _Network) -> bytes:
    """A digest of every number the network's solution depends on: equal digests, equal solutions
    at equal s (the sites' nodes aside, which only say where to read it)."""
    import hashlib

    digest = hashlib.blake2b(digest_size=20)
    for part in (net.parents, net.electrotonic, net.g_inf, net.tau, net.shunt, net.killed, net.tapered,
                 net.lengths, net.proximal, net.distal, net.membrane_resistivity,
                 np.array([net.soma_conductance, net.soma_tau, net.axial_resistivity, net.size])):
        array = np.ascontiguousarray(part)
        digest.update(str((array.dtype.str, array.shape)).encode())
        digest.update(array.tobytes())
    return digest.digest()


def _depths(parents: IntArray) -> IntArray:
    """Depth of every node (node 0 the root, node k + 1 the distal end of piece k whose proximal node
    is ``parents[k] + 1``), by pointer doubling: log2(depth) whole-array steps."""
    up = np.concatenate(([0], parents + 1))
    depth = np.ones(up.size, dtype=np.int64)
    depth[0] = 0
    while np.any(up != 0):
        depth = depth + depth[up] * (up != 0)
        up = up[up]
    return depth


def _check_zero_length_tips(tree: Tree, positive: NDArray[np.bool_], tip_g: Array, start_node: IntArray) -> None:
    """Refuse a killed zero-length tip (it would ground its parent point) and a leaky one at the root."""
    grounded = ~positive & np.isinf(tip_g)
    at_root = ~positive & (tip_g > 0) & np.isfinite(tip_g) & (start_node == 0)
    bad = np.flatnonzero(grounded | at_root)
    if bad.size:
        i = int(bad[0])
        if grounded[i]:
            raise InputError(f"{tree.source}: tip {tree.labels[i]} has zero length and is killed, which would "
                             "ground its parent point; give it a length or seal it")
        raise InputError(f"{tree.source}: tip {tree.labels[i]} has zero length at the root; a "
                         "conductance there is not a tip condition")


def _check_sites(tree: Tree, sites: Sequence[Site]) -> tuple[IntArray, Array]:
    """(piece, distance) of every site, checked and snapped to a piece's ends as :func:`_check_site`
    does one site (the first bad site, in order, raises its message)."""
    sites = list(sites)
    if not all(isinstance(site, Site) for site in sites):
        _check_site(tree, next(site for site in sites if not isinstance(site, Site)))
    try:
        piece = np.fromiter((int(site.piece) for site in sites), dtype=np.int64, count=len(sites))
        x = np.fromiter((float(site.distance) for site in sites), dtype=float, count=len(sites))
    except (TypeError, ValueError, OverflowError):
        for site in sites:
            _check_site(tree, site)
        raise
    lengths = np.asarray(tree.lengths, dtype=float)
    root = piece == -1
    exists = (piece >= 0) & (piece < len(tree))
    ell = lengths[np.where(exists, piece, 0)]
    with np.errstate(invalid="ignore"):
        within = np.isfinite(x) & (-1e-12 * ell <= x) & (x <= ell * (1 + 1e-12))
    bad = np.flatnonzero(~root & ~(exists & within))
    if bad.size:
        _check_site(tree, sites[int(bad[0])])
    x = np.where(root | (x <= 1e-12 * ell), 0.0, np.where(x >= ell * (1 - 1e-12), ell, x))
    return piece, x


# --------------------------------------------------------------------------------------
# the two passes
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class _Solution:
    """Per-piece arrays have shape (pieces, n_s); per-node arrays (pieces + 1, n_s), node 0 the root."""

    y_in: ComplexArray  # input admittance of each piece looking away from the root, S
    total: ComplexArray  # total admittance at each node, S (inf at a killed tip)
    down: ComplexArray  # V(distal)/V(proximal) with the source on the root side
    up: ComplexArray  # V(proximal)/V(distal) with the source on the far side
    pivots: ComplexArray | None  # elimination pivot at each node (for counting)


def _frustum_two_port(net: _Network, q: ComplexArray) -> tuple[ComplexArray, ...]:
    r"""Two-port of each frustum in the Laplace domain, times :math:`e^{-\mathrm{Re}\,u}`, and that factor.

    The steady solution of :func:`cabletheory.tree.frustum_transfer` with :math:`c = 4R_i/R_m`
    replaced by :math:`c\,q^2` (the membrane admittance per area is :math:`(1 + s\tau)/R_m`), so
    every Bessel argument is multiplied by q: :math:`z = 2q\sqrt{c\,d}/|d'|`. Exponentially scaled
    Bessel functions of complex argument (scipy.special.ive, kve) keep it finite.

    Returns (T11, T12 in Ω, T21 in S, T22, e^{-Re u}), each of shape (tapered pieces, n_s).
    """
    from scipy.special import ive, kve

    ell, a, b = net.lengths[:, None], net.proximal[:, None], net.distal[:, None]
    ri = net.axial_resistivity
    slope = (b - a) / ell
    c = 4.0 * ri / net.membrane_resistivity[:, None]
    z0 = 2.0 * np.sqrt(c * a) / np.abs(slope) * q
    z1 = 2.0 * np.sqrt(c * b) / np.abs(slope) * q
    k = np.pi * slope / (4.0 * ri)
    u_re = (net.electrotonic[net.tapered][:, None] * q).real
    # I(z0)K(z1) carries e^{Re z0 - z1}, K(z0)I(z1) carries e^{Re z1 - z0}; both times e^{-Re u}
    e_ik = np.exp(z0.real - z1 - u_re)
    e_ki = np.exp(z1.real - z0 - u_re)
    i1_0, i1_1, k1_0, k1_1 = ive(1, z0), ive(1, z1), kve(1, z0), kve(1, z1)
    p0, p1 = 0.5 * z0 * ive(2, z0), 0.5 * z1 * ive(2, z1)
    q0, q1 = 0.5 * z0 * kve(2, z0), 0.5 * z1 * kve(2, z1)
    ratio = np.sqrt(b / a)
    t11 = 2.0 * ratio * (i1_0 * q1 * e_ik + k1_0 * p1 * e_ki)
    t12 = 2.0 / (k * np.sqrt(a * b)) * (k1_0 * i1_1 * e_ki - i1_0 * k1_1 * e_ik)
    t21 = 2.0 * k * np.sqrt(a * b) * (q0 * p1 * e_ki - p0 * q1 * e_ik)
    t22 = 2.0 / ratio * (p0 * k1_1 * e_ik + q0 * i1_1 * e_ki)
    return t11, t12, t21, t22, np.exp(-u_re) * np.ones_like(q)


@dataclass(frozen=True, slots=True)
class _Inward:
    """The tips-inward pass for a vector of s: what the outward pass and the pivots reuse."""

    s: ComplexArray
    q: ComplexArray  # sqrt(1 + sτ) of each piece
    gq: NDArray[Any]  # G∞·q of each piece (complex)
    th: ComplexArray  # tanh u
    sech: NDArray[Any]  # sech u (complex)
    load: ComplexArray  # admittance hanging on each node from beyond it (tip shunts included)
    y_in: ComplexArray
    down: ComplexArray
    row: IntArray  # row of each piece in the frusta's two-ports (-1 for a cylinder)
    two_port: tuple[ComplexArray, ...] | None  # T11, T12, T21, T22, scale of the frusta


def _inward(net: _Network, s: ComplexArray, *, ratios: bool = True) -> _Inward:
    """Tips inward: each piece's input admittance seen from its parent, and V(distal)/V(proximal)
    (``ratios=False``: the admittances only, as counting needs; ``down`` and ``sech`` are then nan)."""
    s = np.asarray(s, dtype=complex).ravel()
    n = net.size
    taus, which = np.unique(net.tau, return_inverse=True)  # one membrane: q is the same on every piece
    q = np.sqrt(1.0 + taus[:, None] * s[None, :])[which.ravel()]
    u = net.electrotonic[:, None] * q
    th = np.tanh(u)
    if ratios:
        e = np.exp(-u)
        sech = 2.0 * e / (1.0 + e * e)
    else:
        sech = np.full((1, 1), np.nan + 0j)
    gq = net.g_inf[:, None] * q
    load = np.zeros((n + 1, s.size), dtype=complex)
    load[1:] += net.shunt[:, None]
    y_in = np.empty((n, s.size), dtype=complex)
    down = np.empty((n, s.size), dtype=complex) if ratios else np.full((n, s.size), np.nan + 0j)
    row = np.full(n, -1)
    row[net.tapered] = np.arange(net.tapered.size)
    two_port = _frustum_two_port(net, q[net.tapered]) if net.tapered.size else None
    parent_node = net.parent_node
    with np.errstate(divide="ignore", invalid="ignore"):
        for j in range(len(net.spans) - 1, -1, -1):
            a, b = net.spans[j]  # the level's pieces; their distal nodes are a + 1 .. b
            yl = load[a + 1:b + 1]
            g, t = gq[a:b], th[a:b]
            den = g + yl * t
            y = y_in[a:b]
            np.multiply(g, yl + g * t, out=y)
            y /= den
            h = down[a:b]
            if ratios:
                np.multiply(g, sech[a:b], out=h)
                h /= den
            k = net.level_killed[j]
            if k is not None:
                y[k] = g[k] / t[k]
                h[k] = 0.0
            f = net.level_frusta[j]
            if f is not None:  # frusta: the general two-port, (T21 + T22 Y_L)/(T11 + T12 Y_L)
                assert two_port is not None
                t11, t12, t21, t22, scale = two_port
                r = row[a + f]
                den_f = t11[r] + t12[r] * yl[f]
                y[f] = (t21[r] + t22[r] * yl[f]) / den_f
                h[f] = scale[r] / den_f
                kf = net.killed[a + f]
                y[f[kf]] = t22[r[kf]] / t12[r[kf]]
                h[f[kf]] = 0.0
            np.add.at(load, parent_node[a:b], y)
        load[0] += net.soma_conductance * (1.0 + net.soma_tau * s)
    return _Inward(s=s, q=q, gq=gq, th=th, sech=sech, load=load, y_in=y_in, down=down, row=row,
                   two_port=two_port)


def _pivots_of(net: _Network, w: _Inward) -> ComplexArray:
    """The elimination pivot at each node (for counting): the load beyond it plus its piece's own end
    stiffness; inf at a killed tip."""
    with np.errstate(divide="ignore", invalid="ignore"):
        piv = w.load.copy()
        piv[1:] += w.gq / w.th  # the piece's own end stiffness G∞q·coth u
        if w.two_port is not None:  # a frustum's: T11/T12 (current into the distal end, proximal end at rest)
            t11, t12 = w.two_port[0], w.two_port[1]
            piv[net.tapered + 1] += t11 / t12 - (w.gq / w.th)[net.tapered]
        piv[1:][net.killed] = np.inf
    return piv


def _pivots(net: _Network, s: ComplexArray) -> ComplexArray:
    """The elimination pivots alone (tips inward only; :func:`_solve` adds the outward pass)."""
    return _pivots_of(net, _inward(net, s, ratios=False))


def _solve(net: _Network, s: ComplexArray, *, pivots: bool = False) -> _Solution:
    """Both passes for a vector of complex s (1/s); see the module docstring."""
    w = _inward(net, s)
    s, gq, th, sech, load, y_in, row = w.s, w.gq, w.th, w.sech, w.load, w.y_in, w.row
    n = net.size
    killed = net.killed
    with np.errstate(divide="ignore", invalid="ignore"):
        total = np.empty_like(load)
        total[0] = load[0]
        up = np.empty((n, s.size), dtype=complex)
        parent_node = net.parent_node
        for j, (a, b) in enumerate(net.spans):
            g, t = gq[a:b], th[a:b]
            back = total[parent_node[a:b]]
            back -= y_in[a:b]
            den = g + back * t
            np.multiply(g, sech[a:b], out=up[a:b])
            up[a:b] /= den
            beyond = total[a + 1:b + 1]
            np.multiply(g, back + g * t, out=beyond)
            beyond /= den
            beyond += load[a + 1:b + 1]
            f = net.level_frusta[j]
            if f is not None:  # frusta, seen from the distal end: T11 and T22 swap (a reciprocal two-port)
                assert w.two_port is not None
                t11, t12, t21, t22, scale = w.two_port
                r = row[a + f]
                den_f = t22[r] + t12[r] * back[f]
                up[a + f] = scale[r] / den_f
                total[a + f + 1] = load[a + f + 1] + (t21[r] + t11[r] * back[f]) / den_f
        total[1:][killed] = np.inf
    return _Solution(y_in=y_in, total=total, down=w.down, up=up, pivots=_pivots_of(net, w) if pivots else None)


# tips-inward passes kept for reuse (:func:`_inward_kept`): digest of the network and of s -> pass
_KEPT: dict[bytes, _Inward] = {}
_KEPT_VALUES = 3_000_000  # complex values kept at most, about 50 MB
_KEPT_LOCK = threading.Lock()


def _kept_size(w: _Inward) -> int:
    return w.load.size + 4 * w.y_in.size


def _inward_kept(net: _Network, s: ComplexArray) -> _Inward:
    """The tips-inward pass without the voltage ratios (:func:`_inward`), kept for a later call on
    a network with the same fingerprint (the same pieces, membrane and tips, wherever its sites
    are) at the same s: a time course whose stimulus or reading points moved, but not the tree or
    its membrane, does not run it again (:func:`_along` then reads the sites). The least recently
    used passes go first once more than :data:`_KEPT_VALUES` values are kept; the arrays kept are
    read-only."""
    s = np.asarray(s, dtype=complex).ravel()
    key = net.fingerprint + s.tobytes()
    with _KEPT_LOCK:
        found = _KEPT.pop(key, None)
        if found is not None:
            _KEPT[key] = found  # the most recently used last
            return found
    w = _inward(net, s, ratios=False)
    size = _kept_size(w)
    if size > _KEPT_VALUES:
        return w
    for array in (w.q, w.gq, w.th, w.load, w.y_in):
        array.flags.writeable = False
    with _KEPT_LOCK:
        _KEPT[key] = w
        kept = sum(_kept_size(v) for v in _KEPT.values())
        while kept > _KEPT_VALUES:
            oldest = next(iter(_KEPT))
            kept -= _kept_size(_KEPT.pop(oldest))
    return w


def _on_paths(net: _Network, nodes: IntArray) -> IntArray:
    """The pieces on the paths from the root to ``nodes``, in the network's order (parents first)."""
    mark = np.zeros(net.size, dtype=bool)
    current = np.unique(np.asarray(nodes, dtype=np.int64))
    current = current[current > 0]
    while current.size:
        mark[current - 1] = True
        up = net.parent_node[current - 1]
        current = np.unique(up[(up > 0) & ~mark[np.maximum(up - 1, 0)]])
    return np.flatnonzero(mark)


def _along(net: _Network, w: _Inward, pieces: IntArray) -> _Solution:
    """The outward pass and the voltage ratios on ``pieces`` only (closed under parents, e.g.
    :func:`_on_paths` of the sites read): what :func:`_transfer` and :func:`_ratio_from_root`
    need between nodes on those paths, at a fraction of :func:`_solve`'s cost on a large tree.
    Entries off the paths are nan. The same formulas as :func:`_inward` and :func:`_solve`."""
    n, m = net.size, w.s.size
    killed = net.killed
    down = np.full((n, m), np.nan + 0j)
    up = np.full((n, m), np.nan + 0j)
    total = np.full((n + 1, m), np.nan + 0j)
    total[0] = w.load[0]
    if pieces.size == 0:
        return _Solution(y_in=w.y_in, total=total, down=down, up=up, pivots=None)
    with np.errstate(divide="ignore", invalid="ignore"):
        u = net.electrotonic[pieces, None] * w.q[pieces]
        e = np.exp(-u)
        sech = 2.0 * e / (1.0 + e * e)
        g, t = w.gq[pieces], w.th[pieces]
        yl = w.load[pieces + 1]
        h = g * sech / (g + yl * t)  # V(distal)/V(proximal), as in _inward
        h[killed[pieces]] = 0.0
        rows = w.row[pieces]
        f = np.flatnonzero(rows >= 0)
        if f.size:
            assert w.two_port is not None
            t11, t12, t21, t22, scale = w.two_port
            r = rows[f]
            h[f] = scale[r] / (t11[r] + t12[r] * yl[f])
            h[f[killed[pieces[f]]]] = 0.0
        down[pieces] = h
        # root outward, level by level along the paths (as in _solve)
        depth = net.depth[pieces + 1]
        bounds = np.flatnonzero(np.diff(depth)) + 1
        for group in np.split(np.arange(pieces.size), bounds):
            idx = pieces[group]
            gg, tt = g[group], t[group]
            back = total[net.parent_node[idx]] - w.y_in[idx]
            den = gg + back * tt
            up[idx] = gg * sech[group] / den
            total[idx + 1] = w.load[idx + 1] + gg * (back + gg * tt) / den
            fr = np.flatnonzero(rows[group] >= 0)
            if fr.size:  # frusta, seen from the distal end: T11 and T22 swap (a reciprocal two-port)
                assert w.two_port is not None
                t11, t12, t21, t22, scale = w.two_port
                r = rows[group][fr]
                den_f = t22[r] + t12[r] * back[fr]
                up[idx[fr]] = scale[r] / den_f
                total[idx[fr] + 1] = w.load[idx[fr] + 1] + (t21[r] + t11[r] * back[fr]) / den_f
        path_killed = pieces[killed[pieces]]
        total[path_killed + 1] = np.inf
    return _Solution(y_in=w.y_in, total=total, down=down, up=up, pivots=None)


def _chunks(net: _Network, s: ComplexArray) -> list[slice]:
    step = max(1, _CHUNK // max(net.size, 1))
    return [slice(i, min(i + step, s.size)) for i in range(0, s.size, step)]


def _path(net: _Network, a: int, b: int) -> tuple[IntArray, IntArray]:
    """Pieces crossed going up from node a to the common ancestor, and down from it to node b."""
    up: list[int] = []
    down: list[int] = []
    depth = net.depth
    while depth[a] > depth[b]:
        up.append(a - 1)
        a = int(net.parent_node[a - 1])
    while depth[b] > depth[a]:
        down.append(b - 1)
        b = int(net.parent_node[b - 1])
    while a != b:
        up.append(a - 1)
        down.append(b - 1)
        a = int(net.parent_node[a - 1])
        b = int(net.parent_node[b - 1])
    return np.asarray(up, dtype=np.int64), np.asarray(down[::-1], dtype=np.int64)


def _transfer(net: _Network, sol: _Solution, a: int, b: int) -> ComplexArray:
    up, down = _path(net, a, b)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(np.isinf(sol.total[a]), 0.0, 1.0 / sol.total[a])
    return z * np.prod(sol.up[up], axis=0) * np.prod(sol.down[down], axis=0)


def _as_s(s: ArrayLike) -> ComplexArray:
    arr = np.atleast_1d(np.asarray(s, dtype=complex)).ravel()
    if not np.all(np.isfinite(arr)):
        raise InputError("the Laplace variable s must be finite")
    return arr


def input_impedance(cell: PassiveTree, s: ArrayLike, sites: Sequence[Site]) -> ComplexArray:
    r"""Input impedance :math:`Z_{vv}(s) = 1/Y_{tot}(s)` at each site, Ω, shape (n_s, n_sites).

    Parameters
    ----------
    cell : the tree and its membrane
    s : Laplace variable(s), 1/s (complex; :math:`s = 2\pi i f` for a frequency f in Hz)
    sites : where, as :class:`Site` (0 at a killed tip)

    References
    ----------
    Koch & Poggio (1985) J. Neurosci. Methods 12:303; Holmes (1986) Biol. Cybern. 55:115.
    """
    return transfer_impedance(cell, s, None, sites)


def transfer_impedance(cell: PassiveTree, s: ArrayLike, source: Site | None, records: Sequence[Site]) -> ComplexArray:
    r"""Transfer impedance :math:`Z_{ab}(s) = V_b(s)/I_a(s)` from ``source`` to each record site, Ω.

    .. math:: Z_{ab} = Z_{aa}\prod_{\text{path } a\to b}\frac{V_{far}}{V_{near}}

    (module docstring); :math:`Z_{ab} = Z_{ba}`. ``source = None`` gives each site's input
    impedance. Shape (n_s, n_records), s in 1/s.

    References
    ----------
    Butz & Cowan (1974) Biophys. J. 14:661; Koch & Poggio (1985) J. Neurosci. Methods 12:303.
    """
    s_arr = _as_s(s)
    records = list(records)
    net = _network(cell, [*records, *([] if source is None else [source])])
    out = np.empty((s_arr.size, len(records)), dtype=complex)
    for part in _chunks(net, s_arr):
        sol = _solve(net, s_arr[part])
        for j, b in enumerate(net.nodes[:len(records)].tolist()):
            a = b if source is None else int(net.nodes[-1])
            out[part, j] = _transfer(net, sol, a, b)
    return out
