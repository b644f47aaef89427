"""Time courses, frequency responses, delays and the cost of reduction of whole trees.

External checks, each named beside its test:

* the exact cylinder and ball-and-stick transients of cabletheory.transient (Rall 1969 [Rall1969];
  images after Hodgkin & Rushton 1946 [HodgkinRushton1946]) on trees that satisfy Rall's
  conditions (Rall 1959, 1964 [Rall1959] [Rall1964]), to 1e-9;
* mpmath [mpmath2023]: the same tree recursion at 30 digits inverted by mpmath's own Talbot routine
  (Talbot 1979 [Talbot1979]); every error estimate must hold against it;
* the package's compartmental solver (cabletheory.compartment, a finite-volume scheme with
  Crank-Nicolson; Crank & Nicolson 1947 [CrankNicolson1947]) refined four times: its error falls at
  second order towards the tree solution;
* centroid delays of Agmon-Snir & Segev 1993 [AgmonSnirSegev1993] [MEM]: τm for an isopotential
  cell, τm/2 at the input of a semi-infinite cable and τm/2 more per length constant along it, and
  mpmath's numerical derivative of the same transform;
* steady state equal to the tips-inward input resistance of cabletheory.tree (Rall 1959).
"""

from __future__ import annotations

import itertools
import math

import mpmath
import numpy as np
import pytest
from scipy.special import erf
from tree_fixtures import demo, outline_tree, stepped_cylinders, tapered_tree

from cabletheory import cable, case, compartment, transient
from cabletheory.contour import hyperbolic_contour, invert_windowed
from cabletheory.errors import InputError
from cabletheory.tree import analyse_tree, exact_input_conductances
from cabletheory.tree_laplace import PassiveTree, Site, root_site, site_at
from cabletheory.tree_modes import root_modes
from cabletheory.tree_precise import transfer_impedance_precise
from cabletheory.tree_time import (
    electrotonic_map,
    frequency_response,
    reduction_cost,
    reduction_modes,
    tree_response,
)

RM, RI, CM = 2.0, 2.0, 0.01  # τm = 20 ms
TAU = RM * CM
UM = 1e-6
NA = 1e-9


TIMES = np.concatenate(([0.0, -1e-3], np.geomspace(2e-5, 0.1, 17)))


# --------------------------------------------------------------------------------------
# the inversion itself
# --------------------------------------------------------------------------------------
def test_inversion_of_the_semi_infinite_cable():
    """1/(s√(1+s)) is erf(√T) (the semi-infinite cable's input, Hodgkin & Rushton 1946
    [HodgkinRushton1946]); the estimate holds from T = 1e-4 to 30."""
    t = np.geomspace(1e-4, 30, 40)
    result = invert_windowed(lambda s: (1 / (s * np.sqrt(1 + s)))[:, None], t, tolerance=1e-11, scale=1.0)
    actual = np.abs(result.values[:, 0] - erf(np.sqrt(t)))
    assert np.all(actual <= result.error_estimate[:, 0])
    assert result.error_estimate.max() <= 2e-11


def test_contour_nodes_cross_right_of_the_origin():
    """The hyperbola crosses the real axis at μ(1 − sin α) > 0, to the right of every singularity
    (Weideman & Trefethen 2007 [WeidemanTrefethen2007])."""
    c = hyperbolic_contour(1e-3, 8e-3, 20)
    assert c.nodes[0].imag == 0.0
    assert c.nodes[0].real > 0
    assert np.all(np.diff(c.nodes.imag) > 0)
    assert c.nodes[-1].real < 0


# --------------------------------------------------------------------------------------
# Rall's conditions: the tree equals its reduction (exact series of cabletheory.transient)
# --------------------------------------------------------------------------------------
STIMULI = [case.CurrentStep(0.1 * NA), case.CurrentPulse(0.1 * NA, 2e-3),
           case.AlphaCurrent(0.1 * NA, 0.5e-3)]


@pytest.mark.parametrize("stimulus", STIMULI, ids=["step", "pulse", "alpha"])
@pytest.mark.parametrize("tips", ["sealed", "killed"])
def test_conforming_tree_equals_its_equivalent_cylinder(stimulus, tips):
    """Rall (1959, 1964) [Rall1959] [Rall1964]: input at the root of the demo tree is input at the
    origin of its equivalent cylinder (d = 4 µm, L = 0.9954565254); the cylinder's exact series
    (cabletheory.transient, Rall 1969 [Rall1969]) agrees to 1e-9 of the reference voltage."""
    cell = PassiveTree(demo(), RM, RI, CM, tips=tips)
    mine = tree_response(cell, stimulus, TIMES, root_site(), [root_site()], tolerance=1e-11)
    eq = analyse_tree(cell.tree, RM, RI, CM, killed_tips=tips == "killed").equivalent_cylinder
    cyl = cable.Cylinder(RM, RI, CM, eq.diameter, eq.length, math.inf if tips == "killed" else 0.0)
    ref = transient.charge(cyl, stimulus, TIMES, [0.0], tolerance=1e-12)
    diff = np.abs(mine.voltage[:, 0] - ref.voltage[:, 0])
    assert diff.max() <= 1e-9 * mine.reference_voltage
    assert np.all(diff <= mine.errors[:, 0] + ref.error_bound)
    assert np.all(mine.voltage[TIMES <= 0] == 0.0)


@pytest.mark.parametrize("stimulus", STIMULI, ids=["step", "pulse", "alpha"])
def test_conforming_tree_with_soma_equals_the_ball_and_stick(stimulus):
    """The demo tree with a 20 µm soma (ρ = 7.596794008, docs/sources.md) is the ball and stick of
    cabletheory.transient (Rall 1969 [Rall1969]; Durand 1984 [Durand1984]) to 1e-9."""
    cell = PassiveTree(demo(soma=20.0), RM, RI, CM)
    mine = tree_response(cell, stimulus, TIMES, root_site(), [root_site()], tolerance=1e-11)
    bs = case.BallAndStick(cable.Cylinder(RM, RI, CM, 4e-6, 995.4565254e-6), 20e-6)
    ref = transient.charge(bs, stimulus, TIMES, [0.0], tolerance=1e-12)
    assert np.max(np.abs(mine.voltage[:, 0] - ref.voltage[:, 0])) <= 1e-9 * mine.reference_voltage


def test_clamp_at_the_root_equals_the_clamped_cylinder():
    """A voltage step at the root of the demo tree, recorded at a tip, is the clamped equivalent
    cylinder at its far end (Rall 1969 [Rall1969]; cabletheory.transient), soma or not."""
    cell = PassiveTree(demo(soma=20.0), RM, RI, CM)
    clamp = case.VoltageStep(0.01)
    mine = tree_response(cell, clamp, TIMES, root_site(), [site_at(cell.tree, "s6"), root_site()])
    cyl = cable.Cylinder(RM, RI, CM, 4e-6, 995.4565254e-6)
    ref = transient.charge(cyl, clamp, TIMES, [995.4565254e-6, 0.0], tolerance=1e-12)
    assert np.max(np.abs(mine.voltage - ref.voltage)) <= 1e-9 * 0.01
    assert mine.steady_state is not None
    assert mine.steady_state[0] == pytest.approx(0.01 / math.cosh(0.9954565254), rel=1e-9)


# --------------------------------------------------------------------------------------
# the error estimate holds against mpmath on an unreduced tree
# --------------------------------------------------------------------------------------
def _mp_reference(cell, stimulus, at, record, t):
    """The same recursion at 30 digits, inverted by mpmath.invertlaplace (Talbot) [mpmath2023]."""
    amp, shape = {
        case.CurrentStep: (lambda st: (st.amplitude, lambda s: 1 / s)),
        case.AlphaCurrent: (lambda st: (st.peak, lambda s: mpmath.e / (st.time_to_peak
                                                                           * (s + 1 / st.time_to_peak) ** 2))),
    }[type(stimulus)](stimulus)
    with mpmath.workdps(30):
        f = lambda s: transfer_impedance_precise(cell, s, at, record, digits=30) * shape(s)  # noqa: E731
        return float(amp * mpmath.invertlaplace(f, t, method="talbot"))


@pytest.mark.parametrize("stimulus", [STIMULI[0], STIMULI[2]], ids=["step", "alpha"])
@pytest.mark.parametrize(("at", "record"), [
    (Site(3, 240e-6), Site(-1)), (Site(3, 240e-6), Site(3, 240e-6)), (Site(1, 120e-6), Site(6, 200e-6)),
    (Site(-1), Site(5, 30e-6)),
])
def test_error_estimates_hold_against_mpmath(stimulus, at, record):
    """Unreduced tree (one granddaughter 20 % longer, a 20 µm soma, leaky tips): every value lies
    within its error estimate of the 30-digit reference, from 10 µs to 200 ms."""
    cell = PassiveTree(demo(240.0, soma=20.0), RM, RI, CM, tips=0.2 * NA)
    t = np.array([1e-5, 3e-4, 2e-3, 1.1e-2, 0.05, 0.2])
    mine = tree_response(cell, stimulus, t, at, [record], tolerance=1e-10)
    ref = np.array([_mp_reference(cell, stimulus, at, record, tt) for tt in t])
    actual = np.abs(mine.voltage[:, 0] - ref)
    assert np.all(actual <= mine.errors[:, 0]), (actual, mine.errors[:, 0])
    assert mine.error_bound <= 1e-10 * mine.reference_voltage


@pytest.mark.parametrize("stimulus", [case.CurrentStep(0.1 * NA), case.AlphaCurrent(0.1 * NA, 0.05e-3)],
                         ids=["step", "fast alpha"])
def test_error_estimates_hold_at_the_edges(stimulus):
    """Killed tips, times from 10 ns to 100 τm, the loosest and tightest tolerances: the estimate
    still holds against the 30-digit reference [mpmath2023], and stays within the tolerance.
    (The reference does not depend on the tolerance: it is computed once for both.)"""
    cell = PassiveTree(demo(240.0, soma=20.0), RM, RI, CM, tips="killed")
    t = np.array([1e-8, 1e-6, 2.0])
    at, record = Site(3, 120e-6), Site(3, 120e-6)
    ref = np.array([_mp_reference(cell, stimulus, at, record, tt) for tt in t])
    for tolerance in (1e-6, 1e-13):
        mine = tree_response(cell, stimulus, t, at, [record], tolerance=tolerance)
        assert np.all(np.abs(mine.voltage[:, 0] - ref) <= mine.errors[:, 0]), tolerance
        assert mine.error_bound <= tolerance * mine.reference_voltage, tolerance


@pytest.mark.parametrize("time_to_peak", [1e-3, 20e-3, 60e-3], ids=["1 ms", "tau", "3 tau"])
@pytest.mark.parametrize("length", [300e-6, 1000e-6])
def test_alpha_current_with_a_long_time_to_peak_on_a_cylinder(time_to_peak, length):
    """A one-piece tree (a sealed cylinder, 2 µm, τm = 20 ms) driven at its origin by an alpha
    current whose double pole meets a decay rate of the cylinder: at 1 ms on the 1000 µm cylinder
    (rate 1036/s beside 1000/s) and at τm, where it is a triple pole. Every value is within its
    estimate of the cylinder's exact series (Rall 1969 [Rall1969]; cabletheory.transient) and of
    the 30-digit recursion inverted by mpmath's Talbot routine [mpmath2023] [Talbot1979]; the
    estimate meets the tolerance, 1e-6 and 1e-10 (the two references are computed once for both)."""
    cell = PassiveTree(outline_tree([-1], [length], [2 * UM]), RM, RI, CM)
    alpha = case.AlphaCurrent(0.1 * NA, time_to_peak)
    far = Site(0, length)
    t = np.geomspace(1e-5, 1.0, 40)
    cyl = cable.Cylinder(RM, RI, CM, 2 * UM, length, 0.0)
    series = transient.charge(cyl, alpha, t, [0.0, length], tolerance=1e-13)
    picked = [0, 15, 22, 30]  # 10 µs, 0.8 ms, 3.6 ms, 20 ms
    ref = np.array([_mp_reference(cell, alpha, root_site(), root_site(), t[i]) for i in picked])
    for tolerance in (1e-6, 1e-10):
        mine = tree_response(cell, alpha, t, root_site(), [root_site(), far], tolerance=tolerance)
        assert np.all(np.abs(mine.voltage - series.voltage) <= mine.errors + series.error_bound), tolerance
        assert np.all(np.abs(mine.voltage[picked, 0] - ref) <= mine.errors[picked, 0]), tolerance
        assert mine.error_bound <= tolerance * mine.reference_voltage, tolerance
        assert mine.notes == (), tolerance


@pytest.mark.parametrize("time_to_peak", [8e-3, 20e-3, 60e-3])
@pytest.mark.parametrize(("at", "record"), [(Site(3, 240e-6), Site(-1)), (Site(-1), Site(5, 30e-6))])
def test_alpha_current_with_a_long_time_to_peak_on_a_tree(time_to_peak, at, record):
    """The unreduced demo tree with a soma and leaky tips, alpha currents with times to peak from
    8 ms to 3 τm (the double pole near the tree's slowest decay rates): within the estimate of the
    30-digit recursion inverted by mpmath's Talbot routine [mpmath2023] [Talbot1979], which meets
    the tolerance."""
    cell = PassiveTree(demo(240.0, soma=20.0), RM, RI, CM, tips=0.2 * NA)
    alpha = case.AlphaCurrent(0.1 * NA, time_to_peak)
    t = np.array([1e-5, 3e-4, 2e-3, 1.1e-2, 0.05, 0.2])
    mine = tree_response(cell, alpha, t, at, [record], tolerance=1e-10)
    ref = np.array([_mp_reference(cell, alpha, at, record, tt) for tt in t])
    assert np.all(np.abs(mine.voltage[:, 0] - ref) <= mine.errors[:, 0])
    assert mine.error_bound <= 1e-10 * mine.reference_voltage


def test_late_times_agree_with_the_slowest_modes():
    """Two independent routes on an unreduced tree: after 10 ms the inverted step response at the
    soma equals V∞(1 − Σ C_n e^{−t/τ_n}) over the six slowest modes seen there (Rall 1969
    [Rall1969]; residues counted by bisection), within the inversion's own error estimate."""
    cell = PassiveTree(demo(240.0, soma=20.0), RM, RI, CM)
    modes = root_modes(cell, 6)
    t = np.array([0.01, 0.02, 0.05, 0.1])
    r = tree_response(cell, case.CurrentStep(0.1 * NA), t, root_site(), [root_site()])
    assert r.steady_state is not None
    v_inf = r.steady_state[0]
    series = v_inf * (1 - (modes.coefficients * np.exp(-t[:, None] / modes.time_constants)).sum(axis=1))
    assert np.all(np.abs(r.voltage[:, 0] - series) <= r.errors[:, 0])
    assert np.all(np.diff(modes.time_constants) < 0)


def test_steady_state_is_the_exact_input_resistance():
    """A long step at a tip of an unreduced tree settles to I·R_in at that tip; at the root the
    final voltage is I times the tips-inward input resistance (Rall 1959 [Rall1959])."""
    tree = demo(240.0, soma=20.0)
    cell = PassiveTree(tree, RM, RI, CM)
    step = case.CurrentStep(0.1 * NA)
    root = tree_response(cell, step, [40 * TAU], root_site(), [root_site()])
    _, g_dend = exact_input_conductances(tree, RM, RI)
    r_in = 1.0 / (g_dend + tree.soma_area / RM)
    assert root.steady_state is not None
    assert root.steady_state[0] == pytest.approx(0.1 * NA * r_in, rel=1e-12)
    assert root.voltage[0, 0] == pytest.approx(0.1 * NA * r_in, rel=1e-10)


# --------------------------------------------------------------------------------------
# the package's compartmental solver converges to it
# --------------------------------------------------------------------------------------
def test_compartmental_solution_converges_to_the_tree_solution():
    """cabletheory.compartment (vertex-centred, Crank-Nicolson) with 4, 8, 16, 32 compartments per
    branch and the time step halved with them: the error at the root and at the stimulated tip
    falls by about 4 per refinement (second order, Crank & Nicolson 1947 [CrankNicolson1947])."""
    tree = demo(240.0, soma=20.0)
    cell = PassiveTree(tree, RM, RI, CM)
    times = np.array([1e-3, 4e-3, 1.2e-2])
    tip = site_at(tree, "s3")
    exact = tree_response(cell, case.CurrentStep(0.1 * NA), times, tip, [root_site(), tip]).voltage
    errors = []
    for n in (4, 8, 16, 32):
        c = compartment.discretise_tree(tree.parents, tree.lengths, tree.distal_diameters, RM, RI, CM, n,
                                        soma_area=tree.soma_area)
        tip_node = int(compartment.branch_nodes(c, 3)[-1])
        current = np.zeros(c.size)
        current[tip_node] = 0.1 * NA
        v = compartment.integrate(c, current, times, step=1e-3 / (2 * n))
        errors.append(np.max(np.abs(v[:, [0, tip_node]] - exact)))
    ratios = [a / b for a, b in itertools.pairwise(errors)]
    assert all(3.5 < r < 4.5 for r in ratios), (errors, ratios)


# --------------------------------------------------------------------------------------
# frequency responses, attenuation, delays
# --------------------------------------------------------------------------------------
def test_frequency_response_of_the_demo_tree():
    """|Z_root(100 Hz)| = 44.86760779 MΩ, arg −42.09059783° (docs/sources.md, computed; Rall &
    Rinzel 1973 [RallRinzel1973]); the phase lags and |Z| falls with frequency."""
    cell = PassiveTree(demo(), RM, RI, CM)
    fr = frequency_response(cell, [0.0, 10.0, 100.0, 1000.0], None, [root_site()])
    assert fr.magnitude[2, 0] == pytest.approx(44.86760779e6, rel=1e-9)
    assert math.degrees(fr.phase[2, 0]) == pytest.approx(-42.09059783, rel=1e-9)
    assert np.all(np.diff(fr.magnitude[:, 0]) < 0)
    assert fr.phase[0, 0] == 0.0
    assert np.all(fr.phase[1:, 0] < 0)


def test_attenuation_over_the_demo_tree():
    """Input at one tip: V_root/V_tip = 0.3380424167 (docs/sources.md, computed); input at the root
    of a conforming tree: V_tip/V_root = 1/cosh L = 0.6502977841 (Rall 1959 [Rall1959])."""
    cell = PassiveTree(demo(), RM, RI, CM)
    m = electrotonic_map(cell)
    tips = [i + 1 for i in (3, 4, 5, 6)]
    np.testing.assert_allclose(m.attenuation_to_root[tips], 1 / 0.3380424167, rtol=1e-9)
    np.testing.assert_allclose(m.attenuation_from_root[tips], 1 / 0.6502977841, rtol=1e-9)
    assert m.attenuation_to_root[0] == 1.0
    assert np.all(m.attenuation_to_root[tips] > m.attenuation_from_root[tips])


def test_centroid_delay_of_an_isopotential_cell_is_tau():
    """Agmon-Snir & Segev 1993 [AgmonSnirSegev1993] [MEM]: the local delay of an isopotential cell
    is τm (Z = R/(1 + sτm), −Z'/Z = τm at s = 0). A soma with a 0.1 µm stub is isopotential to 1e-9.
    From the stub's tip the delay to the soma is the share of the stub's axial resistance R_a in
    R_a + R_S (an instantaneous resistor in series with the soma's RC; to first order in the stub)."""
    tree = outline_tree([-1], [0.1e-6], [1e-6], soma_diameter=20e-6)
    m = electrotonic_map(PassiveTree(tree, RM, RI, CM))
    assert m.local_delay[0] == pytest.approx(TAU, rel=1e-9)
    r_axial = 4 * RI * 0.1e-6 / (math.pi * 1e-12)
    r_soma = RM / (math.pi * 20e-6**2)
    assert m.delay_to_root[1] == pytest.approx(TAU * r_axial / (r_axial + r_soma), rel=1e-3)


def test_centroid_delays_along_a_long_cable():
    """Agmon-Snir & Segev 1993 [AgmonSnirSegev1993] [MEM]: at the input of a semi-infinite cable the
    local delay is τm/2, and the transfer delay to X is τm(1 + X)/2, so the propagation delay is
    Xτm/2 (centroid speed 2λ/τm); from Z = R∞e^{−qX}/q. A sealed cylinder of L = 40 is semi-infinite
    to e^{−80}. Checked also against mpmath's numerical derivative of the 30-digit transform."""
    d = 1e-6
    lam = float(cable.length_constant(RM, RI, d))
    n = 8
    tree = outline_tree([-1, *range(n - 1)], [5 * lam] * n, [d] * n)
    cell = PassiveTree(tree, RM, RI, CM)
    m = electrotonic_map(cell)
    assert m.local_delay[0] == pytest.approx(TAU / 2, rel=1e-10)
    x = np.arange(1, 4) * 5.0
    np.testing.assert_allclose(m.transfer_delay[1:4], TAU * (1 + x) / 2, rtol=1e-10)
    np.testing.assert_allclose(m.delay_from_root[1:4], TAU * x / 2, rtol=1e-10)
    with mpmath.workdps(40):  # central difference, step 1e-12 /s (the recursion at 40 digits)
        z = lambda s: transfer_impedance_precise(cell, s, root_site(), Site(1, 5 * lam), digits=40)  # noqa: E731
        want = float((-mpmath.diff(z, 0, h=mpmath.mpf("1e-12")) / z(0)).real)
    assert m.transfer_delay[2] == pytest.approx(want, rel=1e-10)


# --------------------------------------------------------------------------------------
# the cost of reduction
# --------------------------------------------------------------------------------------
def test_reduction_costs_nothing_on_a_conforming_tree():
    """Rall (1959, 1969) [Rall1959] [Rall1969]: the demo tree with soma and its soma-plus-cylinder
    agree in time; τ0, τ1, C1/C0 agree; peeling returns L = 0.9954565254, ρ = 7.596794008."""
    cell = PassiveTree(demo(soma=20.0), RM, RI, CM)
    cost = reduction_cost(cell, case.CurrentStep(0.1 * NA), np.geomspace(1e-5, 0.1, 30))
    assert cost.largest_difference <= 1e-9 * float(np.max(np.abs(cost.tree_voltage)))
    np.testing.assert_allclose(cost.tree_modes.time_constants, cost.reduced_time_constants, rtol=1e-10)
    np.testing.assert_allclose(cost.tree_modes.coefficients, cost.reduced_coefficients, rtol=1e-7)
    assert cost.electrotonic_length == pytest.approx(0.9954565254, rel=1e-9)
    (length, rho), = cost.peeled_ball_and_stick
    assert length == pytest.approx(0.9954565254, rel=1e-7)
    assert rho == pytest.approx(7.596794008, rel=1e-6)


@pytest.mark.parametrize(("tree", "conforming"), [(demo(soma=20.0), True), (demo(400.0, soma=20.0), False),
                                                  (demo(400.0), False)], ids=["conforming", "unreduced", "no soma"])
def test_reduction_modes_are_those_of_the_cost_of_reduction(tree, conforming):
    """The modes alone (no time courses) give what the cost of reduction gives; on the conforming tree
    they are Rall's (1959, 1969) [Rall1959] [Rall1969]: the tree's τ0, τ1, C0, C1 are the reduction's and
    peeling returns L = 0.9954565254, ρ = 7.596794008 (as in the test above)."""
    cell = PassiveTree(tree, RM, RI, CM)
    modes = reduction_modes(cell)
    cost = reduction_cost(cell, case.CurrentStep(0.1 * NA), [0.01])
    for name in ("reduced_model", "electrotonic_length", "conductance_ratio", "peeled_length",
                 "peeled_ball_and_stick", "notes"):
        assert getattr(modes, name) == getattr(cost, name), name
    for name in ("reduced_time_constants", "reduced_coefficients"):
        np.testing.assert_array_equal(getattr(modes, name), getattr(cost, name))
    np.testing.assert_array_equal(modes.tree_modes.time_constants, cost.tree_modes.time_constants)
    assert (not modes.notes) == conforming
    if conforming:
        np.testing.assert_allclose(modes.tree_modes.time_constants, modes.reduced_time_constants, rtol=1e-10)
        np.testing.assert_allclose(modes.tree_modes.coefficients, modes.reduced_coefficients, rtol=1e-7)
        (length, rho), = modes.peeled_ball_and_stick
        assert length == pytest.approx(0.9954565254, rel=1e-7)
        assert rho == pytest.approx(7.596794008, rel=1e-6)


def test_leaky_tips_reduce_to_a_leaky_cylinder():
    """Rall (1959) [Rall1959]: equal tips with the same end conductance (the same B at every tip)
    reduce to the equivalent cylinder whose far end leaks what the tips leak together; the tips may
    come from the tree itself (Tree.ends) or from the cell."""
    from dataclasses import replace

    tree = demo(soma=20.0)
    ends = np.where(np.arange(len(tree)) >= 3, 0.05 * NA, 0.0)
    own = PassiveTree(replace(tree, ends=ends), RM, RI, CM)
    given = PassiveTree(tree, RM, RI, CM, tips=0.05 * NA)
    np.testing.assert_array_equal(own.tip_conductances(), given.tip_conductances())
    cost = reduction_cost(own, case.CurrentStep(0.1 * NA), np.geomspace(1e-5, 0.1, 20))
    assert cost.largest_difference <= 1e-9 * float(np.max(np.abs(cost.tree_voltage)))
    assert cost.tree_voltage[-1] < reduction_cost(PassiveTree(tree, RM, RI, CM), case.CurrentStep(0.1 * NA),
                                                  [0.1]).tree_voltage[-1]


def test_reduction_cost_of_an_unreduced_tree():
    """One granddaughter twice as long: the reduction misses; the largest difference is where the
    two curves are farthest apart and the tree's τ0 stays τm (uniform membrane, sealed tips)."""
    cell = PassiveTree(demo(400.0, soma=20.0), RM, RI, CM)
    times = np.geomspace(1e-5, 0.1, 60)
    cost = reduction_cost(cell, case.AlphaCurrent(0.1 * NA, 1e-3), times)
    gap = np.abs(cost.reduced_voltage - cost.tree_voltage)
    assert cost.largest_difference == gap.max() > 1e-3 * np.max(cost.tree_voltage)
    assert cost.when == times[np.argmax(gap)]
    assert cost.tree_modes.time_constants[0] == pytest.approx(TAU, rel=1e-12)
    assert cost.tree_modes.time_constants[1] != pytest.approx(cost.reduced_time_constants[1], rel=1e-3)
    assert any("does not meet" in n for n in cost.notes)


def test_time_course_refusals():
    cell = PassiveTree(demo(), RM, RI, CM, tips="killed")
    with pytest.raises(InputError, match="killed tip"):
        tree_response(cell, case.CurrentStep(NA), [1e-3], site_at(cell.tree, "s6"), [root_site()])
    with pytest.raises(InputError, match="root"):
        tree_response(cell, case.VoltageStep(0.01), [1e-3], Site(2, 10e-6), [root_site()])
    with pytest.raises(InputError, match="tolerance"):
        tree_response(cell, case.CurrentStep(NA), [1e-3], root_site(), [root_site()], tolerance=0.5)
    with pytest.raises(InputError, match="position"):
        tree_response(cell, case.CurrentStep(NA, position=1e-6), [1e-3], root_site(), [root_site()])


# --------------------------------------------------------------------------------------
# input at one branch of a symmetric tree (Rall & Rinzel 1973; Rinzel & Rall 1974)
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize("stimulus", [STIMULI[0], STIMULI[2]], ids=["step", "alpha"])
def test_input_at_one_tip_reaches_the_soma_as_on_the_equivalent_cylinder(stimulus):
    """Rinzel & Rall 1974 [RinzelRall1974] [MEM]: in a symmetric tree that satisfies Rall's
    conditions, current into one tip is the symmetric share (the same current spread over all tips,
    i.e. the equivalent cylinder fed at X = L) plus parts that cancel at every branch point on the
    way to the soma; so the soma's voltage is that of the equivalent cylinder (cabletheory.transient)
    at X = 0 with the current at its far end, at all times."""
    cell = PassiveTree(demo(soma=20.0), RM, RI, CM)
    mine = tree_response(cell, stimulus, TIMES, site_at(cell.tree, "s5"), [root_site()], tolerance=1e-11)
    far = 995.4565254e-6
    bs = case.BallAndStick(cable.Cylinder(RM, RI, CM, 4e-6, far), 20e-6)
    moved = (case.CurrentStep(stimulus.amplitude, far) if isinstance(stimulus, case.CurrentStep)
             else case.AlphaCurrent(stimulus.peak, stimulus.time_to_peak, far))
    ref = transient.charge(bs, moved, TIMES, [0.0], tolerance=1e-12)
    assert np.max(np.abs(mine.voltage[:, 0] - ref.voltage[:, 0])) <= 1e-9 * mine.reference_voltage


# --------------------------------------------------------------------------------------
# the bundled unreduced cell
# --------------------------------------------------------------------------------------
def test_bundled_cell_slowest_mode_and_convergence():
    """The invented PV-7 interneuron (1,338 cylinders, outline soma, far from Rall's conditions):
    with a uniform membrane and sealed tips the slowest mode is isopotential, τ0 = τm (Rall 1969
    [Rall1969]); and the package's compartmental solve, refined with 1, 2, 4 compartments per
    cylinder and the time step halved with them, approaches the exact time course at second order
    (Crank & Nicolson 1947 [CrankNicolson1947])."""
    from pathlib import Path

    from cabletheory.morphology import read_swc
    from cabletheory.tree import build_tree

    data = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"
    tree = build_tree(read_swc(data / "lumenia_pv7_interneuron.swc"))
    cell = PassiveTree(tree, RM, RI, CM)
    modes = root_modes(cell, 2)
    assert modes.time_constants[0] == pytest.approx(TAU, rel=1e-12)
    assert modes.time_constants[1] < TAU
    tip = int(np.flatnonzero(np.bincount(tree.parents[tree.parents >= 0], minlength=len(tree)) == 0)[7])
    times = np.array([0.5e-3, 2e-3, 8e-3])
    step = case.CurrentStep(10e-12)
    exact = tree_response(cell, step, times, Site(tip, float(tree.lengths[tip])), [root_site()]).voltage[:, 0]
    errors = []
    for n in (1, 2, 4):
        c = compartment.discretise_tree(tree.parents, np.maximum(tree.lengths, 1e-12), tree.distal_diameters,
                                        RM, RI, CM, n, soma_area=tree.soma_area)
        current = np.zeros(c.size)
        current[int(compartment.branch_nodes(c, tip)[-1])] = step.amplitude
        errors.append(np.max(np.abs(compartment.integrate(c, current, times, step=0.125e-3 / n)[:, 0] - exact)))
    ratios = [a / b for a, b in itertools.pairwise(errors)]
    assert all(3.3 < r < 4.7 for r in ratios), (errors, ratios)


def test_the_documented_example_prints_what_the_page_says():
    """docs/tree-time.md shows real output: run its code block and compare line by line."""
    import contextlib
    import io
    import os
    import re
    from pathlib import Path

    root = Path(__file__).resolve().parent.parent
    page = (root / "docs" / "tree-time.md").read_text(encoding="utf-8")
    code = re.search(r"```python\n(.*?)```", page, re.S).group(1)
    printed = re.search(r"prints\n\n```\n(.*?)```", page, re.S).group(1)
    out = io.StringIO()
    here = os.getcwd()
    try:
        os.chdir(root)
        with contextlib.redirect_stdout(out):
            exec(compile(code, "docs/tree-time.md", "exec"), {})
    finally:
        os.chdir(here)
    assert out.getvalue().splitlines() == printed.splitlines()


# --------------------------------------------------------------------------------------
# frusta
# --------------------------------------------------------------------------------------
def test_tapered_time_course_is_the_limit_of_cylinder_chains():
    """The time course of a tree of frusta (narrowing and widening) at a tip and at the soma: chains
    of k cylinders with midpoint diameters converge to it at second order in 1/k (the stepped
    cable, common practice [CP]); the delays of the electrotonic map agree with mpmath's
    derivative of the 40-digit Bessel recursion [mpmath2023]."""
    tree = tapered_tree()
    cell = PassiveTree(tree, RM, RI, CM)
    times = np.array([2e-4, 1e-3, 5e-3, 2e-2])
    alpha = case.AlphaCurrent(0.05 * NA, 0.3e-3)
    exact = tree_response(cell, alpha, times, Site(3, 400e-6), [Site(3, 400e-6), root_site()]).voltage
    errors = []
    for k in (16, 32, 64):
        stepped, last = stepped_cylinders(tree, k, 15e-6)
        chain = PassiveTree(stepped, RM, RI, CM)
        tip = Site(len(stepped) - 1, last)
        v = tree_response(chain, alpha, times, tip, [tip, root_site()]).voltage
        errors.append(np.max(np.abs(v - exact)))
    ratios = [a / b for a, b in itertools.pairwise(errors)]
    assert all(3.5 < r < 4.5 for r in ratios), (errors, ratios)
    m = electrotonic_map(cell)
    with mpmath.workdps(40):  # central difference, step 1e-12 /s
        z = lambda s: transfer_impedance_precise(cell, s, root_site(), Site(3, 400e-6), digits=40)  # noqa: E731
        want = float((-mpmath.diff(z, 0, h=mpmath.mpf("1e-12")) / z(0)).real)
    assert m.transfer_delay[4] == pytest.approx(want, rel=1e-9)
    cost = reduction_cost(cell, case.CurrentStep(0.1 * NA), np.geomspace(1e-4, 0.1, 12))
    assert cost.tree_modes.time_constants[0] == pytest.approx(TAU, rel=1e-12)  # uniform membrane, sealed tips
    assert cost.largest_difference > 0
