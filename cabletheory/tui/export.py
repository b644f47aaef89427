"""Write a view's :class:`~cabletheory.tui.report.Report` to JSON, CSV, Markdown, PNG or SVG.

* JSON: ``{"view", "title", "inputs", "results", "tables", "notes", "assumptions"}``; every
  quantity is ``{"value": <SI number>, "unit": "<SI unit>"}`` as in the command line's JSON.
* CSV: one tidy table ``part,quantity,index,value,unit`` (SI); scalars have an empty index,
  table columns one line per point, so a spreadsheet or pandas can pivot it.
* Markdown: headed tables with the values as the screen shows them, and the caveat.
* PNG / SVG: the view's plot drawn by matplotlib (imported here, lazily).

Files are written atomically (:func:`cabletheory.output.write_atomically`), never over an
input file of the view.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError
from ..output import dump_json, write_atomically
from .report import PlotSpec, Report, Row, Table, cell_text, row_text, row_unit

__all__ = ["DATA_FORMATS", "PLOT_FORMATS", "export", "plot_bytes", "to_csv", "to_json", "to_markdown"]

# matplotlib's "tab10" colours, line styles and markers of the saved plots
COLOURS = ("#1f77b4", "#ff7f0e", "#2ca02c", "#d62728", "#9467bd", "#8c564b", "#e377c2", "#7f7f7f",
           "#bcbd22", "#17becf")
LINE_STYLES = ("-", "--", "-.", ":")
MARKERS = ("o", "s", "^", "D", "v")

DATA_FORMATS = {".json": "JSON", ".csv": "CSV", ".md": "Markdown", ".markdown": "Markdown"}
PLOT_FORMATS = {".png": "PNG", ".svg": "SVG"}


def _json_value(value: Any) -> Any:
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")
    return value


def _row_json(row: Row) -> Any:
    if row.value is None or isinstance(row.value, str) or (row.kind is None and row.unit is None):
        return _json_value(row.value)
    return {"value": _json_value(row.value), "unit": row_unit(row.kind, row.unit)}


def _table_json(table: Table) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for column in table.columns:
        values = [_json_value(v) for v in np.asarray(column.values).tolist()]
        if column.kind is None and column.unit is None:
            out[column.key] = values
        else:
            out[column.key] = {"value": values, "unit": row_unit(column.kind, column.unit)}
    return out


def to_json(report: Report) -> str:
    data = {
        "view": report.view,
        "title": report.title,
        "inputs": {row.key: _row_json(row) for row in report.inputs},
        "results": {row.key: _row_json(row) for row in report.results},
        "tables": {table.key: _table_json(table) for table in report.tables},
        "notes": list(report.notes),
        "assumptions": report.caveat,
    }
    return dump_json(data) + "\n"


def _csv_value(value: Any) -> str:
    value = _json_value(value)
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)
    return str(value)


def to_csv(report: Report) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["part", "quantity", "index", "value", "unit"])
    for part, rows in (("inputs", report.inputs), ("results", report.results)):
        for row in rows:
            writer.writerow([part, row.key, "", _csv_value(row.value), row_unit(row.kind, row.unit)])
    for table in report.tables:
        for column in table.columns:
            unit = row_unit(column.kind, column.unit)
            for index, value in enumerate(np.asarray(column.values).tolist()):
                writer.writerow([table.key, column.key, index, _csv_value(value), unit])
    return buffer.getvalue()


def _md_escape(text: str) -> str:
    return text.replace("|", "\\|")


def _md_table(header: Iterable[str], rows: Iterable[Iterable[str]]) -> list[str]:
    header = list(header)
    lines = ["| " + " | ".join(_md_escape(h) for h in header) + " |",
             "|" + "|".join("---" for _ in header) + "|"]
    lines += ["| " + " | ".join(_md_escape(c) for c in row) + " |" for row in rows]
    return lines


def to_markdown(report: Report, digits: int = 4) -> str:
    lines = [f"# {report.title}", "", f"> {report.caveat}", ""]
    for heading, rows in (("Inputs", report.inputs), ("Results", report.results)):
        if rows:
            lines += [f"## {heading}", ""]
            lines += _md_table(["quantity", "value"], [(r.label, row_text(r, digits)) for r in rows])
            lines.append("")
    if report.notes:
        lines += ["## Notes", ""] + [f"- {note}" for note in report.notes] + [""]
    for table in report.tables:
        lines += [f"## {table.title}", ""]
        cells = [[cell_text(_json_cell(v), c.kind, c.unit, digits) for v in np.asarray(c.values).tolist()]
                 for c in table.columns]
        lines += _md_table([c.label for c in table.columns], zip(*cells, strict=True))
        lines.append("")
    return "\n".join(lines)


def _json_cell(value: Any) -> Any:
    return value.item() if isinstance(value, np.generic) else value


def plot_bytes(specs: Sequence[PlotSpec], fmt: str, caveat: str = "") -> bytes:
    """The plots (one panel each, stacked) as PNG or SVG bytes, drawn by matplotlib's Agg backend.

    matplotlib's object interface is used (no pyplot), so nothing global changes.
    """
    from matplotlib.figure import Figure

    figure = Figure(figsize=(7.0, 1.0 + 3.4 * len(specs)), layout="constrained")
    for index, spec in enumerate(specs, start=1):
        axes = figure.add_subplot(len(specs), 1, index)
        for number, series in enumerate(spec.series):
            x, y = np.asarray(series.x, dtype=float), np.asarray(series.y, dtype=float)
            # colour, line style and marker all change from curve to curve: curves stay apart in
            # grey print, and no two of the first 40 look alike
            axes.plot(x, y, label=series.label, drawstyle="steps-post" if spec.steps else "default",
                      color=COLOURS[number % len(COLOURS)], linestyle=LINE_STYLES[number % len(LINE_STYLES)],
                      marker=MARKERS[number % len(MARKERS)], markevery=max(1, x.size // 8), markersize=4)
        if spec.y_span and not spec.y_log:
            low, high = axes.get_ylim()
            if high - low < spec.y_span:
                middle = 0.5 * (low + high)
                axes.set_ylim(middle - 0.5 * spec.y_span, middle + 0.5 * spec.y_span)
        if spec.y_log:
            axes.set_yscale("log")
        axes.set_title(spec.title)
        axes.set_xlabel(spec.x_label)
        axes.set_ylabel(spec.y_label)
        axes.grid(True, alpha=0.3)
        axes.legend()  # also for one curve: the file says which it is
    if caveat:
        figure.suptitle(caveat, fontsize=7, wrap=True)
    buffer = io.BytesIO()
    metadata = {"Date": None} if fmt == "svg" else {}
    figure.savefig(buffer, format=fmt, metadata=metadata)
    return buffer.getvalue()


def export(report: Report, path: str | Path, *, protected: Iterable[str | Path] = (), digits: int = 4) -> Path:
    """Write ``report`` to ``path``; the suffix picks the format (.json .csv .md .png .svg).

    Raises :class:`InputError` for an unknown suffix, a view without a plot asked for an
    image, or a path that cannot be written (one line, naming the path).
    """
    target = Path(str(path).strip()).expanduser()
    if not str(path).strip():
        raise InputError("export: empty file name; give a path ending in .json, .csv, .md, .png or .svg")
    suffix = target.suffix.lower()
    if suffix in DATA_FORMATS:
        text = {".json": to_json, ".csv": to_csv}.get(suffix, lambda r: to_markdown(r, digits))(report)
        return write_atomically(target, text, protected=protected)
    if suffix in PLOT_FORMATS:
        specs = [spec for spec in report.plots if spec.series]
        if not specs:
            raise InputError(f"export: the {report.view} view has no plot yet; nothing to draw")
        return write_atomically(target, plot_bytes(specs, suffix[1:], report.caveat), protected=protected)
    raise InputError(f"export: {str(path)!r} has no known suffix; use .json, .csv, .md, .png or .svg")
