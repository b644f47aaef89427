"""The check view's exact cases: every model and stimulus of ``compare``, chosen as in the charging view.

The simulator files here are written from the exact solution (verify.exact_case, whose values are
checked against computed values of Rall 1959 [Rall1959], Rall 1969 [Rall1969] and Hodgkin & Rushton 1946
[HodgkinRushton1946] in
tests/test_verify_exact_case.py and
tests/test_verify_transient.py) plus one known perturbation, so that the verdict and the worst point
the view reports are known in advance: the perturbed sample, its time, position and file line.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from app_driver import drive, settle

from cabletheory import transient as tr
from cabletheory.cable import Cylinder
from cabletheory.case import Case
from cabletheory.errors import CableTheoryError
from cabletheory.tui.format import analyse_check, check_report
from cabletheory.tui.forms import read_check_form
from cabletheory.verify.exact import exact_case
from cabletheory.verify.tables import reference_table

UM, MS, MV = 1e-6, 1e-3, 1e-3
KILLED = Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM, math.inf)  # demo cable (docs/sources.md), killed far end
PULSE = tr.CurrentPulse(100e-12, 1 * MS, 200 * UM)
REST, ONSET = -62 * MV, 1 * MS  # the check form's defaults
BUMP = 40e-6  # V, added to one sample
BUMP_TIME, BUMP_SITE = 2.5 * MS, 1  # after the onset; index into SITES
SITES = np.array([0.0, 200.0, 500.0]) * UM


def write_run(path, model=KILLED, stimulus=PULSE, sites=SITES) -> int:
    """A wide CSV of the exact answer on the form's rest and onset, with BUMP added to one sample.

    Returns the file line of the perturbed sample (the header is line 1).
    """
    times = np.arange(0, 41) * 0.25 * MS  # since the onset
    table = reference_table(exact_case(Case(model, stimulus), 1e-15), times, sites)
    volts = table.voltage + REST
    row = int(np.argmin(np.abs(times - BUMP_TIME)))
    volts[row, BUMP_SITE] += BUMP
    lines = ["time (ms)," + ",".join(f"V at {x / UM:g} um (mV)" for x in sites),
             "0," + ",".join(repr(REST / MV) for _ in sites)]  # at rest before the onset
    lines += [f"{float((t + ONSET) / MS)!r}," + ",".join(repr(float(v / MV)) for v in vs)
              for t, vs in zip(times, volts, strict=True)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return row + 3  # header, the pre-onset row, then one line per time


# -- the form: the case the fields describe, invalid combinations flagged at their field -------------------
def test_killed_end_and_pulse_make_the_commands_case(tmp_path):
    run = tmp_path / "run.csv"
    run.write_text("time (ms),V at 0 um (mV)\n0,0\n", encoding="utf-8")
    setup, errors = read_check_form({"file": str(run), "end": "killed", "site": "200 µm", "duration": "1 ms",
                                     "soma": "not read for a cylinder"}, "cylinder", "pulse")
    assert errors == {}
    assert setup.case.model == KILLED
    assert setup.case.stimulus == PULSE
    case = exact_case(setup.case.case)
    assert case.description == "finite cylinder, killed far end, current pulse of 1 ms at x = 200 µm"
    # a step at the origin of the sealed cylinder takes the independent series, as `reference` does
    sealed, _ = read_check_form({"file": str(run)})
    assert exact_case(sealed.case.case).method.startswith("eigenfunction series")


@pytest.mark.parametrize(("model", "stimulus", "texts", "field", "message"), [
    ("ball-and-stick", "step", {"length": "inf"}, "length", "a ball and stick needs a finite cylinder length"),
    ("cylinder", "step", {"length": "inf", "end": "killed"}, "end", "has no far end"),
    ("cylinder", "alpha", {"site": "600 µm"}, "site", "lies outside the cell (0 to 500 µm)"),
    ("ball-and-stick", "pulse", {"site": "-10 µm"}, "site", "lies outside the cell (0 to 500 µm)"),
    ("cylinder", "pulse", {"duration": "2 mV"}, "duration", "is a voltage"),
    ("infinite", "clamp", {"clamp": "10 pA"}, "clamp", "is a current"),
    ("cylinder", "alpha", {"time_to_peak": "0 ms"}, "time_to_peak", "time to peak"),
    ("cylinder", "step", {"end": "leaky"}, "end", "not 'sealed', 'killed' or a conductance"),
])
def test_impossible_combinations_are_flagged_at_the_field(tmp_path, model, stimulus, texts, field, message):
    run = tmp_path / "run.csv"
    run.write_text("time (ms),V at 0 um (mV)\n0,0\n", encoding="utf-8")
    setup, errors = read_check_form({"file": str(run), **texts}, model, stimulus)
    assert setup is None
    assert set(errors) == {field}
    assert message in errors[field]
    assert "\n" not in errors[field]


def test_infinite_cable_alpha_current_on_both_sides_passes(tmp_path):
    """Negative positions are read only for an infinite cable; the exact file passes to 1e-12 V."""
    run = tmp_path / "infinite.csv"
    model = tr.InfiniteCable(2.0, 2.0, 0.01, 2 * UM)
    alpha = tr.AlphaCurrent(100e-12, 1 * MS, 0.0)
    line = write_run(run, model, alpha, np.array([-200.0, 0.0, 200.0]) * UM)
    setup, errors = read_check_form({"file": str(run), "time_to_peak": "1 ms", "pass_within": "41 µV"},
                                    "infinite", "alpha")
    assert errors == {}
    analysis = analyse_check(setup)
    c = analysis.comparison
    assert c.passed
    assert c.max_abs_error == pytest.approx(BUMP, abs=1e-12)
    assert (c.worst_line, c.worst_position) == (line, 0.0)
    assert float(np.sort(np.abs(analysis.errors))[-2]) < 1e-12  # every other sample is exact
    # the same file against a cylinder: negative positions are refused with file and line, no crash
    setup, _ = read_check_form({"file": str(run), "time_to_peak": "1 ms"}, "cylinder", "alpha")
    with pytest.raises(CableTheoryError, match=r"infinite\.csv:1.*negative"):
        analyse_check(setup)


def test_report_and_export_carry_the_cases_parameters(tmp_path):
    from cabletheory.tui import export

    run = tmp_path / "run.csv"
    write_run(run)
    setup, errors = read_check_form({"file": str(run), "end": "killed", "site": "200 µm"}, "cylinder", "pulse")
    assert errors == {}
    report = check_report(setup, analyse_check(setup))
    data = json.loads(export.to_json(report))
    assert data["inputs"]["model"] == "cylinder"
    assert data["inputs"]["stimulus"] == "current pulse"
    assert data["inputs"]["duration"] == {"value": pytest.approx(1e-3), "unit": "s"}
    assert data["inputs"]["stimulus_position"] == {"value": pytest.approx(2e-4), "unit": "m"}
    assert data["inputs"]["end_conductance"]["value"] == "inf"
    parameters = dict(zip(data["tables"]["exact_case"]["name"], data["tables"]["exact_case"]["value"],
                          strict=True))
    assert parameters["pulse_duration"] == pytest.approx(1e-3)
    assert parameters["end_conductance"] == "inf"
    assert parameters["stimulus_amplitude"] == pytest.approx(1e-10)
    assert data["inputs"]["exact_case"] == "finite cylinder, killed far end, current pulse of 1 ms at x = 200 µm"


# -- the view, by keyboard -------------------------------------------------------------------------------

def test_killed_end_and_pulse_chosen_by_keys_find_the_perturbed_sample(tmp_path):
    pytest.importorskip("textual")
    from textual.widgets import Input

    run = tmp_path / "killed_pulse.csv"
    line = write_run(run)

    async def script(app, pilot):
        view = app.query_one("#check")
        assert not app.query_one("#field-ck-duration").display
        await pilot.press("ctrl+n")  # current step -> current pulse
        await pilot.pause()
        assert view.stimulus_choice == "pulse"
        assert app.query_one("#field-ck-duration").display
        app.query_one("#ck-end", Input).value = "killed"
        app.query_one("#ck-site", Input).value = "200 µm"
        view.open_path(str(run))
        await settle(app, pilot)
        results = str(app.query_one("#check-results").render())
        assert "FLAGGED" in results
        assert "40.00 µV" in results  # the perturbation, nothing else
        assert "worst point: time after onset     2.500 ms" in results
        assert "worst point: position             200.0 µm" in results
        assert f"worst point: file line            {line}" in results
        inputs = {r.key: r.value for r in view.report.inputs}
        assert inputs["exact_case"].startswith("finite cylinder, killed far end, current pulse")
        app.query_one("#ck-pass_within", Input).value = "50 µV"
        await settle(app, pilot)
        assert "within tolerance" in str(app.query_one("#check-results").render())
        # the wrong model (the default sealed end) is far off: the model choice matters
        app.query_one("#ck-end", Input).value = "sealed"
        await settle(app, pilot)
        assert "FLAGGED" in str(app.query_one("#check-results").render())
        # a ball and stick of infinite length is flagged at the length field; nothing crashes
        await pilot.press("ctrl+l")
        await pilot.pause()
        assert view.model_choice == "ball-and-stick"
        app.query_one("#ck-length", Input).value = "inf"
        await settle(app, pilot)
        assert "needs a finite cylinder length" in str(app.query_one("#field-ck-length .field-echo").render())
        assert view.report is None

    drive(script, view="check")
