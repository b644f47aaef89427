r"""Electrotonic geometry of a tree and its exact steady-state input conductances.

Electrotonic lengths are exact for frusta (:func:`frustum_electrotonic_length`); input
conductances are combined from the tips inward with the cylinder formula
:math:`G_\infty (B + \tanh L)/(1 + B \tanh L)` or the Bessel-function two-port of a frustum
(:func:`frustum_transfer`). Every loop is iterative and linear in the number of pieces.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..cable import length_constant, semi_infinite_input_conductance
from ..errors import InputError
from .model import Tree

__all__ = ["Layout", "accumulate", "branch_ids", "electrotonic_distances", "exact_input_conductances",
           "frustum_electrotonic_length", "frustum_transfer", "input_admittances", "layout",
           "piece_electrotonic_lengths", "stem_ids", "tip_loads"]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

# a frustum whose end diameters differ by less than this fraction is treated as the cylinder
# with the same electrotonic length: there the Bessel form loses digits to cancellation and the
# cylinder's error (proportional to the taper) is smaller; both stay below about 1e-9 relative
# (measured against 40-digit mpmath in tests/test_tree_taper.py)
_TAPER_THRESHOLD = 3e-7


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


def piece_electrotonic_lengths(tree: Tree, membrane_resistivity: float, axial_resistivity: float) -> Array:
    """Electrotonic length of every piece (exact for frusta, ℓ/λ for cylinders)."""
    return frustum_electrotonic_length(tree.lengths, tree.proximal_diameters, tree.distal_diameters,
                                       membrane_resistivity, axial_resistivity)


def accumulate(parents: IntArray, increments: Array) -> Array:
    """value[i] = value[parent[i]] + increments[i], root = 0 (parents precede children)."""
    p = parents.tolist()
    inc = increments.tolist()
    out = [0.0] * len(p)
    for i, j in enumerate(p):
        out[i] = inc[i] if j < 0 else out[j] + inc[i]
    return np.asarray(out, dtype=float)


def electrotonic_distances(tree: Tree, membrane_resistivity: float, axial_resistivity: float) -> Array:
    """Electrotonic distance from the root node to each piece's distal node."""
    return accumulate(tree.parents, piece_electrotonic_lengths(tree, membrane_resistivity,
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

    A piece loaded at its far end by :math:`G_L` then has input conductance
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


def _piece_maps(lengths: Array, proximal_diameters: Array, distal_diameters: Array, membrane_resistivity: float,
                axial_resistivity: float, q: complex | None = None) -> tuple[Array, Array, Array, Array]:
    """Coefficients (a, b, c, d) with Y_in = (a Y_L + b) / (c Y_L + d) for every piece (steady state,
    or for cylinders at the complex wavenumber ``q``)."""
    if q is None and np.any(proximal_diameters != distal_diameters):
        t11, t12, t21, t22 = frustum_transfer(lengths, proximal_diameters, distal_diameters,
                                              membrane_resistivity, axial_resistivity)
        return t22, t21, t12, t11
    # cylinders: G_in = G∞ (B + tanh L)/(1 + B tanh L) with B = G_L/G∞ (cable.input_conductance);
    # at a frequency G∞ -> G∞ q and L -> qL
    g_inf = semi_infinite_input_conductance(membrane_resistivity, axial_resistivity, distal_diameters)
    big_l = frustum_electrotonic_length(lengths, proximal_diameters, distal_diameters, membrane_resistivity,
                                        axial_resistivity)
    if q is not None:
        y_inf, th = g_inf * q, np.tanh(big_l * q)
        one_c = np.ones_like(th)
        return one_c, y_inf * th, th / y_inf, one_c
    t = np.tanh(big_l)
    one = np.ones_like(t)
    return one, g_inf * t, t / g_inf, one


def tip_loads(tree: Tree, tip_conductance: float | None = None) -> Array:
    """Conductance to rest at each piece's distal node, S: the tree's own tip ends, or
    ``tip_conductance`` at every tip when given (0 sealed, inf killed); 0 where a piece has children."""
    if tip_conductance is None:
        return tree.tip_conductances()
    has_child = np.zeros(len(tree), dtype=bool)
    has_child[tree.parents[tree.parents >= 0]] = True
    return np.where(has_child, 0.0, float(tip_conductance))


def input_admittances(parents: ArrayLike, lengths: ArrayLike, proximal_diameters: ArrayLike,
                      distal_diameters: ArrayLike, membrane_resistivity: float, axial_resistivity: float, *,
                      end_conductances: ArrayLike | None = None, frequency: float = 0.0,
                      time_constant: float = 0.0) -> tuple[NDArray[np.float64] | NDArray[np.complex128], complex]:
    r"""Exact input admittance of every piece looking away from the root, and of the root node.

    The one tips-inward solver for a tree's input resistance: the audit
    (:func:`exact_input_conductances`) and the discretisation advice
    (:mod:`cabletheory.verify.advice`) both use it. Pieces are combined from the tips inward
    (parents precede children): the load of a piece is its far-end conductance (0 sealed, ``inf``
    killed, S) plus its children's input admittances, and a cylinder presents at its near end

    .. math:: Y_{in} = Y_\infty \frac{Y_L + Y_\infty \tanh qL}{Y_\infty + Y_L \tanh qL},
              \qquad Y_\infty = G_\infty q,\; q = \sqrt{1 + i\omega\tau_m}

    (q = 1 at steady state, :func:`cabletheory.cable.input_conductance`); a frustum (proximal and
    distal diameters differ) uses the steady two-port of :func:`frustum_transfer`. The loop visits
    each piece once (linear time, no recursion).

    Parameters
    ----------
    parents : parent of each piece, -1 at the root node (parents precede children)
    lengths, proximal_diameters, distal_diameters : m
    membrane_resistivity : Rm, Ω·m²; axial_resistivity : Ri, Ω·m
    end_conductances : S, added to each piece's far-end load (default 0: sealed tips)
    frequency : Hz (cylinders only when not 0); time_constant : τm = Rm·Cm, s (used with ``frequency``)

    Returns
    -------
    (Y_in of each piece in S, their sum at the root node in S): real at steady state, complex at
    a frequency; the soma is not included.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491; Rall & Rinzel (1973) Biophys. J. 13:648; Koch C (1999)
    ch. 3 (sinusoidal inputs, recalled from memory).
    """
    parent = np.asarray(parents, dtype=np.int64).ravel()
    n = parent.size
    ell = np.broadcast_to(np.asarray(lengths, dtype=float), (n,))
    d0 = np.broadcast_to(np.asarray(proximal_diameters, dtype=float), (n,))
    d1 = np.broadcast_to(np.asarray(distal_diameters, dtype=float), (n,))
    q: complex | None = None
    if frequency != 0:
        if np.any(d0 != d1):
            raise InputError("the input admittance at a frequency needs cylinders; tapered pieces are steady only")
        q = complex(np.sqrt(1.0 + 2j * math.pi * frequency * time_constant))  # cable.wavenumber
    a, b, c, d = (v.tolist() for v in _piece_maps(ell, d0, d1, membrane_resistivity, axial_resistivity, q))
    parent_list = parent.tolist()
    inf = math.inf
    load: list = [0.0] * n if end_conductances is None else np.broadcast_to(
        np.asarray(end_conductances, dtype=float), (n,)).tolist()
    y_in: list = [0.0] * n
    root: complex = 0.0
    for i in range(n - 1, -1, -1):
        yl = load[i]
        # a killed (infinite) load gives the limit a/c; a zero-length killed piece shorts its parent
        y = (a[i] * yl + b[i]) / (c[i] * yl + d[i]) if yl != inf else (a[i] / c[i] if c[i] != 0 else inf)
        y_in[i] = y
        p = parent_list[i]
        if p >= 0:
            load[p] += y
        else:
            root += y
    return np.asarray(y_in, dtype=float if q is None else complex), root


def exact_input_conductances(tree: Tree, membrane_resistivity: float, axial_resistivity: float, *,
                             killed_tips: bool = False, tip_conductance: float | None = None
                             ) -> tuple[Array, float]:
    r"""Exact steady input conductance of every piece looking away from the root, and of the root.

    :func:`input_admittances` at steady state. Pieces are combined from the tips inward: the load
    of a piece is the sum of its children's input conductances, and at a tip its end conductance
    (0 sealed, infinite killed, or leaky: ``tree.ends``, or ``tip_conductance`` in S at every tip
    when given; ``killed_tips=True`` is ``tip_conductance=inf``), and

    .. math:: G_{in} = G_\infty \frac{B + \tanh L}{1 + B\tanh L},\qquad B = G_{load}/G_\infty

    for a cylinder (:func:`cabletheory.cable.input_conductance`; Rall 1959), or the two-port of
    :func:`frustum_transfer` for a frustum.

    Returns
    -------
    (G_in of each piece in S, total conductance of the dendrites at the root node in S);
    the soma is not included.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491; Rall & Rinzel (1973) Biophys. J. 13:648.
    """
    ends = tip_loads(tree, math.inf if killed_tips else tip_conductance)
    distal = tree.distal_diameters
    proximal = tree.proximal_diameters if tree.geometry == "frusta" else distal
    g_in, root = input_admittances(tree.parents, tree.lengths, proximal, distal, membrane_resistivity,
                                   axial_resistivity, end_conductances=ends)
    return np.asarray(g_in, dtype=float), float(root.real)



# --------------------------------------------------------------------------------------
# the layout every job of the analysis shares
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Layout:
    """One tree at one membrane: its connectivity and electrotonic geometry, one entry per piece, SI.

    Attributes
    ----------
    tree : the tree
    electrotonic_lengths : L of each piece (exact for frusta)
    start, end : electrotonic distance X of each piece's proximal and distal node from the root
    path_lengths : distance along the tree from the root node to each distal node, m
    areas : lateral membrane area of each piece, m² (frusta: π (d0 + d1)/2 ℓ)
    children : number of children of each piece
    stems : index of the stem piece (attached to the root) each piece descends from
    branches : index of the branch (unbranched run of pieces) each piece belongs to
    """

    tree: Tree
    electrotonic_lengths: Array
    start: Array
    end: Array
    path_lengths: Array
    areas: Array
    children: IntArray
    stems: IntArray
    branches: IntArray

    @property
    def branch_count(self) -> int:
        return int(self.branches.max()) + 1 if self.branches.size else 0


def branch_ids(parents: IntArray, children: IntArray) -> IntArray:
    """Branch index of each piece: a new branch starts at the root and after every branch point."""
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


def stem_ids(parents: IntArray) -> IntArray:
    """Index of the stem piece (the one attached to the root node) above each piece."""
    p = parents.tolist()
    out = [0] * len(p)
    for i, j in enumerate(p):
        out[i] = i if j < 0 else out[j]
    return np.asarray(out, dtype=np.int64)


def layout(tree: Tree, membrane_resistivity: float, axial_resistivity: float) -> Layout:
    """Electrotonic lengths and distances, path lengths, areas, stems and branches of ``tree``.

    Parameters
    ----------
    tree : the tree
    membrane_resistivity : Rm, Ω·m² (uniform)
    axial_resistivity : Ri, Ω·m (uniform)

    References
    ----------
    Rall W (1962) Ann. N.Y. Acad. Sci. 96:1071 (electrotonic distance as the integral of dx/λ;
    recalled from memory).
    """
    parents = tree.parents
    n = len(tree)
    dx = piece_electrotonic_lengths(tree, membrane_resistivity, axial_resistivity)
    end = accumulate(parents, dx)
    start = np.where(parents >= 0, end[np.maximum(parents, 0)], 0.0)  # exactly the parent's end
    children = np.bincount(parents[parents >= 0], minlength=n).astype(np.int64)
    return Layout(tree=tree, electrotonic_lengths=dx, start=start, end=end,
                  path_lengths=accumulate(parents, tree.lengths),
                  areas=np.pi * 0.5 * (tree.proximal_diameters + tree.distal_diameters) * tree.lengths,
                  children=children, stems=stem_ids(parents), branches=branch_ids(parents, children))
