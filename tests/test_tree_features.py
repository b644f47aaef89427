"""Response features on a whole tree (``charge --morphology``): the cylinder's figures, by the same function.

External checks: a tree of one cylinder (an outline with one branch, no soma) must give the
features of the same cylinder, whose features are checked against the closed-form RC response
[SciPy2020] and Rall's cosh attenuation [Rall1959] in tests/test_waveform.py; and a tree obeying
Rall's 3/2 rule with equal tips, fed at the soma, must give at the soma the features of its
equivalent ball and stick (the equivalent-cylinder reduction, Rall 1962 [Rall1962]).
"""

from __future__ import annotations

import json
import math
import pathlib

import pytest

from cabletheory.cli import main

ROOT = pathlib.Path(__file__).resolve().parents[1]
DEMO = ROOT / "cabletheory" / "data" / "morphologies" / "lumenia_demo.outline"
PV7 = ROOT / "cabletheory" / "data" / "morphologies" / "lumenia_pv7_interneuron.swc"
MEMBRANE = ["--Rm", "20000", "--Ri", "200"]
TIMES = ["--times", "0:10:5 ms"]
FIGURES = ("peak", "time_to_peak", "rise_time_10_90", "half_width", "attenuation")


def _json(capsys, argv):
    status = main([*argv, "--json"])
    out, err = capsys.readouterr()
    assert status == 0, err
    return json.loads(out)


def _same_figures(tree: dict, cable: dict, rel: float) -> None:
    assert tree["held"] == cable["held"]
    for key in FIGURES:
        a, b = tree[key]["value"], cable[key]["value"]
        assert tree[key]["unit"] == cable[key]["unit"]
        if b is None or (isinstance(b, float) and math.isnan(b)):
            assert a is None or math.isnan(a), key
        else:
            assert a == pytest.approx(b, rel=rel, abs=1e-15), key


@pytest.mark.parametrize(("stimulus", "site"), [
    (["--shape", "alpha", "--current", "100 pA", "--time-to-peak", "0.5 ms"], "root"),
    (["--shape", "alpha", "--current", "100 pA", "--time-to-peak", "0.5 ms"], "trunk"),
    (["--shape", "pulse", "--current", "200 pA", "--duration", "1 ms"], "root"),
    (["--shape", "step", "--current", "100 pA"], "root"),
    (["--voltage", "10 mV"], "root"),
])
def test_a_one_cylinder_tree_has_the_cylinders_features(tmp_path, capsys, stimulus, site):
    outline = tmp_path / "one.outline"
    outline.write_text("trunk length=500 diameter=2\n", encoding="utf-8")
    tree = _json(capsys, ["charge", *MEMBRANE, "--morphology", str(outline), *stimulus, "--stimulus-at", site,
                          "--positions", "root, trunk", *TIMES])
    at = [] if site == "root" else ["--stimulus-at", "500 um"]
    cylinder = _json(capsys, ["charge", *MEMBRANE, "--diameter", "2", "--length", "500", *stimulus, *at,
                              "--positions", "0, 500 um", *TIMES])
    assert [f["position"] for f in tree["features"]] == ["root", "trunk"]
    assert [set(f) for f in tree["features"]] == [set(f) for f in cylinder["features"]]
    for t, c in zip(tree["features"], cylinder["features"], strict=True):
        _same_figures(t, c, rel=1e-6)


@pytest.mark.parametrize("stimulus", [
    ["--shape", "alpha", "--current", "100 pA", "--time-to-peak", "1 ms"],
    ["--shape", "step", "--current", "100 pA"],
])
def test_a_tree_that_obeys_rall_has_the_features_of_its_ball_and_stick(capsys, stimulus):
    """The demo outline (20 µm soma, daughters obeying the 3/2 rule, equal tips) and the ball and stick
    of its equivalent cylinder, as the `tree` command reports it, fed and read at the soma."""
    eq = _json(capsys, ["tree", str(DEMO), *MEMBRANE])["equivalent_cylinder"]
    tree = _json(capsys, ["charge", *MEMBRANE, "--morphology", str(DEMO), *stimulus, "--positions", "soma", *TIMES])
    ball = _json(capsys, ["charge", *MEMBRANE, "--diameter", f"{eq['diameter']['value'] * 1e6!r} um",
                          "--length", f"{eq['length']['value'] * 1e6!r} um", "--soma-diameter", "20 um",
                          *stimulus, *TIMES])
    (t,), (b,) = tree["features"], ball["features"]
    assert t["position"] == "soma"
    _same_figures(t, b, rel=1e-6)


def test_features_on_a_branched_tree_read_as_text_and_attenuate_from_the_site(capsys):
    argv = ["charge", "--Rm", "20000", "--Ri", "150", "--morphology", str(PV7), "--shape", "alpha",
            "--current", "50pA", "--time-to-peak", "0.5ms", "--stimulus-at", "412", "--positions", "soma, 412",
            "--times", "0:4:2"]
    assert main(argv) == 0
    out = capsys.readouterr().out
    assert "Response features" in out
    table = out.split("Response features")[1].split("Error estimate")[0]
    rows = {line.split()[0]: line.split() for line in table.splitlines() if line.strip().startswith(("soma", "412"))}
    assert rows["412"][-1] == "1.000"  # the stimulus site is the scale of the attenuation
    data = _json(capsys, argv)
    soma, site = data["features"]
    # a distal input reaches the soma later, broader and much smaller (Rall & Rinzel 1973 [RallRinzel1973])
    assert soma["attenuation"]["value"] < 0.1
    assert soma["time_to_peak"]["value"] > site["time_to_peak"]["value"]
    assert soma["half_width"]["value"] > site["half_width"]["value"]
    # the peak of the exact solution is at least every sampled value
    assert soma["peak"]["value"] >= max(row[0] for row in data["voltage"]["value"]) * (1 - 1e-9)
    assert site["peak"]["value"] >= max(row[1] for row in data["voltage"]["value"]) * (1 - 1e-9)


def test_no_features_and_csv_leave_them_out(capsys):
    argv = ["charge", *MEMBRANE, "--morphology", str(DEMO), "--current", "100 pA", *TIMES]
    assert "features" not in _json(capsys, [*argv, "--no-features"])
    assert main([*argv, "--csv"]) == 0
    assert "Response features" not in capsys.readouterr().out
