"""Numerical inversion (mpmath Talbot) of the derived Laplace-domain solutions.

The Laplace-domain expressions of cabletheory.symbolic are lambdified to mpmath and inverted
with ``mpmath.invertlaplace(method="talbot")`` (an independent general-purpose routine), then
compared with time courses computed with mpmath [mpmath2023] (sources beside each table), with the
numeric transient evaluators of cabletheory.transient, and with the eigen-series assembled from
the derived coefficients and cabletheory.eigen's roots.
"""

from __future__ import annotations

import functools
import math

import mpmath
import numpy as np
import pytest

from cabletheory import cable, eigen, transient
from cabletheory.symbolic import derive, to_numeric

DIGITS = 30
RTOL_TABLE = 2e-9  # tables print 10 significant digits


@functools.cache
def _laplace(origin: str, end: str, field: str = "laplace", parameter: str = "rho"):
    d = derive(origin, end, soma_parameter=parameter)
    names = ["s", "X"] + (["X0"] if field == "laplace_point_source" else []) + ["L"]
    if end == "leaky":
        names.append("B")
    if origin == "soma":
        names.append(parameter)
    return to_numeric(getattr(d, field), names, modules="mpmath")


def _invert(transform, T: float, *args) -> float:
    with mpmath.workdps(DIGITS):
        return float(mpmath.invertlaplace(lambda s: transform(s, *args), T, method="talbot"))


def _step(transform):
    """Step response from an impulse response's transform (multiply by the transform of H(T), 1/s)."""
    return lambda s, *args: transform(s, *args) / s


# --------------------------------------------------------------------------------------
# published and vetted time courses
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(("L", "T", "want"), [
    # computed: V(0,T)/V(0,∞) for a current step into a sealed cylinder (series derived from
    # Rall 1969 [Rall1969], confirmed by Talbot inversion [Talbot1979] of
    # tanh L·coth(L√(1+s))/(s√(1+s)))
    (0.5, 0.1, 0.1629208867), (0.5, 0.5, 0.4394235514), (0.5, 1.0, 0.6599931969), (0.5, 2.0, 0.8749184873),
    (1.0, 0.1, 0.2629635738), (1.0, 0.5, 0.5374585210), (1.0, 1.0, 0.7198225011), (1.0, 2.0, 0.8969294391),
    (2.0, 0.1, 0.3328586273), (2.0, 0.5, 0.6581489934), (2.0, 1.0, 0.8140014926), (2.0, 2.0, 0.9344959202),
])
def test_sealed_cylinder_charging_curve(L, T, want):
    value = _invert(_laplace("current", "sealed"), T, 0, L)
    assert value / (1 / math.tanh(L)) == pytest.approx(want, rel=RTOL_TABLE)


@pytest.mark.parametrize(("L", "rho", "T", "want"), [
    # computed: soma voltage V(T)/V(∞) of a ball and stick, current step into the soma (400-term
    # eigen-series and Talbot agree; Crank-Nicolson to 1e-6); Rall (1969) model [Rall1969]
    (1.0, 5.0, 0.1, 0.2124536900), (1.0, 5.0, 0.5, 0.5166979813), (1.0, 5.0, 1.0, 0.7082003630),
    (1.0, 5.0, 2.0, 0.8926645328),
    (1.5, 10.0, 0.1, 0.2685445896), (1.5, 10.0, 0.5, 0.5989840481), (1.5, 10.0, 1.0, 0.7678738291),
    (1.5, 10.0, 2.0, 0.9152664747),
])
def test_ball_and_stick_soma_voltage(L, rho, T, want):
    final = to_numeric(derive("soma", "sealed").steady_state, ["X", "L", "rho"])(0.0, L, rho)
    value = _invert(_laplace("soma", "sealed"), T, 0, L, rho)
    assert value / final == pytest.approx(want, rel=RTOL_TABLE)


@pytest.mark.parametrize(("X", "T", "want"), [
    # computed from Hodgkin & Rushton (1946) [HodgkinRushton1946] [MEM]: V(X,T)/V(0,∞) on a semi-infinite
    # cable, current step at X = 0. A sealed cylinder of L = 40 stands in for it: the far end
    # changes these values by less than e^{-(2L-X)²/(4T)} < 1e-100.
    (0.0, 0.1, 0.3452791540), (0.0, 0.25, 0.5204998778), (0.0, 1.0, 0.8427007929), (0.0, 3.0, 0.9856941216),
    (1.0, 0.5, 0.1220984503), (1.0, 1.0, 0.2336124405), (1.0, 2.0, 0.3264228249), (1.0, 5.0, 0.3663799236),
    (2.0, 0.5, 0.01149718144), (2.0, 1.0, 0.05038561852), (2.0, 2.0, 0.1038891572), (2.0, 5.0, 0.1340169979),
])
def test_semi_infinite_charging_hodgkin_rushton(X, T, want):
    assert _invert(_laplace("current", "sealed"), T, X, 40.0) == pytest.approx(want, rel=RTOL_TABLE)


def test_isopotential_and_infinite_bounds():
    """Sanity rule: each charging curve at the origin lies between the
    isopotential cell 1 - e^{-T} and the semi-infinite cable erf√T, and rises with L."""
    T = 0.7
    curves = [_invert(_laplace("current", "sealed"), T, 0, L) * math.tanh(L) for L in (0.3, 1.0, 3.0)]
    assert 1 - math.exp(-T) < curves[0] < curves[1] < curves[2] < math.erf(math.sqrt(T))


# --------------------------------------------------------------------------------------
# against cabletheory.transient (the numeric evaluators)
# --------------------------------------------------------------------------------------
DEMO = {"membrane_resistivity": 2.0, "axial_resistivity": 2.0, "membrane_capacitance": 0.01, "diameter": 2e-6}
# demo cable of docs/sources.md in SI: Rm 20 000 Ω·cm², Ri 200 Ω·cm, Cm 1 µF/cm², d 2 µm (τm = 20 ms)


def _cylinder(L: float, B: float) -> cable.Cylinder:
    base = cable.Cylinder(**DEMO, length=1.0)
    lam, r_inf = base.length_constant, base.semi_infinite_input_resistance
    return cable.Cylinder(**DEMO, length=L * lam, end_conductance=B / r_inf)


@pytest.mark.parametrize(("end", "B"), [("sealed", 0.0), ("killed", math.inf), ("leaky", 0.6)])
@pytest.mark.parametrize("source", [0.0, 0.45])
def test_current_step_against_transient_charge(end, B, source):
    """transient.charge (images / eigen-series) vs Talbot inversion of the derived V̂(X, X0; s)/s."""
    L = 1.2
    cyl = _cylinder(L, B)
    lam, tau, r_inf = cyl.length_constant, cyl.time_constant, cyl.semi_infinite_input_resistance
    times = np.array([0.05, 0.4, 1.5]) * tau
    X = np.array([0.0, 0.6, L])
    response = transient.charge(cyl, transient.CurrentStep(1e-10, source * L * lam), times, X * lam,
                                tolerance=1e-11)
    green = _step(_laplace("current", end, "laplace_point_source"))
    extra = (B,) if end == "leaky" else ()
    for i, t in enumerate(times):
        for j, x in enumerate(X):
            want = _invert(green, t / tau, x, source * L, L, *extra)
            assert response.voltage[i, j] / (1e-10 * r_inf) == pytest.approx(want, rel=1e-8, abs=1e-11)


@pytest.mark.parametrize(("end", "B"), [("sealed", 0.0), ("killed", math.inf), ("leaky", 2.5)])
def test_voltage_clamp_against_transient_charge(end, B):
    L = 0.8
    cyl = _cylinder(L, B)
    lam, tau = cyl.length_constant, cyl.time_constant
    times = np.array([0.03, 0.3, 1.0]) * tau
    X = np.array([0.2, 0.5, L])
    response = transient.charge(cyl, transient.VoltageStep(0.01), times, X * lam, tolerance=1e-11)
    extra = (B,) if end == "leaky" else ()
    for i, t in enumerate(times):
        for j, x in enumerate(X):
            want = _invert(_laplace("clamp", end), t / tau, x, L, *extra)
            assert response.voltage[i, j] / 0.01 == pytest.approx(want, rel=1e-8, abs=1e-11)


@pytest.mark.parametrize(("end", "B"), [("sealed", 0.0), ("leaky", 0.6)])
def test_ball_and_stick_against_transient_charge(end, B):
    L, rho = 1.0, 5.0
    model = transient.BallAndStick.with_conductance_ratio(_cylinder(L, B), rho)
    lam, tau = model.cylinder.length_constant, model.cylinder.time_constant
    r_inf = model.cylinder.semi_infinite_input_resistance
    times = np.array([0.05, 0.5, 2.0]) * tau
    X = np.array([0.0, 0.7])
    response = transient.charge(model, transient.CurrentStep(1e-10), times, X * lam, tolerance=1e-11)
    extra = (B,) if end == "leaky" else ()
    for i, t in enumerate(times):
        for j, x in enumerate(X):
            want = _invert(_laplace("soma", end), t / tau, x, L, *extra, rho)
            assert response.voltage[i, j] / (1e-10 * r_inf) == pytest.approx(want, rel=1e-8, abs=1e-11)


def test_infinite_cable_against_transient_charge():
    """transient.InfiniteCable (Hodgkin & Rushton 1946 [HodgkinRushton1946] closed form) vs the derived transform on a
    long sealed cylinder, halved: a doubly infinite cable injected in the middle is two
    semi-infinite cables in parallel ([CP])."""
    cyl = _cylinder(1.0, 0.0)
    lam, tau, r_inf = cyl.length_constant, cyl.time_constant, cyl.semi_infinite_input_resistance
    times = np.array([0.2, 1.0, 3.0]) * tau
    X = np.array([0.0, 1.0, 2.5])
    response = transient.charge(transient.InfiniteCable.like(cyl), transient.CurrentStep(1e-10), times, X * lam)
    for i, t in enumerate(times):
        for j, x in enumerate(X):
            want = 0.5 * _invert(_laplace("current", "sealed"), t / tau, x, 40.0)
            assert response.voltage[i, j] / (1e-10 * r_inf) == pytest.approx(want, rel=1e-8, abs=1e-12)


# --------------------------------------------------------------------------------------
# the derived transform against the derived modes (two halves of the same derivation)
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(("origin", "end"), [("current", "sealed"), ("current", "leaky"), ("clamp", "killed"),
                                             ("soma", "sealed"), ("soma", "killed")])
def test_transform_and_mode_expansion_agree(origin, end):
    """V(X,T) = V_ss(X) − c_0 e^{−T} − Σ c(α_n, X) e^{−(1+α_n²)T} with α_n from cabletheory.eigen
    equals the Talbot inversion; 300 modes leave a tail below e^{−(300π/L)²T} at T ≥ 0.05."""
    d = derive(origin, end)
    L, B, rho = 1.1, 0.6, 3.0
    names = ["L"] + (["B"] if end == "leaky" else []) + (["rho"] if origin == "soma" else [])
    values = [L] + ([B] if end == "leaky" else []) + ([rho] if origin == "soma" else [])
    kwargs = {"conductance_ratio": rho} if origin == "soma" else {}
    alpha = eigen.eigenvalues(L, {"sealed": 0.0, "killed": math.inf, "leaky": B}[end], 300,
                              origin="clamped" if origin == "clamp" else "sealed", **kwargs)
    alpha = alpha[alpha > 0]
    steady = to_numeric(d.steady_state, ["X", *names])
    coeff = to_numeric(d.coefficient, ["alpha", "X", *names])
    zero = to_numeric(d.zero_mode_coefficient, ["X", *names]) if d.zero_mode_coefficient is not None else None
    for T in (0.05, 0.6):
        for X in (0.0, 0.5, L):
            series = steady(X, *values) - np.sum(coeff(alpha, X, *values) * np.exp(-(1 + alpha**2) * T))
            if zero is not None:
                series -= zero(X, *values) * math.exp(-T)
            want = _invert(_laplace(origin, end), T, X, *values)
            assert series == pytest.approx(want, rel=1e-10, abs=1e-12)
