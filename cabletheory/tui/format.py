"""Turn the core's result objects into :class:`~cabletheory.tui.report.Report` objects.

One function per view. They only select, label and arrange what the core computed (SI
values with their kinds); units and prefixes are added when the report is shown or written.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ..cable import CableSummary, Cylinder, summarise
from ..output import CYLINDER_LABELS, far_end_text, input_resistance_label
from ..units import format_quantity
from .forms import (
    EXACT_TOLERANCE,
    MODEL_CHOICES,
    STIMULUS_CHOICES,
    CaseSetup,
    ChargingSetup,
    CheckSetup,
    TreeSetup,
    parse_file_quantity,
)
from .report import Column, PlotSpec, Report, Row, Series, Table

if TYPE_CHECKING:  # pragma: no cover
    from pathlib import Path

    from ..tree import Tree, TreeReport
    from ..verify.comparison import Comparison, ExactCase
    from ..verify.reading import Recording

__all__ = [
    "analyse_check",
    "analyse_file",
    "audit_tree",
    "cable_report",
    "cable_summary",
    "charging_report",
    "check_report",
    "profile_positions",
    "read_tree",
    "tree_outline",
    "tree_report",
    "worst_points",
]

PROFILE_POINTS = 41
SEMI_INFINITE_SPAN = 5.0  # a semi-infinite cable is shown over 0 ≤ X ≤ 5 (e^-5 < 1 %)


def profile_positions(cylinder: Cylinder, points: int = PROFILE_POINTS) -> np.ndarray:
    """Evenly spaced distances (m) from the origin to the far end (or to 5 λ if semi-infinite)."""
    span = cylinder.length if math.isfinite(cylinder.length) else SEMI_INFINITE_SPAN * cylinder.length_constant
    return np.linspace(0.0, span, points)


def cable_summary(cylinder: Cylinder, frequency: float | None) -> CableSummary:
    """The core's summary with the profile the view plots."""
    return summarise(cylinder, profile_positions(cylinder), frequency)


def distance_text(x: float) -> str:
    """A distance for labels: '250.0 µm', and '0 µm' rather than '0 m' at the origin."""
    return "0 µm" if x == 0 else format_quantity(x, "length")


def cable_report(s: CableSummary) -> Report:
    """Inputs, steady and sinusoidal results, the V(X) profile table and its plot."""
    c = s.cylinder
    semi_infinite = math.isinf(c.length)
    labels = CYLINDER_LABELS
    inputs = [
        Row("membrane_resistivity", labels["membrane_resistivity"], c.membrane_resistivity, "membrane_resistivity"),
        Row("axial_resistivity", labels["axial_resistivity"], c.axial_resistivity, "axial_resistivity"),
        Row("membrane_capacitance", labels["membrane_capacitance"], c.membrane_capacitance, "membrane_capacitance"),
        Row("diameter", labels["diameter"], c.diameter, "length"),
        Row("length", labels["length"], c.length, "length", shown="semi-infinite" if semi_infinite else None),
        Row("end_conductance", labels["end_conductance"], c.end_conductance, "conductance", shown=far_end_text(c)),
        Row("frequency", labels["frequency"], s.frequency, "frequency",
            shown=None if s.frequency is not None else "steady state only"),
    ]
    results = [
        Row("length_constant", labels["length_constant"], s.length_constant, "length"),
        Row("membrane_time_constant", labels["membrane_time_constant"], s.membrane_time_constant, "time"),
        Row("electrotonic_length", labels["electrotonic_length"], s.electrotonic_length, "dimensionless"),
        Row("semi_infinite_input_resistance", labels["semi_infinite_input_resistance"],
            s.semi_infinite_input_resistance, "resistance"),
        Row("input_resistance", input_resistance_label(c), s.input_resistance, "resistance"),
        Row("input_conductance", labels["input_conductance"], s.input_conductance, "conductance"),
        Row("far_end_voltage_ratio", labels["far_end_voltage_ratio"], s.far_end_voltage_ratio, "dimensionless"),
    ]
    if not semi_infinite and 0 < c.end_conductance < math.inf:
        results.insert(4, Row("end_conductance_ratio", labels["end_conductance_ratio"], s.end_conductance_ratio,
                              "dimensionless"))
    if s.frequency is not None and s.input_impedance is not None:
        z = s.input_impedance
        results += [
            Row("input_impedance_magnitude", labels["input_impedance_magnitude"], abs(z), "resistance"),
            Row("input_impedance_phase", labels["input_impedance_phase"], math.atan2(z.imag, z.real), "angle"),
            Row("length_constant_at_frequency",
                labels["length_constant_at_frequency"].format(frequency=format_quantity(s.frequency, "frequency")),
                s.length_constant_at_frequency, "length"),
        ]
    if s.compartments_needed is not None:
        results.append(Row("compartments_needed", f"compartments, {s.compartment_fraction:g} λ at "
                                                  f"{s.advice_frequency:g} Hz rule", s.compartments_needed))
    X = s.electrotonic_positions
    columns = [
        Column("position", "x", s.positions, "length"),
        Column("electrotonic_position", "X = x/λ", X, "dimensionless"),
        Column("voltage_ratio", "V(X)/V(0)", s.voltage_ratio, "dimensionless"),
        Column("transfer_resistance", "transfer R", s.transfer_resistance, "resistance"),
    ]
    series = [Series("steady", X, np.asarray(s.voltage_ratio))]
    if s.ac_voltage_ratio is not None:
        ac_ratio = s.ac_voltage_ratio
        columns.append(Column("ac_voltage_ratio", "|V(X)/V(0)| at f", ac_ratio, "dimensionless"))
        series.append(Series(f"{s.frequency:g} Hz", X, ac_ratio))
    plot = PlotSpec("Voltage along the cable, input at X = 0", "X = x/λ", "V(X)/V(0)", tuple(series))
    title = "Single cylinder: steady state" + (f" and {s.frequency:g} Hz" if s.frequency is not None else "")
    return Report("cylinder", title, tuple(inputs), tuple(results),
                  (Table("profile", "Profile (input at the origin)", tuple(columns)),), (plot,))


# ---------------------------------------------------------------------------------------------
# charging view (exact transients)
# ---------------------------------------------------------------------------------------------
def _stimulus_rows(setup: CaseSetup) -> list[Row]:
    s = setup.stimulus
    rows = [Row("stimulus", "stimulus", STIMULUS_CHOICES[setup.stimulus_choice])]
    if setup.stimulus_choice == "clamp":
        rows.append(Row("clamp_amplitude", "clamp step", s.amplitude, "voltage"))
    elif setup.stimulus_choice == "alpha":
        rows += [Row("peak_current", "peak current", s.peak, "current"),
                 Row("time_to_peak", "time to peak", s.time_to_peak, "time")]
    else:
        rows.append(Row("current", "current", s.amplitude, "current"))
        if setup.stimulus_choice == "pulse":
            rows.append(Row("duration", "pulse length", s.duration, "time"))
    rows.append(Row("stimulus_position", "stimulus at", s.position, "length"))
    return rows


def _model_rows(setup: CaseSetup) -> list[Row]:
    from ..transient import BallAndStick, InfiniteCable

    m = setup.model
    cylinder = m.cylinder if isinstance(m, BallAndStick) else m
    rows = [
        Row("model", "model", MODEL_CHOICES[setup.model_choice]),
        Row("membrane_resistivity", CYLINDER_LABELS["membrane_resistivity"], cylinder.membrane_resistivity,
            "membrane_resistivity"),
        Row("axial_resistivity", CYLINDER_LABELS["axial_resistivity"], cylinder.axial_resistivity, "axial_resistivity"),
        Row("membrane_capacitance", CYLINDER_LABELS["membrane_capacitance"], cylinder.membrane_capacitance,
            "membrane_capacitance"),
        Row("diameter", "diameter", cylinder.diameter, "length"),
    ]
    if not isinstance(m, InfiniteCable):
        rows += [Row("length", "length", cylinder.length, "length",
                     shown="semi-infinite" if math.isinf(cylinder.length) else None),
                 Row("end_conductance", "far end", cylinder.end_conductance, "conductance",
                     shown=far_end_text(cylinder))]
    if isinstance(m, BallAndStick):
        rows.append(Row("soma_diameter", "soma diameter", m.soma_diameter, "length"))
    return rows


def curve_key(value: float, kind: str) -> str:
    """The key of a saved curve, naming where or when it was taken: 'voltage_at_800um',
    'voltage_at_-50um', 'voltage_at_2.5ms' (µm for positions, ms for times, up to 6 digits)."""
    number, unit = (value * 1e6, "um") if kind == "length" else (value * 1e3, "ms")
    return f"voltage_at_{number:.6g}{unit}"


def charging_report(setup: ChargingSetup, tolerance: float = 1e-10) -> Report:
    """Run the exact solver twice (V(t) at the watched sites, V(X) at the chosen moments) and
    arrange the time constants, the error bound and both families of curves."""
    from ..transient import BallAndStick, InfiniteCable, charge

    case = setup.case
    m = case.model
    over_time = charge(m, case.stimulus, setup.times, setup.watch, tolerance=tolerance)
    over_space = charge(m, case.stimulus, setup.moments, setup.positions, tolerance=tolerance)
    lam, tau = over_time.length_constant, over_time.membrane_time_constant
    results = [
        Row("length_constant", CYLINDER_LABELS["length_constant"], lam, "length"),
        Row("membrane_time_constant", CYLINDER_LABELS["membrane_time_constant"], tau, "time"),
    ]
    cylinder = m.cylinder if isinstance(m, BallAndStick) else m
    if not isinstance(m, InfiniteCable) and math.isfinite(cylinder.length):
        results.append(Row("electrotonic_length", CYLINDER_LABELS["electrotonic_length"], cylinder.electrotonic_length,
                           "dimensionless"))
    if isinstance(m, BallAndStick):
        results.append(Row("conductance_ratio", "ρ   dendrite/soma conductance", m.conductance_ratio,
                           "dimensionless"))
    if over_time.time_constants.size:
        for n, value in enumerate(over_time.time_constants):
            label = f"τ{n}  {'slowest ' if n == 0 else ''}time constant"
            results.append(Row(f"time_constant_{n}", label, float(value), "time"))
    else:
        results.append(Row("time_constants", "time constants", "none: an unbounded cable has a continuum"))
    if over_time.steady_state is not None:
        for x, v in zip(setup.watch, over_time.steady_state, strict=True):
            results.append(Row(f"final_voltage_{len(results)}", f"final V at {distance_text(x)}",
                               float(v), "voltage"))
    bound = max(over_time.error_bound, over_space.error_bound)
    results += [
        Row("largest_error_bound", "error bound of every value", bound, "voltage"),
        Row("method", "method", over_time.method),
    ]
    watch_labels = [f"x = {distance_text(x)}" for x in setup.watch]
    moment_labels = [f"t = {format_quantity(t, 'time')}" for t in setup.moments]
    t = np.asarray(over_time.times)
    X = np.asarray(over_space.positions) / lam
    # a curve below a thousandth of the case's reference voltage is drawn flat: round-off (a killed
    # end's 1e-18 V) is not magnified into what looks like a charging curve
    least = 1e-3 * setup.case.case.reference_voltage * 1e3  # mV
    time_plot = PlotSpec("V(t) at the chosen positions", "t (ms)", "V (mV)", tuple(
        Series(label, t * 1e3, over_time.voltage[:, j] * 1e3) for j, label in enumerate(watch_labels)),
        y_span=least)
    space_plot = PlotSpec("V(X) at the chosen times", "X = x/λ", "V (mV)", tuple(
        Series(label, X, over_space.voltage[i, :] * 1e3) for i, label in enumerate(moment_labels)), y_span=least)
    tables = (
        Table("time_course", "V(t) at the chosen positions", (
            Column("time", "t", t, "time"),
            *(Column(curve_key(x, "length"), f"V at {label[4:]}", over_time.voltage[:, j], "voltage")
              for j, (x, label) in enumerate(zip(setup.watch, watch_labels, strict=True))))),
        Table("profile", "V(X) at the chosen times", (
            Column("position", "x", over_space.positions, "length"),
            Column("electrotonic_position", "X", X, "dimensionless"),
            *(Column(curve_key(moment, "time"), f"V at {label[4:]}", over_space.voltage[i, :], "voltage")
              for i, (moment, label) in enumerate(zip(setup.moments, moment_labels, strict=True))))),
    )
    reference = case.case.reference_voltage
    notes = (*over_time.notes, f"requested truncation {tolerance:g} of the reference voltage "
                               f"{format_quantity(reference, 'voltage')} = "
                               f"{format_quantity(tolerance * reference, 'voltage')}")
    title = f"Charging: {STIMULUS_CHOICES[case.stimulus_choice]} into a {MODEL_CHOICES[case.model_choice]}"
    curves = [
        *(Row(f"time_course_position_{j + 1}", f"V(t) at ({j + 1})", x, "length") for j, x in enumerate(setup.watch)),
        Row("time_course_until", "V(t) until", setup.times[-1], "time"),
        *(Row(f"profile_time_{i + 1}", f"V(X) at ({i + 1})", t, "time") for i, t in enumerate(setup.moments)),
        Row("reference_voltage", "reference voltage", reference, "voltage"),
        Row("truncation", "truncation (share of the reference voltage)", tolerance, "dimensionless"),
        Row("truncation_voltage", "truncation", tolerance * reference, "voltage"),
    ]
    return Report("charging", title, tuple(_model_rows(case) + _stimulus_rows(case) + curves), tuple(results),
                  tables, (time_plot, space_plot), notes)


# ---------------------------------------------------------------------------------------------
# tree view (3/2 audit, equivalent cylinder)
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class OutlineNode:
    """One line of the tree outline: the root, a stem, a branch point or a tip."""

    key: str  # unique id for the widget
    parent: int  # index of the parent line in the outline (-1 for the root)
    text: str
    flag: bool  # departs from Rall's conditions beyond the tolerance


def read_tree(path: Path) -> Tree:
    """Read a morphology (SWC or tree outline) and build its tree: the slow part for a large file,
    done once per file (the view keeps the tree while only membrane values or tolerances change)."""
    from ..inputs import read_outline_value
    from ..morphology import read_morphology
    from ..tree import build_tree

    return build_tree(read_morphology(path, read_outline_value))


def audit_tree(tree: Tree, setup: TreeSetup) -> TreeReport:
    """Audit a tree already read with the membrane, tips and tolerances of the form."""
    from ..tree import Tolerances, analyse_tree

    tolerances = Tolerances(branch_ratio=setup.branch_ratio_tolerance, tip_spread=setup.tip_spread_tolerance)
    return analyse_tree(tree, setup.membrane_resistivity, setup.axial_resistivity, setup.membrane_capacitance,
                        tolerances=tolerances, killed_tips=setup.killed_tips)


def analyse_file(setup: TreeSetup) -> TreeReport:
    """Read the morphology, build the tree and audit it."""
    return audit_tree(read_tree(setup.path), setup)


def worst_points(r: TreeReport) -> tuple[str | None, str | None]:
    """The outline keys of the branch point furthest from the 3/2 power rule (largest |ratio − 1|)
    and of the tip furthest from the middle of the tips' range of electrotonic distance (None when
    the tree has no branch point, or no tip)."""
    worst_branch = worst_tip = None
    ratios = np.asarray(r.branch_points.ratios, dtype=float)
    if ratios.size:
        worst_branch = f"seg-{r.branch_points.ids[int(np.argmax(np.abs(ratios - 1.0)))]}"
    tip_x = np.asarray(r.tips.electrotonic_distances, dtype=float)
    if tip_x.size:
        middle = 0.5 * (float(tip_x.max()) + float(tip_x.min()))
        worst_tip = f"seg-{r.tips.ids[int(np.argmax(np.abs(tip_x - middle)))]}"
    return worst_branch, worst_tip


def tree_outline(r: TreeReport) -> list[OutlineNode]:
    """Root, stems, branch points (with their 3/2 ratio) and tips (with their X), as a hierarchy.

    The parent of each line is its nearest ancestor that is itself a line; unbranched runs
    of pieces between them are not listed.
    """
    from ..tree import SWC_NAMES

    t = r.tree
    parents = np.asarray(t.parents)
    n = len(t)
    children = np.bincount(parents[parents >= 0], minlength=n)
    bad = {(v.kind, v.id) for v in r.violations}
    ratio = dict(zip(r.branch_points.ids, r.branch_points.ratios.tolist(), strict=True))
    bp_x = dict(zip(r.branch_points.ids, r.branch_points.electrotonic_distances.tolist(), strict=True))
    tip_x = dict(zip(r.tips.ids, r.tips.electrotonic_distances.tolist(), strict=True))
    stems = {s.id: s for s in r.stems}
    nodes = [OutlineNode("root", -1, f"{t.root_label} (input site)", False)]
    line_of = [-1] * n  # outline line of the nearest listed ancestor-or-self of each piece
    for i in range(n):
        p = int(parents[i])
        above = 0 if p < 0 else line_of[p]
        label = t.labels[i]
        text = None
        flag = False
        if p < 0:
            s = stems[label]
            text = (f"stem {label} · {SWC_NAMES.get(s.type, f'type {s.type}')} · "
                    f"d {format_quantity(s.diameter, 'length', 3)}")
            if children[i] != 1:  # the stem's first piece is also a branch point or a tip
                nodes.append(OutlineNode(f"stem-{label}", above, text, False))
                above = len(nodes) - 1
                text = None
        if text is None and children[i] >= 2:
            flag = ("branch_ratio", label) in bad
            text = f"{'✗' if flag else '✓'} {label}  ratio {ratio[label]:.3f}  X {bp_x[label]:.3f}"
        elif text is None and children[i] == 0:
            flag = ("tip_distance", label) in bad
            text = f"{'✗' if flag else '•'} tip {label}  X {tip_x[label]:.3f}"
        if text is None:
            line_of[i] = above
            continue
        nodes.append(OutlineNode(f"seg-{label}", above, text, flag))
        line_of[i] = len(nodes) - 1
    return nodes


def tree_report(r: TreeReport) -> Report:
    """Verdict with reasons, equivalent cylinder, exact and reduced input resistance, tables, plot."""
    from ..tree import describe_tips

    t, c = r.tree, r.equivalent_cylinder
    inputs = [
        Row("file", "file", t.source),
        Row("membrane_resistivity", "Rm", r.membrane_resistivity, "membrane_resistivity"),
        Row("axial_resistivity", "Ri", r.axial_resistivity, "axial_resistivity"),
        Row("membrane_capacitance", "Cm", r.membrane_capacitance, "membrane_capacitance"),
        Row("tips", "tips", describe_tips(r)),
        Row("branch_ratio_tolerance", "ratio tolerance", r.tolerances.branch_ratio),
        Row("tip_spread_tolerance", "tip spread tolerance (λ)", r.tolerances.tip_spread),
    ]
    verdict = "reducible" if r.reducible else "NOT reducible"
    results = [
        Row("verdict", "verdict", verdict, flag=not r.reducible),
        Row("branch_points", "branch points", len(r.branch_points.ids),
            flag=any(v.kind == "branch_ratio" for v in r.violations)),
        Row("tips", "tips", len(r.tips.ids)),
        Row("tip_distance_range", "tip X range",
            f"{r.tip_distance_min:.4g} – {r.tip_distance_max:.4g}",
            flag=any(v.kind == "tip_distance" for v in r.violations)),
        Row("equivalent_diameter", "equivalent cylinder d", c.diameter, "length"),
        Row("equivalent_length", "equivalent cylinder ℓ", c.length, "length"),
        Row("equivalent_electrotonic_length", "equivalent cylinder L", c.electrotonic_length, "dimensionless"),
        Row("input_resistance", "Rin exact (whole tree)", r.input_resistance, "resistance"),
        Row("reduced_input_resistance", "Rin reduced model", r.reduced_input_resistance, "resistance"),
        Row("difference_percent", "reduced − exact", r.difference_percent, None, "%",
            shown=f"{r.difference_percent:+.3g} %"),
    ]
    if r.conductance_ratio is not None:
        results.append(Row("conductance_ratio", "ρ = G_D/G_S", r.conductance_ratio,
                           "dimensionless"))
    results.append(Row("membrane_area", "dendritic area", r.membrane_area, "area"))
    bp, tips = r.branch_points, r.tips
    bad = {(v.kind, v.id) for v in r.violations}
    tables = (
        Table("branch_points", "Branch points", (
            Column("id", "branch point", list(bp.ids)),
            Column("ratio", "Σd_child^3/2 / d_parent^3/2", bp.ratios, "dimensionless"),
            Column("electrotonic_distance", "X", bp.electrotonic_distances, "dimensionless"),
            Column("parent_diameter", "parent d", bp.parent_diameters, "length"),
            Column("outside_tolerance", "outside tolerance", [("branch_ratio", i) in bad for i in bp.ids]),
            Column("line", "line", bp.lines.tolist()))),
        Table("tips", "Tips", (
            Column("id", "tip", list(tips.ids)),
            Column("electrotonic_distance", "X", tips.electrotonic_distances, "dimensionless"),
            Column("path_length", "path length", tips.path_lengths, "length"),
            Column("stem", "stem", list(tips.stems)),
            Column("outside_tolerance", "outside tolerance", [("tip_distance", i) in bad for i in tips.ids]),
            Column("line", "line", tips.lines.tolist()))),
    )
    cable = r.equivalent_cable
    x = np.asarray(cable.positions)
    profile = Series("tree", x, np.asarray(cable.equivalent_diameters) * 1e6)
    cylinder = Series("equivalent cylinder", np.array([0.0, c.electrotonic_length]),
                      np.array([c.diameter, 0.0]) * 1e6)
    plot = PlotSpec("Equivalent cable: (Σ d^3/2)^2/3 against X", "X from the input site", "d (µm)",
                    (profile, cylinder), steps=True)
    notes = tuple(r.reasons) + tuple(r.notes)
    return Report("tree", f"Tree: {t.source}", tuple(inputs), tuple(results), tables, (plot,), notes)


# ---------------------------------------------------------------------------------------------
# check view (a simulator's output against the exact solution)
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class CheckAnalysis:
    """What the worker computes: the recording, the exact case and the comparison (which keeps the
    error of every sample)."""

    recording: Recording
    case: ExactCase
    comparison: Comparison

    @property
    def errors(self) -> np.ndarray:
        """V, simulated − exact at every sample (the comparison's own)."""
        return self.comparison.errors


def analyse_check(setup: CheckSetup) -> CheckAnalysis:
    """Read the simulator file, build the exact case and compare them (the worker's job).

    The exact case is :func:`cabletheory.verify.exact_case` of the form's model and stimulus,
    the rule the ``reference`` and ``compare`` commands use.
    """
    from ..textfile import read_input_text
    from ..transient import InfiniteCable
    from ..verify.comparison import compare
    from ..verify.exact import exact_case
    from ..verify.reading import read_recording

    text = read_input_text(setup.path, "simulator output")
    infinite = isinstance(setup.case.model, InfiniteCable)
    recording = read_recording(text, str(setup.path), parse_file_quantity, resting_potential=setup.rest,
                               time_offset=setup.onset, allow_negative_positions=infinite)
    case = exact_case(setup.case.case, EXACT_TOLERANCE)
    comparison = compare(recording, case, setup.tolerance, relative=setup.relative)
    return CheckAnalysis(recording, case, comparison)


def _voltage_scale(largest: float) -> tuple[float, str]:
    """Factor and unit label for plotting voltages of this size (V -> mV, µV or nV)."""
    for factor, unit in ((1e3, "mV"), (1e6, "µV")):
        if largest * factor >= 1:
            return factor, unit
    return 1e9, "nV"


def check_report(setup: CheckSetup, a: CheckAnalysis) -> Report:
    """Verdict, error summary, the worst point, and the error over time (per site) and over space."""
    c, rec = a.comparison, a.recording
    inputs = [
        Row("file", "simulator output", rec.name),
        *_model_rows(setup.case),
        *_stimulus_rows(setup.case),
        Row("exact_case", "exact case", a.case.description),
        Row("exact_method", "exact method", a.case.method),
        Row("resting_potential", "resting V subtracted", rec.resting_potential, "voltage",
            shown="each site's first sample" if setup.rest == "first" else None),
        Row("onset", "stimulus onset in the file's clock", setup.onset, "time"),
        Row("tolerance", "tolerance", c.tolerance, "dimensionless" if setup.relative else "voltage",
            shown=f"{100 * c.tolerance:g} % of the peak exact voltage" if setup.relative else None),
    ]
    results = [
        Row("verdict", "verdict", "within tolerance" if c.passed else "FLAGGED: error above tolerance",
            flag=not c.passed),
        Row("samples", "samples compared", c.samples),
        Row("max_abs_error", "largest |error|", c.max_abs_error, "voltage", flag=not c.passed),
        Row("rms_abs_error", "rms error", c.rms_abs_error, "voltage"),
        Row("max_rel_error", "largest |error| / peak", c.max_rel_error, None, shown=f"{100 * c.max_rel_error:.3g} %"),
        Row("worst_time", "worst point: time after onset", c.worst_time, "time"),
        Row("worst_position", "worst point: position", c.worst_position, "length",
            shown=distance_text(c.worst_position)),
        Row("worst_line", "worst point: file line", c.worst_line),
        Row("worst_simulated", "worst point: simulated V", c.worst_simulated, "voltage"),
        Row("worst_exact", "worst point: exact V", c.worst_exact, "voltage"),
        Row("reference_bound", "exact solution's own error bound", c.reference_bound, "voltage"),
    ]
    sites = np.asarray(c.sites)
    factor, unit = _voltage_scale(float(np.max(np.abs(a.errors), initial=0.0)))
    over_time = []
    for site in sites:
        mine = rec.positions == site
        order = np.argsort(rec.times[mine], kind="stable")
        over_time.append(Series(f"x = {distance_text(float(site))}", rec.times[mine][order] * 1e3,
                                a.errors[mine][order] * factor))
    time_plot = PlotSpec("Simulated − exact over time, at each site", "t after onset (ms)", f"error ({unit})",
                         tuple(over_time))
    space_plot = PlotSpec("Largest |simulated − exact| at each site", "x (µm)", f"|error| ({unit})",
                          (Series("largest |error|", sites * 1e6, np.asarray(c.site_max_abs_error) * factor),))
    tables = (
        Table("samples", "Every sample", (
            Column("time", "t after onset", rec.times, "time"),
            Column("position", "x", rec.positions, "length"),
            Column("simulated", "simulated V", rec.voltage, "voltage"),
            Column("error", "simulated − exact", a.errors, "voltage"),
            Column("line", "line", rec.lines.tolist()))),
        Table("sites", "Largest error at each site", (
            Column("position", "x", sites, "length"),
            Column("max_abs_error", "largest |error|", c.site_max_abs_error, "voltage"))),
    )
    notes = (f"exact case: {a.case.description}; {a.case.method}",
             *(f"assumed unit: {u}" for u in rec.assumed))
    parameters = tuple(a.case.parameters.items())
    tables += (Table("exact_case", "Parameters of the exact case (SI)", (
        Column("name", "parameter", [name for name, _ in parameters]),
        Column("value", "value", [value for _, (value, _unit) in parameters]),
        Column("unit", "SI unit", [unit for _, (_value, unit) in parameters]))),)
    return Report("check", f"Check: {rec.name} against the exact solution", tuple(inputs), tuple(results),
                  tables, (time_plot, space_plot), notes)
