"""Behaviour of the terminal app, driven by keys and clicks through textual's Pilot.

Each test runs the app headless with ``App.run_test`` inside ``asyncio.run`` (no async plugin
needed). Expected numbers are the demo cable's values of docs/sources.md
(computed with mpmath [mpmath2023]; formulas Rall 1959 [Rall1959]).
"""

from __future__ import annotations

import json
from functools import partial

import pytest

pytest.importorskip("textual")

import app_driver
from textual.widgets import Input

from cabletheory import PASSIVE_CAVEAT
from cabletheory.tui.app import CableApp
from cabletheory.tui.dialogs import HelpScreen, SaveScreen
from cabletheory.tui.keys import GLOBAL_KEYS, VIEW_KEYS, key_label
from cabletheory.tui.widgets import QuantityField

# the scripts here start after the first frame, before the first results are in
drive = partial(app_driver.drive, settled=False)


def text_of(app, selector: str) -> str:
    return str(app.query_one(selector).render())


async def type_into(pilot, app: CableApp, field: str, text: str) -> None:
    """Focus a field, clear it with keys and type ``text`` key by key."""
    box = app.query_one(f"#{field}", Input)
    box.focus()
    await pilot.press("end", "ctrl+u")
    await pilot.press(*text)
    await pilot.pause()


# -- shell ---------------------------------------------------------------------------------------------
# The shell's checks run in turn from one app start (each leaves the app where the next expects it:
# the first three on the cylinder view, then the view keys, then a click on the view bar).
async def starts_on_the_cylinder_view_with_caveat_and_results(app, pilot):
    assert app.current_view == "cylinder"
    assert PASSIVE_CAVEAT in text_of(app, "#caveat")
    results = text_of(app, "#cylinder-results")
    assert "707.1 µm" in results  # λ of the demo cable
    assert "739.3 MΩ" in results  # R∞ coth L, sealed
    assert app.focused is app.query_one("#Rm")  # focus starts on the first field


async def tab_moves_through_the_fields_in_reading_order(app, pilot):
    app.query_one("#Rm").focus()
    order = [app.focused.id]
    for _ in range(5):
        await pilot.press("tab")
        order.append(app.focused.id)
    assert order == ["Rm", "Ri", "Cm", "diameter", "length", "end"]


async def help_panel_lists_every_key_and_closes_with_escape(app, pilot):
    await pilot.press("f1")
    assert isinstance(app.screen, HelpScreen)
    shown = str(app.screen.query_one("#help-text").render())
    for key in (*GLOBAL_KEYS, *VIEW_KEYS["cylinder"]):
        assert key_label(key.key) in shown
        assert key.description in shown
    await pilot.press("escape")
    assert not isinstance(app.screen, HelpScreen)
    await pilot.press("f1", "f1")  # F1 toggles
    assert not isinstance(app.screen, HelpScreen)


async def function_keys_and_ctrl_t_switch_views(app, pilot):
    seen = []
    for key in ("f3", "f4", "f5", "f2"):
        await pilot.press(key)
        seen.append(app.current_view)
    assert seen == ["charging", "tree", "check", "cylinder"]
    await pilot.press("ctrl+t")
    assert app.current_view == "charging"


async def clicking_a_view_name_switches_view(app, pilot):
    bar = str(app.query_one("#view-bar").render())
    column = bar.index("F4 Tree")
    await pilot.click("#view-bar", offset=(column + 1, 0))
    await pilot.pause()
    assert app.current_view == "tree"


SHELL_CHECKS = (starts_on_the_cylinder_view_with_caveat_and_results, tab_moves_through_the_fields_in_reading_order,
                help_panel_lists_every_key_and_closes_with_escape, function_keys_and_ctrl_t_switch_views,
                clicking_a_view_name_switches_view)


def test_the_shell_starts_on_the_cylinder_view_and_its_keys_and_clicks_work():
    done = []

    async def script(app, pilot):
        for check in SHELL_CHECKS:
            await check(app, pilot)
            done.append(check.__name__)

    drive(script)
    assert done == [check.__name__ for check in SHELL_CHECKS]


# -- cylinder view ---------------------------------------------------------------------------------------
# The cylinder view's checks run in turn from one app start: after each, the fields it typed into
# are set back to their defaults and the results must read exactly as at the start, so every check
# starts from the default cable as it would in a fresh app.
DEFAULTS = {"Rm": "20 kΩ·cm²", "diameter": "2 µm", "end": "sealed", "frequency": "100 Hz"}


async def typing_a_wrong_unit_flags_the_field_and_fixing_it_restores_results(app, pilot):
    await type_into(pilot, app, "Rm", "5uF")
    field = app.query_one("#field-Rm", QuantityField)
    assert field.has_class("bad")
    message = text_of(app, "#field-Rm .field-echo")
    assert message == "Rm: '5uF' is a capacitance, expected a specific membrane resistance such as 20 kΩ·cm²"
    assert "wait for valid inputs" in text_of(app, "#cylinder-results")
    assert app.query_one("#cylinder").report is None
    await type_into(pilot, app, "Rm", "40000")  # bare number: Ω·cm²
    assert not field.has_class("bad")
    # λ ∝ √Rm: doubling Rm multiplies 707.1 µm by √2 -> 1.000 mm (λ = √(Rm d / 4 Ri))
    assert "1.000 mm" in text_of(app, "#cylinder-results")


async def results_follow_each_keystroke(app, pilot):
    await type_into(pilot, app, "diameter", "8")
    # λ ∝ √d: 707.1 µm × 2 = 1.414 mm
    assert "1.414 mm" in text_of(app, "#cylinder-results")


async def the_far_end_is_typed_as_in_every_view_and_its_reading_is_echoed(app, pilot):
    await type_into(pilot, app, "end", "killed")
    assert "274.1 MΩ" in text_of(app, "#cylinder-results")  # R∞ tanh L, computed
    assert "killed" in app.query_one("#field-end", QuantityField).echo_text
    # B = 1: G_end = G∞ = 1/450.158 MΩ gives R_in = R∞ for every L (Rall 1959 [Rall1959])
    await type_into(pilot, app, "end", "2.2214411")  # bare number: nS
    results = text_of(app, "#cylinder-results")
    assert "input resistance R_in (leaky end)" in results
    assert "450.2 MΩ" in results
    assert app.query_one("#field-end", QuantityField).echo_text == "= 2.221 nS to rest"
    await type_into(pilot, app, "end", "open")
    assert app.query_one("#field-end", QuantityField).has_class("bad")
    assert "is not 'sealed', 'killed' or a conductance" in text_of(app, "#field-end .field-echo")


async def blank_frequency_drops_the_sinusoidal_rows(app, pilot):
    assert "input impedance phase" in text_of(app, "#cylinder-results")
    await type_into(pilot, app, "frequency", "")
    assert "input impedance phase" not in text_of(app, "#cylinder-results")
    assert len(app.query_one("#cylinder-plot").spec.series) == 1


async def export_without_a_valid_result_says_so(app, pilot):
    await type_into(pilot, app, "length", "-1")
    await pilot.press("ctrl+s")
    assert not isinstance(app.screen, SaveScreen)
    assert "Nothing to save yet" in text_of(app, "#status")


CYLINDER_CHECKS = (results_follow_each_keystroke, typing_a_wrong_unit_flags_the_field_and_fixing_it_restores_results,
                   the_far_end_is_typed_as_in_every_view_and_its_reading_is_echoed,
                   blank_frequency_drops_the_sinusoidal_rows, export_without_a_valid_result_says_so)


def test_the_cylinder_view_follows_typed_values_flags_bad_ones_and_saves_only_a_result():
    done = []

    async def script(app, pilot):
        await pilot.pause()
        start = text_of(app, "#cylinder-results")
        assert "707.1 µm" in start  # λ of the demo cable
        for check in CYLINDER_CHECKS:
            await check(app, pilot)
            done.append(check.__name__)
            for name, default in DEFAULTS.items():
                app.query_one(f"#{name}", Input).value = default
            await pilot.pause()
            if check is not CYLINDER_CHECKS[-1]:
                assert text_of(app, "#cylinder-results") == start, f"not the default cable after {check.__name__}"

    drive(script)
    assert done == [check.__name__ for check in CYLINDER_CHECKS]


# -- export ---------------------------------------------------------------------------------------------------
SUFFIXES = ("json", "csv", "md", "svg")


def test_export_writes_the_file_the_user_names(tmp_path):
    """Each format in turn from one app (saving leaves the view as it was): the dialog closes, the
    status names the file, and the file holds the result in its format."""
    targets = {suffix: tmp_path / f"cable.{suffix}" for suffix in SUFFIXES}

    async def script(app, pilot):
        for suffix, target in targets.items():
            await pilot.press("ctrl+g" if suffix == "svg" else "ctrl+s")
            assert isinstance(app.screen, SaveScreen), suffix
            box = app.screen.query_one("#save-path", Input)
            box.value = str(target)
            await pilot.press("enter")
            await pilot.pause()
            assert not isinstance(app.screen, SaveScreen), suffix
            assert f"Saved {target}" in text_of(app, "#status")

    drive(script)
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(t.name for t in targets.values())
    for suffix, target in targets.items():
        content = target.read_text(encoding="utf-8")
        if suffix == "json":
            assert json.loads(content)["results"]["input_resistance"]["unit"] == "ohm"
        elif suffix == "svg":
            assert "<svg" in content
        else:
            assert "input_resistance" in content or "input resistance" in content, suffix


def test_export_with_a_bad_name_keeps_the_dialog_open_with_a_message(tmp_path):
    async def script(app, pilot):
        await pilot.press("ctrl+s")
        app.screen.query_one("#save-path", Input).value = str(tmp_path / "table.xlsx")
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, SaveScreen)
        assert "no known suffix" in text_of(app.screen, "#save-message")
        await pilot.press("escape")
        assert not isinstance(app.screen, SaveScreen)

    drive(script)
    assert list(tmp_path.iterdir()) == []


def test_the_modules_imported_ahead_of_the_first_result_exist_and_name_views():
    """The app imports what a view's first result needs while it draws the first frame; a module
    renamed or a view removed would make that warm-up silently useless."""
    import importlib.util

    from cabletheory.tui.app import FIRST_RESULT_MODULES
    from cabletheory.tui.keys import VIEWS

    assert set(FIRST_RESULT_MODULES) <= set(VIEWS)
    for modules in FIRST_RESULT_MODULES.values():
        for name in modules:
            assert importlib.util.find_spec(name) is not None, name
