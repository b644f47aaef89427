"""Dialogs: the list of keys, "save as" and "open file" (path typed or picked from a folder tree)."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import ClassVar

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import DirectoryTree, Input, Label, Static

from ..errors import CableTheoryError
from .keys import GLOBAL_KEYS, MOVE_KEYS, VIEW_KEYS, VIEWS, key_label


def help_text(view: str) -> Text:
    """The help panel's text: global keys, this view's keys, moving around."""
    text = Text()
    text.append("Everywhere\n", style="bold underline")
    for key in GLOBAL_KEYS:
        text.append(f"  {key_label(key.key):>7}  ", style="bold #f2b84b")
        text.append(f"{key.description}\n")
    title = VIEWS[view][0]
    text.append(f"\nIn the {title.lower()} view\n", style="bold underline")
    for key in VIEW_KEYS.get(view, ()):
        text.append(f"  {key_label(key.key):>7}  ", style="bold #f2b84b")
        text.append(f"{key.description}\n")
    text.append("\nMoving around\n", style="bold underline")
    for keys, what in MOVE_KEYS:
        text.append(f"  {keys:>15}  ", style="bold #5cc8d6")
        text.append(f"{what}\n")
    text.append("\nThe mouse works too: click a view name, a field, a choice or a tree node.", style="italic")
    return text


class HelpScreen(ModalScreen[None]):
    """The keys, for the view that was showing."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape,f1,q,question_mark", "dismiss", "close")]

    def __init__(self, view: str) -> None:
        super().__init__()
        self.view = view

    def compose(self) -> ComposeResult:
        with Vertical(id="help-box", classes="dialog"):
            with VerticalScroll(id="help-scroll"):  # focused: arrows and page keys scroll it
                yield Static(help_text(self.view), id="help-text")
            yield Label("↑ ↓ page up / down scroll · escape, F1 or ? closes", classes="dialog-hint")

    def on_mount(self) -> None:
        self.query_one("#help-scroll").focus()

    def action_dismiss(self, result: None = None) -> None:
        self.dismiss(None)


class SaveScreen(ModalScreen[str | None]):
    """Ask for a file name; ``write(path)`` does the writing and raises on bad paths.

    The dialog stays open with the one-line message when writing fails, so the user can fix
    the name; it closes with the written path on success.
    """

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "cancel")]

    def __init__(self, title: str, suggestion: str, write: Callable[[str], Path]) -> None:
        super().__init__()
        self.title_text = title
        self.suggestion = suggestion
        self.write = write

    def compose(self) -> ComposeResult:
        with Vertical(id="save-box", classes="dialog"):
            yield Label(self.title_text, classes="dialog-title")
            yield Input(self.suggestion, id="save-path")
            yield Static("", id="save-message", classes="field-message")
            yield Label("enter writes · escape cancels", classes="dialog-hint")

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        try:
            written = self.write(event.value)
        except (CableTheoryError, OSError) as exc:
            self.query_one("#save-message", Static).update(str(exc).splitlines()[0])
            return
        self.dismiss(str(written))

    def action_cancel(self) -> None:
        self.dismiss(None)


class OpenScreen(ModalScreen[str | None]):
    """Type a path, or move to a file in the folder tree and press enter."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "cancel")]

    def __init__(self, title: str, folder: Path, suggestion: str = "") -> None:
        super().__init__()
        self.title_text = title
        self.folder = folder
        self.suggestion = suggestion

    def compose(self) -> ComposeResult:
        with Vertical(id="open-box", classes="dialog"):
            yield Label(self.title_text, classes="dialog-title")
            yield Input(self.suggestion, placeholder="path to a file", id="open-path")
            yield DirectoryTree(self.folder, id="open-tree")
            yield Label("enter opens the typed path or the picked file · escape cancels", classes="dialog-hint")

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        if event.value.strip():
            self.dismiss(event.value.strip())

    def on_directory_tree_file_selected(self, event: DirectoryTree.FileSelected) -> None:
        event.stop()
        self.dismiss(str(event.path))

    def action_cancel(self) -> None:
        self.dismiss(None)
