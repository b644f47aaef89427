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
from functools import lru_cache
from pathlib import Path

import numpy as np

from ..cable import Cylinder
from ..case import Case
from ..errors import InputError
from ..transient import Model, Stimulus
from ..units import format_quantity, parse_quantity, parse_series
from .fields import (
    CABLE_FIELDS,
    CASE_FIELD_NAMES,
    CASE_FIELDS,
    CHARGING_FIELDS,
    CHECK_FIELDS,
    MODEL_CHOICES,
    PROFILE_POINTS,
    PROFILE_SPAN,
    STIMULUS_CHOICES,
    TIME_POINTS,
    TREE_FIELDS,
    FieldSpec,
    fields_used,
)

__all__ = ["CaseSetup", "ChargingSetup", "CheckSetup", "FieldSpec", "FormResult", "read_case",
           "read_charging_form", "read_check_form", "read_cylinder_form", "read_form", "read_tree_form", "reading"]


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
        return list(_read_series(spec, text))
    return _read_quantity(spec, text)


# The views re-read every field at each keystroke; remembering good values keeps that cheap.
@lru_cache(maxsize=512)
def _read_quantity(spec: FieldSpec, text: str) -> float:
    return parse_quantity(text, spec.kind, spec.label, allow_inf=spec.allow_inf,
                          allow_zero=spec.allow_zero, allow_negative=spec.allow_negative)


@lru_cache(maxsize=128)
def _read_series(spec: FieldSpec, text: str) -> tuple[float, ...]:
    return tuple(parse_series(text, spec.kind, spec.label, allow_zero=True,
                              allow_negative=spec.allow_negative, max_points=spec.max_points))


@lru_cache(maxsize=512)
def reading(spec: FieldSpec, text: str) -> tuple[str, str]:
    """How an accepted field text was read, for the echo beside the field, and the warning of a
    value far outside the range met in neurons (empty strings when there is nothing to say).

    ``'2'`` in a diameter field echoes ``'= 2.000 µm'``; ``'3'`` in Rm echoes ``'= 3.000 Ω·cm²'``
    with the warning of :class:`~cabletheory.errors.ImplausibleValueWarning`. A text that cannot
    be read echoes nothing (its error is shown instead).
    """
    import warnings

    from ..errors import ImplausibleValueWarning
    from ..inputs import read_end, read_pass_within, read_rest

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ImplausibleValueWarning)
        try:
            if spec.name == "file" or (not text.strip() and spec.blank_ok):
                return "", ""
            if spec.name == "end":
                value = read_end(text, spec.label)
                echo = ("sealed" if value == 0 else "killed (held at rest)" if math.isinf(value)
                        else f"{format_quantity(value, 'conductance')} to rest")
            elif spec.name == "rest":
                rest = read_rest(text, spec.label)
                echo = "each site's first sample" if rest == "first" else format_quantity(float(rest), "voltage")
            elif spec.name == "pass_within":
                threshold, relative = read_pass_within(text, spec.label)
                echo = (f"{threshold * 100:.4g} % of the peak" if relative
                        else format_quantity(threshold, "voltage"))
            elif spec.series:
                values = _read_series.__wrapped__(spec, text)  # uncached: its warnings are wanted here
                shown = [format_quantity(v, spec.kind) for v in values[:4]]
                echo = ", ".join(shown) + (f", … ({len(values)} values)" if len(values) > 4 else "")
            else:
                echo = format_quantity(_read_quantity.__wrapped__(spec, text), spec.kind)
        except (InputError, ValueError):
            return "", ""
    warning = "; ".join(str(w.message) for w in caught if issubclass(w.category, ImplausibleValueWarning))
    return f"= {echo}", warning


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
def read_cylinder_form(texts: Mapping[str, str]) -> tuple[Cylinder | None, float | None, dict[str, str]]:
    """The :class:`Cylinder` and frequency (Hz, or None) of the single-cable form, or messages.

    The far end is read as everywhere else (:func:`cabletheory.inputs.read_end`: 'sealed',
    'killed' or a conductance to rest). Returns ``(None, None, errors)`` when any field is wrong.
    """
    from ..inputs import read_end

    form = read_form([s for s in CABLE_FIELDS if s.name != "end"], texts)
    errors = dict(form.errors)
    end_conductance = 0.0
    try:
        end_conductance = read_end(texts.get("end", "sealed"), "far end")
    except InputError as exc:
        errors["end"] = str(exc)
    if errors:
        return None, None, errors
    v = form.values
    cylinder = Cylinder(float(v["Rm"]), float(v["Ri"]), float(v["Cm"]),  # type: ignore[arg-type]
                        float(v["diameter"]), float(v["length"]), end_conductance)  # type: ignore[arg-type]
    frequency = v["frequency"]
    return cylinder, (None if frequency is None else float(frequency)), errors  # type: ignore[arg-type]


# ---------------------------------------------------------------------------------------------
# the exact case (model and stimulus), shared by the charging and check forms
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class CaseSetup:
    """The validated :class:`~cabletheory.case.Case` of a form, with the choices and far-end text that
    made it. The same texts mean the same as the command line's case options: both are read by
    :func:`cabletheory.inputs.read_case` and checked by :func:`cabletheory.case.build_case`."""

    case: Case
    model_choice: str  # a key of MODEL_CHOICES (= cabletheory.case.CELL_KINDS)
    stimulus_choice: str  # a key of STIMULUS_CHOICES (= cabletheory.case.STIMULUS_SHAPES)
    end: str  # the far-end text as typed ("sealed", "killed", "0.5 nS")

    @property
    def model(self) -> Model:
        return self.case.cell

    @property
    def stimulus(self) -> Stimulus:
        return self.case.stimulus

    @property
    def length(self) -> float:
        """m; inf for a semi-infinite or infinite cable."""
        return self.case.length

    @property
    def length_constant(self) -> float:
        """λ, m."""
        return self.case.length_constant


def read_case(texts: Mapping[str, str], model: str, stimulus: str) -> tuple[CaseSetup | None, dict[str, str]]:
    """The case the fields describe, or the one-line messages of the fields that are wrong.

    ``model`` is a key of :data:`MODEL_CHOICES`, ``stimulus`` one of :data:`STIMULUS_CHOICES`;
    only the fields these choices use are read (missing texts take the field's default).
    """
    from ..inputs import CaseInputError
    from ..inputs import read_case as read_case_texts

    if model not in MODEL_CHOICES or stimulus not in STIMULUS_CHOICES:
        raise ValueError(f"unknown choice {model!r}/{stimulus!r}")
    used = fields_used(CASE_FIELDS, model, stimulus)
    case_texts: dict[str, str | None] = {"cell": model, "shape": stimulus}
    for spec in CASE_FIELDS:
        if spec.name in used:
            case_texts[CASE_FIELD_NAMES[spec.name]] = texts.get(spec.name, spec.default)
    try:
        case = read_case_texts(case_texts, _CASE_LABELS)
    except CaseInputError as exc:
        return None, {_APP_NAMES.get(field, field): message for field, message in exc.errors.items()}
    return CaseSetup(case, model, stimulus, texts.get("end", "sealed").strip()), {}


_CASE_LABELS = {CASE_FIELD_NAMES[s.name]: s.label for s in CASE_FIELDS}
_APP_NAMES = {canonical: name for name, canonical in CASE_FIELD_NAMES.items()}


# ---------------------------------------------------------------------------------------------
# the charging (transient) form
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class ChargingSetup:
    """Everything one transient computation needs, in SI."""

    case: CaseSetup
    times: tuple[float, ...]  # s, for V(t)
    watch: tuple[float, ...]  # m, positions of the V(t) curves
    positions: tuple[float, ...]  # m, for V(X)
    moments: tuple[float, ...]  # s, times of the V(X) curves


_CURVE_FIELDS = tuple(s for s in CHARGING_FIELDS if s.name not in {c.name for c in CASE_FIELDS})


def read_charging_form(texts: Mapping[str, str], model: str, stimulus: str
                       ) -> tuple[ChargingSetup | None, dict[str, str]]:
    """The transient set-up of the charging form, or the messages of the fields that are wrong."""
    case, errors = read_case(texts, model, stimulus)
    curves = read_form(_CURVE_FIELDS, texts)
    errors.update(curves.errors)
    if case is None or errors:
        return None, errors
    v = curves.values
    length = case.length
    watch = [float(x) for x in v["watch"]]  # type: ignore[union-attr]
    if model != "infinite":
        outside = [x for x in watch if x < 0 or x > length]
        if outside:
            return None, {"watch": f"V(t) at: {format_quantity(outside[0], 'length')} lies outside the cable "
                                   "(0 to its length)"}
    top = length if math.isfinite(length) else PROFILE_SPAN * case.length_constant  # V(X) span
    low = -top if model == "infinite" else 0.0
    span = float(v["span"])  # type: ignore[arg-type]
    times = tuple(np.linspace(0.0, span, TIME_POINTS).tolist())
    positions = tuple(np.linspace(low, top, PROFILE_POINTS).tolist())
    return ChargingSetup(case, times, tuple(watch), positions,
                         tuple(float(t) for t in v["moments"])), {}  # type: ignore[union-attr]


# ---------------------------------------------------------------------------------------------
# the tree form
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class TreeSetup:
    path: Path
    membrane_resistivity: float  # Ω·m²
    axial_resistivity: float  # Ω·m
    membrane_capacitance: float  # F/m²
    branch_ratio_tolerance: float
    tip_spread_tolerance: float
    killed_tips: bool


def read_tree_form(texts: Mapping[str, str], tips: str) -> tuple[TreeSetup | None, dict[str, str]]:
    """The file and membrane of the tree form, or the messages of the fields that are wrong.

    The file is only checked for existence here; reading it is the worker's job.
    """
    if tips not in ("sealed", "killed"):
        raise ValueError(f"unknown tip condition {tips!r}")
    form = read_form([s for s in TREE_FIELDS if s.name != "file"], texts)
    errors = dict(form.errors)
    text = texts.get("file", "").strip()
    path = Path(text).expanduser()
    if not text:
        errors["file"] = "file: empty; give the path of an SWC file (ctrl+o picks one)"
    elif not path.is_file():
        errors["file"] = f"file: {text!r} does not exist or is not a file"
    for name in ("ratio_tolerance", "tip_tolerance"):
        value = form.values.get(name)
        if name not in errors and value is not None and float(value) >= 1:  # type: ignore[arg-type]
            errors[name] = f"{name.replace('_', ' ')}: {texts.get(name)!r} is too large; expected e.g. 0.05"
    if errors:
        return None, errors
    v = form.values
    return TreeSetup(path, float(v["Rm"]), float(v["Ri"]), float(v["Cm"]),  # type: ignore[arg-type]
                     float(v["ratio_tolerance"]), float(v["tip_tolerance"]), tips == "killed"), {}  # type: ignore[arg-type]


# ---------------------------------------------------------------------------------------------
# the check (verification) form
# ---------------------------------------------------------------------------------------------
EXACT_TOLERANCE = 1e-12  # V, bound on the exact solution's own truncation error


@dataclass(frozen=True, slots=True)
class CheckSetup:
    path: Path
    case: CaseSetup
    rest: float | str  # V, or "first"
    onset: float  # s, the stimulus onset in the file's clock
    tolerance: float  # V, or a fraction of the peak exact voltage when ``relative``
    relative: bool


def parse_file_quantity(text: str, kind: str, where: str) -> float:
    """The quantity parser :func:`cabletheory.verify.read_recording` needs (any sign allowed)."""
    return parse_quantity(text, kind, where, allow_zero=True, allow_negative=True)


_FILE_FIELDS = ("file", "rest", "onset", "pass_within")


def read_check_form(texts: Mapping[str, str], model: str = "cylinder", stimulus: str = "step"
                    ) -> tuple[CheckSetup | None, dict[str, str]]:
    """The simulator file, the exact case and the pass-within threshold of the check form, or messages.

    ``model`` and ``stimulus`` are the choices of :func:`read_case`, read with the same fields
    as the charging form.
    """
    texts = {**{s.name: s.default for s in CHECK_FIELDS}, **texts}
    case, errors = read_case(texts, model, stimulus)
    form = read_form([s for s in CHECK_FIELDS if s.name == "onset"], texts)
    errors.update(form.errors)
    text = texts.get("file", "").strip()
    if not text:
        errors["file"] = "file: empty; give the path of the simulator's CSV output (ctrl+o picks one)"
    elif not Path(text).expanduser().is_file():
        errors["file"] = f"file: {text!r} does not exist or is not a file"
    from ..inputs import read_pass_within, read_rest

    rest: float | str = "first"
    try:
        rest = read_rest(texts.get("rest", "0"), "resting V")
    except InputError as exc:
        errors["rest"] = str(exc)
    tolerance, relative = 0.0, False
    try:
        tolerance, relative = read_pass_within(texts.get("pass_within", "20 µV"), "pass within")
    except InputError as exc:
        errors["pass_within"] = str(exc)
    if case is None or errors:
        return None, errors
    return CheckSetup(Path(text).expanduser(), case, rest, float(form.values["onset"]),  # type: ignore[arg-type]
                      tolerance, relative), {}
