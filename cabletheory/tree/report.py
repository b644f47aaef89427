"""The whole analysis of one tree, composed from the other jobs, in one result object."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .audit import (
    BranchPoints,
    Stem,
    Tips,
    Tolerances,
    Violation,
    audit_branch_points,
    audit_stems,
    audit_tips,
    branch_diameter_changes,
    find_departures,
    tip_end_ratios,
)
from .geometry import exact_input_conductances, layout, tip_loads
from .model import Tree, prune_empty_branches
from .reduction import (
    EquivalentCable,
    EquivalentCylinder,
    equivalent_cable,
    equivalent_cylinder,
    reduced_input_conductance,
)

__all__ = ["TreeReport", "analyse_tree", "describe_tips"]


@dataclass(frozen=True, slots=True)
class TreeReport:
    """Everything :func:`analyse_tree` finds, in SI. Formatting is left to the front ends."""

    tree: Tree
    membrane_resistivity: float
    axial_resistivity: float
    membrane_capacitance: float
    killed_tips: bool  # every tip killed
    tolerances: Tolerances
    pieces: int  # cylinders or frusta the tree is made of
    branches: int  # unbranched runs of pieces between branch points and tips
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
    tip_conductance: float | None = None  # S at every tip when one end was asked for; None: the tree's own
    end_conductance_ratio: float = 0.0  # B at the far end of the equivalent cylinder
    notes: tuple[str, ...] = field(default_factory=tuple)



def describe_tips(report: TreeReport) -> str:
    """How the tips end, in words: the end asked for at every tip, or a count of the tree's own ends."""
    def one(g: float) -> str:
        if g == 0:
            return "sealed"
        return "killed (held at rest)" if math.isinf(g) else f"leaky, {g * 1e9:.4g} nS to rest"

    if report.tip_conductance is not None:
        return one(report.tip_conductance)
    ends = report.tips.ends
    killed = int(np.count_nonzero(np.isinf(ends)))
    sealed = int(np.count_nonzero(ends == 0))
    if sealed == ends.size or killed == ends.size:
        return one(0.0 if sealed == ends.size else math.inf)
    leaky = ends.size - killed - sealed
    parts = [f"{n} {word}" for n, word in ((sealed, "sealed"), (killed, "killed"), (leaky, "leaky")) if n]
    return "as in the file: " + ", ".join(parts)


def _check_membrane(membrane_resistivity: float, axial_resistivity: float, membrane_capacitance: float) -> None:
    for name, value in (("membrane_resistivity", membrane_resistivity),
                        ("axial_resistivity", axial_resistivity),
                        ("membrane_capacitance", membrane_capacitance)):
        if not (math.isfinite(value) and value > 0):
            raise InputError(f"{name} must be finite and positive, got {value!r}")


def analyse_tree(tree: Tree, membrane_resistivity: float, axial_resistivity: float,
                 membrane_capacitance: float = 0.01, *, tolerances: Tolerances | None = None,
                 killed_tips: bool = False, tip_conductance: float | None = None) -> TreeReport:
    """Audit Rall's conditions, reduce to an equivalent cylinder, and compute exact input resistance.

    Parameters
    ----------
    tree : from :func:`~cabletheory.tree.model.build_tree`
    membrane_resistivity : Rm, Ω·m² (uniform)
    axial_resistivity : Ri, Ω·m (uniform)
    membrane_capacitance : Cm, F/m² (only the time constant uses it)
    tolerances : see :class:`~cabletheory.tree.audit.Tolerances`
    killed_tips : every tip held at rest (the same as ``tip_conductance=inf``)
    tip_conductance : conductance from every tip to rest, S (0 sealed, inf killed); ``None``
        (default): each tip as the tree says (``Tree.ends``; sealed unless stated)

    The exact input resistance holds for any tree, whatever its tips; the reduced model is the
    soma (if any) plus the equivalent cylinder whose far end leaks what all the tips leak
    together (Rall's reduction needs the same end-conductance ratio B at every tip, which the
    audit checks). Rm and Ri are assumed
    uniform and the membrane passive; these are not checked.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491; Rall W (1964) in Neural Theory and Modeling (Reiss,
    ed.), Stanford Univ. Press, 73–97 (3/2 rule, equal tip distances, equivalent cylinder);
    Rall W (1969) Biophys. J. 9:1483 (ρ = G_D/G_S).
    """
    _check_membrane(membrane_resistivity, axial_resistivity, membrane_capacitance)
    rm, ri = membrane_resistivity, axial_resistivity
    tol = tolerances or Tolerances()
    override = math.inf if killed_tips else tip_conductance
    if override is not None and not override >= 0:
        raise InputError(f"tip_conductance must be >= 0 S, got {override!r}")
    t = tree if override else prune_empty_branches(tree)
    if len(t) == 0:
        raise InputError(f"{t.source}: no dendritic pieces left to analyse (check the type selection)")
    lay = layout(t, rm, ri)
    total_area = float(lay.areas.sum())
    if total_area <= 0:
        raise InputError(f"{t.source}: the dendrites have no membrane (every length is 0)")
    # the audit
    loads = tip_loads(t, override)
    branch_points = audit_branch_points(lay)
    tips = audit_tips(lay, loads)
    changes = branch_diameter_changes(lay)
    # exact input conductance, tips inward
    g_in, g_dend = exact_input_conductances(t, rm, ri, tip_conductance=override)
    g_soma = None if t.soma_area is None else t.soma_area / rm
    g_total = g_dend + (g_soma or 0.0)
    r_exact = 1.0 / g_total if g_total > 0 else math.inf
    # the reduction
    cylinder = equivalent_cylinder(lay, rm, ri)
    g_end = float(tips.ends.sum())  # inf when any tip is killed
    end_ratio = g_end * cylinder.semi_infinite_input_resistance
    g_cyl = reduced_input_conductance(cylinder, rm, ri, end_ratio)
    r_reduced = 1.0 / (g_cyl + (g_soma or 0.0))
    cable = equivalent_cable(lay, rm, ri)
    # the verdict
    stems = audit_stems(lay, branch_points, tips, changes, g_in, tol)
    reasons, violations = find_departures(lay, branch_points, tips, changes, tol,
                                         tip_end_ratios(lay, tips, rm, ri))
    tip_x = tips.electrotonic_distances
    return TreeReport(
        tree=t, membrane_resistivity=rm, axial_resistivity=ri, membrane_capacitance=membrane_capacitance,
        killed_tips=bool(np.all(np.isinf(tips.ends))), tolerances=tol, pieces=len(t), branches=lay.branch_count,
        branch_points=branch_points, tips=tips, stems=stems, tip_distance_min=float(tip_x.min()),
        tip_distance_max=float(tip_x.max()), tip_distance_mean=float(tip_x.mean()), membrane_area=total_area,
        reducible=not reasons, reasons=reasons, violations=violations, equivalent_cylinder=cylinder,
        equivalent_cable=cable, soma_area=t.soma_area, soma_conductance=g_soma,
        dendritic_input_conductance=g_dend, input_resistance=r_exact, reduced_input_resistance=r_reduced,
        difference_percent=100.0 * (r_reduced - r_exact) / r_exact,
        conductance_ratio=None if g_soma is None else g_cyl / g_soma,
        exact_conductance_ratio=None if g_soma is None else g_dend / g_soma,
        membrane_time_constant=rm * membrane_capacitance, tip_conductance=override,
        end_conductance_ratio=end_ratio, notes=t.notes,
    )
