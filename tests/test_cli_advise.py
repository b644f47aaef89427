"""``cabletheory advise``: compartment advice for a cable and a tree, against exact values."""

from __future__ import annotations

import json

import pytest

from cabletheory.cli import main

CABLE = ["--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "500"]


def test_cable_advice_json(capsys) -> None:
    """Sealed demo cable (docs/sources.md): exact R_in 739.3466931 MΩ, computed; rule of thumb 19 compartments
    ([CP])."""
    assert main(["advise", *CABLE, "--target", "0.1%", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["relative_error"] <= 1e-3
    assert data["rule_of_thumb"]["compartments"] == [19]
    assert data["rule_of_thumb"]["relative_error"] < data["relative_error"]


def test_attenuation_advice_text(capsys) -> None:
    """Far-end attenuation 1/cosh L = 0.7932781817 (computed; Rall 1959 [Rall1959])."""
    assert main(["advise", *CABLE, "--quantity", "attenuation", "--target", "1e-4"]) == 0
    out = capsys.readouterr().out
    assert "exact V(site)/V(0)" in out
    assert "0.793278" in out
    assert "passive" in out


def test_tree_advice(capsys) -> None:
    """Demo tree of docs/sources.md, |Z_root(100 Hz)| = 44.86760779 MΩ (computed; Rall & Rinzel 1973
    [RallRinzel1973])."""
    argv = ["advise", "--Rm", "20000", "--Ri", "200", "--parents=-1,0,0,1,1,2,2",
            "--lengths", "300,300,300,200,200,200,200 um",
            "--diameters", "4,2.519842100,2.519842100,1.587401052,1.587401052,1.587401052,1.587401052 um",
            "--quantity", "impedance", "--target", "0.5%"]
    assert main(argv) == 0
    out = capsys.readouterr().out
    assert "exact |Z|              44.87 MΩ" in out
    assert "Compartments per branch" in out


@pytest.mark.parametrize(
    ("argv", "fragment"),
    [
        (["--target", "150%"], "--target"),
        (["--target", "0.1%", "--parents=-1,0", "--lengths", "1,2", "--diameters", "1"], "either"),
        (["--quantity", "time-course", "--target", "1%", "--read-at", "900um"], "--read-at"),
        (["--quantity", "time-course", "--target", "1%", "--end", "killed"], "--read-at: a killed end stays at rest"),
    ],
)
def test_bad_advice_requests(argv: list[str], fragment: str, capsys) -> None:
    assert main(["advise", *CABLE, *argv]) == 2
    assert fragment in capsys.readouterr().err


@pytest.mark.parametrize("extra", [["--end", "killed", "--read-at", "250um"], ["--end", "1nS"],
                                   ["--soma-diameter", "20um"]])
def test_time_course_advice_for_any_end_and_a_soma(extra: list[str], capsys) -> None:
    """Exact time course from cabletheory.transient (Rall 1969 [Rall1969] series / images): the advised count meets
    1 % and, at second order in Δx ([CP]), lies below the rule of thumb's 19 compartments (computed,
    docs/sources.md)."""
    assert main(["advise", *CABLE, *extra, "--quantity", "time-course", "--target", "1%", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["relative_error"] <= 0.01
    (n,) = data["compartments"]
    assert 4 <= n < data["rule_of_thumb"]["compartments"][0] == 19


# the demo tree of docs/sources.md as SWC points (no soma: input at the root point); each piece's length is
# the distance to its parent (300 µm trunk and daughters, 200 µm granddaughters)
SWC_TREE = """# demo tree of docs/sources.md
1 3 0 0 0 2.0 -1
2 3 300 0 0 2.0 1
3 3 600 0 0 1.25992105 2
4 3 300 300 0 1.25992105 2
5 3 800 0 0 0.793700526 3
6 3 600 200 0 0.793700526 3
7 3 300 500 0 0.793700526 4
8 3 500 300 0 0.793700526 4
"""


def test_tree_advice_reads_swc_as_the_tree_command_does(tmp_path, capsys) -> None:
    """An SWC file is read as SWC (not as a tree outline): demo tree of docs/sources.md, |Z_root(100 Hz)| =
    44.86760779 MΩ (computed), the same as the --parents/--lengths/--diameters form above."""
    swc = tmp_path / "cell.swc"
    swc.write_text(SWC_TREE, encoding="utf-8")
    assert main(["advise", "--Rm", "20000", "--Ri", "200", "--morphology", str(swc), "--quantity", "impedance",
                 "--target", "0.5%"]) == 0
    out = capsys.readouterr().out
    assert "exact |Z|              44.87 MΩ" in out
    assert "(7 SWC pieces)" in out


def test_tree_advice_on_the_bundled_swc(capsys) -> None:
    """The bundled interneuron (SWC) is advisable; its soma (from the file) is lumped at the root."""
    assert main(["advise", "--Rm", "20000", "--Ri", "200", "--morphology",
                 "cabletheory/data/morphologies/lumenia_pv7_interneuron.swc", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["relative_error"] <= 0.01
    assert len(data["compartments"]) > 100


@pytest.mark.parametrize(("extra", "message"), [
    (["--quantity", "attenuation"], "--quantity: attenuation is not available for a tree; choose "
                                    "input-resistance, impedance or (with --morphology) time-course"),
    (["--quantity", "time-course", "--read-at", "nowhere"], "--read-at: no point 'nowhere'"),
])
def test_tree_quantity_errors_name_the_option(tmp_path, capsys, extra: list[str], message: str) -> None:
    swc = tmp_path / "cell.swc"
    swc.write_text(SWC_TREE, encoding="utf-8")
    assert main(["advise", "--Rm", "20000", "--Ri", "200", "--morphology", str(swc), *extra]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"cabletheory: error: {message}")
    assert err.count("\n") == 1


def test_tapered_tree_is_refused_in_one_line(tmp_path, capsys) -> None:
    outline = tmp_path / "cell.outline"
    outline.write_text("trunk length=300 diameter=4..2\n", encoding="utf-8")
    assert main(["advise", "--Rm", "20000", "--Ri", "200", "--morphology", str(outline)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("cabletheory: error: --morphology: ")
    assert "tapered" in err
    assert err.count("\n") == 1


def test_tree_rows_are_named_by_the_file(capsys):
    """Each row of a tree's advice is the file's own branch (outline names, SWC ids), not an index,
    so it can be traced back to the morphology (issue: daily use)."""
    import json
    import pathlib

    outline = pathlib.Path(__file__).resolve().parents[1] / "cabletheory" / "data" / "morphologies" / (
        "lumenia_demo.outline")
    assert main(["advise", "--Rm", "20000", "--Ri", "200", "--morphology", str(outline), "--target", "1%"]) == 0
    out = capsys.readouterr().out
    assert "    trunk  0.3000" in out
    assert "  right.b  0.3175" in out
    assert main(["advise", "--Rm", "20000", "--Ri", "200", "--morphology", str(outline), "--target", "1%",
                 "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["branches"] == ["trunk", "left", "left.a", "left.b", "right", "right.a", "right.b"]
    assert len(data["branches"]) == len(data["compartments"])
