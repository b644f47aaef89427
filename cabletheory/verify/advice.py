r"""Discretisation advice: the compartments a target accuracy needs, and the time step.

:func:`advise_cable` and :func:`advise_tree` find the compartments per branch that meet a target
error in a chosen output, using the exact answer and the reference discretisation of
:mod:`cabletheory.compartment`, beside the common rule of thumb ([CP]: compartments no longer than
0.1 of the length constant at 100 Hz) and the error that rule gives; for a time course also the
largest time step of backward Euler or Crank–Nicolson (:class:`StepAdvice`), predicted from the
scheme's order, measured, and verified against the exact course, and, when asked, the error of a
fixed time step of the user's choosing.

Every exact answer assumes a passive, linear membrane with uniform properties; so does every
verdict. A simulator with active conductances is outside what this package can check.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .. import cable as cb
from .. import compartment as cp
from ..errors import ConvergenceError, InputError
from ..tree.geometry import input_admittances
from ..tree_laplace import PassiveTree, Site, root_site

__all__ = [
    "OUTPUTS",
    "Advice",
    "StepAdvice",
    "advise_cable",
    "advise_tree",
    "advise_tree_course",
]

Array = NDArray[np.float64]


# ======================================================================================
# discretisation advice
# ======================================================================================
OUTPUTS: dict[str, str] = {
    "input-resistance": "steady input resistance at the origin (relative error)",
    "attenuation": "steady voltage at a site per voltage at the origin, for current at the origin "
                   "(relative error)",
    "impedance": "input impedance at the origin at a frequency (relative error of the complex value)",
    "time-course": "voltage at a site during a current step at the origin (max error over time, relative "
                   "to the peak)",
}


@dataclass(frozen=True, slots=True)
class StepAdvice:
    """The largest time step Δt for a time course, with the compartments of the same advice.

    The target is split: ``space_target`` (compartments, Δt negligible) plus ``time_target`` (Δt,
    measured against a time-converged solve with the same compartments). The fully discrete error
    is the sum of the two parts, so by the triangle inequality it stays within their sum, the
    whole target; ``error`` is that total, measured against the exact course. Every error is
    the maximum over the sample times, relative to the peak exact voltage.
    """

    scheme: str  # key of compartment.SCHEMES
    order: int  # theoretical order in Δt (1 backward Euler, 2 Crank–Nicolson; Crank & Nicolson 1947)
    space_target: float  # relative error budget given to the compartments
    time_target: float  # relative error budget given to the time step
    step: float  # s, recommended Δt = output_spacing / divisions
    divisions: int  # steps per output spacing
    output_spacing: float  # s, the largest step that divides every sample time
    last_time: float  # s, the end of the output window (the step is at t = 0)
    samples: int  # number of sample times
    time_error: float  # relative time error at ``step`` (against the time-converged solve)
    error: float  # relative total error at (compartments, step) against the exact course (verified)
    limited_by_output: bool  # True: the output spacing itself meets the time budget
    step_estimate: float | None  # s, if limited: Δt the order predicts for the budget (not verified)
    reference_step: float  # s, Δt of the time-converged Crank–Nicolson solve
    reference_error: float  # relative time error of that solve (Richardson estimate)
    solves: int  # integrations spent on the time step (reference, search, compared step)
    compare_step: float | None = None  # s, a fixed step the user asked about (None: not asked)
    compare_error: float | None = None  # relative total error at (compartments, compare_step); None if not
    #                                     asked or it does not divide the sample times


@dataclass(frozen=True, slots=True)
class Advice:
    """Compartments per branch for a target error in one output, beside the rule of thumb.

    Errors are relative (see :data:`OUTPUTS`) and measured: the reference discretisation
    with that many compartments is solved and compared with the exact answer.
    """

    output: str
    target: float  # relative error
    exact_value: complex  # exact output (Ω for resistance/impedance, 1 for attenuation, V for time course)
    compartments: NDArray[np.int64]  # per branch, to meet the target
    error: float  # relative error with ``compartments``
    rule_compartments: NDArray[np.int64]  # per branch, by the rule of thumb
    rule_error: float  # relative error with ``rule_compartments``
    rule_fraction: float  # compartment length as a fraction of the length constant at rule_frequency
    rule_frequency: float  # Hz
    length_constants: Array  # m, per branch (steady λ)
    length_constants_at_frequency: Array  # m, per branch, at ``rule_frequency``
    electrotonic_lengths: Array  # per branch
    site: float | None = None  # m, for "attenuation" and "time-course"
    frequency: float | None = None  # Hz, for "impedance"
    step: float | None = None  # s, Δt used for the time course (fine enough to be negligible)
    time_step: StepAdvice | None = None  # for "time-course": the largest Δt for the time share
    site_peaks: Array | None = None  # V per A, a tree's time course: the peak exact voltage at each read site


def _root_admittance(parents: ArrayLike, lengths: ArrayLike, diameters: ArrayLike, membrane_resistivity: float,
                     axial_resistivity: float, membrane_capacitance: float, *, frequency: float,
                     end_conductances: ArrayLike | None, soma_area: float) -> complex:
    r"""Exact input admittance (S) at the root of a tree of uniform cylinders, soma included.

    The dendrites by the tree layer's one solver, :func:`cabletheory.tree.geometry.input_admittances`
    (Rall 1959; Rall & Rinzel 1973), plus the soma's :math:`(A/R_m)(1 + i\omega\tau_m)`.
    """
    tau = membrane_resistivity * membrane_capacitance
    _, dendrites = input_admittances(parents, lengths, diameters, diameters, membrane_resistivity,
                                     axial_resistivity, end_conductances=end_conductances, frequency=frequency,
                                     time_constant=tau)
    q = complex(cb.wavenumber(frequency, tau))
    return complex(dendrites) + soma_area / membrane_resistivity * q * q


def _relative(a: complex, b: complex) -> float:
    return abs(a - b) / abs(b)


def _numeric_admittance(c: cp.Compartments, frequency: float) -> complex:
    import scipy.sparse
    import scipy.sparse.linalg

    free = ~np.asarray(c.held, dtype=bool)
    omega = 2 * np.pi * frequency
    m = (c.conductance + 1j * omega * scipy.sparse.diags(c.capacitance)).tocsc()[free][:, free]
    rhs = np.zeros(int(free.sum()), dtype=complex)
    rhs[0] = 1.0
    v = scipy.sparse.linalg.spsolve(m.tocsc(), rhs)
    return complex(1.0 / v[0])


def _search(error_at: Callable[[NDArray[np.int64]], float], electrotonic: Array, target: float,
            max_nodes: int) -> tuple[NDArray[np.int64], float]:
    """Smallest uniform electrotonic spacing h (n_i = ceil(ΔX_i/h)) whose error meets ``target``.

    Uses the second-order error model e ∝ h² to jump, then steps down until the measured
    error is within the target, then bisects back up on h.
    """

    def counts(h: float) -> NDArray[np.int64]:
        return np.maximum(1, np.ceil(electrotonic / h - 1e-9)).astype(np.int64)

    h = float(np.max(electrotonic)) / 2
    err = error_at(counts(h))
    for _ in range(60):
        if err <= target:
            break
        h *= min(0.9, 0.95 * math.sqrt(target / err)) if err > 0 else 0.5
        n = counts(h)
        if n.sum() > max_nodes:
            raise ConvergenceError(f"a relative error of {target:.3g} needs more than {max_nodes} compartments; "
                                   "ask for a looser target")
        err = error_at(n)
    else:  # pragma: no cover - the h² model always converges within 60 steps
        raise ConvergenceError(f"no compartment count met the target {target:.3g}")
    # the jump may overshoot: coarsen while the target is still met (at most a few tries)
    best_n, best_err = counts(h), err
    for factor in (1.5, 1.25, 1.1):
        n = counts(h * factor)
        if n.sum() < best_n.sum():
            e = error_at(n)
            if e <= target:
                best_n, best_err, h = n, e, h * factor
    return best_n, best_err


MAX_COMPARTMENTS = 200_000


def _rule(lengths: Array, diameters: Array, rm: float, ri: float, cm: float, fraction: float,
          frequency: float) -> tuple[NDArray[np.int64], Array, Array]:
    lam = cb.length_constant(rm, ri, diameters)
    lam_f = cb.length_constant_at_frequency(lam, frequency, rm * cm)
    return cb.compartments_needed(lengths, lam_f, fraction), np.asarray(lam, dtype=float), np.asarray(lam_f)


def advise_tree(parents: ArrayLike, lengths: ArrayLike, diameters: ArrayLike, membrane_resistivity: float,
                axial_resistivity: float, membrane_capacitance: float, output: str, target: float, *,
                end_conductances: ArrayLike | None = None, soma_area: float = 0.0, frequency: float = 100.0,
                rule_fraction: float = 0.1, rule_frequency: float = 100.0) -> Advice:
    """Compartments per branch of a tree for a target relative error at the root.

    Outputs for trees: ``"input-resistance"`` and ``"impedance"`` (at ``frequency``), with
    the exact value from :func:`cabletheory.tree.geometry.input_admittances`. Compartments are spread with equal
    electrotonic spacing, which is where the second-order error is even.
    """
    if output not in ("input-resistance", "impedance"):
        raise InputError(f"output {output!r} is not available for a tree; choose input-resistance or impedance")
    _check_target(target)
    parent = np.asarray(parents, dtype=np.int64).ravel()
    ell = np.broadcast_to(np.asarray(lengths, dtype=float), parent.shape).copy()
    d = np.broadcast_to(np.asarray(diameters, dtype=float), parent.shape).copy()
    f = frequency if output == "impedance" else 0.0
    exact_y = _root_admittance(parent, ell, d, membrane_resistivity, axial_resistivity, membrane_capacitance,
                               frequency=f, end_conductances=end_conductances, soma_area=soma_area)

    def error_at(n: NDArray[np.int64]) -> float:
        c = cp.discretise_tree(parent, ell, d, membrane_resistivity, axial_resistivity, membrane_capacitance,
                               n, soma_area=soma_area or None, end_conductances=end_conductances)
        return _relative(1.0 / _numeric_admittance(c, f), 1.0 / exact_y)

    rule_n, lam, lam_f = _rule(ell, d, membrane_resistivity, axial_resistivity, membrane_capacitance,
                               rule_fraction, rule_frequency)
    electrotonic = ell / lam
    n, err = _search(error_at, electrotonic, target, MAX_COMPARTMENTS)
    return Advice(output=output, target=target, exact_value=1.0 / exact_y if output == "impedance"
                  else complex((1.0 / exact_y).real), compartments=n, error=err, rule_compartments=rule_n,
                  rule_error=error_at(rule_n), rule_fraction=rule_fraction, rule_frequency=rule_frequency,
                  length_constants=lam, length_constants_at_frequency=lam_f, electrotonic_lengths=electrotonic,
                  frequency=f if output == "impedance" else None)


def _check_target(target: float) -> None:
    if not (math.isfinite(target) and 1e-9 <= target < 1):
        raise InputError(f"target relative error must lie in [1e-9, 1), got {target!r}")


SPACE_SHARE = 0.5  # fraction of a time-course target given to the compartments; the rest goes to Δt
REFERENCE_MARGIN = 50  # the time-converged reference may use 1/50 of the smaller share
MAX_TIME_STEPS = 400_000  # time steps in one solve, at most


def advise_cable(cylinder: cb.Cylinder, output: str, target: float, *, site: float | None = None,
                 frequency: float = 100.0, soma_area: float = 0.0, rule_fraction: float = 0.1,
                 rule_frequency: float = 100.0, exact_time_course: Callable[[Array], Array] | None = None,
                 times: ArrayLike | None = None, scheme: str = "crank-nicolson", space_share: float = SPACE_SHARE,
                 compare_step: float | None = None) -> Advice:
    """Compartments for one finite cylinder (input at its origin) to meet a target relative error.

    Parameters
    ----------
    cylinder : the cable (finite length)
    output : a key of :data:`OUTPUTS`
    target : relative error, e.g. 0.01 for 1 %
    site : m, where "attenuation" and "time-course" are read (default: the far end)
    frequency : Hz, for "impedance"
    soma_area : m², lumped soma at the origin ("input-resistance", "impedance", "time-course")
    rule_fraction, rule_frequency : the rule of thumb (compartments within 0.1 of the length constant
        at 100 Hz, [CP])
    exact_time_course : for "time-course", ``times -> exact V (V) at site`` for a 1 A step at
        the origin (from :mod:`cabletheory.transient`); ``times`` in s are where it is sampled
    scheme : for "time-course", the time scheme whose Δt is advised (a key of
        :data:`cabletheory.compartment.SCHEMES`)
    space_share : for "time-course", the fraction of ``target`` given to the compartments; the rest
        goes to the time step (default one half each)
    compare_step : s, for "time-course", a fixed Δt whose error (with the advised compartments) is
        also measured, for comparison; ``None`` (default) measures none

    Notes
    -----
    For "time-course" the compartments meet ``space_share * target`` with Δt negligible, and
    :attr:`Advice.time_step` holds the largest Δt that keeps the time error within the rest
    (see :class:`StepAdvice`).
    """
    if output not in OUTPUTS:
        raise InputError(f"output {output!r} is not one of {', '.join(OUTPUTS)}")
    if not math.isfinite(cylinder.length):
        raise InputError("advice needs a finite cable length")
    _check_target(target)
    rm, ri, cmem = cylinder.membrane_resistivity, cylinder.axial_resistivity, cylinder.membrane_capacitance
    where = cylinder.length if site is None else float(site)
    if not 0 <= where <= cylinder.length:
        raise InputError(f"site {where!r} m lies outside the cable (0 to {cylinder.length!r} m)")
    rule_n, lam, lam_f = _rule(np.array([cylinder.length]), np.array([cylinder.diameter]), rm, ri, cmem,
                               rule_fraction, rule_frequency)
    space_target = target
    step = None
    if output in ("input-resistance", "impedance"):
        f = frequency if output == "impedance" else 0.0
        exact: complex = 1.0 / _root_admittance([-1], [cylinder.length], [cylinder.diameter], rm, ri, cmem,
                                                frequency=f, end_conductances=[cylinder.end_conductance],
                                                soma_area=soma_area)
        if output == "input-resistance":
            exact = complex(exact.real)

        def error_at(n: NDArray[np.int64]) -> float:
            c = cp.discretise_cable(cylinder, int(n[0]), soma_area=soma_area or None)
            return _relative(1.0 / _numeric_admittance(c, f), exact)
    elif output == "attenuation":
        X = where / cylinder.length_constant
        exact = complex(cb.voltage_ratio(X, cylinder.electrotonic_length, cylinder.end_conductance_ratio))

        def error_at(n: NDArray[np.int64]) -> float:
            c = cp.discretise_cable(cylinder, int(n[0]))
            unit = np.zeros(c.size)
            unit[0] = 1.0
            v = cp.steady_state(c, unit)
            return _relative(complex(cp.sample(c, v, [where])[0] / v[0]), exact)
    else:  # time course
        if exact_time_course is None or times is None:
            raise InputError("the time-course advice needs the exact solution (cabletheory.transient)")
        cp.expected_order(scheme)  # names the scheme in the error if it is unknown
        if not (math.isfinite(space_share) and 0 < space_share < 1):
            raise InputError(f"space share of the target must lie strictly between 0 and 1, got {space_share!r}")
        if compare_step is not None and not (math.isfinite(compare_step) and compare_step > 0):
            raise InputError(f"time step to compare must be a finite positive time in s, got {compare_step!r}")
        t = np.asarray(times, dtype=float)
        spacing = _output_spacing(t)
        v_exact = np.asarray(exact_time_course(t), dtype=float).reshape(t.size, 1)
        peak = float(np.max(np.abs(v_exact)))
        peaks = np.array([peak])
        probe: Probe = ((0, where),)
        if not peak > 0:
            raise InputError(f"the exact voltage at the site ({where!r} m) stays at rest (a killed end?), so a "
                             "relative error means nothing there; choose another --read-at")
        exact = complex(peak)
        space_target = target * space_share
        # a Crank–Nicolson Δt whose own time error is negligible beside both shares, found on a
        # probe grid (the time error hardly depends on the compartment count)
        negligible = min(space_target, target - space_target) / REFERENCE_MARGIN
        grid = cp.discretise_cable(cylinder, int(np.clip(rule_n[0], 8, 400)), soma_area=soma_area or None)
        start = math.ceil(spacing / (cylinder.time_constant / 2000))  # first try: Δt near τm/2000
        step = _time_converged(grid, probe, t, spacing, start, peaks, negligible)[1]
        fine = step

        def error_at(n: NDArray[np.int64]) -> float:
            c = cp.discretise_cable(cylinder, int(n[0]), soma_area=soma_area or None)
            return _worst(_step_course(c, probe, t, fine, "crank-nicolson"), v_exact, peaks)

    electrotonic = np.array([cylinder.electrotonic_length])
    n, err = _search(error_at, electrotonic, space_target, 20_000 if output == "time-course" else MAX_COMPARTMENTS)
    time_step = None
    if output == "time-course":
        c = cp.discretise_cable(cylinder, int(n[0]), soma_area=soma_area or None)
        time_step, err, step = _advise_step(c, probe, t, v_exact, peaks, spacing, round(spacing / fine), scheme,
                                            space_target, target - space_target, negligible, compare_step)
    return Advice(output=output, target=target, exact_value=exact, compartments=n, error=err, rule_compartments=rule_n,
                  rule_error=error_at(rule_n), rule_fraction=rule_fraction, rule_frequency=rule_frequency,
                  length_constants=lam, length_constants_at_frequency=lam_f, electrotonic_lengths=electrotonic,
                  site=where if output in ("attenuation", "time-course") else None,
                  frequency=frequency if output == "impedance" else None, step=step, time_step=time_step)


def advise_tree_course(cell: PassiveTree, read: Sequence[Site], target: float, *, times: ArrayLike,
                       stimulus_at: Site | None = None, scheme: str = "crank-nicolson",
                       space_share: float = SPACE_SHARE,
                       compare_step: float | None = None, rule_fraction: float = 0.1,
                       rule_frequency: float = 100.0) -> Advice:
    """Compartments per piece and the time step for a time course on a whole tree.

    A current step at ``stimulus_at`` (default the root, the soma) is read at the tree sites
    ``read``; the error is the largest
    over the sample times and the sites of |compartmental − exact|, each site's error divided by
    its own peak exact voltage, so every site meets the target. The exact course is the tree's
    Laplace-domain solution inverted on a contour (:func:`cabletheory.tree_time.tree_response`;
    Holmes 1986, Weideman & Trefethen 2007); the compartments are those of
    :func:`cabletheory.compartment.discretise_tree`, one run of equal compartments per piece,
    spread with equal electrotonic spacing, which is where the second-order error is even; the
    time step is chosen as for one cable (:class:`StepAdvice`): ``space_share`` of the target to
    the compartments, the rest to Δt, and the pair verified against the exact course.

    Parameters
    ----------
    cell : the tree (cylindrical pieces of positive length; one Rm and one Cm for the whole cell)
    read : the sites where the time course must be accurate (the root, points, or along pieces)
    stimulus_at : where the current is applied: the root or a point of the file (the far end of a
        piece, where every discretisation has a node); default the root
    target : relative error, e.g. 0.01 for 1 %
    times : s, sample times (>= 0, sharing a common step; the step is at t = 0)
    scheme, space_share, compare_step, rule_fraction, rule_frequency : as for :func:`advise_cable`
    """
    from ..case import CurrentStep
    from ..tree_time import tree_response

    _check_target(target)
    cp.expected_order(scheme)
    if not (math.isfinite(space_share) and 0 < space_share < 1):
        raise InputError(f"space share of the target must lie strictly between 0 and 1, got {space_share!r}")
    if compare_step is not None and not (math.isfinite(compare_step) and compare_step > 0):
        raise InputError(f"time step to compare must be a finite positive time in s, got {compare_step!r}")
    tree = cell.tree
    read = tuple(read)
    if not read:
        raise InputError("give at least one site to read the time course at")
    if tree.geometry != "cylinders" or not np.allclose(tree.proximal_diameters, tree.distal_diameters, rtol=1e-12):
        raise InputError(f"{tree.source}: the tree has tapered pieces (frusta); the compartments advised here are "
                         "uniform cylinders (read the file without --taper)")
    short = np.flatnonzero(np.asarray(tree.lengths) <= 0)
    if short.size:
        raise InputError(f"{tree.source}, line {int(tree.lines[short[0]])}: piece {tree.labels[short[0]]!r} has "
                         "zero length; advice needs every piece longer than zero")
    rm_all, cm_all = np.atleast_1d(cell.membrane_resistivity), np.atleast_1d(cell.membrane_capacitance)
    if rm_all.size != 1 or cm_all.size != 1 or cell.soma_membrane_resistivity is not None \
            or cell.soma_membrane_capacitance is not None:
        raise InputError("advice on a tree needs one Rm and one Cm for the whole cell")
    rm, ri, cmem = float(rm_all[0]), float(cell.axial_resistivity), float(cm_all[0])
    parents = np.asarray(tree.parents, dtype=np.int64)
    lengths = np.asarray(tree.lengths, dtype=float)
    diameters = np.asarray(tree.distal_diameters, dtype=float)
    ends = cell.tip_conductances()
    soma = tree.soma_area or None

    t = np.asarray(times, dtype=float)
    spacing = _output_spacing(t)
    source = root_site() if stimulus_at is None else stimulus_at
    if source.piece >= 0 and not math.isclose(source.distance, float(lengths[source.piece]), rel_tol=1e-9):
        raise InputError("the stimulus must be at the soma or at a point of the file (where every "
                         "discretisation has a node), not part way along a piece")
    v_exact = tree_response(cell, CurrentStep(1.0), t, source, read, tolerance=1e-10).voltage
    peaks = np.max(np.abs(v_exact), axis=0)
    if not np.all(peaks > 0):
        k = int(np.argmin(peaks))
        raise InputError(f"the exact voltage at read site {k + 1} stays at rest (a killed tip?), so a relative "
                         "error means nothing there; choose another site")
    root_piece = int(np.flatnonzero(parents == -1)[0])

    def probe_of(c: cp.Compartments) -> Probe:
        out = []
        for site in read:
            if site.piece < 0:
                out.append((root_piece, 0.0))
            else:
                assert c.proximal is not None
                out.append((site.piece, float(c.distance[c.proximal[site.piece]]) + site.distance))
        return tuple(out)

    def source_of(c: cp.Compartments) -> int:
        return 0 if source.piece < 0 else int(cp.branch_nodes(c, source.piece)[-1])

    def discretise(n: NDArray[np.int64]) -> cp.Compartments:
        return cp.discretise_tree(parents, lengths, diameters, rm, ri, cmem, n, soma_area=soma, end_conductances=ends)

    rule_n, lam, lam_f = _rule(lengths, diameters, rm, ri, cmem, rule_fraction, rule_frequency)
    electrotonic = lengths / lam
    space_target = target * space_share
    time_target = target - space_target
    negligible = min(space_target, time_target) / REFERENCE_MARGIN
    grid = discretise(np.maximum(rule_n, 1))
    start = math.ceil(spacing / (rm * cmem / 2000))  # first try: Δt near τm/2000
    fine = _time_converged(grid, probe_of(grid), t, spacing, start, peaks, negligible, source_of(grid))[1]

    def error_at(n: NDArray[np.int64]) -> float:
        c = discretise(n)
        return _worst(_step_course(c, probe_of(c), t, fine, "crank-nicolson", source_of(c)), v_exact, peaks)

    n, err = _search(error_at, electrotonic, space_target, MAX_TREE_NODES)
    c = discretise(n)
    time_step, err, step = _advise_step(c, probe_of(c), t, v_exact, peaks, spacing, round(spacing / fine), scheme,
                                        space_target, time_target, negligible, compare_step, source_of(c))
    return Advice(output="time-course", target=target, exact_value=complex(float(np.max(peaks))), compartments=n,
                  error=err, rule_compartments=rule_n, rule_error=error_at(rule_n), rule_fraction=rule_fraction,
                  rule_frequency=rule_frequency, length_constants=np.asarray(lam, dtype=float),
                  length_constants_at_frequency=np.asarray(lam_f, dtype=float), electrotonic_lengths=electrotonic,
                  step=step, time_step=time_step, site_peaks=peaks)


MAX_TREE_NODES = 50_000


def _output_spacing(times: Array) -> float:
    """The largest Δt that divides every sample time (s): their greatest common step."""
    if times.ndim != 1 or times.size == 0 or not np.all(np.isfinite(times)):
        raise InputError("the time course needs a list of finite sample times")
    if np.any(times < 0) or np.any(np.diff(times) < 0):
        raise InputError("sample times of the time course must be >= 0 (the step is at t = 0) and increasing")
    positive = times[times > 0]
    if positive.size == 0:
        raise InputError("the time course needs at least one time after the onset")
    # greatest common step of the sample times, on a 1e-12 s lattice
    ticks = np.rint(positive / 1e-12).astype(np.int64)
    spacing = int(np.gcd.reduce(ticks)) * 1e-12
    if positive[-1] / spacing > MAX_TIME_STEPS:
        raise InputError(f"the sample times share no step coarser than {spacing:.3g} s over {positive[-1]:.3g} s; "
                         "give evenly spaced times such as '0:2:0.05 ms'")
    return spacing


def _divides(step: float, times: Array) -> bool:
    counts = np.rint(times / step)
    return bool(np.all(np.abs(counts * step - times) <= 1e-6 * step + 1e-12 * np.abs(times)))


Probe = tuple[tuple[int, float], ...]  # read sites: (branch of the discretisation, path distance from the root, m)


def _worst(course: Array, other: Array, peak: Array) -> float:
    """Largest |course − other| over times and sites, each site's error per its own peak voltage."""
    return float(np.max(np.abs(course - other) / peak))


def _step_course(c: cp.Compartments, where: Probe, times: Array, step: float, scheme: str, source: int = 0) -> Array:
    """Voltage (V) at the probe's sites for a 1 A step at node ``source`` (default the origin or root,
    node 0), time × site, by ``compartment.integrate`` at Δt = ``step``."""
    if times[-1] / step > MAX_TIME_STEPS:
        raise ConvergenceError(f"a time step of {step:.3g} s needs more than {MAX_TIME_STEPS} steps over "
                               f"{times[-1]:.3g} s; ask for a looser target or a shorter time course")
    current = np.zeros(c.size)
    current[source] = 1.0
    v = cp.integrate(c, current, times, scheme=scheme, step=step)
    return np.stack([cp.sample(c, v, [distance], branch)[:, 0] for branch, distance in where], axis=1)


def _time_converged(c: cp.Compartments, where: Probe, times: Array, spacing: float, divisions: int, peak: Array,
                    tolerance: float, source: int = 0) -> tuple[Array, float, float, int]:
    """A Crank–Nicolson solve whose own time error is at most ``tolerance`` (relative to ``peak``).

    The error of the solve at Δt = h is estimated by Richardson's rule for a second-order
    method, :math:`|V_h - V_{2h}| / (2^2 - 1)`; h = ``spacing / divisions`` (first try; made
    even and refined until the estimate is within ``tolerance``). Returns the course, h (s),
    the estimate and the number of solves.
    """
    divisions = 2 * max(1, math.ceil(divisions / 2))
    for solves in range(2, 20, 2):
        h = spacing / divisions
        course = _step_course(c, where, times, h, "crank-nicolson", source)
        estimate = _worst(course, _step_course(c, where, times, 2 * h, "crank-nicolson", source), peak) / 3
        if estimate <= tolerance:
            return course, h, estimate, solves
        # second order: the error falls as h²
        divisions = 2 * math.ceil(divisions * math.sqrt(estimate / tolerance) * 1.1 / 2)
    raise ConvergenceError(f"no Crank–Nicolson step reached a time error of {tolerance:.3g}")  # pragma: no cover


def _advise_step(c: cp.Compartments, where: Probe, times: Array, v_exact: Array, peak: Array, spacing: float,
                 divisions: int, scheme: str, space_target: float, time_target: float, negligible: float,
                 compare_step: float | None, source: int = 0) -> tuple[StepAdvice, float, float]:
    """The largest Δt = spacing/m (m a whole number) whose time error meets ``time_target``.

    The time error of a run at Δt is its distance from a time-converged run with the same
    compartments; it must stay within ``time_target`` less that run's own (estimated) time error.
    The scheme's order p (e ∝ Δt^p; Crank & Nicolson 1947) predicts m from each measured error;
    the prediction is measured, refined until it meets the budget, then coarsened by bisection
    on m to the largest passing Δt (exact for m < 50, to 2 % above). Returns the advice, the
    spatial error re-measured with the reference, and the reference step.
    """
    order = cp.expected_order(scheme)[1]
    reference, ref_step, ref_error, solves = _time_converged(c, where, times, spacing, divisions, peak, negligible,
                                                             source)
    space_error = _worst(reference, v_exact, peak)
    # the reference is itself off by up to ref_error: keep the time error against a fully
    # converged run within the share (triangle inequality)
    budget = time_target - ref_error
    tried: dict[int, tuple[float, Array]] = {}

    def measure(m: int) -> float:
        course = _step_course(c, where, times, spacing / m, scheme, source)
        tried[m] = (_worst(course, reference, peak), course)
        return tried[m][0]

    def predicted(m: int) -> int:  # divisions for the budget if e ∝ (spacing/m)^p
        e = tried[m][0]
        return math.ceil(m * (e / budget) ** (1.0 / order)) if e > 0 else 1

    m = 1
    e = measure(m)
    while e > budget:
        m = max(m + 1, math.ceil(predicted(m) * 1.02))
        e = measure(m)
    lo = max((k for k, (ek, _) in tried.items() if ek > budget), default=0)  # largest failing m
    first = True
    while m - lo > 1 and m - lo > 0.02 * m:
        guess = predicted(m) if first else (lo + m) // 2
        first = False
        guess = min(max(guess, lo + 1), m - 1)
        if measure(guess) <= budget:
            m = guess
        else:
            lo = guess
    time_error, course = tried[m]
    total = _worst(course, v_exact, peak)  # the verification: against the exact course
    e1 = tried[1][0]
    limited = m == 1
    estimate = spacing * (budget / e1) ** (1.0 / order) if limited and e1 > 0 else None
    compare_error = None
    if compare_step is not None and _divides(compare_step, times):
        fixed = _step_course(c, where, times, compare_step, scheme, source)
        compare_error = _worst(fixed, v_exact, peak)
        solves += 1
    advice = StepAdvice(scheme=scheme, order=order, space_target=space_target, time_target=time_target,
                        step=spacing / m, divisions=m, output_spacing=spacing, last_time=float(times[-1]),
                        samples=int(times.size), time_error=time_error, error=total,
                        limited_by_output=limited, step_estimate=estimate, reference_step=ref_step,
                        reference_error=ref_error, solves=solves + len(tried), compare_step=compare_step,
                        compare_error=compare_error)
    return advice, space_error, ref_step
