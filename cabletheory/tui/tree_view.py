"""The tree view: open a morphology, audit Rall's conditions, reduce to an equivalent cylinder."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.widgets import Input, Label, RadioButton, RadioSet, Static, Tree
from textual.worker import get_current_worker

from .fields import DEMO_SWC, TREE_FIELDS, bundled_morphologies
from .widgets import CurvePlot, QuantityField, QuantityList, waiting_message

if TYPE_CHECKING:  # pragma: no cover
    from .format import OutlineNode
    from .forms import TreeSetup
    from .report import Report

PREFIX = "tr-"
_SPECS = {spec.name: spec for spec in TREE_FIELDS}


class TreeView(Vertical):
    """Form on the left; the outline of branch points and tips, the verdict and the equivalent cable on the right.

    Reading and auditing run in a worker thread (large trees take a moment).
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+r", "run", "audit again"),
    ]

    report: Report | None = None
    open_title = "Open a morphology (.swc, or a tree outline .outline)"

    def __init__(self, *, id: str, swc: str | None = None) -> None:
        super().__init__(id=id)
        self.initial_file = swc or str(bundled_morphologies() / DEMO_SWC)
        self.loaded = False

    @property
    def open_folder(self) -> Path:
        return bundled_morphologies()

    @property
    def open_suggestion(self) -> str:
        return self.query_one(f"#{PREFIX}file", Input).value

    @property
    def input_files(self) -> tuple[str, ...]:
        return (self.query_one(f"#{PREFIX}file", Input).value,)

    def compose(self) -> ComposeResult:
        with Horizontal(classes="columns"):
            with VerticalScroll(classes="form", id="tree-form", can_focus=False):
                yield Static("tree audit · Rall's conditions", classes="form-title")
                yield QuantityField(_SPECS["file"], prefix=PREFIX, value=self.initial_file)
                for name in ("Rm", "Ri", "Cm"):
                    yield QuantityField(_SPECS[name], prefix=PREFIX)
                yield Label("tips", classes="group-label")
                with RadioSet(id="tr-tips", compact=True):
                    yield RadioButton("as in the file (sealed)", value=True, id="tips-sealed", compact=True)
                    yield RadioButton("killed (held at rest)", id="tips-killed", compact=True)
                yield Label("tolerances", classes="group-label")
                for name in ("ratio_tolerance", "tip_tolerance"):
                    yield QuantityField(_SPECS[name], prefix=PREFIX)
                yield Static("enter in the file field opens it; ctrl+o picks a file.\n"
                             "✓ within tolerance · ✗ outside · ratio = Σd_child^3/2 / d_parent^3/2 · "
                             "X = electrotonic distance from the input site", classes="hint")
            with Vertical(classes="output"):
                with Horizontal(classes="tree-top"):
                    yield Tree("no tree yet", id="tree-outline")
                    yield QuantityList(id="tree-results")
                yield CurvePlot(id="tree-plot")

    # -- opening -----------------------------------------------------------------------------------
    def activate(self) -> None:
        """Called when the view is shown; the first time, read the file named in the form."""
        if not self.loaded:
            self.loaded = True
            self.refresh_results()

    def open_path(self, path: str) -> None:
        self.query_one(f"#{PREFIX}file", Input).value = path
        self.loaded = True
        self.refresh_results()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.loaded = True
        self.refresh_results()

    def on_input_changed(self, event: Input.Changed) -> None:
        event.stop()
        if event.input.id == f"{PREFIX}file":
            field = self.query_one(f"#field-{PREFIX}file", QuantityField)
            field.flag(None)
            return  # a path is opened with enter, not at every keystroke
        if self.loaded:
            self.refresh_results()

    def on_radio_set_changed(self, event: RadioSet.Changed) -> None:
        event.stop()
        if self.loaded:
            self.refresh_results()

    def action_run(self) -> None:
        self.loaded = True
        self.refresh_results()

    @property
    def tips_choice(self) -> str:
        pressed = self.query_one("#tr-tips", RadioSet).pressed_button
        return "killed" if pressed is not None and pressed.id == "tips-killed" else "sealed"

    def refresh_results(self) -> None:
        from .forms import read_tree_form

        fields = {f.spec.name: f for f in self.query(QuantityField)}
        setup, errors = read_tree_form({n: f.input.value for n, f in fields.items()}, self.tips_choice)
        for name, field in fields.items():
            field.flag(errors.get(name))
        if setup is None:
            self.workers.cancel_group(self, "audit")
            self._clear(waiting_message(errors))
            return
        self._busy(True)
        self.audit(setup)

    def _clear(self, message: str) -> None:
        self._busy(False)
        self.report = None
        self.query_one("#tree-results", QuantityList).update(message)
        self.query_one(CurvePlot).spec = None

    def _busy(self, busy: bool) -> None:
        self.query_one("#tree-results", QuantityList).border_subtitle = "reading and auditing…" if busy else ""
        self.query_one("#tree-outline", Tree).loading = busy

    @work(exclusive=True, thread=True, group="audit")
    def audit(self, setup: TreeSetup) -> None:
        from ..errors import CableTheoryError
        from .format import analyse_file, tree_outline, tree_report

        worker = get_current_worker()
        try:
            analysed = analyse_file(setup)
            result: tuple[Report, list[OutlineNode]] | str = (tree_report(analysed), tree_outline(analysed))
        except CableTheoryError as exc:
            result = str(exc)
        if not worker.is_cancelled:
            self.app.call_from_thread(self._show, result)

    def _show(self, result: tuple[Report, list[OutlineNode]] | str) -> None:
        self._busy(False)
        if isinstance(result, str):
            self.query_one(f"#field-{PREFIX}file", QuantityField).flag(result)
            self._clear("The file could not be read; see the message under the file field.")
            return
        report, outline = result
        self.report = report
        self.query_one("#tree-results", QuantityList).show(report.results, report.notes[:3])
        self.query_one(CurvePlot).spec = report.plots[0]
        self._fill_outline(outline)

    def _fill_outline(self, outline: list[OutlineNode]) -> None:
        widget = self.query_one("#tree-outline", Tree)
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
