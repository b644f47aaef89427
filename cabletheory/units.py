"""The unit boundary: text -> SI float on the way in, SI float -> text on the way out.

This is the only module that imports pint, and it holds the package's one unit registry
(created lazily from the package's own short definitions file, ``data/units.txt``, fast enough
to need no on-disk cache). Core modules never see a Quantity: they receive plain SI floats from
:func:`parse_quantity`.

User text is checked before pint sees it: one number (lists and decimal commas are refused),
a unit of at most :data:`MAX_FACTORS` names, :data:`MAX_NESTING` levels of brackets and powers
up to :data:`MAX_EXPONENT`, in at most :data:`MAX_VALUE_LENGTH` characters; so every text,
however hostile, is answered at once with one line. A value far outside the range met in
neurons (:data:`PLAUSIBLE`) is used but draws an :class:`~cabletheory.errors.ImplausibleValueWarning`.

Bare numbers are read in the field's customary unit (:data:`KINDS`), so ``--Rm 20000``
means 20 000 Ω·cm² and ``--diameter 2`` means 2 µm.
"""

from __future__ import annotations

import math
import re
import warnings
from collections.abc import Iterable
from dataclasses import dataclass
from functools import cache, lru_cache
from importlib import resources
from types import ModuleType
from typing import TYPE_CHECKING

from .errors import ImplausibleValueWarning, InputError, UnitKindError

if TYPE_CHECKING:  # pragma: no cover
    import pint

__all__ = ["KINDS", "PLAUSIBLE", "Kind", "Plausible", "format_quantity", "implausible", "parse_quantity",
           "parse_series", "registry", "si_unit"]


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


@dataclass(frozen=True, slots=True)
class Plausible:
    """Values of one kind met in neurons, and the wider band outside which a value draws a warning.

    Attributes
    ----------
    low, high : SI bounds of the band; ``None`` leaves that side open (small voltages and times are
        legitimate tolerances and steps)
    met : the range met in neurons, as people write it (shown in the warning)
    source : where ``met`` comes from; ``[CP]`` marks common practice of the trade
    """

    low: float | None
    high: float | None
    met: str
    source: str


# Far outside = beyond these bands, each at least tenfold wider than the range met in neurons, so
# that only a likely unit slip (Rm 3 read as 3 Ω·cm², '50 PA' for 50 pA) is flagged. A value
# outside its band is used as given, with one warning line (ImplausibleValueWarning).
PLAUSIBLE: dict[str, Plausible] = {
    "membrane_resistivity": Plausible(1e-3, 1e3, "0.1 to 200 kΩ·cm²",
                                      "Clements & Redman 1989 [ClementsRedman1989] (somatic 0.1–0.42 kΩ·cm²); "
                                      "Major et al. 1994 [Major1994] (120–200 kΩ·cm², [MEM])"),
    "axial_resistivity": Plausible(0.1, 100.0, "70 to 340 Ω·cm",
                                   "Fleshman, Segev & Burke 1988 [FleshmanSegevBurke1988] (70 Ω·cm); Major et al. "
                                   "1994 [Major1994] (170–340 Ω·cm, [MEM])"),
    "membrane_capacitance": Plausible(1e-3, 0.2, "0.7 to 2 µF/cm²",
                                      "Gentet, Stuart & Clements 2000 [GentetStuartClements2000] (0.9 µF/cm²); "
                                      "Trevelyan & Jack 2002 [TrevelyanJack2002] (0.78–0.94 µF/cm²); up to about "
                                      "2 µF/cm² in young neurons [MEM]"),
    "length": Plausible(1e-9, 10.0, "0.1 µm (spine necks) to about 1 m (the longest axons)", "[CP]"),
    "conductance": Plausible(1e-15, 1e-3, "1 pS (one channel) to 10 µS (a whole cell)", "[CP]"),
    "current": Plausible(1e-15, 1e-6, "1 pA to 100 nA", "[CP]"),
    "voltage": Plausible(None, 1.0, "up to about 150 mV from rest", "[CP]"),
    "time": Plausible(None, 1e5, "up to minutes", "[CP]"),
    "frequency": Plausible(None, 1e6, "up to about 10 kHz", "[CP]"),
    "resistance": Plausible(1e3, 1e12, "1 MΩ to 10 GΩ (input resistances)", "[CP]"),
    "capacitance": Plausible(1e-15, 1e-6, "1 pF to 1 nF (whole cells)", "[CP]"),
    "area": Plausible(1e-15, 1e-4, "1 µm² to 1 mm²", "[CP]"),
    "specific_conductance": Plausible(1e-3, 1e3, "0.005 to 10 mS/cm² (1/Rm)", "[CP]"),
    "temperature": Plausible(223.15, 373.15, "about 5 to 40 °C", "[CP]"),
}

# limits checked before any unit text reaches pint, so that every answer is immediate
MAX_VALUE_LENGTH = 200  # characters in one value ("20 kΩ·cm²" has 9)
MAX_LIST_LENGTH = 20_000  # characters in a list of values
MAX_NESTING = 3  # brackets inside brackets in a unit
MAX_FACTORS = 8  # unit names in one unit ("kohm*cm**2" has 2)
MAX_EXPONENT = 6  # largest power of a unit name (cm**2, s**-1)

_FLOAT = r"(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_WORDS = r"(?:inf(?:inity)?|nan)(?![A-Za-z])"
_NUMBER = re.compile(rf"^[+-]?(?:{_FLOAT}|{_WORDS})$", re.IGNORECASE)
_LEADING = re.compile(rf"^[+-]?(?:{_FLOAT}|{_WORDS})", re.IGNORECASE)
_STARTS_NUMBER = re.compile(r"^[+-]?\.?\d")
_DECIMAL_COMMA = re.compile(r"^([+-]?\d+),(\d+)((?:[eE][+-]?\d+)?)(?=\s*[^\d\s,.]|\s*$)")
_SUPERSCRIPTS = str.maketrans({"²": "**2", "³": "**3", "⁻": "**-", "¹": "1"})
# a unit name directly followed by an exponent digit: cm2 -> cm**2 (not 1e3: no word boundary)
_GLUED_EXPONENT = re.compile(r"\b([A-Za-zµ]+)([23])\b")
_TOKEN = re.compile(r"\s*(?:(?P<name>[A-Za-z_%°][A-Za-z_0-9]*)|(?P<op>\*\*|\*|/)|(?P<open>\()|(?P<close>\))"
                    r"|(?P<num>[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?))")
_PLAIN_SI = {"ohm*m**2", "ohm*m", "F/m**2", "S/m**2", "m**2", "dimensionless", "rad"}

# What pint computes for the units people usually write, written out so that bare numbers and
# these spellings are read, and every result printed, without importing pint (about a third of a
# second at start-up); any other unit text goes to pint. tests/test_units_without_pint.py checks
# every entry, and format_quantity's output, against the pint registry.
# unit text (as _normalise writes it) -> (SI unit, factor to it)
_KNOWN_UNITS: dict[str, tuple[str, float]] = {
    "kohm*cm**2": ("ohm*m**2", 0.1), "ohm*cm**2": ("ohm*m**2", 0.0001), "Mohm*cm**2": ("ohm*m**2", 100.0),
    "ohm*m**2": ("ohm*m**2", 1.0),
    "ohm*cm": ("ohm*m", 0.01), "kohm*cm": ("ohm*m", 10.0), "ohm*m": ("ohm*m", 1.0), "ohm*mm": ("ohm*m", 0.001),
    "uF/cm**2": ("F/m**2", 0.01), "fF/um**2": ("F/m**2", 0.0010000000000000002), "F/m**2": ("F/m**2", 1.0),
    "nm": ("m", 1e-09), "um": ("m", 1e-06), "micron": ("m", 1e-06), "mm": ("m", 0.001), "cm": ("m", 0.01),
    "m": ("m", 1.0),
    "pS": ("S", 1e-12), "nS": ("S", 1e-09), "uS": ("S", 1e-06), "mS": ("S", 0.001), "S": ("S", 1.0),
    "fA": ("A", 1e-15), "pA": ("A", 1e-12), "nA": ("A", 1e-09), "uA": ("A", 1e-06), "mA": ("A", 0.001),
    "A": ("A", 1.0),
    "uV": ("V", 1e-06), "mV": ("V", 0.001), "V": ("V", 1.0),
    "ns": ("s", 1e-09), "us": ("s", 1e-06), "ms": ("s", 0.001), "s": ("s", 1.0), "min": ("s", 60.0),
    "mHz": ("Hz", 0.001), "Hz": ("Hz", 1.0), "kHz": ("Hz", 1000.0),
    "ohm": ("ohm", 1.0), "kohm": ("ohm", 1000.0), "Mohm": ("ohm", 1000000.0), "Gohm": ("ohm", 1000000000.0),
    "fF": ("F", 1e-15), "pF": ("F", 1e-12), "nF": ("F", 1e-09), "uF": ("F", 1e-06), "F": ("F", 1.0),
    "um**2": ("m**2", 1e-12), "mm**2": ("m**2", 1e-06), "cm**2": ("m**2", 0.0001), "m**2": ("m**2", 1.0),
    "pS/um**2": ("S/m**2", 1.0), "mS/cm**2": ("S/m**2", 10.0), "S/cm**2": ("S/m**2", 10000.0),
    "S/m**2": ("S/m**2", 1.0),
    "rad": ("rad", 1.0), "degree": ("rad", 0.017453292519943295), "deg": ("rad", 0.017453292519943295),
}
# SI unit -> display unit of the kinds shown in the field's customary unit
_DISPLAY_FACTOR: dict[tuple[str, str], float] = {
    ("ohm*m**2", "kohm*cm**2"): 10.0, ("ohm*m", "ohm*cm"): 100.0, ("F/m**2", "uF/cm**2"): 100.0,
    ("m**2", "um**2"): 1000000000000.0001, ("S/m**2", "mS/cm**2"): 0.1, ("rad", "degree"): 57.29577951308232,
}
# SI units printed with a compact decimal prefix, and their symbols (pint's '~P' format)
_UNIT_SYMBOL = {"m": "m", "S": "S", "A": "A", "V": "V", "s": "s", "Hz": "Hz", "ohm": "Ω", "F": "F"}
# the decimal prefixes of data/units.txt whose power of ten is a multiple of 3, and their symbols
_PREFIX_SYMBOL = {-30: "q", -27: "r", -24: "y", -21: "z", -18: "a", -15: "f", -12: "p", -9: "n", -6: "µ",
                  -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T", 15: "P", 18: "E", 21: "Z", 24: "Y",
                  27: "R", 30: "Q"}
# how a bare number's customary unit is named in a warning (pint's '~P' format of the unit)
_CUSTOMARY_SYMBOL = {"um": "µm", "nS": "nS", "pA": "pA", "mV": "mV", "ms": "ms", "Hz": "Hz", "Mohm": "MΩ",
                     "pF": "pF", "dimensionless": "", "rad": "rad"}


@cache
def registry() -> pint.UnitRegistry:
    """The package's single pint registry, built from ``data/units.txt``.

    The definitions are few, so building the registry is fast and no on-disk cache is used: no
    file that another user could write is ever loaded, and a damaged or unwritable cache folder
    cannot break a run.

    pint is imported with Dask hidden from it (:func:`_import_pint`): pint imports Dask whenever
    Dask is installed (it is, with the ``cluster`` extra), which doubles pint's import time, and
    this package never hands pint a Dask array.
    """
    pint_module = _import_pint()

    with resources.as_file(resources.files("cabletheory") / "data" / "units.txt") as definitions:
        ureg: pint.UnitRegistry = pint_module.UnitRegistry(str(definitions), cache_folder=None)
    return ureg


def _import_pint() -> ModuleType:
    """``import pint``, without letting pint import Dask (about 0.1 s at start-up).

    pint checks ``importlib.util.find_spec("dask")`` when it is first imported and then imports
    ``dask.base``; a ``None`` entry in ``sys.modules`` makes that check answer "not installed". The
    entry is removed at once, so Dask itself stays importable, and nothing changes when Dask or
    pint was imported before. The only effect: pint quantities made in this process do not wrap
    Dask arrays, which this package never gives them.
    """
    import sys

    if "pint" in sys.modules or "dask" in sys.modules:
        import pint

        return pint
    sys.modules["dask"] = None  # type: ignore[assignment]
    try:
        import pint
    finally:
        if sys.modules.get("dask", 0) is None:
            del sys.modules["dask"]
    return pint


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
        raise InputError(f"unknown quantity kind {kind!r}") from None


def _a(name: str) -> str:
    """``name`` with its indefinite article: 'a length', 'an axial resistivity'."""
    return f"{'an' if name[:1].lower() in 'aeiou' else 'a'} {name}"


def _expected(k: Kind) -> str:
    return f"expected {_a(k.name)} such as {k.example}"


def _shown(raw: str) -> str:
    """The user's text for a message: quoted, escaped, at most 40 characters."""
    return repr(raw if len(raw) <= 40 else raw[:37] + "...")


def parse_quantity(text: str | float, kind: str, field: str, *, allow_inf: bool = False,
                   allow_zero: bool = False, allow_negative: bool = False, warn: bool = True) -> float:
    """Parse one user value into an SI float, or raise an :class:`InputError` naming ``field``.

    One number, optionally followed by a unit: ``"20 kΩ·cm²"``, ``"2um"``, a bare ``"20000"``
    (read in the kind's customary unit). A list (``"2, 3 um"``, ``"2 3 um"``), a decimal comma
    (``"1,5 µm"``, refused with a hint), an overflowing number (``"1e999"``) and over-long or
    deeply nested unit text are refused before pint sees them, so every answer is immediate.

    Parameters
    ----------
    text : the user's text, e.g. ``"20 kΩ·cm²"``, ``"2um"`` or a bare ``"20000"``
    kind : a key of :data:`KINDS`; bare numbers are read in its customary unit
    field : the option, column or file:line, used in error messages (``"--Rm"``)
    allow_inf, allow_zero, allow_negative : widen the accepted range (default: finite, > 0);
        ``allow_inf`` accepts the words ``inf``/``infinity``, never a number that overflows
    warn : issue an :class:`~cabletheory.errors.ImplausibleValueWarning` when the value lies far
        outside the range met in neurons (:data:`PLAUSIBLE`)
    """
    k = _kind(kind)
    raw = _checked_text(str(text), k, field, MAX_VALUE_LENGTH)
    value = _read_value(raw, k, field, allow_inf=allow_inf)
    _check_range(value, k, field, raw, allow_inf=allow_inf, allow_zero=allow_zero,
                 allow_negative=allow_negative)
    if warn:
        _warn_if_implausible(value, kind, k, field, raw)
    return value


def _checked_text(text: str, k: Kind, field: str, limit: int) -> str:
    raw = text.strip()
    if not raw:
        raise InputError(f"{field}: empty value; {_expected(k)}")
    if len(raw) > limit:
        raise InputError(f"{field}: the text is {len(raw)} characters long (at most {limit}); {_expected(k)}")
    bad = next((ch for ch in raw if ord(ch) < 32 or ord(ch) == 127), None)
    if bad is not None:
        raise InputError(f"{field}: the text holds a control character ({bad!r}); {_expected(k)}")
    return raw


def _read_value(raw: str, k: Kind, field: str, *, allow_inf: bool) -> float:
    """One number with an optional unit -> SI float (not yet range-checked)."""
    if _NUMBER.match(raw):
        number, unit = raw, ""
    else:
        number, unit = _split(raw, k, field)
    magnitude = float(number)
    written_as_word = number.lstrip("+-")[:1].lower() in ("i", "n")
    value = _convert(magnitude, unit, raw, k, field)
    if math.isinf(value) and not written_as_word:
        raise InputError(_too_large(raw, k, field, allow_inf))
    return value


def _too_large(raw: str, k: Kind, field: str, allow_inf: bool) -> str:
    hint = "; write 'inf' for an infinite value" if allow_inf else ""
    return f"{field}: {_shown(raw)} is too large to compute with; {_expected(k)}{hint}"


def _split(raw: str, k: Kind, field: str) -> tuple[str, str]:
    """(number, unit text) of one value; lists, decimal commas and stray numbers are refused."""
    comma = _DECIMAL_COMMA.match(raw)
    if comma and raw.count(",") == 1:
        whole, decimals, exponent = comma.groups()
        meant = f"{whole}.{decimals}{exponent}"
        if len(decimals) == 3:
            raise InputError(f"{field}: {_shown(raw)} has a comma; write {meant} for a decimal point or "
                             f"{whole}{decimals}{exponent} without a thousands separator ({_expected(k)})")
        raise InputError(f"{field}: {_shown(raw)} has a decimal comma; did you mean {meant}? ({_expected(k)})")
    match = _LEADING.match(raw)
    if match is None:
        raise InputError(f"{field}: cannot read {_shown(raw)}: it does not start with a number; {_expected(k)}")
    rest = raw[match.end():]
    if "," in rest or ";" in rest or _STARTS_NUMBER.match(rest.lstrip()):
        raise InputError(f"{field}: {_shown(raw)} holds several numbers where one is needed; {_expected(k)}")
    return match.group(0), rest.strip()


def _check_unit_text(unit: str, raw: str, k: Kind, field: str) -> str:
    """Check the unit's grammar and size without pint; return it in pint syntax."""
    text = _normalise(unit)

    def refuse(reason: str) -> InputError:
        return InputError(f"{field}: cannot read the unit of {_shown(raw)} ({reason}); {_expected(k)}")

    depth = factors = 0
    operand_next = True
    position = 0
    last_power = False
    while position < len(text):
        token = _TOKEN.match(text, position)
        if token is None or token.end() == position:
            rest = text[position:].strip()
            raise refuse(f"unexpected {rest[:1]!r}")
        position = token.end()
        kind = token.lastgroup
        if kind == "name":
            factors += 1
            if factors > MAX_FACTORS:
                raise refuse(f"more than {MAX_FACTORS} unit names")
            operand_next, last_power = False, False
        elif kind == "open":
            depth += 1
            if depth > MAX_NESTING:
                raise refuse(f"brackets nested deeper than {MAX_NESTING}")
            operand_next, last_power = True, False
        elif kind == "close":
            if operand_next or depth == 0:
                raise refuse("unbalanced brackets")
            depth -= 1
            operand_next, last_power = False, False
        elif kind == "op" and token.group("op") == "**":
            if operand_next or last_power:
                raise refuse("a power must follow a unit, and only once")
            exponent = _TOKEN.match(text, position)
            if exponent is None or exponent.lastgroup != "num":
                raise refuse("a power needs a number")
            position = exponent.end()
            power = float(exponent.group("num"))
            if not abs(power) <= MAX_EXPONENT:
                raise refuse(f"power {exponent.group('num').strip()} is beyond ±{MAX_EXPONENT}")
            last_power = True
        elif kind == "op":
            if operand_next and not (token.group("op") == "/" and token.start() == 0):
                raise refuse("an operator without a unit before it")
            operand_next, last_power = True, False
        else:  # a number that is not a power
            raise InputError(f"{field}: {_shown(raw)} holds several numbers where one is needed; {_expected(k)}")
    if operand_next and text:
        raise refuse("it ends with an operator or an open bracket")
    if depth:
        raise refuse("unbalanced brackets")
    return f"1{text}" if text.startswith("/") else text


def _convert(magnitude: float, unit: str, raw: str, k: Kind, field: str) -> float:
    if not unit:
        if not math.isfinite(magnitude):
            return magnitude
        if k.si == "K":  # a bare temperature is in °C: an offset, not a factor
            return magnitude + 273.15
        return magnitude * _si_factor(k.customary, k.si)
    text = _check_unit_text(unit, raw, k, field)
    factor = _unit_factor(text, k, raw, field)
    if not math.isfinite(magnitude):
        return magnitude
    if k.si == "K":  # an offset unit (°C): convert the value, not a factor
        q = registry().Quantity(magnitude, registry().parse_expression(text).units)
        return float(q.to(k.si).magnitude)
    return magnitude * factor


def _unit_factor(text: str, k: Kind, raw: str, field: str) -> float:
    """SI factor of checked unit text, or an InputError naming ``field``."""
    result = _factor_or_reason(text, k.si)
    if isinstance(result, float):
        return result
    reason, found = result
    if reason == "kind":
        raise UnitKindError(f"{field}: {_shown(raw)} is {found}, {_expected(k)}")
    raise InputError(f"{field}: cannot read the unit of {_shown(raw)} ({found}); {_expected(k)}")


@lru_cache(maxsize=512)
def _factor_or_reason(text: str, si: str) -> float | tuple[str, str]:
    """(cached) SI factor of checked unit text, or (reason, detail) when it cannot convert."""
    known = _KNOWN_UNITS.get(text)
    if known is not None and known[0] == si:  # a usual spelling ('2 um', '20 kohm*cm**2'): no pint needed
        return known[1]
    ureg = registry()
    pint = _import_pint()
    try:
        parsed = ureg.parse_expression(text)
    except pint.UndefinedUnitError as exc:
        names = getattr(exc, "unit_names", ())
        name = names[0] if isinstance(names, tuple | list) and names else str(exc)
        return "read", f"unknown unit {name!r}"
    except (pint.PintError, ValueError, TypeError, KeyError, AttributeError, SyntaxError, ZeroDivisionError,
            OverflowError, AssertionError):
        return "read", "not a unit this tool knows"
    if not isinstance(parsed, ureg.Quantity):
        return "read", "not a unit"
    try:
        if si == "K":  # offset units have no factor; the caller converts the value itself
            if parsed.dimensionality != ureg.Unit("K").dimensionality:
                return "kind", _describe_dimension(parsed)
            return 1.0
        return float(parsed.to(si).magnitude)
    except pint.DimensionalityError:
        return "kind", _describe_dimension(parsed)
    except pint.PintError:
        return "read", "not a unit this tool knows"


def _describe_dimension(quantity: pint.Quantity) -> str:
    if quantity.dimensionless:
        return "a plain number without a physical unit"
    dimensionality = quantity.dimensionality
    for kind in KINDS.values():
        if kind.si not in ("dimensionless", "rad") and registry().Unit(kind.si).dimensionality == dimensionality:
            return _a(kind.name)
    return f"in {quantity.units:~P}"


@cache
def _si_factor(unit: str, si: str) -> float:
    if unit == si:
        return 1.0
    known = _KNOWN_UNITS.get(unit)
    if known is not None and known[0] == si:
        return known[1]
    return float(registry().Quantity(1.0, unit).to(si).magnitude)


def _check_range(value: float, k: Kind, field: str, raw: str, *, allow_inf: bool, allow_zero: bool,
                 allow_negative: bool) -> None:
    if math.isnan(value):
        raise InputError(f"{field}: {_shown(raw)} is not a number; {_expected(k)}")
    if math.isinf(value) and not (allow_inf and value > 0):
        raise InputError(f"{field}: {_shown(raw)} must be finite; {_expected(k)}")
    if value < 0 and not allow_negative:
        raise InputError(f"{field}: {_shown(raw)} is negative; expected a positive {k.name} such as {k.example}")
    if value == 0 and not (allow_zero or allow_negative):
        raise InputError(f"{field}: {_shown(raw)} is zero; expected a positive {k.name} such as {k.example}")
    if value != 0 and math.isfinite(value) and not SI_RANGE[0] <= abs(value) <= SI_RANGE[1]:
        raise InputError(f"{field}: {_shown(raw)} is outside the range this tool computes with "
                         f"({SI_RANGE[0]:g} to {SI_RANGE[1]:g} in SI units); {_expected(k)}")


def implausible(value: float, kind: str) -> str | None:
    """Why an SI value of ``kind`` lies far outside the range met in neurons, or None if it does not.

    Zero and infinite values are never implausible (they mean sealed, killed, open ...)."""
    band = PLAUSIBLE.get(kind)
    size = abs(value)
    if band is None or size == 0 or not math.isfinite(size):
        return None
    if (band.low is not None and size < band.low) or (band.high is not None and size > band.high):
        return f"far outside the values met in neurons ({band.met})"
    return None


# how bare numbers are described in warnings (the field's typography)
_CUSTOMARY_LABELS = {"membrane_resistivity": "Ω·cm²", "axial_resistivity": "Ω·cm",
                     "membrane_capacitance": "µF/cm²", "area": "µm²", "specific_conductance": "S/cm²"}


def _warn_if_implausible(value: float, kind: str, k: Kind, field: str, raw: str) -> None:
    reason = implausible(value, kind)
    if reason is None:
        return
    if _NUMBER.match(raw):
        label = _CUSTOMARY_LABELS.get(kind) or _CUSTOMARY_SYMBOL.get(k.customary) \
            or f"{registry().Unit(k.customary):~P}"
        shown = f"{_shown(raw)} (read as {raw} {label}: bare numbers are in {label})"
    else:
        shown = _shown(raw)
    warnings.warn(f"{field}: {shown} is {reason}; check the unit", ImplausibleValueWarning, stacklevel=3)


_RANGE = re.compile(rf"^\s*([^:]+):([^:]+):\s*([+-]?{_FLOAT})\s*([A-Za-zµμΩ\u2126°%][^:]*)?$")


def parse_series(text: str, kind: str, field: str, *, allow_zero: bool = True,
                 allow_negative: bool = False, max_points: int = 1_000_000) -> list[float]:
    """Parse a list or range of values into SI floats.

    Accepted forms (a trailing unit applies to every bare number before it):

    * ``"0, 0.5, 1 ms"`` or ``"0ms, 500us, 1ms"``: a list;
    * ``"0:10:0.5 ms"``: start, stop (inclusive when hit within rounding) and step.

    Each item follows the rules of :func:`parse_quantity`; the whole text has at most
    :data:`MAX_LIST_LENGTH` characters and the result at most ``max_points`` values.
    """
    k = _kind(kind)
    raw = text.strip()
    if not raw:
        raise InputError(f"{field}: empty list; expected values such as '0, 1, 2' or '0:10:1' with a unit")
    raw = _checked_text(raw, k, field, MAX_LIST_LENGTH)
    match = _RANGE.match(raw)
    if match:
        unit = (match.group(4) or "").strip()
        start, stop, step = (_series_item(f"{part.strip()} {unit}".strip(), k, field)
                             for part in match.group(1, 2, 3))
        if step <= 0:
            raise InputError(f"{field}: step in {_shown(raw)} must be positive")
        if stop < start:
            hint = " (ranges are start:stop:step)" if step > start else ""
            raise InputError(f"{field}: range {_shown(raw)} ends before it starts{hint}")
        if step > stop - start and stop > start:
            parts = [p.strip() for p in match.group(1, 2, 3)]
            raise InputError(f"{field}: range {_shown(raw)} is start:stop:step, and its step is larger than the span "
                             f"from start to stop, so it holds one value; did you mean "
                             f"{parts[0]}:{parts[2]}:{parts[1]}{(' ' + unit) if unit else ''}?")
        count = math.floor((stop - start) / step * (1 + 1e-12)) + 1
        if count > max_points:
            raise InputError(f"{field}: range {_shown(raw)} has {count} points; at most {max_points} allowed")
        values = [start + i * step for i in range(count)]
    else:
        parts = [p.strip() for p in raw.split(",")]
        if any(not p for p in parts):
            raise InputError(f"{field}: empty item in list {_shown(raw)}")
        if len(parts) > max_points:
            raise InputError(f"{field}: {len(parts)} values; at most {max_points} allowed")
        unit = _trailing_unit(parts[-1])
        values = [_series_item(f"{p} {unit}" if unit and _NUMBER.match(p) else p, k, field) for p in parts]
    for v in values:
        _check_range(v, k, field, raw, allow_inf=False, allow_zero=allow_zero, allow_negative=allow_negative)
    for v in values:
        if implausible(v, kind):
            _warn_if_implausible(v, kind, k, field, raw)
            break
    return values


def _series_item(item: str, k: Kind, field: str) -> float:
    raw = _checked_text(item, k, field, MAX_VALUE_LENGTH)
    return _read_value(raw, k, field, allow_inf=False)


def _trailing_unit(item: str) -> str:
    m = re.match(rf"^\s*[+-]?{_FLOAT}\s*(.*)$", item)
    return m.group(1).strip() if m else ""


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
    if k.display is not None:
        factor = _DISPLAY_FACTOR.get((k.si, k.display))
        magnitude = (value * factor if factor is not None
                     else registry().Quantity(value, k.si).to(k.display).magnitude)
        return f"{_significant(magnitude, digits)} {k.display_label}"
    if value == 0:
        return f"0 {_plain_label(k)}"
    symbol = _UNIT_SYMBOL.get(k.si)
    if symbol is None:
        compact = registry().Quantity(value, k.si).to_compact()
        return f"{_significant(compact.magnitude, digits)} {compact.units:~P}"
    magnitude, prefix = _compact(value)
    return f"{_significant(magnitude, digits)} {prefix}{symbol}"


def _compact(value: float) -> tuple[float, str]:
    """(magnitude, prefix symbol) of a finite, non-zero SI value, as pint's ``to_compact`` gives
    them for a unit of power 1: the prefix whose power of ten, a multiple of 3 from -30 to 30, is the
    largest at most the value's, and the value times the conversion factor pint computes
    (``1 / 1e{power}``)."""
    power = min(max(math.floor(math.log10(abs(value)) / 3) * 3, -30), 30)
    if power == 0:
        return value, ""
    return value * (1.0 / float(f"1e{power}")), _PREFIX_SYMBOL[power]


def _plain_label(k: Kind) -> str:
    return k.display_label or _UNIT_SYMBOL.get(k.si) or f"{registry().Unit(k.si):~P}"


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
