"""``cabletheory cable``: human and JSON output, and one-line errors with exit status 2."""

from __future__ import annotations

import json
import math

import pytest

from cabletheory.cli import main

ISSUE_EXAMPLE = ["cable", "--Rm", "20 kΩ·cm²", "--Ri", "100 Ω·cm", "--Cm", "1 µF/cm²", "--diameter", "2um",
                 "--length", "500um", "--end", "sealed"]


def run(capsys, argv):
    status = main(argv)
    out, err = capsys.readouterr()
    return status, out, err


def test_human_output_echoes_inputs_and_gives_units(capsys):
    status, out, err = run(capsys, ISSUE_EXAMPLE)
    assert status == 0
    assert err == ""
    # λ = √(Rm d / 4Ri) = √(2 Ω·m² · 2e-6 m / 4 Ω·m) = 1 mm exactly; τm = Rm Cm = 20 ms (Rall 1969 [Rall1969])
    assert "length constant λ                    1.000 mm" in out
    assert "membrane time constant τm            20.00 ms" in out
    # R∞ coth(0.5) with R∞ = (2/π)√(Rm Ri) d^-1.5 = 318.31 MΩ (Rall 1959 [Rall1959]) -> 688.8 MΩ
    assert "input resistance R_in (sealed end)   688.8 MΩ" in out
    for echoed in ("20.00 kΩ·cm²", "100.0 Ω·cm", "1.000 µF/cm²", "2.000 µm", "500.0 µm", "sealed"):
        assert echoed in out
    assert "passive, linear, uniform membrane" in out


def test_json_keys_and_si_values(capsys):
    status, out, _ = run(capsys, [*ISSUE_EXAMPLE, "--frequency", "100 Hz", "--positions", "0, 250, 500 um", "--json"])
    assert status == 0
    data = json.loads(out)
    for key in ("length_constant", "membrane_time_constant", "electrotonic_length",
                "semi_infinite_input_resistance", "input_resistance", "far_end_voltage_ratio",
                "input_impedance_magnitude", "input_impedance_phase", "length_constant_at_frequency"):
        assert set(data[key]) == {"value", "unit"}, key
    assert data["length_constant"] == {"value": pytest.approx(1e-3, rel=1e-12), "unit": "m"}
    assert data["membrane_time_constant"] == {"value": pytest.approx(0.02, rel=1e-12), "unit": "s"}
    assert data["input_resistance"]["unit"] == "ohm"
    r_inf = 2 / math.pi * math.sqrt(2.0 * 1.0) * (2e-6) ** -1.5
    assert data["input_resistance"]["value"] == pytest.approx(r_inf / math.tanh(0.5), rel=1e-12)
    assert data["far_end_voltage_ratio"]["value"] == pytest.approx(1 / math.cosh(0.5), rel=1e-12)
    assert data["input_impedance_phase"]["unit"] == "rad"
    assert -math.pi / 2 < data["input_impedance_phase"]["value"] < 0
    assert data["profile"]["positions"]["value"] == pytest.approx([0, 2.5e-4, 5e-4])
    assert data["inputs"]["membrane_resistivity"] == {"value": pytest.approx(2.0), "unit": "ohm*m**2"}


def test_bare_numbers_use_customary_units(capsys):
    _, with_units, _ = run(capsys, ISSUE_EXAMPLE)
    _, bare, _ = run(capsys, ["cable", "--Rm", "20000", "--Ri", "100", "--Cm", "1", "--diameter", "2",
                              "--length", "500", "--end", "sealed"])
    assert bare == with_units


def test_semi_infinite_and_killed_and_leaky(capsys):
    _, out, _ = run(capsys, ["cable", "--Rm", "20000", "--Ri", "100", "--diameter", "2", "--length", "inf",
                             "--json"])
    data = json.loads(out)
    assert data["input_resistance"]["value"] == pytest.approx(data["semi_infinite_input_resistance"]["value"])
    assert data["electrotonic_length"]["value"] == "inf"
    _, out, _ = run(capsys, [*ISSUE_EXAMPLE[:-1], "killed", "--json"])
    assert json.loads(out)["far_end_voltage_ratio"]["value"] == 0.0
    # an end conductance equal to G∞ (π d^1.5 / (2√(Rm Ri)) = 3.1416 nS) gives R_in = R∞ (B = 1)
    g_inf_ns = math.pi * (2e-6) ** 1.5 / (2 * math.sqrt(2.0)) * 1e9
    _, out, _ = run(capsys, [*ISSUE_EXAMPLE[:-1], f"{g_inf_ns!r} nS", "--json"])
    data = json.loads(out)
    assert data["end_conductance_ratio"]["value"] == pytest.approx(1.0, rel=1e-12)
    assert data["input_resistance"]["value"] == pytest.approx(data["semi_infinite_input_resistance"]["value"])


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (["--Rm", "1uF/cm^2"], "--Rm: '1uF/cm^2' is a specific membrane capacitance, expected a specific "
                               "membrane resistance"),
        (["--diameter", "-2um"], "--diameter: '-2um' is negative"),
        (["--length", "0"], "--length: '0' is zero"),
        (["--Ri", "nan"], "--Ri: 'nan' is not a number"),
        (["--Cm", "inf"], "--Cm: 'inf' must be finite"),
        (["--end", "floppy"], "--end: 'floppy' is not 'sealed', 'killed' or a conductance to rest"),
        (["--end", "-1nS"], "--end"),
        (["--frequency", "3 mV"], "--frequency: '3 mV' is a voltage, expected a frequency"),
        (["--positions", "0, 600 um"], "--positions: 600.0 µm lies beyond the cable's length 500.0 µm"),
        (["--diameter", "2 parsecs/s"], "--diameter"),
        (["--bogus"], "unrecognized arguments: --bogus"),
    ],
)
def test_bad_input_gives_one_line_and_status_2(capsys, change, message):
    argv = list(ISSUE_EXAMPLE)
    if change[0] in argv:
        argv[argv.index(change[0]) + 1] = change[1]
    else:
        argv += change
    status, out, err = run(capsys, argv)
    assert status == 2
    assert out == ""
    assert err.count("\n") == 1
    assert err.startswith("cabletheory: error: ")
    assert message in err
    assert "Traceback" not in err


def test_missing_required_option(capsys):
    status, _, err = run(capsys, ["cable", "--Rm", "20000", "--diameter", "2", "--length", "5"])
    assert status == 2
    assert "--Ri" in err
    assert err.count("\n") == 1


def test_console_script_exit_status(tmp_path):
    """The installed command itself: exit 2 and no traceback on bad input."""
    import subprocess
    import sys

    proc = subprocess.run([sys.executable, "-m", "cabletheory", "cable", "--Rm", "x", "--Ri", "1",
                           "--diameter", "1", "--length", "1"], capture_output=True, text=True, cwd=tmp_path)
    assert proc.returncode == 2
    assert proc.stderr.startswith("cabletheory: error: --Rm")
    assert "Traceback" not in proc.stderr


BASE = ["cable", "--Rm", "20 kΩ·cm²", "--Ri", "100 Ω·cm", "--diameter", "2um"]


def test_without_length_only_what_holds_for_any_length(capsys):
    """λ = 1 mm and R∞ = 318.3 MΩ need no length (Rall 1959 [Rall1959]); L and R_in do."""
    status, out, _ = run(capsys, BASE)
    assert status == 0
    assert "length constant λ                    1.000 mm" in out
    assert "semi-infinite input resistance R∞    318.3 MΩ" in out
    assert "length                              not given" in out
    assert "input resistance R_in" not in out
    assert "electrotonic length" not in out
    data = json.loads(run(capsys, [*BASE, "--json"])[1])
    assert data["inputs"]["length"] is None
    assert data["length_constant"]["value"] == pytest.approx(1e-3)


def test_without_length_a_far_end_is_refused(capsys):
    status, _, err = run(capsys, [*BASE, "--end", "killed"])
    assert status == 2
    assert err.startswith("cabletheory: error: --end: without --length there is no far end")


def test_vary_tabulates_one_input_and_matches_single_runs(capsys):
    """λ ∝ √d and R∞ ∝ d^(-3/2) (Rall 1959 [Rall1959]): doubling d multiplies λ by √2 and R∞ by 2^-1.5."""
    status, out, _ = run(capsys, [*BASE, "--length", "500um", "--vary", "diameter=1, 2, 4 um", "--json"])
    assert status == 0
    data = json.loads(out)
    assert data["varied"] == "diameter"
    assert "diameter" not in data["fixed_inputs"]
    lam = [row["length_constant"]["value"] for row in data["rows"]]
    r_inf = [row["semi_infinite_input_resistance"]["value"] for row in data["rows"]]
    assert lam[1] / lam[0] == pytest.approx(math.sqrt(2), rel=1e-12)
    assert r_inf[0] / r_inf[2] == pytest.approx(8.0, rel=1e-12)
    single = json.loads(run(capsys, [*BASE, "--diameter", "4um", "--length", "500um", "--json"])[1])
    assert data["rows"][2]["input_resistance"] == single["input_resistance"]
    text = run(capsys, [*BASE, "--length", "500um", "--vary", "length=100:300:100 um"])[1]
    assert "Results as length varies" in text
    assert text.count(" µm ") >= 3
    assert "Held fixed: " in text


@pytest.mark.parametrize(("vary", "message"), [
    ("colour=1,2", "--vary: 'colour=1,2' is not INPUT=VALUES"),
    ("diameter", "is not INPUT=VALUES"),
    ("diameter=1, -2 um", "--vary diameter"),
    ("Rm=1 mV", "--vary Rm"),
])
def test_bad_vary_is_one_line(capsys, vary, message):
    status, _, err = run(capsys, [*BASE, "--length", "500um", "--vary", vary])
    assert status == 2
    assert message in err
    assert err.count("\n") == 1
