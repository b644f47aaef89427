"""``charge --morphology``: the exact time course on a whole tree from the command line.

External check: a tree of one cylinder (an outline with one branch, no soma) must give the time
course of the same cylinder, whose solution is checked against Rall (1969) [Rall1969] in
tests/test_transient_reference.py; and a tree obeying Rall's 3/2 rule with equal tips, fed at the
soma, must give at the soma the ball and stick of its equivalent cylinder (Rall 1962, the
equivalent-cylinder reduction [Rall1962]).
"""

from __future__ import annotations

import json
import pathlib

import numpy as np
import pytest

from cabletheory.cli import main

ROOT = pathlib.Path(__file__).resolve().parents[1]
DEMO = ROOT / "cabletheory" / "data" / "morphologies" / "lumenia_demo.outline"
PV7 = ROOT / "cabletheory" / "data" / "morphologies" / "lumenia_pv7_interneuron.swc"
MEMBRANE = ["--Rm", "20000", "--Ri", "200"]


def _json(capsys, argv):
    status = main([*argv, "--json"])
    out, err = capsys.readouterr()
    assert status == 0, err
    return json.loads(out)


@pytest.mark.parametrize(("shape", "extra"), [("step", []), ("pulse", ["--duration", "1 ms"]),
                                              ("alpha", ["--time-to-peak", "0.5 ms"])])
def test_a_one_cylinder_tree_is_the_cylinder(tmp_path, capsys, shape, extra):
    outline = tmp_path / "one.outline"
    outline.write_text("trunk length=500 diameter=2\n", encoding="utf-8")
    stimulus = ["--shape", shape, "--current", "100 pA", *extra]
    tree = _json(capsys, ["charge", *MEMBRANE, "--morphology", str(outline), *stimulus, "--stimulus-at", "root",
                          "--positions", "root, trunk", "--times", "0:10:1 ms"])
    cylinder = _json(capsys, ["charge", *MEMBRANE, "--diameter", "2", "--length", "500", *stimulus,
                              "--positions", "0, 500 um", "--times", "0:10:1 ms", "--no-features"])
    np.testing.assert_allclose(tree["voltage"]["value"], cylinder["voltage"]["value"], rtol=1e-8, atol=1e-14)
    assert tree["positions"] == ["root", "trunk"]


def test_a_tree_that_obeys_rall_is_its_equivalent_ball_and_stick(capsys):
    """The demo outline: a 20 µm soma and a 4 µm trunk whose daughters obey the 3/2 rule, all tips at
    the same electrotonic distance. Its equivalent cylinder (diameter and length as the `tree` command
    reports them) with the same soma is a ball and stick whose soma response the tree must match."""
    report = _json(capsys, ["tree", str(DEMO), *MEMBRANE])
    eq = report["equivalent_cylinder"]
    length_um = eq["length"]["value"] * 1e6
    diameter_um = eq["diameter"]["value"] * 1e6
    tree = _json(capsys, ["charge", *MEMBRANE, "--morphology", str(DEMO), "--current", "100 pA",
                          "--positions", "soma", "--times", "0:20:2 ms"])
    ball = _json(capsys, ["charge", *MEMBRANE, "--diameter", f"{diameter_um!r} um", "--length", f"{length_um!r} um",
                          "--soma-diameter", "20 um", "--current", "100 pA", "--times", "0:20:2 ms",
                          "--no-features"])
    np.testing.assert_allclose(tree["voltage"]["value"], ball["voltage"]["value"], rtol=1e-7, atol=1e-13)


def test_text_output_names_points_and_the_error_estimate(capsys):
    status = main(["charge", "--Rm", "20000", "--Ri", "150", "--morphology", str(PV7), "--shape", "alpha",
                   "--current", "50pA", "--time-to-peak", "0.5ms", "--stimulus-at", "412", "--positions",
                   "soma, 412", "--times", "0:4:2"])
    out = capsys.readouterr().out
    assert status == 0
    assert "V at soma  V at 412" in out
    assert "Error estimate: every voltage above is within" in out
    assert "passive, linear, uniform membrane" in out


@pytest.mark.parametrize(("extra", "message"), [
    (["--diameter", "2"], "--diameter: the morphology gives the geometry"),
    (["--infinite"], "--infinite: a morphology is a finite tree"),
    (["--end", "killed"], "--end: a tree has tips"),
    (["--stimulus-at", "99999"], "--stimulus-at: no point '99999'"),
    (["--positions", "soma, 99999"], "--positions: no point '99999'"),
    (["--positions", "soma,,412"], "--positions: empty point label"),
    (["--voltage", "10 mV", "--stimulus-at", "412"], "--stimulus-at: a voltage clamp on a tree holds the root"),
    (["--duration", "1 ms"], "--duration: does not apply to a step"),
    (["--tips", "floppy"], "--tips"),
    (["--truncation", "2"], "--truncation"),
])
def test_bad_tree_options_give_one_line(capsys, extra, message):
    argv = ["charge", *MEMBRANE, "--morphology", str(PV7), *extra]
    if "--voltage" not in extra:
        argv += ["--current", "10 pA"]
    status = main(argv)
    err = capsys.readouterr().err
    assert status == 2
    assert message in err
    assert err.count("\n") == 1


def test_reference_writes_the_tree_table(tmp_path, capsys):
    """reference --morphology writes the same values as charge --morphology, as CSV rows or JSON."""
    argv = [*MEMBRANE, "--morphology", str(PV7), "--current", "50pA", "--stimulus-at", "412",
            "--positions", "soma, 412", "--times", "0:4:2 ms"]
    out = tmp_path / "tree.csv"
    assert main(["reference", *argv, "--output", str(out)]) == 0
    rows = [line for line in out.read_text(encoding="utf-8").splitlines() if not line.startswith("#")]
    assert rows[0] == "time_s,point,voltage_V"
    assert len(rows) == 1 + 3 * 2
    assert "wrote" in capsys.readouterr().out
    charge = _json(capsys, ["charge", *argv])
    values = [float(r.split(",")[2]) for r in rows[1:]]
    np.testing.assert_allclose(values, np.ravel(charge["voltage"]["value"]), rtol=1e-6, atol=1e-15)
    data_path = tmp_path / "tree.json"
    assert main(["reference", *argv, "--output", str(data_path)]) == 0
    assert json.loads(data_path.read_text(encoding="utf-8"))["positions"] == ["soma", "412"]
    assert main(["reference", *argv[:-4], "--output", str(tmp_path / "x.csv")]) == 2
