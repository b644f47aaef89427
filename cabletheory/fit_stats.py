r"""Statistics shared by the fits of a recorded trace: intervals, model choice, residual checks.

Every fit of :mod:`cabletheory.fit_exponentials` and :mod:`cabletheory.fit_model` is a weighted
nonlinear least-squares fit of a model :math:`f(t;\theta)` to samples :math:`y_i` with standard
errors :math:`s_i` (relative weights; the overall noise scale is estimated from the residuals).
This module holds what both need:

* :func:`linearised_covariance`: :math:`\hat\sigma^2 (J^\top J)^{-1}` with
  :math:`\hat\sigma^2 = \chi^2/(N - p)` (Bates & Watts 1988, ch. 2);
* :func:`t_interval`: Student-t intervals from that covariance (the 97.5 % quantile with N - p
  degrees of freedom for a 95 % interval);
* :func:`aicc`: Akaike's criterion with the small-sample correction (Hurvich & Tsai 1989), used to
  choose how many exponentials a trace supports;
* :func:`runs_test` (Wald & Wolfowitz 1940) and :func:`lag_one_autocorrelation`: whether the
  residuals look like independent noise or still carry structure the model missed;
* :func:`profile_interval`: the interval of one parameter from χ² minimised over the others at
  fixed values of it (Bates & Watts 1988, ch. 6), open on a side where the profile stays flat
  (Raue et al. 2009);
* :func:`identifiability`: pairs of parameters whose estimates are correlated beyond a threshold
  and the flattest direction of the Jacobian, the warning signs Rall et al. (1992) describe for
  parameter estimates of neuron models.

Everything here is plain numpy and scipy (imported lazily); units play no part.

References
----------
Bates DM & Watts DG (1988) Nonlinear Regression Analysis and its Applications. Wiley, ch. 2 [MEM].
Hurvich CM & Tsai C-L (1989) Regression and time series model selection in small samples.
Biometrika 76:297-307 [MEM].
Wald A & Wolfowitz J (1940) On a test whether two samples are from the same population. Ann. Math.
Stat. 11:147-162 [MEM].
Rall W, Burke RE, Holmes WR, Jack JJB, Redman SJ & Segev I (1992) Matching dendritic neuron models
to experimental data. Physiol. Rev. 72:S159-S186 [MEM].
Raue A, Kreutz C, Maiwald T, Bachmann J, Schilling M, Klingmüller U & Timmer J (2009) Structural and
practical identifiability analysis of partially observed dynamical models by exploiting the profile
likelihood. Bioinformatics 25:1923-1929 [MEM].
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

__all__ = [
    "CORRELATION_LIMIT",
    "ConditionReport",
    "LogScaleFit",
    "NamedEstimates",
    "ResidualCheck",
    "TraceFit",
    "aicc",
    "check_residuals",
    "correlation_matrix",
    "identifiability",
    "lag_one_autocorrelation",
    "linearised_covariance",
    "log_scale_fit",
    "profile_interval",
    "runs_test",
    "t_interval",
    "t_quantile",
]

Array = NDArray[np.float64]

CORRELATION_LIMIT = 0.95  # |r| above this: the data do not separate the two parameters
FLAT_LIMIT = 1e-6  # a singular value of the scaled Jacobian below this share of the largest is flat
RUNS_LEVEL = 0.05  # a runs-test p-value below this flags structured residuals


def _svd(matrix: Array) -> tuple[Array, Array]:
    """Singular values and right singular vectors of a tall matrix, through its R factor (the SVD of
    the small p × p triangle; much cheaper than the SVD of N × p, with the same values)."""
    r = np.linalg.qr(matrix, mode="r") if matrix.shape[0] > matrix.shape[1] else matrix
    _, s, vt = np.linalg.svd(r)
    return s, vt


def linearised_covariance(jacobian: Array, chi_square: float) -> tuple[Array, float]:
    r"""Covariance of a least-squares estimate from the Jacobian of the weighted residuals.

    .. math:: \widehat{\mathrm{Cov}}(\hat\theta) = \hat\sigma^2 (J^\top J)^{-1},\qquad
              \hat\sigma^2 = \frac{\chi^2}{N - p}

    computed through the singular value decomposition of J (no normal equations are formed), so
    that an ill-conditioned J gives large variances instead of a failed inversion.

    Parameters
    ----------
    jacobian : (N, p) derivatives of the weighted residuals :math:`(f_i - y_i)/s_i`
    chi_square : :math:`\sum_i ((f_i - y_i)/s_i)^2` at the estimate

    Returns
    -------
    (covariance (p, p), scale :math:`\hat\sigma^2`); the covariance is in the parameters' own units.

    References
    ----------
    Bates & Watts (1988) ch. 2 [BatesWatts1988].
    """
    n, p = jacobian.shape
    dof = max(n - p, 1)
    scale = float(chi_square) / dof
    s, vt = _svd(jacobian)
    if s.size == 0 or s[0] == 0:
        return np.full((p, p), np.inf), scale
    keep = s > s[0] * np.finfo(float).eps * max(n, p)
    with np.errstate(over="ignore"):
        inv = np.where(keep, 1.0 / np.where(keep, s, 1.0) ** 2, np.inf)
    with np.errstate(invalid="ignore"):
        covariance = (vt.T * inv) @ vt
    if not keep.all():  # a rank-deficient J: every parameter touched by a null direction is unbounded
        touched = np.any(np.abs(vt[~keep]) > 1e-12, axis=0)
        covariance[touched, :] = np.inf
        covariance[:, touched] = np.inf
    with np.errstate(invalid="ignore"):
        covariance = covariance * scale
    covariance[np.isnan(covariance)] = np.inf  # 0 · inf: an unbounded direction of a perfect fit
    return covariance, scale


def t_quantile(level: float, dof: int) -> float:
    """The two-sided Student-t quantile for a confidence ``level`` (e.g. 0.95) and ``dof`` degrees of
    freedom (scipy.stats.t)."""
    from scipy.stats import t

    return float(t.ppf(0.5 + 0.5 * level, max(int(dof), 1)))


def t_interval(estimate: float, variance: float, level: float, dof: int) -> tuple[float, float]:
    r""":math:`\hat\theta \pm t_{(1+\text{level})/2,\,N-p}\sqrt{\mathrm{Var}}`; (−inf, inf) for an
    unbounded variance. References: Bates & Watts (1988) ch. 2 [BatesWatts1988]."""
    if not (math.isfinite(variance) and variance >= 0):
        return -math.inf, math.inf
    half = t_quantile(level, dof) * math.sqrt(variance)
    return estimate - half, estimate + half


def aicc(chi_square: float, samples: int, parameters: int) -> float:
    r"""Akaike's information criterion with the small-sample correction, for Gaussian noise of
    unknown scale (the scale counts as a parameter):

    .. math:: \mathrm{AICc} = N\ln(\chi^2/N) + 2k + \frac{2k(k+1)}{N - k - 1},\qquad k = p + 1

    The model with the smallest AICc is preferred; differences below about 2 do not discriminate.

    References
    ----------
    Hurvich & Tsai (1989) Biometrika 76:297 [HurvichTsai1989].
    """
    n = int(samples)
    k = int(parameters) + 1
    if n - k - 1 <= 0 or not chi_square > 0:
        return math.inf
    return n * math.log(chi_square / n) + 2 * k + 2 * k * (k + 1) / (n - k - 1)


def runs_test(residuals: Array) -> tuple[int, float, float]:
    r"""The Wald-Wolfowitz runs test on the signs of the residuals.

    With :math:`n_+` positive and :math:`n_-` negative residuals (zeros dropped) and R runs of
    equal sign, under independence

    .. math:: E[R] = \frac{2n_+n_-}{n_+ + n_-} + 1,\qquad
              \mathrm{Var}[R] = \frac{2n_+n_-(2n_+n_- - n_+ - n_-)}{(n_+ + n_-)^2(n_+ + n_- - 1)}

    and :math:`z = (R - E[R])/\sqrt{\mathrm{Var}[R]}` is close to standard normal. Too few runs
    (z ≪ 0) means the residuals wander in long stretches of one sign: the model misses structure.

    Returns
    -------
    (runs R, z, one-sided p-value for too few runs)

    References
    ----------
    Wald & Wolfowitz (1940) Ann. Math. Stat. 11:147 [WaldWolfowitz1940].
    """
    from scipy.stats import norm

    signs = np.sign(np.asarray(residuals, dtype=float))
    signs = signs[signs != 0]
    n_pos = int(np.sum(signs > 0))
    n_neg = int(np.sum(signs < 0))
    n = n_pos + n_neg
    if n_pos == 0 or n_neg == 0:
        return 1, -math.inf, 0.0
    runs = 1 + int(np.count_nonzero(np.diff(signs)))
    mean = 2.0 * n_pos * n_neg / n + 1.0
    var = 2.0 * n_pos * n_neg * (2.0 * n_pos * n_neg - n) / (n * n * (n - 1.0))
    if var <= 0:
        return runs, 0.0, 1.0
    z = (runs - mean) / math.sqrt(var)
    return runs, z, float(norm.cdf(z))


def lag_one_autocorrelation(residuals: Array) -> float:
    r"""The sample autocorrelation of the residuals at lag one,
    :math:`r_1 = \sum_i e_i e_{i+1} / \sum_i e_i^2` (after removing their mean). Independent noise
    gives :math:`|r_1| \lesssim 2/\sqrt N` [CP]."""
    e = np.asarray(residuals, dtype=float)
    e = e - e.mean()
    denominator = float(e @ e)
    return float(e[:-1] @ e[1:]) / denominator if denominator > 0 else 0.0


@dataclass(frozen=True, slots=True)
class ResidualCheck:
    """Whether the residuals of a fit look like independent noise.

    Attributes
    ----------
    runs, runs_z, runs_p : the runs test of :func:`runs_test`
    autocorrelation : lag-one autocorrelation :func:`lag_one_autocorrelation`
    autocorrelation_band : 2/√N, the band independent noise stays within [CP]
    structured : True when the runs test rejects independence at :data:`RUNS_LEVEL`
    """

    runs: int
    runs_z: float
    runs_p: float
    autocorrelation: float
    autocorrelation_band: float
    structured: bool

    def describe(self) -> str:
        """One sentence on the residuals."""
        head = (f"runs test z = {self.runs_z:.2f} (p = {self.runs_p:.2g}), lag-1 autocorrelation "
                f"{self.autocorrelation:+.2f} (noise alone: within ±{self.autocorrelation_band:.2f})")
        if self.structured:
            return (f"{head}: the residuals run in long stretches of one sign, so the model misses part of "
                    f"the response (or the noise is correlated, e.g. filtered); read the intervals as too narrow")
        return f"{head}: no structure left in the residuals"


def profile_interval(grid: Array, chi_square: Array, best: float, dof: int,
                     level: float) -> tuple[float, float, bool, bool, float]:
    r"""The profile interval of one parameter from χ² minimised over the others on a grid of its values.

    With :math:`S(\theta)` the smallest χ² at a fixed value θ and :math:`s^2 = \hat\chi^2/(N - p)`,
    the interval is the set of θ with

    .. math:: S(\theta) - \hat\chi^2 \le s^2\, t^2_{(1+\text{level})/2,\,N-p}

    (the profile t statistic of Bates & Watts 1988, ch. 6; equivalently a likelihood-ratio bound
    with the noise scale estimated). Its ends are found by linear interpolation between grid
    points. When :math:`S` stays below the threshold up to an end of the grid, that side is open:
    the data do not bound the parameter there, the practical non-identifiability of Raue et al.
    (2009).

    Parameters
    ----------
    grid : increasing values of the parameter (any monotone scale, e.g. its logarithm)
    chi_square : :math:`S` at each grid value
    best : :math:`\hat\chi^2`, the smallest χ² found (≤ every entry of ``chi_square``)
    dof : N - p of the full fit
    level : confidence level

    Returns
    -------
    (low, high, low_open, high_open, threshold): the interval's ends on the grid's scale, whether
    each end is the grid's own (no crossing found on that side), and the χ² threshold above ``best``.

    References
    ----------
    Bates & Watts (1988) ch. 6 [BatesWatts1988]; Raue et al. (2009) [Raue2009].
    """
    x = np.asarray(grid, dtype=float)
    s = np.asarray(chi_square, dtype=float)
    threshold = float(best) / max(int(dof), 1) * t_quantile(level, dof) ** 2
    inside = s - float(best) <= threshold
    if not inside.any():  # the grid missed the minimum's neighbourhood: take the best point alone
        k = int(np.argmin(s))
        return float(x[k]), float(x[k]), False, False, threshold
    first = int(np.argmax(inside))
    last = len(inside) - 1 - int(np.argmax(inside[::-1]))
    level_line = float(best) + threshold

    def crossing(a: int, b: int) -> float:  # where S crosses the threshold between grid points a (inside), b
        sa, sb = s[a], s[b]
        share = (level_line - sa) / (sb - sa) if sb != sa else 0.0
        return float(x[a] + min(max(share, 0.0), 1.0) * (x[b] - x[a]))

    low_open, high_open = first == 0, last == len(x) - 1
    low = float(x[0]) if low_open else crossing(first, first - 1)
    high = float(x[-1]) if high_open else crossing(last, last + 1)
    return low, high, low_open, high_open, threshold


def check_residuals(residuals: Array) -> ResidualCheck:
    """The runs test and lag-one autocorrelation of weighted residuals (:class:`ResidualCheck`).

    References: Wald & Wolfowitz (1940) [WaldWolfowitz1940]; the 2/√N band is [CP].
    """
    runs, z, p = runs_test(residuals)
    r1 = lag_one_autocorrelation(residuals)
    return ResidualCheck(runs, z, p, r1, 2.0 / math.sqrt(max(len(residuals), 1)), p < RUNS_LEVEL)


def correlation_matrix(covariance: Array) -> Array:
    """Correlations :math:`C_{ij}/\\sqrt{C_{ii}C_{jj}}` (nan where a variance is 0 or unbounded)."""
    d = np.sqrt(np.diag(covariance))
    with np.errstate(invalid="ignore", divide="ignore"):
        r = covariance / np.outer(d, d)
    r[~np.isfinite(r)] = np.nan
    np.fill_diagonal(r, 1.0)
    return r


@dataclass(frozen=True, slots=True)
class ConditionReport:
    """How well the data pin the parameters down.

    Attributes
    ----------
    correlated : (name_i, name_j, r) for every pair with |r| > :data:`CORRELATION_LIMIT`
    flattest : share of each parameter in the flattest direction of the scaled Jacobian
    flatness : smallest/largest singular value of the Jacobian with columns scaled to unit length
    unbounded : names of parameters whose variance is unbounded (a flat direction)
    """

    correlated: tuple[tuple[str, str, float], ...]
    flattest: tuple[tuple[str, float], ...]
    flatness: float
    unbounded: tuple[str, ...]

    @property
    def separable(self) -> bool:
        """True when no pair is correlated beyond the limit and no direction is flat."""
        return not self.correlated and not self.unbounded and self.flatness > FLAT_LIMIT

    def statements(self) -> tuple[str, ...]:
        """Plain sentences for a reader; empty when the parameters are well separated."""
        out = []
        for a, b, r in self.correlated:
            out.append(f"the data cannot separate {a} from {b} (correlation {r:+.3f}): a change in one is "
                       f"almost made up by a change in the other, so read them together, not one by one "
                       f"(Rall et al. 1992)")
        if self.unbounded or self.flatness <= FLAT_LIMIT:
            mix = ", ".join(f"{name} {share:+.2f}" for name, share in self.flattest if abs(share) > 0.1)
            out.append(f"the fit is flat along one direction ({mix}): the data do not determine that "
                       f"combination at all; fix one of them from other measurements (Rall et al. 1992)")
        return tuple(out)


def identifiability(jacobian: Array, covariance: Array, names: tuple[str, ...]) -> ConditionReport:
    """Correlated pairs and the flattest direction of a fit (:class:`ConditionReport`).

    The Jacobian's columns are scaled to unit length before its singular values are taken, so the
    flatness does not depend on the parameters' units.

    References
    ----------
    Rall et al. (1992) Physiol. Rev. 72:S159 [Rall1992] (non-uniqueness of fitted neuron parameters);
    Bates & Watts (1988) ch. 2 [BatesWatts1988].
    """
    r = correlation_matrix(covariance)
    pairs = []
    for i in range(len(names)):
        for j in range(i + 1, len(names)):
            if np.isfinite(r[i, j]) and abs(r[i, j]) > CORRELATION_LIMIT:
                pairs.append((names[i], names[j], float(r[i, j])))
    norms = np.linalg.norm(jacobian, axis=0)
    scaled = jacobian / np.where(norms > 0, norms, 1.0)
    s, vt = _svd(scaled)
    flatness = float(s[-1] / s[0]) if s.size and s[0] > 0 else 0.0
    direction = vt[-1] if s.size else np.zeros(len(names))
    k = int(np.argmax(np.abs(direction)))
    if direction[k] < 0:
        direction = -direction
    unbounded = tuple(n for n, v in zip(names, np.diag(covariance), strict=True) if not np.isfinite(v))
    return ConditionReport(tuple(pairs), tuple((n, float(v)) for n, v in zip(names, direction, strict=True)),
                           flatness, unbounded)


class TraceFit:
    """A mixin for every fitted-trace result class (they carry ``data`` and ``fitted``, V)."""

    __slots__ = ()
    data: Array
    fitted: Array

    @property
    def residuals(self) -> Array:
        """data - fitted, V."""
        return self.data - self.fitted


class NamedEstimates(TraceFit):
    """What a fit of named parameters answers besides its residuals: one value or interval by name.

    A mixin for the frozen result classes of :mod:`cabletheory.fit_model` and
    :mod:`cabletheory.fit_tree`, which carry ``names``, ``estimates`` and ``intervals``.
    """

    __slots__ = ()
    names: tuple[str, ...]
    estimates: Array
    intervals: Array

    def value(self, name: str) -> float:
        """The estimate of one parameter by its canonical name, SI."""
        return float(self.estimates[self.names.index(name)])

    def interval(self, name: str) -> tuple[float, float]:
        """The interval of one parameter by its canonical name, SI."""
        lo, hi = self.intervals[self.names.index(name)]
        return float(lo), float(hi)


@dataclass(frozen=True, slots=True)
class LogScaleFit:
    """The statistics of a least-squares fit searched over the logarithms of its parameters.

    ``estimates`` and ``intervals`` are back on the natural scale (Student-t intervals of the
    log-parameters, exponentiated, so they are never negative and are asymmetric as the
    uncertainty of a scale parameter should be); ``at_bounds`` names the parameters that ended
    within 1e-3 (in the logarithm) of their search range.
    """

    residuals: Array  # weighted residuals at the solution
    chi_square: float
    dof: int
    covariance: Array  # of the log-parameters
    estimates: Array
    intervals: Array
    correlation: Array
    condition: ConditionReport
    residual_check: ResidualCheck
    at_bounds: tuple[str, ...]

    @property
    def noise_scale(self) -> float:
        """√(χ²/(N - p)), the residual scale in units of the standard errors."""
        return math.sqrt(self.chi_square / max(self.dof, 1))


def log_scale_fit(result: Any, names: tuple[str, ...], symbols: tuple[str, ...], bounds: tuple[Array, Array],
                  level: float, *, extra_variance: dict[int, float] | None = None) -> LogScaleFit:
    """The covariance, intervals, identifiability and residual checks of a log-scale fit.

    ``result`` is what :func:`scipy.optimize.least_squares` returned for weighted residuals over
    the logarithms of the parameters ``names`` (``symbols`` are their names for the reader), with
    ``bounds`` the (lower, upper) logarithmic search range. ``extra_variance`` adds a known
    variance to diagonal entries of the covariance (e.g. a baseline's uncertainty) before the
    intervals are taken. Method: Bates & Watts (1988) ch. 2 [BatesWatts1988].
    """
    x = np.asarray(result.x, dtype=float)
    r = np.asarray(result.fun, dtype=float)
    jacobian = np.asarray(result.jac, dtype=float)
    chi = float(r @ r)
    cov, _ = linearised_covariance(jacobian, chi)
    if extra_variance:
        cov = cov.copy()
        for k, variance in extra_variance.items():
            cov[k, k] += variance
    dof = r.size - x.size
    log_iv = np.array([t_interval(float(x[j]), float(cov[j, j]), level, dof) for j in range(x.size)])
    with np.errstate(over="ignore"):
        intervals = np.exp(log_iv)
    lo, hi = bounds
    at_bounds = tuple(n for n, xi, a, b in zip(names, x, lo, hi, strict=True) if xi - a < 1e-3 or b - xi < 1e-3)
    return LogScaleFit(r, chi, dof, cov, np.exp(x), intervals, correlation_matrix(cov),
                       identifiability(jacobian, cov, symbols), check_residuals(r), at_bounds)
