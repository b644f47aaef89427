"""Turn the core's result objects into :class:`~cabletheory.tui.report.Report` objects.

One function per view. They only select, label and arrange what the core computed (SI
values with their kinds); units and prefixes are added when the report is shown or written.
"""

from __future__ import annotations

import math

import numpy as np

from ..cable import CableSummary, Cylinder, summarise
from ..cli.common import end_description
from .report import Column, PlotSpec, Report, Row, Series, Table

__all__ = ["cable_report", "cable_summary", "profile_positions"]

PROFILE_POINTS = 41
SEMI_INFINITE_SPAN = 5.0  # a semi-infinite cable is shown over 0 ≤ X ≤ 5 (e^-5 < 1 %)


def profile_positions(cylinder: Cylinder, points: int = PROFILE_POINTS) -> np.ndarray:
    """Evenly spaced distances (m) from the origin to the far end (or to 5 λ if semi-infinite)."""
    span = cylinder.length if math.isfinite(cylinder.length) else SEMI_INFINITE_SPAN * cylinder.length_constant
    return np.linspace(0.0, span, points)


def cable_summary(cylinder: Cylinder, frequency: float | None) -> CableSummary:
    """The core's summary with the profile the view plots."""
    return summarise(cylinder, profile_positions(cylinder), frequency)


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
                  (Table("profile", "Profile (input at the origin)", tuple(columns)),), plot)
