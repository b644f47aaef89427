r"""Rall's equivalent cylinder and the equivalent-cable profile of a tree.

* **equivalent cylinder**: diameter :math:`D = (\sum_{stems} d^{3/2})^{2/3}`, membrane area
  equal to the tree's (Rall's cylinder preserves it, because membrane area per unit X is
  proportional to :math:`d^{3/2}`); for a tree that meets the conditions its electrotonic length
  is the common tip distance;
* **equivalent cable**: the profile :math:`\sum d^{3/2}` over the tree against electrotonic
  distance from the root, which is flat for a reducible tree.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..cable import input_conductance, length_constant, semi_infinite_input_conductance
from ..errors import InputError
from .geometry import Layout

__all__ = ["EquivalentCable", "EquivalentCylinder", "equivalent_cable", "equivalent_cylinder",
           "reduced_input_conductance", "sample_profile", "trunk_weight"]

Array = NDArray[np.float64]


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
    For frusta each piece contributes its mean (area-preserving) value.
    """

    positions: Array  # X, dimensionless, increasing, from 0 to the farthest tip
    diameter_sum: Array  # Σ d^{3/2}, m^{3/2}
    trunk: float  # D^{3/2} of the equivalent cylinder, m^{3/2}

    @property
    def equivalent_diameters(self) -> Array:
        """(Σ d^{3/2})^{2/3} on each interval, m."""
        return self.diameter_sum ** (2.0 / 3.0)



def trunk_weight(lay: Layout) -> float:
    r""":math:`\sum_{stems} d^{3/2}` (m^{3/2}), the proximal diameters of the pieces on the root node."""
    t = lay.tree
    return float(np.sum(t.proximal_diameters[t.parents < 0] ** 1.5))


def equivalent_cylinder(lay: Layout, membrane_resistivity: float, axial_resistivity: float) -> EquivalentCylinder:
    r"""Rall's equivalent cylinder of the tree: :math:`D = (\sum_{stems} d^{3/2})^{2/3}`, same membrane area.

    Parameters
    ----------
    lay : the tree's layout (:func:`~cabletheory.tree.geometry.layout`)
    membrane_resistivity : Rm, Ω·m²; axial_resistivity : Ri, Ω·m

    References
    ----------
    Rall W (1964) in Neural Theory and Modeling (Reiss, ed.), Stanford Univ. Press, 73–97.
    """
    diameter = trunk_weight(lay) ** (2.0 / 3.0)
    lam = float(length_constant(membrane_resistivity, axial_resistivity, diameter))
    length = float(lay.areas.sum()) / (math.pi * diameter)
    g_inf = float(semi_infinite_input_conductance(membrane_resistivity, axial_resistivity, diameter))
    return EquivalentCylinder(diameter=diameter, length=length, electrotonic_length=length / lam,
                              length_constant=lam, membrane_area=math.pi * diameter * length,
                              semi_infinite_input_resistance=1.0 / g_inf)


def reduced_input_conductance(cylinder: EquivalentCylinder, membrane_resistivity: float, axial_resistivity: float,
                              end_conductance_ratio: float) -> float:
    r"""Input conductance (S) of the equivalent cylinder with end-conductance ratio B (0 sealed, ∞ killed).

    .. math:: G_{in} = G_\infty \frac{B + \tanh L}{1 + B \tanh L}

    (:func:`cabletheory.cable.input_conductance`; Rall 1959, Exp. Neurol. 1:491).
    """
    g_inf = float(semi_infinite_input_conductance(membrane_resistivity, axial_resistivity, cylinder.diameter))
    return float(input_conductance(g_inf, cylinder.electrotonic_length, end_conductance_ratio))


def equivalent_cable(lay: Layout, membrane_resistivity: float, axial_resistivity: float) -> EquivalentCable:
    r""":math:`\sum d^{3/2}` against X over the whole tree, beside the trunk's :math:`D^{3/2}` (m^{3/2}).

    A frustum contributes the constant that preserves its membrane area over its electrotonic
    length: :math:`\sqrt{4R_i/R_m}\,A/(\pi L)`.
    """
    dx = lay.electrotonic_lengths
    scale = math.sqrt(4.0 * axial_resistivity / membrane_resistivity)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean_w = np.where(dx > 0, scale * lay.areas / np.pi / np.where(dx > 0, dx, 1.0), 0.0)
    positions, values = _profile(lay.start, lay.end, mean_w)
    return EquivalentCable(positions=positions, diameter_sum=values, trunk=trunk_weight(lay))


def _profile(x_start: Array, x_end: Array, weights: Array) -> tuple[Array, Array]:
    """Step function Σ w over pieces covering X (half-open [start, end))."""
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


