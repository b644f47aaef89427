"""Reading sweeps, finding the onset and averaging (cabletheory.verify.reading.read_sweeps,
cabletheory.trace).

The response used is the exact soma response of the project's ball-and-stick check case (Rall 1969
[Rall1969]; cabletheory.transient.charge), shifted to a known onset, with seeded noise; the
standard error of a mean is SD/√n [CP].
"""

from __future__ import annotations

import numpy as np
import pytest

from cabletheory.errors import FileFormatError, InputError
from cabletheory.fit_model import model_case
from cabletheory.trace import OnsetError, detect_onset, prepare_trace
from cabletheory.transient import charge
from cabletheory.units import parse_quantity
from cabletheory.verify.reading import read_recording, read_sweeps


def parse(text, kind, where):
    return parse_quantity(text, kind, where, allow_zero=True, allow_negative=True)


def response(onset=0.01, dt=0.05e-3, samples=1200, current=100e-12):
    case, _ = model_case("ball-and-stick", 0.02, 1.0, 5.0, 200e6, current)
    t = np.arange(samples) * dt
    v = np.zeros(t.size)
    after = t > onset
    v[after] = charge(case.cell, case.stimulus, t[after] - onset, [0.0]).voltage[:, 0]
    return t, v


# --------------------------------------------------------------------------------------
# reading
# --------------------------------------------------------------------------------------
def test_read_sweeps_csv_with_units_in_the_header():
    text = "# cell = L7\ntime (ms),sweep 1 (mV),sweep 2 (uV)\n0,-65,-65000\n0.1,-64.5,-64400\n"
    s = read_sweeps(text, "a.csv", parse)
    assert s.times == pytest.approx([0.0, 1e-4])
    assert s.voltages.ravel() == pytest.approx([-0.065, -0.0645, -0.065, -0.0644])
    assert s.labels == ("sweep 1 (mV)", "sweep 2 (uV)")
    assert s.metadata == {"cell": "L7"}
    assert s.assumed == ()


def test_read_sweeps_tab_separated_with_units_as_options():
    text = "time\tV1\tV2\n0\t-0.065\t-0.066\n0.0001\t-0.064\t-0.065\n"
    s = read_sweeps(text, "a.txt", parse, time_unit="s", voltage_unit="V")
    assert s.times == pytest.approx([0.0, 1e-4])
    assert s.voltages[1] == pytest.approx([-0.066, -0.065])


def test_undeclared_units_are_customary_and_said_so():
    s = read_sweeps("time,V\n0,1\n1,2\n", "a.csv", parse)
    assert s.times == pytest.approx([0.0, 1e-3])
    assert s.voltages[0] == pytest.approx([1e-3, 2e-3])
    assert s.assumed == ("time", "voltage")


@pytest.mark.parametrize(("text", "message"), [
    ("", "empty file"),
    ("time (ms),V (mV)\n", "no data rows"),
    ("t (ms),time (ms),V\n0,0,1\n", "more than one time column"),
    ("time (ms)\n0\n1\n", "no voltage columns"),
    ("time (ms),V (mV)\n0,1\n0,2\n", ":3.*does not increase"),
    ("time (ms),V (mV)\n0,1\n1,x\n", ":3:2.*cannot read 'x'"),
    ("time (ms),V (mV)\n0,1\n1,nan\n", "not a finite"),
    ("time (ms),V (mV)\n0,1,2\n", "3 columns"),
])
def test_read_sweeps_refusals_name_the_line(text, message):
    with pytest.raises(FileFormatError, match=message):
        read_sweeps(text, "bad.csv", parse)


def test_a_unit_of_the_wrong_kind_names_the_column():
    with pytest.raises(InputError, match=r":1:2.*expected a voltage"):
        read_sweeps("time (ms),V (kg)\n0,1\n", "bad.csv", parse)


def test_header_unit_and_option_must_agree():
    with pytest.raises(FileFormatError, match="--voltage-unit"):
        read_sweeps("time (ms),V (mV)\n0,1\n1,2\n", "a.csv", parse, voltage_unit="V")


def test_the_simulator_reader_takes_tabs_too():
    """The shared table reader gives read_recording tab-separated files as well."""
    r = read_recording("time (ms)\tV at 0 um (mV)\n0\t0\n1\t2\n", "run.tsv", parse)
    assert r.voltage == pytest.approx([0.0, 2e-3])


# --------------------------------------------------------------------------------------
# onset, baseline, averaging
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize("current", [100e-12, -50e-12])
def test_onset_found_on_a_noisy_mean(current):
    """The onset of the exact response (10 ms) is found within one sample, either polarity."""
    t, v = response(current=current)
    rng = np.random.default_rng(1)
    sweeps = -0.065 + v + rng.normal(0, 0.3e-3, (6, t.size))
    assert abs(detect_onset(t, sweeps.mean(axis=0)) - 0.01) <= 0.05e-3 + 1e-12


def test_onset_refusals_are_one_line():
    t = np.arange(400) * 1e-4
    flat = np.random.default_rng(2).normal(0, 1e-4, t.size)
    with pytest.raises(OnsetError, match="no response found"):
        detect_onset(t, flat)
    early = np.where(t > 14e-4, 5e-3, 0.0) + flat
    with pytest.raises(OnsetError, match="no baseline"):
        detect_onset(t, early)
    two = np.where((t > 0.005) & (t < 0.008), 3e-3, 0.0) + np.where(t > 0.02, 6e-3, 0.0)
    with pytest.raises(OnsetError, match="ambiguous") as info:
        detect_onset(t, two)
    assert "\n" not in str(info.value)


def test_average_keeps_the_standard_error():
    """Mean of baseline-corrected sweeps; standard error SD/√n per sample [CP], its variance averaged
    over neighbouring samples."""
    t, v = response()
    rng = np.random.default_rng(3)
    offsets = rng.normal(-0.065, 1e-3, 5)
    sweeps = offsets[:, None] + v + rng.normal(0, 0.2e-3, (5, t.size))
    tr = prepare_trace(t, sweeps, onset=0.01)
    corrected = sweeps - sweeps[:, t <= 0.01].mean(axis=1)[:, None]
    assert tr.voltage == pytest.approx(corrected.mean(axis=0), abs=1e-15)
    sd = corrected.std(axis=0, ddof=1)
    assert tr.spread == pytest.approx(sd, rel=1e-12)
    # the variance averaged over 51 neighbouring samples (scipy's uniform filter [SciPy2020]) / n
    from scipy.ndimage import uniform_filter1d

    expected = np.sqrt(uniform_filter1d(sd**2, 51, mode="nearest") / 5)
    assert tr.standard_error == pytest.approx(expected, rel=1e-9)
    assert tr.baseline == pytest.approx(offsets.mean(), abs=2e-4)
    assert tr.times[t == 0.01][0] == pytest.approx(0.0, abs=1e-15)
    times, voltage, se = tr.after_onset()
    assert times.min() > 0
    assert voltage.size == se.size


def test_given_rest_and_first_sample():
    t, v = response()
    sweeps = np.vstack([v - 0.065, v - 0.064])
    given = prepare_trace(t, sweeps, onset=0.01, rest=-0.065)
    assert given.voltage[-1] == pytest.approx(v[-1] + 0.0005, rel=1e-12)
    first = prepare_trace(t, sweeps, onset=0.01, rest="first")
    assert first.voltage == pytest.approx(v, abs=1e-15)
    assert first.baseline_source == "first sample"


def test_trace_refusals():
    t, v = response()
    with pytest.raises(InputError, match="outside the record"):
        prepare_trace(t, v, onset=1.0)
    with pytest.raises(InputError, match="too few for a baseline"):
        prepare_trace(t, v, onset=0.0)
    with pytest.raises(InputError, match="one value per time"):
        prepare_trace(t[:-1], v)
