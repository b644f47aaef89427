"""Quantities in, quantities out: the package's main results for scripts and notebooks.

The core takes and returns SI floats. This thin layer at the unit boundary takes what a person
types in a notebook: text (``"2 µm"``, ``"20 kΩ·cm²"``), pint quantities from any registry, or bare
numbers read in the field's customary unit exactly as on the command line (Rm Ω·cm², Ri Ω·cm,
Cm µF/cm², lengths µm, currents pA, voltages mV, times ms). It builds the case with the same
reader and rules as the command line and the terminal app (:func:`cabletheory.inputs.read_case`),
and returns results that show their units in a notebook (``_repr_html_``, ``_repr_markdown_``)
and turn into arrays or a table (``to_frame()``, a pandas DataFrame; pandas is an optional
install, ``pip install cabletheory[notebook]``).

    >>> from cabletheory import quantities as cq
    >>> dendrite = cq.case(membrane_resistivity="20 kΩ·cm²", axial_resistivity="200 Ω·cm",
    ...                    diameter="2 µm", length="500 µm", shape="alpha", current="100 pA",
    ...                    time_to_peak="0.5 ms", stimulus_at="250 µm")
    >>> course = cq.time_course(dendrite, times="0:20:0.5 ms", positions="0, 250, 500 µm")
    >>> course.to_frame()            # long table: time_s, position_m, voltage_V  # doctest: +SKIP

Every result assumes a passive, linear membrane with uniform Rm, Ri and Cm.
"""

from __future__ import annotations

import html
import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from . import PASSIVE_CAVEAT
from .case import FIELDS, Case
from .errors import InputError
from .inputs import read_case
from .transient import Response, charge
from .units import format_quantity, parse_quantity, parse_series
from .waveform import ResponseFeatures, response_features

__all__ = ["TimeCourse", "case", "time_course"]

Array = NDArray[np.float64]
DEFAULT_CAPACITANCE = "1 µF/cm²"  # as on the command line (common practice; Gentet, Stuart & Clements 2000)


def _text(value: Any, field: str) -> str:
    """One value as the text the unit boundary reads: text as it is, a pint quantity as magnitude and
    unit, a bare number as itself (read in the field's customary unit)."""
    if isinstance(value, str):
        return value
    if hasattr(value, "magnitude") and hasattr(value, "units"):
        magnitude = value.magnitude
        if np.ndim(magnitude) != 0:
            raise InputError(f"{field}: one quantity expected, not an array of {np.size(magnitude)}")
        return f"{float(magnitude)!r} {value.units}"
    if isinstance(value, bool) or not isinstance(value, int | float | np.number):
        raise InputError(f"{field}: {value!r} is not one number, a quantity with a unit or text such as '2 µm'")
    return repr(float(value))


def _series_text(values: Any, field: str) -> str:
    """A list of values (text such as '0:20:0.5 ms', a pint array quantity, or an iterable of values)."""
    if isinstance(values, str):
        return values
    if hasattr(values, "magnitude") and hasattr(values, "units"):
        return ", ".join(f"{float(m)!r} {values.units}" for m in np.ravel(values.magnitude))
    items = list(values) if isinstance(values, Iterable) else [values]
    if not items:
        raise InputError(f"{field}: an empty list of values")
    return ", ".join(_text(v, field) for v in items)


def case(**fields: Any) -> Case:
    """The validated :class:`~cabletheory.case.Case` of keyword fields with units.

    Keywords are the canonical field names (:data:`cabletheory.case.FIELDS`):
    ``membrane_resistivity``, ``axial_resistivity``, ``membrane_capacitance`` (default 1 µF/cm²),
    ``diameter``, ``length`` ('inf' for a semi-infinite cable), ``end`` ('sealed', 'killed' or a
    conductance), ``soma_diameter``, ``cell`` ('cylinder', 'ball-and-stick', 'infinite'), ``shape``
    ('step', 'pulse', 'alpha', 'clamp'), ``current``, ``voltage``, ``duration``, ``time_to_peak``,
    ``stimulus_at`` and ``positions`` (a list). Errors name the keyword, in one line.
    """
    unknown = sorted(set(fields) - set(FIELDS))
    if unknown:
        raise InputError(f"{unknown[0]}: not a field of a case; expected one of {', '.join(FIELDS)}")
    texts: dict[str, str | None] = {"membrane_capacitance": DEFAULT_CAPACITANCE}
    for name, value in fields.items():
        if value is None:
            texts[name] = None
        elif name == "positions":
            texts[name] = _series_text(value, name)
        elif FIELDS[name][0] in ("word", "end") and isinstance(value, str):
            texts[name] = value
        else:
            texts[name] = _text(value, name)
    return read_case(texts, lambda field: field)


def _quantity_cell(value: float, kind: str) -> str:
    return "—" if isinstance(value, float) and math.isnan(value) else format_quantity(value, kind)


@dataclass(frozen=True, slots=True)
class TimeCourse:
    """The exact voltage of a case on a grid of times × positions, with its units and error bound.

    ``times`` (s), ``positions`` (m), ``voltage`` (V, [time, position]) are SI arrays;
    :meth:`to_frame` gives the long table that ``cabletheory charge --csv`` writes, :meth:`features`
    the response features of :mod:`cabletheory.waveform`.
    """

    case: Case
    response: Response

    @property
    def times(self) -> Array:
        return self.response.times

    @property
    def positions(self) -> Array:
        return self.response.positions

    @property
    def voltage(self) -> Array:
        return self.response.voltage

    @property
    def error_bound(self) -> float:
        """V, bound on the error of every value."""
        return self.response.error_bound

    def arrays(self) -> dict[str, Array]:
        """``{"time_s", "position_m", "voltage_V"}`` as flat arrays, one entry per (time, position)."""
        t, x = np.meshgrid(self.times, self.positions, indexing="ij")
        return {"time_s": t.ravel(), "position_m": x.ravel(), "voltage_V": self.voltage.ravel()}

    def to_frame(self) -> Any:
        """A pandas DataFrame with the columns of ``charge --csv``: time_s, position_m, voltage_V."""
        try:
            import pandas as pd
        except ImportError:
            raise InputError("to_frame needs pandas: pip install 'cabletheory[notebook]' (or use arrays())") from None
        frame = pd.DataFrame(self.arrays())
        frame.attrs.update(case=self.case.describe(), method=self.response.method,
                           error_bound_V=self.error_bound, assumptions=PASSIVE_CAVEAT)
        return frame

    def features(self) -> tuple[ResponseFeatures, ...]:
        """Peak, time to peak, rise time, half-width and attenuation at each position (SI)."""
        return response_features(self.case, self.positions, tolerance=self.response.tolerance)

    # ---- display ---------------------------------------------------------------------------
    _SHOWN = 12  # rows of the time table shown in a notebook

    def _rows(self) -> tuple[list[str], list[list[str]]]:
        header = ["t"] + [f"V at {format_quantity(x, 'length') if x else '0'}" for x in self.positions]
        index = np.unique(np.linspace(0, self.times.size - 1, min(self._SHOWN, self.times.size)).astype(int))
        rows = [[format_quantity(self.times[i], "time") if self.times[i] else "0"]
                + [format_quantity(v, "voltage") for v in self.voltage[i]] for i in index]
        return header, rows

    def _repr_markdown_(self) -> str:
        header, rows = self._rows()
        lines = [f"**{self.case.describe()}**", "", "| " + " | ".join(header) + " |",
                 "|" + "---|" * len(header)]
        lines += ["| " + " | ".join(row) + " |" for row in rows]
        lines += ["", f"Every value within {format_quantity(self.error_bound, 'voltage')} of the exact solution "
                      f"({self.times.size} times × {self.positions.size} positions; {self.response.method}).",
                  "", f"*{PASSIVE_CAVEAT}*"]
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        header, rows = self._rows()
        e = html.escape
        head = "".join(f"<th>{e(h)}</th>" for h in header)
        body = "".join("<tr>" + "".join(f"<td>{e(c)}</td>" for c in row) + "</tr>" for row in rows)
        return (f"<p><b>{e(self.case.describe())}</b></p><table><thead><tr>{head}</tr></thead>"
                f"<tbody>{body}</tbody></table><p>Every value within {e(format_quantity(self.error_bound, 'voltage'))}"
                f" of the exact solution ({self.times.size} times × {self.positions.size} positions).</p>"
                f"<p><i>{e(PASSIVE_CAVEAT)}</i></p>")

    def __str__(self) -> str:
        return self._repr_markdown_()


def time_course(the_case: Case, times: Any, positions: Any = None, *, truncation: Any = 1e-10) -> TimeCourse:
    """The exact time course of a case (:func:`cabletheory.transient.charge`), inputs with units.

    Parameters
    ----------
    the_case : from :func:`case`
    times : after the onset: text ('0:20:0.5 ms', '0, 1, 5 ms'), a pint array quantity, or a list of
        values (bare numbers in ms)
    positions : where to record (same forms; bare numbers in µm); default the case's positions, else
        the stimulus site
    truncation : truncation error allowed, relative to the case's reference voltage (a number), or
        absolute (a voltage with its unit, as text or a quantity)
    """
    t = parse_series(_series_text(times, "times"), "time", "times", allow_negative=True)
    if positions is None:
        x = list(the_case.positions) or [the_case.stimulus.position]
    else:
        x = parse_series(_series_text(positions, "positions"), "length", "positions", allow_negative=True)
    try:
        the_case.check_positions(x)
    except InputError as exc:
        raise InputError(f"positions: {exc}") from None
    relative = _relative_truncation(truncation, the_case)
    return TimeCourse(the_case.with_positions(x), charge(the_case.cell, the_case.stimulus, t, x, tolerance=relative))


def _relative_truncation(truncation: Any, the_case: Case) -> float:
    if isinstance(truncation, int | float) and not isinstance(truncation, bool):
        value = float(truncation)
    else:
        volts = parse_quantity(_text(truncation, "truncation"), "voltage", "truncation")
        value = volts / the_case.reference_voltage if the_case.reference_voltage > 0 else math.nan
    if not 0 < value < 1:
        raise InputError(f"truncation: {truncation!r} must be a fraction in (0, 1) or a voltage with its unit")
    return min(value, 1e-2)


def as_table(mapping: Mapping[str, tuple[float, str]]) -> str:
    """Markdown table of ``name -> (SI value, SI unit)`` pairs (a case's parameters, say)."""
    rows = [f"| {name} | {value!r} | {unit} |" for name, (value, unit) in mapping.items()]
    return "\n".join(["| parameter | value | unit |", "|---|---|---|", *rows])
