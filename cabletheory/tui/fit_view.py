"""The fitting view: recorded sweeps in, passive parameters with 95 % intervals and the fit out."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

from textual import work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.widgets import Checkbox, Input, Label, RadioButton, RadioSet, Static
from textual.worker import get_current_worker

from .keys import key_label
from .widgets import ChoiceSet, CurvePlot, LatestRequest, QuantityField, QuantityList

if TYPE_CHECKING:  # pragma: no cover
    from .fit_report import FitSetup
    from .report import Report

PREFIX = "ft-"
# which field each file-picking dialog fills (ctrl+o fills the recordings, or the morphology when
# that field has the focus)
_FILE_FIELDS = ("file", "morphology")


class FitView(LatestRequest, Vertical):
    """Files, cell and window on the left; fitted values, statements and the two plots on the right.

    Nothing is fitted at each keystroke: a fit takes from a fraction of a second (a ball and stick)
    to many seconds (a large reconstructed cell), so it runs when asked (enter in a field, or
    ctrl+r) in a child process watched by a worker thread, and the form stays live meanwhile; a
    newer request stops the older one.
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+l", "next_model", "next cell"),
        Binding("ctrl+r", "run", "fit again"),
    ]

    request_group = "fit"
    report: Report | None = None
    wanted: FitSetup | None = None
    open_title = "Open recorded sweeps (CSV or tab-separated; a morphology when its field has the focus)"

    def __init__(self, *, id: str, file: str | None = None, morphology: str | None = None) -> None:
        super().__init__(id=id)
        self.initial = {"file": file or "", "morphology": morphology or ""}

    # -- files -------------------------------------------------------------------------------
    @property
    def _target(self) -> str:
        focused = self.app.focused
        return "morphology" if focused is not None and focused.id == f"{PREFIX}morphology" else "file"

    @property
    def open_folder(self) -> Path:
        return Path.cwd()

    @property
    def open_suggestion(self) -> str:
        return self.query_one(f"#{PREFIX}{self._target}", Input).value

    @property
    def input_files(self) -> tuple[str, ...]:
        from .fit_report import _paths

        return (*_paths(self.query_one(f"#{PREFIX}file", Input).value),
                self.query_one(f"#{PREFIX}morphology", Input).value)

    def open_path(self, path: str) -> None:
        target = self._target
        self.query_one(f"#{PREFIX}{target}", Input).value = path
        if target == "morphology":
            self.query_one(f"#{PREFIX}model-morphology", RadioButton).value = True
        self.refresh_results(again=True)

    # -- layout ------------------------------------------------------------------------------
    def compose(self) -> ComposeResult:
        from .fit_report import FIT_CHOICES, FIT_FIELDS

        specs = {spec.name: spec for spec in FIT_FIELDS}
        with Horizontal(classes="columns"):
            with VerticalScroll(classes="form", id="fit-form", can_focus=False):
                yield Static("passive parameters from a recording", classes="form-title")
                for name in ("file", "current", "onset", "duration"):
                    yield QuantityField(specs[name], prefix=PREFIX, value=self.initial.get(name))
                yield Label(f"cell fitted  ({key_label('ctrl+l')} cycles)", classes="group-label")
                yield ChoiceSet(FIT_CHOICES, "morphology" if self.initial["morphology"] else "ball-and-stick",
                                id=f"{PREFIX}model")
                yield QuantityField(specs["morphology"], prefix=PREFIX, value=self.initial["morphology"])
                yield Checkbox("also fit a soma shunt (electrode leak)", id=f"{PREFIX}shunt", compact=True)
                for name in ("assumed_Cm", "assumed_Ri"):
                    yield QuantityField(specs[name], prefix=PREFIX)
                yield Label("window and baseline", classes="group-label")
                for name in ("fit_from", "fit_until", "rest"):
                    yield QuantityField(specs[name], prefix=PREFIX)
                yield Label("units the file leaves out", classes="group-label")
                for name in ("time_unit", "voltage_unit"):
                    yield QuantityField(specs[name], prefix=PREFIX)
                yield Static(f"enter in a field or {key_label('ctrl+r')} fits; the fit runs in the background.\n"
                             "Sweeps: a 'time (ms)' column and one voltage column per sweep (docs/fit.md).\n"
                             "Blank fields are found from the data or left out.", classes="hint")
            with Vertical(classes="output"):
                yield QuantityList(id="fit-results", classes="results")
                with Horizontal(classes="plots"):
                    yield CurvePlot(id="fit-plot")
                    yield CurvePlot(id="fit-residual-plot")

    def on_mount(self) -> None:
        self._show_fields()
        if self.initial["file"]:
            self.refresh_results(again=True)
        else:
            self.query_one("#fit-results", QuantityList).update(
                "Open a recording: type the path of its sweeps in the recordings field and press enter, or "
                "press ctrl+o. With a morphology file, the reconstructed cell's Rm, Ri and Cm are fitted.")

    @property
    def model_choice(self) -> str:
        return self.query_one(f"#{PREFIX}model", ChoiceSet).choice

    def _show_fields(self) -> set[str]:
        from .fit_report import fit_fields_used

        used = fit_fields_used(self.model_choice)
        for field in self.query(QuantityField):
            field.display = field.spec.name in used
        self.query_one(f"#{PREFIX}shunt", Checkbox).display = self.model_choice == "morphology"
        return used

    # -- events --------------------------------------------------------------------------------
    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.refresh_results(again=True)

    def on_input_changed(self, event: Input.Changed) -> None:
        # a typed text is checked at once (its field flagged or echoed); the fit waits for enter
        name = (event.input.id or "").removeprefix(PREFIX)
        asked = {"file": ";".join(str(p) for p in self.wanted.paths) if self.wanted else None,
                 "morphology": str(self.wanted.morphology) if self.wanted and self.wanted.morphology else None}
        if name in asked and event.value.strip() == asked[name]:
            return  # the text of the file being read: its message (if any) stays
        for field in self.query(QuantityField):
            if field.spec.name == name:
                field.flag(None)

    def on_radio_set_changed(self, event: RadioSet.Changed) -> None:
        event.stop()
        self._show_fields()

    def action_next_model(self) -> None:
        self.query_one(f"#{PREFIX}model", ChoiceSet).cycle()

    def action_run(self) -> None:
        self.refresh_results(again=True)

    # -- fitting -------------------------------------------------------------------------------
    def refresh_results(self, again: bool = False) -> None:
        from .fit_report import read_fit_form

        used = self._show_fields()
        fields = {f.spec.name: f for f in self.query(QuantityField) if f.spec.name in used}
        setup, errors = read_fit_form({n: f.input.value for n, f in fields.items()}, self.model_choice,
                                      self.query_one(f"#{PREFIX}shunt", Checkbox).value)
        for name, field in fields.items():
            field.flag(errors.get(name))
        self.submit(setup, errors, again)

    def _start(self, setup: FitSetup) -> None:
        self.fit(setup)

    def _clear(self, message: str) -> None:
        self._busy(False)
        self.report = None
        self.query_one("#fit-results", QuantityList).update(message)
        for plot in self.query(CurvePlot):
            plot.spec = None

    def _busy(self, busy: bool) -> None:
        self.query_one("#fit-results", QuantityList).border_subtitle = "fitting…" if busy else ""
        self.query_one(".plots").loading = busy

    @work(exclusive=True, thread=True, group="fit")
    def fit(self, setup: FitSetup) -> None:
        """Fit in a child process (see :func:`~cabletheory.tui.fit_report.fit_in_child`); this thread
        only waits for it, and stops it when a newer request cancels the worker."""
        import multiprocessing
        import sys
        from contextlib import suppress
        from multiprocessing import resource_tracker

        from .fit_report import fit_in_child

        worker = get_current_worker()
        # the helper process that multiprocessing starts once hands on the file number of stderr, which
        # the app has swapped for its own (with none): it is started with the process's own stderr
        swapped, sys.stderr = sys.stderr, sys.__stderr__
        try:
            resource_tracker.ensure_running()
        finally:
            sys.stderr = swapped
        context = multiprocessing.get_context("spawn")  # no fork of a process that runs threads
        receiver, sender = context.Pipe(duplex=False)
        child = context.Process(target=fit_in_child, args=(setup, sender), daemon=True)
        child.start()
        sender.close()
        outcome: tuple[str, object, str] = ("error", "", "the fit stopped without an answer")
        try:
            while not worker.is_cancelled:
                if receiver.poll(0.05):
                    with suppress(EOFError):  # the child died while sending
                        outcome = receiver.recv()
                    break
                if not child.is_alive() and not receiver.poll(0):
                    break
        finally:
            if child.is_alive():
                child.terminate()
            child.join()
            receiver.close()
        if not worker.is_cancelled:
            self.app.call_from_thread(self._show, setup, outcome)

    def _show(self, setup: FitSetup, outcome: tuple[str, object, str]) -> None:
        if setup != self.wanted:
            return  # the form changed while the worker ran: a newer result is on its way
        self._busy(False)
        kind, payload, message = outcome
        if kind == "file":
            self.query_one(f"#field-{PREFIX}{payload}", QuantityField).flag(message)
            self._clear(f"The {'morphology' if payload == 'morphology' else 'recording'} could not be read: "
                        f"{message}")
            self.app.set_status(message, error=True)  # type: ignore[attr-defined]
            return
        if kind != "report":
            self._clear(f"No fit: {message}")
            self.app.set_status(message, error=True)  # type: ignore[attr-defined]
            return
        report: Report = payload  # type: ignore[assignment]
        self.report = report
        self.query_one("#fit-results", QuantityList).show(report.results, report.notes)
        self.query_one("#fit-plot", CurvePlot).spec = report.plots[0]
        self.query_one("#fit-residual-plot", CurvePlot).spec = report.plots[1]
