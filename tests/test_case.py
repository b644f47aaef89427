"""The case model: one set of rules for a cell, a stimulus and its sites (cabletheory.case).

The command line and the terminal app read the same texts into the same case or refuse them at
the same field; the JSON form reads back to an equal case; each rule refuses in one line naming
its field. The physical values checked here (λ, τm, ρ) come from the closed forms of
cabletheory.cable, themselves checked against [Rall1959] and [Rall1969] in their own tests.
"""

from __future__ import annotations

import json
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cabletheory.case import CELL_KINDS, STIMULUS_SHAPES, Case, CaseFieldError, build_case, fields_used
from cabletheory.cli import build_parser
from cabletheory.cli.case import OPTIONS, read_case_options
from cabletheory.errors import InputError
from cabletheory.inputs import CaseInputError, read_case, read_end
from cabletheory.transient import AlphaCurrent, BallAndStick, CurrentPulse, InfiniteCable, VoltageStep
from cabletheory.tui.fields import CASE_FIELD_NAMES, CASE_FIELDS
from cabletheory.tui.forms import read_case as read_app_case

MEMBRANE = {"membrane_resistivity": 2.0, "axial_resistivity": 2.0, "membrane_capacitance": 0.01, "diameter": 2e-6}


def si(**values):
    return {**MEMBRANE, **values}


def test_a_default_case_is_a_sealed_cylinder_with_a_step_at_the_origin():
    case = build_case(si(length=500e-6, current=1e-10))
    assert (case.kind, case.shape, case.stimulus.position, case.length) == ("cylinder", "step", 0.0, 500e-6)
    assert case.cylinder is not None
    assert case.cylinder.end_conductance == 0
    assert case.describe() == "finite cylinder, sealed far end, current step at the origin"


def test_kinds_are_inferred_from_the_soma_and_the_clamp_voltage():
    ball = build_case(si(length=500e-6, soma_diameter=20e-6, voltage=0.01))
    assert isinstance(ball.cell, BallAndStick)
    assert isinstance(ball.stimulus, VoltageStep)
    assert ball.kind == "ball-and-stick"
    assert ball.shape == "clamp"


@pytest.mark.parametrize(("values", "field", "words"), [
    (si(length=500e-6, current=1e-10, duration=1e-3), "duration", "only a pulse"),
    (si(length=500e-6, shape="pulse", current=1e-10), "duration", "missing"),
    (si(length=500e-6, shape="alpha", current=1e-10, time_to_peak=-1e-3), "time_to_peak", "positive"),
    (si(length=500e-6, voltage=0.01, current=1e-10), "current", "injects no set current"),
    (si(length=500e-6, voltage=0.01, stimulus_at=1e-6), "stimulus_at", "holds the origin"),
    (si(length=500e-6, current=1e-10, stimulus_at=600e-6), "stimulus_at", "outside the cell"),
    (si(length=500e-6, current=1e-10, stimulus_at=-1e-6), "stimulus_at", "outside the cell"),
    (si(length=500e-6, current=1e-10, positions=[0.0, 501e-6]), "positions", "outside the cell"),
    (si(length=math.inf, end=1e-9, current=1e-10), "end", "no far end"),
    (si(length=math.inf, soma_diameter=2e-5, current=1e-10), "length", "finite cylinder length"),
    (si(cell="infinite", length=1e-3, current=1e-10), "length", "no length"),
    (si(cell="infinite", end=0.0, current=1e-10), "end", "no far end"),
    (si(length=500e-6, soma_diameter=None, cell="ball-and-stick", current=1e-10), "soma_diameter", "missing"),
    (si(current=1e-10), "length", "missing"),
    (si(length=500e-6), "current", "missing"),
    (si(length=500e-6, current=math.inf), "current", "finite"),
    (si(length=500e-6, current=1e-10, cell="tree-ish"), "cell", "not a cell kind"),
    (si(length=500e-6, current=1e-10, shape="ramp"), "shape", "not a stimulus shape"),
    (si(length=500e-6, current=1e-10, colour=3), "colour", "not a field"),
    ({**si(length=500e-6, current=1e-10), "diameter": -1.0}, "diameter", "positive"),
])
def test_each_rule_names_its_field(values, field, words):
    with pytest.raises(CaseFieldError) as caught:
        build_case(values)
    assert caught.value.field == field
    assert words in str(caught.value)
    assert "\n" not in str(caught.value)


def test_infinite_cable_takes_a_clamp_and_positions_anywhere():
    case = build_case(si(cell="infinite", voltage=-0.005, stimulus_at=-2e-5, positions=[-1e-3, 0.0, 1e-3]))
    assert isinstance(case.cell, InfiniteCable)
    assert case.stimulus.position == -2e-5
    assert case.length == math.inf
    assert case.lowest_position == -math.inf
    with pytest.raises(CaseFieldError):
        case.check_positions([math.nan])


def test_parameters_carry_units_and_derived_constants():
    """λ = sqrt(Rm d / 4 Ri) and τm = Rm Cm [Rall1959]: 20 kΩ·cm², 200 Ω·cm, 2 µm -> 707.1 µm, 20 ms."""
    case = build_case(si(length=500e-6, end=1e-9, soma_diameter=20e-6, shape="alpha", current=1e-10,
                         time_to_peak=1e-3, stimulus_at=100e-6))
    p = case.parameters()
    assert p["length_constant"] == (pytest.approx(707.10678e-6), "m")
    assert p["membrane_time_constant"] == (pytest.approx(0.02), "s")
    assert p["stimulus_amplitude"] == (1e-10, "A")
    assert p["time_to_peak"] == (1e-3, "s")
    assert p["conductance_ratio"][1] == "1"
    assert p["end_conductance_ratio"][0] > 0
    assert isinstance(case.stimulus, AlphaCurrent)


cases = st.builds(
    dict,
    cell=st.sampled_from(list(CELL_KINDS)),
    shape=st.sampled_from(list(STIMULUS_SHAPES)),
    length=st.one_of(st.floats(1e-6, 1e-2), st.just(math.inf)),
    end=st.one_of(st.just(0.0), st.just(math.inf), st.floats(1e-12, 1e-6)),
    site=st.floats(0.0, 1.0),
    amplitude=st.floats(-1e-9, 1e-9).filter(lambda a: a != 0),
    time=st.floats(1e-5, 1e-2),
)


def _values(draw: dict) -> dict:
    cell, shape = draw["cell"], draw["shape"]
    values: dict = {**MEMBRANE, "cell": cell, "shape": shape}
    used = fields_used(cell, shape)
    length = draw["length"] if cell == "cylinder" else min(draw["length"], 1e-2)
    if "length" in used:
        values["length"] = length
    if "end" in used and math.isfinite(length):
        values["end"] = draw["end"]
    if "soma_diameter" in used:
        values["soma_diameter"] = 2e-5
    values["voltage" if shape == "clamp" else "current"] = draw["amplitude"]
    for field in ("duration", "time_to_peak"):
        if field in used:
            values[field] = draw["time"]
    if "stimulus_at" in used:
        values["stimulus_at"] = draw["site"] * (length if math.isfinite(length) else 1e-3)
    return values


@settings(derandomize=True, max_examples=150, deadline=None)
@given(cases)
def test_json_form_reads_back_to_an_equal_case(draw):
    case = build_case(_values(draw))
    text = json.dumps(case.to_json(), allow_nan=False)
    assert Case.from_json(json.loads(text)) == case
    assert build_case(case.field_values()) == case


def test_malformed_case_json_is_one_line():
    with pytest.raises(InputError, match="case JSON"):
        Case.from_json({"cell": {"kind": "cylinder"}})


@pytest.mark.parametrize(("text", "value"), [("sealed", 0.0), (" Killed ", math.inf), ("2 nS", 2e-9), ("0.5", 5e-10)])
def test_one_far_end_reader(text, value):
    assert read_end(text) == pytest.approx(value)


@pytest.mark.parametrize("word", ["open", "short", "shorted", "clamped", "leaky"])
def test_words_of_other_programs_are_not_far_ends(word):
    with pytest.raises(InputError, match="'sealed', 'killed' or a conductance"):
        read_end(word, "--end")


# ---- the command line and the app accept exactly the same inputs ---------------------------------
APP_LABELS = {spec.name: spec.label for spec in CASE_FIELDS}
TEXT_CASES = [
    {"length": "500 µm", "current": "100 pA"},
    {"length": "500", "end": "killed", "shape": "pulse", "current": "-20", "duration": "1 ms", "stimulus_at": "250"},
    {"length": "0.5 mm", "end": "1 nS", "shape": "alpha", "current": "5 pA", "time_to_peak": "0.5",
     "stimulus_at": "0"},
    {"length": "inf", "current": "1 nA", "stimulus_at": "30 µm"},
    {"length": "300 µm", "soma_diameter": "20 µm", "shape": "clamp", "voltage": "10 mV"},
    {"cell": "infinite", "current": "100 pA", "stimulus_at": "-40 µm"},
    {"length": "500 µm", "current": "100 pA", "stimulus_at": "600 µm"},
    {"length": "inf", "end": "killed", "current": "100 pA"},
    {"length": "500 µm", "current": "2, 3 pA"},
    {"length": "inf", "soma_diameter": "20", "current": "1"},
    {"length": "500 µm", "end": "open", "current": "1"},
    {"length": "500 µm", "current": "100 pA", "stimulus_at": "1 mV"},
    {"length": "-5 µm", "current": "100 pA"},
]


def _cli_case(texts: dict) -> Case | str:
    argv = ["charge", "--Rm", "20000", "--Ri", "200", "--diameter", "2"]
    for field, text in texts.items():
        if field == "cell":
            argv.append("--infinite")
        else:
            argv += [f"{OPTIONS[field]}={text}"]
    args = build_parser().parse_args(argv)
    try:
        return read_case_options(args)
    except InputError as exc:
        return next(f for f, option in OPTIONS.items() if str(exc).startswith(option + ":"))


def _app_case(texts: dict) -> Case | str:
    cell = texts.get("cell") or ("ball-and-stick" if "soma_diameter" in texts else "cylinder")
    shape = texts.get("shape") or ("clamp" if "voltage" in texts else "step")
    app = {name: texts[canonical] for name, canonical in CASE_FIELD_NAMES.items() if canonical in texts}
    app |= {"Rm": "20000", "Ri": "200", "Cm": "1", "diameter": "2"}
    if "end" not in app:
        app["end"] = "sealed"
    setup, errors = read_app_case(app, cell, shape)
    if setup is None:
        return CASE_FIELD_NAMES[next(iter(errors))]
    return setup.case


@pytest.mark.parametrize("texts", TEXT_CASES)
def test_command_line_and_app_read_the_same_case_or_blame_the_same_field(texts):
    cli, app = _cli_case(texts), _app_case(texts)
    assert cli == app


def test_app_messages_use_the_app_labels_and_the_cli_its_options():
    setup, errors = read_app_case({"site": "600 µm"}, "cylinder", "step")
    assert setup is None
    assert errors["site"].startswith("stimulus at: ")
    with pytest.raises(CaseInputError, match=r"^--stimulus-at: 600 µm lies outside"):
        read_case_options(build_parser().parse_args(["charge", "--Rm", "20000", "--Ri", "100", "--diameter", "2",
                                                     "--length", "500", "--current", "1", "--stimulus-at", "600"]))


def test_parse_texts_of_every_field_in_one_go():
    """A form with several unreadable fields hears about all of them at once."""
    with pytest.raises(CaseInputError) as caught:
        read_case({"membrane_resistivity": "x", "diameter": "2 mV", "length": "500", "current": "1"}, {})
    assert set(caught.value.errors) == {"membrane_resistivity", "diameter"}


def test_a_case_is_a_value():
    """Equal inputs give equal, hashable cases (a view can tell whether its result is still current)."""
    a = build_case(si(length=500e-6, shape="pulse", current=1e-10, duration=1e-3))
    b = build_case(si(length=500e-6, shape="pulse", current=1e-10, duration=1e-3))
    assert a == b
    assert hash(a) == hash(b)
    assert isinstance(a.stimulus, CurrentPulse)
    assert a != a.with_positions([1e-4])
