"""Small widgets shared by the views: a braille curve plot, a quantity list, a labelled field, a choice."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar, Protocol, runtime_checkable

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.reactive import reactive
from textual.widget import Widget
from textual.widgets import Input, Label, RadioButton, RadioSet, Static

from .fields import CABLE_GROUP, MODEL_CHOICES, STIMULUS_CHOICES, STIMULUS_GROUP, FieldSpec
from .keys import key_label

if TYPE_CHECKING:  # pragma: no cover
    from .report import PlotSpec, Row



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
        from .plot import curve_style, draw  # numpy: not needed for the first, empty frame

        legend = legend_lines(spec.x_label, [s.label for s in spec.series], width)
        picture = draw(spec, width, height - len(legend))
        out = Text(no_wrap=True, overflow="crop")
        for line, owners in zip(picture.rows, picture.owners, strict=True):
            start = 0  # one span per run of cells of one curve: a span per cell costs 10 ms a plot
            for end in range(1, len(line) + 1):
                if end == len(line) or owners[end] != owners[start]:
                    owner = owners[start]
                    out.append(line[start:end], style=curve_style(owner)[0] if owner >= 0 else "")
                    start = end
            out.append("\n")
        for number, items in enumerate(legend):
            if number:
                out.append("\n")
            for index, item in items:
                if index < 0:
                    out.append(item, style="bold")
                else:
                    colour, swatch = curve_style(index)
                    out.append(f"{swatch} ", style=colour)
                    out.append(item)
        return out


def legend_lines(x_label: str, labels: Sequence[str], width: int) -> list[list[tuple[int, str]]]:
    """The x-axis label then each curve's swatch and label, packed into lines of ``width``.

    Items are ``(curve index, text)``; index -1 is the axis label.
    """
    lines: list[list[tuple[int, str]]] = [[(-1, f"{x_label}   ")]]
    used = len(x_label) + 3
    for index, label in enumerate(labels):
        size = len(label) + 6  # "━━━ " + label + two spaces
        if used + size > width and used > 0:
            lines.append([])
            used = 0
        lines[-1].append((index, f"{label}  "))
        used += size
    return lines


class QuantityList(Static, can_focus=True):
    """Label-value lines for a sequence of :class:`Row`; flagged rows are highlighted.

    Focusable (tab reaches it) and scrolled by keys when it holds more than fits."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("up", "scroll_up", show=False), Binding("down", "scroll_down", show=False),
        Binding("pageup", "page_up", show=False), Binding("pagedown", "page_down", show=False),
        Binding("home", "scroll_home", show=False), Binding("end", "scroll_end", show=False),
    ]

    _shown: tuple[Sequence[Row], Sequence[str]] | None = None
    _shape: tuple[int, tuple[int, ...]] | None = None  # width, and rows of each line once wrapped

    def show(self, rows: Sequence[Row], notes: Sequence[str] = ()) -> None:
        """Label and value on one line each; labels too long for a narrow panel are cut with '…'
        so that the values stay in one column (the whole label is in saved files and the help)."""
        from rich.cells import cell_len

        from .report import row_text

        self._shown = (rows, notes)
        values = [row_text(row) for row in rows]
        width = max((len(row.label) for row in rows), default=0)
        room = self.content_size.width
        if room > 0:
            # a long text value (a method, a verdict) wraps; the numbers keep their column
            numbers = max((len(v) for v in values if len(v) <= 16), default=0)
            width = max(8, min(width, room - 2 - numbers))
        text = Text(no_wrap=False)
        for row, value in zip(rows, values, strict=True):
            style = "bold #ff6b6b" if row.flag else ""
            label = row.label if len(row.label) <= width else row.label[:width - 1] + "…"
            text.append(label.ljust(width + 2), style="#9aa5b1" if not row.flag else style)
            text.append(value, style=style or "bold")
            text.append("\n")
        for note in notes:
            text.append(f"{note}\n", style="italic")
        # as many lines as before, once wrapped to the panel's width: no layout of the whole
        # view (a layout costs more than computing most results)
        shape = (room, tuple(-(-cell_len(line) // room) if room > 0 else 0 for line in text.plain.split("\n")))
        self.update(text, layout=shape != self._shape)
        self._shape = shape

    def update(self, content="", *, layout: bool = True) -> None:  # type: ignore[no-untyped-def, override]
        if not isinstance(content, Text) or content.plain == "":
            self._shown = None  # a message, not rows: nothing to lay out again on resize
            self._shape = None
        super().update(content, layout=layout)

    def on_resize(self) -> None:
        if self._shown is not None:
            self.show(*self._shown)


class QuantityField(Widget):
    """A field: label and one-line input side by side; under them, dim, how the value was read
    (``= 15.00 µm``) with any warning of an implausible value, or the message of its problem."""

    DEFAULT_CLASSES = "field"
    _echo_lines = -1  # lines of the echo shown (-1: unknown)

    def __init__(self, spec: FieldSpec, *, prefix: str = "", label: str | None = None,
                 value: str | None = None) -> None:
        super().__init__(id=f"field-{prefix}{spec.name}")
        self.spec = spec
        self.prefix = prefix
        self._label = label or spec.label
        self._value = spec.default if value is None else value
        self._flagged: tuple[str | None, str] | None = None  # (message, text) the echo line shows

    def compose(self) -> ComposeResult:
        from textual.containers import Horizontal

        with Horizontal(classes="field-row"):
            yield Label(self._label, classes="field-label")
            yield Input(self._value, placeholder=self.spec.placeholder, id=f"{self.prefix}{self.spec.name}",
                        compact=True)
        yield Static("", classes="field-echo")

    @property
    def input(self) -> Input:
        return self.query_one(Input)

    @property
    def echo_text(self) -> str:
        """The echo line as shown (for tests)."""
        return str(self.query_one(".field-echo", Static).render())

    def flag(self, message: str | None) -> None:
        """Show ``message`` under the field and mark it, or clear both (``None``); without a
        message, the echo line says how the current text is read."""
        if self._flagged == (message, self.input.value):
            return  # the line under the field says this already (most fields, at each keystroke)
        self._flagged = (message, self.input.value)
        echo = self.query_one(".field-echo", Static)
        self.set_class(bool(message), "bad")
        if message:
            echo.display = True
            echo.update(Text(message, style="#ff8a80"))
            self._echo_lines = -1  # a message wraps as the panel's width says: lay out again next time
            self.set_class(False, "warned")
            return
        from .forms import reading  # the units boundary: loaded after the first frame

        said, warning = reading(self.spec, self.input.value)
        line = Text(said, style="#8796a3")
        if warning:
            line.append(("\n" if said else "") + f"⚠ {warning}", style="#f2d49b")
        self.set_class(bool(warning), "warned")
        # a new value on as many lines as the old one needs no layout of the form (a layout per
        # keystroke is the slowest part of typing into a large view)
        lines = line.plain.count("\n") + 1 if line.plain else 0
        echo.update(line, layout=lines != self._echo_lines)
        self._echo_lines = lines
        echo.display = bool(line.plain)  # a file field says nothing here: no empty line


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


class OneFileForm:
    """A view whose one input file is its ``file_prefix + "file"`` field: what the app's open dialog
    suggests and where it starts, and the file a save must never overwrite."""

    file_prefix: str = ""

    @property
    def open_folder(self) -> Path:
        return Path.cwd()

    @property
    def open_suggestion(self) -> str:
        return self.query_one(f"#{self.file_prefix}file", Input).value  # type: ignore[attr-defined]

    @property
    def input_files(self) -> tuple[str, ...]:
        return (self.open_suggestion,)


class LatestRequest:
    """A view that hands the latest valid set-up of its form to one worker group: a set-up equal to
    the one on its way (or on screen) is not asked again unless ``again``; an invalid form cancels
    the group and clears the results with :func:`waiting_message`. The view supplies ``_clear``,
    ``_busy`` and ``_start`` (which starts its worker of ``request_group``)."""

    request_group: str = ""
    wanted: Any = None  # the set-up the form holds now; a result of another is stale

    def submit(self, setup: Any, errors: Mapping[str, str], again: bool = False) -> None:
        if setup is not None and setup == self.wanted and not again:
            return
        self.wanted = setup
        if setup is None:
            self.workers.cancel_group(self, self.request_group)  # type: ignore[attr-defined]
            self._clear(waiting_message(errors))
            return
        self._busy(True)
        self._start(setup)

    def _clear(self, message: str) -> None:
        raise NotImplementedError

    def _busy(self, busy: bool) -> None:
        raise NotImplementedError

    def _start(self, setup: Any) -> None:
        raise NotImplementedError


class CaseChoices:
    """The model and stimulus choices (and their ctrl+l / ctrl+n actions) of a view whose form
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


def case_form(prefix: str, specs: Mapping[str, FieldSpec], values: Mapping[str, str]) -> ComposeResult:
    """The model and stimulus part of a form (shared by the charging and check views): a model
    choice with the cable fields, then a stimulus choice with its fields, as in ``cli/case.py``."""
    yield Label(f"model  ({key_label('ctrl+l')} cycles)", classes="group-label")
    yield ChoiceSet(MODEL_CHOICES, "cylinder", id=f"{prefix}model")
    for name in CABLE_GROUP:
        yield QuantityField(specs[name], prefix=prefix, value=values.get(name))
    yield from stimulus_form(prefix, specs)


def stimulus_form(prefix: str, specs: Mapping[str, FieldSpec], names: Sequence[str] = STIMULUS_GROUP) -> ComposeResult:
    """The stimulus part of a form: the stimulus choice and the fields ``names`` (the tree view
    composes it without the stimulus position, which is a point label on a tree)."""
    yield Label(f"stimulus  ({key_label('ctrl+n')} cycles)", classes="group-label")
    yield ChoiceSet(STIMULUS_CHOICES, "step", id=f"{prefix}stimulus")
    for name in names:
        yield QuantityField(specs[name], prefix=prefix)


@runtime_checkable
class SharesCell(Protocol):
    """An app that keeps the texts of the shared cell's fields (:class:`~cabletheory.tui.app.CableApp`)."""

    cell_texts: dict[str, str]


def shared_texts(widget: Widget) -> Mapping[str, str]:
    """The texts of the shared cell's fields as last typed in any view (a field not typed yet
    is absent: it keeps its default)."""
    app = widget.app
    return app.cell_texts if isinstance(app, SharesCell) else {}


def shared_text(widget: Widget, name: str) -> str | None:
    """The text of one field of the shared cell as last typed in any view (None: the default)."""
    return shared_texts(widget).get(name)


def waiting_message(errors: Mapping[str, str]) -> str:
    """What a results panel says while some fields are flagged."""
    count = len(errors)
    return f"Results wait for valid inputs ({count} field{'s' if count > 1 else ''} flagged)."
