"""Text to a validated case: the unit boundary of :mod:`cabletheory.case`, shared by every front end.

The command line and the terminal app hand :func:`read_case` the texts a user typed, keyed by the
canonical field names of :data:`cabletheory.case.FIELDS`, and a label for each field (the command
line's ``--stimulus-at``, the app's "stimulus at"). Each text is read once, with units, by
:mod:`cabletheory.units` (bare numbers in the field's customary unit); the case rules are applied
once, by :func:`cabletheory.case.build_case`. Every problem comes back as one line that starts
with the field's label, so both front ends say the same thing about the same input.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING

from .case import FIELDS, Case, CaseFieldError, build_case, end_from_word
from .errors import InputError
from .units import parse_quantity, parse_series

if TYPE_CHECKING:  # pragma: no cover
    from .tree_case import TreeCase
    from .tree_laplace import PassiveTree

__all__ = ["CaseInputError", "read_case", "read_end", "read_field", "read_outline_value", "read_point_labels",
           "read_tree_case"]

Label = Callable[[str], str] | Mapping[str, str]


@dataclass(frozen=True, slots=True)
class _Reading:
    allow_inf: bool = False
    allow_zero: bool = False
    allow_negative: bool = False
    series: bool = False


# how the text of each numeric field is read (its kind of quantity is in case.FIELDS)
_READINGS: dict[str, _Reading] = {
    "length": _Reading(allow_inf=True),
    "current": _Reading(allow_negative=True),
    "voltage": _Reading(allow_negative=True),
    "stimulus_at": _Reading(allow_zero=True, allow_negative=True),
    "positions": _Reading(allow_zero=True, allow_negative=True, series=True),
}


class CaseInputError(InputError):
    """One or more fields of a case are wrong; ``errors`` maps each canonical field to its one-line
    message (starting with the field's label). ``str()`` is the first message."""

    def __init__(self, errors: Mapping[str, str]) -> None:
        super().__init__(next(iter(errors.values())))
        self.errors = dict(errors)


def _labeller(label: Label) -> Callable[[str], str]:
    if callable(label):
        return label
    return lambda field: label.get(field, field.replace("_", " "))


def read_end(text: str, label: str = "far end") -> float:
    """The conductance (S) from an end to rest: 'sealed' 0, 'killed' inf, else a conductance such as
    '0.5 nS' (bare numbers in nS). The one reader of far ends and tree tips alike."""
    word = end_from_word(text)
    if word is not None:
        return word
    try:
        return parse_quantity(text, "conductance", label, allow_zero=True, allow_inf=True)
    except InputError as exc:
        detail = str(exc).removeprefix(f"{label}: ")
        raise InputError(f"{label}: {text.strip()!r} is not 'sealed', 'killed' or a conductance to rest such as "
                         f"'0.5 nS' ({detail})") from None


def read_outline_value(field: str, text: str) -> float:
    """One value of a tree outline (:data:`cabletheory.morphology.ValueReader`): a tip's ``end``
    (:func:`read_end`) or a length or diameter (bare numbers in µm; the reader checks the range)."""
    if field == "end":
        return read_end(text, "end")
    return parse_quantity(text, "length", field, allow_zero=True, allow_inf=True, allow_negative=True)


def read_field(field: str, text: str, label: str) -> float | str | list[float]:
    """The SI value of one case field's text (a word for ``cell`` and ``shape``)."""
    kind = FIELDS[field][0]
    if kind == "word":
        return text.strip().lower()
    if kind == "end":
        return read_end(text, label)
    how = _READINGS.get(field, _Reading())
    if how.series:
        return parse_series(text, kind, label, allow_zero=how.allow_zero, allow_negative=how.allow_negative)
    return parse_quantity(text, kind, label, allow_inf=how.allow_inf, allow_zero=how.allow_zero,
                          allow_negative=how.allow_negative)


def read_case(texts: Mapping[str, str | None], label: Label) -> Case:
    """The :class:`~cabletheory.case.Case` that the texts describe.

    Parameters
    ----------
    texts : canonical field name -> the user's text; None (or a missing key) means "not given"
    label : the front end's name for each field, as a function or a mapping (used in messages)

    Raises
    ------
    CaseInputError
        with every field whose text cannot be read, or else the first case rule broken.
    """
    name = _labeller(label)
    values: dict[str, object] = {}
    errors: dict[str, str] = {}
    for field, text in texts.items():
        if text is None:
            continue
        if field not in FIELDS:
            raise InputError(f"{field!r} is not a case field")  # a programming error, not user input
        try:
            values[field] = read_field(field, text, name(field))
        except InputError as exc:
            errors[field] = str(exc)
    if errors:
        raise CaseInputError(errors)
    try:
        return build_case(values)
    except CaseFieldError as exc:
        raise CaseInputError({exc.field: f"{name(exc.field)}: {exc}"}) from None


TREE_STIMULUS_FIELDS = ("shape", "current", "voltage", "duration", "time_to_peak")


def read_point_labels(text: str, label: str) -> list[str]:
    """Point labels of a tree, comma separated ('soma, 412, 977'); an empty item is an error."""
    labels = [item.strip() for item in text.split(",")]
    if not all(labels):
        raise InputError(f"{label}: empty point label in {text.strip()!r}; expected e.g. 'soma, 412, 977'")
    return labels


def read_tree_case(cell: PassiveTree, texts: Mapping[str, str | None], label: Label) -> TreeCase:
    """The :class:`~cabletheory.tree_case.TreeCase` of a tree and the stimulus texts typed for it.

    Parameters
    ----------
    cell : the tree with its membrane and tips (read from its file by the caller)
    texts : canonical field -> text for the stimulus fields (``shape``, ``current``, ``voltage``,
        ``duration``, ``time_to_peak``), ``stimulus_at`` (one point label; default the soma) and
        ``positions`` (point labels, comma separated; default the stimulus point); None or a
        missing key means "not given"
    label : the front end's name for each field (used in messages)

    Raises
    ------
    CaseInputError
        with every field whose text cannot be read, or else the first rule of
        :func:`cabletheory.tree_case.build_tree_case` broken (an unknown point names its field).
    """
    from .tree_case import build_tree_case

    name = _labeller(label)
    values: dict[str, object] = {}
    errors: dict[str, str] = {}
    for field in TREE_STIMULUS_FIELDS:
        text = texts.get(field)
        if text is not None:
            try:
                values[field] = read_field(field, text, name(field))
            except InputError as exc:
                errors[field] = str(exc)
    where = texts.get("stimulus_at")
    if where is not None and not where.strip():
        where = None
    labels: list[str] | None = None
    text = texts.get("positions")
    if text is not None and text.strip():
        try:
            labels = read_point_labels(text, name("positions"))
        except InputError as exc:
            errors["positions"] = str(exc)
    if errors:
        raise CaseInputError(errors)
    try:
        return build_tree_case(cell, values, where, labels)
    except CaseFieldError as exc:
        raise CaseInputError({exc.field: f"{name(exc.field)}: {exc}"}) from None


def read_pass_within(text: str, label: str = "--pass-within") -> tuple[float, bool]:
    """The acceptance threshold of a comparison: ``(fraction, True)`` for a percentage of the peak
    exact voltage such as '1 %', else ``(volts, False)`` for a voltage such as '20 µV' (bare: mV)."""
    raw = text.strip()
    if raw.endswith("%"):
        fraction = parse_quantity(raw[:-1], "dimensionless", label) / 100.0
        if not fraction < 1:
            raise InputError(f"{label}: {raw!r} is 100 % or more of the peak; expected e.g. 1 %")
        return fraction, True
    try:
        return parse_quantity(raw, "voltage", label), False
    except InputError as exc:
        raise InputError(f"{exc} (or a percentage of the peak exact voltage such as 1 %)") from None


def read_rest(text: str, label: str = "--rest") -> float | str:
    """The resting potential to subtract from a recording: a voltage (bare: mV), or 'first' to take
    each site's first sample."""
    if text.strip().lower() == "first":
        return "first"
    return parse_quantity(text, "voltage", label, allow_zero=True, allow_negative=True)


def read_column_positions(text: str, label: str = "--column-at") -> float | dict[str, float]:
    """Where a recording's voltage columns were recorded: one position for a file's single voltage
    column ('250 um'), or column names mapped to positions ('v_soma=0 um, v_tip=500 um'; names in
    any case; bare numbers in µm)."""
    if "=" not in text:
        return parse_quantity(text, "length", label, allow_zero=True, allow_negative=True)
    mapping: dict[str, float] = {}
    for item in text.split(","):
        column, sep, position = item.partition("=")
        column = column.strip().lower()
        if not sep or not column:
            raise InputError(f"{label}: {item.strip()!r} is not NAME=POSITION; expected e.g. 'v_soma=0 um, "
                             "v_tip=500 um'")
        if column in mapping:
            raise InputError(f"{label}: column {column!r} is given twice")
        mapping[column] = parse_quantity(position, "length", f"{label} {column}", allow_zero=True,
                                         allow_negative=True)
    return mapping
