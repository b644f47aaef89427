"""The charging view: exact voltage transients after a current or voltage-clamp stimulus."""

from __future__ import annotations

from typing import TYPE_CHECKING, ClassVar

from textual import work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.widgets import Input, Label, RadioSet, Static
from textual.worker import get_current_worker

from .fields import CHARGING_FIELDS, charging_fields_used
from .widgets import (
    CaseChoices,
    CurvePlot,
    LatestRequest,
    QuantityField,
    QuantityList,
    case_form,
    shared_texts,
)

if TYPE_CHECKING:  # pragma: no cover
    from textual.timer import Timer

    from .forms import ChargingSetup
    from .report import Report

PREFIX = "ch-"
SAY_AFTER = 0.1  # s: a result slower than this is announced ("computing…" under the results)
COVER_AFTER = 0.3  # s: a result slower than this hides the stale plots under a loading cover
CURVE_GROUP = ("span", "watch", "moments")
_SPECS = {spec.name: spec for spec in CHARGING_FIELDS}


class ChargingView(LatestRequest, CaseChoices, Vertical):
    """Model and stimulus on the left; time constants, error bound, V(t) and V(X) on the right.

    The solver runs in a worker thread; the result panel says "computing" meanwhile.
    """

    case_prefix = PREFIX
    request_group = "solve"
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+l", "next_model", "next model"),
        Binding("ctrl+n", "next_stimulus", "next stimulus"),
        Binding("ctrl+r", "run", "compute again now"),
    ]

    report: Report | None = None
    active = False  # the solver first runs when the view is shown
    wanted: ChargingSetup | None = None  # the set-up the form holds now; a result of another is stale
    _slow_timers: tuple[Timer, ...] = ()  # announce a result that is slow to come
    _waiting = False  # a result is on its way

    def compose(self) -> ComposeResult:
        with Horizontal(classes="columns"):
            with VerticalScroll(classes="form", id="charging-form", can_focus=False):
                yield Static("exact transients", classes="form-title")
                yield from case_form(PREFIX, _SPECS, shared_texts(self))
                yield Label("curves", classes="group-label")
                for name in CURVE_GROUP:
                    yield QuantityField(_SPECS[name], prefix=PREFIX)
                yield Static("lists: '0, 250, 500 µm'; ranges: '0:500:100 µm'\nlength 'inf': semi-infinite cylinder\n"
                             "infinite cable: positions on both sides of the input", classes="hint")
            with Vertical(classes="output"):
                yield QuantityList(id="charging-results", classes="results")
                with Horizontal(classes="plots"):
                    yield CurvePlot(id="charging-time-plot")
                    yield CurvePlot(id="charging-space-plot")

    def activate(self) -> None:
        """Called when the view is shown: solve the form (the defaults the first time, or a cell
        edited in another view since)."""
        self.active = True
        self.refresh_results()

    @property
    def shown(self) -> bool:
        return self.app.current_view == self.id  # type: ignore[attr-defined]

    def on_input_changed(self, event: Input.Changed) -> None:
        # not stopped: the app shares the cell's texts with the other views
        if self.active and self.shown:
            self.refresh_results()

    def on_radio_set_changed(self, event: RadioSet.Changed) -> None:
        event.stop()
        if self.active:
            self.refresh_results()

    def action_run(self) -> None:
        self.active = True
        self.refresh_results(again=True)

    def refresh_results(self, again: bool = False) -> None:
        """Check the form at once; hand a valid set-up to the solver worker (unless its result is
        already on screen or on its way, and ``again`` is not asked)."""
        from .forms import read_charging_form

        model, stimulus = self.model_choice, self.stimulus_choice
        used = charging_fields_used(model, stimulus)
        fields = {f.spec.name: f for f in self.query(QuantityField)}
        for name, field in fields.items():
            if field.display != (name in used):  # setting it lays the form out, even to the same value
                field.display = name in used
        setup, errors = read_charging_form({n: f.input.value for n, f in fields.items()}, model, stimulus)
        for name, field in fields.items():
            field.flag(errors.get(name))
        self.submit(setup, errors, again)

    def _start(self, setup: ChargingSetup) -> None:
        self.solve(setup)

    def _clear(self, message: str) -> None:
        self._busy(False)
        self.report = None
        self.query_one("#charging-results", QuantityList).update(message)
        for plot in self.query(CurvePlot):
            plot.spec = None

    def _busy(self, busy: bool) -> None:
        """Say "computing…" if the result takes longer than :data:`SAY_AFTER`, and cover the plots
        if it takes longer than :data:`COVER_AFTER`. Most results come sooner: a word shown and
        taken away would only flicker and draw the list twice, and a cover put up and taken down
        lays the whole view out twice, which costs more than most results."""
        results = self.query_one("#charging-results", QuantityList)
        plots = self.query_one(".plots")
        for timer in self._slow_timers:
            timer.stop()
        self._slow_timers = ()
        self._waiting = busy
        if busy:
            def say() -> None:  # a timer stopped just after it fired still calls: check
                if self._waiting:
                    results.border_subtitle = "computing…"

            def cover() -> None:
                if self._waiting:
                    plots.loading = True

            self._slow_timers = (self.set_timer(SAY_AFTER, say), self.set_timer(COVER_AFTER, cover))
            return
        if results.border_subtitle:
            results.border_subtitle = ""
        if plots.loading:
            plots.loading = False

    @work(exclusive=True, thread=True, group="solve")
    def solve(self, setup: ChargingSetup) -> None:
        from ..errors import CableTheoryError
        from .format import charging_report

        worker = get_current_worker()
        try:
            report: Report | str = charging_report(setup)
        except CableTheoryError as exc:
            report = str(exc)
        if not worker.is_cancelled:
            self.app.call_from_thread(self._show, setup, report)

    def _show(self, setup: ChargingSetup, report: Report | str) -> None:
        if setup != self.wanted:
            return  # the form changed while the worker ran: a newer result is on its way
        self._busy(False)
        results = self.query_one("#charging-results", QuantityList)
        if isinstance(report, str):
            self.report = None
            results.update(report)
            return
        self.report = report
        results.show(report.results)
        self.query_one("#charging-time-plot", CurvePlot).spec = report.plots[0]
        self.query_one("#charging-space-plot", CurvePlot).spec = report.plots[1]
