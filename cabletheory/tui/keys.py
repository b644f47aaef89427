"""Every key of the app in one place: the app's bindings and the help panel are built from it."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["GLOBAL_KEYS", "MOVE_KEYS", "VIEWS", "VIEW_KEYS", "Key", "key_label", "typed_character"]


@dataclass(frozen=True, slots=True)
class Key:
    key: str  # textual key name(s), comma separated
    action: str  # textual action string
    description: str


# view id -> (title on the view bar, what it is for)
VIEWS: dict[str, tuple[str, str]] = {
    "cylinder": ("Cylinder", "one uniform cable: constants, input resistance, V(X)"),
    "charging": ("Charging", "exact transients: V(t) and V(X) after a stimulus"),
    "tree": ("Tree", "SWC or tree outline: 3/2 audit, equivalent cylinder, time course, electrotonic map"),
    "check": ("Check", "simulator output against the exact solution"),
    "fit": ("Fit", "recorded sweeps: passive parameters with 95 % intervals"),
    "survey": ("Survey", "a survey table: one row per cell, summary of a column"),
}

GLOBAL_KEYS: tuple[Key, ...] = (
    Key("f1,question_mark", "toggle_help", "show or hide the list of keys ('?' when not typing)"),
    Key("f2", "show_view('cylinder')", "cylinder view"),
    Key("f3", "show_view('charging')", "charging view"),
    Key("f4", "show_view('tree')", "tree view"),
    Key("f5", "show_view('check')", "check view"),
    Key("f8", "show_view('fit')", "fitting view"),
    Key("f9", "show_view('survey')", "survey table view"),
    Key("ctrl+t", "next_view", "next view"),
    Key("ctrl+s", "export_data", "save this view's inputs and results (.json .csv .md)"),
    Key("ctrl+g", "export_plot", "save this view's plot (.png .svg)"),
    Key("ctrl+o", "open_file", "open a file (tree: SWC, outline; check: CSV; fit: sweeps; survey: table)"),
    Key("ctrl+q", "quit", "quit"),
)

# keys that work inside one view only (bound on the view)
VIEW_KEYS: dict[str, tuple[Key, ...]] = {
    "cylinder": (),
    "charging": (Key("ctrl+l", "next_model", "next model"),
                 Key("ctrl+n", "next_stimulus", "next stimulus"),
                 Key("ctrl+r", "run", "compute again now")),
    "tree": (Key("ctrl+r", "run", "audit the tree again with the current membrane values"),
             Key("f6,b", "worst_branch_point", "jump to the branch point furthest from the 3/2 rule"),
             Key("f7,t", "worst_tip", "jump to the tip furthest from the others' X"),
             Key("ctrl+p", "next_panel", "next panel: audit, time course, electrotonic map"),
             Key("ctrl+n", "next_stimulus", "next stimulus of the time course")),
    "check": (Key("ctrl+l", "next_model", "next model"),
              Key("ctrl+n", "next_stimulus", "next stimulus"),
              Key("ctrl+p", "next_axis", "error plotted over time or over space"),
              Key("ctrl+r", "run", "compare again")),
    "fit": (Key("ctrl+l", "next_model", "next cell to fit"),
            Key("ctrl+r", "run", "fit again (enter in a field does too)")),
    "survey": (Key("ctrl+l", "next_column", "summarise the next numeric column"),
               Key("ctrl+r", "run", "read the table again")),
}

MOVE_KEYS: tuple[tuple[str, str], ...] = (
    ("tab / shift+tab", "next / previous field"),
    ("↑ ↓ ← →", "choose in a list or tree"),
    ("enter / space", "pick, open or expand"),
    ("escape", "close a dialog"),
    ("page up / page down", "scroll the panel in focus (tab reaches the results)"),
)


_CHARACTERS = {"question_mark": "?"}


def typed_character(key: str) -> bool:
    """True for a key that types a character in a field ('?', 'b'), False for ctrl+s, f1, ..."""
    return key in _CHARACTERS or len(key) == 1


def key_label(key: str) -> str:
    """How the help, the key strip and the form labels write a key: 'ctrl+s' -> 'ctrl+s',
    'f1' -> 'F1', 'question_mark' -> '?'; the keys of a comma list joined by ' / '."""
    labels = []
    for one in key.split(","):
        if one in _CHARACTERS:
            labels.append(_CHARACTERS[one])
        elif one.startswith("f") and one[1:].isdigit():
            labels.append(one.upper())
        else:
            labels.append(one)
    return " / ".join(labels)
