"""Every key of the app in one place: the app's bindings and the help panel are built from it."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["GLOBAL_KEYS", "MOVE_KEYS", "VIEWS", "VIEW_KEYS", "Key", "key_label"]


@dataclass(frozen=True, slots=True)
class Key:
    key: str  # textual key name(s), comma separated
    action: str  # textual action string
    description: str


# view id -> (title on the view bar, what it is for)
VIEWS: dict[str, tuple[str, str]] = {
    "cylinder": ("Cylinder", "one uniform cable: constants, input resistance, V(X)"),
    "charging": ("Charging", "exact transients: V(t) and V(X) after a stimulus"),
    "tree": ("Tree", "SWC or tree outline: 3/2 audit, equivalent cylinder"),
    "check": ("Check", "simulator output against the exact solution"),
}

GLOBAL_KEYS: tuple[Key, ...] = (
    Key("f1", "toggle_help", "show or hide the list of keys"),
    Key("f2", "show_view('cylinder')", "cylinder view"),
    Key("f3", "show_view('charging')", "charging view"),
    Key("f4", "show_view('tree')", "tree view"),
    Key("f5", "show_view('check')", "check view"),
    Key("ctrl+t", "next_view", "next view"),
    Key("ctrl+s", "export_data", "save this view's inputs and results (.json .csv .md)"),
    Key("ctrl+g", "export_plot", "save this view's plot (.png .svg)"),
    Key("ctrl+o", "open_file", "open a file (tree view: SWC, outline; check view: CSV)"),
    Key("ctrl+q", "quit", "quit"),
)

# keys that work inside one view only (bound on the view)
VIEW_KEYS: dict[str, tuple[Key, ...]] = {
    "cylinder": (Key("ctrl+b", "next_end", "next far-end condition: sealed, killed, leaky"),),
    "charging": (Key("ctrl+b", "next_model", "next model"),
                 Key("ctrl+n", "next_stimulus", "next stimulus"),
                 Key("ctrl+r", "run", "compute again now")),
    "tree": (Key("ctrl+r", "run", "audit the tree again with the current membrane values"),),
    "check": (Key("ctrl+b", "next_model", "next model"),
              Key("ctrl+n", "next_stimulus", "next stimulus"),
              Key("ctrl+p", "next_axis", "error plotted over time or over space"),
              Key("ctrl+r", "run", "compare again")),
}

MOVE_KEYS: tuple[tuple[str, str], ...] = (
    ("tab / shift+tab", "next / previous field"),
    ("↑ ↓ ← →", "choose in a list or tree"),
    ("enter / space", "pick, open or expand"),
    ("escape", "close a dialog"),
)


def key_label(key: str) -> str:
    """'ctrl+s' -> 'ctrl+s', 'f1' -> 'F1' (the first key of a comma list), spelled out as in the help."""
    first = key.split(",")[0]
    return first.upper() if first.startswith("f") and first[1:].isdigit() else first
