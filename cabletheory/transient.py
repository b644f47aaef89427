r"""Time courses of passive cables: current steps, pulses and alpha currents, voltage-clamp steps.

Everything inside is dimensionless: X = x/λ, T = t/τm, L = ℓ/λ, and voltages in units of
:math:`I R_\infty` (current input; I the amplitude, or the peak of an alpha current) or of the
clamp step :math:`V_0`. :func:`charge` converts SI in and out.

Two exact representations are combined, chosen per time point so that every returned value
has a truncation error below the requested tolerance, and the bound is reported:

* **images** (small T): sums of infinite-cable solutions (Hodgkin & Rushton 1946) reflected at
  sealed (+) or killed (-) ends; the erfc products are evaluated with the scaled complementary
  error function so that they stay finite for any X and T. Tail bound:
  :math:`4e^{-(KL)^2/T}[\sqrt{T/\pi} + T/(4L)]` after K reflections per side.
* **eigen-series** (large T): :math:`\sum_n r_n(X,X_0)\,h_n(T)` over the modes of
  :mod:`cabletheory.eigen`, with the steady state subtracted so that terms fall like
  :math:`e^{-(1+\alpha_n^2)T}/(1+\alpha_n^2)`; tail bounds from :func:`cabletheory.eigen.tail_bound`.
* a **leaky end** (0 < B < ∞) at small T is bracketed: for a non-negative input the voltage
  lies between the killed-end and sealed-end image sums (comparison principle), so their
  mean is used when half their difference is below the tolerance; otherwise the eigen-series.
* a **soma** (ball and stick), or a leaky end whose bracket is too wide, at times so early that
  the eigen-series would need thousands of modes: the Laplace-domain solution
  (:mod:`cabletheory.laplace`) inverted on a parabolic contour (:mod:`cabletheory.contour`),
  whose error estimate is the bound there; so every T > 0 is answered.
* semi-infinite and infinite cables use the closed forms directly.

A pulse is a step minus the step delayed by its duration; the delayed time is formed as
``(t - duration)/τm`` from the SI inputs, so a time a few ulps after the pulse ends keeps its
digits.

The closed forms live in :mod:`cabletheory.kernels`, the finite-cable engines in
:mod:`cabletheory.finite_cable` and the truncation rules in :mod:`cabletheory.truncation`; this
module holds the stimuli, the models, the :class:`Response` and the SI entry point :func:`charge`,
and re-exports the dimensionless functions.

The tolerance is relative to the reference voltage of the stimulus: the final voltage at
the stimulus site for a current step of the same amplitude (peak for an alpha current), or
the clamp step. Every value has a bound of its own (:attr:`Response.bounds`): its truncation
bound plus a rounding allowance of :data:`ROUNDING_ALLOWANCE` times the rounding scale, which
is the reference voltage or, on a cylinder whose far end conducts (B > 0), at least
:math:`|I|R_\infty\min(1, \sqrt{T_{max}})` (the size of the image terms that cancel near a
killed end, where the reference voltage itself goes to zero), and, for a current input,
:math:`8\epsilon(|X| + |X_0|)|I|R_\infty` for the rounding of positions into units of λ (it
matters for a site close to an input far down a long cable at very early times). A current
injected exactly at a
killed end leaves the cable at rest: the values are exactly 0 with bound 0. The accuracy
contract, and the tests that hold the code to it, are in docs/accuracy.md.

Every result assumes a passive, linear membrane with uniform Rm, Ri and Cm.

References
----------
Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444 (infinite cable, erfc solution).
Rall W (1969) Biophys. J. 9:1483 (eigen-series, equalising time constants, voltage clamp).
Jack JJB, Noble D & Tsien RW (1975) Electric Current Flow in Excitable Cells, ch. 3 (images,
recalled from memory).
Rall W (1967) J. Neurophysiol. 30:1138 (alpha-function synaptic input, recalled from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from . import eigen
from .cable import Cylinder
from .case import (
    AlphaCurrent,
    BallAndStick,
    Case,
    CurrentPulse,
    CurrentStep,
    InfiniteCable,
    Model,
    Stimulus,
    VoltageStep,
)
from .errors import InputError
from .finite_cable import clamp_response, current_response
from .kernels import (
    clamp_steady,
    hodgkin_rushton,
    point_source_alpha,
    point_source_step,
    semi_infinite_clamp,
    steady_green,
)
from .truncation import Shape

__all__ = [
    "ROUNDING_ALLOWANCE",
    "AlphaCurrent",
    "BallAndStick",
    "CurrentPulse",
    "CurrentStep",
    "InfiniteCable",
    "Response",
    "VoltageStep",
    "charge",
    "clamp_response",
    "current_response",
    "hodgkin_rushton",
    "point_source_alpha",
    "point_source_step",
    "semi_infinite_clamp",
    "steady_green",
]

Array = NDArray[np.float64]

ROUNDING_ALLOWANCE = 1e-12  # relative to the reference voltage; measured against mpmath (tests/test_precise.py)


# --------------------------------------------------------------------------------------
# result
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Response:
    """Voltage (deviation from rest) on a grid of times and positions, all SI.

    Attributes
    ----------
    times : s, shape (nT,)
    positions : m, shape (nX,)
    voltage : V, shape (nT, nX), ``voltage[i, j]`` at ``times[i]``, ``positions[j]``
    bounds : V, shape (nT, nX), bound on the error of each value (truncation plus rounding
        allowance); ``bounds / abs(voltage)`` is the bound relative to each value
    error_bound : V, the largest of ``bounds``
    time_constants : s, equalising time constants τ_n of the modes, slowest first (empty for
        semi-infinite and infinite cables)
    coefficients : shape (len(time_constants), nX); C_n of the *step* response at each
        position, ``V/V(∞) = 1 - Σ C_n exp(-t/τ_n)`` (current step, or clamp step), whatever the
        stimulus shape; nan where the final voltage is 0
    method : how the values were computed (images / eigen-series, terms, time ranges)
    steady_state : V, final voltage at each position for a step stimulus; None for a pulse or
        alpha current (whose final voltage is 0)
    reference_voltage : V, the scale of the tolerance (see module docstring)
    tolerance : requested truncation error relative to ``reference_voltage``
    length_constant, membrane_time_constant : λ (m) and τm (s) used for X and T
    """

    times: Array
    positions: Array
    voltage: Array
    bounds: Array
    error_bound: float
    time_constants: Array
    coefficients: Array
    method: str
    steady_state: Array | None
    reference_voltage: float
    tolerance: float
    length_constant: float
    membrane_time_constant: float
    precision: int | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)


# --------------------------------------------------------------------------------------
# SI entry point
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class _Geometry:
    length_constant: float
    time_constant: float
    semi_infinite_resistance: float
    electrotonic_length: float  # inf: semi-infinite; nan: doubly infinite
    end_conductance_ratio: float
    soma_ratio: float
    physical_length: float


def _geometry(model: Model) -> _Geometry:
    if isinstance(model, BallAndStick):
        c = model.cylinder
        return _Geometry(c.length_constant, c.time_constant, c.semi_infinite_input_resistance,
                         c.electrotonic_length, c.end_conductance_ratio, model.soma_ratio, c.length)
    if isinstance(model, Cylinder):
        return _Geometry(model.length_constant, model.time_constant, model.semi_infinite_input_resistance,
                         model.electrotonic_length, model.end_conductance_ratio, 0.0, model.length)
    if isinstance(model, InfiniteCable):
        return _Geometry(model.length_constant, model.time_constant, model.semi_infinite_input_resistance,
                         math.nan, 0.0, 0.0, math.nan)
    raise InputError(f"model must be a Cylinder, BallAndStick or InfiniteCable, got {type(model).__name__}")


def _shape_of(stimulus: Stimulus, tau: float) -> Shape:
    if isinstance(stimulus, CurrentStep):
        return Shape("step")
    if isinstance(stimulus, CurrentPulse):
        return Shape("pulse", duration=stimulus.duration / tau)
    if isinstance(stimulus, AlphaCurrent):
        return Shape("alpha", time_to_peak=stimulus.time_to_peak / tau)
    raise InputError(f"unknown stimulus {type(stimulus).__name__}")


def _amplitude(stimulus: Stimulus) -> float:
    return stimulus.peak if isinstance(stimulus, AlphaCurrent) else stimulus.amplitude


def charge(model: Model, stimulus: Stimulus, times: ArrayLike, positions: ArrayLike, *,
           tolerance: float = 1e-10, precision: int | None = None, modes: int = 5) -> Response:
    r"""Voltage time course of a passive cable model for one stimulus, on a grid of times × positions.

    Parameters
    ----------
    model : :class:`~cabletheory.cable.Cylinder` (finite with a sealed, killed or leaky far end,
        or semi-infinite with ``length = inf``; input side sealed), :class:`BallAndStick`, or
        :class:`InfiniteCable`
    stimulus : :class:`CurrentStep`, :class:`CurrentPulse`, :class:`AlphaCurrent` (at
        ``position``, m from the origin) or :class:`VoltageStep` (clamp at the origin; anywhere on an
        infinite cable). Position 0 of a ball and stick is the soma.
    times : s; the stimulus starts at t = 0, and t ≤ 0 gives exactly 0 (rest)
    positions : m from the origin, within the cable (any sign on an infinite cable)
    tolerance : truncation error allowed, relative to the reference voltage (module docstring)
    precision : None for numpy floats; a number of decimal digits to evaluate the same series
        and erfc forms with mpmath (:mod:`cabletheory.precise`; slow, for checks)
    modes : how many time constants and coefficients to report (finite cables)

    Returns
    -------
    :class:`Response`, voltage in V (deviation from rest) indexed [time, position].

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Hodgkin & Rushton (1946) Proc. R. Soc. B 133:444.
    """
    geo = _geometry(model)
    t = np.atleast_1d(np.asarray(times, dtype=float)).ravel()
    x = np.atleast_1d(np.asarray(positions, dtype=float)).ravel()
    if not (np.isfinite(t).all() and np.isfinite(x).all()):
        raise InputError("times and positions must be finite")
    if not (isinstance(tolerance, int | float) and 0 < tolerance < 1):
        raise InputError(f"tolerance must lie in (0, 1), got {tolerance!r}")
    if modes < 0:
        raise InputError(f"modes must be >= 0, got {modes!r}")
    case = Case(model, stimulus)  # the case's own rules: stimulus site, clamp position
    case.check_positions(x)
    infinite = case.kind == "infinite"
    if not infinite:
        x = np.minimum(x, geo.physical_length)
    lam, tau = geo.length_constant, geo.time_constant
    X = x / lam
    T = t / tau
    L, B, y = geo.electrotonic_length, geo.end_conductance_ratio, geo.soma_ratio
    source = stimulus.position
    X0 = source / lam
    amplitude = _amplitude(stimulus)
    clamp = isinstance(stimulus, VoltageStep)
    notes: list[str] = []
    # a pulse's end: t - duration is exact in floating point near the end (Sterbenz), T - D is not
    delayed = (t - stimulus.duration) / tau if isinstance(stimulus, CurrentPulse) else None
    rounding = 0.0
    if clamp:
        scale = amplitude
        reference = abs(amplitude)
        tol = tolerance
        if isinstance(model, BallAndStick):
            notes.append("the clamp fixes the soma voltage, so the soma does not change the voltage")
    else:
        shape = _shape_of(stimulus, tau)
        scale = amplitude * geo.semi_infinite_resistance
        site = case.site_factor
        reference = case.reference_voltage
        tol = tolerance * site
        if not infinite and B > 0:
            # near a (nearly) killed end the images cancel: round relative to their size
            rounding = abs(scale) * min(1.0, math.sqrt(max(float(T.max(initial=0.0)), 0.0)))
    rounding = ROUNDING_ALLOWANCE * max(reference, rounding)
    if not clamp and reference == 0.0:
        # a current into a killed end (or a zero amplitude) leaves the whole cable at rest
        zero = np.zeros((T.size, X.size))
        values, bounds, method = zero, zero.copy(), "exact: the input leaves the cable at rest (V = 0)"
        rounding = 0.0
        notes.append("a current injected at a killed end flows straight out through it: V = 0 everywhere")
    elif precision is not None:
        from . import precise

        if clamp:
            values, bounds, method = precise.clamp_grid(X, T, L, B, tol, precision, infinite=infinite, source=X0)
        else:
            values, bounds, method = precise.current_grid(X, X0, T, L, B, y, shape.kind, shape.duration,
                                                           shape.time_to_peak, tol, precision, infinite=infinite,
                                                           delayed=delayed)
    elif infinite:
        d = np.abs(X - X0)[None, :]
        Tc = T[:, None]
        if clamp:
            values = semi_infinite_clamp(d, Tc)
        elif shape.kind == "alpha":
            values = point_source_alpha(d, Tc, shape.time_to_peak)
        else:
            values = point_source_step(d, Tc)
            if shape.kind == "pulse" and delayed is not None:
                values = values - point_source_step(d, delayed[:, None])
        values = np.broadcast_to(values, (T.size, X.size)).copy()
        bounds = np.zeros_like(values)
        method = "closed form (infinite cable, Hodgkin-Rushton)"
    elif clamp:
        values, bounds, method = clamp_response(X, T, L, B, tolerance=tol)
    else:
        values, bounds, method = current_response(X, X0, T, L, B, y, shape=shape.kind, duration=shape.duration,
                                                  time_to_peak=shape.time_to_peak, tolerance=tol,
                                                  delayed_time=delayed)
    # time constants and step coefficients
    if math.isfinite(L) and modes > 0:
        origin = "clamped" if clamp else "sealed"
        yy = 0.0 if clamp else y
        alpha = eigen._eigenvalues(L, B, modes, origin, yy)
        mu = 1 + alpha**2
        time_constants = tau / mu
        if clamp:
            final = clamp_steady(X, L, B)
            amplitudes = eigen.clamp_mode_coefficients(alpha, X, L)
        else:
            final = steady_green(X, X0, L, B, y)
            amplitudes = eigen.mode_residues(alpha, X, X0, L, soma_ratio=y) / mu[:, None]
        with np.errstate(divide="ignore", invalid="ignore"):
            coefficients = np.where(final[None, :] > 0, amplitudes / np.where(final > 0, final, 1.0)[None, :], np.nan)
    else:
        time_constants = np.zeros(0)
        coefficients = np.zeros((0, X.size))
    steady: Array | None = None
    if clamp:
        steady = scale * (np.exp(-np.abs(X - X0)) if infinite else clamp_steady(X, L, B))
    elif shape.kind == "step":
        steady = scale * (0.5 * np.exp(-np.abs(X - X0)) if infinite else steady_green(X, X0, L, B, y))
    per_value = np.broadcast_to(np.asarray(bounds, dtype=float), (T.size, X.size)) * abs(scale) + rounding
    if not clamp and reference > 0:
        # X = x/λ and X0 are rounded (relative ε) before their difference is formed; a current
        # input's voltage changes by at most 2|I|R∞ per unit of X (the axial current is at most
        # the input's), so allow 8ε(|X| + |X0|)|I|R∞ per value for it
        per_value = per_value + (8 * np.finfo(float).eps * abs(scale) * (np.abs(X) + abs(X0)))[None, :]
    error_bound = float(np.max(per_value, initial=0.0))
    return Response(times=t, positions=x, voltage=scale * values, bounds=per_value, error_bound=error_bound,
                    time_constants=time_constants, coefficients=coefficients, method=method, steady_state=steady,
                    reference_voltage=reference, tolerance=float(tolerance), length_constant=lam,
                    membrane_time_constant=tau, precision=precision, notes=tuple(notes))
