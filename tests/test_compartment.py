"""The sparse compartmental reference discretisation against exact cable results.

Check values are computed with mpmath [mpmath2023] from the formulas named beside each (keys of
docs/sources.md); the orders of accuracy are standard numerical analysis (three-point difference:
second order in Δx [CP]; backward Euler first and Crank–Nicolson second order in Δt, Crank &
Nicolson 1947 [CrankNicolson1947]).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cabletheory import compartment as cp
from cabletheory.cable import Cylinder, input_resistance
from cabletheory.errors import InputError

UM = 1e-6
MOHM = 1e6
# demo cable of docs/sources.md: Rm 20 000 Ω·cm², Ri 200 Ω·cm, Cm 1 µF/cm², d 2 µm, ℓ 500 µm (SI below)
RM, RI, CM = 2.0, 2.0, 0.01


def demo_cable(end: float = 0.0, length: float = 500 * UM) -> Cylinder:
    return Cylinder(RM, RI, CM, 2 * UM, length, end)


def observed_orders(errors: list[float]) -> np.ndarray:
    """log2 of successive error ratios for grids refined by 2."""
    e = np.abs(np.asarray(errors))
    return np.log2(e[:-1] / e[1:])


# ---------------------------------------------------------------------------------------------
# steady state
# ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("end_ratio", "expected_mohm"),
    [
        (0.0, 739.3466931),  # sealed, R∞ coth L (Rall 1959 [Rall1959]), computed
        (math.inf, 274.0830103),  # killed, R∞ tanh L, computed
        (0.5, 529.5528737),  # leaky B = 0.5, computed (Rall 1959 [Rall1959], 1977 [Rall1977] [MEM])
        (1.0, 450.1581581),  # B = 1 equals R∞ exactly, computed
    ],
)
def test_input_resistance_converges_at_second_order(end_ratio: float, expected_mohm: float) -> None:
    """R_in at node 0 tends to the closed form with error ∝ Δx² (computed values, Rall 1959 [Rall1959])."""
    r_inf = demo_cable().semi_infinite_input_resistance
    cylinder = demo_cable(end=end_ratio / r_inf)
    # the closed form in cable.py agrees with the vetted value first
    assert float(input_resistance(r_inf, cylinder.electrotonic_length, end_ratio)) == pytest.approx(
        expected_mohm * MOHM, rel=1e-9)
    errors = []
    for n in (5, 10, 20, 40):
        r = cp.node_input_resistance(cp.discretise_cable(cylinder, n))
        errors.append(r - expected_mohm * MOHM)
    orders = observed_orders(errors)
    assert orders == pytest.approx(2.0, abs=0.05)
    assert abs(errors[-1]) / (expected_mohm * MOHM) < 2e-4


def test_steady_profile_matches_sealed_attenuation() -> None:
    """V(L/2)/V(0), V(L)/V(0) of the sealed demo cable: 0.8433766820, 0.7932781817 (computed)."""
    cylinder = demo_cable()
    c = cp.discretise_cable(cylinder, 400)
    current = np.zeros(c.size)
    current[0] = 100e-12
    v = cp.steady_state(c, current)
    ratio = cp.sample(c, v, [250 * UM, 500 * UM]) / v[0]
    assert ratio == pytest.approx([0.8433766820, 0.7932781817], rel=1e-5)
    # V(0) = I R_in = 73.93466931 mV for 100 pA, computed
    assert v[0] == pytest.approx(73.93466931e-3, rel=1e-5)


def demo_tree(compartments: int, soma_area: float | None = None) -> cp.Compartments:
    """Three-order 3/2-rule demo tree of docs/sources.md (invented numbers)."""
    d0 = 4.0
    d1, d2 = d0 * 2 ** (-2 / 3), d0 * 4 ** (-2 / 3)
    parents = [-1, 0, 0, 1, 1, 2, 2]
    lengths = np.array([300, 300, 300, 200, 200, 200, 200]) * UM
    diameters = np.array([d0, d1, d1, d2, d2, d2, d2]) * UM
    return cp.discretise_tree(parents, lengths, diameters, RM, RI, CM, compartments, soma_area=soma_area)


def test_branched_tree_input_resistance_converges() -> None:
    """Root input resistance of the demo tree: 209.5027757 MΩ, computed (Rall 1959 [Rall1959] equiv. cylinder)."""
    errors = [cp.node_input_resistance(demo_tree(n)) - 209.5027757 * MOHM for n in (3, 6, 12, 24)]
    assert observed_orders(errors) == pytest.approx(2.0, abs=0.05)
    assert abs(errors[-1]) < 2e-4 * 209.5027757 * MOHM


def test_tree_with_soma_gives_rho_and_rn() -> None:
    """20-µm spherical soma: ρ = 7.596794008 and R_N = 185.1329030 MΩ, computed (Rall 1969 [Rall1969])."""
    soma_area = math.pi * (20 * UM) ** 2
    r_n = [cp.node_input_resistance(demo_tree(n, soma_area)) for n in (6, 12, 24)]
    assert observed_orders([r - 185.1329030 * MOHM for r in r_n]) == pytest.approx(2.0, abs=0.1)
    assert r_n[-1] == pytest.approx(185.1329030 * MOHM, rel=1e-4)
    g_s = soma_area / RM
    g_d = 1.0 / cp.node_input_resistance(demo_tree(24))
    assert g_d / g_s == pytest.approx(7.596794008, rel=1e-4)


def test_tip_input_resistance_and_reciprocity() -> None:
    """Input at one tip: R_tip = 403.0239523 MΩ, transfer tip→root 136.2391908 MΩ, computed."""
    c = demo_tree(40)
    tip = int(cp.branch_nodes(c, 3)[-1])
    assert cp.node_input_resistance(c, tip) == pytest.approx(403.0239523 * MOHM, rel=2e-4)
    unit_tip = np.zeros(c.size)
    unit_tip[tip] = 1.0
    unit_root = np.zeros(c.size)
    unit_root[0] = 1.0
    v = cp.steady_state(c, np.column_stack([unit_tip, unit_root]))
    assert v[0, 0] == pytest.approx(v[tip, 1], rel=1e-12)  # reciprocity (Rall & Rinzel 1973 [RallRinzel1973])
    assert v[0, 0] == pytest.approx(136.2391908 * MOHM, rel=2e-4)


# ---------------------------------------------------------------------------------------------
# time course: exact sealed-cable charging at X = 0, L = 1 (computed from Rall 1969's series [Rall1969])
# ---------------------------------------------------------------------------------------------
CHARGING_T = np.array([0.1, 0.5, 1.0])
CHARGING_L1 = np.array([0.2629635738, 0.5374585210, 0.7198225011])  # computed


def charging_error(compartments: int, steps_per_tau: int, scheme: str) -> np.ndarray:
    cylinder = demo_cable(length=demo_cable().length_constant)  # L = 1
    tau = cylinder.time_constant
    final = cylinder.semi_infinite_input_resistance / math.tanh(1.0)  # V(0,∞)/I = R∞ coth L
    c = cp.discretise_cable(cylinder, compartments)
    current = np.zeros(c.size)
    current[0] = 1.0
    v = cp.integrate(c, current, CHARGING_T * tau, scheme=scheme, step=tau / steps_per_tau)
    return v[:, 0] / final - CHARGING_L1


def test_backward_euler_is_first_order_in_time() -> None:
    """Backward Euler: error ∝ Δt (standard numerical analysis; Crank & Nicolson 1947 discuss both
    [CrankNicolson1947])."""
    errors = [charging_error(400, m, "backward-euler") for m in (20, 40, 80)]
    orders = np.log2(np.abs(errors[0] / errors[1])), np.log2(np.abs(errors[1] / errors[2]))
    assert np.all(np.abs(np.array(orders) - 1.0) < 0.06)


def test_crank_nicolson_is_second_order_in_time() -> None:
    """Crank–Nicolson: error ∝ Δt² [CrankNicolson1947]; backward-Euler start (Rannacher 1984 [Rannacher1984] [MEM])."""
    errors = [charging_error(1600, m, "crank-nicolson") for m in (40, 80, 160)]
    orders = np.log2(np.abs(errors[1] / errors[2]))
    assert np.all(np.abs(orders - 2.0) < 0.1)
    assert np.max(np.abs(errors[2])) < 2e-4


def test_time_course_is_second_order_in_space() -> None:
    """With a tiny Δt the remaining error falls as Δx² (three-point difference, [CP])."""
    errors = [charging_error(n, 2000, "crank-nicolson") for n in (10, 20, 40)]
    orders = np.log2(np.abs(errors[0] / errors[1])), np.log2(np.abs(errors[1] / errors[2]))
    assert np.all(np.abs(np.array(orders) - 2.0) < 0.05)


def test_voltage_clamp_relaxes_with_the_clamped_time_constant() -> None:
    """Clamp at X = 0, sealed far end, L = 1: slowest τ = 0.2884004391 τm, steady ratio 1/cosh L.

    Computed from Rall 1969 [Rall1969] (τ) and Rall 1959 [Rall1959] (1/cosh 1 = 0.6480542737).
    """
    cylinder = demo_cable(length=demo_cable().length_constant)
    tau = cylinder.time_constant
    c = cp.discretise_cable(cylinder, 200)
    times = np.array([1.0, 1.5, 6.0]) * tau
    v = cp.integrate(c, np.zeros(c.size), times, step=tau / 400, clamp=(0, 0.01))
    assert v[:, 0] == pytest.approx(0.01, rel=1e-12)
    far = v[:, -1]
    assert far[-1] / 0.01 == pytest.approx(0.6480542737, rel=1e-4)
    rate = np.log((far[-1] - far[0]) / (far[-1] - far[1])) / 0.5  # per τm
    assert rate == pytest.approx(3.467401100, rel=1e-3)


def test_callable_current_matches_constant_current() -> None:
    cylinder = demo_cable()
    c = cp.discretise_cable(cylinder, 20)
    current = np.zeros(c.size)
    current[0] = 1e-10
    times = np.linspace(0, 0.02, 5)
    a = cp.integrate(c, current, times, step=1e-4)
    b = cp.integrate(c, lambda t: current, times, step=1e-4)
    assert a == pytest.approx(b, rel=1e-12)
    assert np.all(a[0] == 0.0)  # rest at t = 0
    # long times reach the steady state
    late = cp.integrate(c, current, [1.0], step=1e-3, scheme="backward-euler")
    assert late[0] == pytest.approx(cp.steady_state(c, current), rel=1e-9)


# ---------------------------------------------------------------------------------------------
# conservation properties and input checks
# ---------------------------------------------------------------------------------------------
@settings(derandomize=True, deadline=None, max_examples=25)
@given(d=st.floats(0.2, 10), length=st.floats(10, 3000), n=st.integers(1, 60),
       end=st.floats(0, 5), soma=st.floats(0, 2000))
def test_membrane_totals_are_conserved(d: float, length: float, n: int, end: float, soma: float) -> None:
    """Σ capacitance = Cm × membrane area, and the row sums of G are the leaks to rest."""
    cylinder = Cylinder(RM, RI, CM, d * UM, length * UM, end * 1e-9)
    c = cp.discretise_cable(cylinder, n, soma_area=soma * UM**2)
    area = math.pi * d * UM * length * UM + soma * UM**2
    assert c.capacitance.sum() == pytest.approx(CM * area, rel=1e-12)
    assert c.conductance.sum() == pytest.approx(area / RM + end * 1e-9, rel=1e-9)
    assert abs(c.conductance - c.conductance.T).max() == 0.0
    assert c.distance[-1] == pytest.approx(length * UM, rel=1e-12)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"compartments": 0}, "compartments"),
        ({"compartments": 2.5}, "compartments"),
        ({"parents": [-1, 1]}, "parent"),
        ({"lengths": [1e-4, -1e-4]}, "lengths"),
        ({"end_conductances": [1e-9, 0.0]}, "children"),
        ({"soma_area": -1.0}, "soma_area"),
    ],
)
def test_bad_tree_input_is_rejected(kwargs: dict, message: str) -> None:
    args = {"parents": [-1, 0], "lengths": [1e-4, 1e-4], "diameters": [1e-6, 1e-6], "compartments": 4}
    args.update(kwargs)
    with pytest.raises(InputError, match=message):
        cp.discretise_tree(args.pop("parents"), args.pop("lengths"), args.pop("diameters"), RM, RI, CM,
                           args.pop("compartments"), **args)


def test_bad_integration_input_is_rejected() -> None:
    c = cp.discretise_cable(demo_cable(), 4)
    with pytest.raises(InputError, match="does not divide"):
        cp.integrate(c, np.zeros(c.size), [1.5e-3], step=1e-3)
    with pytest.raises(InputError, match="scheme"):
        cp.integrate(c, np.zeros(c.size), [1e-3], step=1e-3, scheme="forward-euler")
    with pytest.raises(InputError, match="semi-infinite"):
        cp.discretise_cable(demo_cable(length=math.inf), 4)


# ---------------------------------------------------------------------------------------------
# time course against the exact transients of cabletheory.transient (Rall 1969 [Rall1969] eigen-series,
# Hodgkin & Rushton 1946 [HodgkinRushton1946] images): the compartmental solution must converge to them
# ---------------------------------------------------------------------------------------------
def _transient_case(name: str):
    from cabletheory import transient as tr

    soma = 15 * UM
    cases = {
        # current step at an interior point of a sealed cable
        "sealed, step at 200 µm": (demo_cable(), tr.CurrentStep(1e-10, 200 * UM), None),
        "killed, step at 200 µm": (demo_cable(end=math.inf), tr.CurrentStep(1e-10, 200 * UM), None),
        "leaky 1 nS, step at 300 µm": (demo_cable(end=1e-9), tr.CurrentStep(1e-10, 300 * UM), None),
        "ball and stick, step at the soma": (tr.BallAndStick(demo_cable(), soma), tr.CurrentStep(1e-10, 0.0),
                                             math.pi * soma**2),
        "sealed, alpha at 100 µm": (demo_cable(), tr.AlphaCurrent(1e-10, 2e-3, 100 * UM), None),
    }
    return cases[name]


@pytest.mark.parametrize("name", ["sealed, step at 200 µm", "killed, step at 200 µm", "leaky 1 nS, step at 300 µm",
                                  "ball and stick, step at the soma", "sealed, alpha at 100 µm"])
def test_time_course_converges_to_the_exact_transient(name: str) -> None:
    """compartment.integrate → transient.charge as Δx halves, with error ∝ Δx² ([CP] three-point
    difference; exact values from the eigen-series / image sums of Rall 1969 [Rall1969] and Hodgkin &
    Rushton 1946 as coded in cabletheory.transient, truncation error < 1e-10 of the peak)."""
    from cabletheory import transient as tr

    model, stimulus, soma_area = _transient_case(name)
    cylinder = model.cylinder if isinstance(model, tr.BallAndStick) else model
    tau = cylinder.time_constant
    times = np.array([0.1, 0.3, 1.0]) * tau
    sites = np.array([0.0, 200.0, 500.0]) * UM
    exact = tr.charge(model, stimulus, times, sites)
    peak = float(np.max(np.abs(exact.voltage)))
    assert exact.error_bound < 1e-9 * peak
    errors = []
    for n in (5, 10, 20, 40):  # the stimulus site is a node of every grid
        c = cp.discretise_cable(cylinder, n, soma_area=soma_area)
        injected = np.zeros(c.size)
        injected[round(stimulus.position / cylinder.length * n)] = 1.0
        if isinstance(stimulus, tr.AlphaCurrent):
            a = stimulus.time_to_peak

            def current(t: float, a: float = a, injected: np.ndarray = injected) -> np.ndarray:
                return stimulus.peak * (t / a) * math.exp(1 - t / a) * injected

            v = cp.integrate(c, current, times, step=tau / 2000)
        else:
            v = cp.integrate(c, stimulus.amplitude * injected, times, step=tau / 2000)
        errors.append(float(np.max(np.abs(cp.sample(c, v, sites) - exact.voltage))) / peak)
    orders = observed_orders(errors)
    assert orders == pytest.approx(2.0, abs=0.1)
    assert errors[-1] < 3e-4  # 40 compartments: 0.5e-4 to 2.2e-4 of the peak
