"""The survey view's data: a survey table read back, its cells listed, one column summarised.

A survey table (``cabletheory survey``'s CSV or Parquet, read by
:func:`cabletheory.survey.read_table`) has one row per morphology file, including the files that
could not be analysed (status ``error`` and the reason). Here the rows become the lines the view
lists and a :class:`Report` to save; :func:`summarise` gives the summary statistics of one
numeric column over the cells that have a value. No textual here: tested without an App.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..survey import COLUMNS
from ..survey import Column as SurveyColumn
from .report import Column, Report, Row, Table

__all__ = ["LISTED", "NUMERIC", "Summary", "listed_cell", "summarise", "survey_report"]

_BY_NAME = {c.name: c for c in COLUMNS}
# the table's SI units -> the quantity kinds the screen formats with prefixes
_KIND_OF_UNIT = {"m": "length", "m²": "area", "Ω": "resistance"}
# numeric columns a user may summarise, in the table's order
NUMERIC: tuple[str, ...] = tuple(c.name for c in COLUMNS if c.kind in ("int", "float"))
DEFAULT_COLUMN = "electrotonic_length"
# the columns listed on screen, one line per cell (every column is in the saved table)
# (the numbers first, so that a narrow screen shows them; the file and any error after them)
LISTED: tuple[tuple[str, str], ...] = (
    ("status", "status"), ("reducible", "reducible"), ("tips", "tips"), ("electrotonic_length", "L"),
    ("input_resistance_ohm", "R_N exact"), ("difference_percent", "reduction cost"), ("path", "file"),
    ("error", "error"),
)


def _kind(column: SurveyColumn) -> tuple[str | None, str | None]:
    """(quantity kind, unit) to format one column's values: prefixed SI for lengths, areas and
    resistances, the bare unit otherwise."""
    if column.unit in _KIND_OF_UNIT:
        return _KIND_OF_UNIT[column.unit], None
    if column.unit == "%":
        return None, "%"
    return None, None


def listed_cell(row: dict[str, Any], name: str) -> str:
    """The text of one listed cell: prefixed units, 'yes'/'no', '—' for no value."""
    from .report import cell_text

    value = row.get(name)
    if value is None or value == "":
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    kind, unit = _kind(_BY_NAME[name])
    if isinstance(value, str):
        return value
    return cell_text(value, kind, unit, 4)


@dataclass(frozen=True, slots=True)
class Summary:
    """Summary statistics of one numeric column over the cells that have a value (SI).

    ``count`` cells have a value; ``missing`` are analysed cells without one (e.g. ρ of a tree
    without a soma); ``errors`` are the rows of files that could not be analysed.
    """

    column: str
    count: int
    missing: int
    errors: int
    mean: float
    standard_deviation: float
    minimum: float
    lower_quartile: float
    median: float
    upper_quartile: float
    maximum: float


def summarise(rows: Sequence[dict[str, Any]], column: str) -> Summary:
    """Count, mean, sample standard deviation (n − 1), minimum, quartiles (numpy's linear
    interpolation, Hyndman & Fan 1996 definition 7 [CP]) and maximum of ``column``."""
    if column not in NUMERIC:
        raise ValueError(f"column {column!r} is not numeric")
    errors = sum(1 for r in rows if r.get("status") != "ok")
    values = np.array([float(r[column]) for r in rows if r.get("status") == "ok" and r.get(column) is not None
                       and math.isfinite(float(r[column]))], dtype=float)
    missing = len(rows) - errors - values.size
    if values.size == 0:
        nan = math.nan
        return Summary(column, 0, missing, errors, nan, nan, nan, nan, nan, nan, nan)
    q1, median, q3 = np.percentile(values, [25, 50, 75])
    sd = float(np.std(values, ddof=1)) if values.size > 1 else math.nan
    return Summary(column, int(values.size), missing, errors, float(values.mean()), sd, float(values.min()),
                   float(q1), float(median), float(q3), float(values.max()))


def survey_report(path: str, rows: Sequence[dict[str, Any]], description: Sequence[str], column: str) -> Report:
    """The table's description, the summary of ``column``, and every row (saved as a table)."""
    s = summarise(rows, column)
    spec = _BY_NAME[column]
    kind, unit = _kind(spec)
    if kind is None and unit is None and spec.unit == "1":
        kind = "dimensionless"
    inputs = (Row("table", "survey table", path), Row("cells", "cells", len(rows)),
              Row("errors", "rows with an error", s.errors, flag=s.errors > 0),
              Row("column", "column summarised", column))
    def stat(key: str, label: str, value: float) -> Row:
        return Row(key, label, None if math.isnan(value) else value, kind, unit)

    results = (
        Row("column", "column", f"{column}: {spec.meaning}"),
        Row("count", "cells with a value", s.count),
        Row("missing", "analysed cells without one", s.missing),
        stat("mean", "mean", s.mean),
        stat("standard_deviation", "standard deviation (n − 1)", s.standard_deviation),
        stat("minimum", "minimum", s.minimum),
        stat("lower_quartile", "lower quartile", s.lower_quartile),
        stat("median", "median", s.median),
        stat("upper_quartile", "upper quartile", s.upper_quartile),
        stat("maximum", "maximum", s.maximum),
    )
    columns = []
    for c in COLUMNS:
        values = [r.get(c.name) for r in rows]
        if c.kind == "bool":
            values = ["" if v is None else ("yes" if v else "no") for v in values]
        columns.append(Column(c.name, c.name, values, None, None if c.unit in ("", "1") else c.unit))
    table = Table("cells", "Every cell of the table", tuple(columns))
    return Report("survey", f"Survey table: {path}", inputs, results, (table,), (), tuple(description))
