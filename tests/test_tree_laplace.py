"""The Laplace-domain solution of whole trees against outside references.

* Rall (1959) [Rall1959] and the tips-inward steady state of cabletheory.tree (an independent,
  existing code path): the input resistance at s = 0 of any tree, conforming or not.
* The demo tree of docs/sources.md (computed values; Rall & Rinzel 1973 [RallRinzel1973] for input
  at one tip): the root's impedance at 100 Hz, a tip's input resistance, the transfer resistance
  tip → root.
* The closed forms of one cylinder (cabletheory.cable, Rall 1959 [Rall1959]) at complex s.
* mpmath [mpmath2023]: the same recursion at 40 digits (no scaled forms).
* Rall (1969) [Rall1969]: the time constants τ_n = τm/(1 + (nπ/L)²) of a sealed cylinder and, for a
  tree that satisfies Rall's conditions with a soma, the ball-and-stick time constants of
  docs/sources.md (computed) and the coefficients of cabletheory.transient.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from tree_fixtures import demo, outline_tree, stepped_cylinders, tapered_tree

from cabletheory import cable, case, transient
from cabletheory.errors import InputError
from cabletheory.morphology import read_swc
from cabletheory.tree import Tree, build_tree, exact_input_conductances
from cabletheory.tree_laplace import (
    PassiveTree,
    Site,
    input_impedance,
    root_site,
    site_at,
    site_on_branch,
    sites_along,
    transfer_impedance,
)
from cabletheory.tree_modes import eigenvalue_count, root_modes
from cabletheory.tree_precise import transfer_impedance_precise

RM, RI, CM = 2.0, 2.0, 0.01  # 20 kΩ·cm², 200 Ω·cm, 1 µF/cm² (τm = 20 ms)
TAU = RM * CM
UM = 1e-6
MOHM = 1e6
DATA = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"


def pv7() -> Tree:
    return build_tree(read_swc(DATA / "lumenia_pv7_interneuron.swc"))


# --------------------------------------------------------------------------------------
# steady state and the vetted demo-tree values
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize("tips", ["sealed", "killed", 0.3e-9])
@pytest.mark.parametrize("make", [demo, lambda: demo(240.0, soma=20.0), pv7])
def test_steady_state_is_the_exact_tree_input_resistance(make, tips):
    """At s = 0 the root's input impedance is the tips-inward input resistance of cabletheory.tree
    (Rall 1959 [Rall1959]); a leaky tip is the cylinder's B = G_end/G∞ rule at each tip."""
    tree = make()
    cell = PassiveTree(tree, RM, RI, CM, tips=tips)
    z = input_impedance(cell, [0.0], [root_site()])[0, 0]
    if isinstance(tips, str):
        _, g_dend = exact_input_conductances(tree, RM, RI, killed_tips=tips == "killed")
    else:  # a leaky tip: add a zero-length-free check by hand, piece by piece from the tips
        g_dend = _leaky_root_conductance(tree, tips)
    g_soma = 0.0 if tree.soma_area is None else tree.soma_area / RM
    assert z.imag == 0.0
    assert z.real == pytest.approx(1.0 / (g_dend + g_soma), rel=1e-12)


def _leaky_root_conductance(tree: Tree, g_tip: float) -> float:
    """Tips inward with cable.input_conductance (Rall 1959) and B = G_load/G∞ at every piece."""
    n = len(tree)
    load = np.zeros(n)
    has_child = np.zeros(n, dtype=bool)
    has_child[tree.parents[tree.parents >= 0]] = True
    load[~has_child] = g_tip
    root = 0.0
    for i in range(n - 1, -1, -1):
        if tree.lengths[i] == 0:
            g = load[i]
        else:
            g_inf = float(cable.semi_infinite_input_conductance(RM, RI, tree.distal_diameters[i]))
            big_l = tree.lengths[i] / float(cable.length_constant(RM, RI, tree.distal_diameters[i]))
            g = float(cable.input_conductance(g_inf, big_l, load[i] / g_inf))
        if tree.parents[i] >= 0:
            load[tree.parents[i]] += g
        else:
            root += g
    return root


def test_demo_tree_values():
    """Demo tree of docs/sources.md (computed): |Z_root(100 Hz)| = 44.86760779 MΩ, arg −42.09059783°;
    input at a tip: R_tip = 403.0239523 MΩ and transfer tip → root 136.2391908 MΩ both ways
    (reciprocity; Rall & Rinzel 1973 [RallRinzel1973] for input at one branch)."""
    cell = PassiveTree(demo(), RM, RI, CM)
    z = input_impedance(cell, [2j * math.pi * 100.0], [root_site()])[0, 0]
    assert abs(z) == pytest.approx(44.86760779 * MOHM, rel=1e-9)
    assert math.degrees(np.angle(z)) == pytest.approx(-42.09059783, rel=1e-9)
    tip = site_at(cell.tree, "s3")
    assert input_impedance(cell, [0.0], [tip])[0, 0].real == pytest.approx(403.0239523 * MOHM, rel=1e-9)
    forward = transfer_impedance(cell, [0.0], tip, [root_site()])[0, 0].real
    backward = transfer_impedance(cell, [0.0], root_site(), [tip])[0, 0].real
    assert forward == pytest.approx(136.2391908 * MOHM, rel=1e-9)
    assert backward == pytest.approx(forward, rel=1e-13)


@pytest.mark.parametrize("end", [0.0, math.inf, 0.5e-9])
@pytest.mark.parametrize("s_tau", [0.0, 3j, 40 + 700j, -0.5 + 0.2j, 1e5j])
def test_one_cylinder_matches_the_closed_forms(end, s_tau):
    r"""A one-piece tree is the cylinder of cabletheory.cable: input impedance and transfer impedance
    to the far end at s = iω, with q = √(1 + sτ) (Rall 1959 [Rall1959]; the closed forms take a
    frequency, so s = iω there and any complex s through q for the input impedance)."""
    d, ell = 1.2e-6, 450e-6
    tree = outline_tree([-1], [ell], [d])
    cell = PassiveTree(tree, RM, RI, CM, tips=end)
    s = s_tau / TAU
    r_inf = float(cable.semi_infinite_input_resistance(RM, RI, d))
    big_l = ell / float(cable.length_constant(RM, RI, d))
    q = np.sqrt(1 + s_tau)
    b = end * r_inf
    tq = np.tanh(q * big_l)
    want = r_inf / q * tq if math.isinf(b) else r_inf / q * (1 + b / q * tq) / (tq + b / q)
    got = input_impedance(cell, [s], [root_site()])[0, 0]
    assert got == pytest.approx(complex(want), rel=1e-12)
    if np.real(s_tau) == 0:
        f = np.imag(s) / (2 * math.pi)
        far = transfer_impedance(cell, [s], root_site(), [Site(0, ell)])[0, 0]
        expected = complex(cable.transfer_impedance(r_inf, big_l, end * r_inf, f, TAU, big_l))
        assert far == pytest.approx(expected, rel=1e-10, abs=1e-12 * r_inf)


@pytest.mark.parametrize("s_tau", [0.2 + 0.1j, 25 - 60j, -3 + 40j, 3e4 + 1e4j, -0.999 + 1e-3j])
@pytest.mark.parametrize(("source", "record"), [
    (None, Site(3, 120e-6)), (Site(6, 200e-6), Site(3, 50e-6)), (root_site(), Site(5, 10e-6)),
    (Site(1, 150e-6), root_site()),
])
def test_agrees_with_the_same_recursion_in_mpmath(s_tau, source, record):
    """The scaled numpy forms against mpmath at 40 digits [mpmath2023], on an unreduced tree with a soma."""
    cell = PassiveTree(demo(240.0, soma=20.0), RM, RI, CM, tips=0.2e-9)
    s = s_tau / TAU
    fast = transfer_impedance(cell, [s], source, [record])[0, 0]
    slow = complex(transfer_impedance_precise(cell, s, source, record, digits=40))
    assert fast == pytest.approx(slow, rel=1e-12, abs=1e-300)


def tree_strategy():
    """Random small trees: parents before children, lengths 5-400 µm, diameters 0.3-5 µm."""
    return st.integers(1, 9).flatmap(lambda n: st.tuples(
        st.tuples(*[st.integers(-1, i - 1) for i in range(n)]),
        st.lists(st.floats(5, 400), min_size=n, max_size=n),
        st.lists(st.floats(0.3, 5), min_size=n, max_size=n),
        st.one_of(st.none(), st.floats(5, 30))))


@settings(derandomize=True, max_examples=60, deadline=None)
@given(tree_strategy(), st.floats(0.01, 0.99), st.floats(0.01, 0.99), st.complex_numbers(max_magnitude=300),
       st.sampled_from(["sealed", "killed", 1e-9]))
def test_reciprocity(spec, fa, fb, s_tau, tips):
    """Z_ab(s) = Z_ba(s) at any complex s between any two points of any tree (reciprocity of a
    passive linear network; Koch & Poggio 1985 [KochPoggio1985])."""
    parents, lengths, diameters, soma = spec
    tree = outline_tree(list(parents), np.array(lengths) * UM, np.array(diameters) * UM,
                         None if soma is None else soma * UM)
    cell = PassiveTree(tree, RM, RI, CM, tips=tips)
    n = len(tree)
    a = Site(int(fa * n), fa * tree.lengths[int(fa * n)])
    b = Site(int(fb * n), fb * tree.lengths[int(fb * n)])
    s = s_tau / TAU
    ab = transfer_impedance(cell, [s], a, [b])[0, 0]
    ba = transfer_impedance(cell, [s], b, [a])[0, 0]
    scale = abs(input_impedance(cell, [s], [a, b])[0]).max()
    assert abs(ab - ba) <= 1e-12 * scale


def test_a_point_inside_a_piece_is_the_same_as_cutting_the_piece():
    """Cutting a cylinder into two at the site changes nothing (electrotonic lengths add)."""
    tree = demo(240.0)
    cut = outline_tree([-1, 0, 0, 1, 1, 2, 2, 3], np.array([300, 300, 300, 90, 200, 200, 200, 150]) * UM,
                        np.array([4.0, 4 * 2 ** (-2 / 3), 4 * 2 ** (-2 / 3)] + [4 * 4 ** (-2 / 3)] * 5) * UM)
    s = np.array([0.0, 30.0 + 100j, 2j * math.pi * 200])
    a = transfer_impedance(PassiveTree(tree, RM, RI, CM), s, Site(3, 90e-6), [Site(5, 200e-6), Site(3, 240e-6)])
    b = transfer_impedance(PassiveTree(cut, RM, RI, CM), s, Site(3, 90e-6), [Site(5, 200e-6), Site(7, 150e-6)])
    np.testing.assert_allclose(a, b, rtol=1e-13)


# --------------------------------------------------------------------------------------
# modes
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize("big_l", [0.3, 1.0, 2.5])
def test_sealed_cylinder_modes(big_l):
    """Rall (1969) [Rall1969]: τ_n = τm/(1 + (nπ/L)²) and, for a step at the sealed origin, the
    coefficients of cabletheory.transient (its own eigen-series)."""
    d = 2e-6
    lam = float(cable.length_constant(RM, RI, d))
    cell = PassiveTree(outline_tree([-1], [big_l * lam], [d]), RM, RI, CM)
    modes = root_modes(cell, 4)
    want = TAU / (1 + (np.arange(4) * math.pi / big_l) ** 2)
    np.testing.assert_allclose(modes.time_constants, want, rtol=1e-12)
    cyl = cable.Cylinder(RM, RI, CM, d, big_l * lam)
    reference = transient.charge(cyl, case.CurrentStep(1e-10), [0.01], [0.0], modes=4)
    np.testing.assert_allclose(modes.coefficients, reference.coefficients[:, 0], rtol=1e-9)
    assert modes.hidden.size == 0


@pytest.mark.parametrize("end", ["killed", 0.4e-9])
def test_cylinder_modes_with_a_killed_or_leaky_end(end):
    """The time constants of one cylinder with a killed or leaky far end are those of
    cabletheory.eigen (the roots of its pole-free eigenvalue equation, Rall 1969 [Rall1969]), with the coefficients of
    cabletheory.transient for a step at the sealed origin."""
    d, big_l = 2e-6, 1.3
    lam = float(cable.length_constant(RM, RI, d))
    cell = PassiveTree(outline_tree([-1], [big_l * lam], [d]), RM, RI, CM, tips=end)
    modes = root_modes(cell, 4)
    cyl = cable.Cylinder(RM, RI, CM, d, big_l * lam, math.inf if end == "killed" else end)
    reference = transient.charge(cyl, case.CurrentStep(1e-10), [0.01], [0.0], modes=4)
    np.testing.assert_allclose(modes.time_constants, reference.time_constants, rtol=1e-12)
    np.testing.assert_allclose(modes.coefficients, reference.coefficients[:, 0], rtol=1e-9)
    assert modes.time_constants[0] < TAU


def test_conforming_tree_with_soma_has_the_ball_and_stick_modes():
    """Demo tree with a 20 µm soma (docs/sources.md, computed from Rall 1969 [Rall1969]): τ1..3 =
    2.158878925, 0.5802766523, 0.2580943240 ms at the root, and the ball-and-stick coefficients of
    cabletheory.transient; the modes of single branches that leave the root at rest are hidden."""
    tree = demo(soma=20.0)
    cell = PassiveTree(tree, RM, RI, CM)
    modes = root_modes(cell, 4)
    np.testing.assert_allclose(modes.time_constants[1:], [2.158878925e-3, 0.5802766523e-3, 0.2580943240e-3],
                               rtol=2e-10)
    assert modes.time_constants[0] == pytest.approx(TAU, rel=1e-13)
    eq = 995.4565254e-6
    bs = case.BallAndStick(cable.Cylinder(RM, RI, CM, 4e-6, eq), 20e-6)
    reference = transient.charge(bs, case.CurrentStep(1e-10), [0.01], [0.0], modes=4)
    np.testing.assert_allclose(modes.coefficients, reference.coefficients[:, 0], rtol=1e-7)
    assert modes.hidden.size > 0
    hidden_at_root = input_impedance(cell, -1.0 / modes.hidden[:1] + 1e-9j / TAU, [root_site()])
    assert np.all(np.abs(hidden_at_root) < 1e3 * MOHM)  # no pole of the root impedance there


def test_two_equal_branches_hide_their_odd_modes():
    """Two equal sealed branches from a root without soma: the even modes are the single cylinder's,
    nπ/L (visible); the odd ones hold the root at rest, (n + ½)π/L (hidden), each counted once.
    Sturm-Liouville facts of the cable equation [CP]."""
    d, big_l = 1e-6, 0.8
    ell = big_l * float(cable.length_constant(RM, RI, d))
    cell = PassiveTree(outline_tree([-1, -1], [ell, ell], [d, d]), RM, RI, CM)
    modes = root_modes(cell, 3)
    np.testing.assert_allclose(modes.time_constants, TAU / (1 + (np.arange(3) * math.pi / big_l) ** 2),
                               rtol=1e-12)
    hidden = TAU / (1 + ((np.arange(3) + 0.5) * math.pi / big_l) ** 2)
    np.testing.assert_allclose(modes.hidden[:2], hidden[:2], rtol=1e-12)
    rates = np.array([0.5, 1.5, 1 + (0.7 * math.pi / big_l) ** 2, 1 + (1.2 * math.pi / big_l) ** 2]) / TAU
    assert eigenvalue_count(cell, rates).tolist() == [0, 1, 2, 3]


@pytest.mark.parametrize("count", [1, 2, 3])
def test_three_equal_branches_hide_a_double_rate(count):
    """Three equal sealed branches from a root without soma: the modes with equal branches are the single
    cylinder's, nπ/L (visible); those with the root at rest, (n + ½)π/L, belong to a plane of branch
    voltages whose currents cancel at the root, so each such rate is shared by two modes, both hidden
    and listed twice. Sturm-Liouville facts of the cable equation [CP]. Only the slowest rates are
    searched, so the double rate lies at the edge of the first search (count 2) and must be taken whole."""
    d, big_l = 1e-6, 0.8
    ell = big_l * float(cable.length_constant(RM, RI, d))
    cell = PassiveTree(outline_tree([-1, -1, -1], [ell, ell, ell], [d, d, d]), RM, RI, CM)
    modes = root_modes(cell, count)
    np.testing.assert_allclose(modes.time_constants, TAU / (1 + (np.arange(count) * math.pi / big_l) ** 2),
                               rtol=1e-12)
    assert modes.multiplicities.tolist() == [1] * count
    hidden = np.repeat(TAU / (1 + ((np.arange(count - 1) + 0.5) * math.pi / big_l) ** 2), 2)
    np.testing.assert_allclose(modes.hidden, hidden, rtol=1e-12)


# --------------------------------------------------------------------------------------
# refusals
# --------------------------------------------------------------------------------------
def test_bad_input_is_refused_in_one_line():
    tree = demo()
    with pytest.raises(InputError, match="tips must be"):
        PassiveTree(tree, RM, RI, CM, tips="open")
    cell = PassiveTree(tree, RM, RI, CM)
    with pytest.raises(InputError, match="outside piece"):
        input_impedance(cell, [0.0], [Site(0, 1.0)])
    with pytest.raises(InputError, match="does not exist"):
        input_impedance(cell, [0.0], [Site(70, 0.0)])
    with pytest.raises(InputError, match="no point"):
        site_at(tree, "nowhere")
    with pytest.raises(InputError, match="finite"):
        input_impedance(cell, [math.nan], [root_site()])
    with pytest.raises(InputError, match="one per piece"):
        PassiveTree(tree, np.ones(3), RI, CM)


def test_per_piece_membrane_changes_the_answer_where_it_should():
    """A piece with another Rm: the steady state follows Rall's rule with that piece's λ and G∞
    (cabletheory.cable), checked against the tips-inward conductance with per-piece constants."""
    tree = outline_tree([-1, 0], [200e-6, 300e-6], [2e-6, 1e-6])
    rm = np.array([2.0, 0.5])
    cell = PassiveTree(tree, rm, RI, CM)
    g1 = float(cable.semi_infinite_input_conductance(0.5, RI, 1e-6))
    l1 = 300e-6 / float(cable.length_constant(0.5, RI, 1e-6))
    load = float(cable.input_conductance(g1, l1, 0.0))
    g0 = float(cable.semi_infinite_input_conductance(2.0, RI, 2e-6))
    l0 = 200e-6 / float(cable.length_constant(2.0, RI, 2e-6))
    want = 1.0 / float(cable.input_conductance(g0, l0, load / g0))
    assert input_impedance(cell, [0.0], [root_site()])[0, 0].real == pytest.approx(want, rel=1e-13)
    with pytest.raises(InputError, match="soma_membrane"):
        PassiveTree(demo(soma=20.0), np.full(7, 2.0), RI, CM)


def test_sites_along_a_path():
    """The path between two tips of the demo tree runs up to their common branch point and down
    again (300 µm of trunk-side daughter, 100 + 50 µm of the two granddaughters: 750 µm); on a
    one-cylinder tree the steady voltage along it is cosh(L − X)/cosh L of the input (Rall 1959
    [Rall1959], cabletheory.cable.voltage_ratio)."""
    tree = demo()
    sites, distance = sites_along(tree, Site(3, 100e-6), Site(6, 50e-6), 5)
    assert distance[-1] == pytest.approx(750e-6, rel=1e-12)
    assert [(s.piece, round(s.distance * 1e6, 6)) for s in sites] == [
        (3, 100.0), (1, 212.5), (1, 25.0), (2, 162.5), (6, 50.0)]
    d, ell = 1e-6, 600e-6
    cell = PassiveTree(outline_tree([-1], [ell], [d]), RM, RI, CM)
    sites, distance = sites_along(cell.tree, root_site(), Site(0, ell), 7)
    z = transfer_impedance(cell, [0.0], root_site(), sites)[0].real
    big_l = ell / float(cable.length_constant(RM, RI, d))
    x = distance / float(cable.length_constant(RM, RI, d))
    np.testing.assert_allclose(z / z[0], cable.voltage_ratio(x, big_l, 0.0), rtol=1e-12)
    with pytest.raises(InputError, match="count"):
        sites_along(tree, root_site(), Site(3, 0.0), 1)


# --------------------------------------------------------------------------------------
# frusta
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize("tips", ["sealed", "killed"])
@pytest.mark.parametrize("make", [tapered_tree, lambda: build_tree(read_swc(DATA / "lumenia_pv7_interneuron.swc"),
                                                                   taper=True)])
def test_frusta_steady_state_is_the_exact_tapered_input_resistance(make, tips):
    """At s = 0 the Laplace-domain frustum is the exact Bessel solution of cabletheory.tree
    (checked there against scipy.integrate.solve_bvp [SciPy2020]), for a tree of frusta and the
    bundled cell read with tapers."""
    tree = make()
    cell = PassiveTree(tree, RM, RI, CM, tips=tips)
    z = input_impedance(cell, [0.0], [root_site()])[0, 0]
    _, g_dend = exact_input_conductances(tree, RM, RI, killed_tips=tips == "killed")
    g_soma = 0.0 if tree.soma_area is None else tree.soma_area / RM
    assert z.real == pytest.approx(1.0 / (g_dend + g_soma), rel=1e-11)


@pytest.mark.parametrize("s_tau", [0.3 + 2j, -0.9 + 0.5j, 2e4 + 3e4j, -30 + 1e-3j])
@pytest.mark.parametrize(("source", "record"), [
    (None, Site(3, 250e-6)), (Site(2, 150e-6), Site(3, 400e-6)), (root_site(), Site(1, 10e-6))])
def test_frusta_agree_with_mpmath_bessel_functions(s_tau, source, record):
    """Scaled scipy Bessel functions of complex argument against unscaled mpmath ones at 40 digits
    [mpmath2023], through the general two-port recursion, on narrowing and widening frusta."""
    cell = PassiveTree(tapered_tree(), RM, RI, CM, tips=0.3e-9)
    s = s_tau / TAU
    fast = transfer_impedance(cell, [s], source, [record])[0, 0]
    slow = complex(transfer_impedance_precise(cell, s, source, record, digits=40))
    assert fast == pytest.approx(slow, rel=1e-10, abs=1e-300)


def test_frusta_are_the_limit_of_fine_cylinder_chains():
    """A frustum cut into k cylinders (midpoint diameters) converges to it at second order in 1/k at
    complex s: an independent route to the tapered two-port (the stepped cable is common practice
    [CP])."""
    tree = tapered_tree()
    cell = PassiveTree(tree, RM, RI, CM)
    s = np.array([0.0, 50 + 300j, -20 + 5000j])
    exact = transfer_impedance(cell, s, Site(3, 400e-6), [root_site()])[:, 0]
    errors = []
    for k in (8, 16, 32):
        chain, last = stepped_cylinders(tree, k, 15e-6)
        z = transfer_impedance(PassiveTree(chain, RM, RI, CM), s, Site(len(chain) - 1, last), [root_site()])[:, 0]
        errors.append(np.abs(z / exact - 1))
    ratios = np.asarray(errors[0]) / np.asarray(errors[1]), np.asarray(errors[1]) / np.asarray(errors[2])
    assert np.all((np.array(ratios) > 3.4) & (np.array(ratios) < 4.4)), (errors, ratios)


def test_a_point_inside_a_frustum_is_the_same_as_cutting_it():
    """Cutting a frustum at a point gives two frusta with the diameter there (linear taper)."""
    tree = tapered_tree()
    x = 120e-6
    d_mid = 2.5e-6 + (1.5e-6 - 2.5e-6) * x / 300e-6
    cut = Tree(source="cut", labels=("f0", "f1a", "f1b", "f2", "f3"), parents=np.array([-1, 0, 1, 0, 2]),
               lengths=np.array([200e-6, x, 300e-6 - x, 150e-6, 400e-6]),
               proximal_diameters=np.array([4e-6, 2.5e-6, d_mid, 1e-6, 1.5e-6]),
               distal_diameters=np.array([3e-6, d_mid, 1.5e-6, 2e-6, 0.4e-6]), types=np.full(5, 3),
               lines=np.arange(1, 6), soma_area=tree.soma_area, geometry="frusta")
    s = np.array([0.0, 30.0 + 100j, 2j * math.pi * 300])
    a = transfer_impedance(PassiveTree(tree, RM, RI, CM), s, Site(1, x), [Site(3, 400e-6)])
    b = transfer_impedance(PassiveTree(cut, RM, RI, CM), s, Site(1, x), [Site(4, 400e-6)])
    np.testing.assert_allclose(a, b, rtol=1e-11)


def test_frusta_modes():
    """Time constants and step coefficients of a tree of frusta: each rate is a pole of the root
    impedance of the 30-digit mpmath Bessel recursion [mpmath2023] (|Y| vanishes there), and chains
    of k cylinders with midpoint diameters converge to the rates and coefficients at second order
    (the stepped cable [CP]); the count rises by one across each rate."""
    tree = tapered_tree()
    cell = PassiveTree(tree, RM, RI, CM)
    modes = root_modes(cell, 3)
    assert modes.time_constants[0] == pytest.approx(TAU, rel=1e-12)
    y0 = abs(1 / transfer_impedance_precise(cell, 0.0, None, root_site(), digits=30))
    for tau in modes.time_constants[1:]:
        assert abs(1 / transfer_impedance_precise(cell, -1 / tau, None, root_site(), digits=30)) < 1e-11 * y0
        assert eigenvalue_count(cell, [0.999 / tau])[0] + 1 == eigenvalue_count(cell, [1.001 / tau])[0]
    errors = []
    for k in (8, 16, 32):
        chain = root_modes(PassiveTree(stepped_cylinders(tree, k, 15e-6)[0], RM, RI, CM), 3)
        errors.append(np.concatenate((chain.time_constants / modes.time_constants - 1,
                                      chain.coefficients / modes.coefficients - 1))[[1, 2, 4, 5]])
    ratios = np.abs(errors[0] / errors[1]), np.abs(errors[1] / errors[2])
    assert np.all((np.array(ratios) > 3.6) & (np.array(ratios) < 4.4)), ratios


def test_site_on_branch():
    """A branch is the run of pieces between branch points: 100 µm into the second branch of a
    chain of three 50 µm pieces that then forks is the end of its second piece."""
    tree = outline_tree([-1, 0, 1, 2, 2], np.array([50, 50, 50, 30, 40]) * UM, np.full(5, 1.0) * UM)
    assert site_on_branch(tree, 0, 100e-6) == Site(1, tree.lengths[1])  # the node between two pieces
    site = site_on_branch(tree, 0, 120e-6)
    assert site.piece == 2
    assert site.distance == pytest.approx(20e-6, rel=1e-12)
    assert site_on_branch(tree, 2, 40e-6) == Site(4, tree.lengths[4])
    with pytest.raises(InputError, match="outside branch"):
        site_on_branch(tree, 1, 31e-6)
    with pytest.raises(InputError, match="does not exist"):
        site_on_branch(tree, 3, 0.0)
