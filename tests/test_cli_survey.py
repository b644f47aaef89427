"""``cabletheory survey``: the summary, the table and its header, the report, one-line errors."""

from __future__ import annotations

import csv
import shutil
from pathlib import Path

import pytest

from cabletheory.cli import main

ARCHIVE = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "archive"
MEMBRANE = ["--Rm", "20 kΩ·cm²", "--Ri", "150 Ω·cm"]


def run(capsys, argv):
    status = main(argv)
    out, err = capsys.readouterr()
    return status, out, err


def _rows(path: Path) -> list[dict[str, str]]:
    text = path.read_text(encoding="utf-8")
    return list(csv.DictReader(line for line in text.splitlines() if not line.startswith("#")))


def test_survey_of_the_bundled_archive(capsys, tmp_path):
    output = tmp_path / "survey.csv"
    status, out, err = run(capsys, ["survey", str(ARCHIVE), *MEMBRANE, "--output", str(output), "--workers", "1"])
    assert status == 0, err
    assert err == ""  # no progress line when stderr is not a terminal
    files = sorted(p for p in ARCHIVE.rglob("*.swc"))
    assert f"cells                                            {len(files)} ({len(files) - 3} analysed, 3 could" in out
    assert "lumenia_orphan.swc:" in out
    assert "parent 9999" in out
    assert "passive, linear, uniform membrane" in out
    text = output.read_text(encoding="utf-8")
    # the settings, with SI units, are in the table's header
    assert "# membrane_resistivity: 2.0 Ω·m²" in text
    assert "# axial_resistivity: 1.5 Ω·m" in text
    assert "# membrane_capacitance: 0.01 F/m²" in text
    assert "# ratio_tolerance: 0.05 1" in text
    assert "# tips: as in each file" in text
    rows = _rows(output)
    assert [r["path"] for r in rows] == sorted(str(f) for f in files)
    assert {r["status"] for r in rows} == {"ok", "error"}
    assert not Path(f"{output}.journal").exists()


def test_parquet_output_and_report(capsys, tmp_path):
    pytest.importorskip("pyarrow")
    output, report = tmp_path / "survey.parquet", tmp_path / "report.html"
    status, _, err = run(capsys, ["survey", str(ARCHIVE / "south_pool"), *MEMBRANE, "--output", str(output),
                                  "--report", str(report), "--workers", "1", "--tips", "killed"])
    assert status == 0, err
    import pyarrow.parquet as pq

    table = pq.read_table(output)
    assert table.num_rows == len(list((ARCHIVE / "south_pool").glob("*.swc")))
    assert b"killed" in table.schema.metadata[b"cabletheory"]
    page = report.read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>")
    assert "<svg" in page
    assert "cost of reduction" in page
    assert "passive, linear, uniform membrane" in page


@pytest.mark.parametrize(("extra", "message"), [
    (["--output", "{tmp}/t.xlsx"], "--output: '{tmp}/t.xlsx' must end in .csv or .parquet"),
    (["--output", "{tmp}/absent/t.csv"], "--output: folder '{tmp}/absent' does not exist"),
    (["--output", "{tmp}/t.csv", "--report", "{tmp}/r.pdf"], "--report: '{tmp}/r.pdf' must end in .html"),
    (["--output", "{tmp}/t.csv", "--Rm", "-5"], "--Rm"),
    (["--output", "{tmp}/t.csv", "--tips", "open"], "--tips: 'open' is not 'sealed', 'killed'"),
    (["--output", "{tmp}/t.csv", "--ratio-tolerance", "-0.1"], "--ratio-tolerance"),
    (["--output", "{tmp}/t.csv", "--workers", "0"], "--workers"),
    (["--output", "{tmp}/t.csv", "--scheduler", " "], "--scheduler: empty"),
])
def test_bad_input_is_one_line_status_2_and_writes_nothing(capsys, tmp_path, extra, message):
    argv = ["survey", str(ARCHIVE / "south_pool"), *MEMBRANE, *[e.format(tmp=tmp_path) for e in extra]]
    status, out, err = run(capsys, argv)
    assert status == 2
    assert out == ""
    assert err.count("\n") == 1
    assert message.format(tmp=tmp_path) in err
    assert list(tmp_path.iterdir()) == []


def test_a_pattern_that_matches_nothing_is_named(capsys, tmp_path):
    status, _, err = run(capsys, ["survey", str(tmp_path / "*.swc"), *MEMBRANE, "--output", str(tmp_path / "t.csv")])
    assert status == 2
    assert err == f"cabletheory: error: '{tmp_path}/*.swc' matches no file\n"


def test_an_unfinished_journal_needs_resume(capsys, tmp_path):
    output = tmp_path / "t.csv"
    journal = Path(f"{output}.journal")
    journal.write_text("{}\n", encoding="utf-8")
    status, _, err = run(capsys, ["survey", str(ARCHIVE / "south_pool"), *MEMBRANE, "--output", str(output)])
    assert status == 2
    assert "(--resume)" in err
    assert not output.exists()
    assert journal.read_text(encoding="utf-8") == "{}\n"


def test_an_input_file_is_not_overwritten(capsys, tmp_path):
    cell = tmp_path / "cell.csv"  # SWC text under another name: named on the command line, so it is an input
    cell.write_text("1 1 0 0 0 5 -1\n2 3 10 0 0 1 1\n", encoding="utf-8")
    status, _, err = run(capsys, ["survey", str(cell), *MEMBRANE, "--output", str(cell)])
    assert status == 2
    assert "is also an input file" in err
    assert cell.read_text(encoding="utf-8") == "1 1 0 0 0 5 -1\n2 3 10 0 0 1 1\n"


@pytest.mark.parametrize(("extra", "package", "hint"), [
    (["--output", "{tmp}/t.parquet"], "pyarrow", "pip install 'cabletheory[parquet]'"),
    (["--output", "{tmp}/t.csv", "--scheduler", "local"], "distributed", "pip install 'cabletheory[cluster]'"),
])
def test_a_missing_optional_package_is_one_line_naming_the_extra(capsys, monkeypatch, tmp_path, extra, package,
                                                                  hint):
    import importlib.util

    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec", lambda name, *a: None if name == package else real(name, *a))
    status, _, err = run(capsys, ["survey", str(ARCHIVE / "south_pool"), *MEMBRANE,
                                  *[e.format(tmp=tmp_path) for e in extra]])
    assert status == 2
    assert err.count("\n") == 1
    assert hint in err
    assert list(tmp_path.iterdir()) == []


def test_an_unreachable_scheduler_is_named(capsys, tmp_path, monkeypatch):
    """The command asks for a bounded wait (no hang); here the wait is cut to 1 s (the connection is
    refused at once and retried until the wait ends, so only the waiting is shorter)."""
    distributed = pytest.importorskip("distributed")
    real, asked = distributed.Client, []

    def client(*args, **options):
        asked.append(options.get("timeout"))
        return real(*args, **{**options, "timeout": 1})

    monkeypatch.setattr(distributed, "Client", client)
    status, _, err = run(capsys, ["survey", str(ARCHIVE / "south_pool"), *MEMBRANE, "--output",
                                  str(tmp_path / "t.csv"), "--scheduler", "tcp://127.0.0.1:1"])
    assert status == 2
    assert "cannot reach a Dask scheduler at 'tcp://127.0.0.1:1'" in err
    assert not (tmp_path / "t.csv").exists()
    assert len(asked) == 1
    assert asked[0] is not None
    assert 0 < asked[0] <= 60


def test_survey_reads_tree_outlines_with_their_tip_ends(capsys, tmp_path):
    """An outline in the folder is read like `tree` reads it, units and per-tip ends included."""
    folder = tmp_path / "cells"
    folder.mkdir()
    demo = ARCHIVE.parent / "morphologies" / "lumenia_demo.outline"
    (folder / "demo.outline").write_text(demo.read_text(encoding="utf-8"), encoding="utf-8")
    (folder / "leaky.outline").write_text("trunk length=0.3mm diameter=4um\n"
                                          "  left length=300 diameter=2.52 end=0.2nS\n"
                                          "  right length=300 diameter=2.52 end=killed\n", encoding="utf-8")
    output = tmp_path / "survey.csv"
    status, _, err = run(capsys, ["survey", str(folder), *MEMBRANE, "--output", str(output), "--workers", "1"])
    assert status == 0, err
    rows = {Path(r["path"]).name: r for r in _rows(output)}
    assert {r["status"] for r in rows.values()} == {"ok"}
    assert {r["format"] for r in rows.values()} == {"outline"}
    assert rows["demo.outline"]["reducible"] in {"True", "true", "1", "yes"}
    assert rows["leaky.outline"]["reducible"] in {"False", "false", "0", "no"}


def test_outlines_are_surveyed_and_a_leaky_tip_is_recorded(capsys, tmp_path):
    demo = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"
    shutil.copy(demo / "lumenia_demo.outline", tmp_path / "demo.outline")
    shutil.copy(next(ARCHIVE.rglob("lumenia_00003.swc")), tmp_path / "cell.swc")
    output = tmp_path / "t.csv"
    status, _, err = run(capsys, ["survey", str(tmp_path), *MEMBRANE, "--output", str(output), "--workers", "1",
                                  "--tips", "0.5 nS"])
    assert status == 0, err
    assert "# tips: 5e-10 S" in output.read_text(encoding="utf-8")
    rows = {Path(r["path"]).name: r for r in _rows(output)}
    assert rows["demo.outline"]["format"] == "outline"
    assert rows["cell.swc"]["format"] == "SWC"
    assert {r["status"] for r in rows.values()} == {"ok"}


def test_progress_line_shows_cells_rate_and_time_left(capsys, monkeypatch):
    from cabletheory.cli import survey as command

    clock = iter([0.0, 0.0, 0.0, 10.0, 20.0] + [30.0] * 5)
    monkeypatch.setattr(command.time, "monotonic", lambda: next(clock))
    progress = command.Progress(enabled=True)
    progress(0, 300)
    progress(100, 300)
    progress(300, 300)
    progress.finish()
    err = capsys.readouterr().err
    assert "\rsurvey: 100/300 cells (33 %), 10.0 cells/s, about 20 s left" in err
    assert "\rsurvey: 300/300 cells (100 %), 15.0 cells/s\x1b[K\n" in err
    quiet = command.Progress(enabled=False)
    quiet(5, 10)
    quiet.finish()
    assert capsys.readouterr().err == ""
