r"""The inverse problem of Rall (1969): cell parameters from a peeled charging curve.

A current step into the soma (or into the end of a cylinder), recorded at the same place and
normalised to its final value, charges as

.. math:: \frac{V(T)}{V(\infty)} = 1 - \sum_{n\ge 0} C_n e^{-t/\tau_n},\qquad
          \tau_n = \frac{\tau_0}{1 + \alpha_n^2},\quad \tau_0 = \tau_m

(the decay after the end of a long step has the same C_n and τ_n). "Peeling" the exponentials off a
measured curve gives the ratio :math:`r = \tau_0/\tau_1` and the coefficient ratio
:math:`c = C_1/C_0`. This module turns them into the electrotonic length L of the equivalent
cylinder and, for a lumped soma, Rall's :math:`\rho = G_D/G_S`, and from those (with a measured
input resistance and assumed Cm, Ri) the membrane properties that follow.

Two models, both passive, linear and uniform, sealed at the far end:

* **sealed cylinder** (no soma): :math:`\alpha_n = n\pi/L`, so :math:`L = n\pi/\sqrt{\tau_0/\tau_n - 1}`
  and :math:`C_1/C_0 = 2\tau_1/\tau_0`, i.e. :math:`L = \pi/\sqrt{2C_0/C_1 - 1}`;
* **ball and stick** (lumped soma with the same τm): with :math:`\theta = \alpha_1 L`,
  the eigenvalue equation :math:`\tan\theta = -\alpha_1\tanh L/\rho` and the residues give

  .. math:: \rho L\coth L = -\theta\cot\theta,\qquad
            \kappa \equiv \frac{1}{2}\frac{\tau_0}{\tau_1}\frac{C_1}{C_0}
            = g(\theta) = \frac{(\sin\theta - \theta\cos\theta)\cos\theta}{\sin\theta\cos\theta - \theta},
            \quad \theta\in(\pi/2, \pi).

  So the *cylinder index* κ depends on θ alone: g rises from 0 (θ = π/2, ρ = 0) to 1 (θ = π,
  ρ = ∞, the sealed cylinder). Given r and c, θ solves :math:`g(\theta) = \kappa`, then
  :math:`L = \theta/\sqrt{r - 1}` and :math:`\rho = -\theta\cot\theta\,\tanh L / L`.
  A ball and stick therefore always has κ < 1, a pure cylinder κ = 1; κ > 1 fits neither.

The κ relation is derived here from the eigenvalue equation and residues of Rall (1969) and
Durand (1984) (``eigen.ball_and_stick_coefficients``); every solution returned is verified by
recomputing the forward problem with that independent routine. The roots are found on a grid
with sign changes plus local extrema and ``scipy.optimize.brentq``, so all of them are returned;
for the pair (τ0/τ1, C1/C0) there is at most one, because g is increasing. C1/C0 alone at a known
L is *not* monotone in ρ and can have two solutions (:func:`conductance_ratios_at_length`).

References
----------
Rall W (1969) Time constants and electrotonic length of membrane cylinders and neurons.
Biophys. J. 9:1483-1508.
Durand D (1984) The somatic shunt cable model for neurons. Biophys. J. 46:645-653 (recalled from
memory).
Johnston D (1981) Passive cable properties of hippocampal CA3 pyramidal neurons. Cell. Mol.
Neurobiol. 1:41-55 (the same inverse problem with the first two peeled exponentials).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import ClassVar

from . import eigen
from .errors import InputError

__all__ = [
    "BallAndStickSolution",
    "CellProperties",
    "PeelingEstimate",
    "Perturbation",
    "ball_and_stick_from_peeling",
    "conductance_ratios_at_length",
    "cylinder_index",
    "cylinder_length_from_coefficients",
    "cylinder_length_from_time_constants",
    "estimate_from_peeling",
    "index_function",
    "length_bounds",
    "membrane_properties",
]

HALF_PI = 0.5 * math.pi
_GRID = 1024  # cells of the θ grid on (π/2, π) in which sign changes are sought
_VERIFY_RTOL = 1e-8  # a solution whose recomputed τ0/τ1 or C1/C0 is farther off is rejected


# --------------------------------------------------------------------------------------
# sealed cylinder
# --------------------------------------------------------------------------------------
def _check_time_ratio(time_constant_ratio: float, mode: int = 1) -> float:
    r = float(time_constant_ratio)
    if not (math.isfinite(r) and r > 1.0):
        raise InputError(f"time-constant ratio τ0/τ{mode} must be finite and above 1 (τ{mode} shorter than "
                         f"τ0), got {r!r}")
    return r


def cylinder_length_from_time_constants(time_constant_ratio: float, mode: int = 1) -> float:
    r"""Electrotonic length of a sealed cylinder from a peeled time-constant ratio.

    .. math:: L = \frac{n\pi}{\sqrt{\tau_0/\tau_n - 1}}

    Parameters
    ----------
    time_constant_ratio : τ0/τn, dimensionless, > 1
    mode : n ≥ 1

    Returns
    -------
    L, dimensionless.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (basis for estimating electrotonic length).
    """
    if int(mode) != mode or mode < 1:
        raise InputError(f"mode must be a whole number >= 1, got {mode!r}")
    r = _check_time_ratio(time_constant_ratio, int(mode))
    return float(eigen.peeling_electrotonic_length(r, int(mode)))


def cylinder_length_from_coefficients(coefficient_ratio: float) -> float:
    r"""Electrotonic length of a sealed cylinder from the step-response coefficient ratio.

    .. math:: \frac{C_1}{C_0} = \frac{2\tau_1}{\tau_0} = \frac{2}{1 + (\pi/L)^2}
              \;\Rightarrow\; L = \frac{\pi}{\sqrt{2C_0/C_1 - 1}}

    Parameters
    ----------
    coefficient_ratio : C1/C0 of a current step recorded at the injection end, in (0, 2)

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (coefficients of the sealed-cylinder series).
    """
    c = float(coefficient_ratio)
    if not (math.isfinite(c) and 0.0 < c < 2.0):
        raise InputError(f"coefficient ratio C1/C0 must lie in (0, 2) for a sealed cylinder, got {c!r}")
    return float(eigen.coefficient_electrotonic_length(c))


def cylinder_index(time_constant_ratio: float, coefficient_ratio: float) -> float:
    r"""The cylinder index :math:`\kappa = (\tau_0/\tau_1)(C_1/C_0)/2`.

    κ = 1 for a sealed cylinder (the time-constant and coefficient estimates of L agree), κ < 1 for a
    ball and stick (a soma), and no uniform model with a sealed end gives κ > 1.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (cylinder: :math:`C_n = 2C_0\tau_n/\tau_0`); ball and stick:
    derived in this module's notes from the residues (Durand 1984, recalled from memory).
    """
    return 0.5 * float(time_constant_ratio) * float(coefficient_ratio)


def length_bounds(time_constant_ratio: float) -> tuple[float, float]:
    r"""Range of L a ball and stick with any ρ allows for a given τ0/τ1.

    The first root obeys :math:`\alpha_1 L \in (\pi/2, \pi)` and :math:`\alpha_1 = \sqrt{\tau_0/\tau_1 - 1}`:

    .. math:: \frac{\pi}{2\sqrt{\tau_0/\tau_1 - 1}} < L < \frac{\pi}{\sqrt{\tau_0/\tau_1 - 1}}

    (lower end ρ → 0, upper end ρ → ∞, the sealed cylinder).

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (roots of the soma-cylinder eigenvalue equation).
    """
    alpha = math.sqrt(_check_time_ratio(time_constant_ratio) - 1.0)
    return HALF_PI / alpha, math.pi / alpha


# --------------------------------------------------------------------------------------
# ball and stick
# --------------------------------------------------------------------------------------
def index_function(theta: float) -> float:
    r"""The cylinder index of a ball and stick as a function of :math:`\theta = \alpha_1 L`.

    .. math:: g(\theta) = \frac{1 - \theta\cot\theta}{1 - 2\theta/\sin 2\theta}
              = \frac{(\sin\theta - \theta\cos\theta)\cos\theta}{\sin\theta\cos\theta - \theta}

    The second form has no pole on :math:`[\pi/2, \pi]`: g(π/2) = 0 (ρ = 0), g(π) = 1 (ρ = ∞).
    It follows from :math:`C_1/C_0 = 2(1 + \rho L\coth L)/[(1 + \alpha_1^2)(1 + \rho L\coth L\sec^2\theta)]`
    and the eigenvalue equation :math:`\rho L\coth L = -\theta\cot\theta`.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Durand D (1984) Biophys. J. 46:645 (residues; recalled from memory).
    """
    s, co = math.sin(theta), math.cos(theta)
    return (s - theta * co) * co / (s * co - theta)


def _ratio_from_theta(theta: float, electrotonic_length: float) -> float:
    r"""ρ on the root curve: :math:`\rho = -\theta\cot\theta\,\tanh L/L` (∞ at θ = π)."""
    s = math.sin(theta)
    if s <= 0.0:
        return math.inf
    L = electrotonic_length
    return -theta * math.cos(theta) / s * math.tanh(L) / L


def _all_roots(f: Callable[[float], float], lo: float, hi: float, cells: int = _GRID) -> list[float]:
    """Every root of f on [lo, hi]: grid sign changes, plus the grid's local extrema as extra
    bracket points (so two roots close to a maximum are not lost), each refined by brentq."""
    from scipy.optimize import brentq, minimize_scalar

    xs = [lo + (hi - lo) * i / cells for i in range(cells + 1)]
    ys = [f(x) for x in xs]
    points = list(zip(xs, ys, strict=True))
    for i in range(1, cells):  # refine each interior discrete extremum
        if (ys[i] - ys[i - 1]) * (ys[i + 1] - ys[i]) < 0:
            sign = 1.0 if ys[i] > ys[i - 1] else -1.0
            best = minimize_scalar(lambda x, s=sign: -s * f(x), bounds=(xs[i - 1], xs[i + 1]),
                                   method="bounded", options={"xatol": 1e-14 * (hi - lo)})
            points.append((float(best.x), f(float(best.x))))
    points.sort()
    roots: list[float] = []
    for (x0, y0), (x1, y1) in itertools.pairwise(points):
        if y0 == 0.0:
            roots.append(x0)
        elif y0 * y1 < 0:
            roots.append(brentq(f, x0, x1, xtol=1e-15, rtol=1e-15, maxiter=200))
    if points and points[-1][1] == 0.0:
        roots.append(points[-1][0])
    out: list[float] = []
    for x in roots:  # drop duplicates (a root hit exactly at a bracket point)
        if not out or abs(x - out[-1]) > 1e-12 * (hi - lo):
            out.append(x)
    return out


@dataclass(frozen=True, slots=True)
class BallAndStickSolution:
    """One (L, ρ) that reproduces the peeled values, with its check against the forward problem.

    Attributes
    ----------
    electrotonic_length : L of the equivalent cylinder
    conductance_ratio : ρ = G_D/G_S (inf: no soma)
    eigenvalues : α0..α2 recomputed with ``eigen.ball_and_stick_coefficients``
    coefficients : C0..C2 of the step response at the soma, recomputed the same way
    time_constant_ratio, coefficient_ratio : τ0/τ1 and C1/C0 recomputed from (L, ρ)
    time_constant_residual, coefficient_residual : relative differences from the inputs
    """

    electrotonic_length: float
    conductance_ratio: float
    eigenvalues: tuple[float, ...]
    coefficients: tuple[float, ...]
    time_constant_ratio: float
    coefficient_ratio: float
    time_constant_residual: float
    coefficient_residual: float

    @property
    def second_time_constant_ratio(self) -> float:
        """τ0/τ2 predicted by this solution."""
        return 1.0 + self.eigenvalues[2] ** 2


def _verified(L: float, rho: float, r: float, c: float) -> BallAndStickSolution:
    """Recompute the forward problem (eigen module) and attach the residuals."""
    alpha, coef = eigen.ball_and_stick_coefficients(L, rho, 3)
    r_fwd = 1.0 + float(alpha[1]) ** 2
    c_fwd = float(coef[1] / coef[0])
    return BallAndStickSolution(
        electrotonic_length=L, conductance_ratio=rho,
        eigenvalues=tuple(float(a) for a in alpha), coefficients=tuple(float(x) for x in coef),
        time_constant_ratio=r_fwd, coefficient_ratio=c_fwd,
        time_constant_residual=r_fwd / r - 1.0, coefficient_residual=c_fwd / c - 1.0)


def ball_and_stick_from_peeling(time_constant_ratio: float,
                                coefficient_ratio: float) -> tuple[BallAndStickSolution, ...]:
    r"""Every (L, ρ) of a ball and stick with the given τ0/τ1 and C1/C0, each verified.

    Solve :math:`g(\theta) = \kappa = (\tau_0/\tau_1)(C_1/C_0)/2` for
    :math:`\theta\in(\pi/2,\pi)` (see :func:`index_function`), then

    .. math:: L = \frac{\theta}{\sqrt{\tau_0/\tau_1 - 1}},\qquad
              \rho = -\theta\cot\theta\,\frac{\tanh L}{L}.

    Parameters
    ----------
    time_constant_ratio : τ0/τ1, > 1
    coefficient_ratio : C1/C0 of a current step at the soma, recorded there, in (0, 2τ1/τ0)

    Returns
    -------
    The solutions, ordered by L (in practice exactly one, since g is increasing).

    Raises
    ------
    InputError
        if τ0/τ1 ≤ 1, or if C1/C0 lies outside (0, 2τ1/τ0): then no ball and stick fits (at
        C1/C0 = 2τ1/τ0 exactly the data describe a cylinder without soma, ρ = ∞).
    ConvergenceError
        if a root fails the forward check.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Durand D (1984) Biophys. J. 46:645 (recalled from memory);
    Johnston D (1981) Cell. Mol. Neurobiol. 1:41 (the same two-exponential inversion).
    """
    r = _check_time_ratio(time_constant_ratio)
    c = float(coefficient_ratio)
    upper = 2.0 / r
    if not (math.isfinite(c) and 0.0 < c < upper):
        raise InputError(f"coefficient ratio C1/C0 = {c!r} admits no ball and stick with τ0/τ1 = {r:.10g}: "
                         f"it must lie in (0, 2τ1/τ0) = (0, {upper:.6g}); at 2τ1/τ0 the data describe a "
                         f"sealed cylinder without soma, above it neither model fits")
    kappa = cylinder_index(r, c)
    alpha1 = math.sqrt(r - 1.0)
    thetas = _all_roots(lambda t: index_function(t) - kappa, HALF_PI, math.pi)
    solutions = []
    for theta in thetas:
        L = theta / alpha1
        rho = _ratio_from_theta(theta, L)
        if not (0.0 < rho < math.inf):
            continue
        solutions.append(_check(_verified(L, rho, r, c)))
    return tuple(solutions)


def _check(solution: BallAndStickSolution) -> BallAndStickSolution:
    from .errors import ConvergenceError

    worst = max(abs(solution.time_constant_residual), abs(solution.coefficient_residual))
    if not worst <= _VERIFY_RTOL:
        raise ConvergenceError(f"ball-and-stick solution L = {solution.electrotonic_length!r}, ρ = "
                               f"{solution.conductance_ratio!r} reproduces the inputs only to {worst:.2g}")
    return solution


def conductance_ratios_at_length(electrotonic_length: float, coefficient_ratio: float) -> tuple[float, ...]:
    r"""Every ρ of a ball and stick of known L whose step response has the given C1/C0.

    At fixed L, :math:`C_1/C_0 = 2g(\theta)/(1 + \theta^2/L^2)` along the root
    :math:`\theta = \alpha_1L\in(\pi/2, \pi)`, and ρ rises monotonically with θ. C1/C0 is **not**
    monotone in ρ (it peaks near ρ ≈ 5 at L = 1), so a value near the peak has two solutions and
    C1/C0 alone cannot fix ρ; τ0/τ1 resolves them (:func:`ball_and_stick_from_peeling`).

    Parameters
    ----------
    electrotonic_length : L, > 0
    coefficient_ratio : C1/C0, > 0

    Returns
    -------
    ρ values in increasing order (empty if none), each checked with ``eigen.ball_and_stick_coefficients``.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Durand D (1984) Biophys. J. 46:645 (recalled from memory).
    """
    L = float(electrotonic_length)
    c = float(coefficient_ratio)
    if not (math.isfinite(L) and L > 0):
        raise InputError(f"electrotonic length must be finite and positive, got {L!r}")
    if not (math.isfinite(c) and c > 0):
        raise InputError(f"coefficient ratio C1/C0 must be positive, got {c!r}")

    def mismatch(theta: float) -> float:
        return 2.0 * index_function(theta) / (1.0 + (theta / L) ** 2) - c

    out = []
    for theta in _all_roots(mismatch, HALF_PI, math.pi):
        rho = _ratio_from_theta(theta, L)
        if not (0.0 < rho < math.inf):
            continue
        _check(_verified(L, rho, 1.0 + (theta / L) ** 2, c))
        out.append(rho)
    return tuple(out)


# --------------------------------------------------------------------------------------
# the whole estimate
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Perturbation:
    """The estimates again with one peeled value changed by a factor (sensitivity).

    Attributes
    ----------
    changed : "tau1" or "C1"
    factor : the factor applied to it (e.g. 0.95, 1.05)
    time_constant_ratio, coefficient_ratio : the perturbed τ0/τ1 and C1/C0 (None without C1/C0)
    cylinder_length : L of the sealed cylinder from the perturbed τ0/τ1
    solutions : (L, ρ) of the ball and stick, empty when the perturbed data admit none
    """

    changed: str
    factor: float
    time_constant_ratio: float
    coefficient_ratio: float | None
    cylinder_length: float
    solutions: tuple[tuple[float, float], ...]


@dataclass(frozen=True, slots=True)
class PeelingEstimate:
    """What the peeled time constants and coefficients say about L and ρ.

    Attributes
    ----------
    time_constant_ratio : τ0/τ1 (input)
    coefficient_ratio : C1/C0 (input) or None
    second_time_constant_ratio : τ0/τ2 (input) or None
    cylinder_length : L of a sealed cylinder from τ0/τ1 (Rall 1969)
    cylinder_length_slope : dL/d(τ0/τ1) = −L/(2(τ0/τ1 − 1)) for the cylinder
    cylinder_length_second : L from τ0/τ2 (mode 2) or None
    cylinder_length_coefficients : L of a sealed cylinder from C1/C0, or None
    cylinder_index : κ = (τ0/τ1)(C1/C0)/2 (1 for a cylinder, < 1 with a soma) or None
    length_bounds : L range of a ball and stick with any ρ, from τ0/τ1 alone
    solutions : the verified ball-and-stick solutions (empty without C1/C0 or when none exists)
    sensitivity : the estimates with τ1 (and C1) changed by ± the stated relative uncertainty
    uncertainty : that relative uncertainty
    notes : plain-language remarks (consistency, caveats)
    """

    time_constant_ratio: float
    coefficient_ratio: float | None
    second_time_constant_ratio: float | None
    cylinder_length: float
    cylinder_length_slope: float
    cylinder_length_second: float | None
    cylinder_length_coefficients: float | None
    cylinder_index: float | None
    length_bounds: tuple[float, float]
    solutions: tuple[BallAndStickSolution, ...]
    sensitivity: tuple[Perturbation, ...]
    uncertainty: float
    notes: tuple[str, ...]

    @property
    def cylinder_consistent(self) -> bool | None:
        """Whether the cylinder's two estimates agree within the stated uncertainty (None without C1/C0).

        κ ∝ C1/τ1, so errors of ±u in τ1 and C1 move κ by at most a factor (1+u)/(1−u) either way.
        """
        if self.cylinder_index is None:
            return None
        if not math.isfinite(self.cylinder_length_coefficients or math.nan):
            return False  # C1/C0 >= 2: no sealed cylinder has it
        spread = (1.0 + self.uncertainty) / (1.0 - self.uncertainty)
        return 1.0 / spread <= self.cylinder_index <= spread


def _perturbed(changed: str, factor: float, r: float, c: float | None) -> Perturbation:
    if changed == "tau1":  # τ1 × factor -> τ0/τ1 ÷ factor
        r_new, c_new = r / factor, c
    else:
        r_new, c_new = r, None if c is None else c * factor
    L = math.pi / math.sqrt(r_new - 1.0) if r_new > 1.0 else math.nan
    solutions: tuple[tuple[float, float], ...] = ()
    if c_new is not None and r_new > 1.0 and 0.0 < c_new < 2.0 / r_new:
        solutions = tuple((s.electrotonic_length, s.conductance_ratio)
                          for s in ball_and_stick_from_peeling(r_new, c_new))
    return Perturbation(changed, factor, r_new, c_new, L, solutions)


def estimate_from_peeling(time_constant_ratio: float, coefficient_ratio: float | None = None, *,
                          second_time_constant_ratio: float | None = None,
                          uncertainty: float = 0.05) -> PeelingEstimate:
    r"""Estimate L (and ρ) from peeled values, with consistency checks and sensitivity.

    Cylinder: :math:`L = \pi/\sqrt{\tau_0/\tau_1 - 1}`, and from C1/C0
    :math:`L = \pi/\sqrt{2C_0/C_1 - 1}`; they agree exactly when κ = 1. Ball and stick: see
    :func:`ball_and_stick_from_peeling`; without C1/C0 only the range :func:`length_bounds` follows.

    Parameters
    ----------
    time_constant_ratio : τ0/τ1, > 1
    coefficient_ratio : C1/C0 of the soma's step response (optional)
    second_time_constant_ratio : τ0/τ2, > τ0/τ1 (optional; a second cylinder estimate and a check)
    uncertainty : relative uncertainty of τ1 and C1 for the sensitivity rows, in (0, 0.5)

    Returns
    -------
    :class:`PeelingEstimate`. A C1/C0 that no ball and stick admits is not an error here: the
    solutions are then empty and a note says why.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Johnston D (1981) Cell. Mol. Neurobiol. 1:41.
    """
    r = _check_time_ratio(time_constant_ratio)
    u = float(uncertainty)
    if not (math.isfinite(u) and 0.0 < u < 0.5):
        raise InputError(f"relative uncertainty must lie in (0, 0.5), got {u!r}")
    L_tau = cylinder_length_from_time_constants(r)
    slope = -L_tau / (2.0 * (r - 1.0))
    notes: list[str] = []
    L_second = None
    r2 = None
    if second_time_constant_ratio is not None:
        r2 = float(second_time_constant_ratio)
        if not (math.isfinite(r2) and r2 > r):
            raise InputError(f"time-constant ratio τ0/τ2 must exceed τ0/τ1 = {r:.6g} (τ2 shorter than τ1), "
                             f"got {r2!r}")
        L_second = cylinder_length_from_time_constants(r2, 2)
    c = None if coefficient_ratio is None else float(coefficient_ratio)
    L_coef = kappa = None
    solutions: tuple[BallAndStickSolution, ...] = ()
    if c is not None:
        if not (math.isfinite(c) and c > 0):
            raise InputError(f"coefficient ratio C1/C0 must be positive, got {c!r}")
        L_coef = cylinder_length_from_coefficients(c) if c < 2.0 else math.nan
        kappa = cylinder_index(r, c)
        if c < 2.0 / r:
            solutions = ball_and_stick_from_peeling(r, c)
    perturbations = [_perturbed("tau1", f, r, c) for f in (1.0 - u, 1.0 + u)]
    if c is not None:
        perturbations += [_perturbed("C1", f, r, c) for f in (1.0 - u, 1.0 + u)]
    estimate = PeelingEstimate(
        time_constant_ratio=r, coefficient_ratio=c, second_time_constant_ratio=r2, cylinder_length=L_tau,
        cylinder_length_slope=slope, cylinder_length_second=L_second, cylinder_length_coefficients=L_coef,
        cylinder_index=kappa, length_bounds=length_bounds(r), solutions=solutions,
        sensitivity=tuple(perturbations), uncertainty=u, notes=())
    notes += _notes(estimate)
    return replace(estimate, notes=tuple(notes))


def _notes(e: PeelingEstimate) -> list[str]:
    notes = []
    pct = f"{100 * e.uncertainty:g} %"
    if e.cylinder_length_second is not None:
        diff = e.cylinder_length_second / e.cylinder_length - 1.0
        notes.append(f"the cylinder estimates of L from τ1 and τ2 differ by {100 * diff:+.3g} %; a uniform "
                     f"sealed cylinder needs τ0/τ2 − 1 = 4(τ0/τ1 − 1) exactly")
    kappa = e.cylinder_index
    if kappa is None:
        lo, hi = e.length_bounds
        notes.append(f"without C1/C0 a soma cannot be told from a longer cylinder: a ball and stick with any ρ "
                     f"has L between {lo:.4g} (ρ → 0) and {hi:.4g} (ρ → ∞, no soma)")
    elif e.cylinder_consistent:
        notes.append(f"the cylinder's two estimates of L agree within the stated ±{pct} uncertainty "
                     f"(κ = {kappa:.4g}; exactly 1 for a uniform sealed cylinder), so the data give no "
                     f"clear evidence of a soma")
    elif kappa < 1.0:
        notes.append(f"the cylinder's two estimates of L disagree (κ = {kappa:.4g} < 1): evidence of a "
                     f"soma (or of non-uniformity); read the ball-and-stick estimate")
    else:
        notes.append(f"κ = {kappa:.4g} > 1: neither a sealed cylinder (κ = 1) nor a ball and stick (κ < 1) "
                     f"produces these values; suspect the peeling (noise, a missed or merged exponential), "
                     f"non-uniform membrane, taper, or unequal dendrites")
    if e.coefficient_ratio is not None and not e.solutions and kappa is not None and kappa < 1.0:
        notes.append("no ball and stick reproduces these values")
    return notes


# --------------------------------------------------------------------------------------
# membrane properties that follow
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class CellProperties:
    r"""Membrane and cable properties implied by an estimate, in SI; None where an input is missing.

    Every value assumes the model (passive, linear, uniform membrane; soma with the same τm as the
    dendrite; sealed far end; one equivalent cylinder). :attr:`needs` names the further inputs or
    assumptions each value rests on.

    Attributes
    ----------
    membrane_time_constant : τm = τ0, s
    membrane_resistivity : Rm = τ0/Cm, Ω·m² (needs Cm)
    input_conductance : G_N = 1/R_N, S (needs R_N)
    soma_conductance, dendrite_conductance : G_S = G_N/(1+ρ), G_D = G_N ρ/(1+ρ), S (need R_N)
    semi_infinite_input_resistance : R∞ = tanh L/G_D, Ω (needs R_N)
    total_capacitance : C_N = τ0 (G_S + L G∞), F (needs R_N)
    soma_capacitance, dendrite_capacitance : τ0 G_S and τ0 L G∞, F (need R_N)
    membrane_area, soma_area : C/Cm, m² (need R_N and Cm)
    soma_diameter : √(A_S/π) of the sphere with that area, m (needs R_N and Cm)
    diameter : d = (2 G∞ √(Rm Ri)/π)^(2/3) of the equivalent cylinder, m (needs R_N, Cm, Ri)
    length_constant : λ = √(Rm d/(4Ri)), m (needs R_N, Cm, Ri)
    length : ℓ = Lλ, m (needs R_N, Cm, Ri)
    """

    electrotonic_length: float
    conductance_ratio: float
    membrane_time_constant: float
    membrane_resistivity: float | None = None
    input_conductance: float | None = None
    soma_conductance: float | None = None
    dendrite_conductance: float | None = None
    semi_infinite_input_resistance: float | None = None
    total_capacitance: float | None = None
    soma_capacitance: float | None = None
    dendrite_capacitance: float | None = None
    membrane_area: float | None = None
    soma_area: float | None = None
    soma_diameter: float | None = None
    diameter: float | None = None
    length_constant: float | None = None
    length: float | None = None

    needs: ClassVar[dict[str, tuple[str, ...]]] = {
        "membrane_time_constant": (),
        "membrane_resistivity": ("Cm",),
        "input_conductance": ("R_N",),
        "soma_conductance": ("R_N",),
        "dendrite_conductance": ("R_N",),
        "semi_infinite_input_resistance": ("R_N",),
        "total_capacitance": ("R_N",),
        "soma_capacitance": ("R_N",),
        "dendrite_capacitance": ("R_N",),
        "membrane_area": ("R_N", "Cm"),
        "soma_area": ("R_N", "Cm"),
        "soma_diameter": ("R_N", "Cm"),
        "diameter": ("R_N", "Cm", "Ri"),
        "length_constant": ("R_N", "Cm", "Ri"),
        "length": ("R_N", "Cm", "Ri"),
    }


def _positive(value: float | None, name: str) -> float | None:
    if value is None:
        return None
    v = float(value)
    if not (math.isfinite(v) and v > 0):
        raise InputError(f"{name} must be finite and positive, got {v!r}")
    return v


def membrane_properties(time_constant: float, electrotonic_length: float, conductance_ratio: float = math.inf,
                        *, input_resistance: float | None = None, membrane_capacitance: float | None = None,
                        axial_resistivity: float | None = None) -> CellProperties:
    r"""The properties that follow from (τ0, L, ρ), a measured R_N and assumed Cm, Ri.

    .. math::
        \tau_m = \tau_0,\quad R_m = \tau_0/C_m,\quad
        G_S = \frac{G_N}{1+\rho},\quad G_D = \frac{\rho\,G_N}{1+\rho},\quad
        G_\infty = \frac{G_D}{\tanh L},\quad R_\infty = 1/G_\infty

        C_N = \tau_0\,(G_S + L\,G_\infty),\qquad
        d = \left(\frac{2G_\infty\sqrt{R_mR_i}}{\pi}\right)^{2/3},\quad
        \lambda = \sqrt{\frac{R_m d}{4R_i}},\quad \ell = L\lambda

    The dendrite's total membrane conductance is :math:`\pi d\ell/R_m = L\,G_\infty` (from
    :math:`G_\infty = \pi d^{3/2}/(2\sqrt{R_mR_i})` and λ), so its capacitance is :math:`\tau_0 L G_\infty`
    whatever Cm and Ri are; the soma's is :math:`\tau_0 G_S` because it shares τm.

    Parameters
    ----------
    time_constant : τ0, s
    electrotonic_length : L
    conductance_ratio : ρ = G_D/G_S (inf: no soma)
    input_resistance : R_N measured at the soma (steady state), Ω
    membrane_capacitance : Cm assumed, F/m²
    axial_resistivity : Ri assumed, Ω·m

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491 (G∞, λ; ρ); Rall W (1969) Biophys. J. 9:1483 (τ0 = τm; ρ and L
    from peeling).
    """
    tau = _positive(time_constant, "τ0")
    L = _positive(electrotonic_length, "electrotonic length")
    rho = float(conductance_ratio)
    if not rho > 0:
        raise InputError(f"conductance ratio ρ must be positive (inf: no soma), got {rho!r}")
    assert tau is not None
    assert L is not None
    r_n = _positive(input_resistance, "input resistance")
    cm = _positive(membrane_capacitance, "membrane capacitance")
    ri = _positive(axial_resistivity, "axial resistivity")
    values: dict[str, float | None] = {"electrotonic_length": L, "conductance_ratio": rho,
                                       "membrane_time_constant": tau}
    rm = tau / cm if cm is not None else None
    values["membrane_resistivity"] = rm
    if r_n is not None:
        g_n = 1.0 / r_n
        soma_share = 0.0 if math.isinf(rho) else 1.0 / (1.0 + rho)
        g_s = g_n * soma_share
        g_d = g_n - g_s
        g_inf = g_d / math.tanh(L)
        values |= {"input_conductance": g_n, "soma_conductance": g_s, "dendrite_conductance": g_d,
                   "semi_infinite_input_resistance": 1.0 / g_inf, "soma_capacitance": tau * g_s,
                   "dendrite_capacitance": tau * L * g_inf, "total_capacitance": tau * (g_s + L * g_inf)}
        if cm is not None and rm is not None:
            values |= {"membrane_area": tau * (g_s + L * g_inf) / cm, "soma_area": g_s * rm,
                       "soma_diameter": math.sqrt(g_s * rm / math.pi)}
            if ri is not None:
                d = (2.0 * g_inf * math.sqrt(rm * ri) / math.pi) ** (2.0 / 3.0)
                lam = math.sqrt(rm * d / (4.0 * ri))
                values |= {"diameter": d, "length_constant": lam, "length": L * lam}
    return CellProperties(**values)  # type: ignore[arg-type]
