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
from .keys import key_label
from .widgets import CurvePlot, QuantityField, QuantityList, shared_text, waiting_message

if TYPE_CHECKING:  # pragma: no cover
    from textual.timer import Timer
    from textual.widgets.tree import TreeNode

    from ..tree import Tree as Morphology  # the core's tree; Tree here is the outline widget
    from .format import OutlineNode
    from .forms import TreeSetup
    from .report import Report

PREFIX = "tr-"
BUSY_AFTER = 0.25  # s: a result still on its way after this is announced in the panel's border
_SPECS = {spec.name: spec for spec in TREE_FIELDS}


class TreeView(Vertical):
    """Form on the left; the outline of branch points and tips, the verdict and the equivalent cable on the right.

    Reading and auditing run in a worker thread (large trees take a moment).
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+r", "run", "audit again"),
        Binding("f6,b", "worst_branch_point", "worst branch point"),
        Binding("f7,t", "worst_tip", "worst tip"),
    ]

    report: Report | None = None
    wanted: TreeSetup | None = None  # the set-up the form holds now; a result of another is stale
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
            with Vertical(classes="output"):
                with Horizontal(classes="tree-top"):
                    yield Tree("no tree yet", id="tree-outline")
                    yield QuantityList(id="tree-results")
                yield CurvePlot(id="tree-plot")

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
            return  # a path is opened with enter, not at every keystroke
        if self.loaded and self.app.current_view == self.id:  # type: ignore[attr-defined]
            self.refresh_results()

    def on_radio_set_changed(self, event: RadioSet.Changed) -> None:
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
        from .forms import read_tree_form

        fields = {f.spec.name: f for f in self.query(QuantityField)}
        setup, errors = read_tree_form({n: f.input.value for n, f in fields.items()}, self.tips_choice)
        if setup is not None and setup == self.wanted and not again:
            return
        self.wanted = setup
        for name, field in fields.items():
            if name != "file" or name in errors or not again:
                self._flag(field, errors.get(name))
        if setup is None:
            self.workers.cancel_group(self, "audit")
            self._clear(waiting_message(errors))
            return
        cached = self._tree_cache
        tree = cached[1] if cached is not None and cached[0] == _file_key(setup.path) else None
        self._busy(True, reading=tree is None)
        self.audit(setup, tree)

    def _flag(self, field: QuantityField, message: str | None) -> None:
        """Flag a field or say how it reads, unless it already says so for the same text (each
        update of a field's line costs a layout of the form: only the field typed into changes)."""
        said = (field.input.value, message)
        if self._flagged.get(field.spec.name) != said:
            self._flagged[field.spec.name] = said
            field.flag(message)

    def _clear(self, message: str) -> None:
        self._busy(False)
        self.report = None
        self.worst = (None, None)
        self.query_one("#tree-results", QuantityList).update(message)
        self.query_one(CurvePlot).spec = None
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
            self._clear("The file could not be read; see the message under the file field.")
            return
        report, outline, self.worst, key, tree = result
        self._tree_cache = (key, tree)
        self.opened = self.query_one(f"#{PREFIX}file", Input).value
        self.query_one(f"#field-{PREFIX}file", QuantityField).flag(None)
        self.report = report
        self.query_one("#tree-results", QuantityList).show(report.results, report.notes[:3])
        self.query_one(CurvePlot).spec = report.plots[0]
        self._fill_outline(outline)

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
