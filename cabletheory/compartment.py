r"""A sparse compartmental reference discretisation of passive cables and trees.

This is an independent *numerical* route to the answers the closed forms give: it is used
to check them, to make the "simulator runs" of the worked examples, and to show what a
compartmental simulator's discretisation error looks like and how it shrinks.

Scheme (vertex-centred finite volumes; common practice [CP], e.g. Hines 1984, Mascagni &
Sherman 1998, recalled from memory [MEM]):

* a branch of length ℓ cut into ``n`` equal compartments of length ``h = ℓ/n`` has nodes at
  both ends of every compartment, so a node sits exactly at the origin (X = 0) and at every
  tip and branch point; branches meeting at a branch point share that node;
* two neighbouring nodes of one branch are coupled by the axial conductance
  :math:`g_a = \pi d^2 / (4 R_i h)`;
* every node owns the membrane of the half-compartments next to it (area :math:`\pi d h/2`
  per half-compartment), giving leak :math:`A/R_m` and capacitance :math:`A C_m`;
* a lumped soma adds its area's leak and capacitance to the root node 0;
* a leaky tip adds its end conductance to the tip node; a killed tip node is held at rest
  (V = 0), as is a voltage-clamped node.

The semi-discrete system is :math:`C\,\dot V = -G V + I`. Steady states solve
:math:`G V = I`. For a uniform cylinder the scheme is the standard three-point difference
and is second order in Δx for the input resistance, the voltage at every node and the time
course (tests/test_compartment.py measures the orders).

Time stepping: backward Euler (first order in Δt) or Crank–Nicolson (second order; Crank &
Nicolson 1947, Proc. Camb. Phil. Soc. 43:50). A current or voltage step switched on at
t = 0 excites the stiff modes of a fine grid, which Crank–Nicolson does not damp; as is
usual ([CP]; Rannacher 1984, Numer. Math. 43:309, [MEM]) the first two Crank–Nicolson steps
are replaced by four backward-Euler half-steps, which keeps second order.

Everything is in SI (m, s, Ω, S, F, A, V) and in plain numpy / scipy; voltages are
deviations from rest. The model is passive, linear and uniform within each branch.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .cable import Cylinder
from .errors import InputError

if TYPE_CHECKING:  # pragma: no cover
    import scipy.sparse

__all__ = [
    "SCHEMES",
    "Compartments",
    "branch_nodes",
    "discretise_cable",
    "discretise_tree",
    "expected_order",
    "integrate",
    "node_input_resistance",
    "sample",
    "steady_state",
]

Array = NDArray[np.float64]

# scheme name -> (theta of the theta-method, expected order in Δt)
SCHEMES: dict[str, tuple[float, int]] = {"backward-euler": (1.0, 1), "crank-nicolson": (0.5, 2)}


def expected_order(scheme: str) -> tuple[int, int]:
    """Theoretical orders ``(space, time)`` of this module's schemes.

    Second order in Δx (three-point difference, [CP]); first order in Δt for backward
    Euler and second for Crank–Nicolson (Crank & Nicolson 1947).
    """
    return 2, _scheme(scheme)[1]


@dataclass(frozen=True, slots=True)
class Compartments:
    """A discretised passive cable or tree (SI throughout).

    Attributes
    ----------
    conductance : sparse (n, n) matrix G in S: axial coupling between neighbouring nodes,
        membrane leak of each node, soma leak at node 0 and leaky tip conductances on the
        diagonal. Symmetric positive (semi-)definite; steady states solve G V = I.
    capacitance : (n,) node capacitances in F (membrane area × Cm, soma included at node 0).
    distance : (n,) path distance of each node from the root node 0, in m.
    branch : (n,) index of the branch each node belongs to. A branch point belongs to the
        branch that ends there; the root node 0 belongs to the first branch attached to
        the root (the soma, when given, is lumped into node 0, so -1 never occurs here).
    held : (n,) True where a node is held at rest (V = 0): killed tips.
    proximal : (branches,) index of the node at the proximal end of each branch.
    """

    conductance: scipy.sparse.csr_matrix
    capacitance: Array
    distance: Array
    branch: NDArray[np.int64]
    held: NDArray[np.bool_] | None = None
    proximal: NDArray[np.int64] | None = None

    @property
    def size(self) -> int:
        """Number of nodes."""
        return int(self.capacitance.shape[0])


# --------------------------------------------------------------------------------------
# building the matrices
# --------------------------------------------------------------------------------------
def discretise_cable(cylinder: Cylinder, compartments: int, *, soma_area: float | None = None) -> Compartments:
    """Discretise one cylinder into ``compartments`` equal compartments (``compartments + 1`` nodes).

    Node 0 is the origin X = 0 (where the closed forms inject), node ``compartments`` the far
    end, which is sealed, leaky or killed as ``cylinder.end_conductance`` says.

    Parameters
    ----------
    cylinder : the cable; its length must be finite
    compartments : number of equal compartments, >= 1
    soma_area : optional lumped soma membrane area in m², added to node 0
    """
    if not math.isfinite(cylinder.length):
        raise InputError("a semi-infinite cable cannot be discretised; give a finite --length")
    return discretise_tree([-1], [cylinder.length], [cylinder.diameter], cylinder.membrane_resistivity,
                           cylinder.axial_resistivity, cylinder.membrane_capacitance, compartments,
                           soma_area=soma_area, end_conductances=[cylinder.end_conductance])


def discretise_tree(parents: Sequence[int] | ArrayLike, lengths: ArrayLike, diameters: ArrayLike,
                    membrane_resistivity: float, axial_resistivity: float, membrane_capacitance: float,
                    compartments: int | Sequence[int] | ArrayLike, *, soma_area: float | None = None,
                    end_conductances: ArrayLike | None = None) -> Compartments:
    """Discretise a tree of uniform cylindrical branches.

    Parameters
    ----------
    parents : parent branch of each branch, or -1 for a branch attached to the root
        node 0 (the soma, if any). A parent must come before its children.
    lengths, diameters : per branch, m
    membrane_resistivity : Rm, Ω·m² (same everywhere)
    axial_resistivity : Ri, Ω·m
    membrane_capacitance : Cm, F/m²
    compartments : number of equal compartments, one int for all branches or one per branch
    soma_area : optional lumped soma area in m² (adds area/Rm and area·Cm to node 0)
    end_conductances : per branch, conductance (S) from its distal end to rest; only tips
        (branches without children) may have one. 0 sealed (default), inf killed.

    Returns
    -------
    Compartments
    """
    import scipy.sparse

    parent = np.asarray(parents, dtype=np.int64).ravel()
    count = parent.size
    if count == 0:
        raise InputError("a tree needs at least one branch")
    length = _per_branch(lengths, count, "lengths")
    diameter = _per_branch(diameters, count, "diameters")
    n_seg = np.broadcast_to(np.asarray(compartments), (count,))
    if not np.all(np.asarray(n_seg) == np.round(np.asarray(n_seg, dtype=float))) or np.any(n_seg < 1):
        raise InputError(f"compartments must be whole numbers >= 1, got {compartments!r}")
    n_seg = n_seg.astype(np.int64)
    for name, value in (("membrane_resistivity", membrane_resistivity),
                        ("axial_resistivity", axial_resistivity),
                        ("membrane_capacitance", membrane_capacitance)):
        if not (math.isfinite(value) and value > 0):
            raise InputError(f"{name} must be finite and positive, got {value!r}")
    for i, p in enumerate(parent):
        if not -1 <= p < i:
            raise InputError(f"branch {i}: parent {p} must be -1 or an earlier branch")
    if not (np.all(np.isfinite(length)) and np.all(length > 0)):
        raise InputError("lengths must be finite and positive")
    if not (np.all(np.isfinite(diameter)) and np.all(diameter > 0)):
        raise InputError("diameters must be finite and positive")
    ends = np.zeros(count) if end_conductances is None else _per_branch(end_conductances, count,
                                                                           "end_conductances")
    if np.any(np.isnan(ends)) or np.any(ends < 0):
        raise InputError("end_conductances must be >= 0 (inf for a killed end)")
    has_child = np.zeros(count, dtype=bool)
    has_child[parent[parent >= 0]] = True
    if np.any(ends[has_child] != 0):
        bad = int(np.flatnonzero(has_child & (ends != 0))[0])
        raise InputError(f"branch {bad} has children; only tips can have an end conductance")
    soma = 0.0 if soma_area is None else float(soma_area)
    if not (math.isfinite(soma) and soma >= 0):
        raise InputError(f"soma_area must be finite and >= 0, got {soma_area!r}")

    n_nodes = 1 + int(n_seg.sum())
    distance = np.zeros(n_nodes)
    branch = np.zeros(n_nodes, dtype=np.int64)
    roots = np.flatnonzero(parent == -1)
    branch[0] = int(roots[0]) if roots.size else 0
    area = np.zeros(n_nodes)
    diag_extra = np.zeros(n_nodes)
    held = np.zeros(n_nodes, dtype=bool)
    proximal = np.zeros(count, dtype=np.int64)
    distal = np.zeros(count, dtype=np.int64)
    rows: list[NDArray] = []
    cols: list[NDArray] = []
    axial: list[NDArray] = []
    next_node = 1
    for i in range(count):
        start = 0 if parent[i] == -1 else int(distal[parent[i]])
        n = int(n_seg[i])
        h = length[i] / n
        nodes = np.concatenate(([start], np.arange(next_node, next_node + n)))
        next_node += n
        proximal[i], distal[i] = start, nodes[-1]
        distance[nodes[1:]] = distance[start] + h * np.arange(1, n + 1)
        branch[nodes[1:]] = i
        # half-compartment membrane on each side of a node (finite-volume control areas)
        half = np.pi * diameter[i] * h / 2.0
        np.add.at(area, nodes[:-1], half)
        np.add.at(area, nodes[1:], half)
        rows.append(nodes[:-1])
        cols.append(nodes[1:])
        axial.append(np.full(n, np.pi * diameter[i] ** 2 / (4.0 * axial_resistivity * h)))
        if math.isinf(ends[i]):
            held[nodes[-1]] = True
        else:
            diag_extra[nodes[-1]] += ends[i]
    area[0] += soma
    r, c, g = np.concatenate(rows), np.concatenate(cols), np.concatenate(axial)
    both = (np.concatenate((r, c)), np.concatenate((c, r)))
    off = scipy.sparse.coo_matrix((np.concatenate((-g, -g)), both), shape=(n_nodes, n_nodes))
    coupling = np.zeros(n_nodes)
    np.add.at(coupling, r, g)
    np.add.at(coupling, c, g)
    diagonal = coupling + area / membrane_resistivity + diag_extra
    conductance = (off + scipy.sparse.diags(diagonal)).tocsr()
    return Compartments(conductance=conductance, capacitance=area * membrane_capacitance, distance=distance,
                        branch=branch, held=held, proximal=proximal)


def _per_branch(values: ArrayLike, count: int, name: str) -> Array:
    arr = np.asarray(values, dtype=float).ravel()
    if arr.size == 1 and count > 1:
        arr = np.full(count, arr[0])
    if arr.size != count:
        raise InputError(f"{name}: expected {count} values (one per branch), got {arr.size}")
    return arr


# --------------------------------------------------------------------------------------
# steady state
# --------------------------------------------------------------------------------------
def _held(c: Compartments) -> NDArray[np.bool_]:
    return np.zeros(c.size, dtype=bool) if c.held is None else np.asarray(c.held, dtype=bool)


def steady_state(c: Compartments, current: ArrayLike) -> Array:
    """Steady voltage (V, from rest) at every node for constant injected currents (A).

    Solves :math:`G V = I` on the nodes not held at rest; held nodes stay at 0.
    ``current`` may also be a 2-D array ``(n, k)`` of k current patterns.
    """
    import scipy.sparse.linalg

    i = np.asarray(current, dtype=float)
    if i.shape[0] != c.size:
        raise InputError(f"current: expected {c.size} node values, got {i.shape[0]}")
    free = ~_held(c)
    g = c.conductance.tocsc()[free][:, free]
    v = np.zeros(i.shape)
    v[free] = scipy.sparse.linalg.splu(g.tocsc()).solve(np.ascontiguousarray(i[free]))
    return v


def node_input_resistance(c: Compartments, node: int = 0) -> float:
    """Input resistance (Ω) at one node: the steady voltage there per unit injected current."""
    if not 0 <= node < c.size:
        raise InputError(f"node {node} is outside 0..{c.size - 1}")
    if _held(c)[node]:
        return 0.0
    unit = np.zeros(c.size)
    unit[node] = 1.0
    return float(steady_state(c, unit)[node])


# --------------------------------------------------------------------------------------
# time stepping
# --------------------------------------------------------------------------------------
def _scheme(scheme: str) -> tuple[float, int]:
    try:
        return SCHEMES[scheme]
    except KeyError:
        raise InputError(f"scheme {scheme!r} is not one of {', '.join(SCHEMES)}") from None


def _step_counts(times: Array, step: float) -> NDArray[np.int64]:
    """Number of steps from t = 0 to each requested time; each must be a multiple of ``step``."""
    counts = np.rint(times / step)
    if np.any(np.abs(counts * step - times) > 1e-6 * step + 1e-12 * np.abs(times)):
        bad = times[np.argmax(np.abs(counts * step - times))]
        raise InputError(f"step {step!r} s does not divide the requested time {bad!r} s")
    return counts.astype(np.int64)


def integrate(c: Compartments, current: ArrayLike | Callable[[float], ArrayLike], times: ArrayLike, *,
              scheme: str = "crank-nicolson", step: float,
              clamp: tuple[int, float] | None = None) -> Array:
    r"""March :math:`C\dot V = -GV + I(t)` from rest (V = 0 at t = 0) and sample it.

    Parameters
    ----------
    c : the discretisation
    current : injected current per node in A, either an array ``(n,)`` switched on at
        t = 0 and held, or a callable ``t -> array (n,)`` (t in s)
    times : non-decreasing sample times in s, each >= 0 and a multiple of ``step``
    scheme : ``"crank-nicolson"`` (second order in Δt) or ``"backward-euler"`` (first order)
    step : time step Δt in s
    clamp : optional ``(node, voltage)``: that node is stepped to ``voltage`` (V, from rest)
        at t = 0 and held there (a voltage clamp); its injected current is ignored

    Returns
    -------
    V[time, node] in V, deviations from rest; ``V = 0`` at t = 0.

    Notes
    -----
    The theta-method :math:`(C/\Delta t + \theta G)V^{k+1} = (C/\Delta t - (1-\theta)G)V^k
    + \theta I^{k+1} + (1-\theta) I^k` with θ = 1 (backward Euler) or ½ (Crank–Nicolson,
    Crank & Nicolson 1947). Crank–Nicolson starts with four backward-Euler half-steps in
    place of its first two steps (Rannacher 1984 [MEM]). Each matrix is factorised once
    (scipy.sparse.linalg.splu) and reused.
    """
    import scipy.sparse
    import scipy.sparse.linalg

    theta, _ = _scheme(scheme)
    if not (math.isfinite(step) and step > 0):
        raise InputError(f"step must be a finite positive time in s, got {step!r}")
    t = np.atleast_1d(np.asarray(times, dtype=float))
    if t.ndim != 1 or np.any(~np.isfinite(t)) or np.any(t < 0) or np.any(np.diff(t) < 0):
        raise InputError("times must be finite, >= 0 and non-decreasing")
    counts = _step_counts(t, step)
    n = c.size
    if callable(current):
        source: Callable[[float], Array] = _checked_source(current, n)
    else:
        constant = np.asarray(current, dtype=float)
        if constant.shape != (n,):
            raise InputError(f"current: expected an array of {n} node values, got shape {constant.shape}")
        source = lambda _t: constant  # noqa: E731

    fixed = _held(c).copy()
    clamp_value = np.zeros(n)
    if clamp is not None:
        node, voltage = int(clamp[0]), float(clamp[1])
        if not 0 <= node < n:
            raise InputError(f"clamp node {node} is outside 0..{n - 1}")
        fixed[node] = True
        clamp_value[node] = voltage
    free = np.flatnonzero(~fixed)
    g = c.conductance.tocsr()
    g_ff = g[free][:, free].tocsc()
    g_fx = g[free][:, np.flatnonzero(fixed)]  # coupling of free nodes to the fixed ones
    v_fixed = clamp_value[fixed]
    cap = np.asarray(c.capacitance)[free]
    if np.any(cap <= 0):
        raise InputError("every free node needs a positive capacitance")
    factors: dict[tuple[float, float], Any] = {}

    def advance(v: Array, t0: float, dt: float, th: float) -> Array:
        key = (dt, th)
        if key not in factors:
            factors[key] = scipy.sparse.linalg.splu(
                (scipy.sparse.diags(cap / dt) + th * g_ff).tocsc())
        # fixed nodes are at rest at t0 = 0 and at their clamp value afterwards
        fixed_old = v_fixed if t0 > 0 else 0.0 * v_fixed
        coupling = th * (g_fx @ v_fixed) + (1.0 - th) * (g_fx @ fixed_old)
        i_new = source(t0 + dt)[free]
        drive = i_new if th == 1.0 else th * i_new + (1.0 - th) * source(t0)[free]
        rhs = cap / dt * v - (1.0 - th) * (g_ff @ v) - coupling + drive
        return factors[key].solve(rhs)

    out = np.zeros((t.size, n))
    v = np.zeros(free.size)
    k = 0
    for j, target in enumerate(counts):
        while k < target:
            if theta < 1.0 and k < 2:
                # Rannacher start: two backward-Euler half-steps for each of the first CN steps
                v = advance(v, k * step, step / 2, 1.0)
                v = advance(v, (k + 0.5) * step, step / 2, 1.0)
            else:
                v = advance(v, k * step, step, theta)
            k += 1
        if target > 0:
            out[j, free] = v
            out[j, fixed] = v_fixed
    return out


def _checked_source(current: Callable[[float], ArrayLike], n: int) -> Callable[[float], Array]:
    def source(t: float) -> Array:
        value = np.asarray(current(t), dtype=float)
        if value.shape != (n,):
            raise InputError(f"current({t!r}) returned shape {value.shape}; expected ({n},)")
        return value

    return source


# --------------------------------------------------------------------------------------
# reading results along a branch
# --------------------------------------------------------------------------------------
def branch_nodes(c: Compartments, branch: int) -> NDArray[np.int64]:
    """Node indices along one branch, proximal end first (the proximal node is shared)."""
    if c.proximal is None or not 0 <= branch < c.proximal.size:
        raise InputError(f"branch {branch} does not exist")
    own = np.flatnonzero(c.branch == branch)
    own = own[own != 0]  # node 0 is the root, never a branch's own node
    return np.concatenate(([c.proximal[branch]], own[np.argsort(c.distance[own], kind="stable")]))


def sample(c: Compartments, values: ArrayLike, distance: ArrayLike, branch: int = 0) -> Array:
    """Interpolate node values linearly along one branch at path distances (m) from the root.

    ``values`` is ``(..., n)`` (e.g. ``V[time, node]``); the result is ``(..., len(distance))``.
    Linear interpolation between nodes keeps the scheme's second order in Δx.
    """
    nodes = branch_nodes(c, branch)
    x = c.distance[nodes]
    d = np.atleast_1d(np.asarray(distance, dtype=float))
    tol = 1e-9 * max(x[-1], 1e-12)
    if np.any(d < x[0] - tol) or np.any(d > x[-1] + tol):
        raise InputError(f"distances must lie on branch {branch}, between {x[0]!r} and {x[-1]!r} m")
    vals = np.asarray(values, dtype=float)[..., nodes]
    idx = np.clip(np.searchsorted(x, d, side="right") - 1, 0, x.size - 2)
    w = np.clip((d - x[idx]) / (x[idx + 1] - x[idx]), 0.0, 1.0)
    return vals[..., idx] * (1.0 - w) + vals[..., idx + 1] * w
