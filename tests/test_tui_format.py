"""The terminal app's plain helpers (forms, reports, braille plot, export), tested without an App.

Reference values for the demo cable (d = 2 µm, Rm = 20 kΩ·cm², Ri = 200 Ω·cm, Cm = 1 µF/cm²,
ℓ = 500 µm; docs/sources.md) are computed with mpmath [mpmath2023] from the formulas of Rall 1959
[Rall1959], Rall & Rinzel 1973 [RallRinzel1973] and Koch 1999 ch. 2 [Koch1999] [MEM].
"""

from __future__ import annotations

import csv
import io
import json
import math

import numpy as np
import pytest

from cabletheory import PASSIVE_CAVEAT
from cabletheory.case import Case
from cabletheory.errors import InputError
from cabletheory.tui import export, plot
from cabletheory.tui.format import cable_report, cable_summary, profile_positions
from cabletheory.tui.forms import CABLE_FIELDS, read_cylinder_form, read_form
from cabletheory.tui.keys import GLOBAL_KEYS, VIEW_KEYS, key_label
from cabletheory.tui.report import Column, PlotSpec, Report, Row, Series, Table, cell_text, row_text

DEMO = {"Rm": "20 kΩ·cm²", "Ri": "200 Ω·cm", "Cm": "1 µF/cm²", "diameter": "2 µm", "length": "500 µm",
        "frequency": "100 Hz"}


def demo_report(end: str = "sealed", **changes: str) -> Report:
    # a leaky end is typed as its conductance, as in every view
    typed = changes.pop("end_conductance") if end == "leaky" else end
    cylinder, frequency, errors = read_cylinder_form({**DEMO, **changes, "end": typed})
    assert not errors
    assert cylinder is not None
    return cable_report(cable_summary(cylinder, frequency))


def result(report: Report, key: str) -> float:
    return next(float(r.value) for r in report.results if r.key == key)


# -- forms ----------------------------------------------------------------------------------------
def test_form_defaults_are_the_demo_cable():
    cylinder, frequency, errors = read_cylinder_form({})
    assert errors == {}
    assert cylinder is not None
    assert (cylinder.membrane_resistivity, cylinder.axial_resistivity, cylinder.membrane_capacitance) == (
        pytest.approx(2.0), pytest.approx(2.0), pytest.approx(0.01))
    assert (cylinder.diameter, cylinder.length, cylinder.end_conductance) == (
        pytest.approx(2e-6), pytest.approx(5e-4), 0.0)
    assert frequency == pytest.approx(100.0)


def test_wrong_unit_is_reported_per_field_with_the_unit_boundary_message():
    cylinder, _, errors = read_cylinder_form({**DEMO, "Rm": "1uF/cm^2", "diameter": "-2"})
    assert cylinder is None
    assert errors == {
        "Rm": "Rm: '1uF/cm^2' is a specific membrane capacitance, expected a specific membrane resistance "
              "such as 20 kΩ·cm²",
        "diameter": "diameter: '-2' is negative; expected a positive length such as 500 µm",
    }


def test_far_end_is_read_by_the_one_far_end_reader():
    assert read_cylinder_form({**DEMO, "end": "killed"})[0].end_conductance == math.inf
    assert read_cylinder_form({**DEMO, "end": " Sealed "})[0].end_conductance == 0.0
    cylinder, _, errors = read_cylinder_form({**DEMO, "end": "oops"})
    assert cylinder is None
    assert set(errors) == {"end"}
    cylinder, _, _ = read_cylinder_form({**DEMO, "end": "0.5"})  # bare number: nS
    assert cylinder is not None
    assert cylinder.end_conductance == pytest.approx(0.5e-9)


def test_blank_frequency_means_steady_state_only_and_blank_required_field_is_flagged():
    _cylinder, frequency, errors = read_cylinder_form({**DEMO, "frequency": " "})
    assert errors == {}
    assert frequency is None
    assert "empty value" in read_cylinder_form({**DEMO, "Ri": ""})[2]["Ri"]


def test_read_form_series_field():
    from cabletheory.tui.fields import FieldSpec

    spec = FieldSpec("times", "times", "time", "0:2:0.5 ms", series=True)
    form = read_form([spec], {})
    assert form.ok
    assert form.values["times"] == pytest.approx([0, 5e-4, 1e-3, 1.5e-3, 2e-3])
    assert not read_form([spec], {"times": "1, 2, 3 mV"}).ok


def test_every_cable_field_default_is_valid():
    assert read_form([s for s in CABLE_FIELDS if s.name != "end"], {}).ok  # the far end: read_end


# -- cable report: the values shown are the core's, checked against external values --------------
def test_cable_report_matches_reference_values():
    """Computed (demo cable): λ = 707.1067812 µm, R∞ = 450.1581581 MΩ, R_in sealed = 739.3466931 MΩ,
    V(L)/V(0) = 0.7932781817; at 100 Hz: λ_f = 271.1023147 µm, |Z_in| = 120.8122622 MΩ,
    arg = −41.97365288°, |V(L)/V(0)| = 0.3240784218."""
    report = demo_report()
    assert result(report, "length_constant") == pytest.approx(707.1067812e-6, rel=1e-9)
    assert result(report, "semi_infinite_input_resistance") == pytest.approx(450.1581581e6, rel=1e-9)
    assert result(report, "input_resistance") == pytest.approx(739.3466931e6, rel=1e-9)
    assert result(report, "far_end_voltage_ratio") == pytest.approx(0.7932781817, rel=1e-9)
    assert result(report, "length_constant_at_frequency") == pytest.approx(271.1023147e-6, rel=1e-9)
    assert result(report, "input_impedance_magnitude") == pytest.approx(120.8122622e6, rel=1e-9)
    assert math.degrees(result(report, "input_impedance_phase")) == pytest.approx(-41.97365288, rel=1e-9)
    profile = report.tables[0]
    columns = {c.key: np.asarray(c.values) for c in profile.columns}
    assert columns["voltage_ratio"][-1] == pytest.approx(0.7932781817, rel=1e-9)
    assert columns["ac_voltage_ratio"][-1] == pytest.approx(0.3240784218, rel=1e-9)
    # the sealed profile at X = L/2 (computed, Rall 1959 [Rall1959]): 0.8433766820
    middle = len(columns["voltage_ratio"]) // 2
    assert columns["voltage_ratio"][middle] == pytest.approx(0.8433766820, rel=1e-9)


@pytest.mark.parametrize(("end", "changes", "expected"), [
    ("killed", {}, 274.0830103e6),  # R∞ tanh L, computed
    ("leaky", {"end_conductance": f"{0.5 / 450.1581581e6!r} S"}, 529.5528737e6),  # B = 0.5, computed
    ("leaky", {"end_conductance": f"{1.0 / 450.1581581e6!r} S"}, 450.1581581e6),  # B = 1 gives R∞
])
def test_end_conditions_change_input_resistance(end, changes, expected):
    report = demo_report(end, **changes)
    assert result(report, "input_resistance") == pytest.approx(expected, rel=1e-8)
    labels = " ".join(r.label for r in report.results)
    assert end in labels
    if end == "leaky":
        assert result(report, "end_conductance_ratio") == pytest.approx(
            float(changes["end_conductance"].split()[0]) * 450.1581581e6, rel=1e-8)


def test_semi_infinite_cable_is_shown_over_five_length_constants():
    report = demo_report(length="inf", frequency="")
    length_row = next(r for r in report.inputs if r.key == "length")
    assert row_text(length_row) == "semi-infinite"
    x = np.asarray(report.plots[0].series[0].x)
    assert x[-1] == pytest.approx(5.0)
    assert np.asarray(report.plots[0].series[0].y) == pytest.approx(np.exp(-x), rel=1e-12)  # e^-X
    assert len(report.plots[0].series) == 1  # no frequency, no AC curve
    assert not any(r.key == "compartments_needed" for r in report.results)


def test_profile_positions_span_the_cable():
    cylinder, _, _ = read_cylinder_form(DEMO)
    x = profile_positions(cylinder, 11)
    assert x[0] == 0
    assert x[-1] == pytest.approx(5e-4)
    assert len(x) == 11


def test_row_and_cell_text():
    assert row_text(Row("a", "λ", 7.071067811865475e-4, "length")) == "707.1 µm"
    assert row_text(Row("a", "n", 19)) == "19"
    assert row_text(Row("a", "x", None)) == "—"
    assert row_text(Row("a", "x", "sealed")) == "sealed"
    assert row_text(Row("a", "x", 0.5, None, "ohm*m")) == "0.5000 ohm*m"
    assert cell_text(math.inf, "resistance") == "∞"


# -- braille plot -----------------------------------------------------------------------------------
def test_canvas_puts_dots_in_the_right_cells():
    canvas = plot.Canvas(2, 1, (0.0, 1.0), (0.0, 1.0))
    canvas.line([0.0], [1.0])  # top-left dot: bit 0x01
    canvas.line([1.0], [0.0], curve=1)  # bottom-right dot of the right cell: bit 0x80
    assert canvas.text_rows() == [chr(0x2801) + chr(0x2880)]
    assert canvas.owner == [[0, 1]]


def test_a_line_is_continuous_and_nan_breaks_it():
    canvas = plot.Canvas(10, 2, (0.0, 1.0), (0.0, 1.0))
    canvas.line([0.0, 1.0], [0.0, 1.0])
    dots = sum(bin(b).count("1") for row in canvas.bits for b in row)
    assert dots == 20  # a diagonal over 20 dot columns and 8 rows touches every column once
    broken = plot.Canvas(10, 2, (0.0, 1.0), (0.0, 1.0))
    broken.line([0.0, 0.5, 1.0], [0.0, math.nan, 1.0])
    assert sum(bin(b).count("1") for row in broken.bits for b in row) == 2


def test_draw_has_axes_ticks_and_legend():
    spec = PlotSpec("t", "X", "V", (Series("a", np.linspace(0, 2, 21), np.linspace(1, 0, 21)),
                                   Series("b", np.linspace(0, 2, 21), np.linspace(0, 1, 21))))
    picture = plot.draw(spec, 50, 12)
    assert len(picture.rows) == 12
    assert all(len(r) == len(o) for r, o in zip(picture.rows, picture.owners, strict=True))
    assert picture.rows[0].lstrip().startswith("1┤")
    assert "0┤" in picture.rows[-3]
    assert picture.rows[-2].lstrip().startswith("└┬")
    assert picture.rows[-1].split()[0] == "0"
    assert picture.rows[-1].split()[-1] == "2"
    assert picture.legend == ("a", "b")
    owners = {o for row in picture.owners for o in row}
    assert owners == {-1, 0, 1}


@pytest.mark.parametrize(("low", "high", "expected"), [
    (0.0, 1.0, [0.0, 0.25, 0.5, 0.75, 1.0]),
    (0.0, 0.7071, [0.0, 0.2, 0.4, 0.6]),
    (-3.0, 3.0, [-2.0, 0.0, 2.0]),  # step 1.5 rounds up to 2
    (2.0, 2.0, [2.0]),
])
def test_nice_ticks(low, high, expected):
    assert plot.nice_ticks(low, high, 5) == pytest.approx(expected)


def test_log_axis_plots_exponents():
    spec = PlotSpec("t", "t", "err", (Series("e", np.arange(4.0), np.array([1e-2, 1e-4, 0.0, 1e-6])),),
                    y_log=True)
    picture = plot.draw(spec, 40, 10)
    assert any(row.lstrip().startswith("1e-2") for row in picture.rows)


# -- export -------------------------------------------------------------------------------------------
def test_json_export_is_si_with_units():
    data = json.loads(export.to_json(demo_report()))
    assert data["view"] == "cylinder"
    assert data["inputs"]["membrane_resistivity"] == {"value": pytest.approx(2.0), "unit": "ohm*m**2"}
    assert data["inputs"]["end_conductance"] == {"value": 0.0, "unit": "S"}
    assert data["results"]["input_resistance"] == {"value": pytest.approx(739.3466931e6, rel=1e-9),
                                                   "unit": "ohm"}
    assert data["results"]["electrotonic_length"]["unit"] == "dimensionless"  # as the command line writes it
    assert data["results"]["compartments_needed"] == 19
    profile = data["tables"]["profile"]
    assert profile["position"]["unit"] == "m"
    assert len(profile["position"]["value"]) == 41
    assert data["assumptions"] == PASSIVE_CAVEAT


def test_json_export_writes_infinity_as_text():
    data = json.loads(export.to_json(demo_report("killed")))
    assert data["inputs"]["end_conductance"] == {"value": "inf", "unit": "S"}


def test_csv_export_is_a_tidy_table():
    rows = list(csv.DictReader(io.StringIO(export.to_csv(demo_report()))))
    assert list(rows[0]) == ["part", "quantity", "index", "value", "unit"]
    by_key = {(r["part"], r["quantity"], r["index"]): r for r in rows}
    assert float(by_key["results", "input_resistance", ""]["value"]) == pytest.approx(739.3466931e6, rel=1e-9)
    assert by_key["results", "input_resistance", ""]["unit"] == "ohm"
    assert float(by_key["profile", "position", "40"]["value"]) == pytest.approx(5e-4)
    assert by_key["profile", "voltage_ratio", "0"]["value"] == "1.0"


def test_markdown_export_has_caveat_and_tables():
    text = export.to_markdown(demo_report())
    assert text.startswith("# Single cylinder")
    assert f"> {PASSIVE_CAVEAT}" in text
    assert "| length constant λ | 707.1 µm |" in text
    assert "| input impedance \\|Z_in\\| | 120.8 MΩ |" in text
    assert "## Profile (input at the origin)" in text


def test_export_picks_format_by_suffix_and_refuses_unknown(tmp_path):
    report = demo_report()
    for suffix in (".json", ".csv", ".md"):
        written = export.export(report, tmp_path / f"out{suffix}")
        assert written.read_text(encoding="utf-8").strip()
    with pytest.raises(InputError, match="no known suffix"):
        export.export(report, tmp_path / "out.xlsx")
    assert not (tmp_path / "out.xlsx").exists()
    with pytest.raises(InputError, match="does not exist"):
        export.export(report, tmp_path / "missing" / "out.json")
    (tmp_path / "input.csv").write_text("keep me")
    with pytest.raises(InputError, match="also an input file"):
        export.export(report, tmp_path / "input.csv", protected=[tmp_path / "input.csv"])
    assert (tmp_path / "input.csv").read_text() == "keep me"


def test_plot_export_svg_and_png(tmp_path):
    report = demo_report()
    svg = export.export(report, tmp_path / "plot.svg").read_text()
    assert svg.lstrip().startswith("<?xml")
    assert "<svg" in svg
    png = export.export(report, tmp_path / "plot.png").read_bytes()
    assert png.startswith(b"\x89PNG\r\n\x1a\n")
    empty = Report("x", "x", (), (), (Table("t", "t", (Column("a", "a", [1.0]),)),))
    with pytest.raises(InputError, match="no plot"):
        export.export(empty, tmp_path / "none.svg")


# -- keys -------------------------------------------------------------------------------------------------
def test_every_key_is_unique_within_its_scope():
    global_keys = [k.key for k in GLOBAL_KEYS]
    assert len(global_keys) == len(set(global_keys))
    for keys in VIEW_KEYS.values():
        names = [k.key for k in keys]
        assert len(names) == len(set(names))
        assert not set(names) & set(global_keys)


def test_key_labels():
    """The help, the key strip and the form labels write keys one way."""
    assert key_label("ctrl+s") == "ctrl+s"
    assert key_label("f1") == "F1"
    assert key_label("f1,question_mark") == "F1 / ?"
    assert key_label("f6,b") == "F6 / b"


# -- charging report: the exact transients, checked against external values ------------------------
LAMBDA = "707.1067811865476 µm"  # the demo cable's λ, so that L = 1


def charging(model: str = "cylinder", stimulus: str = "step", **texts: str) -> Report:
    from cabletheory.tui.format import charging_report
    from cabletheory.tui.forms import read_charging_form

    setup, errors = read_charging_form(texts, model, stimulus)
    assert errors == {}
    return charging_report(setup)


def test_charging_sealed_cylinder_matches_rall_series():
    """Computed from the Rall 1969 series [Rall1969]: sealed cylinder, L = 1, current step at X = 0,
    V(0, T = 1)/V(0, ∞) = 0.7198225011; V(0, ∞) = I R∞ coth L; τ0/τ1 = 1 + π² (Rall 1969 [Rall1969])."""
    report = charging(length=LAMBDA, span="20 ms", watch="0 µm")
    table = {c.key: np.asarray(c.values) for c in report.tables[0].columns}
    final = result(report, next(r.key for r in report.results if r.key.startswith("final_voltage")))
    r_inf = 450.1581581e6  # demo cable R∞, computed
    assert final == pytest.approx(100e-12 * r_inf / math.tanh(1.0), rel=1e-9)
    assert table["time"][-1] == pytest.approx(0.02)
    assert table["voltage_at_0um"][-1] / final == pytest.approx(0.7198225011, rel=1e-8)
    assert result(report, "time_constant_0") / result(report, "time_constant_1") == pytest.approx(
        10.86960440, rel=1e-8)
    assert result(report, "largest_error_bound") < 1e-9
    assert {p.x_label for p in report.plots} == {"t (ms)", "X = x/λ"}


def test_charging_infinite_cable_is_erf_sqrt_t():
    """Computed (Hodgkin & Rushton 1946 [HodgkinRushton1946]): V(0, T = 1)/V(0, ∞) = erf(1) = 0.8427007929."""
    report = charging("infinite", span="20 ms", watch="0 µm")
    table = {c.key: np.asarray(c.values) for c in report.tables[0].columns}
    final = 100e-12 * 450.1581581e6 / 2  # doubly infinite cable injected mid-way: R∞/2 [CP]
    assert table["voltage_at_0um"][-1] / final == pytest.approx(0.8427007929, rel=1e-8)
    assert row_text(next(r for r in report.results if r.key == "time_constants")).startswith("none")
    x = np.asarray(report.plots[1].series[0].x)
    assert x[0] == pytest.approx(-5.0)
    assert x[-1] == pytest.approx(5.0)


def test_charging_ball_and_stick_time_constants():
    """Computed (Rall 1969 [Rall1969]): ball and stick with L = 1, ρ = 5: τ0/τ1 = 8.537785309."""
    from cabletheory.cable import Cylinder
    from cabletheory.transient import BallAndStick

    cylinder = Cylinder(2.0, 2.0, 0.01, 2e-6, 707.1067811865476e-6)
    soma = BallAndStick.with_conductance_ratio(cylinder, 5.0).soma_diameter
    report = charging("ball-and-stick", length=LAMBDA, soma=f"{soma!r} m")
    assert result(report, "conductance_ratio") == pytest.approx(5.0, rel=1e-9)
    assert result(report, "time_constant_0") / result(report, "time_constant_1") == pytest.approx(
        8.537785309, rel=1e-8)


@pytest.mark.parametrize(("model", "stimulus", "texts", "field"), [
    ("cylinder", "step", {"watch": "0, 900 µm"}, "watch"),
    ("cylinder", "step", {"site": "600 µm"}, "site"),
    ("cylinder", "step", {"end": "leaky"}, "end"),
    ("ball-and-stick", "step", {"length": "inf"}, "length"),
    ("cylinder", "pulse", {"duration": "2 mV"}, "duration"),
    ("cylinder", "clamp", {"clamp": "10 pA"}, "clamp"),
])
def test_charging_form_flags_the_wrong_field(model, stimulus, texts, field):
    from cabletheory.tui.forms import read_charging_form

    setup, errors = read_charging_form(texts, model, stimulus)
    assert setup is None
    assert set(errors) == {field}


def test_charging_fields_follow_the_choices():
    from cabletheory.tui.fields import charging_fields_used

    assert {"soma"} & charging_fields_used("ball-and-stick", "step")
    assert not {"soma", "clamp", "duration"} & charging_fields_used("cylinder", "step")
    assert {"clamp"} <= charging_fields_used("cylinder", "clamp")
    assert "site" not in charging_fields_used("cylinder", "clamp")  # a clamp sits at the origin
    assert "site" in charging_fields_used("infinite", "clamp")
    assert not {"length", "end"} & charging_fields_used("infinite", "alpha")


def test_charging_export_has_both_plots(tmp_path):
    report = charging(stimulus="pulse")
    assert len(report.plots) == 2
    svg = export.export(report, tmp_path / "charging.svg").read_text()
    assert svg.count("V(t) at the chosen positions") == 1
    assert "V(X) at the chosen times" in svg
    data = json.loads(export.to_json(report))
    assert data["tables"]["time_course"]["time"]["unit"] == "s"
    assert data["results"]["largest_error_bound"]["unit"] == "V"


# -- the ui command ----------------------------------------------------------------------------------
def test_ui_command_is_registered_without_importing_textual():
    import subprocess
    import sys

    code = ("import sys; from cabletheory.cli import build_parser; p = build_parser(); "
            "a = p.parse_args(['ui', '--view', 'charging']); "
            "print(a.view, callable(a.run), 'textual' in sys.modules)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.split() == ["charging", "True", "False"]


@pytest.mark.parametrize("argv", [["ui", "no/such.swc"], ["ui", "--check", "no/such.csv"], ["ui", "--view", "x"]])
def test_ui_command_bad_arguments_give_one_line_and_status_2(capsys, argv):
    from cabletheory.cli import main

    assert main(argv) == 2
    err = capsys.readouterr().err
    assert err.startswith("cabletheory: error: ")
    assert err.count("\n") == 1


@pytest.mark.parametrize("end", ["sealed", "killed", "1 nS"])
def test_check_exact_case_reaches_the_closed_form_steady_state(end, tmp_path):
    """The check form's exact answer (verify.exact_case of the form's model and stimulus) for every
    far end settles to I·R_in of cable.input_resistance (R∞ coth L sealed, R∞ tanh L killed,
    Rall 1959 [Rall1959]; computed) and is exactly 0 before the onset."""
    from cabletheory import cable
    from cabletheory.tui.forms import read_check_form
    from cabletheory.verify.exact import exact_case

    run = tmp_path / "run.csv"
    run.write_text("time (ms),V at 0 um (mV)\n0,0\n", encoding="utf-8")
    setup, errors = read_check_form({"file": str(run), "end": end})
    assert errors == {}
    cyl = setup.case.model
    values, bound = exact_case(Case(cyl, setup.case.stimulus), 1e-12).evaluate(np.array([-1e-3, 0.0, 1.0]),
                                                                         np.zeros(3))
    r_in = float(cable.input_resistance(cyl.semi_infinite_input_resistance, cyl.electrotonic_length,
                                        cyl.end_conductance_ratio))
    assert {"sealed": 739.3466931e6, "killed": 274.0830103e6}.get(end, r_in) == pytest.approx(r_in, rel=1e-9)
    assert values[0] == 0.0
    assert values[1] == 0.0
    assert values[2] == pytest.approx(1e-10 * r_in, rel=1e-9)  # t = 50 τm: steady state
    assert np.all(bound <= 1e-9 * abs(values[2]))
