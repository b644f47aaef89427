"""Bare numbers and printed results never need pint: the written-out factors and the compact-prefix
formatter of :mod:`cabletheory.units` give exactly what the pint registry gives (pint is the
independent reference here: its conversion factors and its ``to_compact`` / ``~P`` formatting)."""

from __future__ import annotations

import importlib.util
import math
import subprocess
import sys

import numpy as np
import pytest

from cabletheory import units
from cabletheory.errors import UnitKindError
from cabletheory.units import KINDS, format_quantity, parse_quantity


def _pint_format(value: float, kind: str, digits: int) -> str:
    """The formatting as done with pint alone (the package's code before the written-out tables)."""
    k = KINDS[kind]
    ureg = units.registry()
    if not math.isfinite(value):
        label = k.display_label or f"{ureg.Unit(k.si):~P}"
        return f"{value}" if k.si == "dimensionless" else f"{value} {label}"
    if k.si == "dimensionless":
        return units._significant(value, digits)
    if k.display is not None:
        return f"{units._significant(ureg.Quantity(value, k.si).to(k.display).magnitude, digits)} {k.display_label}"
    if value == 0:
        return f"0 {k.display_label or f'{ureg.Unit(k.si):~P}'}"
    compact = ureg.Quantity(value, k.si).to_compact()
    return f"{units._significant(compact.magnitude, digits)} {compact.units:~P}"


def _values() -> np.ndarray:
    rng = np.random.default_rng(15)
    spread = 10.0 ** rng.uniform(-40, 40, 400) * rng.uniform(1, 10, 400)
    edges = np.array([10.0 ** p for p in range(-36, 37)] + [0.999999999 * 10.0 ** p for p in range(-36, 37)])
    near = np.array([np.nextafter(10.0 ** p, 0) for p in range(-33, 34, 3)] + [999.95, 9.9995e-7, 1e-300, 1e300])
    values = np.concatenate([spread, edges, near])
    return np.concatenate([values, -values, [0.0, math.inf, -math.inf, math.nan]])


@pytest.mark.parametrize("kind", [k for k in KINDS if k != "temperature"])
def test_formatting_matches_pint_exactly(kind):
    values = _values()
    for digits in (3, 15):
        mismatched = [(v, format_quantity(float(v), kind, digits), _pint_format(float(v), kind, digits))
                      for v in values
                      if format_quantity(float(v), kind, digits) != _pint_format(float(v), kind, digits)]
        assert not mismatched, mismatched[:5]


def test_written_out_factors_are_pints():
    ureg = units.registry()
    for unit, (si, factor) in units._KNOWN_UNITS.items():
        assert factor == float(ureg.parse_expression(unit).to(si).magnitude), (unit, si)
        assert factor == float(ureg.Quantity(1.0, unit).to(si).magnitude), (unit, si)
    for (si, display), factor in units._DISPLAY_FACTOR.items():
        assert factor == float(ureg.Quantity(1.0, si).to(display).magnitude), (si, display)
    for si, symbol in units._UNIT_SYMBOL.items():
        assert symbol == f"{ureg.Unit(si):~P}"
        for power, prefix in units._PREFIX_SYMBOL.items():
            assert f"{prefix}{symbol}" == f"{ureg.Quantity(10.0 ** power * 1.5, si).to_compact().units:~P}", power
    for unit, symbol in units._CUSTOMARY_SYMBOL.items():
        assert symbol == f"{ureg.Unit(unit):~P}", unit
    # every kind's customary unit is covered, so a bare number never needs pint
    for k in KINDS.values():
        assert k.si == "K" or units._KNOWN_UNITS.get(k.customary, ("",))[0] == k.si or k.customary == k.si


@pytest.mark.parametrize("kind", [k for k in KINDS if k != "temperature"])
def test_bare_numbers_read_as_pint_reads_them(kind):
    ureg = units.registry()
    k = KINDS[kind]
    for text in ("1", "0.7", "20000", "3.5e-3", "123.456"):
        assert parse_quantity(text, kind, "--x", warn=False) == float(text) * float(
            ureg.Quantity(1.0, k.customary).to(k.si).magnitude)
        written = f"{text} {k.customary}" if k.customary != "dimensionless" else text
        assert parse_quantity(written, kind, "--x", warn=False) == float(text) * float(
            ureg.Quantity(1.0, k.customary).to(k.si).magnitude)


def test_a_bare_temperature_is_in_degrees_celsius():
    """0 °C = 273.15 K by definition of the Celsius scale (BIPM SI brochure, 9th ed. 2019, §2.3.1) [CP];
    the same value written with its unit reads the same."""
    assert parse_quantity("35", "temperature", "--temperature") == pytest.approx(308.15, abs=1e-12)
    assert parse_quantity("35", "temperature", "--temperature") == parse_quantity("35 degC", "temperature", "--t")


@pytest.mark.parametrize("text", ["20 kΩ·cm²", "2um", "1 µF/cm²", "150 Ω·cm", "0.5 nS", "3 mm"])
def test_usual_spellings_read_as_pint_reads_them(text):
    """The written-out spellings give pint's value; a unit of the wrong kind still gets pint's message."""
    ureg = units.registry()
    for kind, k in KINDS.items():
        if k.si == "K":
            continue
        number, unit = units._split(text, k, "--x")
        expected = ureg.parse_expression(units._normalise(unit))
        if expected.dimensionality == ureg.Unit(k.si).dimensionality:
            assert parse_quantity(text, kind, "--x", warn=False) == float(number) * float(expected.to(k.si).magnitude)
        else:
            with pytest.raises(UnitKindError):
                parse_quantity(text, kind, "--x", warn=False)


def test_pint_is_imported_without_dask_and_dask_stays_importable():
    code = ("import sys; from cabletheory import units; units.registry(); "
            "print('dask.base' in sys.modules, sys.modules.get('dask', 'absent')); "
            "import importlib.util; print(importlib.util.find_spec('dask') is not None)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    first, second = done.stdout.split("\n")[:2]
    assert first == "False absent"
    assert second == str(importlib.util.find_spec("dask") is not None)


@pytest.mark.parametrize("unit_strings", [False, True])
def test_the_cable_command_with_usual_units_does_not_import_pint(unit_strings):
    """Bare numbers, and the usual spellings of units, are read and every result printed without pint."""
    values = (["20 kΩ·cm²", "100 Ω·cm", "1 µF/cm²", "2 um", "500 um", "100 Hz", "0, 250, 500 um"] if unit_strings
              else ["20000", "100", "1", "2", "500", "100", "0, 250, 500"])
    code = ("import sys; from cabletheory.__main__ import run; "
            "status = run(['cable', '--Rm', {!r}, '--Ri', {!r}, '--Cm', {!r}, '--diameter', {!r}, "
            "'--length', {!r}, '--end', 'sealed', '--frequency', {!r}, '--positions', {!r}]); ".format(*values) +
            "assert status == 0; print('pint' in sys.modules)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert done.stdout.strip().splitlines()[-1] == "False", done.stdout
