"""The cylinder view: one uniform cable, its constants, input resistance and V(X) profile."""

from __future__ import annotations

from typing import TYPE_CHECKING

from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.widgets import Input, Static

from .fields import CABLE_FIELDS
from .widgets import CurvePlot, QuantityField, QuantityList, shared_text, waiting_message

if TYPE_CHECKING:  # pragma: no cover
    from .report import Report

_FIELDS = {spec.name: spec for spec in CABLE_FIELDS}


class CylinderView(Vertical):
    """Inputs on the left (checked as you type), results and the profile plot on the right."""

    report: Report | None = None
    _last: tuple | None = None  # the inputs of the results on screen
    _ready = False  # inputs announce their first value when mounted; compute after the first frame

    def compose(self) -> ComposeResult:
        with Horizontal(classes="columns"):
            with VerticalScroll(classes="form", id="cylinder-form", can_focus=False):
                yield Static("uniform cylinder · input at X = 0", classes="form-title")
                for name in ("Rm", "Ri", "Cm", "diameter", "length", "end", "frequency"):
                    yield QuantityField(_FIELDS[name], value=shared_text(self, name))
                yield Static("bare numbers: Ω·cm², Ω·cm, µF/cm², µm, nS, Hz\nlength 'inf': semi-infinite\n"
                             "far end: sealed, killed or a conductance to rest\n"
                             "the cell is shared with the charging and check views", classes="hint")
            with Vertical(classes="output"):
                yield QuantityList(id="cylinder-results", classes="results")
                yield CurvePlot(id="cylinder-plot")

    def on_mount(self) -> None:
        # paint the form first; reading units the first time loads pint's registry (~0.2 s)
        self.query_one("#cylinder-results", QuantityList).update("computing…")
        self.call_after_refresh(self._start)

    def _start(self) -> None:
        self._ready = True
        self.refresh_results()

    def activate(self) -> None:
        """Called when the view is shown: catch up with a cell edited in another view."""
        if self._ready:
            self.refresh_results()

    def on_input_changed(self, event: Input.Changed) -> None:
        # not stopped: the app shares the cell's texts with the other views
        if self._ready:
            self.refresh_results()

    def refresh_results(self) -> None:
        """Read the form; flag bad fields at the field; show fresh results when all are good."""
        from ..errors import InputError
        from .format import cable_report, cable_summary
        from .forms import read_cylinder_form

        fields = {f.spec.name: f for f in self.query(QuantityField)}
        texts = {name: field.input.value for name, field in fields.items()}
        key = tuple(sorted(texts.items()))
        if key == self._last:
            return  # nothing changed (inputs announce their first value when mounted)
        self._last = key
        cylinder, frequency, errors = read_cylinder_form(texts)
        for name, field in fields.items():
            field.flag(errors.get(name))
        results = self.query_one("#cylinder-results", QuantityList)
        if cylinder is None:
            self.report = None
            results.update(waiting_message(errors))
            self.query_one(CurvePlot).spec = None
            return
        try:
            report = cable_report(cable_summary(cylinder, frequency))
        except InputError as exc:
            self.report = None
            results.update(str(exc))
            return
        self.report = report
        results.show(report.results)
        self.query_one(CurvePlot).spec = report.plots[0]
