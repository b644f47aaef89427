r"""Exact cases: a model and stimulus turned into an :class:`ExactCase` that any check can evaluate.

:func:`sealed_step_voltage` / :func:`sealed_step_case` are a small independent series of our own
(sealed cylinder, current step at the origin); :func:`transient_case` wraps every time course of
:mod:`cabletheory.transient`; :func:`exact_case` chooses between them. The words and numbers of a
case are the case's own (:meth:`cabletheory.case.Case.describe`, :meth:`~cabletheory.case.Case.parameters`).

Every exact answer assumes a passive, linear membrane with uniform properties; so does every
verdict. A simulator with active conductances is outside what this package can check.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .. import cable as cb
from ..case import Case
from ..errors import ConvergenceError, InputError
from ..tree_case import TreeCase
from ..tree_laplace import Site
from .comparison import ExactCase

__all__ = [
    "exact_case",
    "sealed_step_case",
    "sealed_step_voltage",
    "transient_case",
    "tree_exact_case",
]

Array = NDArray[np.float64]


# ======================================================================================
# a small exact case of our own: sealed cylinder, current step at the origin
# ======================================================================================
def sealed_step_voltage(cylinder: cb.Cylinder, amplitude: float, times: ArrayLike, positions: ArrayLike,
                        tolerance: float = 1e-12) -> tuple[Array, Array]:
    r"""Exact voltage of a finite sealed cylinder after a current step at X = 0.

    .. math:: \frac{V(X,T)}{I R_\infty} = \frac{\cosh(L-X)}{\sinh L} - \frac{1}{L}\Big[e^{-T}
              + 2\sum_{n\ge1} \frac{\cos(k_n X)\, e^{-(1+k_n^2)T}}{1+k_n^2}\Big], \quad k_n = n\pi/L

    (eigenfunction series of Rall 1969, Biophys. J. 9:1483; at X = 0 this is the charging
    curve in tests/test_verify.py). Truncation: the terms beyond N are bounded by
    :math:`\frac{2}{L}\sum_{n>N} e^{-(1+k_n^2)T}/k_n^2 \le \frac{2L}{\pi^2 N} e^{-(1+k_{N+1}^2)T}`,
    and N grows until that bound, times :math:`|I| R_\infty`, is below ``tolerance`` (V).

    At early times, :math:`T < L^2/16`, where the series would need about
    :math:`(L/\pi)\sqrt{\ln(1/\text{tolerance})/T}` terms, the same voltage is summed as images
    of the infinite-cable solution reflected at both sealed ends (Hodgkin & Rushton 1946; Jack,
    Noble & Tsien 1975 ch. 3, recalled from memory),
    :math:`2\sum_k P(|X - 2kL|, T)` with P of :func:`cabletheory.kernels.point_source_step`,
    with K reflections per side until the tail bound
    :math:`4e^{-(KL)^2/T}[\sqrt{T/\pi} + T/(4L)]` (:func:`cabletheory.truncation.image_tail`),
    times :math:`|I|R_\infty`, is below ``tolerance``. So every T > 0 is answered.

    Parameters
    ----------
    cylinder : finite cylinder (its end conductance is ignored: sealed)
    amplitude : I, A
    times, positions : equal-shape arrays, s (>= 0) and m (in [0, ℓ])
    tolerance : V, bound on the truncation error of each value

    Returns
    -------
    (voltage, bound), both V, shaped like ``times``.
    """
    t = np.asarray(times, dtype=float)
    x = np.asarray(positions, dtype=float)
    L = cylinder.electrotonic_length
    T = t / cylinder.time_constant
    X = x / cylinder.length_constant
    scale = abs(amplitude) * cylinder.semi_infinite_input_resistance
    # steady part cosh(L-X)/sinh L, written with exp(-2·) (no overflow for long cables)
    steady = np.exp(-X) * (1 + np.exp(-2 * (L - X))) / -np.expm1(-2 * L)  # expm1: short cables stay accurate
    voltage = np.zeros(t.shape)
    bound = np.zeros(t.shape)
    early = (T > 0) & (T < L * L / 16)
    if np.any(early):
        voltage[early], bound[early] = _sealed_images(X[early], T[early], L, tolerance / scale if scale else 1.0)
        voltage[early] *= amplitude * cylinder.semi_infinite_input_resistance
        bound[early] = bound[early] * scale + 1e-15 * scale * np.maximum(1.0, 1.0 / L)
    live = T >= L * L / 16  # at T = 0 the cable is at rest exactly
    Tl, Xl = T[live], X[live]
    total = np.exp(-Tl)
    tail = np.full(Tl.shape, np.inf)
    active = np.ones(Tl.shape, dtype=bool)
    n0, chunk = 0, 64
    while np.any(active):
        if n0 > 10_000_000:  # pragma: no cover - images take the early times
            raise ConvergenceError(f"series did not reach {tolerance:.3g} V at the earliest times; "
                                   "loosen the exact values' truncation")
        n = np.arange(n0 + 1, n0 + chunk + 1)
        k = n * np.pi / L
        ta, xa = Tl[active, None], Xl[active, None]
        total[active] += np.sum(2 * np.cos(k * xa) * np.exp(-(1 + k * k) * ta) / (1 + k * k), axis=1)
        last = n0 + chunk
        # 2L/(π² N)·e^{-(1+k_{N+1}²)T}: the tail bound of the docstring, with its factor L
        tail[active] = scale * 2 * L / (np.pi**2 * last) * np.exp(-(1 + ((last + 1) * np.pi / L) ** 2) * Tl[active])
        active &= tail > tolerance
        n0, chunk = last, min(chunk * 2, 65536)
    voltage[live] = amplitude * cylinder.semi_infinite_input_resistance * (steady[live] - total / L)
    bound[live] = tail + 1e-15 * scale * np.maximum(1.0, 1.0 / L)  # truncation plus rounding
    return voltage, bound


def _sealed_images(X: Array, T: Array, L: float, tolerance: float) -> tuple[Array, Array]:
    """Images of a step at X = 0 between two sealed ends, pointwise: (V/(IR∞), truncation bound)."""
    from ..kernels import point_source_step
    from ..truncation import image_tail

    K = np.ones(T.shape)
    while True:
        bad = image_tail(K, T, L) > tolerance
        if not bad.any():
            break
        K = np.where(bad, K + 1, K)
    total = 2 * point_source_step(X, T)
    for k in range(1, int(K.max()) + 1):
        use = k <= K
        total = total + np.where(use, 2 * (point_source_step(np.abs(X - 2 * k * L), T)
                                           + point_source_step(X + 2 * k * L, T)), 0.0)
    return total, image_tail(K, T, L)


def sealed_step_case(cylinder: cb.Cylinder, amplitude: float, tolerance: float = 1e-12) -> ExactCase:
    """:func:`sealed_step_voltage` as an :class:`ExactCase` (current step at the origin, sealed end)."""

    def evaluate(times: Array, positions: Array) -> tuple[Array, Array]:
        return sealed_step_voltage(cylinder, amplitude, times, positions, tolerance)

    params = {
        "membrane_resistivity": (cylinder.membrane_resistivity, "ohm*m**2"),
        "axial_resistivity": (cylinder.axial_resistivity, "ohm*m"),
        "membrane_capacitance": (cylinder.membrane_capacitance, "F/m**2"),
        "diameter": (cylinder.diameter, "m"),
        "length": (cylinder.length, "m"),
        "end_conductance": (0.0, "S"),
        "stimulus_amplitude": (amplitude, "A"),
        "stimulus_position": (0.0, "m"),
    }
    return ExactCase(evaluate=evaluate, description="finite cylinder, sealed far end, current step at the origin",
                     method="eigenfunction series (Rall 1969) truncated by its tail bound",
                     parameters=params, length=cylinder.length)


# ======================================================================================
# every case of cabletheory.transient as an exact case
# ======================================================================================
GRID_FACTOR = 4  # paired points are evaluated on their full time × site grid while it has at most
# this many times as many points (plus GRID_SLACK); otherwise in blocks
GRID_SLACK = 4096
SCATTER_BLOCK = 256  # points per block when the pairs are scattered (each block: at most 256² values)


def transient_case(case: Case, tolerance: float = 1e-12) -> ExactCase:
    """Any time course of :func:`cabletheory.transient.charge` as an :class:`ExactCase`.

    Parameters
    ----------
    case : the :class:`~cabletheory.case.Case` (cell and stimulus; its recording positions are not
        used: ``evaluate`` takes its own)
    tolerance : V, bound asked for the truncation error of each exact value. It is passed to
        :func:`~cabletheory.transient.charge` relative to the stimulus's reference voltage, and
        kept between 1e-13 (the rounding allowance of transient.py) and 1e-2 of it; the bound
        actually achieved is what ``evaluate`` returns.

    Returns
    -------
    ExactCase whose ``evaluate(times, positions)`` returns the exact voltage (V from rest) at
    each (time, position) pair and the error bound of the :class:`~cabletheory.transient.Response`
    it came from. Times at or before the onset give exactly 0.

    References
    ----------
    Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444; Rall W (1969) Biophys. J. 9:1483
    (the methods of :mod:`cabletheory.transient`).
    """
    from .. import transient as tr

    if not (math.isfinite(tolerance) and tolerance > 0):
        raise InputError(f"exact tolerance must be a positive voltage, got {tolerance!r}")
    model, stimulus = case.cell, case.stimulus
    infinite = case.kind == "infinite"
    params = case.parameters()
    length, start = case.length, case.lowest_position
    # the tolerance of transient.charge is relative to the case's reference voltage
    reference = case.reference_voltage
    relative = min(max(tolerance / reference, 1e-13), 1e-2) if reference > 0 else 1e-10
    params["exact_tolerance"] = (relative * reference, "V")
    if infinite or math.isinf(length):
        image = ("" if infinite or case.shape == "clamp"
                 else "; source and its image in the sealed origin")
        method = f"closed form (Hodgkin & Rushton 1946 erfc solutions, scaled erfc{image})"
    else:
        method = ("images of the infinite-cable solution at early times, eigen-series with the steady state "
                  "subtracted at later times (Rall 1969), chosen per time"
                  + ("; a leaky end bracketed between sealed and killed"
                     if 0 < params["end_conductance"][0] < math.inf else ""))
    method += f"; truncation error of each value <= {relative * reference:.2g} V"

    def evaluate(times: Array, positions: Array) -> tuple[Array, Array]:
        t = np.asarray(times, dtype=float).ravel()
        x = np.asarray(positions, dtype=float).ravel()
        voltage = np.zeros(t.size)
        bound = np.zeros(t.size)
        if t.size == 0:
            return voltage, bound
        unique_t, ti = np.unique(t, return_inverse=True)
        unique_x, xi = np.unique(x, return_inverse=True)
        if unique_t.size * unique_x.size <= GRID_FACTOR * t.size + GRID_SLACK:
            r = tr.charge(model, stimulus, unique_t, unique_x, tolerance=relative, modes=0)
            voltage[:] = r.voltage[ti, xi]
            bound[:] = r.bounds[ti, xi]
        else:  # scattered pairs: blocks of neighbouring positions, each on its own small grid
            order = np.argsort(x, kind="stable")
            for begin in range(0, order.size, SCATTER_BLOCK):
                at = order[begin:begin + SCATTER_BLOCK]
                bt, bti = np.unique(t[at], return_inverse=True)
                bx, bxi = np.unique(x[at], return_inverse=True)
                r = tr.charge(model, stimulus, bt, bx, tolerance=relative, modes=0)
                voltage[at] = r.voltage[bti, bxi]
                bound[at] = r.bounds[bti, bxi]
        return voltage.reshape(np.shape(times)), bound.reshape(np.shape(times))

    return ExactCase(evaluate=evaluate, description=case.describe(), method=method, parameters=params,
                     length=length, start=start, stimulus_shape=case.shape)


def exact_case(case: Case, tolerance: float = 1e-12) -> ExactCase:
    """The exact answer for a case: the one rule that ``reference``, ``compare`` and the terminal
    app's check view share.

    A current step at the origin of a finite cylinder with a sealed far end uses the independent
    eigenfunction series of :func:`sealed_step_case` (Rall 1969); every other case, the exact
    transients of :mod:`cabletheory.transient` through :func:`transient_case`.

    Parameters
    ----------
    case : the :class:`~cabletheory.case.Case` (cell and stimulus)
    tolerance : V, bound asked for the truncation error of each exact value (positive, finite)

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444.
    """
    if not (math.isfinite(tolerance) and tolerance > 0):
        raise InputError(f"exact tolerance must be a positive voltage, got {tolerance!r}")
    cylinder = case.cylinder
    if (case.kind == "cylinder" and cylinder is not None and math.isfinite(cylinder.length)
            and cylinder.end_conductance == 0 and case.shape == "step" and case.stimulus.position == 0):
        return sealed_step_case(cylinder, case.amplitude, tolerance)
    return transient_case(case, tolerance)


# ======================================================================================
# a case on a whole tree, at any of its sites
# ======================================================================================
def tree_exact_case(case: TreeCase, sites: Sequence[Site], tolerance: float = 1e-12, *,
                    relative: bool = False) -> ExactCase:
    """A :class:`~cabletheory.tree_case.TreeCase` as an :class:`ExactCase` over the tree ``sites``.

    ``evaluate(times, positions)`` takes as positions the numbers 0, 1, 2 ... of ``sites`` (as
    :func:`cabletheory.verify.tree_reading.read_tree_recording` numbers a file's points) and returns
    the exact voltage there (the Laplace-domain solution of the tree inverted on a contour,
    :func:`cabletheory.tree_time.tree_response`) with its error estimate.

    Parameters
    ----------
    case : the tree, its stimulus and its stimulus point
    sites : the tree sites the positions stand for
    tolerance : error allowed in each exact value: V, or (``relative=True``) a fraction of the
        case's reference voltage (the final voltage at the stimulus site for a step of the same
        amplitude, or the clamp step); kept within [1e-14, 1e-2] of that reference

    References
    ----------
    Holmes WR (1986) Biol. Cybern. 55:115 [Holmes1986]; Weideman JAC & Trefethen LN (2007)
    Math. Comp. 76:1341 [WeidemanTrefethen2007].
    """
    from ..tree_time import tree_response

    if not (math.isfinite(tolerance) and tolerance > 0):
        raise InputError(f"exact tolerance must be positive, got {tolerance!r}")
    sites = tuple(sites)
    if not sites:
        raise InputError("give at least one tree site")
    probe = tree_response(case.cell, case.stimulus, [0.0], case.stimulus_site, sites[:1])
    reference = probe.reference_voltage
    fraction = tolerance if relative else (tolerance / reference if reference > 0 else 1e-10)
    fraction = min(max(fraction, 1e-14), 1e-2)
    params = dict(case.parameters())
    params["exact_tolerance"] = (fraction * reference, "V")

    def evaluate(times: Array, positions: Array) -> tuple[Array, Array]:
        t = np.asarray(times, dtype=float).ravel()
        x = np.asarray(positions, dtype=float).ravel()
        voltage = np.zeros(t.size)
        bound = np.zeros(t.size)
        if t.size == 0:
            return voltage, bound
        unique_t, ti = np.unique(t, return_inverse=True)
        unique_x, xi = np.unique(x, return_inverse=True)
        at = [sites[int(k)] for k in unique_x]
        r = tree_response(case.cell, case.stimulus, unique_t, case.stimulus_site, at, tolerance=fraction)
        voltage[:] = r.voltage[ti, xi]
        bound[:] = r.errors[ti, xi]
        return voltage.reshape(np.shape(times)), bound.reshape(np.shape(times))

    method = (f"Laplace-domain solution of the tree (Holmes 1986) inverted on a hyperbolic contour (Weideman & "
              f"Trefethen 2007); estimated error of each value <= {fraction * reference:.2g} V")
    return ExactCase(evaluate=evaluate, description=case.describe(), method=method, parameters=params,
                     stimulus_shape=case.shape)
