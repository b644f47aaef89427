"""Small widgets shared by the views: a braille curve plot, a quantity list, a labelled field, a choice."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING

from rich.text import Text
from textual.app import ComposeResult
from textual.reactive import reactive
from textual.widget import Widget
from textual.widgets import Input, Label, RadioButton, RadioSet, Static

from .fields import CABLE_GROUP, MODEL_CHOICES, STIMULUS_CHOICES, STIMULUS_GROUP, FieldSpec

if TYPE_CHECKING:  # pragma: no cover
    from .report import PlotSpec, Row

# curve colours, in drawing order (chosen for contrast on a dark background)
PALETTE = ("#f2b84b", "#5cc8d6", "#d77ac4", "#9bd36a", "#f07f5f", "#a7a7f0")


class CurvePlot(Widget):
    """A braille plot of a :class:`PlotSpec` that fills its box; the y label is the border title."""

    spec: reactive[PlotSpec | None] = reactive(None, layout=False)

    def watch_spec(self, spec: PlotSpec | None) -> None:
        self.border_title = spec.y_label if spec is not None else ""
        self.border_subtitle = spec.title if spec is not None else ""

    def render(self) -> Text:
        spec = self.spec
        width, height = self.content_size.width, self.content_size.height
        if spec is None or not spec.series or width < 12 or height < 5:
            return Text("no curve yet", style="dim")
        from .plot import draw  # numpy: not needed for the first, empty frame

        legend = legend_lines(spec.x_label, [s.label for s in spec.series], width)
        picture = draw(spec, width, height - len(legend))
        out = Text(no_wrap=True, overflow="crop")
        for line, owners in zip(picture.rows, picture.owners, strict=True):
            for char, owner in zip(line, owners, strict=True):
                out.append(char, style=PALETTE[owner % len(PALETTE)] if owner >= 0 else "")
            out.append("\n")
        for number, items in enumerate(legend):
            if number:
                out.append("\n")
            for index, item in items:
                if index < 0:
                    out.append(item, style="bold")
                else:
                    out.append("━━ ", style=PALETTE[index % len(PALETTE)])
                    out.append(item)
        return out


def legend_lines(x_label: str, labels: Sequence[str], width: int) -> list[list[tuple[int, str]]]:
    """The x-axis label then each curve's swatch and label, packed into lines of ``width``.

    Items are ``(curve index, text)``; index -1 is the axis label.
    """
    lines: list[list[tuple[int, str]]] = [[(-1, f"{x_label}   ")]]
    used = len(x_label) + 3
    for index, label in enumerate(labels):
        size = len(label) + 5  # "━━ " + label + two spaces
        if used + size > width and used > 0:
            lines.append([])
            used = 0
        lines[-1].append((index, f"{label}  "))
        used += size
    return lines


class QuantityList(Static):
    """Label-value lines for a sequence of :class:`Row`; flagged rows are highlighted."""

    def show(self, rows: Sequence[Row], notes: Sequence[str] = ()) -> None:
        from .report import row_text

        width = max((len(row.label) for row in rows), default=0)
        text = Text(no_wrap=False)
        for row in rows:
            style = "bold #ff6b6b" if row.flag else ""
            text.append(row.label.ljust(width + 2), style="#9aa5b1" if not row.flag else style)
            text.append(row_text(row), style=style or "bold")
            text.append("\n")
        for note in notes:
            text.append(f"{note}\n", style="italic")
        self.update(text)


class QuantityField(Widget):
    """A field: label and one-line input side by side, and under them the message of its current
    problem (made only when there is one; few widgets keep start-up quick)."""

    DEFAULT_CLASSES = "field"

    def __init__(self, spec: FieldSpec, *, prefix: str = "", label: str | None = None,
                 value: str | None = None) -> None:
        super().__init__(id=f"field-{prefix}{spec.name}")
        self.spec = spec
        self.prefix = prefix
        self._label = label or spec.label
        self._value = spec.default if value is None else value

    def compose(self) -> ComposeResult:
        yield Label(self._label, classes="field-label")
        yield Input(self._value, placeholder=self.spec.placeholder, id=f"{self.prefix}{self.spec.name}",
                    compact=True)

    @property
    def input(self) -> Input:
        return self.query_one(Input)

    def flag(self, message: str | None) -> None:
        """Show ``message`` under the field and mark it, or clear both (``None``)."""
        shown = self.query(".field-message")
        if message:
            if shown:
                shown.first(Static).update(message)
            else:
                self.mount(Static(message, classes="field-message"))
        elif shown:
            shown.first(Static).update("")
        self.set_class(bool(message), "bad")


class ChoiceSet(RadioSet):
    """One choice out of ``choices`` (key -> label), e.g. the model or the stimulus of a case.

    The buttons' ids are ``<id>-<key>``; :attr:`choice` is the key of the pressed one and
    :meth:`cycle` presses the next (the views bind it to a key).
    """

    def __init__(self, choices: dict[str, str], default: str, *, id: str) -> None:
        self.choices = choices
        self.default = default
        super().__init__(*(RadioButton(label, value=key == default, id=f"{id}-{key}", compact=True)
                           for key, label in choices.items()), id=id, compact=True)

    @property
    def choice(self) -> str:
        pressed = self.pressed_button
        return (pressed.id or "").removeprefix(f"{self.id}-") if pressed is not None else self.default

    def cycle(self) -> None:
        keys = list(self.choices)
        following = keys[(keys.index(self.choice) + 1) % len(keys)]
        self.query_one(f"#{self.id}-{following}", RadioButton).value = True


class CaseChoices:
    """The model and stimulus choices (and their ctrl+b / ctrl+n actions) of a view whose form
    holds :func:`case_form` composed with the view's ``case_prefix``."""

    case_prefix: str = ""

    @property
    def model_choice(self) -> str:
        return self.query_one(f"#{self.case_prefix}model", ChoiceSet).choice  # type: ignore[attr-defined]

    @property
    def stimulus_choice(self) -> str:
        return self.query_one(f"#{self.case_prefix}stimulus", ChoiceSet).choice  # type: ignore[attr-defined]

    def action_next_model(self) -> None:
        self.query_one(f"#{self.case_prefix}model", ChoiceSet).cycle()  # type: ignore[attr-defined]

    def action_next_stimulus(self) -> None:
        self.query_one(f"#{self.case_prefix}stimulus", ChoiceSet).cycle()  # type: ignore[attr-defined]


def case_form(prefix: str, specs: Mapping[str, FieldSpec]) -> ComposeResult:
    """The model and stimulus part of a form (shared by the charging and check views): a model
    choice with the cable fields, then a stimulus choice with its fields, as in ``cli/case.py``."""
    yield Label("model  (ctrl+b cycles)", classes="group-label")
    yield ChoiceSet(MODEL_CHOICES, "cylinder", id=f"{prefix}model")
    for name in CABLE_GROUP:
        yield QuantityField(specs[name], prefix=prefix)
    yield Label("stimulus  (ctrl+n cycles)", classes="group-label")
    yield ChoiceSet(STIMULUS_CHOICES, "step", id=f"{prefix}stimulus")
    for name in STIMULUS_GROUP:
        yield QuantityField(specs[name], prefix=prefix)


def waiting_message(errors: Mapping[str, str]) -> str:
    """What a results panel says while some fields are flagged."""
    count = len(errors)
    return f"Results wait for valid inputs ({count} field{'s' if count > 1 else ''} flagged)."
