"""The app: a view bar, four views, the caveat and a status line. No arithmetic here."""

from __future__ import annotations

import warnings
from pathlib import Path
from typing import ClassVar

from rich.style import Style
from rich.text import Text
from textual.app import App, ComposeResult
from textual.binding import Binding, BindingType
from textual.widget import Widget
from textual.widgets import ContentSwitcher, Input, Static

from .. import PASSIVE_CAVEAT
from ..errors import ImplausibleValueWarning
from .keys import GLOBAL_KEYS, VIEWS, key_label, typed_character

__all__ = ["CableApp"]


# what each view's first result needs beyond the app itself (numpy, the unit boundary, the core):
# imported in a thread while textual builds and draws the first frame, so that the first result
# does not start with them (the first frame itself needs none of them)
FIRST_RESULT_MODULES: dict[str, tuple[str, ...]] = {
    "cylinder": ("cabletheory.tui.format", "cabletheory.inputs"),
    "charging": ("cabletheory.tui.format", "cabletheory.inputs", "cabletheory.transient"),
    "tree": ("cabletheory.tui.format", "cabletheory.inputs", "cabletheory.tree"),
}


def _import_ahead(modules: tuple[str, ...]) -> None:
    import importlib

    for name in modules:
        try:
            importlib.import_module(name)
        except ImportError:  # the view imports it again, and reports the problem itself
            return


# the bottom strip: keys spelled out as the help panel writes them, short enough for 80 columns
STATUS_KEYS = (("f1,question_mark", "keys"), ("ctrl+s", "save data"), ("ctrl+g", "save plot"), ("ctrl+o", "open"),
               ("ctrl+q", "quit"))


class ViewBar(Static):
    """The view names with their keys; the current one highlighted; click to switch."""

    current = ""

    def show(self, current: str) -> None:
        """Below 100 columns the names sit closer and the keys hint is left to the status line."""
        self.current = current
        wide = self.app.size.width >= 100
        text = Text()
        text.append(" cabletheory ", style="bold #0d1b24 on #5cc8d6")
        text.append("  " if wide else " ")
        keys = {k.action: key_label(k.key) for k in GLOBAL_KEYS}
        for view, (title, _) in VIEWS.items():
            action = f"show_view('{view}')"
            label = f" {keys[action]} {title} " if wide else f"{keys[action]} {title}"
            style = "bold #0d1b24 on #f2b84b" if view == current else "#c9d1d9"
            text.append(label, style=Style.parse(style) + Style(meta={"@click": f"app.show_view('{view}')"}))
            text.append(" ")
        if wide:
            text.append(f"   {key_label(GLOBAL_KEYS[0].key)} keys", style="dim")
        self.update(text)

    def on_resize(self) -> None:
        if self.current:
            self.show(self.current)


class CableApp(App[None]):
    """``cabletheory ui``: cylinder, charging, tree and check views of passive cables."""

    CSS_PATH = Path(__file__).with_name("app.tcss")
    TITLE = "cabletheory"
    ENABLE_COMMAND_PALETTE = False
    # below 110 columns the screen gets the class -narrow: narrower forms, stacked tree panels
    HORIZONTAL_BREAKPOINTS: ClassVar[list[tuple[int, str]]] = [(0, "-narrow"), (110, "-wide")]
    # keys that type a character ('?') are bindings of lower priority than a focused field, so that
    # they act only when the user is not typing; the others act everywhere
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding(key, k.action, k.description, priority=not typed_character(key), show=False)
        for k in GLOBAL_KEYS for key in k.key.split(",")]

    def __init__(self, *, view: str = "cylinder", swc: str | None = None, simulation: str | None = None,
                 recording: str | None = None, morphology: str | None = None, table: str | None = None) -> None:
        super().__init__()
        if view not in VIEWS:
            raise ValueError(f"unknown view {view!r}")
        # a value far outside the range met in neurons is used as typed; a warning printed on
        # stderr would scribble over the screen, so the app does not print it
        warnings.filterwarnings("ignore", category=ImplausibleValueWarning)
        self.cell_texts: dict[str, str] = {}  # the shared cell (fields.SHARED_CELL) as last typed
        if view in FIRST_RESULT_MODULES:
            import threading

            threading.Thread(target=_import_ahead, args=(FIRST_RESULT_MODULES[view],), daemon=True).start()
        self.start_view = view
        self.swc = swc
        self.simulation = simulation
        self.fit_files = (recording, morphology)  # the fitting view's recording and cell
        self.table = table  # the survey view's table

    def compose(self) -> ComposeResult:
        yield ViewBar(id="view-bar")
        with ContentSwitcher(initial=self.start_view, id="views"):
            yield self._make_view(self.start_view)  # the others are built when first shown
        yield Static(f"⚠ {PASSIVE_CAVEAT}", id="caveat")
        yield Static("", id="status")

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        """Under an open dialog the global keys are inert, except quitting and closing the help."""
        from textual.screen import ModalScreen

        if not isinstance(self.screen, ModalScreen) or action == "quit":
            return True
        from .dialogs import HelpScreen

        return action == "toggle_help" and isinstance(self.screen, HelpScreen)

    def _make_view(self, view: str) -> Widget:
        if view == "cylinder":
            from .cylinder_view import CylinderView

            return CylinderView(id="cylinder")
        if view == "charging":
            from .charging_view import ChargingView

            return ChargingView(id="charging")
        if view == "tree":
            from .tree_view import TreeView

            return TreeView(id="tree", swc=self.swc)
        if view in ("fit", "survey"):
            from .fit_view import FitView
            from .survey_view import SurveyView

            if view == "fit":
                return FitView(id="fit", file=self.fit_files[0], morphology=self.fit_files[1])
            return SurveyView(id="survey", table=self.table)
        from .check_view import CheckView

        return CheckView(id="check", file=self.simulation)

    def on_mount(self) -> None:
        self.query_one(ViewBar).show(self.start_view)
        self.set_status("")
        self._focus_first(self.start_view)
        self.call_after_refresh(self._activate, self.start_view)  # first frame before the first result

    def _activate(self, view: str) -> None:
        activate = getattr(self.query_one(f"#{view}"), "activate", None)
        if activate is not None:
            activate()

    # -- views ------------------------------------------------------------------------------
    @property
    def current_view(self) -> str:
        return self.query_one("#views", ContentSwitcher).current or "cylinder"

    async def action_show_view(self, view: str) -> None:
        switcher = self.query_one("#views", ContentSwitcher)
        if not switcher.query_children(f"#{view}"):
            await switcher.mount(self._make_view(view))
        switcher.current = view
        self.query_one(ViewBar).show(view)
        self._activate(view)
        self.set_status("")
        self.call_after_refresh(self._focus_first, view)

    def _focus_first(self, view: str) -> None:
        container = self.query_one(f"#{view}")
        focusable = [w for w in container.query("*") if w.focusable]
        if focusable:
            focusable[0].focus()

    async def action_next_view(self) -> None:
        views = list(VIEWS)
        await self.action_show_view(views[(views.index(self.current_view) + 1) % len(views)])

    def action_toggle_help(self) -> None:
        from .dialogs import HelpScreen

        if isinstance(self.screen, HelpScreen):
            self.screen.dismiss(None)
        else:
            self.push_screen(HelpScreen(self.current_view))

    # -- the shared cell -----------------------------------------------------------------------
    def on_input_changed(self, event: Input.Changed) -> None:
        """A field of the cell typed in one view is the same field in every other view."""
        from .fields import SHARED_CELL

        name = (event.input.id or "").rsplit("-", 1)[-1]
        if name not in SHARED_CELL:
            return
        self.cell_texts[name] = event.value
        for view in self.query_one("#views", ContentSwitcher).children:
            for box in view.query(Input):
                if box is not event.input and (box.id or "").rsplit("-", 1)[-1] == name and box.value != event.value:
                    box.value = event.value

    # -- export ---------------------------------------------------------------------------------
    def _view_widget(self):
        return self.query_one(f"#{self.current_view}")

    def action_export_data(self) -> None:
        self._export("json", "Save inputs and results as (.json, .csv or .md)")

    def action_export_plot(self) -> None:
        self._export("svg", "Save the plot as (.png or .svg)")

    def _export(self, suffix: str, title: str) -> None:
        from .dialogs import SaveScreen
        from .export import export

        view = self._view_widget()
        report = view.report
        if report is None:
            self.set_status("Nothing to save yet: the view has no valid result.", error=True)
            return
        protected = getattr(view, "input_files", ())

        def write(path: str) -> Path:
            return export(report, path, protected=protected)

        def done(written: str | None) -> None:
            if written:
                self.set_status(f"Saved {written}")

        self.push_screen(SaveScreen(title, f"{report.view}.{suffix}", write), done)

    # -- files ------------------------------------------------------------------------------------
    def action_open_file(self) -> None:
        from .dialogs import OpenScreen

        view = self._view_widget()
        opener = getattr(view, "open_path", None)
        if opener is None:
            self.set_status("This view opens no files; F4 (tree) reads SWC, F5 (check) and F8 (fit) CSV, "
                            "F9 a survey table.", error=True)
            return

        def done(path: str | None) -> None:
            if path:
                opener(path)

        self.push_screen(OpenScreen(view.open_title, view.open_folder, view.open_suggestion), done)

    # -- status line ----------------------------------------------------------------------------
    def set_status(self, message: str, *, error: bool = False) -> None:
        """One line at the bottom: the last thing that happened (or the main keys)."""
        if not message:
            keys = " · ".join(f"{key_label(key)} {what}" for key, what in STATUS_KEYS)
            self.query_one("#status", Static).update(Text(keys, style="dim"))
            return
        self.query_one("#status", Static).update(Text(message, style="bold #ff6b6b" if error else "#9bd36a"))
