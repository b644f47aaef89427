"""``cabletheory peel``: values against outside sources, output forms, one-line errors with exit status 2.

Sources: Rall W (1969) Biophys. J. 9:1483 (peeling) [Rall1969]; Johnston D (1981) Cell. Mol. Neurobiol.
1:41 (CA3 L and ρ) [Johnston1981]; values computed from their formulas with mpmath [mpmath2023]
(named beside each check; keys of docs/sources.md).
"""

import importlib.util
import json
import math
import pathlib

import pytest

from cabletheory import PASSIVE_CAVEAT, cable, eigen
from cabletheory.cli import main

ROOT = pathlib.Path(__file__).resolve().parents[1]


def run(capsys, *args):
    status = main(["peel", *args])
    out, err = capsys.readouterr()
    return status, out, err


def run_json(capsys, *args):
    status, out, err = run(capsys, *args, "--json")
    assert status == 0, err
    return json.loads(out)


# --------------------------------------------------------------------------------------
# values
# --------------------------------------------------------------------------------------
def test_cylinder_worked_example_text(capsys):
    """τ0 = 20 ms, τ1 = 2 ms give L = π/3 = 1.047197551 (Rall 1969 [Rall1969])."""
    status, out, _ = run(capsys, "--tau0", "20ms", "--tau1", "2ms")
    assert status == 0
    assert "L from τ0/τ1 = π/√(τ0/τ1 − 1)  1.047" in out
    assert "0.5236 (ρ → 0) to 1.047 (ρ → ∞)" in out
    assert "need C1/C0" in out
    assert PASSIVE_CAVEAT in out


def test_cylinder_worked_example_json(capsys):
    data = run_json(capsys, "--tau0", "20", "--tau1", "2")
    assert data["cylinder"]["electrotonic_length"] == {"value": pytest.approx(math.pi / 3, rel=1e-14),
                                                      "unit": "dimensionless"}
    assert data["inputs"]["slowest_time_constant"] == {"value": pytest.approx(0.020, rel=1e-15), "unit": "s"}
    assert data["inputs"]["first_time_constant"] == {"value": pytest.approx(0.002, rel=1e-15), "unit": "s"}
    # words, not symbols, in every key (DEVELOPERS.md naming rules)
    assert not {"tau0", "tau1", "tau2", "c0", "c1"} & set(data["inputs"])
    assert data["ball_and_stick"]["solutions"] == []
    assert data["membrane_properties"][0]["membrane_time_constant"]["value"] == pytest.approx(0.020)
    assert data["membrane_properties"][0]["conductance_ratio"]["value"] == "inf"


def test_inverse_problem_check_value(capsys):
    """Computed ball-and-stick row L = 1, ρ = 5 (Rall 1969 [Rall1969]): (8.537785309, 0.2033855102) -> (1, 5)."""
    data = run_json(capsys, "--tau-ratio", "8.537785309", "--c1-over-c0", "0.2033855102")
    (s,) = data["ball_and_stick"]["solutions"]
    assert s["electrotonic_length"]["value"] == pytest.approx(1.0, rel=1e-9)
    assert s["conductance_ratio"]["value"] == pytest.approx(5.0, rel=1e-9)
    assert abs(s["check"]["time_constant_residual"]["value"]) < 1e-12
    assert abs(s["check"]["coefficient_residual"]["value"]) < 1e-12
    # next mode of the computed row L = 1, ρ = 5
    assert s["predicted"]["second_time_constant_ratio"]["value"] == pytest.approx(32.12334509, rel=1e-8)
    assert data["membrane_properties"] == []  # no τ0, so nothing in seconds


def test_johnston_1981_ca3(capsys):
    """Johnston (1981) [Johnston1981]: L = 0.94, ρ = 1.51 with τ0 = 23.6 ms; τ1 = 3.442629305 ms and
    C1/C0 = 0.1523926029 (computed with the ball-and-stick equations, Rall 1969 [Rall1969])."""
    status, out, _ = run(capsys, "--tau0", "23.6ms", "--tau1", "3.442629305ms", "--c1-over-c0", "0.1523926029")
    assert status == 0
    assert "solution: L                    0.9400" in out
    assert "solution: ρ = G_D/G_S          1.510" in out
    assert "evidence of a soma" in out
    data = run_json(capsys, "--tau0", "23.6ms", "--tau1", "3.442629305ms", "--c1-over-c0", "0.1523926029")
    (s,) = data["ball_and_stick"]["solutions"]
    assert s["electrotonic_length"]["value"] == pytest.approx(0.94, rel=1e-8)
    assert s["conductance_ratio"]["value"] == pytest.approx(1.51, rel=1e-7)


def test_c0_and_c1_give_the_same_as_their_ratio(capsys):
    """C0 = 0.7931077428, C1 = 0.1613066229 at L = 1, ρ = 5 (computed, Rall 1969 [Rall1969])."""
    a = run_json(capsys, "--tau-ratio", "8.537785309", "--c0", "0.7931077428", "--c1", "0.1613066229")
    b = run_json(capsys, "--tau-ratio", "8.537785309", "--c1-over-c0", str(0.1613066229 / 0.7931077428))
    assert a["ball_and_stick"]["solutions"][0]["electrotonic_length"]["value"] == pytest.approx(
        b["ball_and_stick"]["solutions"][0]["electrotonic_length"]["value"], rel=1e-12)
    assert a["ball_and_stick"]["solutions"][0]["predicted"]["coefficients"]["value"][0] == pytest.approx(
        0.7931077428, rel=1e-8)


def test_pure_cylinder_data_report_no_soma(capsys):
    """C1/C0 = 2τ1/τ0 (derived from Rall 1969 [Rall1969]): both cylinder estimates agree, no finite ρ."""
    status, out, _ = run(capsys, "--tau0", "20", "--tau1", "2", "--c1-over-c0", "0.2")
    assert status == 0
    assert "the two L agree" in out
    assert "no finite ρ" in out
    assert "no clear evidence of a soma" in out


def test_json_keys_and_units(capsys):
    data = run_json(capsys, "--tau0", "20ms", "--tau1", "2.342514ms", "--tau2", "0.6226ms", "--c1-over-c0",
                    "0.2033855102", "--input-resistance", "150MΩ", "--Cm", "1", "--Ri", "100")
    assert set(data) == {"inputs", "cylinder", "ball_and_stick", "sensitivity", "membrane_properties", "notes",
                         "caveats"}
    assert data["inputs"]["input_resistance"] == {"value": pytest.approx(150e6), "unit": "ohm"}
    assert data["inputs"]["membrane_capacitance"] == {"value": pytest.approx(0.01), "unit": "F/m**2"}
    assert data["inputs"]["axial_resistivity"] == {"value": pytest.approx(1.0), "unit": "ohm*m"}
    assert [(p["changed"], p["factor"]) for p in data["sensitivity"]] == [
        ("first_time_constant", 0.95), ("first_time_constant", 1.05), ("first_coefficient", 0.95),
        ("first_coefficient", 1.05)]
    (props,) = data["membrane_properties"]
    assert props["membrane_resistivity"] == {"value": pytest.approx(2.0, rel=1e-12), "unit": "ohm*m**2",
                                             "needs": ["Cm"]}
    assert props["diameter"]["unit"] == "m"
    assert props["diameter"]["needs"] == ["R_N", "Cm", "Ri"]
    assert props["total_capacitance"]["unit"] == "F"
    assert PASSIVE_CAVEAT in data["caveats"]


def test_sensitivity_rows_in_text(capsys):
    status, out, _ = run(capsys, "--tau-ratio", "8.537785309", "--c1-over-c0", "0.2033855102", "--uncertainty",
                         "10%")
    assert status == 0
    assert "changed by ±10 %" in out
    for label in ("τ1 −10 %", "τ1 +10 %", "C1 −10 %", "C1 +10 %"):
        assert label in out


# --------------------------------------------------------------------------------------
# the worked example's numbers against outside values
# --------------------------------------------------------------------------------------
def _worked_argv():
    spec = importlib.util.spec_from_file_location("worked_peeling", ROOT / "worked" / "peeling" / "run.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module.ARGV[1:]


def test_worked_example_recovers_the_invented_cell(capsys):
    """The example's peeled values were made from L = 0.85, ρ = 3.2, τm = 31.5 ms with eigen (Rall 1969 [Rall1969])
    and rounded to 3 digits; the estimate must land within that rounding."""
    data = run_json(capsys, *_worked_argv())
    (s,) = data["ball_and_stick"]["solutions"]
    assert s["electrotonic_length"]["value"] == pytest.approx(0.85, rel=2e-3)
    assert s["conductance_ratio"]["value"] == pytest.approx(3.2, rel=5e-3)


def test_worked_example_membrane_properties_round_trip(capsys):
    """Rebuild the cell from its estimated properties with cabletheory.cable (G∞, λ: Rall 1959 [Rall1959]) and a
    spherical soma (area πd²), and recompute the measured values: R_N = 240 MΩ, L, ρ, and τ0/τ1
    (eigen, Rall 1969 [Rall1969])."""
    data = run_json(capsys, *_worked_argv())
    (s,) = data["ball_and_stick"]["solutions"]
    (p,) = data["membrane_properties"]
    rm, ri, cm = p["membrane_resistivity"]["value"], 1.5, 0.01
    cyl = cable.Cylinder(membrane_resistivity=rm, axial_resistivity=ri, membrane_capacitance=cm,
                         diameter=p["diameter"]["value"], length=p["length"]["value"])
    summary = cable.summarise(cyl)
    g_soma = math.pi * p["soma_diameter"]["value"] ** 2 / rm
    assert 1 / (summary.input_conductance + g_soma) == pytest.approx(240e6, rel=1e-10)
    assert summary.electrotonic_length == pytest.approx(s["electrotonic_length"]["value"], rel=1e-10)
    assert summary.input_conductance / g_soma == pytest.approx(s["conductance_ratio"]["value"], rel=1e-10)
    assert summary.membrane_time_constant == pytest.approx(31.5e-3, rel=1e-12)
    tau = eigen.time_constants(31.5e-3, summary.electrotonic_length, 0.0, 2,
                               conductance_ratio=summary.input_conductance / g_soma)
    assert tau[1] == pytest.approx(3.12e-3, rel=1e-9)


def test_worked_example_text_lines():
    text = (ROOT / "worked" / "peeling" / "expected.txt").read_text(encoding="utf-8")
    for line in ("  solution: L                    0.8503", "  solution: ρ = G_D/G_S          3.203",
                 "(1 for a cylinder; the two L disagree)", "C0 = 0.8508 (peeled 0.8510)"):
        assert line in text


# --------------------------------------------------------------------------------------
# bad input
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(("args", "field"), [
    (["--tau0", "20", "--tau1", "25"], "--tau1"),
    (["--tau0", "20", "--tau1", "20"], "--tau1"),
    (["--tau1", "2"], "--tau1"),
    (["--tau-ratio", "0.9"], "--tau-ratio"),
    (["--tau0", "20pF", "--tau1", "2"], "--tau0"),
    (["--tau0", "-20", "--tau1", "2"], "--tau0"),
    (["--tau0", "20", "--tau1", "2", "--c1-over-c0", "0.3"], "--c1-over-c0"),
    (["--tau0", "20", "--tau1", "2", "--c1-over-c0", "0"], "--c1-over-c0"),
    (["--tau0", "20", "--tau1", "2", "--c0", "0.8"], "--c0"),
    (["--tau0", "20", "--tau1", "2", "--c0", "1.5", "--c1", "0.1"], "--c0"),
    (["--tau0", "20", "--tau1", "2", "--c0", "0.5", "--c1", "0.2"], "--c0/--c1"),
    (["--tau0", "20", "--tau1", "2", "--tau2", "3"], "--tau2"),
    (["--tau-ratio", "10", "--tau2", "1"], "--tau2"),
    (["--tau0", "20", "--tau1", "2", "--uncertainty", "60%"], "--uncertainty"),
    (["--tau0", "20", "--tau1", "2", "--uncertainty", "abc"], "--uncertainty"),
    (["--tau0", "20", "--tau1", "2", "--Ri", "100"], "--Ri"),
    (["--tau0", "20", "--tau1", "2", "--input-resistance", "-150"], "--input-resistance"),
    (["--tau0", "20", "--tau1", "2", "--Cm", "1 mV"], "--Cm"),
    (["--tau-ratio", "10", "--input-resistance", "150"], "--input-resistance"),
    (["--tau0", "20"], "--tau1"),
])
def test_bad_input_one_line_status_2(capsys, args, field):
    status, out, err = run(capsys, *args)
    assert status == 2
    assert out == ""
    assert err.startswith("cabletheory: error:")
    assert err.count("\n") == 1
    assert field in err


def test_no_solution_names_the_admissible_range(capsys):
    """C1/C0 above 2τ1/τ0 (the cylinder value, Rall 1969 [Rall1969]) fits neither model."""
    status, _, err = run(capsys, "--tau0", "20", "--tau1", "2", "--c1-over-c0", "0.3")
    assert status == 2
    assert "(0, 2τ1/τ0) = (0, 0.2)" in err
