"""The tree view: open a morphology, audit Rall's conditions, reduce to an equivalent cylinder; the
exact time course at chosen points of the tree and its electrotonic map.

Three output panels share one form: the audit (outline, verdict, equivalent cable), the time course
(:mod:`cabletheory.tui.tree_panels`) and the electrotonic map. A keystroke computes the panel shown
only, in a worker; the others catch up when shown."""

from __future__ import annotations

import threading
from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.coordinate import Coordinate
from textual.widget import Widget
from textual.widgets import (
    Checkbox,
    ContentSwitcher,
    DataTable,
    Input,
    Label,
    RadioButton,
    RadioSet,
    Static,
    Tab,
    Tabs,
    Tree,
)
from textual.worker import get_current_worker

from .fields import DEMO_SWC, TREE_FIELDS, bundled_morphologies, charging_fields_used
from .keys import key_label
from .tree_fields import PANELS, TIME_FIELDS, TREE_STIMULUS_GROUP
from .widgets import (
    CaseChoices,
    ChoiceSet,
    CurvePlot,
    OneFileForm,
    QuantityField,
    QuantityList,
    shared_text,
    stimulus_form,
    waiting_message,
)

if TYPE_CHECKING:  # pragma: no cover
    from textual.timer import Timer
    from textual.widgets.tree import TreeNode

    from ..tree import Tree as Morphology  # the core's tree; Tree here is the outline widget
    from .format import OutlineNode
    from .forms import TreeSetup
    from .report import Report
    from .tree_panels import MapSetup, TimeSetup

PREFIX = "tr-"
BUSY_AFTER = 0.25  # s: a result still on its way after this is announced in the panel's border
_SPECS = {spec.name: spec for spec in TREE_FIELDS}
_TIME_SPECS = {spec.name: spec for spec in TIME_FIELDS}


class TreeView(OneFileForm, CaseChoices, Vertical):
    """Form on the left; on the right one of three panels: the audit (outline of branch points and
    tips, verdict, equivalent cable), the time course at chosen points, the electrotonic map.

    Reading, auditing and solving run in worker threads (large trees take a moment).
    """

    case_prefix = file_prefix = PREFIX
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+r", "run", "audit again"),
        Binding("f6,b", "worst_branch_point", "worst branch point"),
        Binding("f7,t", "worst_tip", "worst tip"),
        Binding("ctrl+p", "next_panel", "next panel"),
        Binding("ctrl+n", "next_stimulus", "next stimulus"),
    ]

    wanted: TreeSetup | None = None  # the set-up the form holds now; a result of another is stale
    wanted_time: TimeSetup | None = None
    wanted_map: MapSetup | None = None
    panel = "audit"  # the output panel shown (a key of tree_fields.PANELS)
    worst: tuple[str | None, str | None] = (None, None)  # outline keys of the worst branch point and tip
    open_title = "Open a morphology (.swc, or a tree outline .outline)"

    def __init__(self, *, id: str, swc: str | None = None) -> None:
        super().__init__(id=id)
        self.initial_file = swc or str(bundled_morphologies() / DEMO_SWC)
        self.loaded = False
        self.opened = ""  # the file text last opened (its message stays until the text changes)
        # the tree last read, by (path, size, modification time): membrane or tolerance edits
        # re-audit it without reading the file again (read by the worker, kept on the main thread)
        self._tree_cache: tuple[tuple[str, int, int], Morphology] | None = None
        self._outline_shape: list[tuple[str, int]] = []  # (key, parent) of each outline line shown
        self._outline_nodes: list[TreeNode[str]] = []  # the widget's nodes of those lines, root excluded
        self._outline_texts: list[str] = []  # the text of each outline line shown, root first
        self._flagged: dict[str, tuple[str, str | None]] = {}  # field -> (text, message) it shows
        self._busy_timer: Timer | None = None
        self._reports: dict[str, Report | None] = dict.fromkeys(PANELS)
        self._map_rows: list[list[object]] = []  # the map table's rows as values (for sorting)
        self._map_cells: list[list[str]] = []  # ... and as the texts shown
        self._map_order: list[int] = []  # the row shown on each line of the table
        self._map_sort: tuple[int, bool] = (-1, False)  # (column, descending); -1: the tree's order
        self._field_cache: dict[str, dict[str, QuantityField]] = {}
        self._input_cache: dict[str, Input] = {}

    @property
    def report(self) -> Report | None:
        """The result of the panel shown (what ctrl+s saves)."""
        return self._reports[self.panel]

    @property
    def open_folder(self) -> Path:
        return bundled_morphologies()

    def compose(self) -> ComposeResult:
        with Horizontal(classes="columns"):
            with VerticalScroll(classes="form", id="tree-form", can_focus=False):
                yield Static("tree audit · Rall's conditions", classes="form-title")
                yield QuantityField(_SPECS["file"], prefix=PREFIX, value=self.initial_file)
                for name in ("Rm", "Ri", "Cm"):
                    yield QuantityField(_SPECS[name], prefix=PREFIX, value=shared_text(self, name))
                yield Label("tips", classes="group-label")
                with RadioSet(id="tr-tips", compact=True):
                    yield RadioButton("as in the file (sealed)", value=True, id="tips-sealed", compact=True)
                    yield RadioButton("killed (held at rest)", id="tips-killed", compact=True)
                yield Label("tolerances", classes="group-label")
                for name in ("ratio_tolerance", "tip_tolerance"):
                    yield QuantityField(_SPECS[name], prefix=PREFIX)
                yield Static(f"enter in the file field opens it; {key_label('ctrl+o')} picks a file; "
                             f"{key_label('f6,b')} worst branch point, {key_label('f7,t')} worst tip.\n"
                             "✓ within tolerance · ✗ outside · ratio = Σd_child^3/2 / d_parent^3/2 · "
                             "X = electrotonic distance from the input site", classes="hint")
                yield Static(f"time course  ({key_label('ctrl+p')}: next panel)", classes="form-title tree-group")
                yield from stimulus_form(PREFIX, _TIME_SPECS, TREE_STIMULUS_GROUP)
                for name in ("stimulus_at", "record_at", "span"):
                    yield QuantityField(_TIME_SPECS[name], prefix=PREFIX)
                yield Checkbox("beside its reduction (input at the soma)", id=f"{PREFIX}reduced", compact=True)
                yield Static("electrotonic map", classes="form-title tree-group")
                yield QuantityField(_TIME_SPECS["frequency"], prefix=PREFIX)
                yield Static("points: SWC ids or outline names, 'soma' for the root; lists: 'soma, 412, 977'.\n"
                             "÷ = attenuation (a ratio ≥ 1); delays are centroid delays", classes="hint")
            with Vertical(classes="output"):
                yield Tabs(*(Tab(title, id=f"panel-{key}") for key, title in PANELS.items()), id="tree-panels")
                with ContentSwitcher(initial="tree-audit", id="tree-panel-switch"):
                    with Vertical(id="tree-audit"):
                        with Horizontal(classes="tree-top"):
                            yield Tree("no tree yet", id="tree-outline")
                            yield QuantityList(id="tree-results")
                        yield CurvePlot(id="tree-plot")
                    with Vertical(id="tree-time"):
                        with Horizontal(classes="tree-top"):
                            yield QuantityList(id="tree-time-results")
                            yield Static("", id="tree-time-features")
                        yield CurvePlot(id="tree-time-plot")
                    with Vertical(id="tree-map"):
                        yield QuantityList(id="tree-map-results")
                        yield DataTable(id="tree-map-table", cursor_type="row", zebra_stripes=True)
                        yield MapDrawing(id="tree-map-drawing")

    def on_mount(self) -> None:
        self._show_stimulus_fields()

    def _show_stimulus_fields(self) -> None:
        used = charging_fields_used("cylinder", self.stimulus_choice)
        for name in TREE_STIMULUS_GROUP:
            self.query_one(f"#field-{PREFIX}{name}", QuantityField).display = name in used

    # -- panels ------------------------------------------------------------------------------------
    def show_panel(self, panel: str) -> None:
        """Show one output panel ('audit', 'time' or 'map') and bring its result up to date."""
        if panel not in PANELS:
            raise ValueError(f"unknown panel {panel!r}")
        tabs = self.query_one("#tree-panels", Tabs)
        if tabs.active != f"panel-{panel}":
            tabs.active = f"panel-{panel}"  # its TabActivated message comes back to _switch
        self._switch(panel)

    def _switch(self, panel: str) -> None:
        if panel == self.panel:
            return
        self.panel = panel
        self.query_one("#tree-panel-switch", ContentSwitcher).current = f"tree-{panel}"
        if self.loaded:
            self.refresh_results()

    def on_tabs_tab_activated(self, event: Tabs.TabActivated) -> None:
        event.stop()
        self._switch((event.tab.id or "panel-audit").removeprefix("panel-"))

    def action_next_panel(self) -> None:
        keys = list(PANELS)
        self.show_panel(keys[(keys.index(self.panel) + 1) % len(keys)])

    # -- opening -----------------------------------------------------------------------------------
    def activate(self) -> None:
        """Called when the view is shown: the first time, read the file named in the form; later,
        catch up with membrane values edited in another view."""
        if not self.loaded:
            self.loaded = True
            self.refresh_results(again=True)
        else:
            self.refresh_results()

    def open_path(self, path: str) -> None:
        self.query_one(f"#{PREFIX}file", Input).value = path
        self.loaded = True
        self.refresh_results(again=True)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.loaded = True
        self.refresh_results(again=True)

    def on_input_changed(self, event: Input.Changed) -> None:
        # not stopped: the app shares the membrane's texts with the other views
        if event.input.id == f"{PREFIX}file":
            if event.value != self.opened:
                self.query_one(f"#field-{PREFIX}file", QuantityField).flag(None)
                self._flagged.pop("file", None)
            return  # a path is opened with enter, not at every keystroke
        if self.loaded and self.app.current_view == self.id:  # type: ignore[attr-defined]
            self.refresh_results()

    def on_radio_set_changed(self, event: RadioSet.Changed) -> None:
        event.stop()
        if isinstance(event.radio_set, ChoiceSet):
            self._show_stimulus_fields()
        if self.loaded:
            self.refresh_results()

    def on_checkbox_changed(self, event: Checkbox.Changed) -> None:
        event.stop()
        if self.loaded:
            self.refresh_results()

    def action_run(self) -> None:
        self.loaded = True
        self._tree_cache = None  # read the file again, it may have changed
        self.refresh_results(again=True)

    def _jump(self, key: str | None, what: str) -> None:
        outline = self.query_one("#tree-outline", Tree)
        if key is None:
            self.app.bell()
            return
        for node in _walk(outline.root):
            if node.data == key:
                outline.focus()
                outline.move_cursor(node)
                outline.scroll_to_node(node)
                return

    def action_worst_branch_point(self) -> None:
        """Move the outline's cursor to the branch point furthest from the 3/2 power rule."""
        self._jump(self.worst[0], "branch point")

    def action_worst_tip(self) -> None:
        """Move the outline's cursor to the tip furthest from the others' electrotonic distance."""
        self._jump(self.worst[1], "tip")

    @property
    def tips_choice(self) -> str:
        pressed = self.query_one("#tr-tips", RadioSet).pressed_button
        return "killed" if pressed is not None and pressed.id == "tips-killed" else "sealed"

    def refresh_results(self, again: bool = False) -> None:
        """Check the form at once; hand the panel shown a worker if its inputs changed (the file is
        read first if it is not read yet; the other panels catch up when shown)."""
        from .forms import read_tree_form

        fields = self._fields("audit")
        setup, errors = read_tree_form(self._texts(fields), self.tips_choice)
        for name, field in fields.items():
            if name != "file" or name in errors or not again:
                self._flag(field, errors.get(name))
        if setup is None:
            self.wanted = self.wanted_time = self.wanted_map = None
            for group in ("audit", "time", "map"):
                self.workers.cancel_group(self, group)
            self._clear(waiting_message(errors))
            return
        cached = self._tree_cache
        tree = cached[1] if cached is not None and cached[0] == _file_key(setup.path) else None
        if tree is None or self.panel == "audit":
            if setup != self.wanted or again:
                self.wanted = setup
                self._busy(True, reading=tree is None)
                self.audit(setup, tree)
            if tree is None:
                return  # the other panels follow once the file is read
        if self.panel != "audit" and cached is not None:
            self._refresh_panel(setup, cached, again)

    def _fields(self, group: str) -> dict[str, QuantityField]:
        """The form's fields by name: the audit's ('audit') or the time course's and map's ('panel').
        Looked up once: a query of the view's widgets at every keystroke costs milliseconds."""
        found = self._field_cache.get(group)
        if found is None:
            specs = _SPECS if group == "audit" else _TIME_SPECS
            found = {f.spec.name: f for f in self.query(QuantityField) if f.spec.name in specs}
            self._field_cache[group] = found
        return found

    def _texts(self, fields: dict[str, QuantityField]) -> dict[str, str]:
        """The text of each field (its input looked up once)."""
        inputs = self._input_cache
        texts = {}
        for name, f in fields.items():
            box = inputs.get(name)
            if box is None:
                box = inputs[name] = f.input
            texts[name] = box.value
        return texts

    def _refresh_panel(self, setup: TreeSetup, cached: tuple[tuple[str, int, int], Morphology],
                       again: bool = False) -> None:
        """Read the time-course or map fields against the tree read, and start their worker."""
        from .tree_panels import read_map_form, read_time_form

        key, tree = cached
        fields = self._fields("panel")
        texts = self._texts(fields)
        if self.panel == "time":
            reduced = self.query_one(f"#{PREFIX}reduced", Checkbox).value
            wanted, errors = read_time_form(texts, self.stimulus_choice, tree, setup, key, reduced)
            for name in ("stimulus_at", "record_at", "span", *TREE_STIMULUS_GROUP):
                self._flag(fields[name], errors.get(name))
            results = self.query_one("#tree-time-results", QuantityList)
            if wanted is None:
                self.wanted_time = None
                self.workers.cancel_group(self, "time")
                self._stop_announcing(results)
                self._reports["time"] = None
                results.update(waiting_message(errors))
                self.query_one("#tree-time-features", Static).update("")
                self.query_one("#tree-time-plot", CurvePlot).spec = None
                return
            if wanted != self.wanted_time or again:
                self.wanted_time = wanted
                self._announce(results, "solving…")
                self.time_course(wanted)
            return
        wanted_map, errors = read_map_form(texts, setup, key)
        self._flag(fields["frequency"], errors.get("frequency"))
        results = self.query_one("#tree-map-results", QuantityList)
        if wanted_map is None:
            self.wanted_map = None
            self.workers.cancel_group(self, "map")
            self._stop_announcing(results)
            self._reports["map"] = None
            results.update(waiting_message(errors))
            return
        if wanted_map != self.wanted_map or again:
            self.wanted_map = wanted_map
            self._announce(results, "mapping…")
            self.electrotonic(wanted_map, tree)

    def _announce(self, panel: QuantityList, what: str) -> None:
        """Say in the panel's border that a result is on its way, unless it comes within BUSY_AFTER."""
        if self._busy_timer is not None:
            self._busy_timer.stop()

        def say() -> None:
            panel.border_subtitle = what

        self._busy_timer = self.set_timer(BUSY_AFTER, say)

    def _flag(self, field: QuantityField, message: str | None) -> None:
        """Flag a field or say how it reads, unless it already says so for the same text (each
        update of a field's line costs a layout of the form: only the field typed into changes)."""
        said = (field.input.value, message)
        if self._flagged.get(field.spec.name) != said:
            self._flagged[field.spec.name] = said
            field.flag(message)

    def _clear(self, message: str) -> None:
        self._busy(False)
        self._reports = dict.fromkeys(PANELS)
        self.worst = (None, None)
        for results in ("#tree-results", "#tree-time-results", "#tree-map-results"):
            self.query_one(results, QuantityList).update(message)
        for plot in self.query(CurvePlot):
            plot.spec = None
        self.query_one("#tree-time-features", Static).update("")
        self.query_one("#tree-map-table", DataTable).clear(columns=True)
        self.query_one(MapDrawing).show(None)
        outline = self.query_one("#tree-outline", Tree)
        outline.clear()
        outline.root.set_label("no tree")
        self._outline_shape, self._outline_nodes, self._outline_texts = [], [], []

    def _busy(self, busy: bool, reading: bool = False) -> None:
        """Say that a result is on its way. Only reading a file covers the outline with the loading
        animation: re-auditing a tree already read takes milliseconds, and mounting the animation
        would cost more than the audit."""
        results = self.query_one("#tree-results", QuantityList)
        if self._busy_timer is not None:
            self._busy_timer.stop()
            self._busy_timer = None
        if busy and not reading:
            # most audits are back before this fires: then the panel is not drawn twice
            self._busy_timer = self.set_timer(BUSY_AFTER, lambda: setattr(results, "border_subtitle", "auditing…"))
        else:
            results.border_subtitle = "reading and auditing…" if busy else ""
        outline = self.query_one("#tree-outline", Tree)
        if outline.loading != (busy and reading):
            outline.loading = busy and reading

    @work(exclusive=True, thread=True, group="audit")
    def audit(self, setup: TreeSetup, tree: Morphology | None) -> None:
        """Read the file unless ``tree`` is its tree already, then audit it."""
        from ..errors import CableTheoryError
        from .format import audit_tree, read_tree, tree_outline, tree_report, worst_points

        worker = get_current_worker()
        key = _file_key(setup.path)
        try:
            if tree is None:
                tree = read_tree(setup.path)
            analysed = audit_tree(tree, setup)
            result: Shown | str = (tree_report(analysed), tree_outline(analysed), worst_points(analysed), key, tree)
        except CableTheoryError as exc:
            result = str(exc)
        if not worker.is_cancelled:
            self.app.call_from_thread(self._show, setup, result)

    def _show(self, setup: TreeSetup, result: Shown | str) -> None:
        if setup != self.wanted:
            return  # the form changed while the worker ran: a newer result is on its way
        self._busy(False)
        if isinstance(result, str):
            self._tree_cache = None
            self.opened = self.query_one(f"#{PREFIX}file", Input).value
            self.query_one(f"#field-{PREFIX}file", QuantityField).flag(result)
            self._flagged.pop("file", None)
            self._clear("The file could not be read; see the message under the file field.")
            return
        report, outline, self.worst, key, tree = result
        self._tree_cache = (key, tree)
        self.opened = self.query_one(f"#{PREFIX}file", Input).value
        self.query_one(f"#field-{PREFIX}file", QuantityField).flag(None)
        self._flagged.pop("file", None)
        self._reports["audit"] = report
        self.query_one("#tree-results", QuantityList).show(report.results, report.notes[:3])
        self.query_one("#tree-plot", CurvePlot).spec = report.plots[0]
        self._fill_outline(outline)
        if self.panel != "audit":
            self._refresh_panel(setup, self._tree_cache)

    @work(exclusive=True, thread=True, group="time")
    def time_course(self, setup: TimeSetup) -> None:
        """The exact time course first (shown at once), then its features, then the reduction's
        response when asked (each shown when it comes, while the set-up is still the one wanted)."""
        from ..errors import CableTheoryError
        from ..tree_time import reduction_cost, tree_response
        from .tree_panels import TOLERANCE, features, time_report

        worker = get_current_worker()
        case = setup.case
        try:
            # reuse: a stimulus or reading point moved on the same tree and membrane is not solved again
            response = tree_response(case.cell, case.stimulus, setup.times, case.stimulus_site, case.sites,
                                     tolerance=TOLERANCE, reuse=True)
            shown: Report | str = time_report(setup, response)
        except CableTheoryError as exc:
            shown = str(exc)
        if worker.is_cancelled:
            return
        drawn = threading.Event()
        self.app.call_from_thread(self._show_time, setup, shown, False, drawn)
        if isinstance(shown, str):
            return
        # the features and the reduction wait until the time course is on the screen: computed
        # beside the drawing, they would hold it up (they take longer than the time course itself)
        while not drawn.wait(0.05):
            if worker.is_cancelled:
                return
        try:
            found = features(setup)
        except CableTheoryError:
            found = None
        cost: object = None
        if setup.reduced and not worker.is_cancelled:
            try:
                cost = reduction_cost(case.cell, case.stimulus, setup.times, tolerance=TOLERANCE)
            except CableTheoryError as exc:
                cost = f"no reduction shown: {exc}"
        if not worker.is_cancelled:
            report = time_report(setup, response, found, cost)  # type: ignore[arg-type]
            self.app.call_from_thread(self._show_time, setup, report, True)

    def _show_time(self, setup: TimeSetup, report: Report | str, complete: bool,
                   drawn: threading.Event | None = None) -> None:
        """Show a time course (``complete``: with its features and reduction); ``drawn`` is set once
        the screen shows it (at once when it is no longer wanted)."""
        if drawn is not None:
            self.call_after_refresh(drawn.set)
        if setup != self.wanted_time:
            return
        from .tree_panels import features_lines

        results = self.query_one("#tree-time-results", QuantityList)
        if complete or isinstance(report, str):
            self._stop_announcing(results)
        features = self.query_one("#tree-time-features", Static)
        if isinstance(report, str):
            self._reports["time"] = None
            results.update(report)
            features.update("")
            self.query_one("#tree-time-plot", CurvePlot).spec = None
            return
        self._reports["time"] = report
        results.show([r for r in report.results if r.key != "method"], report.notes[:2])  # saved, not shown
        lines = features_lines(report)
        # the features' box has a fixed size: a new text needs no layout of the view
        if lines:
            text = Text(lines[0] + "\n", style="bold #9aa5b1", no_wrap=True, overflow="crop")
            text.append("\n".join(lines[1:]))
            features.update(text, layout=False)
        elif not complete:
            features.update(Text("features: computing…", style="dim"), layout=False)
        self.query_one("#tree-time-plot", CurvePlot).spec = report.plots[0]

    def _stop_announcing(self, panel: QuantityList) -> None:
        if self._busy_timer is not None:
            self._busy_timer.stop()
            self._busy_timer = None
        panel.border_subtitle = ""

    @work(exclusive=True, thread=True, group="map")
    def electrotonic(self, setup: MapSetup, tree: Morphology) -> None:
        from ..errors import CableTheoryError
        from .tree_panels import compute_map, map_report

        worker = get_current_worker()
        try:
            emap = compute_map(tree, setup)
            result: tuple[Report, Morphology, object] | str = (map_report(tree, setup, emap), tree,
                                                               emap.attenuation_to_root)
        except CableTheoryError as exc:
            result = str(exc)
        if not worker.is_cancelled:
            self.app.call_from_thread(self._show_map, setup, result)

    def _show_map(self, setup: MapSetup, result: tuple[Report, Morphology, object] | str) -> None:
        if setup != self.wanted_map:
            return
        results = self.query_one("#tree-map-results", QuantityList)
        self._stop_announcing(results)
        table = self.query_one("#tree-map-table", DataTable)
        if isinstance(result, str):
            self._reports["map"] = None
            results.update(result)
            table.clear(columns=True)
            self.query_one(MapDrawing).show(None)
            return
        report, tree, values = result
        self._reports["map"] = report
        results.show(report.results)
        self._fill_map_table(report)
        self.query_one(MapDrawing).show((tree, values))

    def _fill_map_table(self, report: Report) -> None:
        """Show the map's rows. The same points in the same order as shown (a new frequency or
        membrane on the same tree): only the cells whose text changed are rewritten; rebuilding the
        table measures and draws every cell again, which costs more than computing the map."""
        from rich.cells import cell_len

        from .report import cell_text

        columns = report.tables[0].columns
        table = self.query_one("#tree-map-table", DataTable)
        count = report.tables[0].length
        shown_cells, shown_order = self._map_cells, self._map_order
        self._map_rows = [[c.values[i] for c in columns] for i in range(count)]
        self._map_cells = [[cell_text(c.values[i], c.kind) for c in columns] for i in range(count)]
        labels = [c.label for c in columns]
        same_columns = [str(c.label) for c in table.columns.values()] == labels
        order = self._map_order_now()
        if same_columns and table.row_count == count and len(shown_cells) == count and order == shown_order:
            widths = [c.content_width for c in table.ordered_columns]
            for r, i in enumerate(order):
                new, old = self._map_cells[i], shown_cells[i]
                for c, text in enumerate(new):
                    if text != old[c]:
                        table.update_cell_at(Coordinate(r, c), Text(text), update_width=cell_len(text) > widths[c])
            return
        if not same_columns:
            table.clear(columns=True)
            table.add_columns(*labels)
        self._order_map_table()

    def _map_order_now(self) -> list[int]:
        """The rows' order chosen: the tree's (parents first), or by a column clicked."""
        column, descending = self._map_sort
        order = list(range(len(self._map_rows)))
        if column >= 0:
            def key(i: int) -> tuple[int, object]:
                value = self._map_rows[i][column]
                if isinstance(value, str):
                    return (0, value)
                number = float(value)  # type: ignore[arg-type]
                return (1 if number != number else 0, number)  # nan last

            order.sort(key=key, reverse=descending)
        return order

    def _order_map_table(self) -> None:
        """Fill the table in the order chosen."""
        table = self.query_one("#tree-map-table", DataTable)
        self._map_order = self._map_order_now()
        table.clear()
        # as Text, not str: a str cell is parsed as markup each time the table draws it
        table.add_rows([[Text(text) for text in self._map_cells[i]] for i in self._map_order])

    def on_data_table_header_selected(self, event: DataTable.HeaderSelected) -> None:
        """A click on a column's header orders the map by it (largest first); again: smallest first;
        a third time: the tree's order."""
        event.stop()
        column, descending = self._map_sort
        if event.column_index != column:
            self._map_sort = (event.column_index, True)
        elif descending:
            self._map_sort = (column, False)
        else:
            self._map_sort = (-1, False)
        self._order_map_table()

    def _fill_outline(self, outline: list[OutlineNode]) -> None:
        widget = self.query_one("#tree-outline", Tree)
        shape = [(item.key, item.parent) for item in outline]
        texts = [item.text for item in outline]
        if shape == self._outline_shape:
            # the same tree audited again: relabel the lines whose text changed, in place (rebuilding
            # thousands of lines costs seconds; the cursor and the folded branches stay where they were)
            if texts[0] != self._outline_texts[0]:
                widget.root.set_label(Text(outline[0].text, style="bold"))
            for node, item, old in zip(self._outline_nodes, outline[1:], self._outline_texts[1:], strict=True):
                if item.text != old:
                    node.set_label(Text(item.text, style="bold #ff6b6b" if item.flag else ""))
            self._outline_texts = texts
            return
        widget.clear()
        widget.root.set_label(Text(outline[0].text, style="bold"))
        nodes = [widget.root]
        has_children = {item.parent for item in outline}
        for index, item in enumerate(outline[1:], start=1):
            label = Text(item.text, style="bold #ff6b6b" if item.flag else "")
            parent = nodes[item.parent]
            if index in has_children:
                nodes.append(parent.add(label, data=item.key, expand=True))
            else:
                nodes.append(parent.add_leaf(label, data=item.key))
        widget.root.expand_all()
        self._outline_shape = shape
        self._outline_nodes = nodes[1:]
        self._outline_texts = texts


Shown = tuple["Report", "list[OutlineNode]", tuple[str | None, str | None], tuple[str, int, int], "Morphology"]


class MapDrawing(Widget):
    """The tree drawn as a dendrogram whose branches are coloured by their attenuation to the soma
    (:func:`cabletheory.tui.tree_panels.dendrogram`), with the colour key beneath."""

    data: tuple[object, object] | None = None  # (the tree, attenuation to the soma at each node)
    _layout: tuple[tuple[int, int, int], tuple[list[str], list[list[int]]]] | None = None

    def show(self, data: tuple[object, object] | None) -> None:
        self.data = data
        self.border_title = "attenuation to the soma" if data is not None else ""
        self.border_subtitle = "soma at left · path distance across · one row per tip" if data is not None else ""
        self.refresh()

    def render(self) -> Text:
        width, height = self.content_size.width, self.content_size.height
        if self.data is None or width < 12 or height < 3:
            return Text("no map yet", style="dim")
        from .tree_panels import MAP_COLOURS, bin_labels, dendrogram, dendrogram_layout

        tree, values = self.data
        key = (id(tree), width, height - 1)
        if self._layout is None or self._layout[0] != key:  # the drawing depends on the tree and size only
            self._layout = (key, dendrogram_layout(tree, width, height - 1))  # type: ignore[arg-type]
        rows, owners = dendrogram(tree, values, width, height - 1, self._layout[1])  # type: ignore[arg-type]
        out = Text(no_wrap=True, overflow="crop")
        for line, owner in zip(rows, owners, strict=True):
            start = 0  # one span per run of cells of one colour
            for end in range(1, len(line) + 1):
                if end == len(line) or owner[end] != owner[start]:
                    out.append(line[start:end], style=MAP_COLOURS[owner[start]] if owner[start] >= 0 else "")
                    start = end
            out.append("\n")
        out.append("÷ ", style="bold")
        for colour, label in zip(MAP_COLOURS, bin_labels(), strict=True):
            out.append("━━ ", style=colour)
            out.append(f"{label}  ")
        return out


def _file_key(path: Path) -> tuple[str, int, int]:
    """A file's identity for the tree cache: resolved path, size and modification time."""
    try:
        status = path.stat()
    except OSError:
        return (str(path), -1, -1)
    return (str(path.resolve()), status.st_size, status.st_mtime_ns)


def _walk(node):  # type: ignore[no-untyped-def]
    """Every node under ``node`` (depth first)."""
    for child in node.children:
        yield child
        yield from _walk(child)
