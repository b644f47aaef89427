"""What a view shows, as plain data: rows of quantities, tables, a plot, notes.

Every view turns the core's result object into a :class:`Report` (see
:mod:`cabletheory.tui.format`); the widgets display it and :mod:`cabletheory.tui.export`
writes it to JSON, CSV, Markdown, PNG or SVG. Values are SI floats with a quantity kind
(a key of :data:`cabletheory.units.KINDS`), so the screen and the Markdown show them with
units and prefixes while JSON and CSV keep SI numbers with their SI unit.

No textual here: these are plain functions, tested without an App.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from .. import PASSIVE_CAVEAT
from ..units import KINDS, format_quantity, si_unit

__all__ = ["Column", "PlotSpec", "Report", "Row", "Series", "Table", "cell_text", "row_text", "row_unit"]


@dataclass(frozen=True, slots=True)
class Row:
    """One labelled quantity.

    ``kind`` is a key of ``units.KINDS`` (the value is then an SI float); with ``kind=None``
    the value is text, a bare number, or a number in the SI unit given by ``unit``.
    ``shown`` overrides the displayed text (e.g. "semi-infinite" for an infinite length).
    ``flag`` marks a row the screen should highlight (a failed check).
    """

    key: str
    label: str
    value: float | int | str | None
    kind: str | None = None
    unit: str | None = None
    shown: str | None = None
    flag: bool = False


@dataclass(frozen=True, slots=True, eq=False)
class Column:
    """One column of a :class:`Table`: SI values of one kind (or text when ``kind`` is None)."""

    key: str
    label: str
    values: Sequence[float] | Sequence[str] | np.ndarray
    kind: str | None = None
    unit: str | None = None


@dataclass(frozen=True, slots=True, eq=False)
class Table:
    key: str
    title: str
    columns: tuple[Column, ...]

    @property
    def length(self) -> int:
        return len(self.columns[0].values) if self.columns else 0


@dataclass(frozen=True, slots=True, eq=False)
class Series:
    """One curve, already in display units (the axis labels say which)."""

    label: str
    x: np.ndarray
    y: np.ndarray


@dataclass(frozen=True, slots=True, eq=False)
class PlotSpec:
    title: str
    x_label: str
    y_label: str
    series: tuple[Series, ...]
    y_log: bool = False
    steps: bool = False  # a step function: y[i] holds from x[i] to x[i + 1]
    y_span: float = 0.0  # the least y range drawn (display units), so that round-off stays flat


@dataclass(frozen=True, slots=True, eq=False)
class Report:
    """Inputs, results, tables, plot and notes of one view, in SI."""

    view: str
    title: str
    inputs: tuple[Row, ...]
    results: tuple[Row, ...]
    tables: tuple[Table, ...] = ()
    plots: tuple[PlotSpec, ...] = ()
    notes: tuple[str, ...] = ()
    caveat: str = field(default=PASSIVE_CAVEAT)


def _number(value: float, digits: int) -> str:
    if isinstance(value, bool):
        return str(value)
    if isinstance(value, int | np.integer):
        return str(int(value))
    if not math.isfinite(value):
        return "∞" if value > 0 else ("-∞" if value < 0 else "nan")
    return format_quantity(float(value), "dimensionless", digits)


def row_text(row: Row, digits: int = 4) -> str:
    """The value of ``row`` as people read it: ``'707.1 µm'``, ``'sealed'``, ``'—'``."""
    if row.shown is not None:
        return row.shown
    return cell_text(row.value, row.kind, row.unit, digits)


def cell_text(value: float | int | str | None, kind: str | None, unit: str | None = None,
              digits: int = 4) -> str:
    if value is None:
        return "—"
    if isinstance(value, str):
        return value
    if kind is not None:
        if value == 0 and kind in KINDS and KINDS[kind].display is None and KINDS[kind].si != "dimensionless":
            return f"0 {_pretty(KINDS[kind].customary)}"  # '0 µm', not '0 m'
        if not math.isfinite(float(value)):
            return "∞" if value > 0 else ("-∞" if value < 0 else "nan")
        text = format_quantity(float(value), kind, digits)
        return text.replace(" °", "°")
    text = _number(value, digits)
    return f"{text} {unit}" if unit else text


def _pretty(unit: str) -> str:
    """'um' -> 'µm', 'Mohm' -> 'MΩ' (customary units as people write them)."""
    text = unit.replace("ohm", "Ω").replace("**2", "²").replace("**3", "³")
    return "µ" + text[1:] if text.startswith("u") else text


def row_unit(kind: str | None, unit: str | None = None) -> str:
    """The SI unit written beside a value in JSON and CSV, as the command line writes it
    (:func:`cabletheory.output.quantity`: 'dimensionless' for a pure number; '' for text)."""
    if kind is not None:
        return si_unit(kind)
    return unit or ""
