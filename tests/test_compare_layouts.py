"""compare reads what simulators and the package itself write, and says what looks wrong.

The exact values these files are built from come from ``cabletheory reference`` (checked against
[Rall1969] in tests/test_cli_reference.py); here a file that holds them exactly must pass at
1 µV whatever its layout, and a file with a deliberate mistake must draw the hint that names the
option to fix it.
"""

from __future__ import annotations

import csv
import io
import json

import pytest

from cabletheory.cli import main

BASE = ["--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "500", "--current", "100pA"]


def _run(capsys, argv):
    status = main(argv)
    out, err = capsys.readouterr()
    return status, out, err


@pytest.fixture
def exact_rows(capsys):
    """Rows [time ms, V at 0 (mV), V at 500 µm (mV)] of the exact solution, from `reference`."""
    assert main(["reference", *BASE, "--times", "0:5:0.5 ms", "--positions", "0, 500 um"]) == 0
    text = capsys.readouterr().out
    rows = list(csv.reader(io.StringIO("\n".join(line for line in text.splitlines() if not line.startswith("#")))))
    return rows[1:]


def _write(path, header, rows, delimiter=","):
    lines = ([delimiter.join(header)] if header else []) + [delimiter.join(r) for r in rows]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return str(path)


def _passes(capsys, argv):
    status, out, err = _run(capsys, [*argv, "--pass-within", "1 uV", "--json"])
    assert status == 0, err
    return json.loads(out)["runs"][0]


def test_the_package_reads_its_own_long_csv(tmp_path, capsys):
    own = tmp_path / "own.csv"
    assert main(["charge", *BASE, "--positions", "0, 500 um", "--times", "0:5:0.5 ms", "--csv", "--output",
                 str(own)]) == 0
    capsys.readouterr()
    run = _passes(capsys, ["compare", str(own), *BASE])
    assert run["layout"] == "long"
    assert run["units"] == {"time": "s", "position": "m", "voltage": "V"}


def test_tab_separated_file(tmp_path, capsys, exact_rows):
    path = _write(tmp_path / "run.tsv", ["time (ms)", "V at 0 um (mV)", "V at 500 um (mV)"], exact_rows, "\t")
    assert _passes(capsys, ["compare", path, *BASE])["samples"] == 2 * len(exact_rows)


def test_named_columns_mapped_to_positions(tmp_path, capsys, exact_rows):
    path = _write(tmp_path / "named.csv", ["t", "v_soma", "v_tip"], exact_rows)
    run = _passes(capsys, ["compare", path, *BASE, "--column-at", "V_SOMA=0 um, v_tip=500 um"])
    assert run["sites"]["value"] == pytest.approx([0.0, 5e-4])
    status, _, err = _run(capsys, ["compare", path, *BASE])
    assert status == 2
    assert "--column-at 'v_soma=250 um'" in err
    status, _, err = _run(capsys, ["compare", path, *BASE, "--column-at", "v_soma=0, v_tip=500, v_dend=100"])
    assert status == 2
    assert "no voltage column named 'v_dend'" in err


@pytest.mark.parametrize("bad", ["v_soma 0 um", "=5 um", "v=1 um, v=2 um", "v=1 mV"])
def test_bad_column_mapping_is_one_line(tmp_path, capsys, exact_rows, bad):
    path = _write(tmp_path / "named.csv", ["t", "v"], [r[:2] for r in exact_rows])
    status, _, err = _run(capsys, ["compare", path, *BASE, "--column-at", bad])
    assert status == 2
    assert "--column-at" in err
    assert err.count("\n") == 1


def test_headerless_two_and_three_column_files(tmp_path, capsys, exact_rows):
    two = _write(tmp_path / "two.csv", None, [r[:2] for r in exact_rows])
    run = _passes(capsys, ["compare", two, *BASE, "--column-at", "0"])
    assert {"time", "voltage"} <= set(run["assumed_units"])
    status, _, err = _run(capsys, ["compare", two, *BASE])
    assert status == 2
    assert "--column-at" in err
    three = _write(tmp_path / "three.csv", None, [[r[0], "500", r[2]] for r in exact_rows])
    assert _passes(capsys, ["compare", three, *BASE])["layout"] == "long"
    four = _write(tmp_path / "four.csv", None, [[*r, "1"] for r in exact_rows])
    status, _, err = _run(capsys, ["compare", four, *BASE])
    assert status == 2
    assert "no header and 4 columns" in err


def test_si_file_without_units_draws_a_unit_hint(tmp_path, capsys, exact_rows):
    rows = [[repr(float(r[0]) / 1e3), repr(float(r[1]) / 1e3)] for r in exact_rows]
    path = _write(tmp_path / "si.csv", ["time", "V at 0 um"], rows)
    status, out, _ = _run(capsys, ["compare", path, *BASE])
    assert status == 1
    assert "hint       the file declares no unit for time, voltage" in out
    assert "--time-unit" in out
    fixed = _passes(capsys, ["compare", path, *BASE, "--time-unit", "s", "--voltage-unit", "V"])
    assert fixed["hints"] == []


def test_unsubtracted_rest_and_wrong_onset_draw_hints(tmp_path, capsys, exact_rows):
    shifted = [[repr(float(r[0]) + 1.0), repr(float(r[1]) - 65.0)] for r in exact_rows]
    rows = [["0", "-65"], ["0.5", "-65"], *shifted]
    path = _write(tmp_path / "rest.csv", ["time (ms)", "V at 0 um (mV)"], rows)
    status, out, _ = _run(capsys, ["compare", path, *BASE, "--onset", "1 ms", "--json"])
    hints = json.loads(out)["runs"][0]["hints"]
    assert status == 1
    assert any("--rest" in h for h in hints)
    late = _write(tmp_path / "late.csv", ["time (ms)", "V at 0 um (mV)"], [r[:2] for r in exact_rows])
    status, out, _ = _run(capsys, ["compare", late, *BASE, "--onset", "100 ms"])
    assert status == 1
    assert "check --onset" in out
    assert "n/a (the exact voltage is 0 at every sample)" in out


def test_the_onset_sample_can_be_left_out(tmp_path, capsys, exact_rows):
    """A simulator whose sample at the switch already holds the first step's voltage fails at 1 µV
    because of that one sample; --skip-onset-sample leaves it out and the run passes."""
    rows = [list(r) for r in exact_rows]
    rows[0][1] = "0.5"  # the sample at t = 0 already charged
    path = _write(tmp_path / "early.csv", ["time (ms)", "V at 0 um (mV)", "V at 500 um (mV)"], rows)
    status, _, _ = _run(capsys, ["compare", path, *BASE, "--pass-within", "1 uV"])
    assert status == 1
    run = _passes(capsys, ["compare", path, *BASE, "--skip-onset-sample"])
    assert run["samples"] == 2 * (len(rows) - 1)
