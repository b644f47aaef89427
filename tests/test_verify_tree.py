"""Simulator checks on trees: ``compare --morphology`` and the tree column syntax.

External checks: the package's own compartmental discretisation of a branched tree (vertex-centred
three-point differences, second order in Δx, common practice [CP]; Crank–Nicolson time stepping,
Crank & Nicolson 1947 [CrankNicolson1947]) is an independent numerical route to the exact tree
solution (Laplace-domain recursion, Holmes 1986 [Holmes1986], inverted on a contour, Weideman &
Trefethen 2007 [WeidemanTrefethen2007]): runs refined in space must show an observed order near 2.
A file made from the exact solution plus a known perturbation must report exactly that
perturbation as its error.
"""

from __future__ import annotations

import itertools
import json
import pathlib

import numpy as np
import pytest

from cabletheory import compartment as cp
from cabletheory.case import AlphaCurrent, CurrentStep
from cabletheory.cli import main
from cabletheory.errors import FileFormatError, InputError
from cabletheory.inputs import read_outline_value
from cabletheory.morphology import read_morphology
from cabletheory.tree import build_tree
from cabletheory.tree_laplace import PassiveTree, Site, site_at, site_on_branch
from cabletheory.tree_time import tree_response
from cabletheory.verify.tree_reading import TreePoints, read_tree_recording

ROOT = pathlib.Path(__file__).resolve().parents[1]
DEMO = ROOT / "cabletheory" / "data" / "morphologies" / "lumenia_demo.outline"
LW1 = ROOT / "cabletheory" / "data" / "morphologies" / "lumenia_lw1_conforming.swc"
RM, RI, CM = 2.0, 2.0, 0.01  # SI: 20 kΩ·cm², 200 Ω·cm, 1 µF/cm²
CASE = ["--Rm", "20000", "--Ri", "200", "--current", "100 pA"]


def _parse(text: str, kind: str, where: str) -> float:
    from cabletheory.units import parse_quantity

    return parse_quantity(text, kind, where, allow_zero=True, allow_negative=True)


def _tree(path: pathlib.Path):
    return build_tree(read_morphology(str(path), read_outline_value))


def _json(capsys, argv: list[str], status: int = 0) -> dict:
    got = main([*argv, "--json"])
    out, err = capsys.readouterr()
    assert got == status, err
    return json.loads(out)


def _wide(path: pathlib.Path, headers: list[str], times: np.ndarray, volts: np.ndarray, comments: str = "") -> None:
    """A wide CSV in ms and mV, one column per header."""
    rows = [",".join(["time (ms)", *(f"{h} (mV)" for h in headers)])]
    rows += [",".join([repr(float(t) * 1e3), *(repr(float(v) * 1e3) for v in row)]) for t, row in zip(times, volts,
                                                                                                    strict=True)]
    path.write_text(comments + "\n".join(rows) + "\n", encoding="utf-8")


# --------------------------------------------------------------------------------------
# the column syntax
# --------------------------------------------------------------------------------------
def test_every_form_of_a_site_names_the_site_the_tree_code_gives():
    """Each written form resolves to the site that tree_laplace's own site_at / site_on_branch give."""
    tree = _tree(LW1)
    points = TreePoints(tree, _parse)
    assert points.point("V@soma").site == Site(-1, 0.0)
    assert points.point("@1").site == Site(-1, 0.0)  # the one-point soma's SWC id
    assert points.point("V at 30").site == site_at(tree, "30")
    assert points.point("vm@412").site == site_at(tree, "412")
    # branch 2–30 (first branch, index 0): 100 µm from its start at the soma
    want = site_on_branch(tree, 0, 100e-6)
    for text in ("V@branch 30 +100 um", "branch 30 +0.1 mm", "branch 30 +100"):  # bare: µm
        got = points.point(text).site
        assert got.piece == want.piece, text
        assert got.distance == pytest.approx(want.distance, rel=1e-12), text


def test_a_written_label_reads_back_to_the_same_site():
    tree = _tree(LW1)
    points = TreePoints(tree, _parse)
    for text in ("soma", "412", "branch 30 +12.5 um", "branch 434 +0 um", "branch 434 +178.17613386437569 um"):
        first = points.point(text)
        again = points.point(first.label)
        assert again.site.piece == first.site.piece, text
        assert again.site.distance == pytest.approx(first.site.distance, rel=1e-12, abs=1e-18), text


def test_one_point_written_two_ways_is_one_site():
    tree = _tree(LW1)
    points = TreePoints(tree, _parse)
    a = points("V@434", "here")
    b = points("V@branch 434 +178.17613386437569 um", "here")  # its far end: the point itself
    c = points("V@branch 434 +0 um", "here")  # its start: the branch point 384
    d = points("V@384", "here")
    assert a == b
    assert c == d
    assert a != c


@pytest.mark.parametrize(("header", "fragment"), [
    ("V@9999", "no point '9999'"),
    ("V@branch 30 +300 um", "beyond the end of the branch 2–30"),
    ("V@branch 20 +5 um", "lies inside the branch 2–30"),
    ("V@branch soma +5 um", "the root is not a branch"),
    ("V@250 um", "is a distance, not a point"),
    ("V@branch 30 +-5 um", "0 or more"),
    ("voltage", "does not say where"),
])
def test_bad_columns_name_file_line_and_column(header, fragment):
    text = f"time (ms),V@soma (mV),{header} (mV)\n0,0,0\n"
    with pytest.raises(FileFormatError) as info:
        read_tree_recording(text, "run.csv", _parse, _tree(LW1))
    message = str(info.value)
    assert message.startswith("run.csv:1:3"), message
    assert fragment in message, message
    assert "\n" not in message


def test_two_columns_at_one_point_are_refused():
    text = "time (ms),V@soma (mV),V@1 (mV)\n0,0,0\n"
    with pytest.raises(FileFormatError, match=r"run.csv:1: columns 2 .* and 3 .* record the same point"):
        read_tree_recording(text, "run.csv", _parse, _tree(LW1))


def test_a_label_that_is_also_the_roots_word_is_ambiguous(tmp_path):
    outline = tmp_path / "odd.outline"
    outline.write_text("trunk length=100 diameter=2\n  root length=50 diameter=1\n", encoding="utf-8")
    with pytest.raises(FileFormatError, match="'root' is ambiguous"):
        read_tree_recording("time (ms),V@root (mV)\n0,0\n", "run.csv", _parse, _tree(outline))


def test_long_rows_name_their_points_and_bad_ones_give_the_line():
    tree = _tree(LW1)
    good = read_tree_recording("time (ms),point,voltage (mV)\n0,soma,0\n0,412,0\n1,soma,1\n1,412,0.5\n",
                               "run.csv", _parse, tree)
    assert good.labels == ("soma", "412")
    assert good.recording.layout == "long"
    np.testing.assert_array_equal(good.recording.positions, [0, 1, 0, 1])
    with pytest.raises(FileFormatError, match=r"run.csv:4:2 \('12345'\): no point '12345'"):
        read_tree_recording("time (ms),point,voltage (mV)\n0,soma,0\n0,412,0\n1,12345,1\n", "run.csv", _parse, tree)


def test_column_at_maps_free_names_to_points():
    tree = _tree(LW1)
    got = read_tree_recording("t (ms),v_soma,v_tip\n0,0,0\n1,2,1\n", "run.csv", _parse, tree,
                              columns={"V_Soma": "soma", "v_tip": "branch 30 +50 um"})
    assert got.labels == ("soma", "branch 30 +50 um")
    with pytest.raises(InputError, match="--column-at v_tip: no point '77777'"):
        read_tree_recording("t (ms),v_soma,v_tip\n0,0,0\n", "run.csv", _parse, tree,
                            columns={"v_soma": "soma", "v_tip": "77777"})


# --------------------------------------------------------------------------------------
# compare --morphology
# --------------------------------------------------------------------------------------
def test_reference_on_a_tree_reads_back_with_zero_error(tmp_path, capsys):
    """reference --morphology writes long rows (time_s, point, voltage_V); compare reads them back
    and finds the very values it computes itself; the same values in a wide table with our column
    syntax read back the same."""
    exact = tmp_path / "exact.csv"
    assert main(["reference", *CASE, "--morphology", str(LW1), "--stimulus-at", "412", "--times", "0:10:0.5 ms",
                 "--positions", "soma, 412, 30", "--output", str(exact)]) == 0
    capsys.readouterr()
    report = _json(capsys, ["compare", str(exact), *CASE, "--morphology", str(LW1), "--stimulus-at", "412",
                            "--pass-within", "1 fV"])
    run = report["runs"][0]
    assert run["layout"] == "long"
    assert run["passed"]
    assert run["max_abs_error"]["value"] <= 1e-18
    assert run["sites"] == ["soma", "412", "30"]
    # the same numbers as a wide table, columns in the tree syntax, volts declared in the header
    rows = [line.split(",") for line in exact.read_text(encoding="utf-8").splitlines()
            if line and not line.startswith("#")][1:]
    times = sorted({float(r[0]) for r in rows})
    by = {(float(r[0]), r[1]): r[2] for r in rows}
    wide = tmp_path / "wide.csv"
    lines = ["time (s),V@soma (V),V@412 (V),V@branch 30 +225.5393056613783 um (V)"]
    lines += [",".join([repr(t), by[t, "soma"], by[t, "412"], by[t, "30"]]) for t in times]
    wide.write_text("\n".join(lines) + "\n", encoding="utf-8")
    report = _json(capsys, ["compare", str(wide), *CASE, "--morphology", str(LW1), "--stimulus-at", "412",
                            "--pass-within", "1 fV"])
    assert report["runs"][0]["max_abs_error"]["value"] <= 1e-18
    assert report["runs"][0]["sites"][:2] == ["soma", "412"]
    assert report["runs"][0]["sites"][2].startswith("branch 30 +225.5393056613")


def test_a_known_perturbation_is_reported_as_the_error(tmp_path, capsys):
    """Exact voltages (alpha current at a tip) plus δ(t) = 3 µV·sin(π t / 10 ms) at one point only:
    the reported max error is max |δ| at that point and time, and the other points' errors vanish."""
    tree = _tree(LW1)
    cell = PassiveTree(tree, RM, RI, CM)
    times = np.arange(0, 41) * 0.25e-3
    sites = [site_at(tree, "soma"), site_at(tree, "30"), site_on_branch(tree, 0, 100e-6)]
    stimulus = AlphaCurrent(peak=100e-12, time_to_peak=0.5e-3)
    exact = tree_response(cell, stimulus, times, site_at(tree, "30"), sites, tolerance=1e-13).voltage
    delta = 3e-6 * np.sin(np.pi * times / 10e-3)
    volts = exact.copy()
    volts[:, 2] += delta
    run = tmp_path / "perturbed.csv"
    _wide(run, ["V@soma", "V@30", "V@branch 30 +100 um"], times, volts)
    report = _json(capsys, ["compare", str(run), *CASE[:4], "--shape", "alpha", "--current", "100 pA",
                            "--time-to-peak", "0.5 ms", "--morphology", str(LW1), "--stimulus-at", "30",
                            "--pass-within", "1 uV"], status=1)
    assert report["stimulus"]["position"] == "30"
    assert report["stimulus"]["shape"] == "alpha"
    assert report["morphology"] == str(LW1)
    r = report["runs"][0]
    k = int(np.argmax(np.abs(delta)))
    assert r["max_abs_error"]["value"] == pytest.approx(float(np.max(np.abs(delta))), rel=1e-6)
    assert r["worst"]["position"] == "branch 30 +100 um"
    assert r["worst"]["time"]["value"] == pytest.approx(times[k], abs=1e-12)
    errors = dict(zip(r["sites"], r["site_max_abs_error"]["value"], strict=True))
    # the exact values compare uses are good to its default truncation, 1e-9 mV
    assert errors["soma"] < 1e-12
    assert errors["30"] < 1e-12
    assert not r["passed"]


def _compartmental_runs(tmp_path: pathlib.Path, refinements: tuple[int, ...], step: float) -> list[str]:
    """The demo outline solved by the package's own compartments (current step of 100 pA at the soma),
    recorded at the soma, a tip and 150 µm along the branch 'right', one file per refinement with its
    '# dx' and '# dt' lines."""
    tree = _tree(DEMO)
    times = np.arange(0, 21) * 0.25e-3
    files = []
    for k in refinements:
        h = 100e-6 / k
        n = np.rint(tree.lengths / h).astype(int)
        c = cp.discretise_tree(tree.parents, tree.lengths, tree.distal_diameters, RM, RI, CM, n,
                               soma_area=tree.soma_area)
        current = np.zeros(c.size)
        current[0] = 100e-12
        v = cp.integrate(c, current, times, step=step)
        right = tree.labels.index("right")
        tip = int(cp.branch_nodes(c, tree.labels.index("left.a"))[-1])
        columns = [v[:, 0], v[:, tip], cp.sample(c, v, [c.distance[c.proximal[right]] + 150e-6], branch=right)[:, 0]]
        path = tmp_path / f"run_{k}.csv"
        _wide(path, ["V@soma", "V@left.a", "V@branch right +150 um"], times, np.array(columns).T,
              comments=f"# dx = {h * 1e6!r} um\n# dt = {step * 1e3!r} ms\n")
        files.append(str(path))
    return files


def test_compartmental_runs_of_a_branched_tree_converge_at_second_order(tmp_path, capsys):
    files = _compartmental_runs(tmp_path, (1, 2, 4, 8), 1e-6)
    report = _json(capsys, ["compare", *files, *CASE, "--morphology", str(DEMO), "--pass-within", "1%"])
    errors = [r["max_abs_error"]["value"] for r in report["runs"]]
    assert all(a > 3.5 * b for a, b in itertools.pairwise(errors)), errors  # about 4 per halving
    (space,) = report["convergence"]["estimates"]
    assert space["axis"] == "space"
    assert space["verdict"] == "matches"
    assert space["observed"] == pytest.approx(2.0, abs=0.1)
    assert all(r["passed"] for r in report["runs"])


def test_the_text_report_names_tree_points(tmp_path, capsys):
    files = _compartmental_runs(tmp_path, (1,), 1e-5)
    assert main(["compare", *files, *CASE, "--morphology", str(DEMO), "--pass-within", "1 uV"]) == 1
    out = capsys.readouterr().out
    assert "3 tree point(s)" in out
    assert "max error" in out
    assert ("at point left.a" in out or "at the soma" in out or "at branch right" in out)


def test_a_cylinder_option_with_a_morphology_is_refused(tmp_path, capsys):
    files = _compartmental_runs(tmp_path, (1,), 1e-5)
    assert main(["compare", *files, *CASE, "--morphology", str(DEMO), "--diameter", "2"]) == 2
    assert "--diameter" in capsys.readouterr().err


def test_a_step_at_a_tip_matches_the_exact_tree(tmp_path):
    """Library level: the recording of a CurrentStep at a tip, read and compared point by point."""
    from cabletheory.tree_case import build_tree_case
    from cabletheory.verify.comparison import compare
    from cabletheory.verify.exact import tree_exact_case

    tree = _tree(DEMO)
    cell = PassiveTree(tree, RM, RI, CM)
    case = build_tree_case(cell, {"current": 50e-12}, "right.b", None)
    assert isinstance(case.stimulus, CurrentStep)
    times = np.arange(1, 11) * 1e-3
    read = read_tree_recording("time (ms),V@soma (mV),V@branch right.b +100 um (mV)\n"
                               + "".join(f"{float(t) * 1e3!r},0,0\n" for t in times), "zeros.csv", _parse, tree)
    exact = tree_exact_case(case, read.sites, 1e-15)
    result = compare(read.recording, exact, 1e-6)
    direct = tree_response(cell, case.stimulus, times, case.stimulus_site, read.sites, tolerance=1e-12).voltage
    np.testing.assert_allclose(result.exact.reshape(times.size, 2), direct, rtol=1e-9, atol=1e-15)


def test_points_along_branches_round_trip_through_reference_and_compare(tmp_path, capsys):
    """reference --positions takes the same syntax; its rows read back with zero error."""
    exact = tmp_path / "along.csv"
    assert main(["reference", *CASE, "--morphology", str(LW1), "--stimulus-at", "branch 30 +100 um",
                 "--times", "0:6:0.5 ms", "--positions", "soma, branch 30 +100 um, branch 434 +20 um",
                 "--output", str(exact)]) == 0
    capsys.readouterr()
    report = _json(capsys, ["compare", str(exact), *CASE, "--morphology", str(LW1), "--stimulus-at",
                            "branch 30 +100 um", "--pass-within", "1 fV"])
    run = report["runs"][0]
    assert run["sites"] == ["soma", "branch 30 +100 um", "branch 434 +20 um"]
    assert run["max_abs_error"]["value"] <= 1e-18


def test_the_core_reads_simple_length_units_without_a_unit_library():
    from cabletheory.tree_sites import tree_site

    tree = _tree(LW1)
    want = site_on_branch(tree, 0, 100e-6)
    for text in ("branch 30 +0.1 mm", "branch 30 +100 um", "branch 30 +100 µm", "branch 30 +100", "branch 30 +1e-4 m"):
        got = tree_site(tree, text)
        assert got.piece == want.piece, text
        assert got.distance == pytest.approx(want.distance, rel=1e-12), text
    with pytest.raises(InputError, match="cannot read '3 furlongs' as a distance"):
        tree_site(tree, "branch 30 +3 furlongs")


def test_reference_like_a_tree_run_reads_back_with_zero_error(tmp_path, capsys):
    """reference --morphology --like FILE: the exact values at every sample of a simulator file, on the
    file's own clock (at rest before --onset); compare with the same --onset finds no error, and the
    simulator file itself differs from it by what compare reports for it."""
    run = ROOT / "worked" / "tree_simulator_check" / "coarse.csv"
    case = ["--Rm", "20000", "--Ri", "200", "--morphology", str(DEMO), "--shape", "alpha", "--current", "50 pA",
            "--time-to-peak", "0.5 ms", "--stimulus-at", "right.b", "--onset", "1 ms"]
    like = tmp_path / "like.csv"
    assert main(["reference", *case, "--rest", "-62 mV", "--like", str(run), "--output", str(like)]) == 0
    capsys.readouterr()
    rows = [line.split(",") for line in like.read_text(encoding="utf-8").splitlines() if not line.startswith("#")]
    assert rows[0] == ["time_s", "point", "voltage_V"]
    assert float(rows[1][0]) == 0.0  # the file's clock: the onset is at 1 ms
    assert {r[1] for r in rows[1:]} == {"soma", "right.b", "branch left +150 um"}
    assert all(float(r[2]) == 0.0 for r in rows[1:] if float(r[0]) < 1e-3)
    exact = _json(capsys, ["compare", str(like), *case, "--pass-within", "1 fV"])
    assert exact["runs"][0]["max_abs_error"]["value"] == 0.0
    simulated = _json(capsys, ["compare", str(run), *case, "--rest", "-62 mV", "--pass-within", "20 uV"], status=1)
    by_row = {(round(float(r[0]) * 1e6), r[1]): float(r[2]) for r in rows[1:]}
    worst = simulated["runs"][0]["worst"]
    key = (round((worst["time"]["value"] + 1e-3) * 1e6), worst["position"])
    assert by_row[key] == pytest.approx(worst["exact"]["value"], rel=1e-12)
