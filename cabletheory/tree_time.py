r"""Time courses, frequency responses, centroid delays and the cost of reduction for passive trees.

The Laplace-domain solution of :mod:`cabletheory.tree_laplace` is turned into time courses by
numerical inversion of the Bromwich integral on hyperbolic contours shared by windows of times
(:func:`cabletheory.contour.invert_windowed`; Weideman & Trefethen 2007), so that the tree is
evaluated at a few dozen values of s for any number of times. Each value's error estimate is the
contour's error model times the larger of the reference voltage (the final voltage of a step of
the same amplitude at the stimulus site) and the transform's own constant, measured by summing
each window again on every other node, plus the rounding of the sum; a window's nodes grow until
the estimate meets the tolerance (or a cap, named in the notes). tests/test_tree_time.py checks
it against the same recursion in mpmath inverted with mpmath's own Talbot routine.

Every result assumes a passive, linear membrane (:data:`cabletheory.PASSIVE_CAVEAT`).

References
----------
Weideman JAC & Trefethen LN (2007) Parabolic and hyperbolic contours for computing the Bromwich
integral. Math. Comp. 76:1341-1356 [WeidemanTrefethen2007] (the contour and its error analysis).
Agmon-Snir H & Segev I (1993) Signal delay and input synchronization in passive dendritic
structures. J. Neurophysiol. 70:2066-2085 [AgmonSnirSegev1993] (centroid delays).
Zador AM, Agmon-Snir H & Segev I (1995) J. Neurosci. 15:1669 [ZadorAgmonSnirSegev1995] (the
morphoelectrotonic transform: log attenuation and delay over a tree).
Holmes WR (1986) Biol. Cybern. 55:115 [Holmes1986] (inverting the tree's transform numerically).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .case import AlphaCurrent, CurrentPulse, CurrentStep, VoltageStep, shape_of
from .contour import invert_windowed
from .errors import InputError
from .tree_laplace import (
    PassiveTree,
    Site,
    _along,
    _inward,
    _inward_kept,
    _Network,
    _network,
    _on_paths,
    _path,
    _Solution,
    _solve,
    _transfer,
    node_sites,
    root_site,
    transfer_impedance,
)
from .tree_modes import TreeModes, root_modes

if TYPE_CHECKING:
    from .cable import Cylinder
    from .case import BallAndStick
    from .transient import Response
    from .tree import TreeReport

__all__ = [
    "ElectrotonicMap",
    "FrequencyResponse",
    "ReductionCost",
    "ReductionModes",
    "TreeResponse",
    "electrotonic_map",
    "frequency_response",
    "reduction_cost",
    "reduction_modes",
    "tree_response",
]

Array = NDArray[np.float64]
ComplexArray = NDArray[np.complex128]
Stimulus = CurrentStep | CurrentPulse | AlphaCurrent | VoltageStep


# --------------------------------------------------------------------------------------
# time courses
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class TreeResponse:
    """Voltage (deviation from rest) at a set of tree sites over time, SI.

    Attributes
    ----------
    times : s, (nT,)
    sites : where recorded
    stimulus_site : where the current (or clamp, at the root) is applied
    voltage : V, (nT, n_sites)
    errors : V, estimated error of each value (tested to hold against mpmath)
    error_bound : V, the largest of ``errors``
    reference_voltage : V, the scale of the tolerance: the final voltage at the stimulus site for
        a current step of the same amplitude (peak for an alpha current), or the clamp step
    tolerance : requested error relative to ``reference_voltage``
    steady_state : V, the final voltage at each site for a step (None for a pulse or alpha)
    method : how the values were computed
    notes : plain-language remarks, including any times whose error estimate stayed above the
        tolerance at the most contour nodes allowed
    """

    times: Array
    sites: tuple[Site, ...]
    stimulus_site: Site
    voltage: Array
    errors: Array
    error_bound: float
    reference_voltage: float
    tolerance: float
    steady_state: Array | None
    method: str
    notes: tuple[str, ...] = field(default_factory=tuple)


def _current_shape(stimulus: Stimulus) -> tuple[float, Callable[[ComplexArray], ComplexArray]]:
    """(amplitude in A, Laplace transform of the current per ampere)."""
    if isinstance(stimulus, AlphaCurrent):
        tp = stimulus.time_to_peak
        return stimulus.peak, lambda s: math.e / (tp * (s + 1.0 / tp) ** 2)
    if isinstance(stimulus, CurrentStep | CurrentPulse):
        return stimulus.amplitude, lambda s: 1.0 / s
    raise InputError(f"a {shape_of(stimulus)} is not a current stimulus")


def tree_response(cell: PassiveTree, stimulus: Stimulus, times: ArrayLike, at: Site,
                  record: Sequence[Site], *, tolerance: float = 1e-10, reuse: bool = False) -> TreeResponse:
    r"""Voltage at ``record`` sites for a current step, pulse or alpha current at ``at`` (or a clamp).

    .. math:: V_b(s) = Z_{ab}(s)\,I(s),\qquad I(s) = \frac{I_0}{s}\ \text{(step)},\quad
              \frac{e\,I_{peak}}{t_p (s + 1/t_p)^2}\ \text{(alpha)};

    a pulse of duration D is the step response minus itself delayed by D. A voltage clamp
    (:class:`~cabletheory.transient.VoltageStep`) holds the root (soma) at V0 from t = 0:
    :math:`V_b(s) = (V_0/s)\prod_{root\to b} V_{far}/V_{near}`, and the soma's own membrane
    then plays no part.

    Parameters
    ----------
    cell : the tree
    stimulus : from :mod:`cabletheory.transient`; its ``position`` must be 0 (the site is ``at``)
    times : s (t <= 0 gives rest)
    at : stimulus site (:class:`~cabletheory.tree_laplace.Site`); the root for a clamp
    record : recording sites
    tolerance : error allowed, relative to the reference voltage, in (1e-14, 0.1)
    reuse : keep the tree's solution at the contour's nodes for later calls with the same tree,
        membrane and times (the stimulus, its site and the reading points may differ): an
        interactive view whose user moves the stimulus then inverts without solving the tree again.
        The values are the same either way.

    References
    ----------
    Holmes (1986) Biol. Cybern. 55:115; Weideman & Trefethen (2007) Math. Comp. 76:1341.
    """
    if not (isinstance(tolerance, int | float) and 1e-14 <= tolerance < 0.1):
        raise InputError(f"tolerance must lie in [1e-14, 0.1), got {tolerance!r}")
    if stimulus.position != 0:
        raise InputError("on a tree the stimulus site is given as a Site; leave the stimulus position at 0")
    t = np.atleast_1d(np.asarray(times, dtype=float)).ravel()
    if not np.all(np.isfinite(t)):
        raise InputError("times must be finite")
    record = tuple(record)
    if not record:
        raise InputError("give at least one recording site")
    net = _network(cell, [*record, at])
    nodes = net.nodes[:-1].tolist()
    source = int(net.nodes[-1])
    notes: list[str] = []
    paths = _on_paths(net, net.nodes)  # the pieces between the root and the sites

    def solve(s: ComplexArray) -> _Solution:
        """The tree's solution at s where the sites need it (the tips-inward pass kept with reuse)."""
        return _along(net, _inward_kept(net, s) if reuse else _inward(net, s, ratios=False), paths)

    rest = solve(np.zeros(1, dtype=complex))  # s = 0: the steady state and the reference
    if isinstance(stimulus, VoltageStep):
        if source != 0:
            raise InputError("a voltage clamp on a tree is applied at the root (soma)")
        amplitude = stimulus.amplitude
        reference = abs(amplitude)

        def transform(s: ComplexArray) -> ComplexArray:
            sol = solve(s)
            out = np.empty((s.size, len(nodes)), dtype=complex)
            for j, b in enumerate(nodes):
                out[:, j] = _ratio_from_root(net, sol, b)
            return out * (amplitude / s)[:, None]

        steady = amplitude * np.array([_ratio_from_root(net, rest, b)[0].real for b in nodes])
        notes.append("the clamp fixes the root voltage, so the soma's membrane plays no part")
    else:
        amplitude, shape = _current_shape(stimulus)
        z_source = _transfer(net, rest, source, source)[0].real
        if z_source == 0.0:
            raise InputError("the stimulus site is a killed tip, held at rest; choose another site")
        reference = abs(amplitude) * z_source

        def transform(s: ComplexArray) -> ComplexArray:
            sol = solve(s)
            out = np.empty((s.size, len(nodes)), dtype=complex)
            for j, b in enumerate(nodes):
                out[:, j] = _transfer(net, sol, source, b)
            return out * (amplitude * shape(s))[:, None]

        steady = None
        if isinstance(stimulus, CurrentStep):
            steady = amplitude * np.array([_transfer(net, rest, source, b)[0].real for b in nodes])
    if isinstance(stimulus, CurrentPulse):
        later = t - stimulus.duration
        both = invert_windowed(transform, np.concatenate((t, later)), tolerance=tolerance / 2, scale=reference)
        voltage = both.values[:t.size] - both.values[t.size:]
        errors = both.error_estimate[:t.size] + both.error_estimate[t.size:]
        method = both.method
        notes.extend(both.notes)
    else:
        inversion = invert_windowed(transform, t, tolerance=tolerance, scale=reference)
        voltage, errors, method = inversion.values, inversion.error_estimate, inversion.method
        notes.extend(inversion.notes)
    return TreeResponse(times=t, sites=record, stimulus_site=at, voltage=voltage, errors=errors,
                        error_bound=float(np.max(errors, initial=0.0)), reference_voltage=float(reference),
                        tolerance=float(tolerance), steady_state=steady, method=method, notes=tuple(notes))


# --------------------------------------------------------------------------------------
# frequency responses, attenuation and centroid delays
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class FrequencyResponse:
    """Transfer impedance from one site to others against frequency, SI.

    ``impedance[i, j]`` (Ω, complex) at ``frequencies[i]`` (Hz) from ``source`` to ``sites[j]``;
    ``source = None`` means each site's input impedance.
    """

    frequencies: Array
    source: Site | None
    sites: tuple[Site, ...]
    impedance: ComplexArray

    @property
    def magnitude(self) -> Array:
        """|Z|, Ω."""
        return np.abs(self.impedance)

    @property
    def phase(self) -> Array:
        """arg Z, rad (negative: the voltage lags the current)."""
        return np.angle(self.impedance)


def frequency_response(cell: PassiveTree, frequencies: ArrayLike, source: Site | None,
                       sites: Sequence[Site]) -> FrequencyResponse:
    r"""Input or transfer impedance at :math:`s = 2\pi i f` for each frequency (Hz).

    References
    ----------
    Koch & Poggio (1985) J. Neurosci. Methods 12:303 (the same recursion at s = iω).
    """
    f = np.atleast_1d(np.asarray(frequencies, dtype=float)).ravel()
    if not (np.all(np.isfinite(f)) and np.all(f >= 0)):
        raise InputError("frequencies must be finite and >= 0 Hz")
    z = transfer_impedance(cell, 2j * math.pi * f, source, sites)
    return FrequencyResponse(frequencies=f, source=source, sites=tuple(sites), impedance=z)


@dataclass(frozen=True, slots=True)
class ElectrotonicMap:
    r"""Attenuation to and from the root and centroid delays for every node of a tree, SI.

    Attributes
    ----------
    sites : the root, then the distal node of every piece (:func:`~cabletheory.tree_laplace.node_sites`,
        a sequence that makes each site when read)
    frequency : Hz at which the attenuations are taken (0: steady state)
    input_impedance : |Z_ii|, Ω
    transfer_impedance : |Z_i0| (= |Z_0i|), Ω, to the root
    attenuation_to_root : |Z_ii|/|Z_i0| = V_i/V_root for input at i (>= 1)
    attenuation_from_root : |Z_00|/|Z_0i| = V_root/V_i for input at the root (>= 1)
    local_delay : centroid delay of V_i after the centroid of a current injected at i,
        :math:`-Z_{ii}'(0)/Z_{ii}(0)`, s
    transfer_delay : :math:`-Z_{i0}'(0)/Z_{i0}(0)`, s (the same both ways)
    delay_to_root : transfer_delay - local_delay (propagation delay i → root), s
    delay_from_root : transfer_delay - local delay at the root (root → i), s
    """

    sites: Sequence[Site]
    frequency: float
    input_impedance: Array
    transfer_impedance: Array
    attenuation_to_root: Array
    attenuation_from_root: Array
    local_delay: Array
    transfer_delay: Array
    delay_to_root: Array
    delay_from_root: Array


def _ratio_from_root(net: _Network, sol: _Solution, node: int) -> ComplexArray:
    """V(node)/V(root) with the root driven (product of the distal/proximal ratios on the path)."""
    _, down = _path(net, 0, node)
    return np.prod(sol.down[down], axis=0)


def _all_nodes(net: _Network, s: ComplexArray) -> tuple[ComplexArray, ComplexArray]:
    """(Z_ii, Z_0i) at every node (node 0 the root), shape (n_s, nodes)."""
    sol = _solve(net, s)
    with np.errstate(divide="ignore", invalid="ignore"):
        z_in = np.where(np.isinf(sol.total), 0.0, 1.0 / sol.total)
    from_root = np.empty_like(z_in)
    from_root[0] = z_in[0]
    for idx in net.levels:
        from_root[idx + 1] = from_root[net.parent_node[idx]] * sol.down[idx]
    return z_in.T, from_root.T


def electrotonic_map(cell: PassiveTree, frequency: float = 0.0) -> ElectrotonicMap:
    r"""Attenuation between every node and the root, and centroid delays, over the whole tree.

    Attenuations at :math:`s = 2\pi i f`; delays from the Laplace transform's slope at s = 0,
    :math:`D = -Z'(0)/Z(0)` (the centroid of the response minus that of the input current;
    Agmon-Snir & Segev 1993), with Z' by a complex step (Squire & Trapp 1998), so no
    inversion is involved. The log attenuations and delays over the tree are the
    morphoelectrotonic transform of Zador, Agmon-Snir & Segev (1995).

    References
    ----------
    Agmon-Snir & Segev (1993) J. Neurophysiol. 70:2066; Zador, Agmon-Snir & Segev (1995)
    J. Neurosci. 15:1669; Squire W & Trapp G (1998) SIAM Rev. 40:110.
    """
    f = float(frequency)
    if not (math.isfinite(f) and f >= 0):
        raise InputError(f"frequency must be finite and >= 0 Hz, got {frequency!r}")
    sites = node_sites(cell.tree)
    net = _network(cell, None)  # the sites of node_sites
    tau = max(float(net.tau.max()), net.soma_tau)
    eta = 1e-12 / tau
    z_in, z_root = _all_nodes(net, np.array([2j * math.pi * f, 1j * eta]))
    z_in, z_root = z_in[:, net.nodes], z_root[:, net.nodes]
    with np.errstate(divide="ignore", invalid="ignore"):
        local = -z_in[1].imag / (eta * z_in[1].real)
        transfer = -z_root[1].imag / (eta * z_root[1].real)
        mag_in, mag_tr = np.abs(z_in[0]), np.abs(z_root[0])
        return ElectrotonicMap(sites=sites, frequency=f, input_impedance=mag_in,
                               transfer_impedance=mag_tr, attenuation_to_root=mag_in / mag_tr,
                               attenuation_from_root=mag_in[0] / mag_tr, local_delay=local,
                               transfer_delay=transfer, delay_to_root=transfer - local,
                               delay_from_root=transfer - local[0])



# --------------------------------------------------------------------------------------
# the cost of reduction, in time
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class ReductionModes:
    """The slowest modes seen at the root of a tree beside those of its reduction, SI.

    Attributes
    ----------
    reduced_model : "equivalent cylinder" or "soma and equivalent cylinder"
    electrotonic_length, conductance_ratio : L and ρ of the reduction (ρ None without a soma)
    tree_modes : τ_n and C_n of the tree at the root (:func:`~cabletheory.tree_modes.root_modes`)
    reduced_time_constants, reduced_coefficients : τ0, τ1 (s) and C0, C1 of the reduction
    peeled_length : L a sealed cylinder would need for the tree's τ0/τ1 (Rall 1969)
    peeled_ball_and_stick : (L, ρ) of a ball and stick with the tree's τ0/τ1 and C1/C0, if any
    notes : plain-language remarks
    """

    reduced_model: str
    electrotonic_length: float
    conductance_ratio: float | None
    tree_modes: TreeModes
    reduced_time_constants: Array
    reduced_coefficients: Array
    peeled_length: float
    peeled_ball_and_stick: tuple[tuple[float, float], ...]
    notes: tuple[str, ...] = field(default_factory=tuple)


@dataclass(frozen=True, slots=True, kw_only=True)
class ReductionCost(ReductionModes):
    """The root's response of a tree and of its reduction to the same stimulus at the root, SI:
    every attribute of :class:`ReductionModes`, and

    Attributes
    ----------
    times : s
    tree_voltage, reduced_voltage : V at the root, (nT,)
    largest_difference : V, max |reduced - tree| over ``times``
    when : s, the time of that largest difference (on the grid given)
    tree_error_bound : V, error estimate of the tree's values; the reduction's values are exact
        series (cabletheory.transient) with their own bound ``reduced_error_bound``
    reduced_error_bound : V
    """

    times: Array
    tree_voltage: Array
    reduced_voltage: Array
    largest_difference: float
    when: float
    tree_error_bound: float
    reduced_error_bound: float


def _reduction(cell: PassiveTree) -> tuple[TreeReport, Cylinder | BallAndStick, str]:
    """The tree's analysis, its reduction (a cylinder, with the soma when the tree has one) and its name."""
    from .cable import Cylinder
    from .case import BallAndStick
    from .tree import analyse_tree

    tree = cell.tree
    rm = np.asarray(cell.membrane_resistivity, dtype=float).ravel()
    cm = np.asarray(cell.membrane_capacitance, dtype=float).ravel()
    if rm.size != 1 or cm.size != 1:
        raise InputError("the reduction needs one membrane resistivity and capacitance for the whole tree")
    if tree.soma_area is not None:
        g_s, tau_s = cell.soma_constants()
        if not math.isclose(tau_s, float(rm[0] * cm[0]), rel_tol=1e-12) or not math.isclose(
                g_s, tree.soma_area / float(rm[0]), rel_tol=1e-12):
            raise InputError("the reduction needs the soma's membrane to be the dendrites'")
    # the tips as this cell has them; the cylinder's far end leaks what the tips leak together
    report = analyse_tree(replace(tree, ends=cell.tip_conductances()), float(rm[0]), float(cell.axial_resistivity),
                          float(cm[0]))
    eq = report.equivalent_cylinder
    end = report.end_conductance_ratio / eq.semi_infinite_input_resistance
    cylinder = Cylinder(float(rm[0]), float(cell.axial_resistivity), float(cm[0]), eq.diameter, eq.length,
                        math.inf if math.isinf(report.end_conductance_ratio) else end)
    if tree.soma_area is not None:
        return report, BallAndStick(cylinder, math.sqrt(tree.soma_area / math.pi)), "soma and equivalent cylinder"
    return report, cylinder, "equivalent cylinder"


def _peeled(modes: TreeModes) -> tuple[float, tuple[tuple[float, float], ...], list[str]]:
    """What peeling the tree's τ0/τ1 and C1/C0 would report: (L of a sealed cylinder, the (L, ρ) of a
    ball and stick, notes)."""
    from .inverse import estimate_from_peeling

    if modes.time_constants.size < 2:
        return math.nan, (), ["fewer than two modes are seen at the root; nothing to peel"]
    ratio = float(modes.time_constants[0] / modes.time_constants[1])
    coef = float(modes.coefficients[1] / modes.coefficients[0])
    estimate = estimate_from_peeling(ratio, coef)
    return (estimate.cylinder_length,
            tuple((s.electrotonic_length, s.conductance_ratio) for s in estimate.solutions), [])


def _modes_part(cell: PassiveTree, report: TreeReport, name: str, reduced: Response,
                modes: TreeModes | None) -> dict[str, Any]:
    """The fields of :class:`ReductionModes` from the tree's analysis, its reduction's series
    (``reduced``, of :func:`cabletheory.transient.charge` with two modes) and the tree's root modes
    (searched here unless two or more are given)."""
    if modes is None or modes.time_constants.size < 2:
        modes = root_modes(cell, 2)
    peeled, solutions, notes = _peeled(modes)
    if not report.reducible:
        notes.append("the tree does not meet Rall's conditions, so its reduction is approximate")
    return {"reduced_model": name, "electrotonic_length": report.equivalent_cylinder.electrotonic_length,
            "conductance_ratio": report.conductance_ratio, "tree_modes": modes,
            "reduced_time_constants": reduced.time_constants[:2], "reduced_coefficients": reduced.coefficients[:2, 0],
            "peeled_length": peeled, "peeled_ball_and_stick": solutions, "notes": tuple(notes)}


def reduction_modes(cell: PassiveTree, *, modes: TreeModes | None = None) -> ReductionModes:
    r"""The two slowest modes seen at the root of a tree beside those of its Rall reduction, and the L
    and ρ that peeling the tree's would report; :func:`reduction_cost` without the time courses.

    The reduction is that of :func:`reduction_cost`; its τ_n and the C_n of a current step at its
    origin are those of :func:`cabletheory.transient.charge`. ``modes``: the tree's root modes when
    already found (two or more), so they are not searched again.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491; Rall W (1969) Biophys. J. 9:1483 (τ0/τ1, C1/C0 and peeling).
    """
    from .transient import charge

    report, model, name = _reduction(cell)
    reduced = charge(model, CurrentStep(1e-12), np.zeros(0), [0.0], modes=2)  # no times: its modes only
    return ReductionModes(**_modes_part(cell, report, name, reduced, modes))


def reduction_cost(cell: PassiveTree, stimulus: Stimulus, times: ArrayLike, *,
                   tolerance: float = 1e-10, modes: TreeModes | None = None) -> ReductionCost:
    r"""Compare the root's response of a tree with that of its Rall reduction, in time.

    The reduction is the equivalent cylinder of :func:`cabletheory.tree.analyse_tree` (same
    membrane area, trunk diameter :math:`(\sum d_{stem}^{3/2})^{2/3}`, a far end that leaks what
    the tips leak together),
    with the soma when the tree has one; its response comes from the exact series of
    :func:`cabletheory.transient.charge`. The stimulus is applied at the root of both (input
    at one dendritic site has no counterpart on the cylinder). τ0, τ1 and C1/C0 of the tree
    are those seen at the root (:func:`~cabletheory.tree_modes.root_modes`); the L and ρ that
    peeling them would report come from :func:`cabletheory.inverse.estimate_from_peeling`;
    ``modes``: the tree's root modes when already found (two or more), so they are not searched again.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491; Rall W (1969) Biophys. J. 9:1483 (τ0/τ1, C1/C0 and peeling).
    """
    from .transient import charge

    if isinstance(stimulus, VoltageStep):
        raise InputError("the cost of reduction is computed for current stimuli at the root")
    report, model, name = _reduction(cell)
    t = np.atleast_1d(np.asarray(times, dtype=float)).ravel()
    reduced = charge(model, stimulus, t, [0.0], tolerance=tolerance, modes=2)
    mine = tree_response(cell, stimulus, t, root_site(), [root_site()], tolerance=tolerance)
    diff = reduced.voltage[:, 0] - mine.voltage[:, 0]
    k = int(np.argmax(np.abs(diff))) if diff.size else 0
    return ReductionCost(times=t, tree_voltage=mine.voltage[:, 0], reduced_voltage=reduced.voltage[:, 0],
                         largest_difference=float(abs(diff[k])) if diff.size else 0.0,
                         when=float(t[k]) if diff.size else math.nan, tree_error_bound=mine.error_bound,
                         reduced_error_bound=reduced.error_bound, **_modes_part(cell, report, name, reduced, modes))
