"""The tree view's time course and electrotonic map: their fields read, their results arranged.

Plain functions, tested without an App. The time course is :func:`cabletheory.tree_time.tree_response`
(the Laplace-domain solution of the whole tree inverted on a contour, each value with an error
estimate), its features are read by :func:`cabletheory.waveform.response_features`, the comparison with
the reduction is :func:`cabletheory.tree_time.reduction_cost`, and the map is
:func:`cabletheory.tree_time.electrotonic_map` (attenuation to and from the soma and centroid
delays, Agmon-Snir & Segev 1993; the morphoelectrotonic transform of Zador, Agmon-Snir & Segev
1995). The drawing of the map is our own: a dendrogram (path distance across, one row of dots per
tip) whose branches are coloured by their attenuation to the soma.

Every result assumes a passive, linear membrane, uniform over the tree.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from ..case import AlphaCurrent, CurrentPulse, VoltageStep
from ..case_fields import fields_for
from ..errors import InputError
from ..units import format_quantity
from .fields import STIMULUS_CHOICES, TIME_POINTS
from .forms import TreeSetup, read_form
from .report import Column, PlotSpec, Report, Row, Series, Table
from .tree_fields import TIME_FIELDS

if TYPE_CHECKING:  # pragma: no cover
    from ..tree import Tree
    from ..tree_case import TreeCase
    from ..tree_time import ElectrotonicMap, ReductionCost, TreeResponse
    from ..waveform import ResponseFeatures

__all__ = ["MapSetup", "TimeSetup", "dendrogram", "dendrogram_layout", "map_report", "read_map_form", "read_time_form",
           "time_report"]

TOLERANCE = 1e-8  # error allowed in each value of a time course, relative to the reference voltage
# the map's colours: attenuation to the soma (a ratio >= 1) in bins by its log10; the last is open
ATTENUATION_BINS = (1.5, 3.0, 10.0, 30.0)
MAP_COLOURS = ("#5cc8d6", "#9bd36a", "#f2d49b", "#f2b84b", "#ff6b6b")

_SPECS = {spec.name: spec for spec in TIME_FIELDS}
# the app's field names and the canonical fields of cabletheory.inputs.read_tree_case
_CANONICAL = {"current": "current", "clamp": "voltage", "duration": "duration", "time_to_peak": "time_to_peak",
              "stimulus_at": "stimulus_at", "record_at": "positions"}
_APP = {canonical: name for name, canonical in _CANONICAL.items()}
_LABELS = {canonical: _SPECS[name].label for name, canonical in _CANONICAL.items()}


def _cell(tree: Tree, audit: TreeSetup):  # -> PassiveTree
    from ..tree_laplace import PassiveTree

    return PassiveTree(tree, audit.membrane_resistivity, audit.axial_resistivity, audit.membrane_capacitance,
                       tips="killed" if audit.killed_tips else None)


# ---------------------------------------------------------------------------------------------
# the time course
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class TimeSetup:
    """A time course to compute. ``key`` holds every number and word that makes the result (two
    set-ups with equal keys give the same result); the case itself is not compared."""

    key: tuple[object, ...]
    case: TreeCase = field(compare=False)
    times: tuple[float, ...] = field(compare=False)
    audit: TreeSetup = field(compare=False)
    stimulus_choice: str = field(compare=False)
    reduced: bool = False


def read_time_form(texts: Mapping[str, str], stimulus: str, tree: Tree, audit: TreeSetup, tree_key: object,
                   reduced: bool = False) -> tuple[TimeSetup | None, dict[str, str]]:
    """The time course the form describes on ``tree`` (already read), or one message per wrong field.

    ``stimulus`` is a key of :data:`~cabletheory.tui.fields.STIMULUS_CHOICES`; the stimulus fields
    are read as everywhere else (:func:`cabletheory.inputs.read_tree_case`), "stimulus at" and
    "V(t) at" are point labels of the tree (blank "V(t) at": the soma and the stimulus point).
    """
    from ..inputs import CaseInputError, read_tree_case

    if stimulus not in STIMULUS_CHOICES:
        raise ValueError(f"unknown stimulus {stimulus!r}")
    used = fields_for("cylinder", stimulus)
    case_texts: dict[str, str | None] = {"shape": stimulus}
    for name, canonical in _CANONICAL.items():
        if canonical in ("stimulus_at", "positions") or canonical in used:
            case_texts[canonical] = texts.get(name, _SPECS[name].default)
    where = (case_texts.get("stimulus_at") or "").strip() or "soma"
    case_texts["stimulus_at"] = where
    if not (case_texts.get("positions") or "").strip():
        root = where.lower() in ("soma", "root") or where == tree.root_label
        case_texts["positions"] = "soma" if root else f"soma, {where}"
    span = read_form([_SPECS["span"]], texts)
    errors = dict(span.errors)
    case = None
    try:
        case = read_tree_case(_cell(tree, audit), case_texts, _LABELS)
    except CaseInputError as exc:
        errors.update({_APP.get(f, f): message for f, message in exc.errors.items()})
    except InputError as exc:  # the membrane and the tree together (e.g. a tree without pieces)
        errors["stimulus_at"] = str(exc)
    if case is None or errors:
        return None, errors
    until = float(span.values["span"])  # type: ignore[arg-type]
    times = tuple(np.linspace(0.0, until, TIME_POINTS).tolist())
    numbers = tuple(sorted((k, v) for k, (v, _) in case.parameters().items()))
    key = (tree_key, audit, stimulus, numbers, case.stimulus_label, case.labels, until, reduced)
    return TimeSetup(key, case, times, audit, stimulus, reduced), {}


def features(setup: TimeSetup, tolerance: float = TOLERANCE) -> tuple[ResponseFeatures, ...]:
    """Peak, time to peak, rise time, half-width and attenuation at each reading point
    (:func:`cabletheory.waveform.response_features` on the tree's exact response)."""
    from ..waveform import response_features

    return response_features(setup.case, tolerance=tolerance)


def _stimulus_rows(setup: TimeSetup) -> list[Row]:
    s = setup.case.stimulus
    rows = [Row("stimulus", "stimulus", STIMULUS_CHOICES[setup.stimulus_choice])]
    if isinstance(s, VoltageStep):
        rows.append(Row("clamp_amplitude", "clamp step", s.amplitude, "voltage"))
    elif isinstance(s, AlphaCurrent):
        rows += [Row("peak_current", "peak current", s.peak, "current"),
                 Row("time_to_peak", "time to peak", s.time_to_peak, "time")]
    else:
        rows.append(Row("current", "current", s.amplitude, "current"))
        if isinstance(s, CurrentPulse):
            rows.append(Row("duration", "pulse length", s.duration, "time"))
    return rows


def point_name(label: str, tree: Tree) -> str:
    """'soma' for the root, else 'point 412'."""
    return "soma" if label.strip().lower() in ("soma", "root") or label == tree.root_label else f"point {label}"


def time_report(setup: TimeSetup, response: TreeResponse, found: Sequence[ResponseFeatures] | None = None,
                cost: ReductionCost | str | None = None) -> Report:
    """The time course at the reading points with its error estimate, the response's features
    (``found``, once computed) and the reduction's response beside the tree's (``cost``; a string
    says why there is none)."""
    case, audit = setup.case, setup.audit
    tree = case.cell.tree
    names = [point_name(label, tree) for label in case.labels]
    where = point_name(case.stimulus_label, tree)
    inputs = [
        Row("file", "file", tree.source),
        Row("membrane_resistivity", "Rm", audit.membrane_resistivity, "membrane_resistivity"),
        Row("axial_resistivity", "Ri", audit.axial_resistivity, "axial_resistivity"),
        Row("membrane_capacitance", "Cm", audit.membrane_capacitance, "membrane_capacitance"),
        Row("tips", "tips", "killed (held at rest)" if audit.killed_tips else "as in the file"),
        *_stimulus_rows(setup),
        Row("stimulus_at", "stimulus at", where),
        *(Row(f"reading_point_{j + 1}", f"V(t) at ({j + 1})", name) for j, name in enumerate(names)),
        Row("time_course_until", "V(t) until", setup.times[-1], "time"),
        Row("truncation", "truncation (share of the reference voltage)", response.tolerance, "dimensionless"),
    ]
    results = [
        Row("membrane_time_constant", "τm = Rm·Cm", case.membrane_time_constant, "time"),
        Row("reference_voltage", "reference voltage", response.reference_voltage, "voltage"),
        Row("error_bound", "error of each V ≤", response.error_bound, "voltage"),
    ]
    if response.steady_state is not None:
        results += [Row(f"final_voltage_{j + 1}", f"final V at {name}", float(v), "voltage")
                    for j, (name, v) in enumerate(zip(names, response.steady_state, strict=True))]
    t = np.asarray(response.times)
    series = [Series(f"at {name}", t * 1e3, response.voltage[:, j] * 1e3) for j, name in enumerate(names)]
    tables = [Table("time_course", "V(t) at the reading points", (
        Column("time", "t", t, "time"),
        *(Column(f"voltage_at_{label}", f"V at {name}", response.voltage[:, j], "voltage")
          for j, (label, name) in enumerate(zip(case.labels, names, strict=True))),
        *(Column(f"error_at_{label}", f"error estimate at {name}", response.errors[:, j], "voltage")
          for j, (label, name) in enumerate(zip(case.labels, names, strict=True)))))]
    notes: list[str] = list(response.notes)
    if found is not None:
        held = case.shape in ("step", "clamp")
        tables.append(Table("features", "Response features", (
            Column("point", "point", [n.removeprefix("point ") for n in names]),
            Column("peak", "final V" if held else "peak", [f.peak for f in found], "voltage"),
            Column("time_to_peak", "time to peak", [f.time_to_peak for f in found], "time"),
            Column("rise_time", "10–90 % rise", [f.rise_time for f in found], "time"),
            Column("half_width", "half-width", [f.half_width for f in found], "time"),
            Column("attenuation", "relative peak", [f.attenuation for f in found], "dimensionless"))))
    if isinstance(cost, str):
        notes.append(cost)
    elif cost is not None:
        results += [
            Row("reduced_model", "reduced model", cost.reduced_model),
            Row("reduction_largest_difference", "reduced − tree, largest", cost.largest_difference, "voltage"),
            Row("reduction_when", "… at t", cost.when, "time"),
            Row("reduced_electrotonic_length", "L of the reduction", cost.electrotonic_length, "dimensionless"),
        ]
        if cost.tree_modes.time_constants.size:
            results.append(Row("tree_tau0", "τ0 tree (seen at the soma)", float(cost.tree_modes.time_constants[0]),
                               "time"))
        if cost.reduced_time_constants.size:
            results.append(Row("reduced_tau0", "τ0 reduction", float(cost.reduced_time_constants[0]), "time"))
        if math.isfinite(cost.peeled_length):
            results.append(Row("peeled_length", "L that peeling would report", cost.peeled_length, "dimensionless"))
        ct = np.asarray(cost.times)
        soma_shown = case.stimulus_site.piece == -1 and any(point_name(lb, tree) == "soma" for lb in case.labels)
        if not soma_shown:
            series.append(Series("soma, tree (input at soma)", ct * 1e3, cost.tree_voltage * 1e3))
            notes.append("the reduction is compared with the stimulus at the soma: a point on a branch has no "
                         "place on the equivalent cylinder")
        series.append(Series(f"soma, {cost.reduced_model}", ct * 1e3, cost.reduced_voltage * 1e3))
        tables.append(Table("reduction", "The soma's response: tree and reduction", (
            Column("time", "t", ct, "time"),
            Column("tree_voltage", "tree", cost.tree_voltage, "voltage"),
            Column("reduced_voltage", cost.reduced_model, cost.reduced_voltage, "voltage"))))
        notes += list(cost.notes)
    results.append(Row("method", "method", response.method))
    least = 1e-3 * response.reference_voltage * 1e3  # mV: round-off is not drawn as a curve
    plot = PlotSpec(f"exact V(t), {STIMULUS_CHOICES[setup.stimulus_choice]} at {where}", "t (ms)", "V (mV)",
                    tuple(series), y_span=least)
    title = f"Tree: {STIMULUS_CHOICES[setup.stimulus_choice]} at {where} of {tree.source}"
    return Report("tree_time_course", title, tuple(inputs), tuple(results), tuple(tables), (plot,), tuple(notes))


def features_lines(report: Report) -> list[str]:
    """The features table of a time-course report as aligned text, one line per feature and one
    column per reading point (header first); none computed yet: []."""
    from .report import cell_text

    table = next((t for t in report.tables if t.key == "features"), None)
    if table is None:
        return []
    points, *columns = table.columns
    cells = [["", *(str(p) for p in points.values)]]
    for c in columns:
        values = [float(v) for v in c.values]  # type: ignore[arg-type]
        if not any(math.isfinite(v) for v in values):
            continue  # e.g. no time to peak for a held stimulus
        cells.append([c.label, *(cell_text(v, c.kind) if math.isfinite(v) else "—" for v in values)])
    widths = [max(len(row[j]) for row in cells) for j in range(len(cells[0]))]
    return ["  ".join(text.ljust(w) if j == 0 else text.rjust(w) for j, (text, w) in
                      enumerate(zip(row, widths, strict=True))).rstrip() for row in cells]


# ---------------------------------------------------------------------------------------------
# the electrotonic map
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class MapSetup:
    key: tuple[object, ...]
    frequency: float
    audit: TreeSetup = field(compare=False)


def read_map_form(texts: Mapping[str, str], audit: TreeSetup, tree_key: object
                  ) -> tuple[MapSetup | None, dict[str, str]]:
    """The map's frequency (Hz), or its field's message."""
    form = read_form([_SPECS["frequency"]], texts)
    if form.errors:
        return None, dict(form.errors)
    f = float(form.values["frequency"])  # type: ignore[arg-type]
    return MapSetup((tree_key, audit, f), f, audit), {}


def compute_map(tree: Tree, setup: MapSetup) -> ElectrotonicMap:
    from ..tree_time import electrotonic_map

    return electrotonic_map(_cell(tree, setup.audit), setup.frequency)


def _listed(tree: Tree) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Which nodes the map's table lists (the root, branch points and tips; index into the map's
    sites: 0 the root, i + 1 the distal node of piece i), their kinds and path distances (m)."""
    parents = np.asarray(tree.parents)
    n = len(tree)
    children = np.bincount(parents[parents >= 0], minlength=n)
    distance = np.zeros(n + 1)
    lengths = np.asarray(tree.lengths, dtype=float)
    for i in range(n):  # parents come before their children
        distance[i + 1] = distance[parents[i] + 1] + lengths[i]
    pieces = np.flatnonzero(children != 1)
    nodes = np.concatenate(([0], pieces + 1))
    kinds = np.array(["soma" if tree.soma_area is not None else "root"]
                     + ["tip" if children[i] == 0 else "branch point" for i in pieces], dtype=object)
    return nodes, kinds, distance[nodes]


def map_report(tree: Tree, setup: MapSetup, emap: ElectrotonicMap) -> Report:
    """The attenuation to and from the soma and the centroid delays at the root, every branch
    point and every tip, in the tree's order (parents before children)."""
    nodes, kinds, distance = _listed(tree)
    labels = ["soma" if k == 0 else tree.labels[k - 1] for k in nodes]
    audit = setup.audit
    inputs = (
        Row("file", "file", tree.source),
        Row("membrane_resistivity", "Rm", audit.membrane_resistivity, "membrane_resistivity"),
        Row("axial_resistivity", "Ri", audit.axial_resistivity, "axial_resistivity"),
        Row("membrane_capacitance", "Cm", audit.membrane_capacitance, "membrane_capacitance"),
        Row("tips", "tips", "killed (held at rest)" if audit.killed_tips else "as in the file"),
        Row("frequency", "map frequency", setup.frequency, "frequency"),
    )
    to_root = np.asarray(emap.attenuation_to_root)[nodes]
    from_root = np.asarray(emap.attenuation_from_root)[nodes]
    finite = to_root[np.isfinite(to_root)]
    tips = kinds == "tip"
    results = (
        Row("points", "points listed", int(nodes.size)),
        Row("input_resistance", "|Z| at the soma", float(emap.input_impedance[0]), "resistance"),
        Row("largest_attenuation_to_soma", "largest attenuation to the soma", float(finite.max()) if finite.size
            else math.nan, "dimensionless"),
        Row("largest_delay_to_soma", "longest delay to the soma",
            float(np.nanmax(np.asarray(emap.delay_to_root)[nodes][tips])) if tips.any() else math.nan, "time"),
    )
    table = Table("electrotonic_map", "Electrotonic map: attenuation and centroid delay", (
        Column("point", "point", labels),
        Column("kind", "kind", list(kinds)),
        Column("path_distance", "path", distance, "length"),
        Column("attenuation_to_soma", "÷ to soma", to_root, "dimensionless"),
        Column("attenuation_from_soma", "÷ from soma", from_root, "dimensionless"),
        Column("delay_to_soma", "delay to soma", np.asarray(emap.delay_to_root)[nodes], "time"),
        Column("delay_from_soma", "delay from soma", np.asarray(emap.delay_from_root)[nodes], "time"),
        Column("input_impedance", "|Z| here", np.asarray(emap.input_impedance)[nodes], "resistance")))
    at = "steady state" if setup.frequency == 0 else format_quantity(setup.frequency, "frequency")
    notes = ("÷ to soma = V here / V at the soma for an input here; ÷ from soma = V at the soma / V here for an "
             "input at the soma; delays are centroid delays (Agmon-Snir & Segev 1993), independent of frequency",)
    return Report("tree_map", f"Electrotonic map ({at}) of {tree.source}", inputs, results, (table,), (), notes)


def attenuation_bin(value: float) -> int:
    """The colour bin (index into :data:`MAP_COLOURS`) of an attenuation ratio."""
    if not math.isfinite(value):
        return len(ATTENUATION_BINS)
    return int(np.searchsorted(ATTENUATION_BINS, value, side="right"))


def attenuation_bins(values: Sequence[float] | np.ndarray) -> np.ndarray:
    """:func:`attenuation_bin` of every value at once."""
    v = np.asarray(values, dtype=float)
    return np.where(np.isfinite(v), np.searchsorted(ATTENUATION_BINS, v, side="right"), len(ATTENUATION_BINS))


def bin_labels() -> list[str]:
    edges = ("1", *(f"{b:g}" for b in ATTENUATION_BINS))
    return [f"{lo}–{hi}" for lo, hi in itertools.pairwise(edges)] + [f"> {edges[-1]}"]


_BITS = ((0x01, 0x08), (0x02, 0x10), (0x04, 0x20), (0x40, 0x80))  # braille dot (row, column) -> bit


def dendrogram(tree: Tree, values: Sequence[float] | np.ndarray, width: int, height: int,
               layout: tuple[list[str], list[list[int]]] | None = None) -> tuple[list[str], list[list[int]]]:
    """A coarse drawing of the tree in braille dots: path distance from the soma across, each tip on
    its own row of dots (branch points midway between their children), each piece drawn in the
    colour bin of ``values`` at its distal node (``values[i + 1]`` for piece i, ``values[0]`` the
    root). Returns the text rows and, per cell, the bin that coloured it (-1: blank). ``layout``
    is :func:`dendrogram_layout` of the same tree and size, when the caller keeps it (the drawing
    does not depend on the values, only its colours do)."""
    rows, nodes = layout if layout is not None else dendrogram_layout(tree, width, height)
    bins = attenuation_bins(values).tolist()
    return rows, [[bins[k] if k >= 0 else -1 for k in line] for line in nodes]


def dendrogram_layout(tree: Tree, width: int, height: int) -> tuple[list[str], list[list[int]]]:
    """The drawing of :func:`dendrogram` and, per cell, the node whose value colours it (0 the root,
    i + 1 the distal node of piece i; -1 blank)."""
    parents = np.asarray(tree.parents)
    n = len(tree)
    width, height = max(width, 1), max(height, 1)
    cols, rows = 2 * width, 4 * height
    bits = [[0] * width for _ in range(height)]
    owner = [[-1] * width for _ in range(height)]
    if n == 0:
        return [" " * width] * height, owner
    lengths = np.asarray(tree.lengths, dtype=float)
    reach = np.zeros(n)
    for i in range(n):
        reach[i] = (reach[parents[i]] if parents[i] >= 0 else 0.0) + lengths[i]
    children: list[list[int]] = [[] for _ in range(n)]
    for i in range(n):
        if parents[i] >= 0:
            children[parents[i]].append(i)
    # tips in depth-first order give the rows; a piece sits at the mean row of its children
    order: list[int] = []
    stack = [i for i in range(n) if parents[i] < 0][::-1]
    while stack:
        i = stack.pop()
        order.append(i)
        stack.extend(children[i][::-1])
    tips = [i for i in order if not children[i]]
    y = np.zeros(n)
    for k, i in enumerate(tips):
        y[i] = k
    for i in reversed(order):
        if children[i]:
            y[i] = float(np.mean([y[c] for c in children[i]]))
    span_x = float(reach.max()) or 1.0
    span_y = max(len(tips) - 1, 1)

    def dot(c: int, r: int, node: int) -> None:
        if 0 <= c < cols and 0 <= r < rows:
            bits[r // 4][c // 2] |= _BITS[r % 4][c % 2]
            owner[r // 4][c // 2] = node

    def col(x: float) -> int:
        return round(x / span_x * (cols - 1))

    def row(v: float) -> int:
        return round(v / span_y * (rows - 1)) if len(tips) > 1 else rows // 2

    for i in order:
        start = reach[parents[i]] if parents[i] >= 0 else 0.0
        r = row(y[i])
        for c in range(col(start), col(reach[i]) + 1):
            dot(c, r, i + 1)
        if parents[i] >= 0:  # the joint: a vertical run at the parent's end from its row to this one
            c0, r0 = col(start), row(y[parents[i]])
            for rr in range(min(r0, r), max(r0, r) + 1):
                dot(c0, rr, int(parents[i]) + 1)
    text = ["".join(chr(0x2800 + b) if b else " " for b in line) for line in bits]
    return text, owner
