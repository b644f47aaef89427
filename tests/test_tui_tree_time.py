"""The tree view's time course and electrotonic map, driven through Pilot, and their plain helpers.

Reference values: the time course is checked against :func:`cabletheory.tree_time.tree_response`
called from Python on the same file, membrane and stimulus (the app must show what the core
computes, with no arithmetic of its own), and against the exact ball-and-stick solution of the
demo tree's equivalent cylinder, which it must equal because the demo tree obeys Rall's
conditions exactly (Rall 1959 [Rall1959], 1969 [Rall1969]). The map's soma row has attenuation 1
by definition (a ratio of a voltage to itself, common practice [CP]); its centroid delays obey
D(to soma) = D(transfer) - D(local) (Agmon-Snir & Segev 1993 [AgmonSnirSegev1993]).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

pytest.importorskip("textual")

from app_driver import drive as drive_app
from app_driver import settle as settle_app
from textual.widgets import DataTable, Input

from cabletheory.tui.app import CableApp
from cabletheory.tui.fields import bundled_morphologies

DEMO_TREE = bundled_morphologies() / "lumenia_demo.outline"
PV7 = bundled_morphologies() / "lumenia_pv7_interneuron.swc"
# the form's default membrane (fields.TREE_FIELDS), SI
RM, RI, CM = 2.0, 2.0, 0.01


async def settle(app, pilot) -> None:
    """Three rounds: a time course is followed by its features, then by the reduction's response."""
    await settle_app(app, pilot, rounds=3)


def drive(script, swc=DEMO_TREE) -> CableApp:
    async def settled(app, pilot) -> None:
        await settle(app, pilot)
        await script(app, pilot)

    return drive_app(settled, view="tree", swc=str(swc))


async def type_into(pilot, box_id: str, text: str) -> None:
    box = pilot.app.query_one(f"#{box_id}", Input)
    box.focus()
    box.value = ""
    await pilot.press(*text)
    await settle(pilot.app, pilot)


def python_response(path, shape: str, values: dict, at: str, labels: list[str], times):
    """The same case computed with the core's own functions, not through the app."""
    from cabletheory.inputs import read_outline_value
    from cabletheory.morphology import read_morphology
    from cabletheory.tree import build_tree
    from cabletheory.tree_case import build_tree_case
    from cabletheory.tree_laplace import PassiveTree
    from cabletheory.tree_time import tree_response

    cell = PassiveTree(build_tree(read_morphology(path, read_outline_value)), RM, RI, CM)
    case = build_tree_case(cell, {"shape": shape, **values}, at, labels)
    return tree_response(cell, case.stimulus, times, case.stimulus_site, case.sites, tolerance=1e-8)


def table(report, key: str):
    return next(t for t in report.tables if t.key == key)


# -- the time course ---------------------------------------------------------------------------------
def test_typing_a_stimulus_point_shows_the_time_course_that_tree_response_gives():
    """An alpha current typed at tip 'left.a': the values on screen are tree_response's at every time
    and reading point (the soma and the stimulus point), within the error estimate shown. Then, in
    the same app, an unknown point label gets a one-line error naming the field
    (:func:`check_unknown_point_labels`)."""
    seen = {}

    async def script(app, pilot) -> None:
        view = app.query_one("#tree")
        view.show_panel("time")
        await settle(app, pilot)
        await pilot.press("ctrl+n", "ctrl+n")  # step -> pulse -> alpha
        await settle(app, pilot)
        await type_into(pilot, "tr-stimulus_at", "left.a")
        seen["report"] = view.report
        seen["plot"] = app.query_one("#tree-time-plot").spec
        seen["features"] = str(app.query_one("#tree-time-features").render())
        await unknown_point_labels(app, pilot, seen)

    drive(script)
    check_unknown_point_labels(seen)
    report = seen["report"]
    assert report is not None
    assert report.view == "tree_time_course"
    course = table(report, "time_course")
    times = np.asarray(course.columns[0].values)
    assert times[-1] == pytest.approx(0.050)  # "V(t) until" 50 ms
    exact = python_response(DEMO_TREE, "alpha", {"current": 100e-12, "time_to_peak": 0.5e-3}, "left.a",
                            ["soma", "left.a"], times)
    shown = np.column_stack([np.asarray(c.values) for c in course.columns[1:3]])
    np.testing.assert_allclose(shown, exact.voltage, rtol=0, atol=1e-15)
    bound = next(r for r in report.results if r.key == "error_bound")
    assert bound.value == pytest.approx(exact.error_bound)
    assert bound.kind == "voltage"
    assert [s.label for s in seen["plot"].series] == ["at soma", "at point left.a"]
    np.testing.assert_allclose(seen["plot"].series[1].y, exact.voltage[:, 1] * 1e3)  # mV on the plot
    # the features: the peak at the stimulus point is the largest sample, with its unit on screen
    features = table(report, "features")
    peak = np.asarray(features.columns[1].values)
    assert peak[1] == pytest.approx(exact.voltage[:, 1].max(), rel=1e-3)
    assert peak[0] < peak[1]  # attenuated on its way to the soma
    assert "peak" in seen["features"]
    assert "mV" in seen["features"]
    assert "ms" in seen["features"]


async def unknown_point_labels(app, pilot, seen: dict) -> None:
    """Type a stimulus point and a reading point that the tree does not have, then fix each."""
    view = app.query_one("#tree")
    await type_into(pilot, "tr-stimulus_at", "nowhere")
    seen["stimulus"] = app.query_one("#field-tr-stimulus_at").echo_text
    seen["unknown report"] = view.report
    seen["results"] = str(app.query_one("#tree-time-results").render())
    await type_into(pilot, "tr-stimulus_at", "left.b")
    await type_into(pilot, "tr-record_at", "soma, 9999")
    seen["record"] = app.query_one("#field-tr-record_at").echo_text
    await type_into(pilot, "tr-record_at", "soma, right.b")
    seen["fixed"] = view.report


def check_unknown_point_labels(seen: dict) -> None:
    """An unknown point label gets a one-line error naming the field; fixed, the result is back."""
    assert seen["stimulus"].startswith("stimulus at: no point 'nowhere' in ")  # the tree or its file
    assert "\n" not in seen["stimulus"]
    assert seen["unknown report"] is None
    assert "flagged" in seen["results"]
    assert seen["record"].startswith("V(t) at: no point '9999' in ")
    assert "\n" not in seen["record"]
    assert seen["fixed"] is not None
    assert [c.label for c in table(seen["fixed"], "time_course").columns[1:3]] == ["V at soma", "V at point right.b"]


def test_the_tree_time_course_of_the_demo_tree_is_its_ball_and_stick():
    """The demo tree obeys Rall's conditions: a current step at the soma charges the soma exactly as
    the ball and stick of its equivalent cylinder does (Rall 1959 [Rall1959]; that solution from
    cabletheory.transient, an eigenfunction series independent of the tree's contour inversion).
    Then, in the same app, the reduction is shown beside the tree when asked
    (:func:`check_the_reduction_beside_the_tree`)."""
    from cabletheory.cable import Cylinder
    from cabletheory.case import BallAndStick, CurrentStep
    from cabletheory.transient import charge

    seen = {}

    async def script(app, pilot) -> None:
        view = app.query_one("#tree")
        view.show_panel("time")
        await settle(app, pilot)
        seen["report"] = view.report
        app.query_one("#tr-reduced").value = True
        await settle(app, pilot)
        seen["reduced"] = view.report

    drive(script)
    check_the_reduction_beside_the_tree(seen["reduced"])
    course = table(seen["report"], "time_course")
    times = np.asarray(course.columns[0].values)
    # equivalent cylinder of the demo tree: d = 4 µm, ℓ/λ summed along a path (300/λ4 + 300/λ2.52 + 200/λ1.59)
    lam = lambda d: math.sqrt(RM * d / (4 * RI))  # noqa: E731  λ = sqrt(Rm d / 4 Ri) [CP]
    length = 4e-6 ** 0.5 * lam(4e-6) * (300e-6 / lam(4e-6) + 300e-6 / lam(2.51984209979e-6)
                                        + 200e-6 / lam(1.58740105197e-6)) / 4e-6 ** 0.5
    model = BallAndStick(Cylinder(RM, RI, CM, 4e-6, length, 0.0), 20e-6)
    reduced = charge(model, CurrentStep(100e-12), times, [0.0], tolerance=1e-12)
    np.testing.assert_allclose(np.asarray(course.columns[1].values), reduced.voltage[:, 0], rtol=0, atol=1e-9 * 0.1)


def check_the_reduction_beside_the_tree(report) -> None:
    """The reduction's curve beside the tree's, and their largest difference."""
    labels = [s.label for s in report.plots[0].series]
    assert labels == ["at soma", "soma, soma and equivalent cylinder"]
    difference = next(r for r in report.results if r.key == "reduction_largest_difference")
    # the demo tree reduces exactly: the two curves agree to the solvers' tolerance (Rall 1959 [Rall1959])
    assert difference.kind == "voltage"
    assert difference.value < 1e-9


# -- the electrotonic map -----------------------------------------------------------------------------
def test_the_map_table_has_attenuation_one_at_the_soma_and_follows_the_frequency():
    """Then, in the same app, the frequency set back to its default (the map as at first) and the
    table ordered by a clicked column (:func:`the_map_table_orders_by_a_clicked_column`)."""
    seen = {}

    async def script(app, pilot) -> None:
        view = app.query_one("#tree")
        await pilot.press("ctrl+p", "ctrl+p")  # audit -> time course -> map
        await settle(app, pilot)
        seen["panel"] = view.panel
        seen["steady"] = view.report
        grid = app.query_one("#tree-map-table", DataTable)
        seen["first row"] = [str(c) for c in grid.get_row_at(0)]
        await type_into(pilot, "tr-frequency", "100")
        seen["ac"] = view.report
        await type_into(pilot, "tr-frequency", "0")
        seen["back"] = view.report
        await the_map_table_orders_by_a_clicked_column(app, pilot, seen)

    drive(script)
    for back, first in zip(seen["back"].tables[0].columns, seen["steady"].tables[0].columns, strict=True):
        assert back.key == first.key
        np.testing.assert_array_equal(np.asarray(back.values), np.asarray(first.values))  # the map as at first
    check_the_order_by_a_clicked_column(seen["sorted"])
    assert seen["panel"] == "map"
    for report in (seen["steady"], seen["ac"]):
        columns = {c.key: c for c in report.tables[0].columns}
        assert columns["point"].values[0] == "soma"
        assert columns["attenuation_to_soma"].values[0] == pytest.approx(1.0, abs=1e-12)
        assert columns["attenuation_from_soma"].values[0] == pytest.approx(1.0, abs=1e-12)
        assert np.all(np.asarray(columns["attenuation_to_soma"].values) >= 1 - 1e-12)
    assert seen["first row"][:4] == ["soma", "soma", "0 µm", "1.000"]
    steady = {c.key: np.asarray(c.values) for c in seen["steady"].tables[0].columns if c.kind is not None}
    ac = {c.key: np.asarray(c.values) for c in seen["ac"].tables[0].columns if c.kind is not None}
    # at 100 Hz a tip's signal reaches the soma more attenuated than at steady state (Zador et al.
    # 1995 [ZadorAgmonSnirSegev1995]); the centroid delays do not depend on the frequency
    assert np.all(ac["attenuation_to_soma"][1:] > steady["attenuation_to_soma"][1:])
    np.testing.assert_allclose(ac["delay_to_soma"], steady["delay_to_soma"])


async def the_map_table_orders_by_a_clicked_column(app, pilot, seen: dict) -> None:
    view = app.query_one("#tree")
    view.show_panel("map")
    await settle(app, pilot)
    grid = app.query_one("#tree-map-table", DataTable)
    column = list(grid.columns)[3]  # ÷ to soma
    grid.post_message(DataTable.HeaderSelected(grid, column, 3, grid.columns[column].label))
    await settle(app, pilot)
    seen["sorted"] = [str(grid.get_row_at(i)[0]) for i in range(grid.row_count)]


def check_the_order_by_a_clicked_column(rows: list[str]) -> None:
    # the tips furthest out come first: the attenuation to the soma grows with distance on this tree
    assert rows[-1] == "soma"
    assert rows[0] in ("left.a", "left.b", "right.a", "right.b")


def test_the_map_table_shows_each_new_map_cell_for_cell():
    """A new frequency on the same tree rewrites the table in place (the same lines, only the cells
    whose text changed); after a click on a column the lines follow the new values' order. Either
    way every line holds the report's cells (the report is the core's map, tested above)."""
    from cabletheory.tui.report import cell_text

    seen = {}

    def expected(report, column=None):
        columns = report.tables[0].columns
        cells = [[cell_text(c.values[i], c.kind) for c in columns] for i in range(report.tables[0].length)]
        order = list(range(len(cells)))
        if column is not None:  # largest first, as the first click orders
            order.sort(key=lambda i: float(columns[column].values[i]), reverse=True)
        return [cells[i] for i in order]

    async def script(app, pilot) -> None:
        view = app.query_one("#tree")
        view.show_panel("map")
        await settle(app, pilot)
        grid = app.query_one("#tree-map-table", DataTable)

        def lines():
            return [[str(c) for c in grid.get_row_at(i)] for i in range(grid.row_count)]

        keys = list(grid.rows)
        await type_into(pilot, "tr-frequency", "300")
        seen["in place"] = (lines(), expected(view.report), list(grid.rows) == keys)
        column = list(grid.columns)[3]  # ÷ to soma
        grid.post_message(DataTable.HeaderSelected(grid, column, 3, grid.columns[column].label))
        await settle(app, pilot)
        await type_into(pilot, "tr-frequency", "2000")
        seen["ordered"] = (lines(), expected(view.report, 3), view.report)
        await type_into(pilot, "tr-frequency", "0")
        seen["ordered again"] = (lines(), expected(view.report, 3))

    drive(script)
    shown, wanted, kept = seen["in place"]
    assert shown == wanted
    assert kept  # the same lines, rewritten
    shown, wanted, report = seen["ordered"]
    assert shown == wanted
    assert report.inputs[-1].value == pytest.approx(2000.0)
    shown, wanted = seen["ordered again"]
    assert shown == wanted


def test_attenuation_bins_of_an_array_are_those_of_each_value():
    from cabletheory.tui.tree_panels import ATTENUATION_BINS, attenuation_bin, attenuation_bins

    values = [1.0, *ATTENUATION_BINS, *(np.nextafter(b, 0) for b in ATTENUATION_BINS), 1e9, math.inf, math.nan, 0.5]
    assert attenuation_bins(values).tolist() == [attenuation_bin(v) for v in values]


# -- plain helpers --------------------------------------------------------------------------------------
def test_the_dendrogram_gives_each_tip_a_row_and_colours_by_attenuation():
    from cabletheory.tui.format import read_tree
    from cabletheory.tui.tree_panels import MAP_COLOURS, attenuation_bin, dendrogram

    tree = read_tree(DEMO_TREE)
    values = np.array([1.0, 1.2, 2.0, 5.0, 5.0, 2.0, 40.0, 40.0])  # root, then each piece's distal node
    rows, owners = dendrogram(tree, values, 40, 4)
    assert len(rows) == 4
    assert all(len(r) == 40 for r in rows)
    used = {o for line in owners for o in line if o >= 0}
    assert used == {attenuation_bin(v) for v in values[1:]}
    assert attenuation_bin(1.0) == 0
    assert attenuation_bin(math.inf) == len(MAP_COLOURS) - 1
