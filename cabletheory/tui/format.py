"""Turn the core's result objects into :class:`~cabletheory.tui.report.Report` objects.

One function per view. They only select, label and arrange what the core computed (SI
values with their kinds); units and prefixes are added when the report is shown or written.
"""

from __future__ import annotations

import math

import numpy as np

from ..cable import CableSummary, Cylinder, summarise
from ..cli.common import end_description
from ..units import format_quantity
from .forms import MODEL_CHOICES, STIMULUS_CHOICES, ChargingSetup
from .report import Column, PlotSpec, Report, Row, Series, Table

__all__ = ["cable_report", "cable_summary", "charging_report", "profile_positions"]

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


def _end_text(cylinder: Cylinder) -> str:
    return "none (semi-infinite)" if math.isinf(cylinder.length) else end_description(cylinder)


def cable_report(s: CableSummary) -> Report:
    """Inputs, steady and sinusoidal results, the V(X) profile table and its plot."""
    c = s.cylinder
    semi_infinite = math.isinf(c.length)
    inputs = [
        Row("membrane_resistivity", "Rm  specific membrane resistance", c.membrane_resistivity,
            "membrane_resistivity"),
        Row("axial_resistivity", "Ri  axial resistivity", c.axial_resistivity, "axial_resistivity"),
        Row("membrane_capacitance", "Cm  specific membrane capacitance", c.membrane_capacitance,
            "membrane_capacitance"),
        Row("diameter", "d   diameter", c.diameter, "length"),
        Row("length", "ℓ   length", c.length, "length", shown="semi-infinite" if semi_infinite else None),
        Row("end_conductance", "far end", c.end_conductance, "conductance", shown=_end_text(c)),
        Row("frequency", "f   frequency", s.frequency, "frequency",
            shown=None if s.frequency is not None else "steady state only"),
    ]
    end_word = ("semi-infinite" if semi_infinite else "sealed" if c.end_conductance == 0
                else "killed" if math.isinf(c.end_conductance) else "leaky")
    results = [
        Row("length_constant", "λ   length constant", s.length_constant, "length"),
        Row("membrane_time_constant", "τm  membrane time constant", s.membrane_time_constant, "time"),
        Row("electrotonic_length", "L   electrotonic length ℓ/λ", s.electrotonic_length, "dimensionless"),
        Row("semi_infinite_input_resistance", "R∞  semi-infinite input resistance",
            s.semi_infinite_input_resistance, "resistance"),
        Row("input_resistance", f"Rin input resistance ({end_word})", s.input_resistance, "resistance"),
        Row("input_conductance", "Gin input conductance", s.input_conductance, "conductance"),
        Row("far_end_voltage_ratio", "V(ℓ)/V(0) steady far-end ratio", s.far_end_voltage_ratio,
            "dimensionless"),
    ]
    if not semi_infinite and 0 < c.end_conductance < math.inf:
        results.insert(4, Row("end_conductance_ratio", "B   end conductance ratio", s.end_conductance_ratio,
                              "dimensionless"))
    if s.frequency is not None and s.input_impedance is not None:
        z = s.input_impedance
        results += [
            Row("input_impedance_magnitude", "|Z| input impedance at f", abs(z), "resistance"),
            Row("input_impedance_phase", "∠Z  phase at f", math.atan2(z.imag, z.real), "angle"),
            Row("ac_length_constant", "λf  length constant at f", s.ac_length_constant, "length"),
        ]
    if s.segments_needed is not None:
        results.append(Row("segments_needed", f"segments for ≤ {s.segment_fraction:g} λ at "
                                              f"{s.advice_frequency:g} Hz (advice)", s.segments_needed))
    X = s.positions / s.length_constant
    columns = [
        Column("position", "x", s.positions, "length"),
        Column("electrotonic_position", "X = x/λ", X, "dimensionless"),
        Column("voltage_ratio", "V(X)/V(0)", s.voltage_ratio, "dimensionless"),
        Column("transfer_resistance", "transfer R", s.transfer_resistance, "resistance"),
    ]
    series = [Series("steady", X, np.asarray(s.voltage_ratio))]
    if s.transfer_impedance is not None and s.input_impedance is not None:
        ac_ratio = np.abs(s.transfer_impedance / s.input_impedance)
        columns.append(Column("ac_voltage_ratio", "|V(X)/V(0)| at f", ac_ratio, "dimensionless"))
        series.append(Series(f"{s.frequency:g} Hz", X, ac_ratio))
    plot = PlotSpec("Voltage along the cable, input at X = 0", "X = x/λ", "V(X)/V(0)", tuple(series))
    title = "Single cylinder: steady state" + (f" and {s.frequency:g} Hz" if s.frequency is not None else "")
    return Report("cylinder", title, tuple(inputs), tuple(results),
                  (Table("profile", "Profile (input at the origin)", tuple(columns)),), (plot,))


# ---------------------------------------------------------------------------------------------
# charging view (exact transients)
# ---------------------------------------------------------------------------------------------
def _stimulus_rows(setup: ChargingSetup) -> list[Row]:
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


def _model_rows(setup: ChargingSetup) -> list[Row]:
    from ..transient import BallAndStick, InfiniteCable

    m = setup.model
    cylinder = m.cylinder if isinstance(m, BallAndStick) else m
    rows = [
        Row("model", "model", MODEL_CHOICES[setup.model_choice]),
        Row("membrane_resistivity", "Rm", cylinder.membrane_resistivity, "membrane_resistivity"),
        Row("axial_resistivity", "Ri", cylinder.axial_resistivity, "axial_resistivity"),
        Row("membrane_capacitance", "Cm", cylinder.membrane_capacitance, "membrane_capacitance"),
        Row("diameter", "diameter", cylinder.diameter, "length"),
    ]
    if not isinstance(m, InfiniteCable):
        rows += [Row("length", "length", cylinder.length, "length",
                     shown="semi-infinite" if math.isinf(cylinder.length) else None),
                 Row("end_conductance", "far end", cylinder.end_conductance, "conductance",
                     shown=_end_text(cylinder))]
    if isinstance(m, BallAndStick):
        rows.append(Row("soma_diameter", "soma diameter", m.soma_diameter, "length"))
    return rows


def charging_report(setup: ChargingSetup, tolerance: float = 1e-10) -> Report:
    """Run the exact solver twice (V(t) at the watched sites, V(X) at the chosen moments) and
    arrange the time constants, the error bound and both families of curves."""
    from ..transient import BallAndStick, InfiniteCable, charge

    m = setup.model
    over_time = charge(m, setup.stimulus, setup.times, setup.watch, tolerance=tolerance)
    over_space = charge(m, setup.stimulus, setup.moments, setup.positions, tolerance=tolerance)
    lam, tau = over_time.length_constant, over_time.membrane_time_constant
    results = [
        Row("length_constant", "λ   length constant", lam, "length"),
        Row("membrane_time_constant", "τm  membrane time constant", tau, "time"),
    ]
    cylinder = m.cylinder if isinstance(m, BallAndStick) else m
    if not isinstance(m, InfiniteCable) and math.isfinite(cylinder.length):
        results.append(Row("electrotonic_length", "L   electrotonic length", cylinder.length / lam,
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
        Row("error_bound", "error bound of every value", bound, "voltage"),
        Row("method", "method", over_time.method),
    ]
    watch_labels = [f"x = {distance_text(x)}" for x in setup.watch]
    moment_labels = [f"t = {format_quantity(t, 'time')}" for t in setup.moments]
    t = np.asarray(over_time.times)
    X = np.asarray(over_space.positions) / lam
    time_plot = PlotSpec("V(t) at the chosen positions", "t (ms)", "V (mV)", tuple(
        Series(label, t * 1e3, over_time.voltage[:, j] * 1e3) for j, label in enumerate(watch_labels)))
    space_plot = PlotSpec("V(X) at the chosen times", "X = x/λ", "V (mV)", tuple(
        Series(label, X, over_space.voltage[i, :] * 1e3) for i, label in enumerate(moment_labels)))
    tables = (
        Table("time_course", "V(t) at the chosen positions", (
            Column("time", "t", t, "time"),
            *(Column(f"voltage_at_{j}", f"V at {label[4:]}", over_time.voltage[:, j], "voltage")
              for j, label in enumerate(watch_labels)))),
        Table("profile", "V(X) at the chosen times", (
            Column("position", "x", over_space.positions, "length"),
            Column("electrotonic_position", "X", X, "dimensionless"),
            *(Column(f"voltage_at_{i}", f"V at {label[4:]}", over_space.voltage[i, :], "voltage")
              for i, label in enumerate(moment_labels)))),
    )
    notes = (*over_time.notes, f"requested tolerance {tolerance:g} of the reference voltage")
    title = f"Charging: {STIMULUS_CHOICES[setup.stimulus_choice]} into a {MODEL_CHOICES[setup.model_choice]}"
    return Report("charging", title, tuple(_model_rows(setup) + _stimulus_rows(setup)), tuple(results),
                  tables, (time_plot, space_plot), notes)
