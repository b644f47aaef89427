"""Everyday use of the app, driven through Pilot: one cell for every view, the echo of each value,
no stale result, the keys, a broken file, the jumps to the worst points of a tree, and every view
at 80×24.

Reference values: the demo dendrite of docs/sources.md (λ = 707.1 µm for Rm 20 kΩ·cm², Ri
200 Ω·cm, d 2 µm; λ ∝ √(Rm d / 4 Ri), Rall 1959 [Rall1959]).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("textual")

from app_driver import drive, settle
from textual.widgets import Input, Tree

from cabletheory.tui.dialogs import HelpScreen, SaveScreen
from cabletheory.tui.fields import bundled_morphologies
from cabletheory.tui.widgets import QuantityField

PV7 = bundled_morphologies() / "lumenia_pv7_interneuron.swc"


async def type_into(pilot, app, field: str, text: str) -> None:
    app.query_one(f"#{field}", Input).focus()
    await pilot.press("end", "ctrl+u", *text)
    await settle(app, pilot)


def text_of(app, selector: str) -> str:
    return str(app.query_one(selector).render())


# -- item 1: one cell for every view -------------------------------------------------------------------
def test_the_cell_typed_in_one_view_is_the_cell_of_every_view():
    async def script(app, pilot):
        await type_into(pilot, app, "diameter", "8")  # λ ∝ √d: 707.1 µm × 2
        await type_into(pilot, app, "end", "killed")
        await type_into(pilot, app, "Rm", "40000")  # Ω·cm², and × √2: 2.000 mm
        await pilot.press("f3")
        await settle(app, pilot)
        assert app.query_one("#ch-diameter", Input).value == "8"
        assert app.query_one("#ch-end", Input).value == "killed"
        bad = [f.echo_text for f in app.query(QuantityField) if f.has_class("bad")]
        assert not bad
        assert "2.000 mm" in text_of(app, "#charging-results")
        await type_into(pilot, app, "ch-diameter", "2")  # back to the demo's d, Rm stays doubled
        await pilot.press("f4")
        await settle(app, pilot)
        assert app.query_one("#tr-Rm", Input).value == "40000"
        await pilot.press("f2")
        await settle(app, pilot)
        assert app.query_one("#diameter", Input).value == "2"
        assert "1.000 mm" in text_of(app, "#cylinder-results")  # 707.1 µm × √2

    drive(script)


# -- item 2: echo of every value, warnings under the field --------------------------------------------------
async def each_field_echoes_the_value_it_was_read_as_and_warns_of_an_implausible_one(app, pilot):
    field = app.query_one("#field-diameter", QuantityField)
    await type_into(pilot, app, "diameter", "15")  # bare number: µm
    assert field.echo_text == "= 15.00 µm"
    rm = app.query_one("#field-Rm", QuantityField)
    await type_into(pilot, app, "Rm", "3")  # read as 3 Ω·cm², far below any membrane
    assert rm.echo_text.startswith("= 0.003000 kΩ·cm²")
    assert "⚠" in rm.echo_text
    assert rm.has_class("warned")
    assert not rm.has_class("bad")
    assert app.query_one("#cylinder").report is not None  # used as typed
    await type_into(pilot, app, "diameter", "1,5 µm")  # a decimal comma is refused with a hint
    assert field.has_class("bad")
    assert "1.5" in field.echo_text


# -- item 5: no stale result ------------------------------------------------------------------------------
async def a_result_for_inputs_no_longer_on_screen_is_dropped(app, pilot):
    await pilot.press("f3")
    await settle(app, pilot)
    view = app.query_one("#charging")
    old = view.wanted
    assert view.report is not None
    await type_into(pilot, app, "ch-current", "200")
    assert view.wanted != old
    shown = view.report
    view._show(old, "a late result of the earlier inputs")  # a worker that started before the edit
    assert view.report is shown  # still the result of the inputs on screen
    current = [row.value for row in view.report.inputs if row.key == "current"]
    assert current == [pytest.approx(200e-12)]


def test_a_broken_file_opened_with_ctrl_o_is_explained_and_clears_the_previous_outline(tmp_path: Path):
    broken = tmp_path / "broken.swc"
    broken.write_text("1 1 0 0 0 5 -1\n2 3 0 0 x 1 1\n")

    async def script(app, pilot):
        assert len(app.query_one("#tree-outline", Tree).root.children) > 0
        await pilot.press("ctrl+o")
        box = app.screen.query_one("#open-path", Input)
        box.value = str(broken)
        await pilot.press("enter")
        await settle(app, pilot)
        await settle(app, pilot)
        message = text_of(app, "#field-tr-file .field-echo")
        assert "broken.swc" in message
        assert ":2" in message
        assert len(app.query_one("#tree-outline", Tree).root.children) == 0
        assert app.query_one("#tree").report is None

    drive(script, view="tree")


# -- item 6: keys ----------------------------------------------------------------------------------------
async def question_mark_opens_the_help_when_not_typing_and_types_in_a_field(app, pilot):
    app.query_one("#Rm", Input).focus()
    await pilot.press("?")
    assert not isinstance(app.screen, HelpScreen)
    assert app.query_one("#Rm", Input).value.endswith("?")
    app.query_one("#cylinder-results").focus()
    await pilot.press("?")
    assert isinstance(app.screen, HelpScreen)
    await pilot.press("?")
    assert not isinstance(app.screen, HelpScreen)


async def global_keys_are_inert_under_a_dialog(app, pilot):
    await pilot.press("ctrl+s")
    assert isinstance(app.screen, SaveScreen)
    await pilot.press("f3", "ctrl+t", "ctrl+g", "f1")
    assert isinstance(app.screen, SaveScreen)
    assert app.current_view == "cylinder"
    await pilot.press("escape")
    await pilot.press("f3")
    assert app.current_view == "charging"


async def back_to_the_cylinder_view(app, pilot):
    await pilot.press("f2")
    await settle(app, pilot)
    assert app.current_view == "cylinder"


# in this order from one app start: the dialog needs a result to save, the stale-result check reads
# the charging view the key check ends on, the last two type into the cylinder view's fields
DEFAULT_APP_CHECKS = (global_keys_are_inert_under_a_dialog, a_result_for_inputs_no_longer_on_screen_is_dropped,
                      back_to_the_cylinder_view,
                      each_field_echoes_the_value_it_was_read_as_and_warns_of_an_implausible_one,
                      question_mark_opens_the_help_when_not_typing_and_types_in_a_field)


def test_keys_dialogs_stale_results_and_echoes_in_turn_from_one_app_start():
    done = []

    async def script(app, pilot):
        for check in DEFAULT_APP_CHECKS:
            await check(app, pilot)
            done.append(check.__name__)

    drive(script)
    assert done == [check.__name__ for check in DEFAULT_APP_CHECKS]


# -- item 9: the worst points of a tree -----------------------------------------------------------------------
async def keys_jump_to_the_worst_branch_point_and_the_worst_tip(app, pilot):
    view = app.query_one("#tree")
    worst_branch, worst_tip = view.worst
    assert worst_branch
    assert worst_tip
    outline = app.query_one("#tree-outline", Tree)
    await pilot.press("f6")
    assert outline.cursor_node.data == worst_branch
    assert app.focused is outline
    await pilot.press("t")  # the outline has focus: a plain letter works
    assert outline.cursor_node.data == worst_tip
    assert "tip" in str(outline.cursor_node.label)


# -- item 3: every view at 80×24 ------------------------------------------------------------------------
# One app at 80×24 shows each view in turn (its key, then its first result); starting on each view at
# 80×24 is pictured by tests/test_tui_snapshots.py.
VIEW_RESULTS = {"cylinder": ("f2", "#cylinder-results"), "charging": ("f3", "#charging-results"),
                "tree": ("f4", "#tree-results"), "check": ("f5", "#check-results")}


def test_every_view_shows_its_main_answer_at_80_by_24():
    seen = []

    async def script(app, pilot):
        for view, (key, selector) in VIEW_RESULTS.items():
            await pilot.press(key)
            await settle(app, pilot)
            assert app.current_view == view
            results = app.query_one(selector)
            assert results.focusable, view
            assert results.region.width >= 30, view
            assert results.region.height >= 3, view
            if view == "cylinder":
                results.focus()
                await pilot.press("pagedown")
                await pilot.pause()
                assert "input resistance R_in" in text_of(app, "#cylinder-results")
            seen.append(view)

    drive(script, size=(80, 24))
    assert seen == list(VIEW_RESULTS)


# -- item 4: saved files say which curve is which ---------------------------------------------------------
def test_saved_curves_are_named_by_position_and_time_with_the_truncation_and_its_unit():
    from cabletheory.tui.export import to_json
    from cabletheory.tui.format import charging_report
    from cabletheory.tui.forms import read_charging_form

    setup, errors = read_charging_form({"watch": "0, 800 µm", "length": "1000 µm", "moments": "2.5 ms",
                                        "end": "killed"}, "cylinder", "step")
    assert errors == {}
    data = json.loads(to_json(charging_report(setup)))
    assert set(data["tables"]["time_course"]) == {"time", "voltage_at_0um", "voltage_at_800um"}
    assert "voltage_at_2.5ms" in data["tables"]["profile"]
    assert data["inputs"]["time_course_position_2"] == {"value": pytest.approx(8e-4), "unit": "m"}
    assert data["inputs"]["profile_time_1"] == {"value": pytest.approx(2.5e-3), "unit": "s"}
    assert data["inputs"]["truncation"]["unit"] == "dimensionless"  # as the command line writes it
    assert data["inputs"]["truncation_voltage"]["unit"] == "V"


# -- item 7: plots ------------------------------------------------------------------------------------------
def test_curves_differ_without_colour_and_round_off_is_drawn_flat():
    from cabletheory.tui.plot import PALETTE, curve_style, draw
    from cabletheory.tui.report import PlotSpec, Series

    styles = {curve_style(n) for n in range(40)}
    assert len(styles) == 40
    assert len({curve_style(n)[1] for n in range(4)}) == 4  # the first four differ in pattern alone
    assert len(PALETTE) > 6
    x = np.linspace(0.0, 10.0, 50)
    roundoff = PlotSpec("t", "t (ms)", "V (mV)", (Series("x = 1 mm", x, 1e-15 * np.sin(x)),), y_span=0.01)
    picture = draw(roundoff, 60, 12)
    rows_with_dots = [r for r in picture.rows[:-2] if any(0x2800 < ord(c) <= 0x28FF for c in r)]
    assert len(rows_with_dots) <= 2  # a flat line (on the border of two cells), not a wiggle
    magnified = draw(PlotSpec("t", "t (ms)", "V (mV)", roundoff.series), 60, 12)
    assert len([r for r in magnified.rows[:-2] if any(0x2800 < ord(c) <= 0x28FF for c in r)]) > 3


def test_a_killed_end_curve_of_the_charging_view_stays_flat():
    from cabletheory.tui.format import charging_report
    from cabletheory.tui.forms import read_charging_form

    setup, _ = read_charging_form({"watch": "500 µm", "end": "killed"}, "cylinder", "step")
    spec = charging_report(setup).plots[0]
    assert float(np.max(np.abs(spec.series[0].y))) < 1e-9  # the killed end stays at rest (mV)
    assert spec.y_span == pytest.approx(1e-3 * 100e-12 * 450.1581581e6 * math.tanh(1 / 2**0.5) * 1e3, rel=1e-6)


# -- item 8: a file is read once; a membrane edit re-audits the tree already read -----------------------------
def test_keys_jump_to_the_worst_points_and_a_membrane_edit_re_audits_without_reading_the_file_again(monkeypatch):
    """On PV-7, after the keys that jump to its worst points (item 9, which read nothing)."""
    from cabletheory.tui import format as formatting

    reads = []
    original = formatting.read_tree

    def counting(path):
        reads.append(path)
        return original(path)

    monkeypatch.setattr(formatting, "read_tree", counting)

    async def script(app, pilot):
        assert len(reads) == 1
        await keys_jump_to_the_worst_branch_point_and_the_worst_tip(app, pilot)
        assert len(reads) == 1
        before = text_of(app, "#tree-results")
        await type_into(pilot, app, "tr-Rm", "40000")  # Ω·cm²: λ × √2, every X ÷ √2
        await type_into(pilot, app, "tr-ratio_tolerance", "0.1")
        assert len(reads) == 1
        assert text_of(app, "#tree-results") != before
        await pilot.press("ctrl+r")  # computing again on request reads the file again (it may have changed)
        await settle(app, pilot)
        assert len(reads) == 2
        done.append(True)

    done = []
    drive(script, view="tree", swc=str(PV7))
    assert done == [True]
