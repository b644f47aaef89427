"""cabletheory.quantities: inputs with units from Python, results with units in a notebook.

The layer must read a value the way the command line reads it (bare numbers in the customary
unit), accept pint quantities from a registry of the caller's own, refuse in one line naming the
keyword, and hand back exactly the core's numbers. Outside checks of those numbers live with the
core (λ, τm against [Rall1959]; time courses against [Rall1969] and [HodgkinRushton1946]); here
the demo dendrite's λ = sqrt(Rm d / 4 Ri) = 707.1 µm is recomputed by hand [Rall1959].
"""

from __future__ import annotations

import math

import numpy as np
import pint
import pytest

from cabletheory import quantities as cq
from cabletheory.cli import build_parser
from cabletheory.cli.case import read_case_options
from cabletheory.errors import InputError
from cabletheory.transient import charge

UREG = pint.UnitRegistry()  # the caller's own registry, not the package's

DEMO = {"membrane_resistivity": "20 kΩ·cm²", "axial_resistivity": "200 Ω·cm", "diameter": "2 µm",
        "length": "500 µm", "current": "100 pA"}


def test_bare_numbers_text_and_foreign_quantities_mean_the_same():
    as_text = cq.case(**DEMO)
    bare = cq.case(membrane_resistivity=20000, axial_resistivity=200, diameter=2, length=500, current=100)
    foreign = cq.case(membrane_resistivity=20 * UREG("kohm*cm**2"), axial_resistivity=2 * UREG("ohm*m"),
                      diameter=0.002 * UREG.mm, length=UREG.Quantity(0.5, "mm"), current=0.1 * UREG.nA)
    assert as_text == bare
    for name, (value, unit) in as_text.parameters().items():
        assert foreign.parameters()[name] == (pytest.approx(value, rel=1e-12), unit)
    assert as_text.length_constant == pytest.approx(math.sqrt(2.0 * 2e-6 / (4 * 2.0)), rel=1e-12)


def test_the_command_line_reads_the_same_case():
    args = build_parser().parse_args(["charge", "--Rm", "20 kΩ·cm²", "--Ri", "200 Ω·cm", "--diameter", "2 µm",
                                      "--length", "500 µm", "--current", "100 pA", "--shape", "pulse",
                                      "--duration", "1 ms", "--stimulus-at", "100 µm"])
    assert read_case_options(args) == cq.case(**DEMO, shape="pulse", duration="1 ms", stimulus_at="100 µm")


@pytest.mark.parametrize(("fields", "start"), [
    ({**DEMO, "diameter": [2, 3]}, "diameter: [2, 3] is not one number"),
    ({**DEMO, "diameter": UREG.Quantity(np.array([2.0, 3.0]), "um")}, "diameter: one quantity expected"),
    ({**DEMO, "diameter": "2 mV"}, "diameter:"),
    ({**DEMO, "stimulus_at": "600 µm"}, "stimulus_at: 600 µm lies outside the cell"),
    ({**DEMO, "colour": "red"}, "colour: not a field of a case"),
    ({**DEMO, "current": True}, "current: True is not one number"),
])
def test_errors_name_the_keyword_in_one_line(fields, start):
    with pytest.raises(InputError) as caught:
        cq.case(**fields)
    assert str(caught.value).startswith(start)
    assert "\n" not in str(caught.value)


def test_time_course_is_the_core_answer_with_its_units():
    d = cq.case(**DEMO, shape="alpha", time_to_peak="0.5 ms", stimulus_at="250 µm")
    course = cq.time_course(d, times="0:10:1 ms", positions=[0, "250 µm", 0.5 * UREG.mm])
    direct = charge(d.cell, d.stimulus, np.arange(11) * 1e-3, [0.0, 250e-6, 500e-6], modes=0)
    np.testing.assert_array_equal(course.voltage, direct.voltage)
    np.testing.assert_allclose(course.positions, [0.0, 250e-6, 500e-6], rtol=1e-15)
    # symmetry of a sealed cylinder about its middle (a physical identity)
    np.testing.assert_allclose(course.voltage[:, 0], course.voltage[:, 2], rtol=1e-12)
    arrays = course.arrays()
    assert set(arrays) == {"time_s", "position_m", "voltage_V"}
    assert arrays["voltage_V"].size == 33


def test_notebook_renderings_carry_units_and_the_caveat():
    course = cq.time_course(cq.case(**DEMO), times="0, 5, 10 ms")
    markdown = course._repr_markdown_()
    html = course._repr_html_()
    assert "| t | V at 0 |" in markdown
    assert "mV" in markdown
    assert "passive" in markdown
    assert "<table>" in html
    assert "mV" in html
    assert "&lt;" not in markdown


def test_dataframe_has_the_columns_of_charge_csv():
    frame = cq.time_course(cq.case(**DEMO), times="0:4:2 ms", positions="0, 500 µm").to_frame()
    assert list(frame.columns) == ["time_s", "position_m", "voltage_V"]
    assert len(frame) == 6
    assert "passive" in frame.attrs["assumptions"]


def test_truncation_relative_or_absolute():
    d = cq.case(**DEMO)
    # at 2 τm the eigen-series is cut where the truncation asks (earlier times on this short cable
    # are summed to rounding level, or by images, whatever the truncation)
    loose = cq.time_course(d, times="40 ms", truncation=1e-4)
    tight = cq.time_course(d, times="40 ms", truncation="1e-9 mV")
    assert tight.error_bound < loose.error_bound
    with pytest.raises(InputError, match="truncation"):
        cq.time_course(d, times="1 ms", truncation=2.0)


def test_positions_off_the_cell_are_refused_by_the_case_rule():
    with pytest.raises(InputError, match=r"^positions: 900 µm lies outside the cell"):
        cq.time_course(cq.case(**DEMO), times="1 ms", positions="900 µm")
