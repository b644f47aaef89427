"""The fitting view (F8) and the survey view (F9), driven through Pilot.

The fitting view must show what the core's fits give from Python on the same worked recordings:
the ball and stick of worked/fitting (made from Rall's exact soma response, Rall 1969 [Rall1969],
with the values in its README) and the reconstructed cell of worked/fitting_cell (made from the
exact tree time course, checked against mpmath and Rall's equivalent cylinder in
tests/test_tree_time.py; Rall 1959 [Rall1959]), whose 95 % intervals must hold the membrane that
made the recording. The survey view's statistics are checked against Python's own ``statistics``
module (an independent implementation).
"""

from __future__ import annotations

import json
import re
import statistics
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("textual")

from app_driver import drive, settle
from textual.widgets import DataTable, Input

from cabletheory.tui.fit_report import read_fit_form

ROOT = Path(__file__).resolve().parent.parent
BALL = ROOT / "worked" / "fitting" / "lumenia_sweeps.csv"
CELL = ROOT / "worked" / "fitting_cell" / "pv7_sweeps.csv"
PV7 = ROOT / "cabletheory" / "data" / "morphologies" / "lumenia_pv7_interneuron.swc"
# worked/fitting_cell/make_recording.py: the membrane behind the recording (SI)
CELL_TRUTH = {"membrane_resistivity": 2.0, "axial_resistivity": 1.5, "membrane_capacitance": 0.009}


async def fill(app, pilot, texts: dict[str, str], model: str | None = None) -> None:
    for name, value in texts.items():
        app.query_one(f"#ft-{name}", Input).value = value
    if model is not None:
        app.query_one(f"#ft-model-{model}").value = True
    await pilot.pause()


def results_text(app) -> str:
    return str(app.query_one("#fit-results").render())


async def save_json(app, pilot, target: Path) -> dict:
    await pilot.press("ctrl+s")
    app.screen.query_one("#save-path", Input).value = str(target)
    await pilot.press("enter")
    await pilot.pause()
    return json.loads(target.read_text(encoding="utf-8"))


def python_trace(path: Path, onset: float):
    """The recording read by numpy (ms and mV columns) and averaged from Python, as a script would."""
    from cabletheory.trace import prepare_trace

    data = np.loadtxt(path, delimiter=",", comments="#", skiprows=2)
    return prepare_trace(data[:, 0] * 1e-3, data[:, 1:].T * 1e-3, onset=onset)


# -- the form, without an App --------------------------------------------------------------------------
def test_form_flags_each_problem_at_its_field(tmp_path):
    setup, errors = read_fit_form({"file": "", "current": "5 mV"}, "ball-and-stick")
    assert setup is None
    assert errors["file"].startswith("recordings: empty")
    assert "current" in errors["current"]
    setup, errors = read_fit_form({"file": str(BALL)}, "morphology")
    assert errors["morphology"].startswith("morphology: empty")
    assert errors["current"].startswith("injected current: needed")
    setup, errors = read_fit_form({"file": str(BALL), "fit_from": "5 ms", "fit_until": "2 ms"})
    assert errors == {"fit_until": "window until: must come after the window's start"}
    setup, errors = read_fit_form({"file": f"{BALL}; {tmp_path / 'absent.csv'}"})
    assert "absent.csv" in errors["file"]
    setup, errors = read_fit_form({"file": str(BALL), "current": "-40 pA", "onset": "20 ms"})
    assert errors == {}
    assert setup.request.current == pytest.approx(-40e-12)
    assert setup.request.onset == pytest.approx(0.02)
    assert setup.request.rest is None  # blank: found from the data
    assert setup.request.fit_from is None


# -- the fitting view ------------------------------------------------------------------------------------
def test_ball_and_stick_view_shows_the_numbers_of_fit_model(tmp_path):
    """worked/fitting: τm, L, ρ, R_N in the view and in its JSON are fit_model's, from Python."""
    from cabletheory.fit_exponentials import decompose
    from cabletheory.fit_model import fit_model

    trace = python_trace(BALL, 0.02)
    t, y, se = trace.after_onset()
    rule = decompose(t, y, standard_error=se, offset=True, window=(None, None))
    start = max(rule.window[0], rule.artefact_end or 0.0)
    expected = fit_model(t, y, model="ball-and-stick", current=-40e-12, standard_error=se, window=(start, None),
                         axial_resistivity=1.5, baseline_error=trace.baseline_error)
    target = tmp_path / "fit.json"
    saved = {}

    async def script(app, pilot):
        await pilot.press("f8")
        await settle(app, pilot)
        await fill(app, pilot, {"file": str(BALL), "current": "-40 pA", "onset": "20 ms", "assumed_Ri": "150 Ω·cm"})
        app.query_one("#ft-file", Input).focus()
        await pilot.press("enter")
        await settle(app, pilot)
        text = results_text(app)
        assert "membrane time constant τm" in text
        assert "24.91 ms  [24.66 ms, 25.16 ms]" in text  # as worked/fitting/README.md reads it
        assert re.search(r"intervals in brackets +95 % confidence", text)
        assert re.search(r"parameters told apart +yes", text)
        plot = app.query_one("#fit-plot").spec
        assert [s.label for s in plot.series] == ["mean of 8 sweep(s)", "ball and stick", "3 exponentials"]
        assert app.query_one("#fit-residual-plot").spec.series[0].label == "ball and stick"
        saved.update(await save_json(app, pilot, target))

    drive(script)
    results = saved["results"]
    # the same to the optimiser's tolerance (here numpy parsed the file, so the last bits of the data differ)
    for k, name in enumerate(expected.names):
        assert results[name]["value"] == pytest.approx(float(expected.estimates[k]), rel=1e-6), name
    table = saved["tables"]["parameters"]
    assert table["parameter"] == list(expected.names)
    np.testing.assert_allclose(table["low"], expected.intervals[:, 0], rtol=1e-6)
    np.testing.assert_allclose(table["high"], expected.intervals[:, 1], rtol=1e-6)
    # the cell that made the recording (worked/fitting/README.md) lies inside every 95 % interval
    truth = {"membrane_time_constant": 0.025, "electrotonic_length": 0.8, "conductance_ratio": 4.0,
             "input_resistance": 300e6}
    for name, low, high in zip(table["parameter"], table["low"], table["high"], strict=True):
        assert low < truth[name] < high, name


def test_morphology_view_gives_rm_ri_cm_with_intervals_and_says_what_it_cannot_separate(tmp_path):
    """worked/fitting_cell: the view's Rm, Ri, Cm are fit_morphology's; their intervals hold the
    membrane that made the recording; the correlation sentence is shown; typing goes on while the
    fit runs in its worker."""
    from cabletheory.fit_exponentials import decompose
    from cabletheory.fit_tree import fit_morphology
    from cabletheory.tui.format import read_tree

    trace = python_trace(CELL, 0.02)
    t, y, se = trace.after_onset()
    rule = decompose(t, y, standard_error=se, offset=True, window=(None, None))
    start = max(rule.window[0], rule.artefact_end or 0.0)
    expected = fit_morphology(t, y, read_tree(PV7), -40e-12, standard_error=se, window=(start, None))
    target = tmp_path / "cell.json"
    saved = {}

    async def script(app, pilot):
        await fill(app, pilot, {"file": str(CELL), "current": "-40 pA", "onset": "20 ms", "morphology": str(PV7)},
                   model="morphology")
        assert not app.query_one("#field-ft-assumed_Cm").display  # the membrane is fitted here, not assumed
        box = app.query_one("#ft-fit_until", Input)
        box.focus()
        await pilot.press("ctrl+r")
        await pilot.pause()
        assert any(w.is_running for w in app.query_one("#fit").workers)
        await pilot.press("1", "7", "0")  # the form answers while the fit runs
        assert box.value == "170"
        assert any(w.is_running for w in app.query_one("#fit").workers)
        box.value = ""
        await settle(app, pilot)
        text = results_text(app)
        assert "specific membrane resistance Rm" in text
        assert "NO: read the sentences below" in text
        assert "the data cannot separate Rm from Ri" in text
        saved.update(await save_json(app, pilot, target))

    drive(script, view="fit")
    table = saved["tables"]["parameters"]
    assert table["parameter"] == list(expected.names)
    np.testing.assert_allclose(table["estimate"], expected.estimates, rtol=1e-6)
    np.testing.assert_allclose(table["low"], expected.intervals[:, 0], rtol=1e-6)
    for name, low, high in zip(table["parameter"], table["low"], table["high"], strict=True):
        assert low < CELL_TRUTH[name] < high, name
    assert saved["results"]["separable"] == "NO: read the sentences below"
    assert any("cannot separate Rm from Ri" in n for n in saved["notes"])


def test_a_bad_recording_is_one_line_naming_file_and_line(tmp_path):
    bad = tmp_path / "bad.csv"
    rows = ["time (ms),sweep 1 (mV)"] + [f"{0.1 * k:.1f},{-60 + 0.01 * k:.3f}" for k in range(30)]
    rows[5] = "0.4,-59.9x"  # file line 6
    bad.write_text("\n".join(rows) + "\n", encoding="utf-8")

    async def script(app, pilot):
        await fill(app, pilot, {"file": str(bad)})
        app.query_one("#fit").refresh_results(again=True)
        await settle(app, pilot)
        field = app.query_one("#field-ft-file")
        assert field.has_class("bad")
        message = field.echo_text
        assert "\n" not in message
        assert message == f"{bad}:6:2 ('sweep 1 (mV)'): cannot read '-59.9x' as a number"
        assert app.query_one("#fit").report is None

    drive(script, view="fit")


# -- the survey view -----------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def survey_table(tmp_path_factory):
    """A survey table of the three bundled morphologies and one broken file (an error row)."""
    from cabletheory.inputs import read_outline_value
    from cabletheory.survey import SurveySettings, audit_file, table_csv
    from cabletheory.tui.fields import bundled_morphologies

    folder = tmp_path_factory.mktemp("survey")
    broken = folder / "broken.swc"
    broken.write_text("1 1 0 0 0 5 -1\n2 3 0 0 10 oops 1\n", encoding="utf-8")
    settings = SurveySettings(2.0, 2.0, read_value=read_outline_value)
    files = [*sorted(str(p) for p in bundled_morphologies().iterdir()), str(broken)]
    rows = sorted((audit_file(f, settings) for f in files), key=lambda r: r["path"])
    path = folder / "table.csv"
    path.write_text(table_csv(rows, settings), encoding="utf-8")
    return path, rows


async def next_column_and_a_file_that_is_not_a_table(app, pilot, path: Path, other: Path) -> None:
    view = app.query_one("#survey")
    view.open_path(str(path))
    await settle(app, pilot)
    before = view.column
    await pilot.press("ctrl+l")
    await pilot.pause()
    assert view.column != before
    assert view.report.inputs[-1].value == view.column
    view.open_path(str(other))
    await settle(app, pilot)
    field = app.query_one("#field-sv-file")
    assert field.has_class("bad")
    assert "not a survey table" in field.echo_text
    assert view.report is None
    assert app.query_one("#survey-cells", DataTable).row_count == 0


def test_survey_view_lists_every_cell_with_its_errors_and_summarises_a_column(survey_table, tmp_path):
    """Then, in the same app: the next column, and a file that is not a survey table
    (:func:`next_column_and_a_file_that_is_not_a_table`)."""
    path, rows = survey_table
    other = tmp_path / "other.csv"
    other.write_text("a,b\n1,2\n", encoding="utf-8")
    ok = [r for r in rows if r["status"] == "ok"]
    assert len(ok) == 3
    assert len(rows) == 4
    saved = {}

    async def script(app, pilot):
        await pilot.press("f9")
        await settle(app, pilot)
        app.query_one("#survey").open_path(str(path))
        await settle(app, pilot)
        table = app.query_one("#survey-cells", DataTable)
        assert table.row_count == 4
        cells = [[str(c) for c in table.get_row_at(i)] for i in range(4)]
        broken = next(c for c in cells if c[-2].endswith("broken.swc"))
        assert broken[0] == "error"
        assert broken[-1].endswith("broken.swc:2: field 'radius' is 'oops'; expected a number")
        text = str(app.query_one("#survey-results").render())
        assert "1 with an error" in text
        await pilot.press("ctrl+s")
        app.screen.query_one("#save-path", Input).value = str(tmp_path / "survey.json")
        await pilot.press("enter")
        await pilot.pause()
        saved.update(json.loads((tmp_path / "survey.json").read_text(encoding="utf-8")))
        await next_column_and_a_file_that_is_not_a_table(app, pilot, path, other)
        saved["next column checked"] = True

    drive(script)
    assert saved.pop("next column checked")
    values = [r["electrotonic_length"] for r in ok]
    results = saved["results"]
    assert results["count"] == 3
    assert results["mean"]["value"] == pytest.approx(statistics.mean(values), rel=1e-12)
    assert results["standard_deviation"]["value"] == pytest.approx(statistics.stdev(values), rel=1e-12)
    q1, median, q3 = statistics.quantiles(values, n=4, method="inclusive")
    assert results["upper_quartile"]["value"] == pytest.approx(q3, rel=1e-12)
    assert results["median"]["value"] == pytest.approx(median, rel=1e-12)
    assert results["lower_quartile"]["value"] == pytest.approx(q1, rel=1e-12)
    assert saved["inputs"]["errors"] == 1
    assert saved["tables"]["cells"]["status"].count("error") == 1


# -- opened from the command line ------------------------------------------------------------------------
def test_ui_opens_the_fitting_and_survey_views_on_their_files(monkeypatch, tmp_path, capsys):
    import cabletheory.tui as tui
    from cabletheory.__main__ import run

    calls: list[dict] = []
    monkeypatch.setattr(tui, "launch", lambda **options: calls.append(options))
    assert run(["ui", "--fit", str(CELL), "--morphology", str(PV7)]) == 0
    assert calls[-1] == {"view": "fit", "swc": None, "simulation": None, "recording": str(CELL),
                         "morphology": str(PV7)}
    table = tmp_path / "table.csv"
    table.write_text("x\n", encoding="utf-8")
    assert run(["ui", "--survey", str(table)]) == 0
    assert calls[-1]["view"] == "survey"
    assert calls[-1]["table"] == str(table)
    for argv, message in ((["--fit", "no/such.csv"], "--fit: 'no/such.csv' does not exist"),
                          (["--morphology", str(PV7)], "--morphology: give the recording")):
        assert run(["ui", *argv]) == 2
        err = capsys.readouterr().err
        assert err.count("\n") == 1
        assert message in err


def test_a_recording_opened_with_the_app_is_fitted_at_once_and_a_missing_current_is_flagged():
    async def script(app, pilot):
        assert app.query_one("#ft-file", Input).value == str(CELL)
        assert app.query_one("#ft-model-morphology").value  # a morphology given: its cell is fitted
        field = app.query_one("#field-ft-current")
        assert field.has_class("bad")
        assert field.echo_text.startswith("injected current: needed for a reconstructed cell")
        assert app.query_one("#fit").report is None

    drive(script, view="fit", recording=str(CELL), morphology=str(PV7))


def test_an_nwb_recording_brings_its_step_when_the_current_and_onset_are_blank(tmp_path):
    """An NWB file written by pynwb (Rübel et al. 2022 [Rubel2022]) with its stimulus series: the
    view fits it with the stored -50 pA step, as the command does (tests/test_trace_nwb.py)."""
    pytest.importorskip("pynwb")
    from test_trace_nwb import CURRENT, TRUTH, sweeps_mv, write_nwb

    path = tmp_path / "cell.nwb"
    write_nwb(path, sweeps_mv()[1])
    saved = {}

    async def script(app, pilot):
        await settle(app, pilot)
        assert app.query_one("#fit").report is not None
        saved.update(await save_json(app, pilot, tmp_path / "nwb.json"))

    drive(script, view="fit", recording=str(path))
    assert saved["inputs"]["current"]["value"] == pytest.approx(CURRENT, rel=1e-12)
    assert saved["inputs"]["onset_detected"] == "no (from the file)"
    assert any("read from the stimulus series" in n for n in saved["notes"])
    table = saved["tables"]["parameters"]
    for name, low, high in zip(table["parameter"], table["low"], table["high"], strict=True):
        assert low < TRUTH[name] < high, name


def test_the_report_of_a_shunt_fit_says_the_shunt_is_undetermined(tmp_path):
    """A cell without a shunt, fitted with one in the app's recipe: the report does not say the
    parameters are told apart, shows no correlation of the fixed shunt (none was fitted), and carries
    the sentence of its χ² profile (Raue et al. 2009 [Raue2009])."""
    from test_cli_fit import _morphology_recording

    from cabletheory.tui.fit_report import fit_outcome

    outline, rec = _morphology_recording(tmp_path, {"membrane_resistivity": 2.5, "axial_resistivity": 1.2,
                                                    "membrane_capacitance": 0.009})
    setup, errors = read_fit_form({"file": str(rec), "current": "-40 pA", "onset": "10 ms",
                                   "morphology": str(outline)}, "morphology", shunt=True)
    assert errors == {}
    kind, report, message = fit_outcome(setup)
    assert kind == "report", message
    results = {row.key: row for row in report.results}
    assert results["separable"].value == "NO: read the sentences below"
    assert results["converged"].value == "yes"
    assert "nan" not in str(results["correlations"].value)
    assert "g_shunt" not in str(results["correlations"].value)
    assert any(n.startswith("the data do not determine the soma shunt") for n in report.notes)
