"""The unit boundary: text -> SI float on the way in, SI float -> text on the way out.

This is the only module that imports pint, and it holds the package's one unit registry
(created lazily, with pint's on-disk cache so that start-up stays cheap). Core modules
never see a Quantity: they receive plain SI floats from :func:`parse_quantity`.

Bare numbers are read in the field's customary unit (:data:`KINDS`), so ``--Rm 20000``
means 20 000 Ω·cm² and ``--diameter 2`` means 2 µm.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from dataclasses import dataclass
from functools import cache
from typing import TYPE_CHECKING

from .errors import InputError, UnitKindError

if TYPE_CHECKING:  # pragma: no cover
    import pint

__all__ = ["KINDS", "Kind", "format_quantity", "parse_quantity", "parse_series", "registry", "si_unit"]


@dataclass(frozen=True, slots=True)
class Kind:
    """A physical kind of quantity as the field uses it.

    Attributes
    ----------
    name : what the kind is called in messages ("specific membrane resistance")
    customary : unit in which bare numbers are read (pint syntax)
    si : SI unit used inside the package and in JSON output (pint syntax, ASCII)
    display : unit shown to people; ``None`` means the SI unit with a compact prefix
    display_label : how ``display`` is printed (the field's usual typography)
    example : a valid input shown in error messages
    """

    name: str
    customary: str
    si: str
    display: str | None = None
    display_label: str | None = None
    example: str = ""


KINDS: dict[str, Kind] = {
    "membrane_resistivity": Kind("specific membrane resistance", "ohm*cm**2", "ohm*m**2",
                                 "kohm*cm**2", "kΩ·cm²", "20 kΩ·cm²"),
    "axial_resistivity": Kind("axial resistivity", "ohm*cm", "ohm*m", "ohm*cm", "Ω·cm", "150 Ω·cm"),
    "membrane_capacitance": Kind("specific membrane capacitance", "uF/cm**2", "F/m**2",
                                 "uF/cm**2", "µF/cm²", "1 µF/cm²"),
    "length": Kind("length", "um", "m", example="500 µm"),
    "conductance": Kind("conductance", "nS", "S", example="0.5 nS"),
    "current": Kind("current", "pA", "A", example="100 pA"),
    "voltage": Kind("voltage", "mV", "V", example="10 mV"),
    "time": Kind("time", "ms", "s", example="5 ms"),
    "frequency": Kind("frequency", "Hz", "Hz", example="100 Hz"),
    "resistance": Kind("resistance", "Mohm", "ohm", example="200 MΩ"),
    "capacitance": Kind("capacitance", "pF", "F", example="100 pF"),
    "area": Kind("area", "um**2", "m**2", "um**2", "µm²", "1000 µm²"),
    "specific_conductance": Kind("specific membrane conductance", "S/cm**2", "S/m**2",
                                 "mS/cm**2", "mS/cm²", "0.05 mS/cm²"),
    "dimensionless": Kind("dimensionless number", "dimensionless", "dimensionless", example="0.7"),
    "angle": Kind("angle", "rad", "rad", "degree", "°", example="0.5 rad"),
    "temperature": Kind("temperature", "degC", "K", "degC", "°C", example="35 °C"),
}

# magnitudes (in SI units) the closed forms are evaluated for; far beyond any cell, well inside
# the float range, so that products such as d^-1.5 or ℓ/λ cannot overflow
SI_RANGE = (1e-24, 1e24)

_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$|^[+-]?(inf|infinity|nan)$", re.IGNORECASE)
_SUPERSCRIPTS = str.maketrans({"²": "**2", "³": "**3", "⁻": "**-", "¹": "1"})
# a unit name directly followed by an exponent digit: cm2 -> cm**2 (not 1e3: no word boundary)
_GLUED_EXPONENT = re.compile(r"\b([A-Za-zµ]+)([23])\b")
_PLAIN_SI = {"ohm*m**2", "ohm*m", "F/m**2", "S/m**2", "m**2", "dimensionless", "rad"}


@cache
def registry() -> pint.UnitRegistry:
    """The package's single pint registry (built once; pint caches its parse on disk)."""
    import pint

    ureg: pint.UnitRegistry = pint.UnitRegistry(cache_folder=":auto:")
    return ureg


def _normalise(text: str) -> str:
    """Rewrite common typography into pint syntax: Ω, µ/μ, ·, ², cm2, ^."""
    out = (text.replace("\u2126", "ohm").replace("Ω", "ohm").replace("μ", "u").replace("µ", "u")
           .replace("·", "*").replace("⋅", "*").replace("×", "*").replace("−", "-").replace("^", "**"))
    out = out.translate(_SUPERSCRIPTS)
    out = _GLUED_EXPONENT.sub(r"\1**\2", out)
    return out.strip()


def _kind(kind: str) -> Kind:
    try:
        return KINDS[kind]
    except KeyError:
        raise ValueError(f"unknown quantity kind {kind!r}") from None


def parse_quantity(text: str | float, kind: str, field: str, *, allow_inf: bool = False,
                   allow_zero: bool = False, allow_negative: bool = False) -> float:
    """Parse one user value into an SI float, or raise an :class:`InputError` naming ``field``.

    Parameters
    ----------
    text : the user's text, e.g. ``"20 kΩ·cm²"``, ``"2um"`` or a bare ``"20000"``
    kind : a key of :data:`KINDS`; bare numbers are read in its customary unit
    field : the option or column name, used in error messages (``"--Rm"``)
    allow_inf, allow_zero, allow_negative : widen the accepted range (default: finite, > 0)
    """
    k = _kind(kind)
    raw = str(text).strip()
    if not raw:
        raise InputError(f"{field}: empty value; expected a {k.name} such as {k.example}")
    if _NUMBER.match(raw):
        magnitude = float(raw)
        value = magnitude * _si_factor(k.customary, k.si) if math.isfinite(magnitude) else magnitude
    else:
        value = _parse_with_units(raw, k, field)
    _check_range(value, k, field, raw, allow_inf=allow_inf, allow_zero=allow_zero,
                 allow_negative=allow_negative)
    return value


def _parse_with_units(raw: str, k: Kind, field: str) -> float:
    import tokenize

    import pint

    ureg = registry()
    text = _normalise(raw)
    try:
        quantity: pint.Quantity = ureg.Quantity(text)
    except (pint.PintError, ValueError, TypeError, AttributeError, SyntaxError, KeyError,
            AssertionError, IndexError, ZeroDivisionError, tokenize.TokenError) as exc:
        detail = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputError(f"{field}: cannot read {raw!r} ({detail}); expected a {k.name} "
                         f"such as {k.example}") from None
    if not isinstance(quantity, ureg.Quantity):  # a plain number after normalisation
        return float(quantity) * _si_factor(k.customary, k.si)
    try:
        return float(quantity.to(k.si).magnitude)
    except pint.DimensionalityError:
        found = _describe_dimension(quantity)
        raise UnitKindError(f"{field}: {raw!r} is {found}, expected a {k.name} such as {k.example}") from None


def _describe_dimension(quantity: pint.Quantity) -> str:
    for kind in KINDS.values():
        if kind.name != "dimensionless number" and quantity.check(kind.si):
            return f"{'an' if kind.name[0] in 'aeiou' else 'a'} {kind.name}"
    return f"in {quantity.units:~P}"


@cache
def _si_factor(unit: str, si: str) -> float:
    if unit == si:
        return 1.0
    return float(registry().Quantity(1.0, unit).to(si).magnitude)


def _check_range(value: float, k: Kind, field: str, raw: str, *, allow_inf: bool, allow_zero: bool,
                 allow_negative: bool) -> None:
    if math.isnan(value):
        raise InputError(f"{field}: {raw!r} is not a number; expected a {k.name} such as {k.example}")
    if math.isinf(value) and not (allow_inf and value > 0):
        raise InputError(f"{field}: {raw!r} must be finite; expected a {k.name} such as {k.example}")
    if value < 0 and not allow_negative:
        raise InputError(f"{field}: {raw!r} is negative; expected a positive {k.name} such as {k.example}")
    if value == 0 and not (allow_zero or allow_negative):
        raise InputError(f"{field}: {raw!r} is zero; expected a positive {k.name} such as {k.example}")
    if value != 0 and math.isfinite(value) and not SI_RANGE[0] <= abs(value) <= SI_RANGE[1]:
        raise InputError(f"{field}: {raw!r} is outside the range this tool computes with "
                         f"({SI_RANGE[0]:g} to {SI_RANGE[1]:g} in SI units); expected a {k.name} such as {k.example}")


_RANGE = re.compile(r"^\s*([^:]+):([^:]+):([^:]+?)\s*([A-Za-zµμΩ\u2126°][^:]*)?$")


def parse_series(text: str, kind: str, field: str, *, allow_zero: bool = True,
                 allow_negative: bool = False, max_points: int = 1_000_000) -> list[float]:
    """Parse a list or range of values into SI floats.

    Accepted forms (a trailing unit applies to every bare number before it):

    * ``"0, 0.5, 1 ms"`` or ``"0ms, 500us, 1ms"``: a list;
    * ``"0:10:0.5 ms"``: start, stop (inclusive when hit within rounding) and step.
    """
    raw = text.strip()
    k = _kind(kind)
    if not raw:
        raise InputError(f"{field}: empty list; expected values such as '0, 1, 2' or '0:10:1' with a unit")
    match = _RANGE.match(raw)
    if match:
        unit = (match.group(4) or "").strip()
        start, stop, step = (parse_quantity(f"{part.strip()} {unit}".strip(), kind, field,
                                            allow_zero=True, allow_negative=True)
                             for part in match.group(1, 2, 3))
        if step <= 0:
            raise InputError(f"{field}: step in {raw!r} must be positive")
        if stop < start:
            raise InputError(f"{field}: range {raw!r} ends before it starts")
        count = math.floor((stop - start) / step * (1 + 1e-12)) + 1
        if count > max_points:
            raise InputError(f"{field}: range {raw!r} has {count} points; at most {max_points} allowed")
        values = [start + i * step for i in range(count)]
    else:
        parts = [p.strip() for p in raw.split(",")]
        if any(not p for p in parts):
            raise InputError(f"{field}: empty item in list {raw!r}")
        unit = _trailing_unit(parts[-1])
        values = [parse_quantity(f"{p} {unit}" if unit and _NUMBER.match(p) else p, kind, field,
                                 allow_zero=True, allow_negative=True) for p in parts]
    for v, shown in zip(values, [raw] * len(values), strict=True):
        _check_range(v, k, field, shown, allow_inf=False, allow_zero=allow_zero,
                     allow_negative=allow_negative)
    return values


def _trailing_unit(item: str) -> str:
    m = re.match(r"^\s*[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?\s*(.*)$", item)
    return m.group(3).strip() if m else ""


def si_unit(kind: str) -> str:
    """The SI unit string used for ``kind`` in JSON and CSV output ("ohm", "m", "F/m**2"...)."""
    return _kind(kind).si


def format_quantity(value: float, kind: str, digits: int = 4) -> str:
    """Format an SI value for people: ``'318.3 MΩ'``, ``'1.000 mm'``, ``'20.00 kΩ·cm²'``.

    Quantities with a customary display unit (specific resistances, capacitance per area)
    are shown in it; the rest get the SI unit with a compact prefix.
    """
    k = _kind(kind)
    if isinstance(value, complex):
        raise TypeError("format magnitude and phase separately")
    if not math.isfinite(value):
        return f"{value}" if k.si == "dimensionless" else f"{value} {_plain_label(k)}"
    if k.si == "dimensionless":
        return _significant(value, digits)
    ureg = registry()
    if k.display is not None:
        magnitude = ureg.Quantity(value, k.si).to(k.display).magnitude
        return f"{_significant(magnitude, digits)} {k.display_label}"
    if value == 0:
        return f"0 {_plain_label(k)}"
    compact = ureg.Quantity(value, k.si).to_compact()
    return f"{_significant(compact.magnitude, digits)} {compact.units:~P}"


def _plain_label(k: Kind) -> str:
    return k.display_label or f"{registry().Unit(k.si):~P}"


def _significant(x: float, digits: int) -> str:
    """``digits`` significant figures, keeping trailing zeros (1.000) but no bare point."""
    text = f"{x:#.{digits}g}"
    if "e" in text:
        mantissa, exponent = text.split("e")
        return f"{mantissa.rstrip('.')}e{int(exponent)}"
    return text.rstrip(".")


def format_values(values: Iterable[float], kind: str, digits: int = 4) -> list[str]:
    """Format several SI values of one kind (see :func:`format_quantity`)."""
    return [format_quantity(v, kind, digits) for v in values]
