"""``cabletheory tree``: the report on every bundled morphology, the JSON keys, one-line errors."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from cabletheory.cli import main

DATA = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"
BUNDLED = sorted(DATA.iterdir())
MEMBRANE = ["--Rm", "20 kΩ·cm²", "--Ri", "200 Ω·cm"]


def run(capsys, argv):
    status = main(argv)
    out, err = capsys.readouterr()
    return status, out, err


def test_bundled_files_exist():
    names = {p.name for p in BUNDLED}
    assert {"lumenia_lw1_conforming.swc", "lumenia_pv7_interneuron.swc", "lumenia_demo.outline"} <= names


@pytest.mark.parametrize("path", BUNDLED, ids=lambda p: p.name)
def test_full_report_on_every_bundled_morphology(capsys, path):
    status, out, err = run(capsys, ["tree", str(path), *MEMBRANE])
    assert status == 0, err
    assert err == ""
    for heading in ("Conventions", "Audit of Rall's conditions", "Stem dendrites", "Verdict:",
                    "Equivalent cylinder", "Steady-state input resistance", "Equivalent cable"):
        assert heading in out
    assert "passive, linear, uniform membrane" in out
    assert "20.00 kΩ·cm²" in out
    assert "200.0 Ω·cm" in out


@pytest.mark.parametrize("path", BUNDLED, ids=lambda p: p.name)
def test_json_has_the_required_keys(capsys, path):
    status, out, _ = run(capsys, ["tree", str(path), *MEMBRANE, "--json"])
    assert status == 0
    data = json.loads(out)
    assert isinstance(data["reducible"], bool)
    assert isinstance(data["reasons"], list)
    assert all({"id", "ratio"} <= set(bp) for bp in data["branch_points"])
    assert all({"id", "electrotonic_distance"} <= set(tip) for tip in data["tips"])
    for key in ("diameter", "length", "electrotonic_length"):
        assert set(data["equivalent_cylinder"][key]) == {"value", "unit"}
    assert data["equivalent_cylinder"]["diameter"]["unit"] == "m"
    for key in ("input_resistance", "reduced_input_resistance"):
        assert data[key]["unit"] == "ohm"
        assert data[key]["value"] > 0
    assert "passive" in data["assumptions"]


def test_json_values_of_the_demo_tree(capsys):
    """Demo tree of docs/sources.md (computed; Rall 1959/1964 [Rall1959] [Rall1964], 1969 [Rall1969])."""
    _, out, _ = run(capsys, ["tree", str(DATA / "lumenia_demo.outline"), *MEMBRANE, "--json"])
    data = json.loads(out)
    assert data["reducible"] is True
    assert data["reasons"] == []
    assert data["input_resistance"]["value"] == pytest.approx(185.1329030e6, rel=1e-9)
    assert data["input_resistance_includes_soma"] is True
    assert data["equivalent_cylinder"]["electrotonic_length"]["value"] == pytest.approx(0.9954565254, rel=1e-9)
    assert data["conductance_ratio"] == pytest.approx(7.596794008, rel=1e-9)
    assert [bp["id"] for bp in data["branch_points"]] == ["trunk", "left", "right"]


def test_json_equivalent_cable_is_averaged_over_the_bins_asked_for(capsys):
    """A tree that meets Rall's conditions reduces to a cylinder: Σd^3/2 equals the trunk's D^3/2 at every
    X up to the tips (Rall 1964 [Rall1964]), so every bin's mean is 1 relative to the trunk; the bins
    cover 0 to the tips' electrotonic distance, as many as --bins asks for (the text table's rows)."""
    _, out, _ = run(capsys, ["tree", str(DATA / "lumenia_demo.outline"), *MEMBRANE, "--json", "--bins", "5"])
    data = json.loads(out)
    cable = data["equivalent_cable"]
    assert cable["bins"] == 5
    starts, ends = cable["bin_start"]["value"], cable["bin_end"]["value"]
    assert len(starts) == len(ends) == len(cable["diameter_sum"]["value"]) == 5
    assert starts[0] == 0.0
    assert starts[1:] == ends[:-1]
    assert ends[-1] == pytest.approx(data["tip_distance"]["max"], rel=1e-12)
    assert cable["relative"]["value"] == pytest.approx([1.0] * 5, rel=1e-9)
    assert cable["diameter_sum"]["unit"] == "m**1.5"


def test_swc_ids_are_integers_and_reasons_are_given(capsys):
    _, out, _ = run(capsys, ["tree", str(DATA / "lumenia_pv7_interneuron.swc"), *MEMBRANE, "--json"])
    data = json.loads(out)
    assert data["reducible"] is False
    assert len(data["reasons"]) == 3
    assert all(isinstance(bp["id"], int) for bp in data["branch_points"])
    assert all(isinstance(t["id"], int) for t in data["tips"])
    assert data["soma"]["convention"] == "outline"


def test_bare_numbers_use_customary_units(capsys):
    path = str(DATA / "lumenia_demo.outline")
    _, with_units, _ = run(capsys, ["tree", path, *MEMBRANE, "--Cm", "1 µF/cm²"])
    _, bare, _ = run(capsys, ["tree", path, "--Rm", "20000", "--Ri", "200", "--Cm", "1"])
    assert bare == with_units


def test_options_change_what_is_analysed(capsys):
    path = str(DATA / "lumenia_pv7_interneuron.swc")
    counts = {}
    for extra in ([], ["--axon"], ["--types", "basal"], ["--types", "4"], ["--taper"]):
        _, out, _ = run(capsys, ["tree", path, *MEMBRANE, "--json", *extra])
        data = json.loads(out)
        counts[" ".join(extra)] = (data["pieces"], data["geometry"], {s["type"] for s in data["stems"]})
    assert counts["--axon"][0] > counts[""][0]
    assert counts["--types basal"][2] == {3}
    assert counts["--types 4"][2] == {4}
    assert counts["--taper"][1] == "frusta"
    _, out, _ = run(capsys, ["tree", path, *MEMBRANE, "--json", "--ratio-tolerance", "10", "--tip-tolerance", "10"])
    assert json.loads(out)["reducible"] is True


def test_killed_tips_lower_the_input_resistance(capsys):
    path = str(DATA / "lumenia_demo.outline")
    _, sealed, _ = run(capsys, ["tree", path, *MEMBRANE, "--json"])
    _, killed, _ = run(capsys, ["tree", path, *MEMBRANE, "--json", "--tips", "killed"])
    assert json.loads(killed)["input_resistance"]["value"] < json.loads(sealed)["input_resistance"]["value"]


def test_leaky_tips_lie_between_sealed_and_killed(capsys):
    path = str(DATA / "lumenia_demo.outline")
    values = {}
    for end in ("sealed", "0.5 nS", "killed"):
        _, out, _ = run(capsys, ["tree", path, *MEMBRANE, "--json", "--tips", end])
        data = json.loads(out)
        values[end] = data["input_resistance"]["value"]
        assert data["reducible"] is True  # every tip ends alike
    assert values["killed"] < values["0.5 nS"] < values["sealed"]
    assert json.loads(out)["tips"][0]["end"] == "killed"


def test_an_outline_can_end_each_tip_its_own_way(capsys, tmp_path):
    path = tmp_path / "cell.outline"
    path.write_text("soma diameter=20\ntrunk length=300 diameter=4\n"
                    "  left length=300 diameter=2.52 end=killed   # held at rest\n"
                    "  right length=300 diameter=2.52 end=0.2nS\n", encoding="utf-8")
    status, out, _ = run(capsys, ["tree", str(path), *MEMBRANE])
    assert status == 0
    assert "as in the file: 1 killed, 1 leaky" in out
    assert "tip left (line 3): end-conductance ratio B = inf, unlike the other tips" in out \
        or "tip right (line 4): end-conductance ratio" in out
    _, out, _ = run(capsys, ["tree", str(path), *MEMBRANE, "--json"])
    data = json.loads(out)
    assert data["inputs"]["tips"] == "as in the file"
    assert [t["end"] for t in data["tips"]] == ["killed", {"value": pytest.approx(2e-10), "unit": "S"}]
    assert "tip_end" in {v["kind"] for v in data["violations"]}


def test_bad_tips_option_exit_2(capsys):
    status, out, err = run(capsys, ["tree", str(DATA / "lumenia_demo.outline"), *MEMBRANE, "--tips", "open"])
    assert out == ""
    assert status == 2
    assert err.startswith("cabletheory: error: --tips: 'open' is not 'sealed', 'killed' or a conductance")


@pytest.mark.parametrize("suffix", [".png", ".svg"])
def test_plot_is_written(capsys, tmp_path, suffix):
    target = tmp_path / f"profile{suffix}"
    status, out, _ = run(capsys, ["tree", str(DATA / "lumenia_pv7_interneuron.swc"), *MEMBRANE,
                                  "--plot", str(target)])
    assert status == 0
    assert target.stat().st_size > 1000
    assert f"plot written to {target}" in out
    head = target.read_bytes()[:8]
    assert head.startswith(b"\x89PNG") if suffix == ".png" else b"<?xml" in head


BAD_FILES = [
    ("empty.swc", "", "no points"),
    ("fields.swc", "1 1 0 0 0 5 -1\n2 3 10 0 0 1\n", "fields.swc:2: 6 fields"),
    ("orphan.swc", "1 1 0 0 0 5 -1\n2 3 10 0 0 1 7\n", "orphan.swc:2: parent 7"),
    ("cycle.swc", "1 1 0 0 0 5 -1\n2 3 10 0 0 1 3\n3 3 20 0 0 1 2\n", "cycle.swc:2:"),
    ("roots.swc", "1 1 0 0 0 5 -1\n2 3 10 0 0 1 -1\n", "roots.swc:2: several roots"),
    ("dup.swc", "1 1 0 0 0 5 -1\n2 3 10 0 0 1 1\n2 3 20 0 0 1 1\n", "dup.swc:3: duplicate id 2"),
    ("radius.swc", "1 1 0 0 0 5 -1\n2 3 10 0 0 -2 1\n", "radius.swc:2: radius -2"),
    ("nan.swc", "1 1 0 0 0 5 -1\n2 3 10 nan 0 1 1\n", "nan.swc:2: field 'y'"),
    ("text.swc", "1 1 0 0 0 5 -1\n2 dendrite 10 0 0 1 1\n", "text.swc:2: field 'type'"),
    ("bad.outline", "a length=10um diameter=2\n  b length=10 diameter=2zz\n", "bad.outline:2:24: diameter"),
    ("tab.outline", "a length=10 diameter=2\n\tb length=10 diameter=1\n", "tab.outline:2:1: tab in the indentation"),
    ("old.outline", "a root 10 2\n", "old.outline:1:3: 'root' is not a field"),
]


@pytest.mark.parametrize(("name", "content", "message"), BAD_FILES)
def test_bad_files_exit_2_with_one_line(capsys, tmp_path, name, content, message):
    path = tmp_path / name
    path.write_text(content)
    status, out, err = run(capsys, ["tree", str(path), *MEMBRANE])
    assert status == 2
    assert out == ""
    assert err.startswith("cabletheory: error: ")
    assert message in err
    assert err.count("\n") == 1
    assert "Traceback" not in err


def test_binary_file_exit_2(capsys, tmp_path):
    path = tmp_path / "image.swc"
    path.write_bytes(b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR")
    status, _, err = run(capsys, ["tree", str(path), *MEMBRANE])
    assert status == 2
    assert "binary or undecodable data" in err


@pytest.mark.parametrize(("argv", "message"), [
    (["--Rm", "20 kΩ·cm²"], "--Ri"),
    (["--Rm", "2 pF", "--Ri", "200"], "--Rm"),
    (["--Rm", "-5", "--Ri", "200"], "--Rm"),
    ([*MEMBRANE, "--types", "fins"], "--types"),
    ([*MEMBRANE, "--ratio-tolerance", "-1"], "--ratio-tolerance"),
    ([*MEMBRANE, "--plot", "out.pdf"], "--plot"),
    ([*MEMBRANE, "--bins", "0"], "--bins"),
])
def test_bad_options_exit_2(capsys, argv, message):
    status, out, err = run(capsys, ["tree", str(DATA / "lumenia_demo.outline"), *argv])
    assert status == 2
    assert message in err
    assert out == ""


def test_missing_file_exit_2(capsys, tmp_path):
    status, _, err = run(capsys, ["tree", str(tmp_path / "absent.swc"), *MEMBRANE])
    assert status == 2
    assert "does not exist" in err


def test_plot_never_overwrites_the_input(capsys, tmp_path):
    path = tmp_path / "cell.svg"  # a morphology whose name ends like a plot
    original = "1 1 0 0 0 5 -1\n2 3 20 0 0 1 1\n"
    path.write_text(original)
    status, _, err = run(capsys, ["tree", str(path), *MEMBRANE, "--plot", str(path)])
    assert status == 2
    assert "also an input file" in err
    assert path.read_text() == original


def test_nothing_is_written_on_bad_input(capsys, tmp_path):
    bad = tmp_path / "bad.swc"
    bad.write_text("1 1 0 0 0 5 -1\n2 3 10 0 0 1 9\n")
    target = tmp_path / "plot.png"
    status, _, _ = run(capsys, ["tree", str(bad), *MEMBRANE, "--plot", str(target)])
    assert status == 2
    assert not target.exists()


def test_without_soma_the_output_says_so(capsys, tmp_path):
    """No soma: input at the root point, soma membrane excluded, and both text and JSON say so.

    A single sealed cylinder, the demo cable of docs/sources.md (d = 2 µm, ℓ = 500 µm,
    Rm 20 kΩ·cm², Ri 200 Ω·cm): R_in = R∞ coth L = 739.3466931 MΩ, computed (Rall 1959 [Rall1959]).
    """
    path = tmp_path / "stick.swc"
    path.write_text("1 3 0 0 0 1 -1\n2 3 250 0 0 1 1\n3 3 500 0 0 1 2\n")
    status, out, _ = run(capsys, ["tree", str(path), *MEMBRANE])
    assert status == 0
    assert "not included (the file has no soma)" in out
    assert "input at the root point 1" in out
    _, out, _ = run(capsys, ["tree", str(path), *MEMBRANE, "--json"])
    data = json.loads(out)
    assert data["soma"] is None
    assert data["input_resistance_includes_soma"] is False
    assert data["conductance_ratio"] is None
    assert data["input_resistance"]["value"] == pytest.approx(739.3466931e6, rel=1e-9)
