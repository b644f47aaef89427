r"""Verify a simulator: read its recorded output, compare it with an exact solution, measure
the observed order of convergence, and advise how many segments a target accuracy needs.

Pieces (all on SI floats and numpy arrays; units are resolved by a caller-supplied parser so
that this module never imports pint):

* :func:`read_recording` reads a simulator's CSV output in the *long* layout (one row per
  sample: time, position, voltage) or the *wide* layout (one row per time, one column per
  recording site) and checks it line by line;
* :func:`compare` evaluates an :class:`ExactCase` at exactly the recorded points and reports
  maximum and RMS absolute and relative errors, where and when the worst error occurs, and a
  verdict against a tolerance;
* :func:`convergence` estimates the observed orders in Δx and Δt from several runs and sets
  them beside the scheme's theoretical orders (second order in Δx for the usual three-point
  difference [CP]; first order in Δt for backward Euler, second for Crank–Nicolson, Crank &
  Nicolson 1947);
* :func:`advise_cable` and :func:`advise_tree` find the segments per section that meet a
  target error in a chosen output, using the exact answer and the reference discretisation of
  :mod:`cabletheory.compartment`, beside the common rule of thumb ([CP]: segments no longer than
  0.1 λ at 100 Hz) and the error that rule gives; for a time course also the largest time step
  of backward Euler or Crank–Nicolson (:class:`StepAdvice`), predicted from the scheme's order,
  measured, and verified against the exact course, beside the common fixed 25 µs step ([CP]);
* :class:`ReferenceTable` and its writers put an exact solution on a grid, with metadata.

Every exact answer assumes a passive, linear membrane with uniform properties; so does every
verdict. A simulator with active conductances is outside what this module can check.
"""

from __future__ import annotations

import csv
import io
import json
import math
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from . import __version__
from . import cable as cb
from . import compartment as cp
from .errors import ConvergenceError, FileFormatError, InputError

__all__ = [
    "OUTPUTS",
    "Advice",
    "Comparison",
    "Convergence",
    "ExactCase",
    "OrderEstimate",
    "Recording",
    "ReferenceTable",
    "StepAdvice",
    "advise_cable",
    "advise_tree",
    "compare",
    "convergence",
    "exact_case",
    "json_number",
    "read_recording",
    "reference_csv",
    "reference_json",
    "reference_npz",
    "transient_case",
    "tree_input_admittance",
]

Array = NDArray[np.float64]
# (text, kind, where) -> SI value; kind is a key of units.KINDS ("time", "length", "voltage").
# The command line passes a function built on units.parse_quantity; ``where`` names file,
# line and column so that its error messages do too.
QuantityParser = Callable[[str, str, str], float]


# ======================================================================================
# reading a simulator's output
# ======================================================================================
_TIME_NAMES = {"time", "t"}
_POSITION_NAMES = {"position", "distance", "x", "site", "location"}
_VOLTAGE_NAMES = {"voltage", "v", "vm", "v_m", "membrane potential", "potential"}
_CELL = re.compile(r"^\s*(?P<name>.*?)\s*(?:[\(\[]\s*(?P<unit>[^\)\]]*?)\s*[\)\]])?\s*$")
_SITE = re.compile(r"^(?:(?:v|vm|voltage)\s*(?:at|@)\s*|(?:x|site)\s*=\s*|@\s*)?"
                   r"(?P<pos>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?\s*[A-Za-zµμ]*)$", re.IGNORECASE)
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


def _where(name: str, line: int, column: int, cell: str) -> str:
    return f"{name}, line {line}, column {column} ({cell.strip()!r})"


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


def read_recording(text: str, name: str, parse: QuantityParser, *, time_unit: str | None = None,
                   position_unit: str | None = None, voltage_unit: str | None = None,
                   resting_potential: float | str = 0.0, time_offset: float = 0.0,
                   site: float | None = None, allow_negative_positions: bool = False) -> Recording:
    """Read a simulator's CSV output (long or wide layout, see docs/verify.md).

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
        like "voltage (mV)" rather than by its position
    allow_negative_positions : accept positions below 0 (an infinite cable, recorded on both
        sides of its input); otherwise a negative position is an error

    Raises
    ------
    FileFormatError : naming the file, line and column of the first problem
    """
    rows: list[tuple[int, list[str]]] = []
    metadata: dict[str, str] = {}
    header: list[str] | None = None
    header_line = 0
    for number, raw in enumerate(text.splitlines(), start=1):
        stripped = raw.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            m = _META.match(stripped)
            if m:
                metadata[m.group("key").strip().lower()] = m.group("value")
            continue
        cells = next(csv.reader([raw]))
        if header is None:
            header, header_line = cells, number
        else:
            rows.append((number, cells))
    if header is None:
        raise FileFormatError(f"{name}: empty file; expected a header such as "
                              "'time (ms),position (um),voltage (mV)'")
    if not rows:
        raise FileFormatError(f"{name}, line {header_line}: header but no data rows")

    parsed = [_CELL.match(cell) for cell in header]
    names = [(m.group("name") if m else cell).strip().lower() for m, cell in zip(parsed, header, strict=True)]
    units = [(m.group("unit") or None) if m else None for m in parsed]
    time_cols = [i for i, n in enumerate(names) if n in _TIME_NAMES]
    pos_cols = [i for i, n in enumerate(names) if n in _POSITION_NAMES]
    volt_cols = [i for i, n in enumerate(names) if n in _VOLTAGE_NAMES]
    if len(time_cols) != 1:
        what = "no time column" if not time_cols else "more than one time column"
        raise FileFormatError(f"{name}, line {header_line}: {what}; expected a column named 'time' "
                              "with its unit, e.g. 'time (ms)'")
    tc = time_cols[0]
    t_factor, t_unit, t_assumed = _unit_factor(parse, units[tc], time_unit, "time",
                                               _where(name, header_line, tc + 1, header[tc]), "--time-unit")
    assumed = ["time"] if t_assumed else []

    def number_at(line: int, cells: list[str], col: int) -> float:
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

    for line, cells in rows:
        if len(cells) != len(header) and not (len(cells) > len(header) and not any(c.strip() for c in
                                                                                  cells[len(header):])):
            raise FileFormatError(f"{name}, line {line}: {len(cells)} columns, but the header "
                                  f"(line {header_line}) has {len(header)}")

    if pos_cols:  # ---------------- long layout
        if len(pos_cols) != 1 or len(volt_cols) != 1:
            raise FileFormatError(f"{name}, line {header_line}: a long table needs exactly one position "
                                  "and one voltage column, e.g. 'time (ms),position (um),voltage (mV)'")
        pc, vc = pos_cols[0], volt_cols[0]
        x_factor, x_unit, x_assumed = _unit_factor(parse, units[pc], position_unit, "length",
                                                   _where(name, header_line, pc + 1, header[pc]),
                                                   "--position-unit")
        v_factor, v_unit, v_assumed = _unit_factor(parse, units[vc], voltage_unit, "voltage",
                                                   _where(name, header_line, vc + 1, header[vc]),
                                                   "--voltage-unit")
        assumed += [k for k, a in (("position", x_assumed), ("voltage", v_assumed)) if a]
        t = np.array([number_at(ln, c, tc) for ln, c in rows]) * t_factor
        x = np.array([number_at(ln, c, pc) for ln, c in rows]) * x_factor
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
            raise FileFormatError(f"{name}, line {header_line}: no voltage columns; expected a long table "
                                  "'time, position, voltage' or a wide one 'time (ms),V at 0 um (mV),...'")
        positions: list[float] = []
        v_factors: list[float] = []
        v_unit_seen: str | None = None
        x_unit = position_unit or _CUSTOMARY["length"]
        x_assumed = v_assumed = False
        for col in site_cols:
            where = _where(name, header_line, col + 1, header[col])
            label = names[col]
            if label in _VOLTAGE_NAMES:
                if site is None or len(site_cols) != 1:
                    raise FileFormatError(f"{where}: column does not say where it was recorded; name it by "
                                          "its position ('V at 250 um (mV)') or give --column-at")
                position = float(site)
            else:
                m = _SITE.match(label)
                if not m:
                    raise FileFormatError(f"{where}: not a recording site; expected a position such as "
                                          "'V at 250 um (mV)' or '250 um'")
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
        if len(set(positions)) != len(positions):
            raise FileFormatError(f"{name}, line {header_line}: two columns record the same position")
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
                raise FileFormatError(f"{name}, line {int(lines[first])}: the first sample at this site is "
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


# ======================================================================================
# exact cases and comparison
# ======================================================================================
@dataclass(frozen=True, slots=True)
class ExactCase:
    """An exact solution that can be evaluated at any (time, position) pairs.

    ``evaluate(times, positions)`` takes two equal-length arrays (s, m) and returns
    ``(voltage, bound)``: the exact voltage from rest (V) and a bound on its numerical
    error (V) at each pair. ``parameters`` maps a name to ``(SI value, SI unit)``.
    """

    evaluate: Callable[[Array, Array], tuple[Array, Array]]
    description: str
    method: str
    parameters: Mapping[str, tuple[float, str]] = field(default_factory=dict)
    length: float = math.inf  # m, positions must lie in [start, length]
    start: float = 0.0  # m; -inf for an infinite cable (positions on both sides of the input)
    stimulus_shape: str = "step"  # the command line's word: step, pulse, alpha or clamp


@dataclass(frozen=True, slots=True)
class Comparison:
    """Errors of one recording against the exact solution (SI; errors = simulated − exact).

    Relative errors are divided by the largest |exact voltage| of the run (``scale``), not
    point by point, so that samples near rest (e.g. at t = 0) do not blow them up.
    """

    name: str
    samples: int
    max_abs_error: float  # V
    rms_abs_error: float  # V
    max_rel_error: float  # 1
    rms_rel_error: float  # 1
    scale: float  # V, max |exact|
    worst_time: float  # s
    worst_position: float  # m
    worst_line: int
    worst_simulated: float  # V
    worst_exact: float  # V
    tolerance: float  # V if absolute, else fraction of scale
    relative: bool
    passed: bool
    reference_bound: float  # V, largest error bound of the exact values
    sites: Array  # m
    site_max_abs_error: Array  # V, worst error at each site


def compare(recording: Recording, exact: ExactCase, tolerance: float, *, relative: bool = False) -> Comparison:
    """Compare a recording with the exact solution at exactly its recorded points.

    Parameters
    ----------
    recording : from :func:`read_recording`
    exact : the exact case (same parameters and stimulus as the simulation)
    tolerance : largest acceptable error, V (``relative=False``) or a fraction of the
        largest exact voltage (``relative=True``)

    The verdict passes when the maximum error is within the tolerance. Samples before the
    stimulus onset (negative time) are compared with rest (0 V).
    """
    if not (math.isfinite(tolerance) and tolerance > 0):
        raise InputError(f"tolerance must be positive, got {tolerance!r}")
    beyond = recording.positions > exact.length * (1 + 1e-9)
    if np.any(beyond):
        k = int(np.argmax(beyond))
        raise FileFormatError(f"{recording.name}, line {int(recording.lines[k])}: position "
                              f"{recording.positions[k]:.6g} m lies beyond the cable's length "
                              f"{exact.length:.6g} m")
    before = recording.positions < exact.start
    if np.any(before):
        k = int(np.argmax(before))
        raise FileFormatError(f"{recording.name}, line {int(recording.lines[k])}: position "
                              f"{recording.positions[k]:.6g} m lies before the cable's origin")
    positions = np.minimum(recording.positions, exact.length)
    after = recording.times >= 0
    v_exact = np.zeros(recording.times.size)
    bound = np.zeros(recording.times.size)
    if np.any(after):
        v_exact[after], bound[after] = exact.evaluate(recording.times[after], positions[after])
    err = recording.voltage - v_exact
    k = int(np.argmax(np.abs(err)))
    max_abs = float(abs(err[k]))
    rms_abs = float(np.sqrt(np.mean(err**2)))
    scale = float(np.max(np.abs(v_exact)))
    max_rel = max_abs / scale if scale > 0 else math.inf
    rms_rel = rms_abs / scale if scale > 0 else math.inf
    sites = np.unique(recording.positions)
    site_err = np.array([np.max(np.abs(err[recording.positions == s])) for s in sites])
    passed = (max_rel if relative else max_abs) <= tolerance
    return Comparison(name=recording.name, samples=int(err.size), max_abs_error=max_abs, rms_abs_error=rms_abs,
                      max_rel_error=max_rel, rms_rel_error=rms_rel, scale=scale,
                      worst_time=float(recording.times[k]), worst_position=float(recording.positions[k]),
                      worst_line=int(recording.lines[k]), worst_simulated=float(recording.voltage[k]),
                      worst_exact=float(v_exact[k]), tolerance=float(tolerance), relative=relative,
                      passed=bool(passed), reference_bound=float(np.max(bound)) if bound.size else 0.0,
                      sites=sites, site_max_abs_error=site_err)


# ======================================================================================
# observed order of convergence
# ======================================================================================
@dataclass(frozen=True, slots=True)
class OrderEstimate:
    """One observed order: the least-squares slope of log(error) against log(spacing)."""

    axis: str  # "space", "time" or "joint"
    observed: float
    expected: float
    runs: tuple[int, ...]  # indices of the runs used
    verdict: str  # "matches", "below expected", "above expected"
    note: str


@dataclass(frozen=True, slots=True)
class Convergence:
    """Observed orders from several runs, beside the scheme's theoretical ones."""

    errors: Array  # V, max abs error of each run
    spacings: Array  # m, Δx of each run (nan if unknown)
    steps: Array  # s, Δt of each run (nan if unknown)
    scheme: str
    estimates: tuple[OrderEstimate, ...]


ORDER_TOLERANCE = 0.3  # how far an observed order may sit from the theoretical one and still "match"


def _slope(h: Array, e: Array) -> float:
    x, y = np.log(h), np.log(e)
    x = x - x.mean()
    return float(np.sum(x * (y - y.mean())) / np.sum(x * x))


def _verdict(observed: float, expected: float) -> tuple[str, str]:
    if abs(observed - expected) <= ORDER_TOLERANCE:
        return "matches", "the discretisation behaves as its scheme predicts"
    if observed < expected:
        return "below expected", ("the other discretisation (space or time) or a fixed error may dominate, "
                                  "the grids may not yet be fine enough, or the scheme is not what it claims")
    return "above expected", "errors may cancel at these points, or the grids are too coarse to tell"


def _groups(values: Array) -> list[NDArray[np.int64]]:
    """Indices of runs sharing (to 1e-9) the same value; nan values never group."""
    out: list[NDArray[np.int64]] = []
    seen = np.zeros(values.size, dtype=bool)
    for i in range(values.size):
        if seen[i] or not np.isfinite(values[i]):
            continue
        same = np.flatnonzero(np.isfinite(values) & np.isclose(values, values[i], rtol=1e-9, atol=0))
        seen[same] = True
        out.append(same)
    return out


def convergence(errors: ArrayLike, spacings: ArrayLike, steps: ArrayLike, scheme: str) -> Convergence:
    """Observed orders of convergence in space and time from several runs.

    Runs sharing a time step and differing in Δx give the order in space; runs sharing Δx
    and differing in Δt give the order in time (the largest such group is used). When every
    run changes both, the order is reported against Δx ("joint"), and the expected value is
    ``min(p_x, p_t·k)`` where Δt ∝ Δx^k across the runs.

    Parameters
    ----------
    errors : max abs error of each run, V (any consistent measure)
    spacings : Δx of each run, m (nan when unknown)
    steps : Δt of each run, s (nan when unknown)
    scheme : "backward-euler" or "crank-nicolson" (sets the expected time order)
    """
    e = np.asarray(errors, dtype=float)
    dx = np.asarray(spacings, dtype=float)
    dt = np.asarray(steps, dtype=float)
    if not (e.shape == dx.shape == dt.shape) or e.ndim != 1:
        raise InputError("errors, spacings and steps need one value per run")
    if e.size < 2:
        raise InputError("an observed order needs at least two runs")
    if np.any(~np.isfinite(e)) or np.any(e <= 0):
        raise InputError("every run's error must be finite and positive to estimate an order")
    p_space, p_time = cp.expected_order(scheme)
    estimates: list[OrderEstimate] = []
    for axis, fixed, varying, expected in (("space", dt, dx, p_space), ("time", dx, dt, p_time)):
        best: NDArray[np.int64] | None = None
        for group in _groups(fixed):
            distinct = np.unique(varying[group][np.isfinite(varying[group])])
            if distinct.size >= 2 and (best is None or group.size > best.size):
                best = group[np.isfinite(varying[group])]
        if best is None and np.all(np.isnan(fixed)) and np.all(np.isfinite(varying)) \
                and np.unique(varying).size >= 2 and axis == "space" and np.all(np.isnan(dt)):
            best = np.arange(e.size)  # only Δx known: assume Δt fixed or negligible
        if best is None and np.all(np.isnan(fixed)) and np.all(np.isfinite(varying)) \
                and np.unique(varying).size >= 2 and axis == "time" and np.all(np.isnan(dx)):
            best = np.arange(e.size)
        if best is not None:
            observed = _slope(varying[best], e[best])
            verdict, note = _verdict(observed, expected)
            estimates.append(OrderEstimate(axis, observed, float(expected), tuple(int(i) for i in best),
                                           verdict, note))
    if not estimates and np.all(np.isfinite(dx)) and np.all(np.isfinite(dt)) and np.unique(dx).size >= 2:
        k = _slope(dx, dt) if np.unique(dt).size >= 2 else 0.0
        joint_expected = min(p_space, p_time * k) if k > 0 else p_space
        observed = _slope(dx, e)
        verdict, note = _verdict(observed, joint_expected)
        estimates.append(OrderEstimate("joint", observed, float(joint_expected), tuple(range(e.size)), verdict,
                                       f"Δx and Δt refined together (Δt ∝ Δx^{k:.2g}); {note}"))
    if not estimates:
        raise InputError("cannot estimate an order: give each run's Δx and/or Δt (they must differ "
                         "between runs), e.g. with --dx and --dt or '# dx = 25 um' lines in the files")
    return Convergence(errors=e, spacings=dx, steps=dt, scheme=scheme, estimates=tuple(estimates))


# ======================================================================================
# discretisation advice
# ======================================================================================
OUTPUTS: dict[str, str] = {
    "input-resistance": "steady input resistance at the origin (relative error)",
    "attenuation": "steady voltage at a site per voltage at the origin, for current at the origin "
                   "(relative error)",
    "impedance": "input impedance at the origin at a frequency (relative error of the complex value)",
    "time-course": "voltage at a site during a current step at the origin (max error over time, relative "
                   "to the peak)",
}


@dataclass(frozen=True, slots=True)
class StepAdvice:
    """The largest time step Δt for a time course, with the segments of the same advice.

    The target is split: ``space_target`` (segments, Δt negligible) plus ``time_target`` (Δt,
    measured against a time-converged solve with the same segments). The fully discrete error
    is the sum of the two parts, so by the triangle inequality it stays within their sum, the
    whole target; ``error`` is that total, measured against the exact course. Every error is
    the maximum over the sample times, relative to the peak exact voltage.
    """

    scheme: str  # key of compartment.SCHEMES
    order: int  # theoretical order in Δt (1 backward Euler, 2 Crank–Nicolson; Crank & Nicolson 1947)
    space_target: float  # relative error budget given to the segments
    time_target: float  # relative error budget given to the time step
    step: float  # s, recommended Δt = output_spacing / divisions
    divisions: int  # steps per output spacing
    output_spacing: float  # s, the largest step that divides every sample time
    last_time: float  # s, the end of the output window (the step is at t = 0)
    samples: int  # number of sample times
    time_error: float  # relative time error at ``step`` (against the time-converged solve)
    error: float  # relative total error at (segments, step) against the exact course (verified)
    limited_by_output: bool  # True: the output spacing itself meets the time budget
    step_estimate: float | None  # s, if limited: Δt the order predicts for the budget (not verified)
    reference_step: float  # s, Δt of the time-converged Crank–Nicolson solve
    reference_error: float  # relative time error of that solve (Richardson estimate)
    solves: int  # integrations spent on the time step (reference, search, rule)
    rule_step: float  # s, the rule of thumb's fixed step
    rule_error: float | None  # relative total error at (segments, rule_step); None if it does not
    #                           divide the sample times


@dataclass(frozen=True, slots=True)
class Advice:
    """Segments per section for a target error in one output, beside the rule of thumb.

    Errors are relative (see :data:`OUTPUTS`) and measured: the reference discretisation
    with that many segments is solved and compared with the exact answer.
    """

    output: str
    target: float  # relative error
    exact_value: complex  # exact output (Ω for resistance/impedance, 1 for attenuation, V for time course)
    segments: NDArray[np.int64]  # per section, to meet the target
    error: float  # relative error with ``segments``
    rule_segments: NDArray[np.int64]  # per section, by the rule of thumb
    rule_error: float  # relative error with ``rule_segments``
    rule_fraction: float  # segment length as a fraction of λ_f
    rule_frequency: float  # Hz
    length_constants: Array  # m, per section (steady λ)
    ac_length_constants: Array  # m, per section, at ``rule_frequency``
    electrotonic_lengths: Array  # per section
    site: float | None = None  # m, for "attenuation" and "time-course"
    frequency: float | None = None  # Hz, for "impedance"
    step: float | None = None  # s, Δt used for the time course (fine enough to be negligible)
    time_step: StepAdvice | None = None  # for "time-course": the largest Δt for the time share


def tree_input_admittance(parents: ArrayLike, lengths: ArrayLike, diameters: ArrayLike,
                          membrane_resistivity: float, axial_resistivity: float, membrane_capacitance: float,
                          *, frequency: float = 0.0, end_conductances: ArrayLike | None = None,
                          soma_area: float = 0.0) -> complex:
    r"""Exact input admittance (S) at the root of a tree of uniform cylinders.

    Each section, loaded at its far end by the admittance :math:`Y_L` of its children (and
    any end conductance), presents at its near end

    .. math:: Y_{in} = Y_\infty \frac{Y_L + Y_\infty \tanh qL}{Y_\infty + Y_L \tanh qL},
              \qquad Y_\infty = G_\infty q,\; q = \sqrt{1 + i\omega\tau_m},

    and the root sums the sections attached to it plus the soma's :math:`(A/R_m)(1 + i\omega\tau_m)`.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491 (steady input conductance of branched trees); Rall &
    Rinzel (1973) Biophys. J. 13:648; Koch C (1999) ch. 3 (recalled from memory).
    """
    parent = np.asarray(parents, dtype=np.int64).ravel()
    count = parent.size
    ell = np.broadcast_to(np.asarray(lengths, dtype=float), (count,))
    d = np.broadcast_to(np.asarray(diameters, dtype=float), (count,))
    ends = np.zeros(count) if end_conductances is None else np.broadcast_to(
        np.asarray(end_conductances, dtype=float), (count,))
    tau = membrane_resistivity * membrane_capacitance
    q = complex(cb.wavenumber(frequency, tau))
    load = ends.astype(complex)
    y_in = np.zeros(count, dtype=complex)
    for i in range(count - 1, -1, -1):  # children come after their parents
        y_inf = complex(cb.semi_infinite_input_conductance(membrane_resistivity, axial_resistivity, d[i])) * q
        lam = float(cb.length_constant(membrane_resistivity, axial_resistivity, d[i]))
        th = np.tanh(q * ell[i] / lam)
        if np.isinf(load[i].real):
            y_in[i] = y_inf / th  # killed end
        else:
            y_in[i] = y_inf * (load[i] + y_inf * th) / (y_inf + load[i] * th)
        if parent[i] >= 0:
            load[parent[i]] += y_in[i]
    return complex(np.sum(y_in[parent == -1]) + soma_area / membrane_resistivity * q * q)


def _relative(a: complex, b: complex) -> float:
    return abs(a - b) / abs(b)


def _numeric_admittance(c: cp.Compartments, frequency: float) -> complex:
    import scipy.sparse
    import scipy.sparse.linalg

    free = ~np.asarray(c.held, dtype=bool)
    omega = 2 * np.pi * frequency
    m = (c.conductance + 1j * omega * scipy.sparse.diags(c.capacitance)).tocsc()[free][:, free]
    rhs = np.zeros(int(free.sum()), dtype=complex)
    rhs[0] = 1.0
    v = scipy.sparse.linalg.spsolve(m.tocsc(), rhs)
    return complex(1.0 / v[0])


def _search(error_at: Callable[[NDArray[np.int64]], float], electrotonic: Array, target: float,
            max_nodes: int) -> tuple[NDArray[np.int64], float]:
    """Smallest uniform electrotonic spacing h (n_i = ceil(ΔX_i/h)) whose error meets ``target``.

    Uses the second-order error model e ∝ h² to jump, then steps down until the measured
    error is within the target, then bisects back up on h.
    """

    def counts(h: float) -> NDArray[np.int64]:
        return np.maximum(1, np.ceil(electrotonic / h - 1e-9)).astype(np.int64)

    h = float(np.max(electrotonic)) / 2
    err = error_at(counts(h))
    for _ in range(60):
        if err <= target:
            break
        h *= min(0.9, 0.95 * math.sqrt(target / err)) if err > 0 else 0.5
        n = counts(h)
        if n.sum() > max_nodes:
            raise ConvergenceError(f"a relative error of {target:.3g} needs more than {max_nodes} segments; "
                                   "ask for a looser target")
        err = error_at(n)
    else:  # pragma: no cover - the h² model always converges within 60 steps
        raise ConvergenceError(f"no segment count met the target {target:.3g}")
    # the jump may overshoot: coarsen while the target is still met (at most a few tries)
    best_n, best_err = counts(h), err
    for factor in (1.5, 1.25, 1.1):
        n = counts(h * factor)
        if n.sum() < best_n.sum():
            e = error_at(n)
            if e <= target:
                best_n, best_err, h = n, e, h * factor
    return best_n, best_err


MAX_SEGMENTS = 200_000


def _rule(lengths: Array, diameters: Array, rm: float, ri: float, cm: float, fraction: float,
          frequency: float) -> tuple[NDArray[np.int64], Array, Array]:
    lam = cb.length_constant(rm, ri, diameters)
    lam_f = cb.ac_length_constant(lam, frequency, rm * cm)
    return cb.segments_needed(lengths, lam_f, fraction), np.asarray(lam, dtype=float), np.asarray(lam_f)


def advise_tree(parents: ArrayLike, lengths: ArrayLike, diameters: ArrayLike, membrane_resistivity: float,
                axial_resistivity: float, membrane_capacitance: float, output: str, target: float, *,
                end_conductances: ArrayLike | None = None, soma_area: float = 0.0, frequency: float = 100.0,
                rule_fraction: float = 0.1, rule_frequency: float = 100.0) -> Advice:
    """Segments per section of a tree for a target relative error at the root.

    Outputs for trees: ``"input-resistance"`` and ``"impedance"`` (at ``frequency``), with
    the exact value from :func:`tree_input_admittance`. Segments are spread with equal
    electrotonic spacing, which is where the second-order error is even.
    """
    if output not in ("input-resistance", "impedance"):
        raise InputError(f"output {output!r} is not available for a tree; choose input-resistance or impedance")
    _check_target(target)
    parent = np.asarray(parents, dtype=np.int64).ravel()
    ell = np.broadcast_to(np.asarray(lengths, dtype=float), parent.shape).copy()
    d = np.broadcast_to(np.asarray(diameters, dtype=float), parent.shape).copy()
    f = frequency if output == "impedance" else 0.0
    exact_y = tree_input_admittance(parent, ell, d, membrane_resistivity, axial_resistivity,
                                    membrane_capacitance, frequency=f, end_conductances=end_conductances,
                                    soma_area=soma_area)

    def error_at(n: NDArray[np.int64]) -> float:
        c = cp.discretise_tree(parent, ell, d, membrane_resistivity, axial_resistivity, membrane_capacitance,
                               n, soma_area=soma_area or None, end_conductances=end_conductances)
        return _relative(1.0 / _numeric_admittance(c, f), 1.0 / exact_y)

    rule_n, lam, lam_f = _rule(ell, d, membrane_resistivity, axial_resistivity, membrane_capacitance,
                               rule_fraction, rule_frequency)
    electrotonic = ell / lam
    n, err = _search(error_at, electrotonic, target, MAX_SEGMENTS)
    return Advice(output=output, target=target, exact_value=1.0 / exact_y if output == "impedance"
                  else complex((1.0 / exact_y).real), segments=n, error=err, rule_segments=rule_n,
                  rule_error=error_at(rule_n), rule_fraction=rule_fraction, rule_frequency=rule_frequency,
                  length_constants=lam, ac_length_constants=lam_f, electrotonic_lengths=electrotonic,
                  frequency=f if output == "impedance" else None)


def _check_target(target: float) -> None:
    if not (math.isfinite(target) and 1e-9 <= target < 1):
        raise InputError(f"target relative error must lie in [1e-9, 1), got {target!r}")


SPACE_SHARE = 0.5  # fraction of a time-course target given to the segments; the rest goes to Δt
RULE_STEP = 25e-6  # s: the fixed 25 µs step common in compartmental modelling [CP]
REFERENCE_MARGIN = 50  # the time-converged reference may use 1/50 of the smaller share
MAX_TIME_STEPS = 400_000  # time steps in one solve, at most


def advise_cable(cylinder: cb.Cylinder, output: str, target: float, *, site: float | None = None,
                 frequency: float = 100.0, soma_area: float = 0.0, rule_fraction: float = 0.1,
                 rule_frequency: float = 100.0, exact_time_course: Callable[[Array], Array] | None = None,
                 times: ArrayLike | None = None, scheme: str = "crank-nicolson", space_share: float = SPACE_SHARE,
                 rule_step: float = RULE_STEP) -> Advice:
    """Segments for one finite cylinder (input at its origin) to meet a target relative error.

    Parameters
    ----------
    cylinder : the cable (finite length)
    output : a key of :data:`OUTPUTS`
    target : relative error, e.g. 0.01 for 1 %
    site : m, where "attenuation" and "time-course" are read (default: the far end)
    frequency : Hz, for "impedance"
    soma_area : m², lumped soma at the origin ("input-resistance", "impedance", "time-course")
    rule_fraction, rule_frequency : the rule of thumb (0.1 λ at 100 Hz, [CP])
    exact_time_course : for "time-course", ``times -> exact V (V) at site`` for a 1 A step at
        the origin (from :mod:`cabletheory.transient`); ``times`` in s are where it is sampled
    scheme : for "time-course", the time scheme whose Δt is advised (a key of
        :data:`cabletheory.compartment.SCHEMES`)
    space_share : for "time-course", the fraction of ``target`` given to the segments; the rest
        goes to the time step (default one half each)
    rule_step : s, for "time-course", the rule of thumb's fixed Δt (25 µs, [CP])

    Notes
    -----
    For "time-course" the segments meet ``space_share * target`` with Δt negligible, and
    :attr:`Advice.time_step` holds the largest Δt that keeps the time error within the rest
    (see :class:`StepAdvice`).
    """
    if output not in OUTPUTS:
        raise InputError(f"output {output!r} is not one of {', '.join(OUTPUTS)}")
    if not math.isfinite(cylinder.length):
        raise InputError("advice needs a finite cable length")
    _check_target(target)
    rm, ri, cmem = cylinder.membrane_resistivity, cylinder.axial_resistivity, cylinder.membrane_capacitance
    where = cylinder.length if site is None else float(site)
    if not 0 <= where <= cylinder.length:
        raise InputError(f"site {where!r} m lies outside the cable (0 to {cylinder.length!r} m)")
    rule_n, lam, lam_f = _rule(np.array([cylinder.length]), np.array([cylinder.diameter]), rm, ri, cmem,
                               rule_fraction, rule_frequency)
    space_target = target
    step = None
    if output in ("input-resistance", "impedance"):
        f = frequency if output == "impedance" else 0.0
        exact: complex = 1.0 / tree_input_admittance([-1], [cylinder.length], [cylinder.diameter], rm, ri, cmem,
                                                      frequency=f, end_conductances=[cylinder.end_conductance],
                                                      soma_area=soma_area)
        if output == "input-resistance":
            exact = complex(exact.real)

        def error_at(n: NDArray[np.int64]) -> float:
            c = cp.discretise_cable(cylinder, int(n[0]), soma_area=soma_area or None)
            return _relative(1.0 / _numeric_admittance(c, f), exact)
    elif output == "attenuation":
        X = where / cylinder.length_constant
        exact = complex(cb.voltage_ratio(X, cylinder.electrotonic_length, cylinder.end_conductance_ratio))

        def error_at(n: NDArray[np.int64]) -> float:
            c = cp.discretise_cable(cylinder, int(n[0]))
            unit = np.zeros(c.size)
            unit[0] = 1.0
            v = cp.steady_state(c, unit)
            return _relative(complex(cp.sample(c, v, [where])[0] / v[0]), exact)
    else:  # time course
        if exact_time_course is None or times is None:
            raise InputError("the time-course advice needs the exact solution (cabletheory.transient)")
        cp.expected_order(scheme)  # names the scheme in the error if it is unknown
        if not (math.isfinite(space_share) and 0 < space_share < 1):
            raise InputError(f"space share of the target must lie strictly between 0 and 1, got {space_share!r}")
        if not (math.isfinite(rule_step) and rule_step > 0):
            raise InputError(f"rule-of-thumb time step must be a finite positive time in s, got {rule_step!r}")
        t = np.asarray(times, dtype=float)
        spacing = _output_spacing(t)
        v_exact = np.asarray(exact_time_course(t), dtype=float)
        peak = float(np.max(np.abs(v_exact)))
        if not peak > 0:
            raise InputError(f"the exact voltage at the site ({where!r} m) stays at rest (a killed end?), so a "
                             "relative error means nothing there; choose another --read-at")
        exact = complex(peak)
        space_target = target * space_share
        # a Crank–Nicolson Δt whose own time error is negligible beside both shares, found on a
        # probe grid (the time error hardly depends on the segment count)
        negligible = min(space_target, target - space_target) / REFERENCE_MARGIN
        probe = cp.discretise_cable(cylinder, int(np.clip(rule_n[0], 8, 400)), soma_area=soma_area or None)
        start = math.ceil(spacing / (cylinder.time_constant / 2000))  # first try: Δt near τm/2000
        step = _time_converged(probe, where, t, spacing, start, peak, negligible)[1]
        fine = step

        def error_at(n: NDArray[np.int64]) -> float:
            c = cp.discretise_cable(cylinder, int(n[0]), soma_area=soma_area or None)
            return float(np.max(np.abs(_step_course(c, where, t, fine, "crank-nicolson") - v_exact))) / peak

    electrotonic = np.array([cylinder.electrotonic_length])
    n, err = _search(error_at, electrotonic, space_target, 20_000 if output == "time-course" else MAX_SEGMENTS)
    time_step = None
    if output == "time-course":
        c = cp.discretise_cable(cylinder, int(n[0]), soma_area=soma_area or None)
        time_step, err, step = _advise_step(c, where, t, v_exact, peak, spacing, round(spacing / fine), scheme,
                                            space_target, target - space_target, negligible, rule_step)
    return Advice(output=output, target=target, exact_value=exact, segments=n, error=err, rule_segments=rule_n,
                  rule_error=error_at(rule_n), rule_fraction=rule_fraction, rule_frequency=rule_frequency,
                  length_constants=lam, ac_length_constants=lam_f, electrotonic_lengths=electrotonic,
                  site=where if output in ("attenuation", "time-course") else None,
                  frequency=frequency if output == "impedance" else None, step=step, time_step=time_step)


def _output_spacing(times: Array) -> float:
    """The largest Δt that divides every sample time (s): their greatest common step."""
    if times.ndim != 1 or times.size == 0 or not np.all(np.isfinite(times)):
        raise InputError("the time course needs a list of finite sample times")
    if np.any(times < 0) or np.any(np.diff(times) < 0):
        raise InputError("sample times of the time course must be >= 0 (the step is at t = 0) and increasing")
    positive = times[times > 0]
    if positive.size == 0:
        raise InputError("the time course needs at least one time after the onset")
    # greatest common step of the sample times, on a 1e-12 s lattice
    ticks = np.rint(positive / 1e-12).astype(np.int64)
    spacing = int(np.gcd.reduce(ticks)) * 1e-12
    if positive[-1] / spacing > MAX_TIME_STEPS:
        raise InputError(f"the sample times share no step coarser than {spacing:.3g} s over {positive[-1]:.3g} s; "
                         "give evenly spaced times such as '0:2:0.05 ms'")
    return spacing


def _divides(step: float, times: Array) -> bool:
    counts = np.rint(times / step)
    return bool(np.all(np.abs(counts * step - times) <= 1e-6 * step + 1e-12 * np.abs(times)))


def _step_course(c: cp.Compartments, where: float, times: Array, step: float, scheme: str) -> Array:
    """Voltage (V) at ``where`` for a 1 A step at node 0, by ``compartment.integrate`` at Δt = ``step``."""
    if times[-1] / step > MAX_TIME_STEPS:
        raise ConvergenceError(f"a time step of {step:.3g} s needs more than {MAX_TIME_STEPS} steps over "
                               f"{times[-1]:.3g} s; ask for a looser target or a shorter time course")
    current = np.zeros(c.size)
    current[0] = 1.0
    return cp.sample(c, cp.integrate(c, current, times, scheme=scheme, step=step), [where])[:, 0]


def _time_converged(c: cp.Compartments, where: float, times: Array, spacing: float, divisions: int, peak: float,
                    tolerance: float) -> tuple[Array, float, float, int]:
    """A Crank–Nicolson solve whose own time error is at most ``tolerance`` (relative to ``peak``).

    The error of the solve at Δt = h is estimated by Richardson's rule for a second-order
    method, :math:`|V_h - V_{2h}| / (2^2 - 1)`; h = ``spacing / divisions`` (first try; made
    even and refined until the estimate is within ``tolerance``). Returns the course, h (s),
    the estimate and the number of solves.
    """
    divisions = 2 * max(1, math.ceil(divisions / 2))
    for solves in range(2, 20, 2):
        h = spacing / divisions
        course = _step_course(c, where, times, h, "crank-nicolson")
        estimate = float(np.max(np.abs(course - _step_course(c, where, times, 2 * h, "crank-nicolson")))) / 3 / peak
        if estimate <= tolerance:
            return course, h, estimate, solves
        # second order: the error falls as h²
        divisions = 2 * math.ceil(divisions * math.sqrt(estimate / tolerance) * 1.1 / 2)
    raise ConvergenceError(f"no Crank–Nicolson step reached a time error of {tolerance:.3g}")  # pragma: no cover


def _advise_step(c: cp.Compartments, where: float, times: Array, v_exact: Array, peak: float, spacing: float,
                 divisions: int, scheme: str, space_target: float, time_target: float, negligible: float,
                 rule_step: float) -> tuple[StepAdvice, float, float]:
    """The largest Δt = spacing/m (m a whole number) whose time error meets ``time_target``.

    The time error of a run at Δt is its distance from a time-converged run with the same
    segments; it must stay within ``time_target`` less that run's own (estimated) time error.
    The scheme's order p (e ∝ Δt^p; Crank & Nicolson 1947) predicts m from each measured error;
    the prediction is measured, refined until it meets the budget, then coarsened by bisection
    on m to the largest passing Δt (exact for m < 50, to 2 % above). Returns the advice, the
    spatial error re-measured with the reference, and the reference step.
    """
    order = cp.expected_order(scheme)[1]
    reference, ref_step, ref_error, solves = _time_converged(c, where, times, spacing, divisions, peak, negligible)
    space_error = float(np.max(np.abs(reference - v_exact))) / peak
    # the reference is itself off by up to ref_error: keep the time error against a fully
    # converged run within the share (triangle inequality)
    budget = time_target - ref_error
    tried: dict[int, tuple[float, Array]] = {}

    def measure(m: int) -> float:
        course = _step_course(c, where, times, spacing / m, scheme)
        tried[m] = (float(np.max(np.abs(course - reference))) / peak, course)
        return tried[m][0]

    def predicted(m: int) -> int:  # divisions for the budget if e ∝ (spacing/m)^p
        e = tried[m][0]
        return math.ceil(m * (e / budget) ** (1.0 / order)) if e > 0 else 1

    m = 1
    e = measure(m)
    while e > budget:
        m = max(m + 1, math.ceil(predicted(m) * 1.02))
        e = measure(m)
    lo = max((k for k, (ek, _) in tried.items() if ek > budget), default=0)  # largest failing m
    first = True
    while m - lo > 1 and m - lo > 0.02 * m:
        guess = predicted(m) if first else (lo + m) // 2
        first = False
        guess = min(max(guess, lo + 1), m - 1)
        if measure(guess) <= budget:
            m = guess
        else:
            lo = guess
    time_error, course = tried[m]
    total = float(np.max(np.abs(course - v_exact))) / peak  # the verification: against the exact course
    e1 = tried[1][0]
    limited = m == 1
    estimate = spacing * (budget / e1) ** (1.0 / order) if limited and e1 > 0 else None
    rule_error = None
    if _divides(rule_step, times):
        rule = _step_course(c, where, times, rule_step, scheme)
        rule_error = float(np.max(np.abs(rule - v_exact))) / peak
        solves += 1
    advice = StepAdvice(scheme=scheme, order=order, space_target=space_target, time_target=time_target,
                        step=spacing / m, divisions=m, output_spacing=spacing, last_time=float(times[-1]),
                        samples=int(times.size), time_error=time_error, error=total,
                        limited_by_output=limited, step_estimate=estimate, reference_step=ref_step,
                        reference_error=ref_error, solves=solves + len(tried), rule_step=rule_step,
                        rule_error=rule_error)
    return advice, space_error, ref_step


# ======================================================================================
# reference tables
# ======================================================================================
@dataclass(frozen=True, slots=True)
class ReferenceTable:
    """An exact solution on a grid, with what a reader needs to trust it.

    ``voltage`` and ``bound`` are ``[time, site]`` for a grid (``layout="wide"``) or one
    value per (time, position) pair (``layout="long"``).
    """

    times: Array  # s
    positions: Array  # m
    voltage: Array  # V from rest
    bound: Array  # V, error bound of each value
    layout: str
    description: str
    method: str
    parameters: Mapping[str, tuple[float, str]]
    version: str = __version__
    caveat: str = "passive, linear, uniform membrane"
    stimulus_shape: str = "step"

    @property
    def largest_bound(self) -> float:
        return float(np.max(self.bound)) if self.bound.size else 0.0


def reference_table(exact: ExactCase, times: ArrayLike, positions: ArrayLike, *, layout: str = "wide"
                    ) -> ReferenceTable:
    """Evaluate ``exact`` on a time × site grid (``"wide"``) or at paired points (``"long"``)."""
    t = np.asarray(times, dtype=float).ravel()
    x = np.asarray(positions, dtype=float).ravel()
    if t.size == 0 or x.size == 0:
        raise InputError("a reference table needs at least one time and one position")
    if np.any(t < 0):
        raise InputError("reference times must be >= 0 (time since the stimulus onset)")
    if np.any(x < exact.start) or np.any(x > exact.length * (1 + 1e-12)):
        raise InputError(f"reference positions must lie between 0 and the cable's length {exact.length!r} m")
    if layout == "wide":
        tt, xx = np.meshgrid(t, x, indexing="ij")
        v, b = exact.evaluate(tt.ravel(), xx.ravel())
        v, b = np.asarray(v).reshape(tt.shape), np.asarray(b).reshape(tt.shape)
    elif layout == "long":
        if t.shape != x.shape:
            raise InputError("a long reference table needs one position per time")
        v, b = exact.evaluate(t, x)
    else:
        raise InputError(f"layout {layout!r}: expected 'wide' or 'long'")
    return ReferenceTable(times=t, positions=x, voltage=np.asarray(v, dtype=float), bound=np.asarray(b, dtype=float),
                          layout=layout, description=exact.description, method=exact.method,
                          parameters=dict(exact.parameters), stimulus_shape=exact.stimulus_shape)


def csv_header(title: str, description: str, method: str, largest_bound: float, caveat: str, stimulus_shape: str,
               parameters: Mapping[str, tuple[float, str]]) -> str:
    """The ``#`` comment lines that open every CSV the tool writes (``reference`` and ``charge --csv``):
    the title, tool version, case, method, largest error bound (V), the assumptions, then every
    parameter as ``name: SI value SI unit``."""
    lines = [
        title,
        f"tool: cabletheory {__version__}",
        f"case: {description}",
        f"method: {method}",
        f"largest error bound: {largest_bound:.3e} V",
        f"assumptions: {caveat}",
        f"stimulus_shape: {stimulus_shape}",
    ]
    lines += [f"{name}: {value!r} {unit}" for name, (value, unit) in parameters.items()]
    return "".join(f"# {line}\n" for line in lines)


def _fmt(x: float) -> str:
    return repr(float(x))


def _fmt_grid(x: float) -> str:
    """A time or position after unit conversion: 15 significant digits drop the rounding noise of
    the conversion (199.99999999999997 -> 200.0) and keep far more than any grid needs."""
    return repr(float(f"{float(x):.15g}"))


def reference_csv(table: ReferenceTable) -> str:
    """CSV text: ``#`` metadata lines, then ``time (ms),V at <x> um (mV),...`` (wide) or
    ``time (ms),position (um),voltage (mV),bound (mV)`` (long). Full double precision."""
    out = io.StringIO()
    out.write(csv_header("cabletheory exact reference table", table.description, table.method, table.largest_bound,
                         table.caveat, table.stimulus_shape, table.parameters))
    writer = csv.writer(out, lineterminator="\n")
    if table.layout == "wide":
        writer.writerow(["time (ms)"] + [f"V at {_fmt_grid(x * 1e6)} um (mV)" for x in table.positions])
        for i, t in enumerate(table.times):
            writer.writerow([_fmt_grid(t * 1e3)] + [_fmt(v * 1e3) for v in table.voltage[i]])
    else:
        writer.writerow(["time (ms)", "position (um)", "voltage (mV)", "bound (mV)"])
        for t, x, v, b in zip(table.times, table.positions, table.voltage, table.bound, strict=True):
            writer.writerow([_fmt_grid(t * 1e3), _fmt_grid(x * 1e6), _fmt(v * 1e3), _fmt(b * 1e3)])
    return out.getvalue()


def json_number(value: float) -> float | str:
    """A parameter value for JSON: the number, or "inf" / "-inf" / "nan" (JSON has no literal for them)."""
    v = float(value)
    if math.isfinite(v):
        return v
    return "nan" if math.isnan(v) else ("inf" if v > 0 else "-inf")


STIMULUS_KEYS = {"stimulus_amplitude": "amplitude", "stimulus_position": "position", "pulse_duration": "duration",
                 "time_to_peak": "time_to_peak", "stimulus_onset": "onset"}
"""Parameters of an :class:`ExactCase` that describe the stimulus, and their key in a JSON ``stimulus``
object (the keys ``charge --json`` uses too)."""


def split_stimulus(parameters: Mapping[str, tuple[float, str]], shape: str
                   ) -> tuple[dict[str, Any], dict[str, Any]]:
    """JSON ``parameters`` (the cable and model) and ``stimulus`` (``shape``, ``amplitude``,
    ``position`` and, where they apply, ``duration``, ``time_to_peak``, ``onset``) of a case."""
    cable: dict[str, Any] = {}
    stimulus: dict[str, Any] = {"shape": shape}
    for name, (value, unit) in parameters.items():
        entry = {"value": json_number(value), "unit": unit}
        if name in STIMULUS_KEYS:
            stimulus[STIMULUS_KEYS[name]] = entry
        else:
            cable[name] = entry
    return cable, stimulus


def reference_json(table: ReferenceTable) -> str:
    """JSON text; every quantity is ``{"value": SI, "unit": SI unit}``."""
    parameters, stimulus = split_stimulus(table.parameters, table.stimulus_shape)
    obj: dict[str, Any] = {
        "tool": f"cabletheory {table.version}",
        "case": table.description,
        "method": table.method,
        "assumptions": table.caveat,
        "layout": table.layout,
        "parameters": parameters,
        "stimulus": stimulus,
        "times": {"value": table.times.tolist(), "unit": "s"},
        "positions": {"value": table.positions.tolist(), "unit": "m"},
        "voltage": {"value": table.voltage.tolist(), "unit": "V"},
        "error_bound": {"value": table.bound.tolist(), "unit": "V"},
        "largest_error_bound": {"value": table.largest_bound, "unit": "V"},
    }
    return json.dumps(obj, indent=1, allow_nan=False)


def reference_npz(table: ReferenceTable) -> bytes:
    """NPZ bytes: arrays ``times`` (s), ``positions`` (m), ``voltage`` (V), ``error_bound`` (V)
    and ``metadata`` (one JSON string with the parameters, method and version)."""
    meta = json.loads(reference_json(table))
    for key in ("times", "positions", "voltage", "error_bound"):
        meta.pop(key)
    buffer = io.BytesIO()
    np.savez_compressed(buffer, times=table.times, positions=table.positions, voltage=table.voltage,
                        error_bound=table.bound, metadata=np.array(json.dumps(meta)))
    return buffer.getvalue()


def run_spacings(recordings: Sequence[Recording], parse: QuantityParser) -> tuple[Array, Array]:
    """Δx and Δt of each run from its ``# dx = ...`` and ``# dt = ...`` lines (nan if absent)."""
    dx = np.full(len(recordings), np.nan)
    dt = np.full(len(recordings), np.nan)
    for i, r in enumerate(recordings):
        for key, kind, out in (("dx", "length", dx), ("dt", "time", dt)):
            if key in r.metadata:
                out[i] = parse(r.metadata[key], kind, f"{r.name}: '# {key}' line")
    return dx, dt


# ======================================================================================
# a small exact case of our own: sealed cylinder, current step at the origin
# ======================================================================================
def sealed_step_voltage(cylinder: cb.Cylinder, amplitude: float, times: ArrayLike, positions: ArrayLike,
                        tolerance: float = 1e-12) -> tuple[Array, Array]:
    r"""Exact voltage of a finite sealed cylinder after a current step at X = 0.

    .. math:: \frac{V(X,T)}{I R_\infty} = \frac{\cosh(L-X)}{\sinh L} - \frac{1}{L}\Big[e^{-T}
              + 2\sum_{n\ge1} \frac{\cos(k_n X)\, e^{-(1+k_n^2)T}}{1+k_n^2}\Big], \quad k_n = n\pi/L

    (eigenfunction series of Rall 1969, Biophys. J. 9:1483; at X = 0 this is the charging
    curve in tests/test_verify.py). Truncation: the terms beyond N are bounded by
    :math:`\frac{2}{L}\sum_{n>N} e^{-(1+k_n^2)T}/k_n^2 \le \frac{2L}{\pi^2 N} e^{-(1+k_{N+1}^2)T}`,
    and N grows until that bound, times :math:`|I| R_\infty`, is below ``tolerance`` (V).

    Parameters
    ----------
    cylinder : finite cylinder (its end conductance is ignored: sealed)
    amplitude : I, A
    times, positions : equal-shape arrays, s (>= 0) and m (in [0, ℓ])
    tolerance : V, bound on the truncation error of each value

    Returns
    -------
    (voltage, bound), both V, shaped like ``times``.
    """
    t = np.asarray(times, dtype=float)
    x = np.asarray(positions, dtype=float)
    L = cylinder.electrotonic_length
    T = t / cylinder.time_constant
    X = x / cylinder.length_constant
    scale = abs(amplitude) * cylinder.semi_infinite_input_resistance
    # steady part cosh(L-X)/sinh L, written with exp(-2·) (no overflow for long cables)
    steady = np.exp(-X) * (1 + np.exp(-2 * (L - X))) / -np.expm1(-2 * L)  # expm1: short cables stay accurate
    voltage = np.zeros(t.shape)
    bound = np.zeros(t.shape)
    live = T > 0  # at T = 0 the cable is at rest exactly
    Tl, Xl = T[live], X[live]
    total = np.exp(-Tl)
    tail = np.full(Tl.shape, np.inf)
    active = np.ones(Tl.shape, dtype=bool)
    n0, chunk = 0, 64
    while np.any(active):
        if n0 > 10_000_000:
            raise ConvergenceError(f"series did not reach {tolerance:.3g} V at the earliest times")
        n = np.arange(n0 + 1, n0 + chunk + 1)
        k = n * np.pi / L
        ta, xa = Tl[active, None], Xl[active, None]
        total[active] += np.sum(2 * np.cos(k * xa) * np.exp(-(1 + k * k) * ta) / (1 + k * k), axis=1)
        last = n0 + chunk
        tail[active] = scale * 2 / (np.pi**2 * last) * np.exp(-(1 + ((last + 1) * np.pi / L) ** 2) * Tl[active])
        active &= tail > tolerance
        n0, chunk = last, min(chunk * 2, 65536)
    voltage[live] = amplitude * cylinder.semi_infinite_input_resistance * (steady[live] - total / L)
    bound[live] = tail + 1e-15 * scale * np.maximum(1.0, 1.0 / L)  # truncation plus rounding
    return voltage, bound


def sealed_step_case(cylinder: cb.Cylinder, amplitude: float, tolerance: float = 1e-12) -> ExactCase:
    """:func:`sealed_step_voltage` as an :class:`ExactCase` (current step at the origin, sealed end)."""

    def evaluate(times: Array, positions: Array) -> tuple[Array, Array]:
        return sealed_step_voltage(cylinder, amplitude, times, positions, tolerance)

    params = {
        "membrane_resistivity": (cylinder.membrane_resistivity, "ohm*m**2"),
        "axial_resistivity": (cylinder.axial_resistivity, "ohm*m"),
        "membrane_capacitance": (cylinder.membrane_capacitance, "F/m**2"),
        "diameter": (cylinder.diameter, "m"),
        "length": (cylinder.length, "m"),
        "end_conductance": (0.0, "S"),
        "stimulus_amplitude": (amplitude, "A"),
        "stimulus_position": (0.0, "m"),
    }
    return ExactCase(evaluate=evaluate, description="finite cylinder, sealed far end, current step at the origin",
                     method="eigenfunction series (Rall 1969) truncated by its tail bound",
                     parameters=params, length=cylinder.length)


# ======================================================================================
# every case of cabletheory.transient as an exact case
# ======================================================================================
GRID_FACTOR = 4  # paired points are evaluated on their full time × site grid while it has at most
# this many times as many points (plus GRID_SLACK); otherwise in blocks
GRID_SLACK = 4096
SCATTER_BLOCK = 256  # points per block when the pairs are scattered (each block: at most 256² values)


def _um(x: float) -> str:
    return f"{x * 1e6:.6g} µm"


def _ms(t: float) -> str:
    return f"{t * 1e3:.6g} ms"


def describe_case(model: Any, stimulus: Any) -> tuple[str, str, dict[str, tuple[float, str]]]:
    """A case of :mod:`cabletheory.transient` in words and numbers: its description (model and
    stimulus), the stimulus's command-line word (step, pulse, alpha, clamp) and its parameters as
    ``name -> (SI value, SI unit)``, shared by :func:`transient_case` and ``charge --csv``."""
    from . import transient as tr

    infinite = isinstance(model, tr.InfiniteCable)
    ball = isinstance(model, tr.BallAndStick)
    cylinder = model.cylinder if ball else model
    params: dict[str, tuple[float, str]] = {
        "membrane_resistivity": (model.membrane_resistivity if infinite else cylinder.membrane_resistivity,
                                 "ohm*m**2"),
        "axial_resistivity": (model.axial_resistivity if infinite else cylinder.axial_resistivity, "ohm*m"),
        "membrane_capacitance": (model.membrane_capacitance if infinite else cylinder.membrane_capacitance,
                                 "F/m**2"),
        "diameter": (model.diameter if infinite else cylinder.diameter, "m"),
    }
    if infinite:
        shape = "infinite cable"
    else:
        params["length"] = (cylinder.length, "m")
        if math.isinf(cylinder.length):
            shape = "semi-infinite cylinder, sealed origin"
        else:
            params["end_conductance"] = (cylinder.end_conductance, "S")
            params["end_conductance_ratio"] = (cylinder.end_conductance_ratio, "1")
            g = cylinder.end_conductance
            end = ("sealed" if g == 0 else "killed" if math.isinf(g)
                   else f"leaky (B = {cylinder.end_conductance_ratio:.4g})")
            shape = f"finite cylinder, {end} far end"
        if ball:
            params["soma_diameter"] = (model.soma_diameter, "m")
            params["conductance_ratio"] = (model.conductance_ratio, "1")
            shape = f"ball and stick (soma {_um(model.soma_diameter)}, rho = {model.conductance_ratio:.4g}); " + shape
    params["length_constant"] = ((model if infinite else cylinder).length_constant, "m")
    params["membrane_time_constant"] = ((model if infinite else cylinder).time_constant, "s")
    where = f"x = {_um(stimulus.position)}"
    if stimulus.position == 0 and not infinite:
        where = "the soma" if ball else "the origin"
    if isinstance(stimulus, tr.VoltageStep):
        what, shape_word = f"voltage-clamp step at {where}", "clamp"
        params["stimulus_amplitude"] = (stimulus.amplitude, "V")
    elif isinstance(stimulus, tr.CurrentPulse):
        what, shape_word = f"current pulse of {_ms(stimulus.duration)} at {where}", "pulse"
        params["stimulus_amplitude"] = (stimulus.amplitude, "A")
        params["pulse_duration"] = (stimulus.duration, "s")
    elif isinstance(stimulus, tr.AlphaCurrent):
        what, shape_word = f"alpha current peaking at {_ms(stimulus.time_to_peak)} at {where}", "alpha"
        params["stimulus_amplitude"] = (stimulus.peak, "A")
        params["time_to_peak"] = (stimulus.time_to_peak, "s")
    elif isinstance(stimulus, tr.CurrentStep):
        what, shape_word = f"current step at {where}", "step"
        params["stimulus_amplitude"] = (stimulus.amplitude, "A")
    else:
        raise InputError(f"unknown stimulus {type(stimulus).__name__}")
    params["stimulus_position"] = (stimulus.position, "m")
    return f"{shape}, {what}", shape_word, params


def transient_case(model: Any, stimulus: Any, tolerance: float = 1e-12) -> ExactCase:
    """Any time course of :func:`cabletheory.transient.charge` as an :class:`ExactCase`.

    Parameters
    ----------
    model : :class:`~cabletheory.cable.Cylinder` (finite with a sealed, killed or leaky far
        end; ``length = inf`` for a semi-infinite cable), :class:`~cabletheory.transient.BallAndStick`
        or :class:`~cabletheory.transient.InfiniteCable`
    stimulus : :class:`~cabletheory.transient.CurrentStep`, ``CurrentPulse``, ``AlphaCurrent``
        (at ``position``, m) or ``VoltageStep`` (clamp at the origin; anywhere on an infinite cable)
    tolerance : V, bound asked for the truncation error of each exact value. It is passed to
        :func:`~cabletheory.transient.charge` relative to the stimulus's reference voltage, and
        kept between 1e-13 (the rounding allowance of transient.py) and 1e-2 of it; the bound
        actually achieved is what ``evaluate`` returns.

    Returns
    -------
    ExactCase whose ``evaluate(times, positions)`` returns the exact voltage (V from rest) at
    each (time, position) pair and the error bound of the :class:`~cabletheory.transient.Response`
    it came from. Times at or before the onset give exactly 0.

    References
    ----------
    Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444; Rall W (1969) Biophys. J. 9:1483
    (the methods of :mod:`cabletheory.transient`).
    """
    from . import transient as tr

    if not (math.isfinite(tolerance) and tolerance > 0):
        raise InputError(f"exact tolerance must be a positive voltage, got {tolerance!r}")
    infinite = isinstance(model, tr.InfiniteCable)
    description, shape_word, params = describe_case(model, stimulus)
    cylinder = model.cylinder if isinstance(model, tr.BallAndStick) else model
    length, start = (math.inf, -math.inf) if infinite else (cylinder.length, 0.0)
    # the tolerance of transient.charge is relative to its reference voltage; a probe at t = 0 gives it
    probe = tr.charge(model, stimulus, [0.0], [0.0 if infinite else stimulus.position], modes=0)
    reference = probe.reference_voltage
    relative = min(max(tolerance / reference, 1e-13), 1e-2) if reference > 0 else 1e-10
    params["exact_tolerance"] = (relative * reference, "V")
    if infinite or math.isinf(length):
        image = ("" if infinite or isinstance(stimulus, tr.VoltageStep)
                 else "; source and its image in the sealed origin")
        method = f"closed form (Hodgkin & Rushton 1946 erfc solutions, scaled erfc{image})"
    else:
        method = ("images of the infinite-cable solution at early times, eigen-series with the steady state "
                  "subtracted at later times (Rall 1969), chosen per time"
                  + ("; a leaky end bracketed between sealed and killed" if 0 < cylinder.end_conductance < math.inf
                     else ""))
    method += f"; truncation error of each value <= {relative * reference:.2g} V"

    def evaluate(times: Array, positions: Array) -> tuple[Array, Array]:
        t = np.asarray(times, dtype=float).ravel()
        x = np.asarray(positions, dtype=float).ravel()
        voltage = np.zeros(t.size)
        bound = np.zeros(t.size)
        if t.size == 0:
            return voltage, bound
        unique_t, ti = np.unique(t, return_inverse=True)
        unique_x, xi = np.unique(x, return_inverse=True)
        if unique_t.size * unique_x.size <= GRID_FACTOR * t.size + GRID_SLACK:
            r = tr.charge(model, stimulus, unique_t, unique_x, tolerance=relative, modes=0)
            voltage[:] = r.voltage[ti, xi]
            bound[:] = r.error_bound
        else:  # scattered pairs: blocks of neighbouring positions, each on its own small grid
            order = np.argsort(x, kind="stable")
            for begin in range(0, order.size, SCATTER_BLOCK):
                at = order[begin:begin + SCATTER_BLOCK]
                bt, bti = np.unique(t[at], return_inverse=True)
                bx, bxi = np.unique(x[at], return_inverse=True)
                r = tr.charge(model, stimulus, bt, bx, tolerance=relative, modes=0)
                voltage[at] = r.voltage[bti, bxi]
                bound[at] = r.error_bound
        return voltage.reshape(np.shape(times)), bound.reshape(np.shape(times))

    return ExactCase(evaluate=evaluate, description=description, method=method, parameters=params,
                     length=length, start=start, stimulus_shape=shape_word)


def exact_case(model: Any, stimulus: Any, tolerance: float = 1e-12) -> ExactCase:
    """The exact answer for a model and stimulus: the one rule that ``reference``, ``compare`` and
    the terminal app's check view share.

    A current step at the origin of a finite cylinder with a sealed far end uses the independent
    eigenfunction series of :func:`sealed_step_case` (Rall 1969); every other case, the exact
    transients of :mod:`cabletheory.transient` through :func:`transient_case`.

    Parameters
    ----------
    model : :class:`~cabletheory.cable.Cylinder`, :class:`~cabletheory.transient.BallAndStick`
        or :class:`~cabletheory.transient.InfiniteCable`
    stimulus : a stimulus of :mod:`cabletheory.transient` (``CurrentStep``, ``CurrentPulse``,
        ``AlphaCurrent``, ``VoltageStep``)
    tolerance : V, bound asked for the truncation error of each exact value (positive, finite)

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444.
    """
    from . import transient as tr

    if not (math.isfinite(tolerance) and tolerance > 0):
        raise InputError(f"exact tolerance must be a positive voltage, got {tolerance!r}")
    if (type(model) is cb.Cylinder and math.isfinite(model.length) and model.end_conductance == 0
            and type(stimulus) is tr.CurrentStep and stimulus.position == 0):
        return sealed_step_case(model, stimulus.amplitude, tolerance)
    return transient_case(model, stimulus, tolerance)
