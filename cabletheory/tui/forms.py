"""Input fields of the views: what each one reads, and reading all of them at once.

A :class:`FieldSpec` names a field, its quantity kind and what it accepts; :func:`read_form`
parses the texts of a view's fields with :func:`cabletheory.units.parse_quantity` and returns
the SI values and, per field, the one-line message of the first problem. Nothing here raises
on bad user text, so the app can flag the field and carry on.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from ..cable import Cylinder
from ..errors import InputError
from ..units import parse_quantity, parse_series

__all__ = ["END_CHOICES", "FieldSpec", "FormResult", "read_cylinder_form", "read_form"]


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


@dataclass(frozen=True, slots=True)
class FormResult:
    """SI values by field name (None for a blank optional field) and messages by field name."""

    values: Mapping[str, float | list[float] | None]
    errors: Mapping[str, str]

    @property
    def ok(self) -> bool:
        return not self.errors


def read_field(spec: FieldSpec, text: str) -> float | list[float] | None:
    """The SI value of one field; raises :class:`InputError` with a one-line message."""
    if not text.strip() and spec.blank_ok:
        return None
    if spec.series:
        return parse_series(text, spec.kind, spec.label, allow_zero=True,
                            allow_negative=spec.allow_negative, max_points=spec.max_points)
    return parse_quantity(text, spec.kind, spec.label, allow_inf=spec.allow_inf,
                          allow_zero=spec.allow_zero, allow_negative=spec.allow_negative)


def read_form(specs: Sequence[FieldSpec], texts: Mapping[str, str]) -> FormResult:
    """Read every field; a missing text counts as the field's default."""
    values: dict[str, float | list[float] | None] = {}
    errors: dict[str, str] = {}
    for spec in specs:
        try:
            values[spec.name] = read_field(spec, texts.get(spec.name, spec.default))
        except InputError as exc:
            errors[spec.name] = str(exc)
    return FormResult(values, errors)


# ---------------------------------------------------------------------------------------------
# the single-cable form
# ---------------------------------------------------------------------------------------------
# far-end choices: id -> label shown in the selector
END_CHOICES: dict[str, str] = {
    "sealed": "sealed (no current leaves)",
    "killed": "killed (held at rest)",
    "leaky": "leaky (conductance to rest)",
}

# The defaults are the invented Tidewater Station demo dendrite (DEVELOPERS.md, demo scenario).
CABLE_FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("Rm", "Rm", "membrane_resistivity", "20 kΩ·cm²"),
    FieldSpec("Ri", "Ri", "axial_resistivity", "200 Ω·cm"),
    FieldSpec("Cm", "Cm", "membrane_capacitance", "1 µF/cm²"),
    FieldSpec("diameter", "diameter", "length", "2 µm"),
    FieldSpec("length", "length", "length", "500 µm", allow_inf=True),
    FieldSpec("end_conductance", "end conductance", "conductance", "1 nS", allow_zero=True),
    FieldSpec("frequency", "frequency", "frequency", "100 Hz", allow_zero=True, blank_ok=True,
              placeholder="blank: steady state only"),
)


def read_cylinder_form(texts: Mapping[str, str], end: str) -> tuple[Cylinder | None, float | None,
                                                                     dict[str, str]]:
    """The :class:`Cylinder` and frequency (Hz, or None) of the single-cable form, or messages.

    ``end`` is a key of :data:`END_CHOICES`; the end-conductance field is read only when the
    end is leaky. Returns ``(None, None, errors)`` when any field is wrong.
    """
    if end not in END_CHOICES:
        raise ValueError(f"unknown end choice {end!r}")
    specs = [s for s in CABLE_FIELDS if s.name != "end_conductance" or end == "leaky"]
    form = read_form(specs, texts)
    errors = dict(form.errors)
    if errors:
        return None, None, errors
    v = form.values
    end_conductance = {"sealed": 0.0, "killed": math.inf}.get(end)
    if end_conductance is None:
        end_conductance = float(v["end_conductance"])  # type: ignore[arg-type]
    cylinder = Cylinder(float(v["Rm"]), float(v["Ri"]), float(v["Cm"]),  # type: ignore[arg-type]
                        float(v["diameter"]), float(v["length"]), end_conductance)  # type: ignore[arg-type]
    frequency = v["frequency"]
    return cylinder, (None if frequency is None else float(frequency)), errors  # type: ignore[arg-type]
