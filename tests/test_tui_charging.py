"""The charging view driven through Pilot: the exact solver in a worker, keys, flagged fields, export.

Expected numbers: the demo cable of docs/sources.md (I R∞ coth L, Rall 1959 [Rall1959], computed)
and Rall (1969) [Rall1969] for τ0 = τm of a sealed cylinder.
"""

from __future__ import annotations

from functools import partial

import pytest

pytest.importorskip("textual")

import app_driver
from app_driver import settle
from textual.widgets import Input

# the scripts here start after the first frame, before the first results are in
drive = partial(app_driver.drive, settled=False)


def text_of(node, selector: str) -> str:
    return str(node.query_one(selector).render())


async def type_into(pilot, app, field: str, text: str) -> None:
    box = app.query_one(f"#{field}", Input)
    box.focus()
    await pilot.press("end", "ctrl+u")
    await pilot.press(*text)
    await pilot.pause()


# The first result, its export and a flagged position run in turn from one app start (in this order:
# the first two read the default case, the last leaves the form with a flagged field).
async def solves_in_a_worker_and_lists_time_constants(app, pilot):
    await pilot.press("f3")
    await settle(app, pilot)
    view = app.query_one("#charging")
    results = text_of(app, "#charging-results")
    assert "τ0  slowest time constant" in results
    assert "20.00 ms" in results  # τ0 = τm for a sealed cylinder (Rall 1969)
    assert "error bound of every value" in results
    assert "73.93 mV" in results  # I R∞ coth L for 100 pA (computed)
    assert view.report is not None
    assert [len(p.spec.series) for p in app.query("#charging CurvePlot")] == [3, 3]
    assert not app.query_one("#charging .plots").loading


async def flags_a_position_beyond_the_cable(app, pilot):
    await pilot.press("f3")
    await settle(app, pilot)
    await type_into(pilot, app, "ch-watch", "0, 900")
    await settle(app, pilot)
    assert app.query_one("#field-ch-watch").has_class("bad")
    assert "900.0 µm lies outside the cable" in text_of(app, "#field-ch-watch .field-echo")
    assert app.query_one("#charging").report is None


def test_charging_view_solves_in_a_worker_exports_csv_and_flags_a_position_beyond_the_cable(tmp_path):
    target = tmp_path / "charging.csv"
    done = []

    async def exports_csv(app, pilot):
        await pilot.press("f3")
        await settle(app, pilot)
        await pilot.press("ctrl+s")
        app.screen.query_one("#save-path", Input).value = str(target)
        await pilot.press("enter")
        await pilot.pause()

    checks = (solves_in_a_worker_and_lists_time_constants, exports_csv, flags_a_position_beyond_the_cable)

    async def script(app, pilot):
        for check in checks:
            await check(app, pilot)
            done.append(check.__name__)

    drive(script)
    assert done == [check.__name__ for check in checks]
    lines = target.read_text(encoding="utf-8").splitlines()
    assert lines[0] == "part,quantity,index,value,unit"
    last_time = next(line for line in lines if line.startswith("time_course,time,240,"))
    assert float(last_time.split(",")[3]) == pytest.approx(0.06)  # the "V(t) until" field
    assert last_time.endswith(",s")


def test_charging_view_keys_switch_model_and_stimulus():
    async def script(app, pilot):
        await pilot.press("f3")
        await settle(app, pilot)
        view = app.query_one("#charging")
        soma = app.query_one("#field-ch-soma")
        assert not soma.display
        await pilot.press("ctrl+l")
        await settle(app, pilot)
        assert view.model_choice == "ball-and-stick"
        assert soma.display
        assert "ρ   dendrite/soma conductance" in text_of(app, "#charging-results")
        await pilot.press("ctrl+n", "ctrl+n", "ctrl+n")
        await settle(app, pilot)
        assert view.stimulus_choice == "clamp"
        assert app.query_one("#field-ch-clamp").display
        assert not app.query_one("#field-ch-current").display
        assert "clamp fixes the soma voltage" in " ".join(view.report.notes)

    drive(script)


def test_charging_view_announces_and_covers_only_a_slow_result(monkeypatch):
    """A quick result replaces the old one without "computing…" or a loading cover (a word shown
    and taken away flickers; a cover put up and taken down lays the whole view out twice); a slow
    one is announced after SAY_AFTER and covers the stale plots after COVER_AFTER.

    "Quick" and "slow" are made independent of the machine's load: the quick result is timed
    against a SAY_AFTER of a minute, and the slow one waits for the test to release it."""
    import threading
    import time

    from cabletheory.tui import charging_view
    from cabletheory.tui import format as formatting

    async def script(app, pilot):
        await pilot.press("f3")
        await settle(app, pilot)
        view = app.query_one("#charging")
        results = app.query_one("#charging-results")
        plots = app.query_one("#charging .plots")
        shown = view.report
        monkeypatch.setattr(charging_view, "SAY_AFTER", 60.0)
        monkeypatch.setattr(charging_view, "COVER_AFTER", 60.0)
        view.refresh_results(again=True)
        await settle(app, pilot)
        assert view.report is not shown
        assert not results.border_subtitle
        assert not plots.loading

        quick = formatting.charging_report
        release = threading.Event()
        monkeypatch.setattr(charging_view, "SAY_AFTER", 0.02)
        monkeypatch.setattr(charging_view, "COVER_AFTER", 0.05)
        monkeypatch.setattr(formatting, "charging_report", lambda setup: (release.wait(60), quick(setup))[1])
        view.refresh_results(again=True)
        assert not results.border_subtitle
        assert not plots.loading
        deadline = time.monotonic() + 30
        while not (results.border_subtitle and plots.loading) and time.monotonic() < deadline:
            await pilot.pause(0.02)
        assert results.border_subtitle == "computing…"
        assert plots.loading
        release.set()
        await settle(app, pilot)
        assert not results.border_subtitle
        assert not plots.loading
        assert view.report is not None

    drive(script)
