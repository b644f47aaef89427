"""The input fields of the views, as plain data: names, quantity kinds, defaults, choices.

Kept free of numpy and the core so that the app can draw its first screen before the
numerical modules are imported (:mod:`cabletheory.tui.forms` reads the fields).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from ..case_fields import fields_for

__all__ = ["CABLE_FIELDS", "CASE_FIELDS", "CHARGING_FIELDS", "CHECK_FIELDS", "DEMO_SWC",
           "MODEL_CHOICES", "SHARED_CELL", "STIMULUS_CHOICES", "TREE_FIELDS", "FieldSpec", "bundled_morphologies",
           "charging_fields_used", "check_fields_used", "fields_used"]


@dataclass(frozen=True, slots=True)
class FieldSpec:
    """One text field: ``name`` (id), ``label`` (used in messages), kind of quantity, default text.

    ``series=True`` reads a list or range (``'0, 5, 10 ms'``, ``'0:500:50 um'``); ``blank_ok``
    lets an empty field mean "not given" (value ``None``).
    """

    name: str
    label: str
    kind: str
    default: str
    allow_inf: bool = False
    allow_zero: bool = False
    allow_negative: bool = False
    blank_ok: bool = False
    series: bool = False
    placeholder: str = ""
    max_points: int = 200


# The defaults are the invented Tidewater Station demo dendrite (DEVELOPERS.md, demo scenario).
CABLE_FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("Rm", "Rm", "membrane_resistivity", "20 kΩ·cm²"),
    FieldSpec("Ri", "Ri", "axial_resistivity", "200 Ω·cm"),
    FieldSpec("Cm", "Cm", "membrane_capacitance", "1 µF/cm²"),
    FieldSpec("diameter", "diameter", "length", "2 µm"),
    FieldSpec("length", "length", "length", "500 µm", allow_inf=True),
    FieldSpec("end", "far end", "conductance", "sealed", placeholder="sealed, killed or e.g. 0.5 nS"),
    FieldSpec("frequency", "frequency", "frequency", "100 Hz", allow_zero=True, blank_ok=True,
              placeholder="blank: steady state only"),
)


MODEL_CHOICES: dict[str, str] = {
    "cylinder": "cylinder",
    "ball-and-stick": "ball and stick",
    "infinite": "infinite cable",
}
STIMULUS_CHOICES: dict[str, str] = {
    "step": "current step",
    "pulse": "current pulse",
    "alpha": "alpha current",
    "clamp": "voltage-clamp step",
}

# The cable, model and stimulus of an exact case: the charging and check views share these fields,
# with the meaning of the command line's case options (cli/case.py).
CASE_FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("Rm", "Rm", "membrane_resistivity", "20 kΩ·cm²"),
    FieldSpec("Ri", "Ri", "axial_resistivity", "200 Ω·cm"),
    FieldSpec("Cm", "Cm", "membrane_capacitance", "1 µF/cm²"),
    FieldSpec("diameter", "diameter", "length", "2 µm"),
    FieldSpec("length", "length", "length", "500 µm", allow_inf=True),
    FieldSpec("end", "far end", "conductance", "sealed", placeholder="sealed, killed or e.g. 0.5 nS"),
    FieldSpec("soma", "soma diameter", "length", "20 µm"),
    FieldSpec("current", "current", "current", "100 pA", allow_negative=True),
    FieldSpec("clamp", "clamp step", "voltage", "10 mV", allow_negative=True),
    FieldSpec("duration", "pulse length", "time", "1 ms"),
    FieldSpec("time_to_peak", "time to peak", "time", "0.5 ms"),
    FieldSpec("site", "stimulus at", "length", "0 µm", allow_zero=True, allow_negative=True),
)
# the cell every view shares: typed in one view, it is the cell of the others (the tree view, which
# reads its geometry from a file, shares the membrane only)
SHARED_CELL = ("Rm", "Ri", "Cm", "diameter", "length", "end")
CABLE_GROUP = ("Rm", "Ri", "Cm", "diameter", "length", "end", "soma")  # shown under the model choice
STIMULUS_GROUP = ("current", "clamp", "duration", "time_to_peak", "site")  # under the stimulus choice

CHARGING_FIELDS: tuple[FieldSpec, ...] = (
    *CASE_FIELDS,
    FieldSpec("span", "V(t) until", "time", "60 ms"),
    FieldSpec("watch", "V(t) at", "length", "0, 250, 500 µm", series=True, allow_negative=True, max_points=8),
    FieldSpec("moments", "V(X) at", "time", "1, 5, 20 ms", series=True, max_points=8),
)
# the app's case fields and the canonical fields of cabletheory.case they set; which of them a
# choice of cell and stimulus uses is the core's rule (case_fields.fields_for)
CASE_FIELD_NAMES: dict[str, str] = {
    "Rm": "membrane_resistivity", "Ri": "axial_resistivity", "Cm": "membrane_capacitance",
    "diameter": "diameter", "length": "length", "end": "end", "soma": "soma_diameter", "current": "current",
    "clamp": "voltage", "duration": "duration", "time_to_peak": "time_to_peak", "site": "stimulus_at",
}
TIME_POINTS = 241  # samples of each V(t) curve
PROFILE_POINTS = 61  # samples of each V(X) curve
PROFILE_SPAN = 5.0  # V(X) of a semi-infinite or infinite cable is shown over 5 λ


def fields_used(specs: tuple[FieldSpec, ...], model: str, stimulus: str) -> set[str]:
    """Names of the fields of ``specs`` that the chosen model and stimulus read."""
    used = fields_for(model, stimulus)
    return {s.name for s in specs if s.name not in CASE_FIELD_NAMES or CASE_FIELD_NAMES[s.name] in used}


def charging_fields_used(model: str, stimulus: str) -> set[str]:
    """Names of the charging fields that the chosen model and stimulus read."""
    return fields_used(CHARGING_FIELDS, model, stimulus)


def check_fields_used(model: str, stimulus: str) -> set[str]:
    """Names of the check fields that the chosen model and stimulus read."""
    return fields_used(CHECK_FIELDS, model, stimulus)


def bundled_morphologies() -> Path:
    """The folder of the bundled (invented) demo morphologies."""
    from importlib import resources

    return Path(str(resources.files("cabletheory") / "data" / "morphologies"))


DEMO_SWC = "lumenia_lw1_conforming.swc"

TREE_FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("file", "file", "dimensionless", "", placeholder="path to .swc or .outline (enter opens)"),
    FieldSpec("Rm", "Rm", "membrane_resistivity", "20 kΩ·cm²"),
    FieldSpec("Ri", "Ri", "axial_resistivity", "200 Ω·cm"),
    FieldSpec("Cm", "Cm", "membrane_capacitance", "1 µF/cm²"),
    FieldSpec("ratio_tolerance", "ratio tolerance", "dimensionless", "0.05", allow_zero=True),
    FieldSpec("tip_tolerance", "tip spread (λ)", "dimensionless", "0.05", allow_zero=True),
)


# Defaults: the invented Tidewater Station simulator check (worked/simulator_check): a 100 pA step
# at the origin of the sealed demo dendrite, switched on at 1 ms on a cell resting at -62 mV.
CHECK_FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("file", "file", "dimensionless", "", placeholder="simulator CSV (enter opens)"),
    *CASE_FIELDS,
    FieldSpec("rest", "resting V", "voltage", "-62 mV", allow_zero=True, allow_negative=True,
              placeholder="e.g. -65 mV, 0, or 'first'"),
    FieldSpec("onset", "stimulus onset", "time", "1 ms", allow_zero=True, allow_negative=True),
    FieldSpec("pass_within", "pass within", "voltage", "20 µV", placeholder="e.g. 20 µV or 1 %"),
)
