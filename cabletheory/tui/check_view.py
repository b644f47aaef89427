"""The check view: a simulator's recorded voltages against the exact solution."""

from __future__ import annotations

from typing import TYPE_CHECKING, ClassVar

from textual import work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.widgets import Input, Label, RadioButton, RadioSet, Static
from textual.worker import get_current_worker

from .fields import CHECK_FIELDS, check_fields_used
from .keys import key_label
from .widgets import (
    CaseChoices,
    CurvePlot,
    LatestRequest,
    OneFileForm,
    QuantityField,
    QuantityList,
    case_form,
    shared_texts,
)

if TYPE_CHECKING:  # pragma: no cover
    from .forms import CheckSetup
    from .report import Report

PREFIX = "ck-"
_SPECS = {spec.name: spec for spec in CHECK_FIELDS}


class CheckView(LatestRequest, OneFileForm, CaseChoices, Vertical):
    """Simulator file and exact case on the left; verdict, worst point and error plot on the right.

    The model and stimulus are chosen as in the charging view (same fields, same keys) and mean
    what the ``compare`` command's case options mean.
    """

    case_prefix = file_prefix = PREFIX
    request_group = "compare"
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+l", "next_model", "next model"),
        Binding("ctrl+n", "next_stimulus", "next stimulus"),
        Binding("ctrl+p", "next_axis", "error over time or over space"),
        Binding("ctrl+r", "run", "compare again"),
    ]

    report: Report | None = None
    wanted: CheckSetup | None = None  # the set-up the form holds now; a result of another is stale
    open_title = "Open a simulator's output (CSV: long or wide layout)"

    def __init__(self, *, id: str, file: str | None = None) -> None:
        super().__init__(id=id)
        self.initial_file = file or ""

    def compose(self) -> ComposeResult:
        with Horizontal(classes="columns"):
            with VerticalScroll(classes="form", id="check-form", can_focus=False):
                yield Static("simulator against the exact answer", classes="form-title")
                yield QuantityField(_SPECS["file"], prefix=PREFIX, value=self.initial_file)
                yield from case_form(PREFIX, _SPECS, shared_texts(self))
                yield Label("the file", classes="group-label")
                for name in ("rest", "onset", "pass_within"):
                    yield QuantityField(_SPECS[name], prefix=PREFIX)
                yield Label(f"error plotted  ({key_label('ctrl+p')} switches)", classes="group-label")
                with RadioSet(id="ck-axis", compact=True):
                    yield RadioButton("over time, at each site", value=True, id="axis-time", compact=True)
                    yield RadioButton("over space, largest per site", id="axis-space", compact=True)
                yield Static("The file holds the simulator's voltages at one or more sites (long or wide "
                             "CSV, see docs/verify.md); the exact answer is the case above, from rest, "
                             "switched on at the onset.\nlength 'inf': semi-infinite cylinder",
                             classes="hint")
            with Vertical(classes="output"):
                yield QuantityList(id="check-results", classes="results")
                yield CurvePlot(id="check-plot")

    def on_mount(self) -> None:
        self._show_fields()
        if self.initial_file:
            self.refresh_results()
        else:
            self.query_one("#check-results", QuantityList).update(
                "Open a simulator's output: type its path in the file field and press enter, or press ctrl+o.")

    def activate(self) -> None:
        """Called when the view is shown: catch up with a cell edited in another view."""
        if self.query_one(f"#{PREFIX}file", Input).value.strip():
            self.refresh_results()

    def open_path(self, path: str) -> None:
        self.query_one(f"#{PREFIX}file", Input).value = path
        self.refresh_results(again=True)

    @property
    def axis(self) -> str:
        pressed = self.query_one("#ck-axis", RadioSet).pressed_button
        return "space" if pressed is not None and pressed.id == "axis-space" else "time"

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.refresh_results(again=True)

    def on_input_changed(self, event: Input.Changed) -> None:
        # not stopped: the app shares the cell's texts with the other views
        if event.input.id == f"{PREFIX}file":
            self.query_one(f"#field-{PREFIX}file", QuantityField).flag(None)
            return  # a file is opened with enter, not at every keystroke
        if self.app.current_view == self.id and self.query_one(f"#{PREFIX}file", Input).value.strip():  # type: ignore[attr-defined]
            self.refresh_results()

    def _show_fields(self) -> set[str]:
        """Show only the fields the chosen model and stimulus read; return their names."""
        used = check_fields_used(self.model_choice, self.stimulus_choice)
        for field in self.query(QuantityField):
            field.display = field.spec.name in used
        return used

    def on_radio_set_changed(self, event: RadioSet.Changed) -> None:
        event.stop()
        if event.radio_set.id == "ck-axis":
            self._show_plot()
            return
        self._show_fields()
        if self.query_one(f"#{PREFIX}file", Input).value.strip():
            self.refresh_results()

    def action_next_axis(self) -> None:
        target = "axis-time" if self.axis == "space" else "axis-space"
        self.query_one(f"#{target}", RadioButton).value = True

    def action_run(self) -> None:
        self.refresh_results(again=True)

    def refresh_results(self, again: bool = False) -> None:
        from .forms import read_check_form

        used = self._show_fields()
        fields = {f.spec.name: f for f in self.query(QuantityField) if f.spec.name in used}
        setup, errors = read_check_form({n: f.input.value for n, f in fields.items()}, self.model_choice,
                                        self.stimulus_choice)
        for field in self.query(QuantityField):
            if field.spec.name not in used:
                field.flag(None)
        for name, field in fields.items():
            field.flag(errors.get(name))
        self.submit(setup, errors, again)

    def _start(self, setup: CheckSetup) -> None:
        self.compare(setup)

    def _clear(self, message: str) -> None:
        self._busy(False)
        self.report = None
        self.query_one("#check-results", QuantityList).update(message)
        self.query_one(CurvePlot).spec = None

    def _busy(self, busy: bool) -> None:
        self.query_one("#check-results", QuantityList).border_subtitle = "comparing…" if busy else ""
        self.query_one(CurvePlot).loading = busy

    @work(exclusive=True, thread=True, group="compare")
    def compare(self, setup: CheckSetup) -> None:
        from ..errors import CableTheoryError
        from .format import analyse_check, check_report

        worker = get_current_worker()
        try:
            result: Report | str = check_report(setup, analyse_check(setup))
        except CableTheoryError as exc:
            result = str(exc)
        if not worker.is_cancelled:
            self.app.call_from_thread(self._show, setup, result)

    def _show(self, setup: CheckSetup, result: Report | str) -> None:
        if setup != self.wanted:
            return  # the form changed while the worker ran: a newer result is on its way
        self._busy(False)
        if isinstance(result, str):
            self.query_one(f"#field-{PREFIX}file", QuantityField).flag(result)
            self._clear("The file could not be compared; see the message under the file field.")
            return
        self.report = result
        self.query_one("#check-results", QuantityList).show(result.results, result.notes[:1])
        self._show_plot()

    def _show_plot(self) -> None:
        if self.report is not None:
            self.query_one(CurvePlot).spec = self.report.plots[0 if self.axis == "time" else 1]
