r"""Read a simulator's recorded output (CSV) into SI arrays, checked line by line.

:func:`read_recording` reads the *long* layout (one row per sample: time, position, voltage) or
the *wide* layout (one row per time, one column per recording site); :func:`run_spacings` reads
each run's Δx and Δt from its ``# dx = ...`` / ``# dt = ...`` lines. Units are resolved by a
caller-supplied parser (:data:`QuantityParser`) so that this module never imports pint.

Every exact answer assumes a passive, linear membrane with uniform properties; so does every
verdict. A simulator with active conductances is outside what this package can check.
"""

from __future__ import annotations

import csv
import math
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..errors import FileFormatError, InputError

__all__ = [
    "QuantityParser",
    "Recording",
    "SiteReader",
    "Sweeps",
    "read_recording",
    "read_sweeps",
    "run_spacings",
]

Array = NDArray[np.float64]
# (text, kind, where) -> SI value; kind is a key of units.KINDS ("time", "length", "voltage").
# The command line passes a function built on units.parse_quantity; ``where`` names file,
# line and column so that its error messages do too.
QuantityParser = Callable[[str, str, str], float]
# (text, where) -> the number standing for a site that is not a distance (a tree point); see
# read_recording's ``read_site``
SiteReader = Callable[[str, str], float]


# ======================================================================================
# reading a simulator's output
# ======================================================================================
_TIME_NAMES = {"time", "t"}
_POSITION_NAMES = {"position", "distance", "x", "site", "location", "point"}
_VOLTAGE_NAMES = {"voltage", "v", "vm", "v_m", "membrane potential", "potential"}
_CELL = re.compile(r"^\s*(?P<name>.*?)\s*(?:[\(\[]\s*(?P<unit>[^\)\]]*?)\s*[\)\]])?\s*$")
_SITE = re.compile(r"^(?:(?:v|vm|voltage)\s*(?:at|@)\s*|(?:x|site)\s*=\s*|@\s*)?"
                   r"(?P<pos>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?\s*[A-Za-zµμ]*)$", re.IGNORECASE)
_UNIT_SUFFIXES = {"s", "ms", "us", "µs", "m", "mm", "um", "µm", "V", "mV", "uV", "µV"}  # in 'time_s' and alike
_META = re.compile(r"^#\s*(?P<key>[^=:]+?)\s*[=:]\s*(?P<value>.*?)\s*$")


@dataclass(frozen=True, slots=True)
class Recording:
    """A simulator's recorded voltages, one entry per sample, in SI.

    Attributes
    ----------
    name : the file name (used in messages)
    layout : "long" or "wide"
    times : s since the stimulus onset (file time minus ``time_offset``)
    positions : m, distance of the recording site from the origin
    voltage : V, deviation from rest (file voltage minus ``resting_potential``)
    lines, columns : file line (1-based) and column (1-based) of each voltage sample
    units : unit used for "time", "position", "voltage" (as text), for the report
    assumed : which of those units were not declared and were taken as customary (ms, µm, mV)
    metadata : ``# key = value`` comment lines of the file (e.g. ``dt``, ``dx``, ``scheme``)
    resting_potential : V subtracted from every voltage
    time_offset : s subtracted from every time
    """

    name: str
    layout: str
    times: Array
    positions: Array
    voltage: Array
    lines: NDArray[np.int64]
    columns: NDArray[np.int64]
    units: Mapping[str, str]
    assumed: tuple[str, ...]
    metadata: Mapping[str, str]
    resting_potential: float = 0.0
    time_offset: float = 0.0

    @property
    def sites(self) -> Array:
        """Distinct recording positions, m, ascending."""
        return np.unique(self.positions)


_CUSTOMARY = {"time": "ms", "length": "um", "voltage": "mV"}


def _cells(raw: str, name: str, line: int, delimiter: str = ",") -> list[str]:
    """The cells of one CSV (or tab-separated) line; a line the csv module cannot split is a one-line error."""
    try:
        return next(csv.reader([raw], delimiter=delimiter))
    except csv.Error as exc:
        limit = csv.field_size_limit()
        if "field limit" in str(exc):
            raise FileFormatError(f"{name}:{line}: a cell is longer than {limit} characters; expected "
                                  "numbers") from None
        raise FileFormatError(f"{name}:{line}: cannot split the line into cells ({exc})") from None
    except StopIteration:  # pragma: no cover - a non-empty line always gives a row
        return []


def _where(name: str, line: int, column: int, cell: str) -> str:
    return f"{name}:{line}:{column} ({cell.strip()!r})"


def _unit_factor(parse: QuantityParser, declared: str | None, option: str | None, kind: str,
                 where: str, option_name: str) -> tuple[float, str, bool]:
    """SI factor of a column's unit, from the header and/or an option; (factor, unit, assumed)."""
    if declared:
        factor = parse(f"1 {declared}", kind, where)
        if option:
            other = parse(f"1 {option}", kind, option_name)
            if not math.isclose(factor, other, rel_tol=1e-12):
                raise FileFormatError(f"{where}: the header declares {declared!r} but {option_name} says "
                                      f"{option!r}; remove one or make them agree")
        return factor, declared, False
    if option:
        return parse(f"1 {option}", kind, option_name), option, False
    unit = _CUSTOMARY[kind]
    return parse(f"1 {unit}", kind, where), unit, True


def _table(text: str, name: str) -> tuple[list[str], int, list[tuple[int, list[str]]], dict[str, str]]:
    """(header cells, header line, [(line, cells)], ``# key = value`` metadata) of a CSV or
    tab-separated table; the separator is a tab when the header line has a tab and no comma."""
    rows: list[tuple[int, list[str]]] = []
    metadata: dict[str, str] = {}
    header: list[str] | None = None
    header_line = 0
    delimiter = ","
    for number, raw in enumerate(text.splitlines(), start=1):
        stripped = raw.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            m = _META.match(stripped)
            if m:
                metadata[m.group("key").strip().lower()] = m.group("value")
            continue
        if header is None and "\t" in raw and "," not in raw:
            delimiter = "\t"
        cells = _cells(raw, name, number, delimiter)
        if header is None:
            header, header_line = cells, number
        else:
            rows.append((number, cells))
    if header is None:
        raise FileFormatError(f"{name}: empty file; expected a header such as "
                              "'time (ms),position (um),voltage (mV)'")
    if not rows:
        raise FileFormatError(f"{name}:{header_line}: header but no data rows")
    return header, header_line, rows, metadata


def _number(name: str, header: list[str], line: int, cells: list[str], col: int) -> float:
    """The finite number in column ``col`` of a data row, or a FileFormatError naming file:line:column."""
    if col >= len(cells) or not cells[col].strip():
        raise FileFormatError(f"{_where(name, line, col + 1, header[col])}: missing value")
    cell = cells[col].strip()
    try:
        value = float(cell)
    except ValueError:
        raise FileFormatError(f"{_where(name, line, col + 1, header[col])}: cannot read {cell!r} "
                              "as a number") from None
    if not math.isfinite(value):
        raise FileFormatError(f"{_where(name, line, col + 1, header[col])}: {cell!r} is not a finite "
                              "number; remove or fill the row")
    return value


def _twins(positions: Sequence[float], columns: Sequence[int]) -> tuple[int, int]:
    """The first two columns (0-based) that record the same position."""
    seen: dict[float, int] = {}
    for position, column in zip(positions, columns, strict=True):
        if position in seen:
            return seen[position], column
        seen[position] = column
    raise InputError("no two columns share a position")  # pragma: no cover - called only when two do


def _read_named_site(read_site: SiteReader, text: str, where: str) -> float:
    """A wide column's site by ``read_site``, its refusal as a FileFormatError at ``where``."""
    try:
        return float(read_site(text.strip(), where))
    except InputError as exc:
        raise FileFormatError(f"{where}: {exc}") from None


def _site_cell(read_site: SiteReader, name: str, header: list[str], line: int, cells: list[str], col: int) -> float:
    """A long row's site by ``read_site`` (file, line and column named in a refusal)."""
    if col >= len(cells) or not cells[col].strip():
        raise FileFormatError(f"{_where(name, line, col + 1, header[col])}: missing value")
    return _read_named_site(read_site, cells[col], _where(name, line, col + 1, cells[col]))


def _all_numbers(cells: Sequence[str]) -> bool:
    try:
        for cell in cells:
            float(cell)
    except ValueError:
        return False
    return bool(cells)


def read_recording(text: str, name: str, parse: QuantityParser, *, time_unit: str | None = None,
                   position_unit: str | None = None, voltage_unit: str | None = None,
                   resting_potential: float | str = 0.0, time_offset: float = 0.0,
                   site: float | Mapping[str, float] | None = None,
                   allow_negative_positions: bool = False,
                   read_site: SiteReader | None = None) -> Recording:
    """Read a simulator's CSV (or tab-separated) output (long or wide layout, see docs/verify.md).

    Besides headers of the form ``time (ms)``, a column may be named with an SI unit after an
    underscore as the package writes them (``time_s``, ``position_m``, ``voltage_V``: the long
    rows of ``charge --csv``), and a file may have no header at all: two columns are read as time
    and voltage (the site given by ``site``), three as time, position and voltage, in the units of
    the options or the customary ms, µm and mV (reported as assumed).

    Parameters
    ----------
    text : the file's content
    name : file name for messages
    parse : ``(text, kind, where) -> SI value`` (the command line uses units.parse_quantity)
    time_unit, position_unit, voltage_unit : units for columns whose header declares none
        (a header unit that contradicts the option is an error)
    resting_potential : V to subtract from every voltage, or ``"first"`` to subtract, at each
        site, the value recorded at its first time (which must be at or before the onset)
    time_offset : s to subtract from every time (the stimulus onset in the file's clock)
    site : position (m) of the only site when a wide table has a single voltage column named
        like "voltage (mV)" rather than by its position; or a mapping from column names (as in the
        header, any case) to positions (m), for wide tables whose columns are named freely
        (``t, v_soma, v_tip``)
    allow_negative_positions : accept positions below 0 (an infinite cable, recorded on both
        sides of its input); otherwise a negative position is an error
    read_site : for sites that are not distances along one cable (the points of a tree): reads
        the text of a long table's position cell, or a wide table's column name (as written,
        without its bracketed unit), into the number that stands for the site (``positions``
        then hold those numbers, ``units["position"]`` is "point"); it raises
        :class:`~cabletheory.errors.InputError` naming what is wrong, and the reader adds the
        file, line and column

    Raises
    ------
    FileFormatError : naming the file, line and column of the first problem
    """
    header, header_line, rows, metadata = _table(text, name)
    if _all_numbers(header):  # no header: the first line is data
        rows.insert(0, (header_line, header))
        if len(header) not in (2, 3):
            raise FileFormatError(f"{name}:{header_line}: no header and {len(header)} columns; a file "
                                  "without a header has 2 columns (time, voltage) or 3 (time, position, voltage)")
        header = ["time", "voltage"] if len(header) == 2 else ["time", "position", "voltage"]

    parsed = [_CELL.match(cell) for cell in header]
    names = [(m.group("name") if m else cell).strip().lower() for m, cell in zip(parsed, header, strict=True)]
    units = [(m.group("unit") or None) if m else None for m in parsed]
    given_names = list(names)  # as written (lower case, without a bracketed unit): what --column-at maps
    for i, label in enumerate(names):  # 'time_s', 'position_m', 'voltage_V': an SI unit after an underscore
        stem, _, suffix = header[i].strip().rpartition("_")
        if units[i] is None and label not in _TIME_NAMES | _POSITION_NAMES | _VOLTAGE_NAMES and (
                suffix in _UNIT_SUFFIXES and stem.lower() in _TIME_NAMES | _POSITION_NAMES | _VOLTAGE_NAMES):
            names[i] = stem.lower()
            units[i] = suffix
    time_cols = [i for i, n in enumerate(names) if n in _TIME_NAMES]
    pos_cols = [i for i, n in enumerate(names) if n in _POSITION_NAMES]
    volt_cols = [i for i, n in enumerate(names) if n in _VOLTAGE_NAMES]
    if len(time_cols) != 1:
        what = "no time column" if not time_cols else "more than one time column"
        raise FileFormatError(f"{name}:{header_line}: {what}; expected a column named 'time' "
                              "with its unit, e.g. 'time (ms)'")
    tc = time_cols[0]
    t_factor, t_unit, t_assumed = _unit_factor(parse, units[tc], time_unit, "time",
                                               _where(name, header_line, tc + 1, header[tc]), "--time-unit")
    assumed = ["time"] if t_assumed else []

    def number_at(line: int, cells: list[str], col: int) -> float:
        return _number(name, header, line, cells, col)

    for line, cells in rows:
        if len(cells) != len(header) and not (len(cells) > len(header) and not any(c.strip() for c in
                                                                                  cells[len(header):])):
            raise FileFormatError(f"{name}:{line}: {len(cells)} columns, but the header "
                                  f"(line {header_line}) has {len(header)}")

    if pos_cols:  # ---------------- long layout
        if len(pos_cols) != 1 or len(volt_cols) != 1:
            raise FileFormatError(f"{name}:{header_line}: a long table needs exactly one position "
                                  "and one voltage column, e.g. 'time (ms),position (um),voltage (mV)'")
        pc, vc = pos_cols[0], volt_cols[0]
        if read_site is None:
            x_factor, x_unit, x_assumed = _unit_factor(parse, units[pc], position_unit, "length",
                                                       _where(name, header_line, pc + 1, header[pc]),
                                                       "--position-unit")
        else:
            x_factor, x_unit, x_assumed = 1.0, "point", False
        v_factor, v_unit, v_assumed = _unit_factor(parse, units[vc], voltage_unit, "voltage",
                                                   _where(name, header_line, vc + 1, header[vc]),
                                                   "--voltage-unit")
        assumed += [k for k, a in (("position", x_assumed), ("voltage", v_assumed)) if a]
        t = np.array([number_at(ln, c, tc) for ln, c in rows]) * t_factor
        if read_site is None:
            x = np.array([number_at(ln, c, pc) for ln, c in rows]) * x_factor
        else:
            x = np.array([_site_cell(read_site, name, header, ln, c, pc) for ln, c in rows])
        v = np.array([number_at(ln, c, vc) for ln, c in rows]) * v_factor
        lines = np.array([ln for ln, _ in rows], dtype=np.int64)
        columns = np.full(lines.size, vc + 1, dtype=np.int64)
        layout = "long"
        if np.any(x < 0) and not allow_negative_positions:
            k = int(np.argmax(x < 0))
            raise FileFormatError(f"{_where(name, int(lines[k]), pc + 1, header[pc])}: negative position")
        # time must increase at each site, in file order
        last: dict[float, tuple[float, int]] = {}
        for k in range(t.size):
            previous = last.get(float(x[k]))
            if previous is not None and not t[k] > previous[0]:
                raise FileFormatError(f"{_where(name, int(lines[k]), tc + 1, header[tc])}: time does not "
                                      f"increase at this site (line {previous[1]} has an equal or later time)")
            last[float(x[k])] = (float(t[k]), int(lines[k]))
        units_used = {"time": t_unit, "position": x_unit, "voltage": v_unit}
    else:  # ------------------------ wide layout
        site_cols = [i for i in range(len(header)) if i != tc]
        if not site_cols:
            raise FileFormatError(f"{name}:{header_line}: no voltage columns; expected a long table "
                                  "'time, position, voltage' or a wide one 'time (ms),V at 0 um (mV),...'")
        positions: list[float] = []
        v_factors: list[float] = []
        v_unit_seen: str | None = None
        x_unit = "point" if read_site is not None else position_unit or _CUSTOMARY["length"]
        x_assumed = v_assumed = False
        for col in site_cols:
            where = _where(name, header_line, col + 1, header[col])
            label = names[col]
            mapped = site.get(given_names[col]) if isinstance(site, Mapping) else None
            if mapped is not None:
                position = float(mapped)
            elif read_site is not None and not (label in _VOLTAGE_NAMES and site is not None
                                                and not isinstance(site, Mapping)):
                match = parsed[col]
                position = _read_named_site(read_site, match.group("name") if match else header[col], where)
            elif label in _VOLTAGE_NAMES and not isinstance(site, Mapping):
                if site is None or len(site_cols) != 1:
                    raise FileFormatError(f"{where}: column does not say where it was recorded; name it by "
                                          "its position ('V at 250 um (mV)') or give --column-at")
                position = float(site)
            else:
                m = _SITE.match(label)
                if not m:
                    raise FileFormatError(f"{where}: not a recording site; expected a position such as "
                                          "'V at 250 um (mV)' or '250 um', or map the name to a position with "
                                          f"--column-at '{header[col].strip()}=250 um'")
                pos_text = m.group("pos").strip()
                if re.search(r"[A-Za-zµμ]", pos_text):
                    position = parse(pos_text, "length", where)
                    if position_unit:
                        # an option cannot override a unit written beside the position
                        _unit_factor(parse, re.sub(r"^[+-]?[\d.eE+-]+\s*", "", pos_text), position_unit,
                                     "length", where, "--position-unit")
                else:
                    x_assumed = x_assumed or position_unit is None
                    position = float(pos_text) * parse(f"1 {x_unit}", "length", where)
            if position < 0 and not allow_negative_positions:
                raise FileFormatError(f"{where}: negative position")
            factor, v_unit_seen, assumed_here = _unit_factor(parse, units[col], voltage_unit, "voltage", where,
                                                             "--voltage-unit")
            v_assumed = v_assumed or assumed_here
            positions.append(position)
            v_factors.append(factor)
        if isinstance(site, Mapping):
            unknown = sorted(set(site) - {given_names[col] for col in site_cols})
            if unknown:
                listed = ", ".join(header[c].strip() for c in site_cols)
                raise FileFormatError(f"{name}:{header_line}: no voltage column named {unknown[0]!r} "
                                      f"(--column-at); the columns are {listed}")
        if len(set(positions)) != len(positions):
            what = "point" if read_site is not None else "position"
            first, second = _twins(positions, site_cols)
            raise FileFormatError(f"{name}:{header_line}: columns {first + 1} ({header[first].strip()!r}) "
                                  f"and {second + 1} ({header[second].strip()!r}) record the same {what}")
        assumed += [k for k, a in (("position", x_assumed), ("voltage", v_assumed)) if a]
        times = np.array([number_at(ln, c, tc) for ln, c in rows]) * t_factor
        bad = np.flatnonzero(np.diff(times) <= 0)
        if bad.size:
            k = int(bad[0]) + 1
            raise FileFormatError(f"{_where(name, rows[k][0], tc + 1, header[tc])}: time does not increase "
                                  f"(line {rows[k - 1][0]} has an equal or later time)")
        values = np.array([[number_at(ln, c, col) for col in site_cols] for ln, c in rows])
        values *= np.array(v_factors)
        t = np.repeat(times, len(site_cols))
        x = np.tile(np.array(positions), times.size)
        v = values.ravel()
        lines = np.repeat(np.array([ln for ln, _ in rows], dtype=np.int64), len(site_cols))
        columns = np.tile(np.array(site_cols, dtype=np.int64) + 1, times.size)
        layout = "wide"
        units_used = {"time": t_unit, "position": x_unit, "voltage": v_unit_seen or _CUSTOMARY["voltage"]}

    t = t - time_offset
    if isinstance(resting_potential, str):
        if resting_potential != "first":
            raise InputError(f"resting potential {resting_potential!r}: expected a voltage or 'first'")
        rest = np.empty_like(v)
        for position in np.unique(x):
            at = np.flatnonzero(x == position)
            first = at[np.argmin(t[at])]
            if t[first] > 0:
                raise FileFormatError(f"{name}:{int(lines[first])}: the first sample at this site is "
                                      "after the stimulus onset, so it cannot serve as the resting potential")
            rest[at] = v[first]
        v = v - rest
        rest_value = float(np.mean(rest))
    else:
        rest_value = float(resting_potential)
        v = v - rest_value
    return Recording(name=name, layout=layout, times=t, positions=x, voltage=v, lines=lines, columns=columns,
                     units=units_used, assumed=tuple(assumed), metadata=metadata,
                     resting_potential=rest_value, time_offset=float(time_offset))



@dataclass(frozen=True, slots=True)
class Sweeps:
    """Repeated recordings of one response at one site, on one clock, in SI.

    Attributes
    ----------
    name : the file name (used in messages)
    times : s, the file's clock minus ``time_offset``, increasing
    voltages : V as recorded (rest not subtracted), shape (sweeps, times)
    labels : the header of each sweep's column
    lines : file line (1-based) of each time
    units : unit used for "time" and "voltage" (as text)
    assumed : which of those units were not declared and were taken as customary (ms, mV)
    metadata : ``# key = value`` comment lines of the file
    time_offset : s subtracted from every time
    """

    name: str
    times: Array
    voltages: Array
    labels: tuple[str, ...]
    lines: NDArray[np.int64]
    units: Mapping[str, str]
    assumed: tuple[str, ...]
    metadata: Mapping[str, str]
    time_offset: float = 0.0


def read_sweeps(text: str, name: str, parse: QuantityParser, *, time_unit: str | None = None,
                voltage_unit: str | None = None, time_offset: float = 0.0) -> Sweeps:
    """Read sweeps: a time column and one voltage column per sweep (CSV or tab-separated).

    The header names the time column as :func:`read_recording` does ('time (ms)'); every other
    column is one sweep recorded at the same site, named freely ('sweep 1 (mV)', 'V (mV)', ...),
    its unit in brackets or given by ``voltage_unit`` (customary mV). Rows are the shared sample
    times, which must increase.

    Raises
    ------
    FileFormatError : naming the file, line and column of the first problem
    """
    header, header_line, rows, metadata = _table(text, name)
    parsed = [_CELL.match(cell) for cell in header]
    names = [(m.group("name") if m else cell).strip().lower() for m, cell in zip(parsed, header, strict=True)]
    units = [(m.group("unit") or None) if m else None for m in parsed]
    time_cols = [i for i, n in enumerate(names) if n in _TIME_NAMES]
    if len(time_cols) != 1:
        what = "no time column" if not time_cols else "more than one time column"
        raise FileFormatError(f"{name}:{header_line}: {what}; expected a column named 'time' "
                              "with its unit, e.g. 'time (ms)'")
    tc = time_cols[0]
    sweep_cols = [i for i in range(len(header)) if i != tc]
    if not sweep_cols:
        raise FileFormatError(f"{name}:{header_line}: no voltage columns; expected e.g. "
                              "'time (ms),sweep 1 (mV),sweep 2 (mV)'")
    t_factor, t_unit, t_assumed = _unit_factor(parse, units[tc], time_unit, "time",
                                               _where(name, header_line, tc + 1, header[tc]), "--time-unit")
    factors = []
    v_unit = _CUSTOMARY["voltage"]
    v_assumed = False
    for col in sweep_cols:
        factor, v_unit, assumed_here = _unit_factor(parse, units[col], voltage_unit, "voltage",
                                                    _where(name, header_line, col + 1, header[col]),
                                                    "--voltage-unit")
        factors.append(factor)
        v_assumed = v_assumed or assumed_here
    for line, cells in rows:
        if len(cells) != len(header) and not (len(cells) > len(header) and not any(c.strip() for c in
                                                                                  cells[len(header):])):
            raise FileFormatError(f"{name}:{line}: {len(cells)} columns, but the header "
                                  f"(line {header_line}) has {len(header)}")
    times = np.array([_number(name, header, ln, c, tc) for ln, c in rows]) * t_factor
    bad = np.flatnonzero(np.diff(times) <= 0)
    if bad.size:
        k = int(bad[0]) + 1
        raise FileFormatError(f"{_where(name, rows[k][0], tc + 1, header[tc])}: time does not increase "
                              f"(line {rows[k - 1][0]} has an equal or later time)")
    voltages = np.array([[_number(name, header, ln, c, col) for ln, c in rows] for col in sweep_cols])
    voltages *= np.array(factors)[:, None]
    assumed = tuple(k for k, a in (("time", t_assumed), ("voltage", v_assumed)) if a)
    return Sweeps(name=name, times=times - time_offset, voltages=voltages,
                  labels=tuple(header[c].strip() for c in sweep_cols),
                  lines=np.array([ln for ln, _ in rows], dtype=np.int64),
                  units={"time": t_unit, "voltage": v_unit}, assumed=assumed, metadata=metadata,
                  time_offset=float(time_offset))


def run_spacings(recordings: Sequence[Recording], parse: QuantityParser) -> tuple[Array, Array]:
    """Δx and Δt of each run from its ``# dx = ...`` and ``# dt = ...`` lines (nan if absent)."""
    dx = np.full(len(recordings), np.nan)
    dt = np.full(len(recordings), np.nan)
    for i, r in enumerate(recordings):
        for key, kind, out in (("dx", "length", dx), ("dt", "time", dt)):
            if key in r.metadata:
                out[i] = parse(r.metadata[key], kind, f"{r.name}: '# {key}' line")
    return dx, dt
