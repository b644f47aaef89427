"""``cabletheory compare``: exit statuses, reports, bad input (nothing written), known errors."""

from __future__ import annotations

import json
import pathlib

import numpy as np
import pytest

from cabletheory import verify as vf
from cabletheory.cable import Cylinder
from cabletheory.cli import main

UM, MS = 1e-6, 1e-3
CASE_ARGS = ["--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "500", "--current", "100pA"]
DEMO = Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM)


def write_run(path: pathlib.Path, offset_uv: float = 0.0, rest_mv: float = 0.0) -> pathlib.Path:
    """Exact solution (Rall 1969 [Rall1969] series) plus a known constant offset, absolute potentials."""
    times = np.arange(1, 21) * 0.5 * MS
    sites = np.array([0.0, 250.0, 500.0]) * UM
    tt, xx = np.meshgrid(times, sites, indexing="ij")
    v = vf.sealed_step_voltage(DEMO, 100e-12, tt.ravel(), xx.ravel())[0].reshape(tt.shape)
    lines = ["time (ms),V at 0 um (mV),V at 250 um (mV),V at 500 um (mV)"]
    lines += [f"{t / MS:.6f}," + ",".join(f"{(x * 1e3 + offset_uv * 1e-3 + rest_mv):.12f}" for x in row)
              for t, row in zip(times, v, strict=True)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def test_known_offset_is_reported_and_judged(tmp_path, capsys) -> None:
    """A +7 µV offset on the exact solution: max and RMS error 7 µV; 10 µV passes, 5 µV fails."""
    run = write_run(tmp_path / "run.csv", offset_uv=7.0, rest_mv=-65.0)
    report = tmp_path / "report.json"
    assert main(["compare", str(run), *CASE_ARGS, "--rest", "-65 mV", "--pass-within", "10 uV",
                 "--report", str(report)]) == 0
    data = json.loads(report.read_text())
    result = data["runs"][0]
    assert result["max_abs_error"]["value"] == pytest.approx(7e-6, rel=1e-6)
    assert result["rms_abs_error"]["value"] == pytest.approx(7e-6, rel=1e-6)
    assert result["passed"] is True
    assert "max error  7.00 µV" in capsys.readouterr().out
    assert main(["compare", str(run), *CASE_ARGS, "--rest", "-65 mV", "--pass-within", "5 uV"]) == 1
    capsys.readouterr()
    # 'first' needs a sample at or before the onset; this file starts after it
    assert main(["compare", str(run), *CASE_ARGS, "--rest", "first", "--pass-within", "1%"]) == 2
    assert ":2: the first sample at this site is after the stimulus onset" in capsys.readouterr().err


def test_bad_input_exits_2_and_writes_nothing(tmp_path, capsys) -> None:
    bad = tmp_path / "bad.csv"
    bad.write_text("time (ms),V at 0 um (mV)\n0,1\n1,nan\n", encoding="utf-8")
    report = tmp_path / "report.json"
    assert main(["compare", str(bad), *CASE_ARGS, "--report", str(report)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("cabletheory: error: ")
    assert "bad.csv:3:2" in err
    assert err.count("\n") == 1
    assert not report.exists()
    assert main(["compare", str(tmp_path / "missing.csv"), *CASE_ARGS]) == 2


def test_report_never_overwrites_an_input(tmp_path) -> None:
    run = write_run(tmp_path / "run.csv")
    before = run.read_bytes()
    assert main(["compare", str(run), *CASE_ARGS, "--report", str(run)]) == 2
    assert run.read_bytes() == before


def test_several_runs_give_an_order(tmp_path, capsys) -> None:
    """Errors ∝ Δx² by construction (offsets 16, 4, 1 µV at Δx 50, 25, 12.5 µm): observed order 2."""
    runs = [str(write_run(tmp_path / f"r{i}.csv", offset_uv=o)) for i, o in enumerate((16.0, 4.0, 1.0))]
    status = main(["compare", *runs, *CASE_ARGS, "--pass-within", "2 uV", "--dx", "50, 25, 12.5 um",
                   "--dt", "0.01, 0.01, 0.01 ms", "--json"])
    assert status == 1  # the two coarse runs miss 2 µV
    data = json.loads(capsys.readouterr().out)
    (estimate,) = data["convergence"]["estimates"]
    assert estimate["axis"] == "space"
    assert estimate["observed"] == pytest.approx(2.0, abs=1e-3)
    assert estimate["verdict"] == "matches"


# ---------------------------------------------------------------------------------------------
# every stimulus and model: files whose error is known by construction (transient.charge plus a
# known perturbation), read through the command line
# ---------------------------------------------------------------------------------------------
def _transient_cases() -> dict:
    from cabletheory import transient as tr

    soma = 20 * UM
    base = ["--Rm", "20000", "--Ri", "200", "--diameter", "2"]
    return {
        "pulse, killed end": (Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM, float("inf")),
                              tr.CurrentPulse(200e-12, 1 * MS, 200 * UM),
                              [*base, "--length", "500", "--end", "killed", "--shape", "pulse", "--current",
                               "200 pA", "--duration", "1 ms", "--stimulus-at", "200 um"]),
        "alpha, leaky end": (Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM, 1e-9),
                             tr.AlphaCurrent(50e-12, 0.5 * MS, 100 * UM),
                             [*base, "--length", "500", "--end", "1 nS", "--shape", "alpha", "--current", "50pA",
                              "--time-to-peak", "0.5 ms", "--stimulus-at", "100 um"]),
        "voltage clamp, semi-infinite": (Cylinder(2.0, 2.0, 0.01, 2 * UM, float("inf")), tr.VoltageStep(10e-3),
                                         [*base, "--length", "inf", "--voltage", "10 mV"]),
        "ball and stick, step at the soma": (tr.BallAndStick(DEMO, soma), tr.CurrentStep(100e-12, 0.0),
                                             [*base, "--length", "500", "--soma-diameter", "20 um",
                                              "--current", "100 pA"]),
        "infinite, alpha at 0": (tr.InfiniteCable(2.0, 2.0, 0.01, 2 * UM), tr.AlphaCurrent(100e-12, 1 * MS),
                                 [*base, "--infinite", "--shape", "alpha", "--time-to-peak", "1ms",
                                  "--current", "100 pA"]),
    }


@pytest.mark.parametrize("name", ["pulse, killed end", "alpha, leaky end", "voltage clamp, semi-infinite",
                                  "ball and stick, step at the soma", "infinite, alpha at 0"])
def test_known_spike_in_every_transient_case(tmp_path, capsys, name: str) -> None:
    """Exact values (transient.charge: Hodgkin & Rushton 1946 [HodgkinRushton1946], Rall 1969 [Rall1969])
    plus 1 µV everywhere and +6 µV at one sample: max error 7 µV there, RMS √((N-1)·1 + 49)/√N µV; 8 µV
    passes, 6.5 µV fails."""
    from cabletheory import transient as tr

    model, stimulus, args = _transient_cases()[name]
    times = np.arange(1, 17) * 0.5 * MS
    sites = np.array([-250.0, 0.0, 250.0, 500.0]) * UM if name.startswith("infinite") else \
        np.array([0.0, 250.0, 500.0]) * UM
    v = tr.charge(model, stimulus, times, sites).voltage + 1e-6
    v[5, 1] += 6e-6  # 3 ms, second site
    header = "time (ms)," + ",".join(f"V at {x / UM:g} um (mV)" for x in sites)
    rows = [f"{t / MS:g}," + ",".join(repr(float(u * 1e3)) for u in row) for t, row in zip(times, v, strict=True)]
    run = tmp_path / "run.csv"
    run.write_text("\n".join([header, *rows]) + "\n", encoding="utf-8")
    assert main(["compare", str(run), *args, "--pass-within", "8 uV", "--json"]) == 0
    result = json.loads(capsys.readouterr().out)["runs"][0]
    n = v.size
    assert result["max_abs_error"]["value"] == pytest.approx(7e-6, rel=1e-6)
    assert result["rms_abs_error"]["value"] == pytest.approx(np.sqrt((n - 1 + 49) / n) * 1e-6, rel=1e-6)
    assert result["worst"]["time"]["value"] == pytest.approx(3 * MS)
    assert result["worst"]["position"]["value"] == pytest.approx(sites[1])
    assert result["worst"]["line"] == 7
    assert main(["compare", str(run), *args, "--pass-within", "6.5 uV"]) == 1
    out = capsys.readouterr().out
    assert "max error  7.00 µV" in out
    assert "verdict    FAIL" in out


@pytest.mark.parametrize(("extra", "message"), [
    (["--length", "500", "--shape", "pulse"], "--duration: missing; give the pulse duration"),
    (["--length", "500", "--time-to-peak", "1ms"], "--time-to-peak: only an alpha current has a time to peak"),
    (["--infinite", "--length", "500"], "--length: an infinite cable has no length"),
    (["--length", "inf", "--soma-diameter", "20"], "--length: a ball and stick needs a finite cylinder length"),
    (["--length", "500", "--voltage", "5mV", "--stimulus-at", "100um"], "a voltage clamp on a cylinder"),
    (["--length", "500", "--current", "1 pA", "--stimulus-at", "501um"],
     "--stimulus-at: 501 µm lies outside the cell (0 to 500 µm)"),
])
def test_bad_case_options_give_one_line(tmp_path, capsys, extra: list[str], message: str) -> None:
    run = write_run(tmp_path / "run.csv")
    report = tmp_path / "report.json"
    assert main(["compare", str(run), "--Rm", "20000", "--Ri", "200", "--diameter", "2", *extra,
                 "--report", str(report)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("cabletheory: error: ")
    assert message in err
    assert err.count("\n") == 1
    assert not report.exists()


def test_worst_time_is_given_from_the_onset_and_on_the_file_clock(capsys) -> None:
    """The Tidewater coarse run records from 0 with the stimulus at 1 ms: its worst point, 250 µs after
    the onset, is the file's row at 1.25 ms (line 11)."""
    coarse = "worked/simulator_check/coarse.csv"
    main(["compare", coarse, *CASE_ARGS, "--rest", "-62 mV", "--onset", "1 ms", "--pass-within", "20 uV"])
    out = capsys.readouterr().out
    assert "at 0 µm, 250.0 µs after onset (1.250 ms in the file; line 11: simulated" in out
