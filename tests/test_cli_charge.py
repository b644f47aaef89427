"""``cabletheory charge``: output forms, echoed inputs, one-line errors with exit status 2."""

import json

import pytest

from cabletheory import PASSIVE_CAVEAT
from cabletheory.cli import main

BASE = ["charge", "--Rm", "20000", "--Ri", "200", "--diameter", "2"]


def run(capsys, *args):
    status = main([*BASE, *args])
    out, err = capsys.readouterr()
    return status, out, err


def test_text_output_echoes_inputs_and_caveat(capsys):
    status, out, _ = run(capsys, "--length", "500", "--current", "100pA", "--times", "0, 20 ms")
    assert status == 0
    for text in ("20.00 kΩ·cm²", "100.0 pA", "500.0 µm", "20.00 ms", "Error bound", PASSIVE_CAVEAT, "τ1"):
        assert text in out


def test_json_sealed_cylinder_matches_the_demo_table(capsys):
    """L = 0.7071, sealed: final 73.93466931 mV at 100 pA (computed; R∞ coth L, Rall 1959 [Rall1959])."""
    status, out, _ = run(capsys, "--length", "500", "--current", "100pA", "--times", "0, 1000 ms", "--json")
    assert status == 0
    data = json.loads(out)
    assert data["voltage"]["unit"] == "V"
    assert data["voltage"]["value"][0] == [0.0]
    assert data["voltage"]["value"][1][0] == pytest.approx(73.93466931e-3, rel=1e-9)
    assert data["times"]["unit"] == "s"
    assert data["positions"]["unit"] == "m"
    assert data["time_constants"]["value"][0] == pytest.approx(0.02, rel=1e-12)
    assert data["largest_error_bound"]["value"] < 1e-9
    assert data["inputs"]["stimulus"]["amplitude"] == {"value": pytest.approx(1e-10), "unit": "A"}


def test_ball_and_stick_alpha_and_pulse(capsys):
    status, out, _ = run(capsys, "--length", "500", "--soma-diameter", "20", "--current", "50",
                         "--shape", "alpha", "--time-to-peak", "1ms", "--times", "0:10:2 ms", "--json")
    assert status == 0
    data = json.loads(out)
    assert "steady_state" not in data
    assert data["conductance_ratio"]["value"] > 0
    status, out, _ = run(capsys, "--length", "500", "--current", "50", "--shape", "pulse", "--duration", "0.5ms",
                         "--stimulus-at", "100um", "--positions", "0, 100, 300 um", "--csv")
    assert status == 0
    rows = [line for line in out.splitlines() if not line.startswith("#")]
    assert rows[0] == "time_s,position_m,voltage_V"


def test_csv_carries_the_parameters_bound_and_caveat(tmp_path, capsys):
    """charge --csv opens with the same '#' lines as a reference table: every parameter in SI with its
    unit (20 kΩ·cm² = 2 Ω·m², demo cable of docs/sources.md), the method, the error bound of the values (that of --json)
    and the passive-membrane caveat; --output writes the same text."""
    args = ("--length", "500", "--current", "100pA", "--times", "1, 5 ms", "--positions", "0, 250 um")
    status, out, _ = run(capsys, *args, "--csv")
    assert status == 0
    header = [line[2:] for line in out.splitlines() if line.startswith("# ")]
    assert "membrane_resistivity: 2.0 ohm*m**2" in header
    assert "stimulus_amplitude: 1e-10 A" in header
    assert "stimulus_shape: step" in header
    assert any(line.startswith("method: ") for line in header)
    assert any(line.startswith("assumptions: ") and "passive" in line for line in header)
    _, js, _ = run(capsys, *args, "--json")
    bound = json.loads(js)["largest_error_bound"]["value"]
    assert f"largest error bound: {bound:.3e} V" in header
    target = tmp_path / "v.csv"
    status, _, _ = run(capsys, *args, "--csv", "--output", str(target))
    assert target.read_text().rstrip("\n") == out.rstrip("\n")


def test_infinite_and_semi_infinite_and_clamp(capsys):
    status, out, _ = run(capsys, "--infinite", "--current", "100pA", "--stimulus-at", "0",
                         "--positions", "-100, 100 um", "--times", "20ms", "--json")
    assert status == 0
    v = json.loads(out)["voltage"]["value"][0]
    assert v[0] == pytest.approx(v[1], rel=1e-14)
    status, out, _ = run(capsys, "--length", "inf", "--current", "100pA", "--times", "20ms", "--json")
    assert json.loads(out)["voltage"]["value"][0][0] == pytest.approx(45.01581581e-3 * 0.8427007929, rel=1e-9)
    status, out, _ = run(capsys, "--length", "500", "--end", "killed", "--voltage", "10mV", "--times", "1ms",
                         "--positions", "0, 250um")
    assert status == 0
    assert "10.00 mV" in out


@pytest.mark.parametrize("args", [
    ["--length", "500", "--current", "1nF"],
    ["--length", "500", "--current", "10", "--shape", "pulse"],
    ["--length", "500", "--voltage", "10", "--stimulus-at", "5um"],
    ["--length", "500", "--current", "10", "--stimulus-at", "600um"],
    ["--length", "500", "--current", "10", "--positions", "0, 700 um"],
    ["--infinite", "--length", "500", "--current", "10"],
    ["--current", "10"],
    ["--length", "500", "--current", "10", "--times", "-1 ms"],
    ["--length", "inf", "--soma-diameter", "10", "--current", "10"],
    ["--length", "500", "--current", "10", "--truncation", "2"],
])
def test_bad_input_is_one_line_and_status_2(capsys, args):
    status, out, err = run(capsys, *args)
    assert status == 2
    assert out == ""
    assert err.startswith("cabletheory: error: ")
    assert err.count("\n") == 1


def test_json_gives_a_bound_for_every_value_and_each_holds(capsys):
    """``error_bound`` has the voltage's shape, its largest entry is ``largest_error_bound`` (the keys
    of a ``reference`` JSON table), and every value
    lies within its own bound of an independent reference: the Laplace-domain solution inverted
    with mpmath's Talbot method at 30 digits (tests/laplace_reference.py; Talbot 1979 [Talbot1979],
    mpmath [mpmath2023]). A loose truncation makes the bounds large enough to be tested."""
    from laplace_reference import si_voltage

    from cabletheory.case import Case

    status, out, _ = run(capsys, "--length", "500", "--soma-diameter", "20", "--current", "50", "--shape", "alpha",
                         "--time-to-peak", "1ms", "--times", "0.2, 2, 12 ms", "--positions", "0, 250 um",
                         "--truncation", "1e-4", "--json")
    assert status == 0
    data = json.loads(out)
    bounds = data["error_bound"]["value"]
    voltage = data["voltage"]["value"]
    assert data["error_bound"]["unit"] == "V"
    assert len(bounds) == len(voltage) == 3
    assert all(len(row) == 2 for row in bounds)
    assert max(max(row) for row in bounds) == data["largest_error_bound"]["value"]
    case = Case.from_json(data["inputs"])
    for i, t in enumerate(data["times"]["value"]):
        for j, x in enumerate(data["positions"]["value"]):
            want = float(si_voltage(case.cell, case.stimulus, t, x))
            assert abs(voltage[i][j] - want) <= bounds[i][j]
