r"""A recorded charging curve (or decay) as a sum of exponentials, fitted with honest intervals.

The voltage at the soma after a current step is, for any passive cell,

.. math:: v(t) = c + \sum_{k=0}^{n-1} a_k e^{-t/\tau_k},\qquad \tau_0 > \tau_1 > \dots

with :math:`c = V(\infty)` and :math:`a_k = -C_kV(\infty)` for the charging curve
(:math:`V/V(\infty) = 1 - \sum C_k e^{-t/\tau_k}`, Rall 1969) and :math:`c = 0`,
:math:`a_k = C_kV(\infty)` for the decay after a long step. This module fits that sum to a trace by
nonlinear least squares and hands the two slowest terms to the inverse problem of
:mod:`cabletheory.inverse` (τ0/τ1 and C1/C0 -> L and ρ), so the user no longer peels by hand.

How the fit is made (each step is stated in the result's ``method``):

* **starting guess by peeling** (Rall 1969): the slowest exponential from a straight line through
  the logarithm of the tail, subtracted, the next from the earlier remainder, and so on;
* **variable projection** (Golub & Pereyra 1973): for given time constants the amplitudes and the
  offset are linear, so they are solved exactly and ``scipy.optimize.least_squares`` searches only
  over :math:`\ln\tau_k`;
* **how many exponentials**: every count from one to ``max_components`` is fitted and the smallest
  AICc (Hurvich & Tsai 1989) among the admissible fits wins; a fit is admissible when its time
  constants differ from each other by more than 5 %, lie between half a sampling interval and 20
  times the fitted span, and every amplitude is at least twice its standard error;
* **intervals**: Student-t intervals from the linearised covariance (on :math:`\ln\tau`, so they
  are asymmetric in τ; Bates & Watts 1988) and, on request, percentile intervals from a seeded
  bootstrap that resamples the residuals (Efron & Tibshirani 1993);
* **residual diagnostics**: the runs test and lag-one autocorrelation of :mod:`cabletheory.fit_stats`;
* **fitting window**: given, or chosen as the earliest start (from the first sample after the
  onset, then 2, 4, 8 ... samples later, up to a fifth of the record) whose chosen fit leaves
  residuals that pass the runs test: the electrode's own fast charging spoils the first samples,
  and this skips them only as far as the data show it is needed. A component with a negative
  coefficient is flagged as well: at the injection site of a passive cell every coefficient is an
  eigenfunction squared over its norm, hence positive (Rall 1969), so such a term is the electrode's,
  and a model fit should start five of its time constants later (``artefact_end``).

Every interpretation in terms of L and ρ assumes a passive, linear, uniform membrane.

References
----------
Rall W (1969) Biophys. J. 9:1483 (exponential series of a passive cell; peeling).
Golub GH & Pereyra V (1973) SIAM J. Numer. Anal. 10:413 (variable projection) [MEM].
Kaufman L (1975) BIT 15:49 (a simplified Jacobian for variable projection) [MEM].
Hurvich CM & Tsai C-L (1989) Biometrika 76:297 (AICc) [MEM].
Bates DM & Watts DG (1988) Nonlinear Regression Analysis and its Applications, ch. 2 [MEM].
Efron B & Tibshirani RJ (1993) An Introduction to the Bootstrap, ch. 9 (resampling residuals) [MEM].
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from . import fit_stats
from .errors import ConvergenceError, InputError
from .inverse import PeelingEstimate, estimate_from_peeling

__all__ = [
    "Candidate",
    "ExponentialDecomposition",
    "ExponentialFit",
    "PeelingFromFit",
    "decompose",
    "fit_exponentials",
    "peel_start",
    "peeling_from_fit",
]

Array = NDArray[np.float64]

MIN_SEPARATION = 1.05  # neighbouring time constants must differ by more than this factor
SPAN_FACTOR = 20.0  # a time constant longer than this many fitted spans is not resolved
MIN_SIGNIFICANCE = 2.0  # |amplitude| / standard error below this: the component is not supported
MAX_COMPONENTS = 6


# --------------------------------------------------------------------------------------
# the model and its variable projection
# --------------------------------------------------------------------------------------
def _decay(t: Array, taus: Array) -> Array:
    """exp(-t/τ_k) as columns, with values below 1e-200 set to 0 (subnormal numbers slow LAPACK
    down a hundredfold and carry no information here)."""
    E = np.exp(-t[:, None] / taus[None, :])
    E[E < 1e-200] = 0.0
    return E


def _basis(t: Array, taus: Array, offset: bool) -> Array:
    cols = [_decay(t, taus)]
    if offset:
        cols.insert(0, np.ones((t.size, 1)))
    return np.hstack(cols)


def _linear(t: Array, y: Array, w: Array, taus: Array, offset: bool) -> tuple[Array, Array]:
    """(linear coefficients [c?, a_0..], weighted residuals) for fixed time constants."""
    A = _basis(t, taus, offset) * w[:, None]
    coef, *_ = np.linalg.lstsq(A, y * w, rcond=None)
    return np.asarray(coef, dtype=float), A @ coef - y * w


def _project(t: Array, y: Array, w: Array, log_tau0: Array, offset: bool, bounds: tuple[float, float]
             ) -> tuple[Array, Array, bool]:
    """Least squares over ln τ with the linear part solved exactly; (taus, coef, success).

    The Jacobian is Kaufman's (1975) approximation of the variable-projection Jacobian: the derivative
    of the model at fixed linear coefficients, projected off the span of the basis."""
    from scipy.optimize import least_squares

    lo, hi = bounds
    x0 = np.clip(np.asarray(log_tau0, dtype=float), lo + 1e-9, hi - 1e-9)
    k0 = 1 if offset else 0
    yw = y * w
    cache: dict[bytes, tuple[Array, Array, Array, Array]] = {}

    def solve(x: Array) -> tuple[Array, Array, Array, Array]:
        key = x.tobytes()
        if key not in cache:
            cache.clear()
            E = _decay(t, np.exp(x))
            A = (np.hstack([np.ones((t.size, 1)), E]) if offset else E) * w[:, None]
            q, rr = np.linalg.qr(A)
            coef = np.linalg.lstsq(rr, q.T @ yw, rcond=None)[0]
            cache[key] = (E, q, coef, A @ coef - yw)
        return cache[key]

    def residual(x: Array) -> Array:
        return solve(x)[3]

    def jacobian(x: Array) -> Array:
        E, q, coef, _ = solve(x)
        V = E * (t[:, None] / np.exp(x)[None, :]) * coef[k0:][None, :] * w[:, None]
        return V - q @ (q.T @ V)

    result = least_squares(residual, x0, jac=jacobian, bounds=(lo, hi), method="trf", x_scale=1.0, xtol=1e-10,
                           ftol=1e-10, gtol=1e-10, max_nfev=50 * (x0.size + 1))
    taus = np.exp(result.x)
    order = np.argsort(-taus)
    taus = taus[order]
    coef, _ = _linear(t, y, w, taus, offset)
    return taus, coef, bool(result.status > 0)


def _noise(y: Array) -> float:
    """Noise scale from successive differences: median |Δy| / (0.6745 √2) [CP]."""
    if y.size < 3:
        return 0.0
    return float(np.median(np.abs(np.diff(y)))) / (0.6745 * math.sqrt(2.0))


def peel_start(times: ArrayLike, voltage: ArrayLike, components: int, *, offset: bool = True) -> Array:
    r"""Starting time constants by peeling (Rall 1969), slowest first, s.

    With the steady state :math:`c` removed (when ``offset``, taken from the best single exponential
    through the later half of the record),
    the slowest time constant is :math:`-1/\text{slope}` of a straight line through
    :math:`\ln|v - c|` over the later half of the samples that stand above three times the noise;
    that exponential is subtracted and the next is peeled from the samples before the ones used,
    and so on. A step that cannot be peeled (too few points, a rising line, or a time constant not
    shorter than the previous one) falls back to a quarter of the previous time constant.

    Parameters
    ----------
    times : s since the onset, increasing
    voltage : V
    components : how many time constants
    offset : whether the curve settles to a non-zero steady state (a charging curve)

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 [Rall1969] (the peeling procedure).
    """
    t = np.asarray(times, dtype=float)
    y = np.asarray(voltage, dtype=float)
    span = float(t[-1] - t[0])
    c = 0.0
    if offset:
        # the steady state from the best single exponential through the later half, where the
        # slowest term dominates
        late = t >= t[0] + 0.5 * span
        tl, yl, ones = t[late], y[late], np.ones(int(late.sum()))
        grid = np.exp(np.linspace(math.log(span / 200), math.log(span * 5), 60))
        best = min(grid, key=lambda tau: float(np.sum(_linear(tl, yl, ones, np.array([tau]), True)[1] ** 2)))
        c = float(_linear(tl, yl, ones, np.array([best]), True)[0][0])
    z = y - c
    half = t <= t[0] + 0.5 * span
    sign = 1.0 if np.sum(z[half]) >= 0 else -1.0
    remaining = sign * z
    sigma = max(_noise(y), 1e-15 * max(float(np.max(np.abs(y))), 1e-300))
    taus: list[float] = []
    upper = t.size
    for _ in range(components):
        previous = taus[-1] if taus else math.inf
        tau = previous / 4.0 if taus else span / 3.0
        above = np.flatnonzero(remaining[:upper] > 3.0 * sigma)
        if above.size >= 4:
            # the contiguous run of points above the noise that starts earliest
            breaks = np.flatnonzero(np.diff(above) > 1)
            run = above[: breaks[0] + 1] if breaks.size else above
            if run.size >= 4:
                used = run[run.size // 2:]
                slope, intercept = np.polyfit(t[used], np.log(remaining[used]), 1)
                if slope < 0 and -1.0 / slope < previous:
                    tau = -1.0 / slope
                    remaining = remaining - np.exp(intercept) * np.exp(-t / tau)
                    upper = max(int(used[0]), 4)
                    taus.append(tau)
                    continue
        taus.append(tau)
        upper = max(upper // 2, 4)
    return np.array(taus)


# --------------------------------------------------------------------------------------
# one fit with a given number of exponentials
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class ExponentialFit(fit_stats.TraceFit):
    r"""A sum of ``components`` exponentials fitted to a trace, :math:`c + \sum a_k e^{-t/\tau_k}`.

    Attributes
    ----------
    components : n
    time_constants : τ_k, s, slowest first
    amplitudes : a_k, V (negative for a charging curve of a depolarising step)
    offset : c, V (the steady state; 0 when fixed)
    offset_fitted : whether c was fitted (charging curve) or fixed at 0 (decay)
    time_constant_intervals, amplitude_intervals : (n, 2) intervals at ``level`` (linearised;
        on ln τ, so asymmetric in τ)
    offset_interval : (2,) interval of c, V ((0, 0) when fixed)
    bootstrap_time_constant_intervals, bootstrap_amplitude_intervals : percentile intervals from
        the residual bootstrap, (n, 2), or None when not requested
    bootstrap_offset_interval : (2,) or None
    bootstrap_draws : how many bootstrap refits were made (0: none)
    parameter_names : names of the parameter vector of ``covariance`` (c?, a_k..., ln τ_k...)
    covariance : linearised covariance of that vector (V² and dimensionless)
    times, data, fitted : s and V over the fitted window
    standard_error : V, the per-sample standard error used as weight (ones × noise when unknown)
    chi_square : sum of squared weighted residuals
    dof : N - p
    noise_scale : √(χ²/(N - p)), the residual scale in units of the standard errors
    aicc : the criterion value :func:`cabletheory.fit_stats.aicc`
    residual_check : :class:`~cabletheory.fit_stats.ResidualCheck`
    condition : :class:`~cabletheory.fit_stats.ConditionReport`
    level : the confidence level of the intervals
    converged : whether the optimiser met its tolerance
    """

    components: int
    time_constants: Array
    amplitudes: Array
    offset: float
    offset_fitted: bool
    time_constant_intervals: Array
    amplitude_intervals: Array
    offset_interval: Array
    parameter_names: tuple[str, ...]
    covariance: Array
    times: Array
    data: Array
    fitted: Array
    standard_error: Array
    chi_square: float
    dof: int
    noise_scale: float
    aicc: float
    residual_check: fit_stats.ResidualCheck
    condition: fit_stats.ConditionReport
    level: float
    converged: bool
    bootstrap_time_constant_intervals: Array | None = None
    bootstrap_amplitude_intervals: Array | None = None
    bootstrap_offset_interval: Array | None = None
    bootstrap_draws: int = 0

    @property
    def coefficients(self) -> Array | None:
        r""":math:`C_k = -a_k/c` of :math:`V/V(\infty) = 1 - \sum C_k e^{-t/\tau_k}` (charging curves
        only; None for a decay, whose final value the fit does not see)."""
        if not self.offset_fitted or self.offset == 0:
            return None
        return -self.amplitudes / self.offset

    def standard_errors(self) -> Array:
        """√diag of the covariance, in the order of :attr:`parameter_names`."""
        return np.sqrt(np.diag(self.covariance))

    def evaluate(self, times: ArrayLike) -> Array:
        """The fitted curve at other times (s), V."""
        t = np.asarray(times, dtype=float)
        return self.offset + np.exp(-t[..., None] / self.time_constants) @ self.amplitudes


def _admissible(fit: ExponentialFit, span: float, step: float) -> str:
    """'' when the fit is admissible, else the reason it is not."""
    taus = fit.time_constants
    if not fit.converged:
        return "the optimiser did not converge"
    if np.any(taus[:-1] / taus[1:] <= MIN_SEPARATION):
        return "two time constants coincide"
    if taus[0] > SPAN_FACTOR * span:
        return f"the slowest time constant exceeds {SPAN_FACTOR:g} times the fitted span"
    if taus[-1] < 0.5 * step:
        return "the fastest time constant is shorter than half a sampling interval"
    se = fit.standard_errors()
    k0 = 1 if fit.offset_fitted else 0
    amp_se = se[k0:k0 + fit.components]
    if not np.all(np.isfinite(amp_se)) or np.any(np.abs(fit.amplitudes) < MIN_SIGNIFICANCE * amp_se):
        return "an amplitude is smaller than twice its standard error"
    return ""


def _assemble(t: Array, y: Array, w: Array, taus: Array, coef: Array, offset: bool, level: float,
              converged: bool) -> ExponentialFit:
    n = taus.size
    c = float(coef[0]) if offset else 0.0
    a = coef[1:] if offset else coef
    E = _decay(t, taus)
    fitted = c + E @ a
    r = (fitted - y) * w
    chi = float(r @ r)
    # Jacobian of the weighted residuals in (c?, a_k, ln τ_k): d/d ln τ_k = a_k (t/τ_k) e^{-t/τ_k}
    cols = [E, E * a[None, :] * (t[:, None] / taus[None, :])]
    if offset:
        cols.insert(0, np.ones((t.size, 1)))
    J = np.hstack(cols) * w[:, None]
    cov, _ = fit_stats.linearised_covariance(J, chi)
    p = J.shape[1]
    dof = t.size - p
    names = (("c",) if offset else ()) + tuple(f"a{k}" for k in range(n)) + tuple(f"ln tau{k}" for k in range(n))
    var = np.diag(cov)
    k0 = 1 if offset else 0
    amp_iv = np.array([fit_stats.t_interval(float(a[k]), var[k0 + k], level, dof) for k in range(n)])
    log_iv = np.array([fit_stats.t_interval(math.log(taus[k]), var[k0 + n + k], level, dof) for k in range(n)])
    with np.errstate(over="ignore"):
        tau_iv = np.exp(log_iv)
    off_iv = np.array(fit_stats.t_interval(c, var[0], level, dof)) if offset else np.zeros(2)
    return ExponentialFit(
        components=n, time_constants=taus, amplitudes=np.asarray(a, dtype=float), offset=c, offset_fitted=offset,
        time_constant_intervals=tau_iv, amplitude_intervals=amp_iv, offset_interval=off_iv,
        parameter_names=names, covariance=cov, times=t, data=y, fitted=fitted, standard_error=1.0 / w,
        chi_square=chi, dof=dof, noise_scale=math.sqrt(chi / max(dof, 1)),
        aicc=fit_stats.aicc(chi, t.size, p), residual_check=fit_stats.check_residuals(r),
        condition=fit_stats.identifiability(J, cov, _display(names)), level=level, converged=converged)


def _display(names: tuple[str, ...]) -> tuple[str, ...]:
    """Names for sentences: V∞ for the offset, τk for ln τk."""
    return tuple("V∞" if n == "c" else n.replace("ln tau", "τ") for n in names)


def _prepare(times: ArrayLike, voltage: ArrayLike, standard_error: ArrayLike | None
             ) -> tuple[Array, Array, Array]:
    t = np.asarray(times, dtype=float).ravel()
    y = np.asarray(voltage, dtype=float).ravel()
    if t.size != y.size:
        raise InputError(f"times and voltages differ in length ({t.size} and {y.size})")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(y))):
        raise InputError("times and voltages must be finite")
    if t.size >= 2 and np.any(np.diff(t) <= 0):
        raise InputError("times must increase")
    if y.size and np.all(y == y[0]):
        raise InputError("the trace does not change: there is no response to fit")
    if standard_error is None:
        scale = _noise(y)
        s = np.full(t.size, scale if scale > 0 else 1e-9 * float(np.max(np.abs(y))))
    else:
        s = np.asarray(standard_error, dtype=float).ravel()
        if s.size != t.size:
            raise InputError(f"standard errors and voltages differ in length ({s.size} and {t.size})")
        if not np.all(np.isfinite(s) & (s > 0)):
            raise InputError("standard errors must be finite and positive (one sweep has none: leave them out)")
    return t, y, 1.0 / s


def _fit_n(t: Array, y: Array, w: Array, n: int, offset: bool, level: float,
           extra_starts: tuple[Array, ...] = ()) -> ExponentialFit:
    span = float(t[-1] - t[0])
    step = float(np.median(np.diff(t)))
    bounds = (math.log(step / 10.0), math.log(span * 100.0))
    starts = [np.log(peel_start(t, y, n, offset=offset)), *extra_starts]
    best: tuple[float, Array, Array, bool] | None = None
    for x0 in starts:
        taus, coef, ok = _project(t, y, w, x0, offset, bounds)
        rss = float(np.sum(_linear(t, y, w, taus, offset)[1] ** 2))
        if best is None or rss < best[0]:
            best = (rss, taus, coef, ok)
    assert best is not None
    return _assemble(t, y, w, best[1], best[2], offset, level, best[3])


def fit_exponentials(times: ArrayLike, voltage: ArrayLike, components: int, *,
                     standard_error: ArrayLike | None = None, offset: bool = True, level: float = 0.95,
                     bootstrap: int = 0, seed: int = 0) -> ExponentialFit:
    r"""Fit :math:`c + \sum_{k<n} a_k e^{-t/\tau_k}` with a given number n of exponentials.

    Parameters
    ----------
    times : s since the stimulus onset (only the window to fit), increasing
    voltage : V (deviation from rest)
    components : n ≥ 1
    standard_error : V per sample (e.g. the standard error of a mean of sweeps), used as relative
        weights; None weighs every sample alike. The overall noise scale is always estimated from the
        residuals, so only the ratios matter.
    offset : fit the steady state c (a charging curve) or fix it at 0 (a decay)
    level : confidence level of the intervals, in (0, 1)
    bootstrap : number of residual-bootstrap refits (0: none)
    seed : seed of the bootstrap's random generator

    Returns
    -------
    :class:`ExponentialFit`

    References
    ----------
    Golub & Pereyra (1973) [GolubPereyra1973]; Bates & Watts (1988) [BatesWatts1988]; Efron &
    Tibshirani (1993) [EfronTibshirani1993].
    """
    n = int(components)
    if not 1 <= n <= MAX_COMPONENTS:
        raise InputError(f"number of exponentials must be 1 to {MAX_COMPONENTS}, got {components!r}")
    if not 0 < level < 1:
        raise InputError(f"confidence level must lie in (0, 1), got {level!r}")
    t, y, w = _prepare(times, voltage, standard_error)
    if t.size < 2 * n + 4:
        raise InputError(f"{t.size} samples cannot support {n} exponentials; the window is too short")
    fit = _fit_n(t, y, w, n, offset, level)
    return _with_bootstrap(fit, w, bootstrap, seed) if bootstrap else fit


def _with_bootstrap(fit: ExponentialFit, w: Array, draws: int, seed: int) -> ExponentialFit:
    """Percentile intervals from refits to fitted + resampled weighted residuals (Efron & Tibshirani
    1993, residual resampling; the residuals are inflated by √(N/(N - p)) for the fitted parameters)."""
    from dataclasses import replace

    if draws < 20:
        raise InputError(f"a bootstrap needs at least 20 draws, got {draws}")
    rng = np.random.default_rng(seed)
    t, n = fit.times, fit.components
    r = (fit.data - fit.fitted) * w
    r = (r - r.mean()) * math.sqrt(t.size / max(fit.dof, 1))
    span = float(t[-1] - t[0])
    step = float(np.median(np.diff(t)))
    bounds = (math.log(step / 10.0), math.log(span * 100.0))
    x0 = np.log(fit.time_constants)
    taus = np.empty((draws, n))
    amps = np.empty((draws, n))
    offs = np.empty(draws)
    for b in range(draws):
        y_star = fit.fitted + rng.choice(r, size=t.size, replace=True) / w
        tb, coef, _ = _project(t, y_star, w, x0, fit.offset_fitted, bounds)
        taus[b] = tb
        offs[b] = coef[0] if fit.offset_fitted else 0.0
        amps[b] = coef[1:] if fit.offset_fitted else coef
    q = [50 * (1 - fit.level), 50 * (1 + fit.level)]
    return replace(fit, bootstrap_time_constant_intervals=np.percentile(taus, q, axis=0).T,
                   bootstrap_amplitude_intervals=np.percentile(amps, q, axis=0).T,
                   bootstrap_offset_interval=np.percentile(offs, q) if fit.offset_fitted else np.zeros(2),
                   bootstrap_draws=draws)


# --------------------------------------------------------------------------------------
# choosing the number of exponentials and the window
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Candidate:
    """One count of exponentials tried: its AICc and whether it was admissible (and if not, why)."""

    components: int
    aicc: float
    admissible: bool
    reason: str
    time_constants: Array


@dataclass(frozen=True, slots=True)
class ExponentialDecomposition:
    """The chosen sum of exponentials and how it was chosen.

    Attributes
    ----------
    fit : the chosen :class:`ExponentialFit`
    candidates : every count tried, with its AICc and admissibility
    window : (start, end), s since onset, of the samples fitted
    window_chosen : whether the start was chosen by the rule (module docstring) or given
    window_starts : the starts tried by the rule, s (empty when given)
    artefact_end : s since onset, five time constants of the slowest component with a negative
        coefficient (None when every coefficient is positive); see :func:`decompose`
    notes : plain-language remarks
    method : how the fit was made, in words
    """

    fit: ExponentialFit
    candidates: tuple[Candidate, ...]
    window: tuple[float, float]
    window_chosen: bool
    window_starts: tuple[float, ...] = ()
    artefact_end: float | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)
    method: str = ""


def _select(t: Array, y: Array, w: Array, max_components: int, offset: bool, level: float
            ) -> tuple[ExponentialFit, tuple[Candidate, ...]]:
    span = float(t[-1] - t[0])
    step = float(np.median(np.diff(t)))
    candidates: list[Candidate] = []
    fits: list[ExponentialFit] = []
    previous: ExponentialFit | None = None
    for n in range(1, max_components + 1):
        if t.size < 2 * n + 4:
            break
        extra: tuple[Array, ...] = ()
        if previous is not None:
            extra = (np.log(np.append(previous.time_constants, previous.time_constants[-1] / 5.0)),)
        fit = _fit_n(t, y, w, n, offset, level, extra)
        reason = _admissible(fit, span, step)
        candidates.append(Candidate(n, fit.aicc, not reason, reason, fit.time_constants))
        fits.append(fit)
        previous = fit
    good = [f for f, c in zip(fits, candidates, strict=True) if c.admissible]
    if not good:
        raise ConvergenceError("no sum of exponentials fits this trace acceptably ("
                               + "; ".join(f"{c.components}: {c.reason}" for c in candidates)
                               + "); check the onset, the baseline and the window")
    return min(good, key=lambda f: f.aicc), tuple(candidates)


def decompose(times: ArrayLike, voltage: ArrayLike, *, standard_error: ArrayLike | None = None,
              offset: bool = True, window: tuple[float | None, float | None] | None = None,
              max_components: int = 4, level: float = 0.95, bootstrap: int = 0,
              seed: int = 0) -> ExponentialDecomposition:
    """Fit sums of 1 .. ``max_components`` exponentials and keep the one AICc prefers.

    Parameters
    ----------
    times : s since the stimulus onset; samples at or before 0 are never fitted
    voltage : V, deviation from rest
    standard_error : V per sample, or None (see :func:`fit_exponentials`)
    offset : True for a charging curve (steady state fitted), False for a decay to rest
    window : (start, end) in s since onset; a None start is chosen by the rule of the module
        docstring, a None end is the last sample; ``None`` means (None, None)
    max_components : largest number of exponentials tried (1 to 6)
    level : confidence level of the intervals
    bootstrap : residual-bootstrap refits for the chosen fit (0: none)
    seed : the bootstrap's seed

    Returns
    -------
    :class:`ExponentialDecomposition`

    Raises
    ------
    InputError : too few samples in the window, bad arguments
    ConvergenceError : no count of exponentials gives an admissible fit

    References
    ----------
    Hurvich & Tsai (1989) [HurvichTsai1989] (AICc); Wald & Wolfowitz (1940) [WaldWolfowitz1940]
    (the runs test behind the window rule); Rall (1969) [Rall1969].
    """
    if not 1 <= int(max_components) <= MAX_COMPONENTS:
        raise InputError(f"largest number of exponentials must be 1 to {MAX_COMPONENTS}, got {max_components!r}")
    t_all, y_all, w_all = _prepare(times, voltage, standard_error)
    start, end = window if window is not None else (None, None)
    after = t_all > 0
    if end is not None:
        after &= t_all <= end
    if start is not None:
        after &= t_all >= start
    t, y, w = t_all[after], y_all[after], w_all[after]
    if t.size < 10:
        raise InputError(f"only {t.size} samples lie in the fitting window; at least 10 are needed")
    notes: list[str] = []
    starts: list[float] = []
    if start is None:
        indices = [0] + [k for k in (2, 4, 8, 16, 32, 64, 128, 256, 512) if k <= t.size // 5]
        tried: list[tuple[int, ExponentialFit, tuple[Candidate, ...]]] = []
        for k in indices:
            starts.append(float(t[k]))
            try:
                fit, cands = _select(t[k:], y[k:], w[k:], max_components, offset, level)
            except ConvergenceError:
                continue
            tried.append((k, fit, cands))
            if not fit.residual_check.structured:
                break
        if not tried:
            raise ConvergenceError("no sum of exponentials fits this trace acceptably from any window start; "
                                   "check the onset, the baseline and the window")
        clean = [x for x in tried if not x[1].residual_check.structured]
        k, fit, cands = clean[0] if clean else max(tried, key=lambda x: x[1].residual_check.runs_p)
        if not clean:
            notes.append("no window start tried leaves residuals free of structure; the start with the least "
                         "structured residuals was kept")
        elif k:
            notes.append(f"the first {k} samples after the onset were left out: fits that include them leave "
                         f"structured residuals (electrode or filtering artefact)")
        t_used = t[k:]
    else:
        fit, cands = _select(t, y, w, max_components, offset, level)
        t_used = t
    if bootstrap:
        fit = _with_bootstrap(fit, 1.0 / fit.standard_error, bootstrap, seed)
    best_n = fit.components
    rivals = [c for c in cands if c.admissible and c.components != best_n and c.aicc - fit.aicc < 2.0]
    if rivals:
        notes.append("AICc barely prefers " + f"{best_n} exponentials over "
                     + ", ".join(str(c.components) for c in rivals) + " (difference below 2)")
    if best_n == max_components:
        notes.append(f"the largest count tried ({max_components}) was chosen; more exponentials may be present")
    artefact_end = None
    coefficients = fit.coefficients
    if coefficients is not None and np.any(coefficients < 0):
        # at the injection site every C_k is the square of an eigenfunction over its norm, so > 0
        bad = np.flatnonzero(coefficients < 0)
        artefact_end = float(5.0 * fit.time_constants[bad].max())
        notes.append(f"{len(bad)} component(s) with a negative coefficient (τ = "
                     + ", ".join(f"{fit.time_constants[k] * 1e3:.3g} ms" for k in bad)
                     + "): a passive cell recorded where the current enters has only positive ones, so this is "
                     f"most likely the electrode; a model fit should start after {artefact_end * 1e3:.3g} ms")
    notes += list(fit.condition.statements())
    if fit.residual_check.structured:
        notes.append(fit.residual_check.describe())
    method = (f"sum of exponentials by nonlinear least squares (variable projection, scipy least_squares), "
              f"started by peeling; {best_n} of 1-{max_components} chosen by AICc; "
              f"{100 * level:g} % intervals from the linearised covariance (Student t, on ln tau)"
              + (f" and a {fit.bootstrap_draws}-draw residual bootstrap (seed {seed})" if fit.bootstrap_draws else ""))
    return ExponentialDecomposition(fit=fit, candidates=cands, window=(float(t_used[0]), float(t_used[-1])),
                                    window_chosen=start is None, window_starts=tuple(starts), notes=tuple(notes),
                                    artefact_end=artefact_end,
                                    method=method)


# --------------------------------------------------------------------------------------
# into the inverse problem
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class PeelingFromFit:
    """τ0/τ1 and C1/C0 of a fit, their intervals, and the inverse problem's answer.

    Attributes
    ----------
    time_constant_ratio, coefficient_ratio : τ0/τ1 and C1/C0 = a1/a0
    time_constant_ratio_interval, coefficient_ratio_interval : intervals at the fit's level (delta
        method on the linearised covariance)
    estimate : :class:`cabletheory.inverse.PeelingEstimate` from those two ratios
    electrotonic_length, conductance_ratio : L and ρ of the ball-and-stick solution (nan if none)
    electrotonic_length_interval, conductance_ratio_interval : intervals (delta method; (nan, nan)
        when there is no solution)
    membrane_time_constant, membrane_time_constant_interval : τ0 and its interval, s
    """

    time_constant_ratio: float
    coefficient_ratio: float
    time_constant_ratio_interval: tuple[float, float]
    coefficient_ratio_interval: tuple[float, float]
    estimate: PeelingEstimate
    electrotonic_length: float
    conductance_ratio: float
    electrotonic_length_interval: tuple[float, float]
    conductance_ratio_interval: tuple[float, float]
    membrane_time_constant: float
    membrane_time_constant_interval: tuple[float, float]


def _ball_and_stick(r: float, c: float) -> tuple[float, float]:
    from .inverse import ball_and_stick_from_peeling

    if not (r > 1 and 0 < c < 2.0 / r):
        return math.nan, math.nan
    try:
        solutions = ball_and_stick_from_peeling(r, c)
    except (InputError, ConvergenceError):
        return math.nan, math.nan
    if not solutions:
        return math.nan, math.nan
    s = solutions[0]
    return s.electrotonic_length, s.conductance_ratio


def peeling_from_fit(fit: ExponentialFit) -> PeelingFromFit:
    r"""Hand the two slowest exponentials of a fit to the inverse problem (Rall 1969).

    :math:`\tau_0/\tau_1` and :math:`C_1/C_0 = a_1/a_0` go to
    :func:`cabletheory.inverse.estimate_from_peeling`; the intervals of the ratios, of L and of ρ
    come from the fit's covariance by the delta method (gradients by central differences of the
    inverse problem in :math:`(\ln\tau_0, \ln\tau_1, a_0, a_1)`).

    Raises
    ------
    InputError : the fit has fewer than two exponentials

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 [Rall1969]; Bates & Watts (1988) [BatesWatts1988] (delta method).
    """
    if fit.components < 2:
        raise InputError("the inverse problem needs two exponentials (τ0 and τ1); the fit has one")
    k0 = 1 if fit.offset_fitted else 0
    n = fit.components
    idx = [k0 + n, k0 + n + 1, k0, k0 + 1]  # ln τ0, ln τ1, a0, a1
    x = np.array([math.log(fit.time_constants[0]), math.log(fit.time_constants[1]), fit.amplitudes[0],
                  fit.amplitudes[1]])
    cov = fit.covariance[np.ix_(idx, idx)]
    dof = fit.dof

    def ratios(v: Array) -> Array:
        r = math.exp(v[0] - v[1])
        c = v[3] / v[2]
        L, rho = _ball_and_stick(r, c)
        return np.array([r, c, L, math.log(rho) if rho > 0 else math.nan])

    centre = ratios(x)
    steps = np.maximum(np.sqrt(np.maximum(np.diag(cov), 0.0)) * 1e-3, 1e-9 * (1 + np.abs(x)))
    grad = np.empty((4, 4))
    for j in range(4):
        e = np.zeros(4)
        e[j] = steps[j]
        grad[:, j] = (ratios(x + e) - ratios(x - e)) / (2 * steps[j])
    var = np.einsum("ij,jk,ik->i", grad, cov, grad)
    iv = [fit_stats.t_interval(float(centre[i]), float(var[i]), fit.level, dof) for i in range(4)]
    rho_iv = (math.exp(iv[3][0]), math.exp(iv[3][1])) if np.isfinite(centre[3]) else (math.nan, math.nan)
    L_iv = iv[2] if np.isfinite(centre[2]) else (math.nan, math.nan)
    estimate = estimate_from_peeling(float(centre[0]), float(centre[1]))
    tau_iv = (float(fit.time_constant_intervals[0, 0]), float(fit.time_constant_intervals[0, 1]))
    return PeelingFromFit(float(centre[0]), float(centre[1]), iv[0], iv[1], estimate, float(centre[2]),
                          math.exp(centre[3]) if np.isfinite(centre[3]) else math.nan, L_iv, rho_iv,
                          float(fit.time_constants[0]), tau_iv)
