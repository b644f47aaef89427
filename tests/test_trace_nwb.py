"""NWB input (the optional extra 'nwb'): current-clamp sweeps read from files written here by pynwb.

The sweeps are the package's exact soma response of a ball and stick (Rall 1969 [Rall1969];
cabletheory.transient.charge) with seeded noise, written by pynwb (the NWB standard, Rübel et al.
2022 [Rubel2022]) as current-clamp series in millivolts with their stimulus series: the reader
must give back the same volts, the step's amplitude and onset, and ``fit`` must give on the NWB
file exactly what it gives on the same numbers written as CSV with the step typed as options.
Without pynwb installed these tests are skipped, except the one-line refusal.
"""

from __future__ import annotations

import datetime
import json
import warnings

import numpy as np
import pytest

from cabletheory.cli import main
from cabletheory.errors import InputError
from cabletheory.fit_model import model_case
from cabletheory.trace import read_nwb_sweeps
from cabletheory.transient import charge

RATE = 10_000.0  # Hz
SAMPLES, ONSET_INDEX, SWEEPS = 900, 100, 4
CURRENT = -50e-12
TRUTH = {"membrane_time_constant": 0.02, "electrotonic_length": 1.0, "conductance_ratio": 5.0,
         "input_resistance": 200e6}


def sweeps_mv() -> tuple[np.ndarray, np.ndarray]:
    """Times (s from each sweep's start) and sweeps (mV, as an amplifier writes them)."""
    case, _ = model_case("ball-and-stick", 0.02, 1.0, 5.0, 200e6, CURRENT)
    t = np.arange(SAMPLES) / RATE
    onset = t[ONSET_INDEX]
    v = np.zeros(t.size)
    after = t > onset
    v[after] = charge(case.cell, case.stimulus, t[after] - onset, [0.0]).voltage[:, 0]
    rng = np.random.default_rng(11)
    return t, np.round((-0.063 + v + rng.normal(0.0, 0.3e-3, (SWEEPS, t.size))) * 1e3, 4)


def write_nwb(path, data_mv, *, rates=None, stimulus=True, clamp=True) -> None:
    pynwb = pytest.importorskip("pynwb")
    from pynwb.icephys import CurrentClampSeries, CurrentClampStimulusSeries, VoltageClampSeries

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # pynwb's own notices while building a file
        f = pynwb.NWBFile(session_description="invented sweeps (Tidewater Station)", identifier="lumenia-test",
                          session_start_time=datetime.datetime(2026, 12, 3, tzinfo=datetime.UTC))
        device = f.create_device(name="amplifier")
        electrode = f.create_icephys_electrode(name="soma pipette", description="invented", device=device)
        for k, row in enumerate(data_mv):
            rate = RATE if rates is None else rates[k]
            number = np.uint32(k)
            if clamp:
                f.add_acquisition(CurrentClampSeries(
                    name=f"sweep {k}", data=row.astype("float64"), conversion=1e-3, starting_time=2.0 * k, rate=rate,
                    electrode=electrode, gain=1.0, sweep_number=number))
            else:
                f.add_acquisition(VoltageClampSeries(
                    name=f"sweep {k}", data=row.astype("float64") * 1e-12, starting_time=2.0 * k, rate=rate,
                    electrode=electrode, gain=1.0, sweep_number=number))
            if stimulus:
                step = np.zeros(row.size)
                step[ONSET_INDEX:] = CURRENT * 1e12
                f.add_stimulus(CurrentClampStimulusSeries(
                    name=f"step {k}", data=step, conversion=1e-12, starting_time=2.0 * k, rate=rate,
                    electrode=electrode, gain=1.0, sweep_number=number))
        with pynwb.NWBHDF5IO(str(path), "w") as io:
            io.write(f)


def test_sweeps_and_step_come_back_as_written(tmp_path):
    t, data = sweeps_mv()
    path = tmp_path / "cell.nwb"
    write_nwb(path, data)
    read = read_nwb_sweeps(str(path))
    assert read.labels == tuple(f"sweep {k}" for k in range(SWEEPS))
    np.testing.assert_allclose(read.times, t, rtol=0, atol=1e-15)
    np.testing.assert_allclose(read.voltages, data * 1e-3, rtol=1e-15)
    assert read.current == pytest.approx(CURRENT, rel=1e-12)
    assert read.onset == t[ONSET_INDEX]
    assert "read from the stimulus series" in read.notes[0]


def test_fit_on_nwb_equals_fit_on_the_same_numbers_as_csv(tmp_path, capsys):
    t, data = sweeps_mv()
    nwb = tmp_path / "cell.nwb"
    write_nwb(nwb, data)
    csv = tmp_path / "cell.csv"
    lines = ["time (s)," + ",".join(f"sweep {k} (mV)" for k in range(SWEEPS))]
    lines += [f"{float(t[i])!r}," + ",".join(f"{float(x)!r}" for x in data[:, i]) for i in range(t.size)]
    csv.write_text("\n".join(lines) + "\n", encoding="utf-8")
    assert main(["fit", str(nwb), "--bootstrap", "0", "--json"]) == 0
    from_nwb = json.loads(capsys.readouterr().out)
    assert main(["fit", str(csv), "--bootstrap", "0", "--json", "--current", "-50 pA",
                 "--onset", f"{float(t[ONSET_INDEX])!r} s"]) == 0
    from_csv = json.loads(capsys.readouterr().out)
    assert from_nwb["trace"]["onset"] == from_csv["trace"]["onset"]
    assert not from_nwb["trace"]["onset_detected"]
    for name in TRUTH:
        a, b = from_nwb["model"]["parameters"][name], from_csv["model"]["parameters"][name]
        assert a["estimate"]["value"] == pytest.approx(b["estimate"]["value"], rel=1e-9), name
        low, high = a["interval"]["low"]["value"], a["interval"]["high"]["value"]
        assert low < TRUTH[name] < high, name
    assert main(["fit", str(nwb), "--bootstrap", "0"]) == 0
    out = capsys.readouterr().out
    assert "(from the file)" in out
    assert "units time s, voltage V" in out


@pytest.mark.parametrize(("change", "message"), [
    ({"clamp": False}, "no current-clamp sweeps in the file's acquisition group"),
    ({"rates": [RATE, RATE, 2 * RATE, RATE]}, "series 'sweep 2' has 900 samples on another clock"),
])
def test_files_the_fit_cannot_use_are_refused_in_one_line(tmp_path, capsys, change, message):
    _, data = sweeps_mv()
    path = tmp_path / "odd.nwb"
    write_nwb(path, data, **change)
    assert main(["fit", str(path), "--bootstrap", "0"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1
    assert message in err
    assert str(path) in err


def test_a_file_that_is_not_nwb(tmp_path, capsys):
    pytest.importorskip("pynwb")
    path = tmp_path / "fake.nwb"
    path.write_text("time (ms),V (mV)\n0,1\n", encoding="utf-8")
    assert main(["fit", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1
    assert f"{path}: not a readable NWB file" in err


def test_without_pynwb_the_reader_names_the_extra(monkeypatch, tmp_path):
    import importlib.util

    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec", lambda name, *a: None if name == "pynwb" else real(name, *a))
    with pytest.raises(InputError, match=r"needs the optional package 'pynwb': pip install 'cabletheory\[nwb\]'"):
        read_nwb_sweeps(str(tmp_path / "any.nwb"))
