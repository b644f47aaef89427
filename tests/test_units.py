"""The unit boundary: every common spelling in, the field's forms out, clear errors."""

from __future__ import annotations

import math

import pytest

from cabletheory.errors import InputError, UnitKindError
from cabletheory.units import format_quantity, parse_quantity, parse_series


@pytest.mark.parametrize(
    ("text", "kind", "si"),
    [
        ("20 kohm*cm**2", "membrane_resistivity", 2.0),
        ("20 kΩ·cm²", "membrane_resistivity", 2.0),
        ("20 k\u2126·cm²", "membrane_resistivity", 2.0),  # OHM SIGN, not Greek omega
        ("20 kΩ cm2", "membrane_resistivity", 2.0),
        ("20000", "membrane_resistivity", 2.0),  # bare: Ω·cm²
        ("150 ohm*cm", "axial_resistivity", 1.5),
        ("150 Ω·cm", "axial_resistivity", 1.5),
        ("150", "axial_resistivity", 1.5),  # bare: Ω·cm
        ("1 uF/cm^2", "membrane_capacitance", 0.01),
        ("1 µF/cm²", "membrane_capacitance", 0.01),  # MICRO SIGN
        ("1 μF/cm2", "membrane_capacitance", 0.01),  # GREEK MU
        ("1", "membrane_capacitance", 0.01),  # bare: µF/cm²
        ("2 um", "length", 2e-6),
        ("2um", "length", 2e-6),
        ("2 µm", "length", 2e-6),
        ("0.5 mm", "length", 5e-4),
        ("2", "length", 2e-6),  # bare: µm
        ("100 pA", "current", 1e-10),
        ("100", "current", 1e-10),  # bare: pA
        ("0.5 nS", "conductance", 5e-10),
        ("0.5", "conductance", 5e-10),  # bare: nS
        ("100 Hz", "frequency", 100.0),
        ("0.1 kHz", "frequency", 100.0),
        ("10 mV", "voltage", 0.01),
        ("5", "time", 5e-3),  # bare: ms
        ("1e3 ohm", "resistance", 1e3),
        ("1.5e-3 s", "time", 1.5e-3),
    ],
)
def test_spellings(text, kind, si):
    assert parse_quantity(text, kind, "--x") == pytest.approx(si, rel=1e-12)


def test_infinity_only_where_allowed():
    assert math.isinf(parse_quantity("inf", "length", "--length", allow_inf=True))
    with pytest.raises(InputError, match="--length: 'inf' must be finite"):
        parse_quantity("inf", "length", "--length")


@pytest.mark.parametrize(
    ("text", "kind", "message"),
    [
        ("1uF/cm^2", "membrane_resistivity",
         r"^--x: '1uF/cm\^2' is a specific membrane capacitance, expected a specific membrane resistance"),
        ("3 kg", "length", r"^--x: '3 kg' is in kg, expected a length"),
        ("5 nS", "current", r"is a conductance, expected a current"),
        ("-2", "length", r"negative; expected a positive length"),
        ("-2 um", "length", r"negative"),
        ("0", "length", r"zero"),
        ("nan", "length", r"not a number"),
        ("nan um", "length", r"not a number"),
        ("", "length", r"empty value"),
        ("abc", "length", r"cannot read 'abc'"),
        ("2 um)", "length", r"cannot read"),
        ("__import__('os').system('true')", "length", r"cannot read"),
    ],
)
def test_errors_name_the_field_value_and_expected_kind(text, kind, message):
    with pytest.raises(InputError, match=message) as info:
        parse_quantity(text, kind, "--x")
    assert "\n" not in str(info.value)


def test_wrong_kind_is_its_own_error_class():
    with pytest.raises(UnitKindError):
        parse_quantity("1 uF/cm^2", "membrane_resistivity", "--Rm")
    assert issubclass(UnitKindError, ValueError)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("0, 0.5, 1 ms", [0.0, 5e-4, 1e-3]),
        ("0ms, 500us, 1ms", [0.0, 5e-4, 1e-3]),
        ("0:1:0.25 ms", [0.0, 2.5e-4, 5e-4, 7.5e-4, 1e-3]),
        ("0:0.3:0.1", [0.0, 1e-4, 2e-4, 3e-4]),  # bare ms; the stop is kept despite rounding
        ("2", [2e-3]),
    ],
)
def test_series(text, expected):
    assert parse_series(text, "time", "--times") == pytest.approx(expected, rel=1e-12, abs=1e-18)


@pytest.mark.parametrize(
    ("text", "message"),
    [("0:1:0 ms", "step"), ("1:0:0.1 ms", "ends before"), ("0,,1", "empty item"), ("-1, 2 ms", "negative"),
     ("0:1e9:1 ms", "at most")],
)
def test_series_errors(text, message):
    with pytest.raises(InputError, match=message):
        parse_series(text, "time", "--times", max_points=1000)


@pytest.mark.parametrize(
    ("value", "kind", "expected"),
    [
        (318.3e6, "resistance", "318.3 MΩ"),
        (1e-3, "length", "1.000 mm"),
        (0.02, "time", "20.00 ms"),
        (2.0, "membrane_resistivity", "20.00 kΩ·cm²"),
        (1.5, "axial_resistivity", "150.0 Ω·cm"),
        (0.01, "membrane_capacitance", "1.000 µF/cm²"),
        (5e-10, "conductance", "500.0 pS"),
        (0.70710678, "dimensionless", "0.7071"),
        (0.0, "length", "0 m"),
    ],
)
def test_format_uses_compact_prefixes_and_the_fields_forms(value, kind, expected):
    assert format_quantity(value, kind) == expected


def test_format_digits():
    assert format_quantity(318.30988e6, "resistance", digits=3) == "318 MΩ"
    assert format_quantity(1.234567e-3, "length", digits=6) == "1.23457 mm"


def test_a_range_that_reads_like_start_step_stop_is_refused_with_the_likely_meaning():
    """'0:100:500' is start:stop:step with a step larger than its span: one value, almost surely
    meant as 0 to 500 in steps of 100; the message says so (issue: daily use)."""
    from cabletheory.units import parse_series

    with pytest.raises(InputError, match=r"did you mean 0:500:100 ms\?"):
        parse_series("0:100:500 ms", "time", "--times")
    assert parse_series("5:5:1 ms", "time", "--times") == [pytest.approx(5e-3)]
    with pytest.raises(InputError, match="ends before it starts"):
        parse_series("10:5:1", "time", "--times")
