"""The survey view: a survey table opened, one line per cell (errors shown), one column summarised."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.widgets import DataTable, Input, Label, Select, Static
from textual.worker import get_current_worker

from .fields import FieldSpec
from .keys import key_label
from .widgets import OneFileForm, QuantityField, QuantityList

if TYPE_CHECKING:  # pragma: no cover
    from .report import Report

PREFIX = "sv-"
TABLE_FIELD = FieldSpec("file", "survey table", "dimensionless", "",
                        placeholder="a table of 'cabletheory survey' (.csv, .parquet)")


class SurveyView(OneFileForm, Vertical):
    """The table's file and the column to summarise on the left; the summary and the cells on the right."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+l", "next_column", "summarise the next numeric column"),
        Binding("ctrl+r", "run", "read the table again"),
    ]

    report: Report | None = None
    file_prefix = PREFIX
    open_title = "Open a survey table (.csv or .parquet, as 'cabletheory survey' writes it)"

    def __init__(self, *, id: str, table: str | None = None) -> None:
        super().__init__(id=id)
        self.initial = table or ""
        self.rows: list[dict[str, Any]] = []
        self.description: list[str] = []
        self.path = ""
        self.asked = ""  # the text of the file field last read

    def compose(self) -> ComposeResult:
        from .survey_report import DEFAULT_COLUMN, NUMERIC

        with Horizontal(classes="columns"):
            with VerticalScroll(classes="form", id="survey-form", can_focus=False):
                yield Static("a survey of many cells", classes="form-title")
                yield QuantityField(TABLE_FIELD, prefix=PREFIX, value=self.initial)
                yield Label(f"column summarised  ({key_label('ctrl+l')} next)", classes="group-label")
                yield Select([(name, name) for name in NUMERIC], value=DEFAULT_COLUMN, allow_blank=False,
                             id=f"{PREFIX}column", compact=True)
                yield Static("The table is the CSV or Parquet that 'cabletheory survey' writes: one row per "
                             "morphology file. Rows of files that could not be analysed are listed in red with "
                             "their reason; the summary counts only the cells that have a value.",
                             classes="hint")
            with Vertical(classes="output"):
                yield QuantityList(id="survey-results", classes="results")
                yield DataTable(id="survey-cells", zebra_stripes=True, cursor_type="row")

    def on_mount(self) -> None:
        if self.initial:
            self.refresh_results()
        else:
            self.query_one("#survey-results", QuantityList).update(
                "Open a survey table: type its path in the field and press enter, or press ctrl+o.")

    def open_path(self, path: str) -> None:
        self.query_one(f"#{PREFIX}file", Input).value = path
        self.refresh_results()

    @property
    def column(self) -> str:
        return str(self.query_one(f"#{PREFIX}column", Select).value)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.refresh_results()

    def on_input_changed(self, event: Input.Changed) -> None:
        if event.value.strip() != self.asked:  # the message of the file being read stays
            self.query_one(f"#field-{PREFIX}file", QuantityField).flag(None)

    def on_select_changed(self, event: Select.Changed) -> None:
        event.stop()
        self._summarise()

    def action_next_column(self) -> None:
        from .survey_report import NUMERIC

        select = self.query_one(f"#{PREFIX}column", Select)
        select.value = NUMERIC[(NUMERIC.index(self.column) + 1) % len(NUMERIC)]

    def action_run(self) -> None:
        self.refresh_results()

    def refresh_results(self) -> None:
        text = self.query_one(f"#{PREFIX}file", Input).value.strip()
        field = self.query_one(f"#field-{PREFIX}file", QuantityField)
        if not text:
            field.flag("survey table: empty; give the path of a table 'cabletheory survey' wrote")
            return
        field.flag(None)
        self.asked = text
        self.query_one("#survey-results", QuantityList).border_subtitle = "reading…"
        self.read(str(Path(text).expanduser()))

    @work(exclusive=True, thread=True, group="read")
    def read(self, path: str) -> None:
        from ..errors import CableTheoryError
        from ..survey import read_table

        worker = get_current_worker()
        result: tuple[list[dict[str, Any]], list[str]] | str
        try:
            result = read_table(path)
        except CableTheoryError as exc:
            result = str(exc)
        except (OSError, UnicodeDecodeError) as exc:
            result = f"survey table {path!r}: cannot be read ({exc.__class__.__name__})"
        if not worker.is_cancelled:
            self.app.call_from_thread(self._show, path, result)

    def _show(self, path: str, result: tuple[list[dict[str, Any]], list[str]] | str) -> None:
        self.query_one("#survey-results", QuantityList).border_subtitle = ""
        table = self.query_one("#survey-cells", DataTable)
        if isinstance(result, str):
            self.query_one(f"#field-{PREFIX}file", QuantityField).flag(result)
            self.rows, self.description, self.path, self.report = [], [], "", None
            table.clear(columns=True)
            self.query_one("#survey-results", QuantityList).update(f"The table could not be read: {result}")
            self.app.set_status(result, error=True)  # type: ignore[attr-defined]
            return
        self.rows, self.description = result
        self.path = path
        self._list_cells()
        self._summarise()

    def _list_cells(self) -> None:
        from .survey_report import LISTED, listed_cell

        table = self.query_one("#survey-cells", DataTable)
        table.clear(columns=True)
        for _, title in LISTED:
            table.add_column(title)
        for number, row in enumerate(self.rows):
            bad = row.get("status") != "ok"
            style = "bold #ff6b6b" if bad else ""
            table.add_row(*(Text(listed_cell(row, name), style=style) for name, _ in LISTED), key=str(number))

    def _summarise(self) -> None:
        from .survey_report import survey_report

        if not self.path:
            return
        self.report = survey_report(self.path, self.rows, self.description, self.column)
        errors = sum(1 for r in self.rows if r.get("status") != "ok")
        notes = [f"{len(self.rows)} cells, {errors} with an error (listed in red below)"] if errors else []
        self.query_one("#survey-results", QuantityList).show(self.report.results, notes + self.description[:2])
