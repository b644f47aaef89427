r"""Rm, Ri and Cm of a reconstructed cell (and a soma shunt) fitted to a recorded soma response.

With the morphology known, the soma response to a current step depends on the specific membrane
resistance Rm, the axial resistivity Ri and the specific capacitance Cm (uniform over the cell)
and, where the electrode has damaged the soma, on an extra conductance :math:`g_{sh}` from the soma
to rest (Major et al. 1994 [MEM]). This module fits those three or four numbers to the trace with
the exact time course of any passive tree (:func:`cabletheory.tree_time.tree_response`, the
Laplace-domain solution inverted on a hyperbolic contour), by nonlinear least squares over their
logarithms, with Student-t intervals from the linearised covariance, the correlation matrix and
the plain statements of :mod:`cabletheory.fit_stats` when the data cannot separate them (Rall et
al. 1992: with a shunt in particular, Rm and the shunt trade off).

The soma shunt enters as the soma's own membrane resistivity
:math:`R_{m,S} = A_S/(A_S/R_m + g_{sh})` (same Cm), so a tree without a soma cannot take one.
One charging curve often leaves the shunt in a flat valley of χ² where the search over all four
parameters cannot meet its tolerance, so a fit with a shunt also profiles χ² over it
(:class:`ShuntProfile`: Rm, Ri, Cm re-fitted on a log grid of shunts, the interval's ends from the
profile t threshold of Bates & Watts 1988, ch. 6). Where the profile stays under the threshold up
to an end of the grid the data do not determine the shunt there (Raue et al. 2009); Rm, Ri and Cm
are then reported for the shunt fixed at a stated value, and ``converged`` is that fit's own.

Every result assumes a passive, linear membrane, uniform over the dendrites, and a morphology
whose diameters and lengths are right: errors there go straight into Rm, Ri and Cm.

References
----------
Major G, Larkman AU, Jonas P, Sakmann B & Jack JJB (1994) J. Neurosci. 14:4613 [Major1994] (fitting
the transient of a reconstructed cell; the soma shunt) [MEM].
Rall W et al. (1992) Physiol. Rev. 72:S159 [Rall1992] (non-uniqueness) [MEM].
Bates DM & Watts DG (1988) [BatesWatts1988] (intervals; the profile t statistic, ch. 6).
Raue A et al. (2009) Bioinformatics 25:1923 [Raue2009] (a flat profile: not determined by the data) [MEM].
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from . import fit_stats
from .errors import ConvergenceError, InputError
from .fit_exponentials import _prepare, decompose

__all__ = ["MorphologyFit", "ShuntProfile", "fit_morphology"]

Array = NDArray[np.float64]

TOLERANCE = 1e-8  # error of the exact tree time course, relative to its reference voltage
MAX_STEPS = 15  # trial points of the search (each with p more courses for its Jacobian)
_BOUNDS = {"membrane_resistivity": (0.01, 100.0), "axial_resistivity": (0.05, 50.0),
           "membrane_capacitance": (1e-4, 0.1), "soma_shunt": (1e-13, 1e-6)}
PROFILE_DECADES = (-3.0, 2.0)  # the shunt's profile grid, decades of the soma's own membrane conductance
PROFILE_STEP = 0.5  # decades between the profile's points
PROFILE_REFINE = 4  # bisections of each closed end of the profile interval
_SYMBOLS = {"membrane_resistivity": "Rm", "axial_resistivity": "Ri", "membrane_capacitance": "Cm",
            "soma_shunt": "g_shunt"}


@dataclass(frozen=True, slots=True)
class MorphologyFit(fit_stats.NamedEstimates):
    """Rm, Ri, Cm (and a soma shunt) of a reconstructed cell fitted to a trace.

    Attributes
    ----------
    names : fitted parameters (``membrane_resistivity`` Ω·m², ``axial_resistivity`` Ω·m,
        ``membrane_capacitance`` F/m², ``soma_shunt`` S)
    estimates, intervals : SI values and (p, 2) intervals at ``level``
    correlation : correlation of the log-parameters
    condition, residual_check : as in :mod:`cabletheory.fit_stats`
    membrane_time_constant : Rm·Cm of the dendrites, s
    times, data, fitted, standard_error : s since onset and V over the fitted window
    chi_square, dof, noise_scale : goodness of fit
    level, converged, evaluations, window, at_bounds, notes, method : as in
        :class:`cabletheory.fit_model.ModelFit`
    cell : the fitted :class:`~cabletheory.tree_laplace.PassiveTree`
    shunt_profile : :class:`ShuntProfile` of a fit with a shunt (the shunt's value is the fixed one,
        its interval the profile's), else None
    """

    names: tuple[str, ...]
    estimates: Array
    intervals: Array
    correlation: Array
    condition: fit_stats.ConditionReport
    residual_check: fit_stats.ResidualCheck
    membrane_time_constant: float
    times: Array
    data: Array
    fitted: Array
    standard_error: Array
    chi_square: float
    dof: int
    noise_scale: float
    level: float
    converged: bool
    evaluations: int
    window: tuple[float, float]
    at_bounds: tuple[str, ...]
    cell: Any
    notes: tuple[str, ...] = field(default_factory=tuple)
    method: str = ""
    shunt_profile: ShuntProfile | None = None

    @property
    def model(self) -> str:
        """The kind of cell fitted, in the words of :class:`cabletheory.fit_model.ModelFit`."""
        return "reconstructed-cell"



@dataclass(frozen=True, slots=True)
class ShuntProfile:
    """χ² over the soma shunt with Rm, Ri and Cm re-fitted at each value (a profile).

    Attributes
    ----------
    shunts : S, the grid (log-spaced, in decades of the soma's membrane conductance)
    chi_square : the smallest χ² over Rm, Ri, Cm at each shunt
    membrane_resistivity : Ω·m², Rm at each point of the profile
    threshold : χ² above the best fit that the interval admits (:func:`fit_stats.profile_interval`)
    interval : S, the shunts whose profile lies within the threshold (an end of the grid where open)
    low_open, high_open : whether the profile stays under the threshold up to that end of the grid
    level : confidence level of the threshold
    fixed : S, the shunt the reported Rm, Ri, Cm were fitted at: the profile's minimum, or the grid's
        low end when shunts down to it fit as well (no shunt to speak of)
    """

    shunts: Array
    chi_square: Array
    membrane_resistivity: Array
    threshold: float
    interval: tuple[float, float]
    low_open: bool
    high_open: bool
    level: float
    fixed: float

    @property
    def determined(self) -> bool:
        """True when the profile rises above the threshold on both sides inside the grid."""
        return not (self.low_open or self.high_open)

    def statement(self) -> str:
        """One sentence on what the data say about the shunt (and at which shunt Rm, Ri, Cm are given)."""
        lo, hi = (f"{1e9 * g:.3g}" for g in self.interval)
        pct = f"{100 * self.level:g} %"
        inside = (self.shunts >= self.interval[0] * (1 - 1e-9)) & (self.shunts <= self.interval[1] * (1 + 1e-9))
        rm = self.membrane_resistivity[inside] if inside.any() else self.membrane_resistivity
        rm_span = f"Rm moves from {10 * float(rm.min()):.4g} to {10 * float(rm.max()):.4g} kΩ·cm² across it"
        where = "the range's low end: no shunt to speak of" if self.low_open else "the profile's minimum"
        fixed = (f"Rm, Ri and Cm are given with the shunt fixed at {1e9 * self.fixed:.3g} nS ({where}), their "
                 f"intervals for that shunt")
        if self.determined:
            return (f"the data determine the soma shunt g_shunt: {pct} profile interval {lo} to {hi} nS (outside "
                    f"it χ² rises by more than {self.threshold:.3g} with Rm, Ri and Cm re-fitted at each shunt); "
                    f"{rm_span}; {fixed}")
        span = float(np.ptp(self.chi_square[inside])) if inside.any() else 0.0
        return (f"the data do not determine the soma shunt g_shunt within {lo} to {hi} nS: over that range χ² "
                f"changes by only {span:.3g}, less than the {pct} profile threshold {self.threshold:.3g}, with Rm, Ri "
                f"and Cm re-fitted at each shunt; {rm_span}; {fixed}")


def _cell(tree: Any, p: dict[str, float]) -> Any:
    from .tree_laplace import PassiveTree

    rm, ri, cm = p["membrane_resistivity"], p["axial_resistivity"], p["membrane_capacitance"]
    shunt = p.get("soma_shunt", 0.0)
    soma_rm = None
    if shunt > 0:
        area = float(tree.soma_area)
        soma_rm = area / (area / rm + shunt)
    return PassiveTree(tree, rm, ri, cm, soma_membrane_resistivity=soma_rm,
                       soma_membrane_capacitance=cm if soma_rm is not None else None)


def fit_morphology(times: ArrayLike, voltage: ArrayLike, tree: Any, current: float, *,
                   standard_error: ArrayLike | None = None, shunt: bool = False,
                   window: tuple[float | None, float | None] | None = None, level: float = 0.95,
                   start: dict[str, float] | None = None) -> MorphologyFit:
    r"""Fit Rm, Ri, Cm (and a soma shunt) of ``tree`` to the soma response to a current step.

    Parameters
    ----------
    times : s since the onset of the step (injected and recorded at the root, the soma)
    voltage : V, deviation from rest
    tree : :class:`cabletheory.tree.model.Tree` of cylinders (as read for the tree commands)
    current : A, the step's amplitude (sign included)
    standard_error : V per sample (relative weights), or None
    shunt : also fit a conductance from the soma to rest (the tree needs a soma); the result then
        carries its χ² profile (``shunt_profile``), and Rm, Ri, Cm are given at the stated shunt
    window : (start, end) s since onset; a None start is chosen by the rule of
        :func:`cabletheory.fit_exponentials.decompose` (and moved past an electrode term)
    level : confidence level
    start : starting values by canonical name (SI); the default takes Cm = 1 µF/cm², Rm = τ0/Cm
        from the slowest exponential, Ri = 150 Ω·cm and a shunt of a tenth of the soma's
        membrane conductance

    References
    ----------
    Major et al. (1994) [Major1994]; Rall et al. (1992) [Rall1992]; Bates & Watts (1988)
    [BatesWatts1988].
    """
    from scipy.optimize import least_squares

    from .transient import CurrentStep
    from .tree_laplace import root_site
    from .tree_time import tree_response

    amp = float(current)
    if not (math.isfinite(amp) and amp != 0):
        raise InputError(f"current must be finite and not zero, got {current!r}")
    if shunt and not tree.soma_area:
        raise InputError("a soma shunt needs a soma in the morphology")
    t_all, y_all, w_all = _prepare(times, voltage, standard_error)
    first, last = window if window is not None else (None, None)
    keep = t_all > 0
    if last is not None:
        keep &= t_all <= last
    notes: list[str] = []
    tau0 = None
    try:
        rule = decompose(t_all[keep], y_all[keep], standard_error=1.0 / w_all[keep], offset=True,
                         window=(first, None), max_components=3)
        tau0 = float(rule.fit.time_constants[0])
        if first is None:
            first = max(rule.window[0], rule.artefact_end or 0.0)
            notes += [n for n in rule.notes if "left out" in n or "negative coefficient" in n]
    except (InputError, ConvergenceError):
        pass
    if first is not None:
        keep &= t_all >= first
    t, y, w = t_all[keep], y_all[keep], w_all[keep]
    names = ("membrane_resistivity", "axial_resistivity", "membrane_capacitance") + (("soma_shunt",) if shunt else ())
    if t.size < len(names) + 6:
        raise InputError(f"only {t.size} samples lie in the fitting window; at least {len(names) + 6} are needed")
    guess = {"membrane_capacitance": 0.01, "axial_resistivity": 1.5,
             "membrane_resistivity": (tau0 / 0.01) if tau0 else 2.0}
    if shunt:
        guess["soma_shunt"] = 0.1 * float(tree.soma_area) / guess["membrane_resistivity"]
    guess.update(start or {})
    lo = np.log([_BOUNDS[n][0] for n in names])
    hi = np.log([_BOUNDS[n][1] for n in names])
    x0 = np.clip(np.log([guess[n] for n in names]), lo + 1e-6, hi - 1e-6)
    counter = [0]
    stimulus = CurrentStep(amp)
    root = root_site()

    def course(x: Array) -> Array:
        counter[0] += 1
        cell = _cell(tree, dict(zip(names, np.exp(x).tolist(), strict=True)))
        return tree_response(cell, stimulus, t, root, [root], tolerance=TOLERANCE).voltage[:, 0]

    def residual(x: Array) -> Array:
        return (course(x) - y) * w

    result = least_squares(residual, x0, bounds=(lo, hi), method="trf", x_scale=1.0, diff_step=1e-5,
                           xtol=1e-8, ftol=1e-8, gtol=1e-8, max_nfev=MAX_STEPS)
    symbols = tuple(_SYMBOLS[n] for n in names)
    stats = fit_stats.log_scale_fit(result, names, symbols, (lo, hi), level)
    profile = None
    if shunt:
        searched = counter[0]
        profile, fixed_fit = _shunt_profile(result, stats, tree, course, y, w, lo, hi, level)
        if not result.status > 0:
            notes.append(f"the search over all four parameters stopped after {searched} exact time courses "
                         "without meeting its tolerance, along the shunt; the values given come from its profile")
        result = fixed_fit  # Rm, Ri, Cm fitted with the shunt fixed at the stated value
        stats = _with_fixed_shunt(fit_stats.log_scale_fit(fixed_fit, names[:-1], symbols[:-1], (lo[:-1], hi[:-1]),
                                                          level), profile)
        notes.append(profile.statement())
    dof = stats.dof
    for n in stats.at_bounds:
        notes.append(f"{_SYMBOLS[n]} ended at the edge of its search range {_BOUNDS[n]} (SI): the estimate and "
                     f"its interval are not trustworthy")
    if not result.status > 0:
        notes.append(f"the search stopped after {counter[0]} exact time courses without meeting its tolerance: the "
                     "data barely move the fit along some direction (see the correlations); the values are the "
                     "best found, and their intervals are wide for that reason")
    notes += list(stats.condition.statements())
    if stats.residual_check.structured:
        notes.append(stats.residual_check.describe())
    p = dict(zip(names, stats.estimates.tolist(), strict=True))
    method = (f"exact soma response of the reconstructed tree (Laplace-domain solution inverted on a hyperbolic "
              f"contour, error {TOLERANCE:g} of the reference voltage) fitted by nonlinear least squares over the "
              f"logarithms of {', '.join(symbols)} (scipy least_squares, trf); {100 * level:g} % intervals from "
              f"the linearised covariance (Student t, {dof} degrees of freedom, on the log scale)")
    return MorphologyFit(
        names=names, estimates=stats.estimates, intervals=stats.intervals, correlation=stats.correlation,
        condition=stats.condition, residual_check=stats.residual_check,
        membrane_time_constant=p["membrane_resistivity"] * p["membrane_capacitance"], times=t, data=y,
        fitted=y + stats.residuals / w, standard_error=1.0 / w, chi_square=stats.chi_square, dof=dof,
        noise_scale=stats.noise_scale, level=level, converged=bool(result.status > 0), evaluations=counter[0],
        window=(float(t[0]), float(t[-1])), at_bounds=stats.at_bounds, cell=_cell(tree, p), notes=tuple(notes),
        method=method, shunt_profile=profile)


def _shunt_profile(result: Any, stats: fit_stats.LogScaleFit, tree: Any, course: Any, y: Array, w: Array,
                   lo: Array, hi: Array, level: float) -> tuple[ShuntProfile, Any]:
    """χ² over a log grid of the shunt with Rm, Ri, Cm re-fitted at each point (warm-started from the
    neighbouring point, outward from the full fit), its interval, and the fit at the profile's best point.

    References: Bates & Watts (1988) ch. 6 [BatesWatts1988]; Raue et al. (2009) [Raue2009].
    """
    from scipy.optimize import least_squares

    x_full = np.asarray(result.x, dtype=float)
    soma = float(tree.soma_area) / float(np.exp(x_full[0]))  # the soma's own membrane conductance, S
    decades = np.arange(PROFILE_DECADES[0], PROFILE_DECADES[1] + 1e-9, PROFILE_STEP)
    grid = np.unique(np.clip(np.log(soma) + decades * math.log(10.0), lo[-1], hi[-1]))

    def fit_at(g: float, x0: Array) -> Any:
        def fixed(x: Array) -> Array:
            return (course(np.append(x, g)) - y) * w

        return least_squares(fixed, np.clip(x0, lo[:-1] + 1e-6, hi[:-1] - 1e-6), bounds=(lo[:-1], hi[:-1]),
                             method="trf", x_scale=1.0, diff_step=1e-5, xtol=1e-8, ftol=1e-8, gtol=1e-8,
                             max_nfev=MAX_STEPS)

    def chi(f: Any) -> float:
        return float(f.fun @ f.fun)

    fits: list[Any] = [None] * grid.size
    nearest = int(np.argmin(np.abs(grid - x_full[-1])))
    for order in (range(nearest, grid.size), range(nearest - 1, -1, -1)):
        x0 = x_full[:-1]
        for k in order:
            fits[k] = fit_at(float(grid[k]), x0)
            x0 = fits[k].x
    values = np.array([chi(f) for f in fits])
    k = int(np.argmin(values))  # narrow the profile's minimum down before its threshold is taken
    if 0 < k < grid.size - 1:
        extra_g, extra_f = [], []
        left, centre, right = float(grid[k - 1]), float(grid[k]), float(grid[k + 1])
        f_centre = fits[k]
        for _ in range(PROFILE_REFINE):
            g_left, g_right = 0.5 * (left + centre), 0.5 * (centre + right)
            f_left, f_right = fit_at(g_left, f_centre.x), fit_at(g_right, f_centre.x)
            extra_g += [g_left, g_right]
            extra_f += [f_left, f_right]
            trio = [(chi(f_left), g_left, f_left), (chi(f_centre), centre, f_centre), (chi(f_right), g_right, f_right)]
            j = min(range(3), key=lambda i: trio[i][0])
            if j == 0:
                left, centre, right, f_centre = left, g_left, centre, f_left
            elif j == 1:
                left, right = g_left, g_right
            else:
                left, centre, right, f_centre = centre, g_right, right, f_right
        merged = np.argsort(np.concatenate([grid, extra_g]))
        grid = np.concatenate([grid, extra_g])[merged]
        fits = [(fits + extra_f)[int(i)] for i in merged]
        values = np.array([chi(f) for f in fits])
    best = min(float(values.min()), stats.chi_square)
    threshold = fit_stats.profile_interval(grid, values, best, stats.dof, level)[4]
    points = list(zip(grid.tolist(), fits, strict=True))
    inside = np.flatnonzero(values - best <= threshold)
    if inside.size:  # each closed end: bisect between the last point inside and the first outside
        for a, b in ((int(inside[0]), int(inside[0]) - 1), (int(inside[-1]), int(inside[-1]) + 1)):
            if not 0 <= b < grid.size:
                continue
            g_in, g_out, x_in = float(grid[a]), float(grid[b]), fits[a].x
            for _ in range(PROFILE_REFINE):
                g_mid = 0.5 * (g_in + g_out)
                f_mid = fit_at(g_mid, x_in)
                points.append((g_mid, f_mid))
                if chi(f_mid) - best <= threshold:
                    g_in, x_in = g_mid, f_mid.x
                else:
                    g_out = g_mid
    points.sort(key=lambda item: item[0])
    grid = np.array([g for g, _ in points])
    fits = [f for _, f in points]
    values = np.array([chi(f) for f in fits])
    best = min(float(values.min()), stats.chi_square)
    g_low, g_high, low_open, high_open, threshold = fit_stats.profile_interval(grid, values, best, stats.dof, level)
    k = int(np.argmin(values))
    if low_open:  # no shunt to speak of fits as well as any: fix it at the low end
        k_fit, g_fixed = fits[0], float(grid[0])
    else:
        k_fit, g_fixed = fits[k], float(grid[k])
        if 0 < k < grid.size - 1:  # the minimum of the parabola through the best point and its neighbours
            c = np.polyfit(grid[k - 1:k + 2], values[k - 1:k + 2], 2)
            if c[0] > 0:
                g_vertex = float(np.clip(-c[1] / (2 * c[0]), grid[k - 1], grid[k + 1]))
                f_vertex = fit_at(g_vertex, fits[k].x)
                if chi(f_vertex) <= values[k]:
                    k_fit, g_fixed = f_vertex, g_vertex
    profile = ShuntProfile(shunts=np.exp(grid), chi_square=values, membrane_resistivity=np.array(
        [math.exp(f.x[0]) for f in fits]), threshold=threshold, interval=(math.exp(g_low), math.exp(g_high)),
        low_open=low_open, high_open=high_open, level=level, fixed=math.exp(g_fixed))
    return profile, k_fit


def _with_fixed_shunt(stats: fit_stats.LogScaleFit, profile: ShuntProfile) -> fit_stats.LogScaleFit:
    """The statistics of Rm, Ri, Cm fitted at a fixed shunt, with the shunt appended as a fourth
    parameter: its value the fixed one, its interval the profile's range, no correlations."""
    p = stats.estimates.size
    covariance = np.full((p + 1, p + 1), np.nan)
    covariance[:p, :p] = stats.covariance
    correlation = np.full((p + 1, p + 1), np.nan)
    correlation[:p, :p] = stats.correlation
    correlation[p, p] = 1.0
    return replace(stats, covariance=covariance, estimates=np.append(stats.estimates, profile.fixed),
                   intervals=np.vstack([stats.intervals, profile.interval]), correlation=correlation)
