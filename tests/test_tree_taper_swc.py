"""SWC files read with frusta (``--taper``): the audit sees the diameters the reconstruction gives.

In SWC each point carries one diameter; at a branch point it is the parent branch's, and each
daughter's first point carries the daughter's own. Read with frusta, a daughter's first piece is
a cylinder of its own first diameter (the package's convention, docs/tree.md), so:

* a tree obeying Rall's conditions is reducible with frusta exactly as with cylinders, and its
  input resistance is Rall's equivalent-cylinder closed form (Rall 1959 [Rall1959]);
* the 3/2 ratio at a branch point does not depend on the reading (cylinders or frusta);
* a taper inside a branch, and a branch point that breaks the 3/2 rule, are reported with the
  percentages their diameters give;
* the input resistance of a tree of tapering branches agrees with an independent numerical
  solution of the steady cable equation on every piece, (π d²/4Ri V')' = π d V/Rm, by
  scipy.integrate.solve_bvp [SciPy2020] (collocation; no Bessel functions involved).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from cabletheory.cli import main
from cabletheory.morphology import parse_swc, read_swc
from cabletheory.tree import analyse_tree, build_tree, tree_from_swc

RM, RI = 2.0, 2.0  # 20 kΩ·cm², 200 Ω·cm
UM = 1e-6
STEP = 25.0  # µm between consecutive points
DATA = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"
HALF = 2.0 ** (-2.0 / 3.0)  # two equal daughters obey the 3/2 rule at d·2^(-2/3)


def _swc(branches: list[tuple[int, list[float]]], soma_radius: float | None = 6.0, root_diameter: float = 2.0) -> str:
    """SWC text (µm) for branches given as (parent branch or -1, diameters of its points).

    Points are STEP apart along a direction of their own. A stem on the soma starts STEP beyond
    the soma's surface; without a soma the root is a dendrite point of ``root_diameter`` and a
    stem's first point lies STEP from it.
    """
    root = f"1 1 0 0 0 {soma_radius} -1" if soma_radius is not None else f"1 3 0 0 0 {root_diameter / 2} -1"
    lines, last_id, positions = [root], {}, {1: np.zeros(3)}
    next_id = 2
    for b, (parent, diameters) in enumerate(branches):
        direction = np.array([math.cos(0.7 * b), math.sin(0.7 * b), 0.1 * b])
        direction /= np.linalg.norm(direction)
        parent_id = 1 if parent < 0 else last_id[parent]
        offset = soma_radius if parent < 0 and soma_radius is not None else 0.0
        start = positions[parent_id]
        for k, d in enumerate(diameters):
            xyz = start + direction * (offset + STEP * (k + 1))
            lines.append(f"{next_id} 3 {xyz[0]:.12f} {xyz[1]:.12f} {xyz[2]:.12f} {d / 2:.15g} {parent_id}")
            positions[next_id] = xyz
            parent_id = next_id
            next_id += 1
        last_id[b] = parent_id
    return "\n".join(lines) + "\n"


def _uniform_tree() -> list[tuple[int, list[float]]]:
    """Trunk 2 µm (4 points), two daughters 2·2^(-2/3) µm (3 points each): Rall's conditions hold."""
    return [(-1, [2.0] * 4), (0, [2.0 * HALF] * 3), (0, [2.0 * HALF] * 3)]


def _tapering_tree(excess: float = 1.0) -> list[tuple[int, list[float]]]:
    """Trunk tapering 3 -> 2 µm, daughters starting where Σd^3/2 = excess · 2^3/2 and tapering to 0.8 µm."""
    start = 2.0 * (excess / 2.0) ** (2.0 / 3.0)
    return [(-1, list(np.linspace(3.0, 2.0, 5))), (0, list(np.linspace(start, 0.8, 4))),
            (0, list(np.linspace(start, 0.8, 4)))]


def _read(branches, *, taper, soma_radius=6.0):
    return tree_from_swc(parse_swc(_swc(branches, soma_radius)), taper=taper)


@pytest.mark.parametrize("soma_radius", [6.0, None])
def test_a_tree_obeying_rall_conditions_is_the_same_with_frusta_as_with_cylinders(soma_radius):
    """Uniform branches, 3/2 rule exact: frusta give cylinders, ratio 1.000, reducible, and Rall's
    equivalent cylinder G_D = G∞(D) tanh L (Rall 1959 [Rall1959]) is the exact input conductance."""
    branches = _uniform_tree()  # without a soma the root point (2 µm) starts the one trunk
    frusta = _read(branches, taper=True, soma_radius=soma_radius)
    cylinders = _read(branches, taper=False, soma_radius=soma_radius)
    np.testing.assert_allclose(frusta.proximal_diameters, cylinders.proximal_diameters, rtol=1e-14)
    report = analyse_tree(frusta, RM, RI)
    assert report.reducible, report.reasons
    np.testing.assert_allclose(report.branch_points.ratios, 1.0, rtol=1e-12)
    assert max(s.worst_branch_change for s in report.stems) == pytest.approx(0.0, abs=1e-12)
    # Rall 1959 [Rall1959]: trunk 100 µm of 2 µm, daughters 75 µm of 2·2^(-2/3) µm
    lam_trunk = math.sqrt(RM * 2 * UM / (4 * RI))
    lam_daughter = math.sqrt(RM * 2 * HALF * UM / (4 * RI))
    big_l = 100 * UM / lam_trunk + 75 * UM / lam_daughter
    g_inf = math.pi * (2 * UM) ** 1.5 / (2 * math.sqrt(RM * RI))
    g_soma = 0.0 if soma_radius is None else 4 * math.pi * (soma_radius * UM) ** 2 / RM
    assert report.input_resistance == pytest.approx(1 / (g_inf * math.tanh(big_l) + g_soma), rel=1e-12)


def test_branch_ratios_do_not_depend_on_the_reading_of_pieces():
    """The bundled PV-7 cell: the 3/2 ratios with frusta are those with cylinders (Σd^3/2 of the
    daughters' first points over d^3/2 of the branch point), none of them the child count."""
    points = read_swc(DATA / "lumenia_pv7_interneuron.swc")
    frusta = analyse_tree(build_tree(points, taper=True), RM, RI)
    cylinders = analyse_tree(build_tree(points, taper=False), RM, RI)
    np.testing.assert_allclose(frusta.branch_points.ratios, cylinders.branch_points.ratios, rtol=1e-14)
    assert not np.any(np.isclose(frusta.branch_points.ratios, frusta.branch_points.children, rtol=1e-3))
    assert [s.diameter for s in frusta.stems] == [s.diameter for s in cylinders.stems]


def test_bundled_conforming_cell_is_reducible_with_frusta():
    """LW-1 is built to Rall's conditions (uniform branches, 3/2 rule, tips at X = 1.1)."""
    report = analyse_tree(build_tree(read_swc(DATA / "lumenia_lw1_conforming.swc"), taper=True), RM, RI)
    assert report.reducible, report.reasons
    np.testing.assert_allclose(report.branch_points.ratios, 1.0, rtol=1e-8)
    np.testing.assert_allclose(report.tips.electrotonic_distances, 1.1, rtol=1e-7)


def test_tapering_branches_pass_the_3_2_rule_and_report_the_taper_they_have():
    """Trunk 3 -> 2 µm, daughters 2·2^(-2/3) -> 0.8 µm: ratio 1.000 at the branch point; the only
    departures are the tapers inside branches, by (3/2)^3/2 − 1 (trunk) and (1.26/0.8)^3/2 − 1."""
    report = analyse_tree(_read(_tapering_tree(), taper=True), RM, RI)
    np.testing.assert_allclose(report.branch_points.ratios, [1.0], rtol=1e-12)
    kinds = {v.kind for v in report.violations}
    assert kinds == {"branch_diameter"}
    changes = sorted(v.value for v in report.violations)
    daughter = (2.0 * HALF / 0.8) ** 1.5 - 1.0
    np.testing.assert_allclose(changes, sorted([daughter, daughter, 1.5**1.5 - 1.0]), rtol=1e-12)
    assert any(f"{100 * daughter:.3g} %" in r for r in report.reasons), report.reasons


def test_a_branch_point_breaking_the_rule_is_reported_with_its_ratio():
    """Daughters 30 % too thick in Σd^3/2: ratio 1.300 with frusta and with cylinders."""
    for taper in (True, False):
        report = analyse_tree(_read(_tapering_tree(excess=1.3), taper=taper), RM, RI)
        assert not report.reducible
        np.testing.assert_allclose(report.branch_points.ratios, [1.3], rtol=1e-12)
        [ratio] = [v for v in report.violations if v.kind == "branch_ratio"]
        assert ratio.value == pytest.approx(1.3, rel=1e-12)
        assert any("ratio 1.3)" in r for r in report.reasons), report.reasons


def test_stems_without_a_soma_take_their_own_diameters():
    """No soma: with two stems the root point is a branch point and each stem starts at its own
    first diameter; with one stem the root point is that stem's first point (a frustum from it)."""
    two = tree_from_swc(parse_swc(_swc([(-1, [2.0, 2.0]), (-1, [1.5, 1.5])], None, root_diameter=6.0)),
                        taper=True)
    assert [s.diameter for s in analyse_tree(two, RM, RI).stems] == pytest.approx([2.0 * UM, 1.5 * UM])
    one = tree_from_swc(parse_swc(_swc([(-1, [2.0, 2.0])], None, root_diameter=3.0)), taper=True)
    assert one.proximal_diameters[0] == pytest.approx(3.0 * UM)
    assert one.distal_diameters[0] == pytest.approx(2.0 * UM)


def _bvp_input_conductance(parents, lengths, d0, d1, g_soma):
    """Input conductance (S) at the root by scipy.integrate.solve_bvp [SciPy2020] on every piece.

    Each piece k has V_k(ξ), J_k(ξ) on ξ = x/ℓ_k ∈ [0, 1] (J: axial current away from the root,
    in nA for V in volts): V' = −ℓ 4Ri J·1e-9/(π d²), J' = −ℓ π d V/(Rm·1e-9), d linear in ξ.
    Boundary conditions: V = 1 at the root, V continuous and current conserved at every node,
    J = 0 at sealed tips.
    """
    from scipy.integrate import solve_bvp

    n = len(parents)
    parents = np.asarray(parents)
    children = [np.flatnonzero(parents == k) for k in range(n)]
    scale = 1e-9

    def rhs(xi, y):
        v, j = y[:n], y[n:]
        d = d0[:, None] + (d1 - d0)[:, None] * xi[None, :]
        return np.vstack([-lengths[:, None] * 4 * RI * scale * j / (np.pi * d**2),
                          -lengths[:, None] * np.pi * d * v / (RM * scale)])

    def bc(ya, yb):
        out = []
        for k in range(n):
            out.append(ya[k] - (1.0 if parents[k] < 0 else yb[parents[k]]))
            out.append(yb[n + k] - sum(ya[n + c] for c in children[k]))
        return np.array(out)

    xi = np.linspace(0.0, 1.0, 41)
    sol = solve_bvp(rhs, bc, xi, np.vstack([np.ones((n, xi.size)), np.zeros((n, xi.size))]), tol=1e-10,
                    bc_tol=1e-13, max_nodes=200000)
    assert sol.success, sol.message
    return g_soma + scale * float(sum(sol.sol(0.0)[n + k] for k in range(n) if parents[k] < 0))


@pytest.mark.parametrize("excess", [1.0, 1.3])
def test_input_resistance_of_tapering_branches_matches_solve_bvp(excess):
    """Exact frusta (Bessel two-ports) through the SWC reading, against solve_bvp [SciPy2020]."""
    tree = _read(_tapering_tree(excess), taper=True)
    report = analyse_tree(tree, RM, RI)
    expected = _bvp_input_conductance(tree.parents, tree.lengths, tree.proximal_diameters,
                                      tree.distal_diameters, tree.soma_area / RM)
    assert 1.0 / report.input_resistance == pytest.approx(expected, rel=1e-8)


def test_the_command_line_reports_a_conforming_tree_read_with_frusta_as_reducible(capsys, tmp_path):
    """``tree --taper`` on an SWC obeying Rall's conditions: ratios 1.000, no 100 % artefact."""
    path = tmp_path / "uniform.swc"
    path.write_text(_swc(_uniform_tree()), encoding="utf-8")
    status = main(["tree", str(path), "--Rm", "20000", "--Ri", "200", "--taper"])
    out, err = capsys.readouterr()
    assert status == 0, err
    assert "1.000 to 1.000" in out
    assert "Verdict: REDUCIBLE" in out
    assert "100 %" not in out
    assert "ratio 2" not in out
    assert "first piece of a branch" in out
