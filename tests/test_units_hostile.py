"""The unit boundary against hostile and mistaken text: one number, one line, refused before pint.

Issue 11: lists in a one-number field were multiplied, '9^9^9 um' hung, deep brackets raised
RecursionError, '1e999' became infinite, dimensionless text was called "an angle".
"""

from __future__ import annotations

import math
import warnings

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cabletheory import units
from cabletheory.errors import ImplausibleValueWarning, InputError, UnitKindError
from cabletheory.units import KINDS, PLAUSIBLE, implausible, parse_quantity, parse_series


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("2, 3 um", r"^--diameter: '2, 3 um' holds several numbers where one is needed; expected a length"),
        ("2 3 um", r"holds several numbers"),
        ("1 .5 um", r"holds several numbers"),
        ("300 100", r"holds several numbers"),
        ("2 um 3", r"holds several numbers"),
        ("2; 3 um", r"holds several numbers"),
        ("1,5 µm", r"decimal comma; did you mean 1\.5\?"),
        ("1,5", r"decimal comma; did you mean 1\.5\?"),
        ("100,200", r"has a comma; write 100\.200 for a decimal point or 100200"),
    ],
)
def test_one_number_fields_refuse_lists_and_decimal_commas(text, message):
    with pytest.raises(InputError, match=message) as info:
        parse_quantity(text, "length", "--diameter")
    assert "\n" not in str(info.value)


def _no_pint():
    raise AssertionError("pint was asked to read text that should have been refused before it")


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("9^9^9 um", r"a power must follow a unit, and only once"),
        ("2 um^2^2", r"a power must follow a unit, and only once"),
        ("2 um**99", r"power 99 is beyond ±6"),
        ("2 um**1e9", r"power 1e9 is beyond ±6"),
        ("x" * 100_000, r"the text is 100000 characters long \(at most 200\)"),
        ("2 " + "(" * 5000 + "um" + ")" * 5000, r"characters long"),
        ("2 " + "(" * 4 + "um" + ")" * 4, r"brackets nested deeper than 3"),
        ("2 " + "um*" * 20_000 + "um", r"characters long"),
        ("2 " + "*".join(["um"] * 9), r"more than 8 unit names"),
        ("2 um)", r"unbalanced brackets"),
        ("2 (um", r"ends with an operator or an open bracket|unbalanced"),
        ("2 um*", r"ends with an operator"),
        ("2 */um", r"an operator without a unit before it"),
        ("2 um$", r"unexpected '\$'"),
        ("__import__('os').system('true')", r"does not start with a number"),
        ("2\x00um", r"control character"),
        ("2 um\x1b[31m", r"control character"),
        ("", r"empty value"),
    ],
)
def test_hostile_unit_text_is_refused_before_pint_sees_it(monkeypatch, text, message):
    monkeypatch.setattr(units, "registry", _no_pint)
    with pytest.raises(InputError, match=message) as info:
        parse_quantity(text, "length", "--diameter")
    assert "\n" not in str(info.value)
    assert str(info.value).startswith("--diameter: ")
    assert len(str(info.value)) < 300  # the message never echoes a long text


@pytest.mark.parametrize("text", ["1e999", "-1e999", "1e400 um", "1e308 Tm", "9" * 150 + "e200"])
def test_numbers_that_overflow_are_refused_even_where_infinity_is_allowed(text):
    with pytest.raises(InputError, match=r"too large to compute with.*write 'inf' for an infinite value"):
        parse_quantity(text, "length", "--length", allow_inf=True)


def test_only_the_word_inf_means_infinity():
    assert math.isinf(parse_quantity("inf", "length", "--length", allow_inf=True))
    assert math.isinf(parse_quantity("Infinity", "length", "--length", allow_inf=True))
    with pytest.raises(InputError, match="must be finite"):
        parse_quantity("inf", "length", "--diameter")


@pytest.mark.parametrize(("text", "kind"), [("1 %", "length"), ("0.5 %", "resistance"), ("2 um/m", "current"),
                                            ("1 rad", "voltage")])
def test_a_plain_number_is_never_called_an_angle(text, kind):
    with pytest.raises(UnitKindError) as info:
        parse_quantity(text, kind, "--x")
    assert "angle" not in str(info.value)
    assert "a plain number without a physical unit" in str(info.value)


def test_articles_follow_the_kind_name():
    with pytest.raises(UnitKindError, match=r"expected an axial resistivity such as 150 Ω·cm"):
        parse_quantity("3 pA", "axial_resistivity", "--Ri")
    with pytest.raises(UnitKindError, match=r"'3 pA' is a current, expected a length"):
        parse_quantity("3 pA", "length", "--x")


@pytest.mark.parametrize("text", ["2 xyz", "2 EOF(", "2 um)", "2 ((um"])
def test_no_raw_parser_text_leaks(text):
    with pytest.raises(InputError) as info:
        parse_quantity(text, "length", "--x")
    for leak in ("EOF in multi-line statement", "AssertionError", "Traceback", "TokenError", "pint"):
        assert leak not in str(info.value)


@pytest.mark.parametrize(
    ("text", "kind", "si"),
    [
        ("2 microns", "length", 2e-6),
        ("2 µm/µm*um", "length", 2e-6),
        ("1/ms", "frequency", 1e3),
        ("5 %", "dimensionless", 0.05),
        ("35 °C", "temperature", 308.15),
        ("20 kΩ·cm²", "membrane_resistivity", 2.0),
        ("+2 um", "length", 2e-6),
        ("2e-3 mm", "length", 2e-6),
        ("1 (kohm*cm**2)", "membrane_resistivity", 0.1),
        ("1 S/cm**2", "specific_conductance", 1e4),
    ],
)
def test_ordinary_units_still_read(text, kind, si):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ImplausibleValueWarning)
        assert parse_quantity(text, kind, "--x") == pytest.approx(si, rel=1e-12)


def test_list_fields_take_lists_but_each_item_is_one_number():
    assert parse_series("0, 0.5, 1 ms", "time", "--times") == pytest.approx([0, 5e-4, 1e-3])
    with pytest.raises(InputError, match=r"--times: .* holds several numbers"):
        parse_series("0, 0.5 1, 2 ms", "time", "--times")
    with pytest.raises(InputError, match=r"--times: the text is 20001 characters long \(at most 20000\)"):
        parse_series("1" * 20_001, "time", "--times")
    with pytest.raises(InputError, match=r"--times: 3 values; at most 2 allowed"):
        parse_series("1, 2, 3", "time", "--times", max_points=2)


# --------------------------------------------------------------------------------------
# values far outside the range met in neurons: used, with a warning
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("text", "kind", "field", "message"),
    [
        ("3", "membrane_resistivity", "--Rm",
         r"^--Rm: '3' \(read as 3 Ω·cm²: bare numbers are in Ω·cm²\) is far outside the values met in neurons "
         r"\(0\.1 to 200 kΩ·cm²\); check the unit$"),
        ("50 PA", "current", "--current", r"^--current: '50 PA' is far outside the values met in neurons"),
        ("1e30 pA", "current", "--current", r"far outside"),
        ("20 m", "length", "--length", r"far outside"),
        ("5 kV", "voltage", "--voltage", r"far outside"),
    ],
)
def test_implausible_values_warn_but_are_used(text, kind, field, message):
    with pytest.warns(ImplausibleValueWarning, match=message):
        value = parse_quantity(text, kind, field)
    assert math.isfinite(value)


@pytest.mark.parametrize(
    ("text", "kind"),
    [("20000", "membrane_resistivity"), ("150", "axial_resistivity"), ("1", "membrane_capacitance"),
     ("0.9 µF/cm²", "membrane_capacitance"), ("2 um", "length"), ("100 pA", "current"), ("1e-9 mV", "voltage"),
     ("1e-6 ms", "time"), ("500 MΩ", "resistance"), ("0", "conductance")],
)
def test_ordinary_values_do_not_warn(text, kind):
    with warnings.catch_warnings():
        warnings.simplefilter("error", ImplausibleValueWarning)
        parse_quantity(text, kind, "--x", allow_zero=True)


def test_every_plausible_band_is_wider_than_nothing_and_names_a_source():
    for kind, band in PLAUSIBLE.items():
        assert kind in KINDS
        assert band.source
        assert band.met
        if band.low is not None and band.high is not None:
            assert band.low < band.high
    assert implausible(0.0, "current") is None
    assert implausible(math.inf, "conductance") is None
    assert implausible(-5e16, "current") is not None  # sign does not hide a size


# --------------------------------------------------------------------------------------
# arbitrary text: an answer or one InputError line, never anything else
# --------------------------------------------------------------------------------------
_ALPHABET = st.sampled_from(list("0123456789.,;:+-*/^()eE %µμΩ²³⁻·×−°ukmMnpGTPfSAVFHzsohm cinfa\t\n\x00'\"[]{}_$\\"))


@settings(derandomize=True, max_examples=400, suppress_health_check=[HealthCheck.too_slow], deadline=None)
@given(text=st.one_of(st.text(_ALPHABET, max_size=60), st.text(max_size=40)),
       kind=st.sampled_from(sorted(KINDS)))
def test_any_text_gives_a_number_or_one_line(text, kind):
    outcome = _outcome(lambda: parse_quantity(text, kind, "--x", allow_inf=True, allow_zero=True,
                                              allow_negative=True))
    if isinstance(outcome, str):
        assert outcome.startswith("--x: ")
        assert "\n" not in outcome
        assert "\r" not in outcome
        assert len(outcome) < 400
    else:
        assert isinstance(outcome, float)
        assert not math.isnan(outcome)


def _outcome(read):
    """The value read, or the message of the InputError; any other exception propagates."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ImplausibleValueWarning)
        try:
            return read()
        except InputError as exc:
            return str(exc)


@settings(derandomize=True, max_examples=300, suppress_health_check=[HealthCheck.too_slow], deadline=None)
@given(text=st.one_of(st.text(_ALPHABET, max_size=80), st.text(max_size=40)), kind=st.sampled_from(sorted(KINDS)))
def test_any_list_text_gives_numbers_or_one_line(text, kind):
    outcome = _outcome(lambda: parse_series(text, kind, "--x", allow_negative=True, max_points=10_000))
    if isinstance(outcome, str):
        assert outcome.startswith("--x: ")
        assert "\n" not in outcome
    else:
        assert all(math.isfinite(v) for v in outcome)
