"""``cabletheory reference``: exact tables in CSV, JSON and NPZ with metadata."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from cabletheory.cli import main

# a cable with L = 1: λ = 707.1067812 µm for the demo cable's properties (docs/sources.md)
L1 = ["--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "707.1067811865476um", "--current", "1 nA"]
R_INF = 450.1581581e6  # Ω, computed
FINAL = 1e-9 * R_INF / math.tanh(1.0)  # V(0,∞) = I R∞ coth L (Rall 1959 [Rall1959])


def test_json_values_match_rall_series(tmp_path) -> None:
    """V(0,T)/V(0,∞) at T = 0.1, 0.5, 1 (computed from Rall 1969 [Rall1969]): τm = 20 ms."""
    out = tmp_path / "ref.json"
    assert main(["reference", *L1, "--times", "2, 10, 20 ms", "--positions", "0 um", "--output", str(out)]) == 0
    data = json.loads(out.read_text())
    v = np.array(data["voltage"]["value"])[:, 0]
    assert v / FINAL == pytest.approx([0.2629635738, 0.5374585210, 0.7198225011], abs=1e-9)
    assert data["tool"].startswith("cabletheory ")
    assert data["parameters"]["membrane_resistivity"] == {"value": 2.0, "unit": "ohm*m**2"}
    assert data["largest_error_bound"]["value"] < 1e-12


def test_npz_and_csv_like_an_existing_file(tmp_path) -> None:
    sim = tmp_path / "sim.csv"
    sim.write_text("time (ms),position (um),voltage (mV)\n2,0,1\n10,0,1\n10,300,1\n", encoding="utf-8")
    out = tmp_path / "ref.npz"
    assert main(["reference", *L1, "--like", str(sim), "--output", str(out)]) == 0
    with np.load(out) as npz:
        assert npz["times"] == pytest.approx([2e-3, 10e-3, 10e-3])
        assert npz["voltage"][0] / FINAL == pytest.approx(0.2629635738, abs=1e-9)
        assert "Rall 1969" in str(npz["metadata"])
    csv_out = tmp_path / "ref.csv"
    assert main(["reference", *L1, "--like", str(sim), "--output", str(csv_out)]) == 0
    assert csv_out.read_text().startswith("# cabletheory exact reference table")


def test_bad_reference_requests(tmp_path, capsys) -> None:
    sim = tmp_path / "sim.csv"
    sim.write_text("time (ms),position (um),voltage (mV)\n2,0,1\n", encoding="utf-8")
    before = sim.read_bytes()
    assert main(["reference", *L1, "--like", str(sim), "--output", str(sim)]) == 2
    assert sim.read_bytes() == before
    assert main(["reference", *L1, "--times", "1 ms", "--positions", "900 um", "--output",
                 str(tmp_path / "x.csv")]) == 2
    assert not (tmp_path / "x.csv").exists()
    assert main(["reference", *L1, "--times", "1 ms", "--positions", "0", "--output", str(tmp_path / "x.txt")]) == 2
    assert "cabletheory: error:" in capsys.readouterr().err


# ---------------------------------------------------------------------------------------------
# every model and stimulus of the transient capability
# ---------------------------------------------------------------------------------------------
BASE = ["--Rm", "20000", "--Ri", "200", "--diameter", "2"]
LAMBDA_UM = 707.1067811865476  # λ of the demo cable


def table_of(tmp_path, args: list[str]) -> dict:
    out = tmp_path / "ref.json"
    assert main(["reference", *BASE, *args, "--output", str(out)]) == 0
    return json.loads(out.read_text())


def test_ball_and_stick_soma_matches_rall_values(tmp_path) -> None:
    """L = 1, ρ = 5 (soma diameter from ρ = G_D/G_S, G_D = G∞ tanh L): soma V/V∞ = 0.2124536900,
    0.5166979813, 0.7082003630 at T = 0.1, 0.5, 1 (computed; Rall 1969 [Rall1969])."""
    g_d = math.tanh(1.0) / R_INF
    g_s = g_d / 5.0
    soma_um = math.sqrt(g_s * 2.0 / math.pi) * 1e6  # G_S = π d² / Rm
    data = table_of(tmp_path, ["--length", f"{LAMBDA_UM!r}um", "--soma-diameter", f"{soma_um!r} um",
                               "--current", "1 nA", "--times", "2, 10, 20 ms", "--positions", "0 um"])
    v = np.array(data["voltage"]["value"])[:, 0]
    assert v * (g_d + g_s) / 1e-9 == pytest.approx([0.2124536900, 0.5166979813, 0.7082003630], abs=1e-9)
    assert data["parameters"]["conductance_ratio"]["value"] == pytest.approx(5.0, rel=1e-9)
    assert data["case"].startswith("ball and stick")


def test_infinite_cable_off_centre_input(tmp_path) -> None:
    """Input at 100 µm of an infinite cable; sites 100 ± λ: V/V(0,∞) = 0.2336124405 at T = 1, the
    injection site erf(1) = 0.8427007929 (Hodgkin & Rushton 1946 [HodgkinRushton1946]; computed)."""
    sites = f"{100 - LAMBDA_UM!r}, 100, {100 + LAMBDA_UM!r} um"
    data = table_of(tmp_path, ["--infinite", "--stimulus-at", "100 um", "--current", "1nA", "--times", "20 ms",
                               "--positions", sites])
    v = np.array(data["voltage"]["value"])[0] / (0.5e-9 * R_INF)
    assert v == pytest.approx([0.2336124405, 0.8427007929, 0.2336124405], abs=1e-9)
    assert data["stimulus"]["position"]["value"] == pytest.approx(100e-6)
    assert data["stimulus"]["shape"] == "step"
    assert data["assumptions"] == "passive, linear, uniform membrane"
    assert "stimulus_position" not in data["parameters"]


def test_pulse_alpha_and_clamp_tables(tmp_path) -> None:
    """Pulse = difference of steps (Rall 1969 [Rall1969] series: S(0.5) - S(0.1) for a 0.4 τm pulse,
    L = 1); clamp far end 1/cosh 1 = 0.6480542737 at late times (Rall 1959 [Rall1959]); an alpha
    current's voltage starts at 0, rises and, with nothing injected after it, decays (Rall 1967
    [Rall1967] [MEM])."""
    length = ["--length", f"{LAMBDA_UM!r}um"]
    pulse = table_of(tmp_path, [*length, "--shape", "pulse", "--duration", "8 ms", "--current", "1nA",
                                "--times", "2, 10 ms", "--positions", "0"])
    assert np.array(pulse["voltage"]["value"])[:, 0] / FINAL == pytest.approx(
        [0.2629635738, 0.5374585210 - 0.2629635738], abs=1e-9)
    clamp = table_of(tmp_path, [*length, "--voltage", "-10 mV", "--times", "1 s", "--positions",
                                f"{LAMBDA_UM!r} um"])
    assert clamp["voltage"]["value"][0][0] == pytest.approx(-10e-3 * 0.6480542737, rel=1e-9)
    assert "voltage-clamp step" in clamp["case"]
    alpha = table_of(tmp_path, [*length, "--end", "killed", "--shape", "alpha", "--time-to-peak", "1 ms",
                                "--current", "100pA", "--stimulus-at", "300 um", "--times", "0:200:2 ms",
                                "--positions", "300 um"])
    v = np.array(alpha["voltage"]["value"])[:, 0]
    assert v[0] == 0.0
    assert 0 < np.argmax(v) < 10
    assert abs(v[-1]) < 1e-6 * v.max()
    assert alpha["stimulus"]["time_to_peak"] == {"value": 1e-3, "unit": "s"}
    assert alpha["stimulus"]["shape"] == "alpha"
    assert clamp["stimulus"]["shape"] == "clamp"
    assert pulse["stimulus"]["duration"] == {"value": 8e-3, "unit": "s"}


def test_semi_infinite_csv_header(tmp_path, capsys) -> None:
    """Semi-infinite cable (--length inf), step at 100 µm; the CSV header names clean positions."""
    assert main(["reference", *BASE, "--length", "inf", "--stimulus-at", "100um", "--current", "100pA",
                 "--times", "0:2:1 ms", "--positions", "0, 0.2, 500 um"]) == 0
    out = capsys.readouterr().out
    assert "# case: semi-infinite cylinder, sealed origin, current step at x = 100 µm" in out
    assert "# length: inf m" in out
    assert "time (ms),V at 0.0 um (mV),V at 0.2 um (mV),V at 500.0 um (mV)" in out
    assert "\n0.0,0.0,0.0,0.0\n" in out


@pytest.mark.parametrize(("extra", "message"), [
    (["--length", "500", "--positions", "-10, 0 um"], "--positions"),
    (["--length", "500", "--shape", "alpha"], "--time-to-peak: missing; give the time to peak"),
    (["--length", "500", "--duration", "1ms", "--shape", "alpha", "--time-to-peak", "1ms"],
     "--duration: only a pulse has a duration"),
    (["--length", "500", "--shape", "clamp"], "--current: a voltage clamp injects no set current"),
    (["--length", "500", "--voltage", "5 mV", "--current", "5 pA"], "--current: a voltage clamp"),
    (["--length", "500", "--shape", "step", "--voltage", "5 mV"], "--voltage: a voltage is the amplitude of a clamp"),
    (["--infinite", "--soma-diameter", "20um"], "--soma-diameter"),
    (["--infinite", "--end", "killed"], "--end: an infinite cable has no far end"),
    (["--length", "inf", "--end", "2 nS"], "--end: a semi-infinite cable"),
    (["--positions", "0"], "--length: missing; give the cylinder length"),
    (["--length", "500", "--stimulus-at", "-5 um"], "--stimulus-at"),
    (["--length", "500", "--shape", "pulse", "--duration", "-1 ms"], "--duration"),
    (["--length", "500", "--shape", "wave"], "invalid choice"),
])
def test_bad_option_combinations(tmp_path, capsys, extra: list[str], message: str) -> None:
    out = tmp_path / "x.csv"
    args = ["reference", *BASE, "--times", "1 ms", *extra, "--output", str(out)]
    if "--positions" not in extra:
        args += ["--positions", "0"]
    if "--voltage" not in extra and "--current" not in extra:
        args += ["--current", "100pA"]
    assert main(args) == 2
    err = capsys.readouterr().err
    assert err.startswith("cabletheory: error: ")
    assert message in err
    assert err.count("\n") == 1
    assert not out.exists()


def test_charge_spelling_of_the_stimulus(tmp_path) -> None:
    """'--shape pulse' (the charge command's spelling) is the same option as '--stimulus pulse'."""
    args = ["--length", "500", "--duration", "1ms", "--current", "100pA", "--stimulus-at", "200um",
            "--times", "0.5, 2 ms", "--positions", "0, 200"]
    one = table_of(tmp_path, [*args, "--shape", "pulse"])
    two = table_of(tmp_path, [*args, "--shape", "pulse"])
    assert one["voltage"] == two["voltage"]
    assert "current pulse of 1 ms at x = 200 µm" in one["case"]


@pytest.mark.parametrize("command", ["reference", "compare", "charge"])
def test_the_stimulus_is_required_by_every_case_command(tmp_path, capsys, command: str) -> None:
    """No silent default amplitude: charge, reference and compare read one command line alike, and
    without --current/--voltage each says so in one line (status 2, nothing written)."""
    sim = tmp_path / "sim.csv"
    sim.write_text("time (ms),position (um),voltage (mV)\n2,0,1\n", encoding="utf-8")
    out = tmp_path / "out.json"
    extra = {"reference": ["--times", "1 ms", "--positions", "0", "--output", str(out)],
             "compare": [str(sim), "--report", str(out)], "charge": ["--output", str(out)]}[command]
    assert main([command, *BASE, "--length", "500", *extra]) == 2
    err = capsys.readouterr().err
    assert err.startswith("cabletheory: error: --current: missing; give the stimulus current")
    assert err.count("\n") == 1
    assert not out.exists()


def test_like_a_file_that_records_before_the_onset(tmp_path) -> None:
    """A simulator file that records from before the stimulus (onset at 1 ms, rest -62 mV): the rows
    at or before the onset are at rest (exactly 0), the table keeps the file's own clock, and the
    values after the onset are the Rall (1969) series [Rall1969] at the time since the onset
    (computed: V(0,T)/V(0,∞) = 0.2629635738 at T = 0.1, i.e. 2 ms after the onset)."""
    sim = tmp_path / "sim.csv"
    sim.write_text("time (ms),V at 0 um (mV)\n0,-62\n0.5,-62\n1,-62\n3,-60\n", encoding="utf-8")
    out = tmp_path / "ref.json"
    assert main(["reference", *L1, "--rest", "-62 mV", "--onset", "1 ms", "--like", str(sim),
                 "--output", str(out)]) == 0
    data = json.loads(out.read_text())
    assert data["times"]["value"] == pytest.approx([0.0, 0.5e-3, 1e-3, 3e-3])
    v = np.array(data["voltage"]["value"])[:, 0]
    assert list(v[:3]) == [0.0, 0.0, 0.0]
    assert v[3] / FINAL == pytest.approx(0.2629635738, abs=1e-9)
    assert data["stimulus"]["onset"] == {"value": 1e-3, "unit": "s"}
    # compare, reading the same file with the same options, finds exactly these values: feeding the
    # reference back as a run (already from rest) gives no error
    ref_csv = tmp_path / "ref.csv"
    assert main(["reference", *L1, "--rest", "-62 mV", "--onset", "1 ms", "--like", str(sim),
                 "--output", str(ref_csv)]) == 0
    report = tmp_path / "report.json"
    assert main(["compare", str(ref_csv), *L1, "--onset", "1 ms", "--pass-within", "1e-12 mV",
                 "--report", str(report)]) == 0
    assert json.loads(report.read_text())["runs"][0]["max_abs_error"]["value"] < 1e-15


def test_one_stimulus_naming_in_charge_reference_and_compare(tmp_path, capsys) -> None:
    """The same command line gives the same JSON "stimulus" object (the --shape word, amplitude,
    position, duration) in charge, reference and compare, and every command says "assumptions"."""
    case = [*BASE, "--length", "500", "--shape", "pulse", "--current", "200 pA", "--duration", "1 ms",
            "--stimulus-at", "100 um"]
    assert main(["charge", *case, "--times", "2 ms", "--positions", "0", "--json"]) == 0
    charged = json.loads(capsys.readouterr().out)
    ref = table_of(tmp_path, [*case[len(BASE):], "--times", "2 ms", "--positions", "0"])
    sim = tmp_path / "sim.csv"
    sim.write_text("time (ms),V at 0 um (mV)\n2,0.1\n", encoding="utf-8")
    report = tmp_path / "report.json"
    main(["compare", str(sim), *case, "--report", str(report)])
    compared = json.loads(report.read_text())
    expected = {"shape": "pulse", "amplitude": {"value": pytest.approx(200e-12), "unit": "A"},
                "position": {"value": pytest.approx(100e-6), "unit": "m"},
                "duration": {"value": pytest.approx(1e-3), "unit": "s"}}
    assert charged["inputs"]["stimulus"] == expected
    assert {k: v for k, v in ref["stimulus"].items() if k != "onset"} == expected
    assert compared["stimulus"] == expected
    assert "assumptions" in charged
    assert "assumptions" in ref
    assert "assumptions" in compared
