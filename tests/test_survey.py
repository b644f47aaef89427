"""The survey core: one row per file checked against Rall's closed forms, bad files as rows, the same
table from every runner, and a journal that survives an interruption."""

from __future__ import annotations

import csv
import json
import math
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from cabletheory.errors import InputError, MissingFileError
from cabletheory.survey import (
    COLUMN_NAMES,
    DaskRunner,
    Journal,
    PoolRunner,
    SerialRunner,
    SurveySettings,
    audit_file,
    find_files,
    make_batches,
    read_table,
    run_survey,
    table_csv,
)
from cabletheory.tree import Tolerances

ARCHIVE = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "archive"
BROKEN = {"lumenia_cut_short.swc", "lumenia_no_points.swc", "lumenia_orphan.swc"}
SETTINGS = SurveySettings(membrane_resistivity=2.0, axial_resistivity=1.5, membrane_capacitance=0.01)


def _symmetric_cell(path: Path, soma_radius_um: float = 10.0) -> None:
    """Soma + one trunk (4 µm x 300 µm) + two daughters of the 3/2 rule (200 µm), straight cylinders."""
    d0 = 4.0
    d1 = d0 * 2.0 ** (-2.0 / 3.0)
    r = soma_radius_um
    path.write_text("\n".join([
        f"1 1 0 0 0 {r} -1",
        f"2 3 {r + 300} 0 0 {d0 / 2} 1",
        f"3 3 {r + 300} 200 0 {d1 / 2} 2",
        f"4 3 {r + 300} -200 0 {d1 / 2} 2",
    ]) + "\n", encoding="utf-8")


def test_row_of_a_symmetric_cell_matches_rall_closed_forms(tmp_path):
    """A tree that meets Rall's conditions: L = Σ ℓ/λ, R_N = 1 / (G_S + tanh(L)/R∞(D)) with
    R∞ = 4 Ri λ / (π D²) (Rall 1959 [Rall1959]; Rall 1964 [Rall1964]); computed here independently."""
    cell = tmp_path / "symmetric.swc"
    _symmetric_cell(cell)
    row = audit_file(str(cell), SETTINGS)
    rm, ri = SETTINGS.membrane_resistivity, SETTINGS.axial_resistivity
    d0, d1 = 4e-6, 4e-6 * 2.0 ** (-2.0 / 3.0)

    def lam(d: float) -> float:
        return math.sqrt(rm * d / (4 * ri))

    big_l = 300e-6 / lam(d0) + 200e-6 / lam(d1)
    r_inf = 4 * ri * lam(d0) / (math.pi * d0**2)
    g_soma = 4 * math.pi * (10e-6) ** 2 / rm
    expected = 1.0 / (g_soma + math.tanh(big_l) / r_inf)
    assert row["status"] == "ok"
    assert row["error"] == ""
    assert row["reducible"] is True
    assert row["reasons"] == ""
    assert (row["branch_points"], row["tips"], row["stems"]) == (1, 2, 1)
    assert row["ratio_min"] == pytest.approx(1.0, rel=1e-12)
    assert row["tip_spread"] == pytest.approx(0.0, abs=1e-12)
    assert row["electrotonic_length"] == pytest.approx(big_l, rel=1e-12)
    assert row["cylinder_diameter_m"] == pytest.approx(d0, rel=1e-12)
    assert row["input_resistance_ohm"] == pytest.approx(expected, rel=1e-12)
    assert row["reduced_input_resistance_ohm"] == pytest.approx(expected, rel=1e-12)
    assert abs(row["difference_percent"]) < 1e-9
    # ρ = G_D/G_S (Rall 1969 [Rall1969])
    assert row["conductance_ratio"] == pytest.approx(math.tanh(big_l) / r_inf / g_soma, rel=1e-12)
    assert set(row) == set(COLUMN_NAMES)


def test_a_broken_3_2_rule_is_reported_with_its_reason(tmp_path):
    cell = tmp_path / "thick.swc"
    cell.write_text("1 1 0 0 0 10 -1\n2 3 310 0 0 2 1\n3 3 310 200 0 2 2\n4 3 310 -200 0 2 2\n", encoding="utf-8")
    row = audit_file(str(cell), SETTINGS)
    assert row["reducible"] is False
    assert row["ratio_worst"] == pytest.approx(2.0, rel=1e-12)  # 2 · 4^1.5 / 4^1.5
    assert row["ratio_outside"] == 1
    assert row["reasons"].startswith("3/2 rule: 1 of 1 branch points")


@pytest.mark.parametrize("name", sorted(BROKEN))
def test_a_bad_file_is_a_row_with_its_error(name):
    path = next(ARCHIVE.rglob(name))
    row = audit_file(str(path), SETTINGS)
    assert row["status"] == "error"
    assert row["error"].startswith(str(path))
    assert row["reducible"] is None
    assert row["input_resistance_ohm"] is None


def test_a_missing_file_is_a_row_and_the_worker_names_the_path_as_found(tmp_path):
    gone = tmp_path / "gone.swc"
    row = audit_file(str(gone), SETTINGS, name="archive/gone.swc")
    assert row["status"] == "error"
    assert row["path"] == "archive/gone.swc"
    assert "archive/gone.swc" in row["error"]
    assert str(tmp_path) not in row["error"]


def test_find_files_searches_folders_and_globs_and_names_what_matches_nothing(tmp_path):
    files = find_files([str(ARCHIVE)])
    assert len(files) >= 20
    assert {Path(f).name for f in files} >= BROKEN
    assert files == sorted(files)
    pattern = str(ARCHIVE / "**" / "lumenia_0000*.swc")
    assert find_files([pattern, pattern]) == sorted(set(find_files([pattern])))
    with pytest.raises(InputError, match="matches no file"):
        find_files([str(tmp_path / "*.swc")])
    with pytest.raises(InputError, match="holds no morphology"):
        find_files([str(tmp_path)])
    with pytest.raises(MissingFileError):
        find_files([str(tmp_path / "absent")])


def test_batches_cover_every_job_once():
    jobs = [(str(k), str(k)) for k in range(10)]
    batches = make_batches(jobs, 4)
    assert [len(b) for b in batches] == [4, 4, 2]
    assert [j for b in batches for j in b] == jobs
    with pytest.raises(InputError):
        make_batches(jobs, 0)


def _table(runner, journal: Path, batch_size: int | None = None) -> str:
    files = find_files([str(ARCHIVE)])
    result = run_survey(files, SETTINGS, runner, journal, batch_size=batch_size)
    assert [r["path"] for r in result.rows] == files
    return table_csv(result.rows, SETTINGS)


def test_the_same_table_bit_for_bit_from_one_process_a_pool_and_a_dask_cluster(tmp_path):
    serial = _table(SerialRunner(), tmp_path / "a.journal")
    assert _table(PoolRunner(2), tmp_path / "b.journal", batch_size=3) == serial
    pytest.importorskip("distributed")
    assert _table(DaskRunner(None, 2), tmp_path / "c.journal", batch_size=5) == serial
    rows = list(csv.DictReader(r for r in serial.splitlines() if not r.startswith("#")))
    assert len(rows) == len(find_files([str(ARCHIVE)]))
    assert sorted(Path(r["path"]).name for r in rows if r["status"] == "error") == sorted(BROKEN)


def test_a_table_reads_back_to_the_same_rows(tmp_path):
    files = find_files([str(ARCHIVE)])
    result = run_survey(files, SETTINGS, SerialRunner(), tmp_path / "j")
    (tmp_path / "t.csv").write_text(table_csv(result.rows, SETTINGS), encoding="utf-8")
    rows, comments = read_table(tmp_path / "t.csv")
    assert rows == list(result.rows)
    assert "membrane_resistivity: 2.0 Ω·m²" in comments
    assert any(c.startswith("tool: cabletheory") for c in comments)


def test_parquet_holds_the_same_rows_and_the_settings(tmp_path):
    pytest.importorskip("pyarrow")
    from cabletheory.survey import table_parquet

    files = find_files([str(ARCHIVE)])
    result = run_survey(files, SETTINGS, SerialRunner(), tmp_path / "j")
    (tmp_path / "t.parquet").write_bytes(table_parquet(result.rows, SETTINGS))
    rows, comments = read_table(tmp_path / "t.parquet")
    assert rows == list(result.rows)
    assert "axial_resistivity: 1.5 Ω·m" in comments


# --------------------------------------------------------------------------------------
# the journal
# --------------------------------------------------------------------------------------
def test_a_journal_in_the_way_needs_resume_and_the_same_settings(tmp_path):
    files = find_files([str(ARCHIVE / "south_pool")])
    journal = tmp_path / "t.csv.journal"
    run_survey(files[:3], SETTINGS, SerialRunner(), journal)
    with pytest.raises(InputError, match="unfinished survey"):
        run_survey(files, SETTINGS, SerialRunner(), journal)
    other = SurveySettings(2.0, 1.5, tolerances=Tolerances(branch_ratio=0.1))
    with pytest.raises(InputError, match=r"ratio_tolerance 0\.05 then, 0\.1 now"):
        run_survey(files, other, SerialRunner(), journal, resume=True)
    result = run_survey(files, SETTINGS, SerialRunner(), journal, resume=True)
    assert (result.reused, result.computed) == (3, len(files) - 3)


def test_a_line_cut_short_by_a_kill_is_dropped_and_the_next_record_starts_cleanly(tmp_path):
    files = find_files([str(ARCHIVE / "south_pool")])
    journal = tmp_path / "t.csv.journal"
    run_survey(files[:4], SETTINGS, SerialRunner(), journal, batch_size=1)
    with open(journal, "a", encoding="utf-8") as fh:
        fh.write('{"stamp": [1, 2], "row": {"path": "half')
    result = run_survey(files, SETTINGS, SerialRunner(), journal, resume=True)
    assert (result.reused, result.computed) == (4, len(files) - 4)
    lines = journal.read_text(encoding="utf-8").splitlines()
    assert len(lines) == 1 + len(files)
    assert all(json.loads(line) for line in lines)


def test_a_changed_file_is_analysed_again(tmp_path):
    folder = tmp_path / "cells"
    shutil.copytree(ARCHIVE / "south_pool", folder)
    files = find_files([str(folder)])
    journal = tmp_path / "j"
    run_survey(files, SETTINGS, SerialRunner(), journal)
    Path(files[0]).write_text("1 1 0 0 0 5 -1\n", encoding="utf-8")
    result = run_survey(files, SETTINGS, SerialRunner(), journal, resume=True)
    assert (result.reused, result.computed) == (len(files) - 1, 1)
    assert result.rows[0]["status"] == "error"


def test_a_damaged_middle_line_is_an_error_naming_the_line(tmp_path):
    journal = tmp_path / "j"
    journal.write_text(json.dumps({"journal": "cabletheory survey journal", "settings": SETTINGS.as_json()})
                       + "\nnot json\n{}\n", encoding="utf-8")
    with pytest.raises(InputError, match=r"j:2: damaged"):
        Journal(journal, SETTINGS).read()


def _wait_for_rows(journal: Path, rows: int, process: subprocess.Popen, timeout: float = 60.0) -> int:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if journal.exists():
            count = journal.read_text(encoding="utf-8").count("\n") - 1
            if count >= rows:
                return count
        if process.poll() is not None:
            pytest.fail(f"the survey ended before it could be interrupted: {process.stderr.read()}")
        time.sleep(0.005)
    pytest.fail("the survey journaled nothing in time")


@pytest.mark.slow
def test_a_killed_survey_resumes_and_gives_the_uninterrupted_table(tmp_path):
    """Start a survey in a subprocess, kill it (SIGKILL, no chance to tidy up) once some cells are
    journaled, resume it, and compare with a survey that ran without interruption."""
    archive = tmp_path / "archive"
    for copy in range(8):  # enough cells that the kill lands in the middle
        shutil.copytree(ARCHIVE, archive / f"copy{copy}")
    total = len(find_files([str(archive)]))
    argv = [sys.executable, "-m", "cabletheory", "survey", str(archive), "--Rm", "20000", "--Ri", "150",
            "--workers", "2", "--batch", "2"]
    output = tmp_path / "killed.csv"
    process = subprocess.Popen([*argv, "--output", str(output)], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                               text=True, start_new_session=True)
    try:
        seen = _wait_for_rows(Path(f"{output}.journal"), 6, process)
        os.killpg(process.pid, signal.SIGKILL)
    finally:
        process.wait()
        process.stdout.close()
        process.stderr.close()
    assert seen < total, "the survey finished before the kill"
    assert not output.exists()
    resumed = subprocess.run([*argv, "--output", str(output), "--resume"], capture_output=True, text=True)
    assert resumed.returncode == 0, resumed.stderr
    assert "cells taken from the journal" in resumed.stdout
    assert not Path(f"{output}.journal").exists()
    clean = tmp_path / "clean.csv"
    whole = subprocess.run([*argv, "--output", str(clean)], capture_output=True, text=True)
    assert whole.returncode == 0, whole.stderr
    assert output.read_bytes() == clean.read_bytes()
    assert output.read_text(encoding="utf-8").count("\n") > total


def _default_interrupt() -> None:
    """In the child: Ctrl-C's default action, even when the tests run in the background (a shell
    starts background jobs with SIGINT ignored, and the survey would inherit that)."""
    signal.signal(signal.SIGINT, signal.SIG_DFL)


@pytest.mark.slow
def test_ctrl_c_stops_the_survey_keeps_the_journal_and_resume_finishes_it(tmp_path):
    """Ctrl-C (SIGINT to the whole process group, as a terminal sends it): status 130, one line
    saying how to continue, no table; --resume then finishes with the uninterrupted table."""
    archive = tmp_path / "archive"
    for copy in range(8):
        shutil.copytree(ARCHIVE, archive / f"copy{copy}")
    argv = [sys.executable, "-m", "cabletheory", "survey", str(archive), "--Rm", "20000", "--Ri", "150",
            "--batch", "2", "--output", str(tmp_path / "t.csv")]
    for _attempt in range(3):  # on a loaded machine the run can end before the signal lands: try again
        process = subprocess.Popen(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                                   start_new_session=True, preexec_fn=_default_interrupt)
        _wait_for_rows(tmp_path / "t.csv.journal", 4, process)
        os.killpg(process.pid, signal.SIGINT)
        out, err = process.communicate(timeout=120)
        if process.returncode != 0:
            break
        for leftover in (tmp_path / "t.csv", tmp_path / "t.csv.journal"):
            leftover.unlink(missing_ok=True)
    assert process.returncode == 130, (out, err)
    assert out == ""
    assert err == (f"cabletheory: survey interrupted; the finished cells are kept in {tmp_path / 't.csv.journal'}; "
                   "run the same command with --resume to continue\n")
    assert not (tmp_path / "t.csv").exists()
    kept = (tmp_path / "t.csv.journal").read_text(encoding="utf-8").count("\n") - 1
    resumed = subprocess.run([*argv, "--resume"], capture_output=True, text=True)
    assert resumed.returncode == 0, resumed.stderr
    assert f"{kept} cells taken from the journal" in resumed.stdout
    whole = subprocess.run([*argv[:-1], str(tmp_path / "clean.csv")], capture_output=True, text=True)
    assert whole.returncode == 0, whole.stderr
    assert (tmp_path / "t.csv").read_bytes() == (tmp_path / "clean.csv").read_bytes()


def test_a_tree_built_to_rall_s_conditions_has_its_cylinder_s_input_resistance():
    """Rall 1959 [Rall1959]: a tree that meets the 3/2 rule and has every tip at the same
    electrotonic distance has the input conductance of its equivalent cylinder. In the bundled
    archive, the cells built that way differ only by the rounding of their coordinates."""
    files = find_files([str(ARCHIVE)])
    rows = [audit_file(f, SETTINGS) for f in files]
    built = [r for r in rows if r["status"] == "ok" and r["tip_spread"] < 1e-5 and abs(r["ratio_worst"] - 1) < 1e-5
             and r["branch_change_max"] == 0.0]
    assert len(built) >= 5
    for r in built:
        assert abs(r["difference_percent"]) < 1e-3, r["path"]
        assert r["reducible"] is True
    broken = [r for r in rows if r["status"] == "ok" and r["tip_spread"] > 0.5]
    assert broken
    assert all(abs(r["difference_percent"]) > 1.0 for r in broken)
