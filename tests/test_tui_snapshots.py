"""Appearance of each view, compared with reviewed SVG snapshots (pytest-textual-snapshot).

Regenerate with ``pytest tests/test_tui_snapshots.py --snapshot-update`` and look at the new
SVGs in tests/__snapshots__/ before committing them. The terminal size is fixed and the
cursor does not blink, so the pictures are deterministic.
"""

from __future__ import annotations

from pathlib import Path

import pytest

pytest.importorskip("textual")

from textual.widgets import Input

from cabletheory.tui.app import CableApp

SIZE = (120, 36)


async def steady(pilot) -> None:
    """Stop the input cursors blinking and let workers finish, so the picture is stable."""
    for box in pilot.app.query(Input):
        box.cursor_blink = False
    for _ in range(2):  # a view computes its first result after its first frame
        await pilot.pause()
        await pilot.app.workers.wait_for_complete()
    await pilot.pause()


def test_cylinder_view(snap_compare):
    """The demo dendrite: constants, input resistance, steady and 100 Hz profiles."""
    assert snap_compare(CableApp(), terminal_size=SIZE, run_before=steady)


def test_cylinder_view_flags_a_wrong_unit(snap_compare):
    """Rm typed as a capacitance: the field is red with its one-line message, results wait."""

    async def wrong_unit(pilot) -> None:
        box = pilot.app.query_one("#Rm", Input)
        box.value = "5uF"
        await steady(pilot)

    assert snap_compare(CableApp(), terminal_size=SIZE, run_before=wrong_unit)


def test_cylinder_view_leaky_end(snap_compare):
    """A leaky end typed as its conductance (bare: nS), echoed beside the field; the ratio B is listed."""

    async def leaky(pilot) -> None:
        pilot.app.query_one("#end", Input).value = "1"
        await steady(pilot)

    assert snap_compare(CableApp(), terminal_size=SIZE, run_before=leaky)


def test_help_panel(snap_compare):
    """F1 lists the keys of every view and of this one."""
    assert snap_compare(CableApp(), terminal_size=SIZE, press=["f1"], run_before=steady)


def test_charging_view(snap_compare):
    """F3: a current step into the sealed demo dendrite: time constants, error bound, V(t) and V(X)."""
    assert snap_compare(CableApp(view="charging"), terminal_size=SIZE, run_before=steady)


def test_charging_view_ball_and_stick_alpha(snap_compare):
    """An alpha current into a ball and stick: the soma field appears, ρ is listed."""

    async def choose(pilot) -> None:
        await pilot.press("ctrl+l", "ctrl+n", "ctrl+n")
        await steady(pilot)

    assert snap_compare(CableApp(view="charging"), terminal_size=SIZE, run_before=choose)


def test_tree_view_conforming_demo(snap_compare):
    """F4 on the bundled conforming interneuron: every branch point ✓, verdict reducible."""
    assert snap_compare(CableApp(view="tree"), terminal_size=SIZE, run_before=steady)


def test_tree_view_failing_morphology(snap_compare):
    """The bundled PV-7 interneuron: failures in red, NOT reducible with reasons, tapering profile."""
    from cabletheory.tui.fields import bundled_morphologies

    swc = str(bundled_morphologies() / "lumenia_pv7_interneuron.swc")
    assert snap_compare(CableApp(view="tree", swc=swc), terminal_size=SIZE, run_before=steady)


def test_tree_view_time_course_panel(snap_compare):
    """ctrl+p on the bundled demo outline: an alpha current at tip left.a, V(t) at the soma and at the tip,
    the error estimate and the response's features."""
    from cabletheory.tui.fields import bundled_morphologies

    async def alpha_at_tip(pilot) -> None:
        await steady(pilot)
        await pilot.press("ctrl+p", "ctrl+n", "ctrl+n")
        pilot.app.query_one("#tr-stimulus_at", Input).value = "left.a"
        await steady(pilot)
        await steady(pilot)

    swc = str(bundled_morphologies() / "lumenia_demo.outline")
    assert snap_compare(CableApp(view="tree", swc=swc), terminal_size=SIZE, run_before=alpha_at_tip)


def test_tree_view_electrotonic_map_panel(snap_compare):
    """ctrl+p twice on the bundled demo outline: the map's table (soma row 1) and the coloured dendrogram."""
    from cabletheory.tui.fields import bundled_morphologies

    async def to_map(pilot) -> None:
        await steady(pilot)
        await pilot.press("ctrl+p", "ctrl+p")
        await steady(pilot)

    swc = str(bundled_morphologies() / "lumenia_demo.outline")
    assert snap_compare(CableApp(view="tree", swc=swc), terminal_size=SIZE, run_before=to_map)


def test_check_view_coarse_run(snap_compare):
    """F5 with the coarse simulator run of worked/simulator_check: flagged, worst point, error over time."""
    from pathlib import Path

    csv = Path(__file__).resolve().parent.parent / "worked" / "simulator_check" / "coarse.csv"

    async def relative_path(pilot) -> None:
        # show a short, machine-independent path in the file field
        await steady(pilot)
        box = pilot.app.query_one("#ck-file", Input)
        box.value = "worked/simulator_check/coarse.csv"
        box.cursor_position = 0
        await pilot.pause()

    app = CableApp(view="check", simulation=str(csv))
    assert snap_compare(app, terminal_size=SIZE, run_before=relative_path)


def test_check_view_killed_end_pulse(snap_compare, tmp_path):
    """ctrl+n picks a current pulse; the far end is killed and the pulse enters at 200 µm. The file is
    the exact answer plus 40 µV at one sample, which the view reports as the worst point."""
    from test_tui_check import write_run

    run = tmp_path / "killed_pulse.csv"
    write_run(run)

    async def choose(pilot) -> None:
        await pilot.press("ctrl+n")
        app = pilot.app
        app.query_one("#ck-end", Input).value = "killed"
        app.query_one("#ck-site", Input).value = "200 µm"
        app.query_one("#check").open_path(str(run))
        await pilot.pause()  # let the worker start
        await steady(pilot)
        box = app.query_one("#ck-file", Input)
        box.value = "killed_pulse.csv"  # a machine-independent path on the picture
        box.cursor_position = 0
        await pilot.pause()

    assert snap_compare(CableApp(view="check"), terminal_size=SIZE, run_before=choose)


# -- the least terminal a view is designed for: 80 × 24 ------------------------------------------------
SMALL = (80, 24)


@pytest.mark.parametrize("view", ["cylinder", "charging", "tree"])
def test_views_at_80_by_24(snap_compare, view):
    """Each view at 80×24: a narrower form, the main results in a focusable, scrollable panel
    (the tree's outline above its results)."""
    assert snap_compare(CableApp(view=view), terminal_size=SMALL, run_before=steady)


def test_help_panel_at_80_by_24(snap_compare):
    """The help fits an 80×24 terminal and scrolls."""
    assert snap_compare(CableApp(), terminal_size=SMALL, press=["f1"], run_before=steady)


# -- the fitting and survey views ------------------------------------------------------------------------
ROOT = Path(__file__).resolve().parent.parent


@pytest.mark.parametrize("size", [SIZE, SMALL], ids=["120x36", "80x24"])
def test_fit_view_ball_and_stick(snap_compare, monkeypatch, size):
    """worked/fitting's eight sweeps fitted as a ball and stick: values with 95 % intervals, the data
    with the fitted curves, the residuals."""
    monkeypatch.chdir(ROOT)  # the machine-independent path on the picture

    async def fit(pilot) -> None:
        app = pilot.app
        app.query_one("#ft-current", Input).value = "-40 pA"
        app.query_one("#ft-onset", Input).value = "20 ms"
        app.query_one("#ft-assumed_Ri", Input).value = "150 Ω·cm"
        await pilot.pause()
        app.query_one("#fit").refresh_results(again=True)
        await pilot.pause()
        await steady(pilot)

    app = CableApp(view="fit", recording="worked/fitting/lumenia_sweeps.csv")
    assert snap_compare(app, terminal_size=size, run_before=fit)


@pytest.mark.parametrize("size", [SIZE, SMALL], ids=["120x36", "80x24"])
def test_survey_view_with_an_error_row(snap_compare, monkeypatch, tmp_path, size):
    """Three bundled morphologies and one broken file: the broken one in red with its file:line reason,
    the electrotonic length summarised."""
    from cabletheory.inputs import read_outline_value
    from cabletheory.survey import SurveySettings, audit_file, table_csv

    broken = tmp_path / "broken.swc"
    broken.write_text("1 1 0 0 0 5 -1\n2 3 0 0 10 oops 1\n", encoding="utf-8")
    settings = SurveySettings(2.0, 1.5, read_value=read_outline_value)
    folder = "cabletheory/data/morphologies"
    rows = [audit_file(str(ROOT / folder / name), settings, name=f"{folder}/{name}")
            for name in ("lumenia_demo.outline", "lumenia_lw1_conforming.swc", "lumenia_pv7_interneuron.swc")]
    rows.append(audit_file(str(broken), settings, name="archive/broken.swc"))
    (tmp_path / "table.csv").write_text(table_csv(rows, settings), encoding="utf-8")
    monkeypatch.chdir(tmp_path)
    assert snap_compare(CableApp(view="survey", table="table.csv"), terminal_size=size, run_before=steady)
