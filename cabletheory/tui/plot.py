"""Curves drawn with braille dots, for plots inside the terminal.

A terminal cell holds a 2 × 4 grid of braille dots (Unicode U+2800 block), so a plot of
``w × h`` cells has ``2w × 4h`` dots. :func:`draw` returns the rows of text plus, for each
cell, which curve coloured it, so that a widget can colour the curves; everything here is
pure Python and numpy, tested without textual.

Line segments join successive points (Bresenham's line algorithm, 1965), so sparse data
still reads as a curve; non-finite points break the line.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .report import PlotSpec, Series

__all__ = ["Canvas", "Picture", "draw", "nice_ticks", "tick_label"]

# dot (column, row) inside a cell -> bit of the braille code point (Unicode 3.0, U+2800..U+28FF)
_BITS = ((0x01, 0x08), (0x02, 0x10), (0x04, 0x20), (0x40, 0x80))
_BLANK = 0x2800


@dataclass(frozen=True, slots=True)
class Picture:
    """A drawn plot: ``rows`` of text (axes, labels and curve cells) and, per row, the
    curve index that owns each character (-1 for axes, labels and blanks)."""

    rows: tuple[str, ...]
    owners: tuple[tuple[int, ...], ...]
    legend: tuple[str, ...]


# curve colours, in drawing order (chosen for contrast on a dark background); ten before a repeat,
# and each curve also has its own dash pattern, so a colour met again comes with another pattern
PALETTE = ("#f2b84b", "#5cc8d6", "#d77ac4", "#9bd36a", "#f07f5f", "#a7a7f0", "#e8e8e8", "#4fa3ff",
           "#c8a165", "#ff9ecf")
# dash patterns of the curves (1 = a dot drawn, 0 = a gap, along the line) and the legend swatch of each
DASHES = ((1,), (1, 1, 1, 1, 0, 0), (1, 0), (1, 1, 1, 1, 1, 1, 0, 0, 1, 0, 0, 0))
SWATCHES = ("━━━", "╺━╸", "┈┈┈", "━╸·")


def curve_style(index: int) -> tuple[str, str]:
    """The colour and the legend swatch of curve ``index`` (no two of the first 40 alike)."""
    return PALETTE[index % len(PALETTE)], SWATCHES[(index // len(PALETTE) + index) % len(DASHES)]


class Canvas:
    """A grid of braille cells onto which curves are drawn in data coordinates."""

    def __init__(self, width: int, height: int, x_range: tuple[float, float], y_range: tuple[float, float]):
        if width < 1 or height < 1:
            raise ValueError("canvas needs at least one cell")
        self.width, self.height = width, height
        self.x_range, self.y_range = x_range, y_range
        self.bits = [[0] * width for _ in range(height)]
        self.owner = [[-1] * width for _ in range(height)]

    def _dot(self, col: int, row: int, curve: int) -> None:
        if 0 <= col < 2 * self.width and 0 <= row < 4 * self.height:
            cell_row, cell_col = row // 4, col // 2
            self.bits[cell_row][cell_col] |= _BITS[row % 4][col % 2]
            self.owner[cell_row][cell_col] = curve

    def _to_dots(self, x: float, y: float) -> tuple[int, int]:
        (x0, x1), (y0, y1) = self.x_range, self.y_range
        fx = 0.5 if x1 == x0 else (x - x0) / (x1 - x0)
        fy = 0.5 if y1 == y0 else (y - y0) / (y1 - y0)
        col = round(fx * (2 * self.width - 1))
        row = round((1.0 - fy) * (4 * self.height - 1))
        return col, row

    def line(self, xs: Sequence[float], ys: Sequence[float], curve: int = 0) -> None:
        """Join the points (xs[i], ys[i]) with straight dot lines; NaN/inf break the line.

        Each curve has its own dash pattern (:data:`DASHES`), so that curves differ without colour.
        The points are mapped to dots at once; a point on the same dot as the one before it adds
        nothing to the line, so it is dropped before the dots are joined (a curve of thousands
        of samples on a plot of a hundred dot columns costs a hundred segments)."""
        pattern = DASHES[(curve // len(PALETTE) + curve) % len(DASHES)]
        cols, rows, finite = self._dots(xs, ys)
        # keep a point unless it repeats the dot of the finite point just before it
        repeat = np.zeros(finite.shape, dtype=bool)
        repeat[1:] = finite[1:] & finite[:-1] & (cols[1:] == cols[:-1]) & (rows[1:] == rows[:-1])
        drawn = 0
        previous: tuple[int, int] | None = None
        for col0, row0, ok in zip(cols[~repeat].tolist(), rows[~repeat].tolist(), finite[~repeat].tolist(),
                                  strict=True):
            if not ok:
                previous = None
                continue
            point = (col0, row0)
            for col, row in ([point] if previous is None else _segment(previous, point)[1:]):
                if pattern[drawn % len(pattern)]:
                    self._dot(col, row, curve)
                drawn += 1
            previous = point

    def _dots(self, xs: Sequence[float], ys: Sequence[float]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """:meth:`_to_dots` of every point at once (the same arithmetic and rounding, half to even)
        and which points are finite (the others get dot 0, 0)."""
        x, y = np.asarray(xs, dtype=float).ravel(), np.asarray(ys, dtype=float).ravel()
        if x.shape != y.shape:
            raise ValueError("xs and ys differ in length")
        finite = np.isfinite(x) & np.isfinite(y)
        x, y = np.where(finite, x, 0.0), np.where(finite, y, 0.0)
        (x0, x1), (y0, y1) = self.x_range, self.y_range
        fx = np.full(x.shape, 0.5) if x1 == x0 else (x - x0) / (x1 - x0)
        fy = np.full(y.shape, 0.5) if y1 == y0 else (y - y0) / (y1 - y0)
        cols = np.rint(fx * (2 * self.width - 1))
        rows = np.rint((1.0 - fy) * (4 * self.height - 1))
        # far outside the canvas nothing is drawn; clip so that the integers stay small
        limit = 1e6
        cols = np.where(finite, np.clip(cols, -limit, limit), 0.0).astype(np.int64)
        rows = np.where(finite, np.clip(rows, -limit, limit), 0.0).astype(np.int64)
        return cols, rows, finite

    def text_rows(self) -> list[str]:
        # an empty cell is a plain space: some terminal fonts draw U+2800 as a box
        return ["".join(chr(_BLANK + b) if b else " " for b in row) for row in self.bits]


def _segment(a: tuple[int, int], b: tuple[int, int]) -> list[tuple[int, int]]:
    """Integer points from a to b inclusive (Bresenham 1965, IBM Syst. J. 4:25)."""
    (x0, y0), (x1, y1) = a, b
    dx, dy = abs(x1 - x0), -abs(y1 - y0)
    sx, sy = (1 if x0 < x1 else -1), (1 if y0 < y1 else -1)
    err = dx + dy
    points = []
    while True:
        points.append((x0, y0))
        if x0 == x1 and y0 == y1:
            return points
        e2 = 2 * err
        if e2 >= dy:
            err += dy
            x0 += sx
        if e2 <= dx:
            err += dx
            y0 += sy


def nice_ticks(low: float, high: float, count: int = 5) -> list[float]:
    """About ``count`` round tick values (1, 2, 5 × 10^k steps) covering [low, high]."""
    if not (math.isfinite(low) and math.isfinite(high)):
        return []
    if high == low:
        return [low]
    raw = (high - low) / max(count - 1, 1)
    magnitude = 10.0 ** math.floor(math.log10(raw))
    step = next(m * magnitude for m in (1, 2, 2.5, 5, 10) if m * magnitude >= raw * 0.999)
    first = math.ceil(low / step - 1e-9) * step
    ticks = []
    value = first
    while value <= high + step * 1e-9:
        ticks.append(0.0 if abs(value) < step * 1e-9 else value)
        value += step
    return ticks


def tick_label(value: float) -> str:
    """Short tick text: '0', '0.25', '1.5e-05', '200'."""
    if value == 0:
        return "0"
    if 1e-3 <= abs(value) < 1e5:
        return np.format_float_positional(value, precision=3, unique=True, fractional=False, trim="-")
    text = f"{value:.3g}"
    return text.replace("e-0", "e-").replace("e+0", "e").replace("e+", "e")


def _finite_range(arrays: Sequence[np.ndarray], include_zero: bool, least_span: float = 0.0
                  ) -> tuple[float, float]:
    values = np.concatenate([np.asarray(a, dtype=float).ravel() for a in arrays]) if arrays else np.array([])
    values = values[np.isfinite(values)]
    if values.size == 0:
        return (0.0, 1.0)
    low, high = float(values.min()), float(values.max())
    if include_zero:
        low, high = min(low, 0.0), max(high, 0.0)
    if high - low < least_span:  # round-off is not magnified into a curve
        if include_zero and low >= 0.0:
            high = low + least_span
        elif include_zero and high <= 0.0:
            low = high - least_span
        else:
            middle = 0.5 * (low + high)
            low, high = middle - 0.5 * least_span, middle + 0.5 * least_span
    if low == high:
        pad = abs(low) * 0.1 or 1.0
        low, high = low - pad, high + pad
    return low, high


def draw(spec: PlotSpec, width: int, height: int) -> Picture:
    """Draw ``spec`` in a box of ``width × height`` terminal cells, axes and labels included.

    Layout: y tick labels on the left, the braille area, an x axis with tick labels, the
    x-axis label. The y axis label and the legend are returned separately (the widget
    shows them in its border and beneath). ``y_log`` plots log10 of |y|.
    """
    series = tuple(_as_steps(s) for s in spec.series) if spec.steps else spec.series
    ys = [_y_values(s.y, spec.y_log) for s in series]
    x_low, x_high = _finite_range([s.x for s in series], include_zero=False)
    y_low, y_high = _finite_range(ys, include_zero=not spec.y_log, least_span=0.0 if spec.y_log else spec.y_span)
    y_ticks = nice_ticks(y_low, y_high, max(3, min(6, (height - 2) // 2)))
    if y_ticks:
        y_low, y_high = min(y_low, y_ticks[0]), max(y_high, y_ticks[-1])
    y_labels = [(_log_label(t) if spec.y_log else tick_label(t)) for t in y_ticks]
    margin = max((len(label) for label in y_labels), default=1) + 1
    plot_w = max(4, width - margin - 1)
    plot_h = max(2, height - 2)
    canvas = Canvas(plot_w, plot_h, (x_low, x_high), (y_low, y_high))
    for index, (s, y) in enumerate(zip(series, ys, strict=True)):
        canvas.line(np.asarray(s.x, dtype=float), y, index)
    cells = canvas.text_rows()
    # which canvas row each y tick sits on
    tick_rows: dict[int, str] = {}
    for value, label in zip(y_ticks, y_labels, strict=True):
        fy = 0.5 if y_high == y_low else (value - y_low) / (y_high - y_low)
        tick_rows[round((1.0 - fy) * (plot_h - 1))] = label
    rows: list[str] = []
    owners: list[tuple[int, ...]] = []
    for r in range(plot_h):
        label = tick_rows.get(r, "")
        prefix = label.rjust(margin - 1) + ("┤" if label else "│")
        rows.append(prefix + cells[r])
        owners.append((-1,) * len(prefix) + tuple(canvas.owner[r]))
    axis, labels = _x_axis(x_low, x_high, plot_w)
    rows.append(" " * (margin - 1) + "└" + axis)
    rows.append(" " * margin + labels)
    for row in rows[plot_h:]:
        owners.append((-1,) * len(row))
    legend = tuple(s.label for s in series)
    return Picture(tuple(rows), tuple(owners), legend)


def _as_steps(series: Series) -> Series:
    """A step function (y[i] on x[i] ≤ X < x[i+1]) as the corners of its staircase."""
    x, y = np.asarray(series.x, dtype=float), np.asarray(series.y, dtype=float)
    if x.size < 2:
        return series
    xs = np.repeat(x, 2)[1:]
    ys = np.repeat(y, 2)[:-1]
    return Series(series.label, xs, ys)


def _y_values(y: np.ndarray, log: bool) -> np.ndarray:
    values = np.asarray(y, dtype=float)
    if not log:
        return values
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(np.abs(values) > 0, np.log10(np.abs(values)), np.nan)


def _log_label(exponent: float) -> str:
    return f"1e{round(exponent)}" if float(exponent).is_integer() else f"1e{exponent:.2g}"


def _x_axis(low: float, high: float, width: int) -> tuple[str, str]:
    ticks = nice_ticks(low, high, max(2, min(6, width // 10)))
    axis = ["─"] * width
    labels = [" "] * (width + 8)
    last_end = -2
    for value in ticks:
        f = 0.5 if high == low else (value - low) / (high - low)
        col = round(f * (width - 1))
        if not 0 <= col < width:
            continue
        axis[col] = "┬"
        text = tick_label(value)
        start = max(0, min(col - len(text) // 2, width + 8 - len(text)))
        if start <= last_end + 1:
            continue
        labels[start:start + len(text)] = list(text)
        last_end = start + len(text) - 1
    return "".join(axis), "".join(labels).rstrip()
