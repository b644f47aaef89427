r"""A passive cell model fitted directly to a recorded trace, with intervals and identifiability.

Rather than peeling exponentials and inverting their ratios, the package's exact time course of
the model (:func:`cabletheory.transient.charge`) is fitted to the whole trace by nonlinear least
squares (the approach of Jack, Noble & Tsien 1975, ch. 7, and of Major et al. 1994 for
reconstructed cells [MEM]). Two models, both injected and recorded at the origin:

* ``ball-and-stick``: a lumped soma (same τm) on one equivalent cylinder with a sealed far end,
  four parameters :math:`(\tau_m, L, \rho, R_N)`;
* ``cylinder``: a sealed finite cylinder, three parameters :math:`(\tau_m, L, R_N)`.

The voltage at the soma depends on these alone: for any assumed Cm and Ri, the cell of
:func:`cabletheory.inverse.membrane_properties` (Rm = τm/Cm; the diameter, length and soma that give
G_N = 1/R_N, L and ρ) has exactly this response, so every fit produces a
:class:`~cabletheory.case.Case` whose ``charge`` reproduces the fitted curve; its geometry is one of
many equivalent cells (only the four numbers are determined by the recording).

The search runs over the logarithms of the parameters (all positive), from the exponential
decomposition of :mod:`cabletheory.fit_exponentials` fed through the inverse problem. Intervals
are Student-t intervals from the linearised covariance on the log scale; correlations come from
the same covariance, and pairs correlated beyond 0.95 or a flat direction of the Jacobian are
reported in words: Rall et al. (1992) showed how easily different parameter sets match one
transient, so a model fit states what the data cannot decide.

Every result assumes a passive, linear, uniform membrane.

References
----------
Rall W (1969) Biophys. J. 9:1483 (the ball and stick; ρ).
Jack JJB, Noble D & Tsien RW (1975) Electric Current Flow in Excitable Cells, ch. 7 [MEM].
Rall W, Burke RE, Holmes WR, Jack JJB, Redman SJ & Segev I (1992) Physiol. Rev. 72:S159 [MEM].
Major G, Larkman AU, Jonas P, Sakmann B & Jack JJB (1994) J. Neurosci. 14:4613 [MEM].
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from . import fit_stats
from .case import Case, build_case
from .errors import ConvergenceError, InputError
from .fit_exponentials import _prepare, decompose, peeling_from_fit
from .inverse import CellProperties, membrane_properties

__all__ = ["MODELS", "ModelFit", "fit_model", "model_case"]

Array = NDArray[np.float64]

MODELS = ("ball-and-stick", "cylinder")
DEFAULT_CM = 0.01  # F/m² (1 µF/cm²; Gentet, Stuart & Clements 2000 measured about 0.9)
DEFAULT_RI = 1.0  # Ω·m (100 Ω·cm): only the equivalent cell's geometry depends on it
NOMINAL_CURRENT = 100e-12  # A, used when the current is not known (R_N is then not reported)
TRUNCATION = 1e-9  # truncation error of the exact course, relative to its steady voltage
_BOUNDS = {  # search range of each parameter (the natural logarithm is searched)
    "membrane_time_constant": (1e-5, 10.0),
    "electrotonic_length": (0.02, 20.0),
    "conductance_ratio": (1e-3, 1e4),
    "input_resistance": (1e3, 1e13),
}
_SYMBOLS = {"membrane_time_constant": "τm", "electrotonic_length": "L", "conductance_ratio": "ρ",
            "input_resistance": "R_N", "steady_voltage": "V∞"}


def model_case(model: str, membrane_time_constant: float, electrotonic_length: float,
               conductance_ratio: float, input_resistance: float, current: float, *,
               membrane_capacitance: float = DEFAULT_CM, axial_resistivity: float = DEFAULT_RI,
               duration: float | None = None) -> tuple[Case, CellProperties]:
    r"""The :class:`~cabletheory.case.Case` with the given soma response, and its membrane properties.

    Rm = τm/Cm; the dendrite's diameter d and length ℓ and the soma's diameter follow from G_N =
    1/R_N, L and ρ by :func:`cabletheory.inverse.membrane_properties`; the stimulus is a current
    step (or a pulse of ``duration``) of ``current`` at the origin, recorded there.

    Parameters
    ----------
    model : "ball-and-stick" or "cylinder" (ρ is then ignored)
    membrane_time_constant : τm, s
    electrotonic_length : L
    conductance_ratio : ρ = G_D/G_S
    input_resistance : R_N, Ω
    current : A (any sign, not 0)
    membrane_capacitance : Cm, F/m² (assumed)
    axial_resistivity : Ri, Ω·m (assumed)
    duration : s, for a pulse; None for a step

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491 [Rall1959]; Rall W (1969) Biophys. J. 9:1483 [Rall1969].
    """
    rho = math.inf if model == "cylinder" else float(conductance_ratio)
    props = membrane_properties(membrane_time_constant, electrotonic_length, rho, input_resistance=input_resistance,
                                membrane_capacitance=membrane_capacitance, axial_resistivity=axial_resistivity)
    values: dict[str, object] = {
        "cell": model, "shape": "step" if duration is None else "pulse",
        "membrane_resistivity": props.membrane_resistivity, "axial_resistivity": axial_resistivity,
        "membrane_capacitance": membrane_capacitance, "diameter": props.diameter, "length": props.length,
        "current": current, "positions": [0.0],
    }
    if model == "ball-and-stick":
        values["soma_diameter"] = props.soma_diameter
    if duration is not None:
        values["duration"] = duration
    return build_case(values), props


@dataclass(frozen=True, slots=True)
class ModelFit(fit_stats.NamedEstimates):
    """A passive model fitted to a trace.

    Attributes
    ----------
    model : "ball-and-stick" or "cylinder"
    names : the fitted parameters, canonical names (``membrane_time_constant``,
        ``electrotonic_length``, ``conductance_ratio``, ``input_resistance``)
    estimates : SI values in the order of ``names`` (R_N in Ω; when the current is unknown the last
        entry is R_N for :data:`NOMINAL_CURRENT` and ``current_known`` is False)
    intervals : (p, 2) intervals at ``level``, SI
    correlation : (p, p) correlation of the log-parameters
    condition : :class:`~cabletheory.fit_stats.ConditionReport`
    residual_check : :class:`~cabletheory.fit_stats.ResidualCheck`
    case : the fitted cell as a :class:`~cabletheory.case.Case` (stimulus at the soma, site 0)
    properties : :class:`~cabletheory.inverse.CellProperties` of that cell (assumed Cm and Ri)
    current : A; current_known : whether it came from the user
    times, data, fitted, standard_error : s since onset, V (the fitted window)
    chi_square, dof, noise_scale, aicc : goodness of fit (as in :mod:`cabletheory.fit_stats`)
    level : confidence level; converged : whether the optimiser met its tolerance
    window : (start, end) s since onset; window_chosen : chosen by the rule or given
    at_bounds : parameters that ended at the edge of their search range
    evaluations : how many exact time courses were computed
    notes, method : words for the reader
    """

    model: str
    names: tuple[str, ...]
    estimates: Array
    intervals: Array
    correlation: Array
    condition: fit_stats.ConditionReport
    residual_check: fit_stats.ResidualCheck
    case: Case
    properties: CellProperties
    current: float
    current_known: bool
    times: Array
    data: Array
    fitted: Array
    standard_error: Array
    chi_square: float
    dof: int
    noise_scale: float
    aicc: float
    level: float
    converged: bool
    window: tuple[float, float]
    window_chosen: bool
    at_bounds: tuple[str, ...]
    evaluations: int
    membrane_capacitance: float
    axial_resistivity: float
    notes: tuple[str, ...] = field(default_factory=tuple)
    method: str = ""



def _names(model: str) -> tuple[str, ...]:
    if model == "cylinder":
        return ("membrane_time_constant", "electrotonic_length", "input_resistance")
    return ("membrane_time_constant", "electrotonic_length", "conductance_ratio", "input_resistance")


def _start(t: Array, y: Array, s: Array, model: str, current: float, offset: bool) -> tuple[dict[str, float], str]:
    """Starting values from the exponential decomposition and the inverse problem."""
    start = {"membrane_time_constant": float(t[-1] - t[0]) / 3.0, "electrotonic_length": 1.0,
             "conductance_ratio": 5.0, "input_resistance": float(np.max(np.abs(y))) / abs(current)}
    try:
        decomposition = decompose(t, y, standard_error=s, offset=offset, window=(float(t[0]), None))
    except (InputError, ConvergenceError):
        return start, "default starting values (no exponential decomposition fitted)"
    fit = decomposition.fit
    start["membrane_time_constant"] = float(fit.time_constants[0])
    if offset and fit.offset * current > 0:
        start["input_resistance"] = fit.offset / current
    if fit.components >= 2:
        peel = peeling_from_fit(fit)
        r = peel.time_constant_ratio
        if model == "cylinder" or not math.isfinite(peel.electrotonic_length):
            start["electrotonic_length"] = math.pi / math.sqrt(r - 1.0)
        else:
            start["electrotonic_length"] = peel.electrotonic_length
            start["conductance_ratio"] = peel.conductance_ratio
    return start, f"started from {fit.components} exponentials through the inverse problem"


def fit_model(times: ArrayLike, voltage: ArrayLike, *, model: str = "ball-and-stick", current: float | None = None,
              standard_error: ArrayLike | None = None, duration: float | None = None,
              window: tuple[float | None, float | None] | None = None, level: float = 0.95,
              membrane_capacitance: float = DEFAULT_CM, axial_resistivity: float = DEFAULT_RI,
              baseline_error: float = 0.0) -> ModelFit:
    r"""Fit the exact soma response of a passive model to a recorded trace.

    Parameters
    ----------
    times : s since the stimulus onset
    voltage : V, deviation from rest, recorded at the injection site (the soma)
    model : "ball-and-stick" (τm, L, ρ, R_N) or "cylinder" (τm, L, R_N)
    current : A, the injected current (sign included); None when unknown: R_N is then fitted
        for :data:`NOMINAL_CURRENT` and is meaningless on its own
    standard_error : V per sample (relative weights), or None for equal weights
    duration : s, the length of a current pulse; None for a step lasting the whole record
    window : (start, end) s since onset; a None start is chosen by the rule of
        :func:`cabletheory.fit_exponentials.decompose` (and moved past an electrode component it
        finds, ``artefact_end``), a None end is the last sample
    level : confidence level of the intervals
    membrane_capacitance, axial_resistivity : assumed Cm (F/m²) and Ri (Ω·m) of the equivalent cell
    baseline_error : V, standard error of the baseline subtracted from the trace; it moves every
        sample alike, so its share :math:`(s_b/V_\infty)^2` is added to the variance of ln R_N

    Returns
    -------
    :class:`ModelFit`

    References
    ----------
    Rall W (1969) [Rall1969]; Jack, Noble & Tsien (1975) [JackNobleTsien1975]; Rall et al. (1992)
    [Rall1992] (identifiability); Bates & Watts (1988) [BatesWatts1988] (intervals).
    """
    from scipy.optimize import least_squares

    from .transient import charge

    if model not in MODELS:
        raise InputError(f"model {model!r}: expected one of {', '.join(MODELS)}")
    if not 0 < level < 1:
        raise InputError(f"confidence level must lie in (0, 1), got {level!r}")
    current_known = current is not None
    amp = float(current) if current is not None else NOMINAL_CURRENT
    if not (math.isfinite(amp) and amp != 0):
        raise InputError(f"current must be finite and not zero, got {current!r}")
    if duration is not None and not (math.isfinite(duration) and duration > 0):
        raise InputError(f"pulse duration must be finite and positive, got {duration!r}")
    t_all, y_all, w_all = _prepare(times, voltage, standard_error)
    start_t, end_t = window if window is not None else (None, None)
    keep = t_all > 0
    if end_t is not None:
        keep &= t_all <= end_t
    notes: list[str] = []
    chosen = start_t is None
    if start_t is None:
        charging = keep & ((t_all <= duration) if duration is not None else True)
        try:
            rule = decompose(t_all[charging], y_all[charging], standard_error=1.0 / w_all[charging],
                             offset=True)
            start_t = max(rule.window[0], rule.artefact_end or 0.0)
            notes += [n for n in rule.notes if "left out" in n or "negative coefficient" in n]
        except (InputError, ConvergenceError):
            start_t = float(t_all[keep][0]) if keep.any() else 0.0
    keep &= t_all >= start_t
    t, y, w = t_all[keep], y_all[keep], w_all[keep]
    if duration is not None:
        # a sample a rounding error after the end of the pulse would need millions of modes; the
        # voltage is continuous there, so it is evaluated at the end itself
        t = np.where(np.abs(t - duration) <= 1e-9 * duration, duration, t)
    names = _names(model)
    if t.size < len(names) + 6:
        raise InputError(f"only {t.size} samples lie in the fitting window; at least {len(names) + 6} are needed")
    charging = t <= duration if duration is not None else np.ones(t.size, dtype=bool)
    start, how = _start(t[charging], y[charging], 1.0 / w[charging], model, amp, True)
    x0 = np.log([start[n] for n in names])
    lo = np.log([_BOUNDS[n][0] for n in names])
    hi = np.log([_BOUNDS[n][1] for n in names])
    x0 = np.clip(x0, lo + 1e-6, hi - 1e-6)
    counter = [0]

    def parameters(x: Array) -> dict[str, float]:
        p = dict(zip(names, np.exp(x).tolist(), strict=True))
        p.setdefault("conductance_ratio", math.inf)
        return p

    def course(x: Array) -> Array:
        p = parameters(x)
        case, _ = model_case(model, p["membrane_time_constant"], p["electrotonic_length"], p["conductance_ratio"],
                             p["input_resistance"], amp, membrane_capacitance=membrane_capacitance,
                             axial_resistivity=axial_resistivity, duration=duration)
        counter[0] += 1
        return charge(case.cell, case.stimulus, t, [0.0], tolerance=TRUNCATION, modes=0).voltage[:, 0]

    def residual(x: Array) -> Array:
        return (course(x) - y) * w

    result = least_squares(residual, x0, bounds=(lo, hi), method="trf", x_scale=1.0, diff_step=1e-6,
                           xtol=1e-10, ftol=1e-10, gtol=1e-10, max_nfev=100 * (x0.size + 1))
    x = result.x
    k_rn = names.index("input_resistance")
    steady = abs(float(np.exp(x[k_rn])) * amp)
    symbols = tuple(_SYMBOLS[n] if current_known or n != "input_resistance" else "V∞" for n in names)
    stats = fit_stats.log_scale_fit(result, names, symbols, (lo, hi), level, extra_variance=(
        {k_rn: (baseline_error / steady) ** 2} if baseline_error > 0 and steady > 0 else None))
    at_bounds, dof = stats.at_bounds, stats.dof
    p = parameters(x)
    case, props = model_case(model, p["membrane_time_constant"], p["electrotonic_length"], p["conductance_ratio"],
                             p["input_resistance"], amp, membrane_capacitance=membrane_capacitance,
                             axial_resistivity=axial_resistivity, duration=duration)
    for n in at_bounds:
        if n == "conductance_ratio" and x[names.index(n)] > 0:
            notes.append("ρ ran to the top of its range: the data show no soma; fit the cylinder instead")
        else:
            notes.append(f"{_SYMBOLS[n]} ended at the edge of its search range {_BOUNDS[n]}: the estimate and its "
                         f"interval are not trustworthy")
    notes += list(stats.condition.statements())
    if stats.residual_check.structured:
        notes.append(stats.residual_check.describe())
    if not current_known:
        notes.append("the injected current was not given, so only V∞ = I·R_N is determined, not R_N")
    method = (f"exact soma response of the {model.replace('-', ' ')} (cabletheory charge, truncation "
              f"{TRUNCATION:g} of the steady voltage) fitted by nonlinear least squares over the logarithms of "
              f"{', '.join(_SYMBOLS[n] for n in names)} (scipy least_squares, trf); {how}; {100 * level:g} % "
              f"intervals from the linearised covariance (Student t, {dof} degrees of freedom, on the log scale)")
    return ModelFit(
        model=model, names=names, estimates=stats.estimates, intervals=stats.intervals,
        correlation=stats.correlation, condition=stats.condition, residual_check=stats.residual_check, case=case,
        properties=props, current=amp, current_known=current_known, times=t, data=y, fitted=y + stats.residuals / w,
        standard_error=1.0 / w, chi_square=stats.chi_square, dof=dof, noise_scale=stats.noise_scale,
        aicc=fit_stats.aicc(stats.chi_square, t.size, x.size), level=level, converged=bool(result.status > 0),
        window=(float(t[0]), float(t[-1])), window_chosen=chosen, at_bounds=at_bounds, evaluations=counter[0],
        membrane_capacitance=membrane_capacitance, axial_resistivity=axial_resistivity, notes=tuple(notes),
        method=method)
