r"""The slowest time constants of a passive tree, counted and bracketed, and what the soma sees of them.

With :math:`s = -\lambda` real, the number of decay rates of the whole tree below λ is the number
of negative pivots of the tips-inward elimination of :mod:`cabletheory.tree_laplace` plus, for every
piece, the number of its own rates with both ends held at rest,
:math:`\#\{n \ge 1: (1 + (n\pi/L)^2)/\tau < \lambda\}` for a cylinder (Wittrick & Williams 1971
[WittrickWilliams1971], recalled from memory [MEM]). Frusta, whose held rates have no closed form,
are first cut short enough that they have none below the largest rate counted (a Rayleigh bound).
That integer count brackets every rate, repeated ones included, with no poles to step over; the
points counted are chosen by Newton's method on the pole-free product of the pivots and the held
determinants (on trees of cylinders), with bisection as the fallback, so a bracket closes in a few
counts but is only ever moved by the count (:func:`_bisect_rates`). A rate is seen at the root
(soma) when the root admittance vanishes there, and its residue, hence the coefficient of a current
step at the soma, follows from the admittance's slope (a complex step, Squire & Trapp 1998
[SquireTrapp1998]).

The model is passive, linear and uniform within each piece (:data:`cabletheory.PASSIVE_CAVEAT`).

References
----------
Wittrick WH & Williams FW (1971) Q. J. Mech. Appl. Math. 24:263 [WittrickWilliams1971] [MEM].
Rall W (1969) Biophys. J. 9:1483 [Rall1969] (τ_n and C_n of a step at the soma).
Squire W & Trapp G (1998) SIAM Rev. 40:110 [SquireTrapp1998].
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import ConvergenceError, InputError
from .tree_laplace import (
    _TAPER_THRESHOLD,
    PassiveTree,
    Site,
    _inward,
    _Network,
    _network,
    _per_piece,
    _pivots,
    root_site,
    transfer_impedance,
)

__all__ = ["TreeModes", "eigenvalue_count", "root_modes"]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

_SAME_RATE = 1e-9  # rates closer than this (relative) are one rate of several modes


def _count(net: _Network, rates: Array) -> IntArray:
    """Number of decay rates of the tree (1/s) strictly below each of ``rates`` (Wittrick-Williams)."""
    return _count_and_slope(net, rates, slope=False)[0]


def _count_and_slope(net: _Network, rates: Array, *, slope: bool = True) -> tuple[IntArray, Array]:
    r"""The count of :func:`_count` at each rate and, for a tree of cylinders, :math:`d\ln|D|/ds` at
    :math:`s = -\lambda`, where :math:`D = \prod_k p_k \prod_i \sinh(u_i)/u_i` is the product of the
    elimination pivots and of every piece's determinant with both ends at rest: a function with no
    poles whose zeros are the tree's decay rates, of sign :math:`(-1)^{count}` (Wittrick & Williams
    1971 [MEM]). The pivots' slopes come from one complex step (Squire & Trapp 1998). The slope is
    nan with ``slope=False`` and for a tree with frusta (their Bessel functions keep only absolute
    accuracy in the imaginary part, too little for a step that leaves the count as it is).
    """
    rates = np.asarray(rates, dtype=float)
    slope = slope and net.tapered.size == 0
    eta = 1e-20 * np.maximum(rates, 1.0 / float(net.tau.max()))  # leaves the real parts (the count) as they are
    piv = _pivots(net, -rates + 1j * eta if slope else -rates.astype(complex))  # tips inward only
    finite = np.isfinite(piv)
    negative = (finite & (piv.real < 0)).sum(axis=0)
    k = np.sqrt(np.maximum(net.tau[:, None] * rates[None, :] - 1.0, 0.0))
    held = np.floor(net.electrotonic[:, None] * k / math.pi - 1e-15).clip(min=0)
    if net.tapered.size:
        # frusta are cut short enough (_short_frusta) that none has a held rate below these rates
        if np.any(np.max(rates) * net.tau[net.tapered] - 1.0 >= _held_floor(net)):
            raise ConvergenceError("a frustum is too long for the rates counted; cut it shorter")
        held[net.tapered] = 0.0
    count = (negative + held.sum(axis=0)).astype(np.int64)
    if not slope:
        return count, np.full(rates.size, math.nan)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        pivots = np.where(finite, piv.imag / (eta * piv.real), 0.0).sum(axis=0)
        # d ln(sinh u / u)/ds = (coth u - 1/u) L τ/(2q), u = Lq, q = sqrt(1 + τs); a series near u = 0.
        # At s = -λ, q² = x = 1 - τλ is real: q = √x real for x > 0, q = i√(-x) for x < 0, where
        # with θ = L√(-x) the term is -(cot θ - 1/θ) L τ/(2√(-x)); all in real arithmetic
        tau, ell = net.tau[:, None], net.electrotonic[:, None]
        x = 1.0 - tau * rates[None, :]
        u2 = ell**2 * x  # u² (real)
        small = np.abs(u2) < 1e-4  # |u| < 1e-2
        root = np.sqrt(np.where(small, 1.0, np.abs(x)))
        u = ell * root  # |u| away from the series' range
        grows = x > 0
        exact = np.where(grows, 1.0 / np.tanh(u) - 1.0 / u, -(1.0 / np.tan(u) - 1.0 / u)) * ell * tau / (2.0 * root)
        series = 0.5 * ell**2 * tau * (1.0 / 3.0 - u2 / 45.0 + 2.0 * u2**2 / 945.0)
        pieces = np.where(small, series, exact).sum(axis=0)
    return count, pivots + pieces


def _held_floor(net: _Network) -> Array:
    r"""Lower bound of μ = λτ − 1 for each frustum's first rate with both ends at rest.

    With both ends at rest, :math:`-(d^2V')' = \mu\,c\,d\,V` (:math:`c = 4R_i/R_m`); the Rayleigh
    quotient gives :math:`\mu_1 \ge d_{min}^2\pi^2/(c\,d_{max}\ell^2)` [CP].
    """
    lo, hi = np.minimum(net.proximal, net.distal), np.maximum(net.proximal, net.distal)
    c = 4.0 * net.axial_resistivity / net.membrane_resistivity
    return lo**2 * math.pi**2 / (c * hi * net.lengths**2)


def _short_frusta(cell: PassiveTree, rate: float) -> list[Site]:
    """Cuts that leave no frustum with a rate held at both ends below ``rate`` (1/s)."""
    tree = cell.tree
    n = len(tree)
    d0, d1 = np.asarray(tree.proximal_diameters), np.asarray(tree.distal_diameters)
    ell = np.asarray(tree.lengths, dtype=float)
    rm = _per_piece(cell.membrane_resistivity, n, "membrane_resistivity")
    mu = np.maximum(rate * cell.time_constants - 1.0, 0.0)
    c = 4.0 * float(cell.axial_resistivity) / rm
    # pieces m with (ℓ/m)² < d_min²π²/(c d_max μ), with 10 % to spare
    need = np.ceil(1.1 * ell * np.sqrt(mu * c * np.maximum(d0, d1)) / (math.pi * np.minimum(d0, d1)))
    tapered = np.abs(d1 - d0) > _TAPER_THRESHOLD * 0.5 * (d0 + d1)
    sites = []
    for i in np.flatnonzero(tapered & (need > 1)).tolist():
        m = int(need[i])
        sites += [Site(i, ell[i] * k / m) for k in range(1, m)]
    return sites


def eigenvalue_count(cell: PassiveTree, rates: ArrayLike) -> IntArray:
    """How many decay rates 1/τ_n of the whole tree lie below each given rate (1/s).

    References
    ----------
    Wittrick & Williams (1971) Q. J. Mech. Appl. Math. 24:263 [MEM] (module docstring).
    """
    r = np.atleast_1d(np.asarray(rates, dtype=float))
    if not (np.all(np.isfinite(r)) and np.all(r >= 0)):
        raise InputError("rates must be finite and >= 0 (1/s)")
    return _count(_network(cell, _short_frusta(cell, float(r.max(initial=0.0)))), r)


@dataclass(frozen=True, slots=True)
class TreeModes:
    """The slowest modes of a tree seen at the root, SI.

    Attributes
    ----------
    time_constants : τ_n of the modes with a voltage at the root, slowest first, s
    coefficients : C_n of the root's step response, :math:`V/V_\\infty = 1 - \\sum C_n e^{-t/\\tau_n}`
    residues : residue of the root input impedance :math:`Z(s)` at :math:`s = -1/\\tau_n`, Ω/s
    hidden : time constants of the whole tree's modes with no voltage at the root (in the same
        range), s, each listed once per multiplicity
    multiplicities : how many independent modes share each visible τ_n
    """

    time_constants: Array
    coefficients: Array
    residues: Array
    hidden: Array
    multiplicities: IntArray


def _bisect_rates(net: _Network, indices: IntArray, lo: Array, hi: Array) -> tuple[Array, Array]:
    r"""Brackets [lo, hi] of the decay rates number ``indices`` (0 the slowest), each narrowed on the count
    until hi - lo <= 4e-16 hi; the given brackets must hold their rates (count(lo) <= index < count(hi)).

    Every bracket is narrowed by the count alone, so it always holds its rate: first on one grid of
    the whole range, then, on a tree of cylinders, at points chosen by Newton's method on :math:`\ln|D|`
    (:func:`_count_and_slope`) with a point on either side of the Newton point at the distance of the
    last step, which closes the bracket as fast as Newton converges; a point far outside the bracket, or
    a step that did not halve it, falls back to the midpoint (bisection). Only the brackets still open
    are counted at each step.
    """
    lo, hi = lo.astype(float), hi.astype(float)
    if lo.size:  # first, counts on one grid of the whole range, four points per rate sought
        grid = np.linspace(float(lo.min()), float(hi.max()), 4 * lo.size + 2)[1:-1]
        counts = _count(net, grid)
        below = counts[None, :] <= indices[:, None]
        start = np.where(below, grid[None, :], -np.inf).max(axis=1, initial=-np.inf)
        end = np.where(~below, grid[None, :], np.inf).min(axis=1, initial=np.inf)
        tighter = np.maximum(lo, start) < np.minimum(hi, end)  # (a count that is not monotone changes nothing)
        lo = np.where(tighter, np.maximum(lo, start), lo)
        hi = np.where(tighter, np.minimum(hi, end), hi)
    guess = np.full(lo.size, math.nan)  # the Newton point for the next step
    step = np.full(lo.size, math.inf)  # the size of the last Newton step
    for _ in range(400):
        open_ = np.flatnonzero(hi - lo > 4e-16 * hi)
        if open_.size == 0:
            break
        low, high, g = lo[open_], hi[open_], guess[open_]
        # a Newton point on or just beyond an end of the bracket moves a few rounding units inside it
        newton = np.isfinite(g) & (g > low - (high - low)) & (g < high + (high - low))
        inside = np.minimum(2.3e-16 * high, 0.25 * (high - low))
        centre = np.where(newton, np.clip(g, low + inside, high - inside), 0.5 * (low + high))
        reach = np.where(newton, np.maximum(np.minimum(np.abs(step[open_]), 0.25 * (high - low)), 2.3e-16 * centre),
                         0.0)
        owner = np.concatenate((np.arange(open_.size), *(np.flatnonzero(newton),) * 2))
        points = np.concatenate((centre, (centre - reach)[newton], (centre + reach)[newton]))
        counts, slopes = _count_and_slope(net, points)
        above = counts > indices[open_][owner]
        new_lo, new_hi = low.copy(), high.copy()
        np.minimum.at(new_hi, owner[above], points[above])
        np.maximum.at(new_lo, owner[~above], points[~above])
        with np.errstate(divide="ignore", invalid="ignore"):
            ahead = centre + 1.0 / slopes[:open_.size]  # λ - D/(dD/dλ), with d/dλ = -d/ds
        halved = new_hi - new_lo <= 0.5 * (high - low)
        guess[open_] = np.where(halved | ~newton, ahead, math.nan)
        step[open_] = np.abs(ahead - centre)
        lo[open_], hi[open_] = new_lo, new_hi
    return lo, hi


def _classified(net: _Network, lo: Array, hi: Array, z0: float, tau_max: float
                ) -> tuple[Array, IntArray, NDArray[np.bool_], Array]:
    """The distinct rates bracketed by [lo, hi] (the slowest rates of the tree, in order): (rates,
    multiplicities, seen at the root, Y'(s_n))."""
    rates = 0.5 * (lo + hi)
    distinct: list[float] = []
    mult: list[int] = []
    for r in rates.tolist():
        if distinct and abs(r - distinct[-1]) <= _SAME_RATE * r:
            mult[-1] += 1
        else:
            distinct.append(r)
            mult.append(1)
    rate = np.asarray(distinct)
    # a complex step: exact for numpy's elementary functions at any size; the Bessel functions of a
    # frustum near the imaginary axis keep only absolute accuracy in their imaginary part, so there
    # the step is 1e-7 (its O(step²) error is below 1e-13)
    step = (1e-7 if net.tapered.size else 1e-20) * np.maximum(rate, 1.0 / tau_max)
    y = _inward(net, -rate + 1j * step, ratios=False).load[0]  # the root's total admittance
    # at a visible rate Y vanishes (to the bisection's precision); at a hidden one a branch's
    # admittance has a pole there, so |Y| is huge: the steady conductance separates the two
    with np.errstate(invalid="ignore"):
        visible = np.abs(y.real) <= 1e-3 / z0
    return rate, np.asarray(mult, dtype=np.int64), visible, y.imag / step


def root_modes(cell: PassiveTree, count: int = 3, *, search: int = 400) -> TreeModes:
    r"""The ``count`` slowest modes with a voltage at the root: τ_n, step coefficients, residues.

    The slowest decay rates of the tree are bracketed on :func:`eigenvalue_count` (so multiple
    rates of symmetric trees are found, each once per multiplicity): first ``count`` of them, then,
    while fewer than ``count`` are seen at the root, twice as many (the brackets found are kept); a
    rate shared by several modes is always taken whole. A rate is seen at
    the root when the root admittance :math:`Y(s)` vanishes at :math:`s = -1/\tau_n`; the root
    impedance's residue there is :math:`r_n = 1/Y'(s_n)` (Y' by a complex step, Squire &
    Trapp 1998), and the coefficient of a current step at the root is
    :math:`C_n = r_n\tau_n / Z(0)`.

    Parameters
    ----------
    count : how many visible modes, >= 1
    search : largest number of tree modes examined (hidden ones included)

    References
    ----------
    Wittrick & Williams (1971) [MEM]; Rall (1969) Biophys. J. 9:1483 (C_n, τ_n of a step);
    Squire W & Trapp G (1998) SIAM Rev. 40:110 (complex-step derivative).
    """
    if not (isinstance(count, int) and count >= 1):
        raise InputError(f"count must be a whole number >= 1, got {count!r}")
    tau_max = max(float(cell.time_constants.max()), cell.soma_constants()[1])
    z0 = float(transfer_impedance(cell, [0.0], None, [root_site()])[0, 0].real)
    high = 2.0 / tau_max

    def counted(rate: float) -> tuple[_Network, int]:
        net = _network(cell, _short_frusta(cell, rate))
        return net, int(_count(net, np.array([rate]))[0])

    net, total = counted(high)
    lo, hi = np.zeros(0), np.zeros(0)  # brackets of the slowest rates, slowest first
    wanted = min(count, search)  # how many of the slowest rates to bracket, hidden ones included
    while True:
        while True:
            while total < wanted and high < 1e30:
                high *= 2.0
                net, total = counted(high)
            wanted = min(wanted, total)
            if wanted > lo.size:  # the new rates lie above those bracketed already, below `high`
                new = np.arange(lo.size, wanted)
                start = np.full(new.size, lo[-1] if lo.size else 0.0)
                more_lo, more_hi = _bisect_rates(net, new, start, np.full(new.size, high))
                lo, hi = np.concatenate((lo, more_lo)), np.concatenate((hi, more_hi))
            # a multiple rate is taken whole: the rates within _SAME_RATE of the last one join it
            edge = float(hi[-1]) / (1.0 - _SAME_RATE) if hi.size else 0.0
            if edge >= high:
                if high >= 1e30:
                    break
                high *= 2.0
                net, total = counted(high)
                continue
            within = min(int(_count(net, np.array([edge]))[0]), search)
            if within <= wanted:
                break
            wanted = within
        rate, mult, visible, slope = _classified(net, lo, hi, z0, tau_max)
        seen = int(visible.sum())
        if seen >= count or wanted >= search or high >= 1e30:
            break
        wanted = min(search, max(2 * wanted, wanted + count - seen))  # hidden modes: look further
    taus = 1.0 / rate
    vis = np.flatnonzero(visible)[:count]
    residues = 1.0 / slope[vis]
    hidden = np.repeat(taus, mult)[np.repeat(~visible, mult)]
    return TreeModes(time_constants=taus[vis], coefficients=residues * taus[vis] / z0, residues=residues,
                     hidden=hidden[hidden >= (taus[vis].min() if vis.size else 0.0)],
                     multiplicities=np.asarray(mult, dtype=np.int64)[vis])
