"""Tree and check views driven through Pilot: open a bundled morphology, open simulator output, export.

Reference values: the demo tree of docs/sources.md, computed (Rall 1959 [Rall1959], 1964
[Rall1964]: equivalent cylinder; exact branched-tree solver) and the simulator check of
worked/simulator_check (its expected.txt, from ``cabletheory compare``).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

pytest.importorskip("textual")

from app_driver import drive, settle
from textual.widgets import Input, Tree

from cabletheory.tui.dialogs import OpenScreen, SaveScreen
from cabletheory.tui.fields import bundled_morphologies

ROOT = Path(__file__).resolve().parent.parent
SIMULATOR = ROOT / "worked" / "simulator_check"
PV7 = bundled_morphologies() / "lumenia_pv7_interneuron.swc"
DEMO_TREE = bundled_morphologies() / "lumenia_demo.outline"


def text_of(node, selector: str) -> str:
    return str(node.query_one(selector).render())


def outline_labels(app) -> list[str]:
    tree = app.query_one("#tree-outline", Tree)
    labels = []

    def walk(node) -> None:
        labels.append(str(node.label))
        for child in node.children:
            walk(child)

    walk(tree.root)
    return labels


# Checks that leave the app where the next one expects it run in turn from one app start (each
# ``async def`` below is one check; the test names the order).


# -- tree view -----------------------------------------------------------------------------------------
async def tree_view_reads_the_bundled_demo_when_first_shown(app, pilot):
    assert not app.query("#tree")  # the view is built, and the file read, when first shown
    await pilot.press("f4")
    await settle(app, pilot)
    results = text_of(app, "#tree-results")
    assert "verdict                 reducible" in results
    labels = outline_labels(app)
    assert labels[0] == "soma (point 1) (input site)"
    assert sum(label.startswith("✓") for label in labels) == 17  # every branch point passes
    assert sum("tip" in label for label in labels) == 20
    assert not any(label.startswith("✗") for label in labels)
    assert len(app.query_one("#tree-plot").spec.series) == 2


async def tree_view_opens_a_file_from_the_dialog_and_highlights_failures(app, pilot):
    await pilot.press("f4")
    await settle(app, pilot)
    await pilot.press("ctrl+o")
    assert isinstance(app.screen, OpenScreen)
    box = app.screen.query_one("#open-path", Input)
    box.value = str(PV7)
    await pilot.press("enter")
    await settle(app, pilot)
    assert not isinstance(app.screen, OpenScreen)
    results = text_of(app, "#tree-results")
    assert "NOT reducible" in results
    assert "3/2 rule: 29 of 33 branch points" in results
    labels = outline_labels(app)
    assert sum(label.startswith("✗") for label in labels) > 20
    flagged = [n for n in app.query_one("#tree-outline", Tree).root.children[0].children
               if str(n.label).startswith("✗")]
    assert all("bold" in str(n.label.style) for n in flagged)


async def tree_view_flags_a_missing_file_and_a_bad_membrane_value(app, pilot):
    await pilot.press("f4")
    await settle(app, pilot)
    box = app.query_one("#tr-file", Input)
    box.value = "no/such/file.swc"
    box.focus()
    await pilot.press("enter")
    await settle(app, pilot)
    assert "does not exist" in text_of(app, "#field-tr-file .field-echo")
    assert app.query_one("#tree").report is None
    app.query_one("#tr-file", Input).value = str(PV7)
    await pilot.press("enter")
    await settle(app, pilot)
    assert app.query_one("#tree").report is not None
    app.query_one("#tr-Ri", Input).value = "200 µF/cm²"
    await settle(app, pilot)
    assert "is a specific membrane capacitance" in text_of(app, "#field-tr-Ri .field-echo")
    assert app.query_one("#tree").report is None


def run_in_turn(checks, **options) -> None:
    """Run ``checks`` in turn from one app start of ``options``, and make sure each ran."""
    done = []

    async def script(app, pilot):
        for check in checks:
            await check(app, pilot)
            done.append(check.__name__)

    drive(script, **options)
    assert done == [check.__name__ for check in checks]


def test_tree_view_reads_the_demo_then_a_failing_file_then_flags_a_missing_file_and_a_bad_value():
    run_in_turn((tree_view_reads_the_bundled_demo_when_first_shown,
                 tree_view_opens_a_file_from_the_dialog_and_highlights_failures,
                 tree_view_flags_a_missing_file_and_a_bad_membrane_value))


def test_tree_view_exact_and_reduced_input_resistance_of_the_demo_tree_and_killed_tips(tmp_path):
    """Demo tree, computed (Rall 1969 [Rall1969]): with a 20 µm soma, R_N = 185.1329030 MΩ and ρ = 7.596794008, the same
    for the whole tree and for soma + equivalent cylinder (L = 0.9954565254). Then, in the same app,
    killed tips lower the input resistance."""
    target = tmp_path / "tree.json"

    async def exact_and_reduced_input_resistance(app, pilot):
        app.query_one("#tree").open_path(str(DEMO_TREE))
        await settle(app, pilot)
        results = text_of(app, "#tree-results")
        assert "185.1 MΩ" in results
        await pilot.press("ctrl+s")
        app.screen.query_one("#save-path", Input).value = str(target)
        await pilot.press("enter")
        await pilot.pause()
        assert not isinstance(app.screen, SaveScreen)

    async def killed_tips_lower_the_input_resistance(app, pilot):
        app.query_one("#tree").open_path(str(DEMO_TREE))
        await settle(app, pilot)
        sealed = app.query_one("#tree").report
        await pilot.click("#tips-killed")
        await settle(app, pilot)
        killed = app.query_one("#tree").report
        value = {r.key: r.value for r in sealed.results}["input_resistance"]
        assert {r.key: r.value for r in killed.results}["input_resistance"] < value

    run_in_turn((exact_and_reduced_input_resistance, killed_tips_lower_the_input_resistance), view="tree")
    data = json.loads(target.read_text(encoding="utf-8"))
    assert data["results"]["input_resistance"]["value"] == pytest.approx(185.1329030e6, rel=1e-8)
    assert data["results"]["reduced_input_resistance"]["value"] == pytest.approx(185.1329030e6, rel=1e-8)
    assert data["results"]["conductance_ratio"]["value"] == pytest.approx(7.596794008, rel=1e-8)
    assert data["results"]["equivalent_electrotonic_length"]["value"] == pytest.approx(0.9954565254, rel=1e-9)
    assert data["tables"]["tips"]["id"] == ["left.a", "left.b", "right.a", "right.b"]


# -- check view ----------------------------------------------------------------------------------------
async def check_view_flags_the_coarse_run_and_passes_the_refined_one(app, pilot):
    """worked/simulator_check/expected.txt: coarse run max error 1.47 mV at 0 µm, 250 µs (line 11),
    refined run 14.5 µV; tolerance 20 µV."""
    assert "Open a simulator's output" in text_of(app, "#check-results")
    await pilot.press("ctrl+o")
    app.screen.query_one("#open-path", Input).value = str(SIMULATOR / "coarse.csv")
    await pilot.press("enter")
    await settle(app, pilot)
    results = text_of(app, "#check-results")
    assert "FLAGGED" in results
    assert "1.468 mV" in results
    assert "worst point: file line            11" in results
    assert app.query_one("#check-plot").spec.x_label == "t after onset (ms)"
    await pilot.press("ctrl+p")
    await pilot.pause()
    assert app.query_one("#check-plot").spec.x_label == "x (µm)"
    app.query_one("#check").open_path(str(SIMULATOR / "refined.csv"))
    await settle(app, pilot)
    results = text_of(app, "#check-results")
    assert "within tolerance" in results
    assert "14.47 µV" in results


def test_check_view_coarse_and_refined_runs_tolerance_field_plot_export_and_no_overwrite(tmp_path):
    """In turn from one app start: the coarse run flagged and the refined one passed; the tolerance
    field and the plot's export; saving over the simulator's file refused."""
    target = tmp_path / "errors.png"
    source = tmp_path / "run.csv"
    source.write_bytes((SIMULATOR / "coarse.csv").read_bytes())

    async def tolerance_field_and_plot_export(app, pilot):
        app.query_one("#check").open_path(str(SIMULATOR / "coarse.csv"))
        await settle(app, pilot)
        app.query_one("#ck-pass_within", Input).value = "5 %"  # relative: 4.4 % of the peak passes
        await settle(app, pilot)
        assert "within tolerance" in text_of(app, "#check-results")
        app.query_one("#ck-pass_within", Input).value = "5 pA"
        await settle(app, pilot)
        assert "is a current" in text_of(app, "#field-ck-pass_within .field-echo")
        app.query_one("#ck-pass_within", Input).value = "20 µV"
        await settle(app, pilot)
        await pilot.press("ctrl+g")
        app.screen.query_one("#save-path", Input).value = str(target)
        await pilot.press("enter")
        await pilot.pause()

    async def refuses_to_overwrite_the_simulator_file(app, pilot):
        app.query_one("#check").open_path(str(source))
        await settle(app, pilot)
        await pilot.press("ctrl+s")
        app.screen.query_one("#save-path", Input).value = str(source)
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, SaveScreen)
        assert "also an input file" in text_of(app.screen, "#save-message")

    run_in_turn((check_view_flags_the_coarse_run_and_passes_the_refined_one, tolerance_field_and_plot_export,
                 refuses_to_overwrite_the_simulator_file), view="check")
    assert target.read_bytes().startswith(b"\x89PNG")
    assert source.read_bytes() == (SIMULATOR / "coarse.csv").read_bytes()
