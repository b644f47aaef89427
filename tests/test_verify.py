"""Core of the simulator check (cabletheory.verify): reading, comparison, orders, advice.

Outside references: computed values with their sources beside each (keys of docs/sources.md), the
theoretical orders of backward Euler (1) and Crank–Nicolson (2) (Crank & Nicolson 1947
[CrankNicolson1947]; standard numerical analysis), and
files whose error is known by construction (exact solution plus a known perturbation).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from cabletheory import compartment as cp
from cabletheory import verify as vf
from cabletheory.cable import Cylinder
from cabletheory.errors import FileFormatError, InputError, UnitKindError
from cabletheory.units import parse_quantity

UM, MS, MV = 1e-6, 1e-3, 1e-3
DEMO = Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM)  # demo cable of docs/sources.md
CASE = vf.sealed_step_case(DEMO, 100e-12)


def parse(text: str, kind: str, where: str) -> float:
    return parse_quantity(text, kind, where, allow_zero=True, allow_negative=True)


def wide_csv(times: np.ndarray, sites: np.ndarray, volts: np.ndarray, extra: str = "") -> str:
    lines = [extra + "time (ms)," + ",".join(f"V at {float(x / UM)!r} um (mV)" for x in sites)]
    lines += [f"{float(t / MS)!r}," + ",".join(repr(float(v / MV)) for v in row)
              for t, row in zip(times, volts, strict=True)]
    return "\n".join(lines) + "\n"


def exact_grid(times: np.ndarray, sites: np.ndarray) -> np.ndarray:
    tt, xx = np.meshgrid(times, sites, indexing="ij")
    return CASE.evaluate(tt.ravel(), xx.ravel())[0].reshape(tt.shape)


# ---------------------------------------------------------------------------------------------
# comparison on files whose error is known by construction
# ---------------------------------------------------------------------------------------------
TIMES = np.arange(0, 41) * 0.25 * MS
SITES = np.array([0.0, 250.0, 500.0]) * UM


def test_exact_file_has_no_error() -> None:
    v = exact_grid(TIMES, SITES)
    result = vf.compare(vf.read_recording(wide_csv(TIMES, SITES, v), "exact.csv", parse), CASE, 1e-9)
    assert result.max_abs_error < 1e-15
    assert result.passed


def test_single_spike_perturbation_is_found_where_it_was_put() -> None:
    """+5 µV at one sample: max error 5 µV there, RMS 5 µV/√N, verdict against 4 and 6 µV."""
    v = exact_grid(TIMES, SITES)
    v[17, 1] += 5e-6
    text = wide_csv(TIMES, SITES, v)
    rec = vf.read_recording(text, "spike.csv", parse)
    result = vf.compare(rec, CASE, 6e-6)
    assert result.max_abs_error == pytest.approx(5e-6, rel=1e-9)
    assert result.rms_abs_error == pytest.approx(5e-6 / math.sqrt(v.size), rel=1e-9)
    assert result.worst_time == pytest.approx(TIMES[17])
    assert result.worst_position == pytest.approx(250 * UM)
    assert result.worst_line == 17 + 2  # header on line 1, t = 0 on line 2
    assert result.passed
    assert not vf.compare(rec, CASE, 4e-6).passed
    # the comparison keeps every sample (file order), so no view recomputes them
    spiked = int(np.flatnonzero(rec.lines == 17 + 2)[1])  # second voltage column of that line: 250 µm
    assert result.errors[spiked] == pytest.approx(5e-6, rel=1e-9)
    assert np.count_nonzero(np.abs(result.errors) > 1e-12) == 1
    np.testing.assert_array_equal(result.errors, rec.voltage - result.exact)


def test_proportional_perturbation_gives_known_relative_error() -> None:
    """Simulated = exact × 1.01: max relative error exactly 1 % of the peak, RMS = 1 % × RMS/peak."""
    v = exact_grid(TIMES, SITES)
    result = vf.compare(vf.read_recording(wide_csv(TIMES, SITES, 1.01 * v), "scaled.csv", parse), CASE, 0.02,
                        relative=True)
    assert result.max_rel_error == pytest.approx(0.01, rel=1e-9)
    assert result.rms_rel_error == pytest.approx(0.01 * np.sqrt(np.mean(v**2)) / np.max(v), rel=1e-9)
    assert result.worst_position == 0.0  # largest voltage, so largest error, at the injection site
    assert result.passed


def test_long_layout_with_rest_offset_and_onset() -> None:
    """Absolute potentials (rest −70 mV), onset at 2 ms in the file's clock, a known 3 µV offset."""
    rng = np.random.default_rng(5)
    t = rng.uniform(0.1, 10, 30) * MS
    x = rng.choice(SITES, 30)
    order = np.lexsort((t, x))
    t, x = t[order], x[order]
    v = CASE.evaluate(t, x)[0] + 3e-6
    rows = [f"{float((ti + 2 * MS) / MS)!r},{float(xi / UM)!r},{float((vi - 0.070) / MV)!r}"
            for ti, xi, vi in zip(t, x, v, strict=True)]
    text = "t [ms],distance [um],Vm [mV]\n" + "\n".join(rows) + "\n"
    rec = vf.read_recording(text, "long.csv", parse, resting_potential=-0.070, time_offset=2 * MS)
    assert rec.layout == "long"
    result = vf.compare(rec, CASE, 1e-5)
    assert result.max_abs_error == pytest.approx(3e-6, rel=1e-6)
    assert result.rms_abs_error == pytest.approx(3e-6, rel=1e-6)


def test_units_by_option_and_assumed_units() -> None:
    v = exact_grid(TIMES, SITES)
    text = "time," + ",".join(f"{x / UM:g}" for x in SITES) + "\n" + "\n".join(
        f"{float(t)!r}," + ",".join(repr(float(vi)) for vi in row) for t, row in zip(TIMES, v, strict=True)) + "\n"
    rec = vf.read_recording(text, "si.csv", parse, time_unit="s", voltage_unit="V", position_unit="um")
    assert rec.assumed == ()
    assert vf.compare(rec, CASE, 1e-12).max_abs_error < 1e-15
    rec = vf.read_recording("time,V at 0 um\n1,2\n", "bare.csv", parse)
    assert set(rec.assumed) == {"time", "voltage"}
    assert rec.times[0] == pytest.approx(1 * MS)
    assert rec.voltage[0] == pytest.approx(2 * MV)


# ---------------------------------------------------------------------------------------------
# bad files: one clear error naming file, line and column
# ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("text", "error", "fragments"),
    [
        ("", FileFormatError, ["bad.csv", "empty file"]),
        ("# only a comment\n", FileFormatError, ["empty file"]),
        ("time (ms),V at 0 um (mV)\n", FileFormatError, [":1:",  "no data rows"]),
        ("position (um),voltage (mV)\n0,1\n", FileFormatError, [":1:",  "no time column"]),
        ("time (ms),position (um)\n1,0\n", FileFormatError, [":1:",  "exactly one position and one voltage"]),
        ("time (ms),V at 0 um (mV)\n0,1\n0.5,nan\n", FileFormatError, [":3:2",  "not a finite"]),
        ("time (ms),V at 0 um (mV)\n0,1\n0.5,\n", FileFormatError, [":3:2",  "missing value"]),
        ("time (ms),V at 0 um (mV)\n0,1\n0.5,abc\n", FileFormatError, [":3:2",  "'abc'"]),
        ("time (ms),V at 0 um (mV)\n0,1\n1,2\n0.5,3\n", FileFormatError, [":4:1",  "does not increase"]),
        ("time (ms),position (um),voltage (mV)\n1,0,1\n1,0,2\n", FileFormatError, [":3:",  "does not increase"]),
        ("time (mV),V at 0 um (mV)\n0,1\n", UnitKindError, [":1:1",  "expected a time"]),
        ("time (ms),V at 0 um (ms)\n0,1\n", UnitKindError, [":1:2",  "expected a voltage"]),
        ("time (ms),V at 0 um (mV)\n0,1,2\n", FileFormatError, [":2:",  "3 columns"]),
        ("time (ms),temperature (degC)\n0,1\n", FileFormatError, [":1:2", "not a recording site"]),
        ("time (ms),V at 0 um (mV),V at 0 um (mV)\n0,1,1\n", FileFormatError, ["same position"]),
    ],
)
def test_bad_files_name_line_and_column(text: str, error: type, fragments: list[str]) -> None:
    with pytest.raises(error) as info:
        vf.read_recording(text, "bad.csv", parse)
    message = str(info.value)
    assert "\n" not in message
    for fragment in fragments:
        assert fragment in message


def test_header_unit_contradicting_option_is_an_error() -> None:
    with pytest.raises(FileFormatError, match=r":1:1 .*declares 'ms' but --time-unit says 's'"):
        vf.read_recording("time (ms),V at 0 um (mV)\n0,1\n", "bad.csv", parse, time_unit="s")


def test_positions_beyond_the_cable_are_rejected() -> None:
    rec = vf.read_recording("time (ms),V at 600 um (mV)\n1,1\n", "far.csv", parse)
    with pytest.raises(FileFormatError, match=r"far.csv:2: position .* beyond"):
        vf.compare(rec, CASE, 1e-6)


# ---------------------------------------------------------------------------------------------
# observed orders: BE 1, CN 2 (Crank & Nicolson 1947 [CrankNicolson1947]), and Δx² (three-point difference [CP])
# ---------------------------------------------------------------------------------------------
def simulated_run(compartments: int, step: float, scheme: str) -> vf.Recording:
    times = np.array([10.0, 20.0]) * MS  # T = 0.5 and 1 for τm = 20 ms
    c = cp.discretise_cable(DEMO, compartments)
    current = np.zeros(c.size)
    current[0] = 100e-12
    v = cp.sample(c, cp.integrate(c, current, times, scheme=scheme, step=step), SITES)
    return vf.read_recording(wide_csv(times, SITES, v), f"{scheme}-{compartments}-{step}.csv", parse)


@pytest.mark.parametrize(("scheme", "compartments", "expected"), [("backward-euler", 200, 1.0),
                                                              ("crank-nicolson", 800, 2.0)])
def test_observed_time_order_matches_theory(scheme: str, compartments: int, expected: float) -> None:
    """Crank & Nicolson (1947) [CrankNicolson1947]: backward Euler is first order in Δt, Crank–Nicolson second."""
    steps = np.array([1.0, 0.5, 0.25]) * MS
    errors = [vf.compare(simulated_run(compartments, s, scheme), CASE, 1.0).max_abs_error for s in steps]
    order = vf.convergence(errors, [DEMO.length / compartments] * 3, steps, scheme)
    (estimate,) = order.estimates
    assert estimate.axis == "time"
    assert estimate.observed == pytest.approx(expected, abs=0.1)
    assert estimate.verdict == "matches"


def test_observed_space_order_and_mismatch_verdict() -> None:
    """Δx halved with a tiny Δt: order 2; claiming backward Euler in time does not change that."""
    dx = [DEMO.length / n for n in (5, 10, 20)]
    errors = [vf.compare(simulated_run(n, 0.05 * MS, "crank-nicolson"), CASE, 1.0).max_abs_error for n in (5, 10, 20)]
    order = vf.convergence(errors, dx, [0.05 * MS] * 3, "crank-nicolson")
    assert order.estimates[0].axis == "space"
    assert order.estimates[0].observed == pytest.approx(2.0, abs=0.1)
    # errors falling only linearly in Δx are flagged as below the expected order
    bad = vf.convergence([4.0, 2.0, 1.0], dx, [1e-5] * 3, "crank-nicolson")
    assert bad.estimates[0].verdict == "below expected"


def test_convergence_needs_resolutions() -> None:
    with pytest.raises(InputError, match="give each run"):
        vf.convergence([1.0, 0.5], [np.nan, np.nan], [np.nan, np.nan], "crank-nicolson")
    with pytest.raises(InputError, match="two runs"):
        vf.convergence([1.0], [1e-5], [1e-5], "crank-nicolson")


# ---------------------------------------------------------------------------------------------
# exact series and advice
# ---------------------------------------------------------------------------------------------
def test_sealed_step_series_matches_checks_at_each_length() -> None:
    """V(0,T)/V(0,∞) for L = 0.5 and 2 (computed from Rall 1969's series [Rall1969])."""
    for L, expected in ((0.5, [0.1629208867, 0.4394235514, 0.6599931969, 0.8749184873]),
                        (2.0, [0.3328586273, 0.6581489934, 0.8140014926, 0.9344959202])):
        cyl = Cylinder(2.0, 2.0, 0.01, 2 * UM, L * DEMO.length_constant)
        T = np.array([0.1, 0.5, 1.0, 2.0])
        v, _ = vf.sealed_step_voltage(cyl, 1.0, T * cyl.time_constant, np.zeros(4))
        assert v / (cyl.semi_infinite_input_resistance / math.tanh(L)) == pytest.approx(expected, abs=2e-10)


def test_advice_meets_target_and_is_minimal_for_a_cable() -> None:
    """Compartments for 0.1 % in R_in (exact R∞ coth L = 739.3466931 MΩ, computed)."""
    advice = vf.advise_cable(DEMO, "input-resistance", 1e-3)
    assert advice.exact_value.real == pytest.approx(739.3466931e6, rel=1e-9)
    n = int(advice.compartments[0])
    assert advice.error <= 1e-3
    coarser = cp.node_input_resistance(cp.discretise_cable(DEMO, n - 1))
    assert abs(coarser - 739.3466931e6) / 739.3466931e6 > 1e-3
    assert advice.rule_compartments[0] == 19  # 0.1 λ at 100 Hz: λ_f = 271.1023147 µm (computed) [CP]


def test_tree_advice_uses_exact_tree_values() -> None:
    """Demo tree of docs/sources.md: R_root 209.5027757 MΩ and |Z(100 Hz)| 44.86760779 MΩ (computed)."""
    d0 = 4.0
    d1, d2 = d0 * 2 ** (-2 / 3), d0 * 4 ** (-2 / 3)
    args = ([-1, 0, 0, 1, 1, 2, 2], np.array([300, 300, 300, 200, 200, 200, 200]) * UM,
            np.array([d0, d1, d1, d2, d2, d2, d2]) * UM, 2.0, 2.0, 0.01)
    r = vf.advise_tree(*args, "input-resistance", 1e-3)
    assert r.exact_value.real == pytest.approx(209.5027757e6, rel=1e-9)
    assert r.error <= 1e-3
    z = vf.advise_tree(*args, "impedance", 5e-3)
    assert abs(z.exact_value) == pytest.approx(44.86760779e6, rel=1e-9)
    assert math.degrees(np.angle(z.exact_value)) == pytest.approx(-42.09059783, abs=1e-7)
    assert z.error <= 5e-3


@pytest.mark.parametrize("end", [0.0, 0.7e-9, math.inf])
@pytest.mark.parametrize("frequency", [0.0, 100.0, 2000.0])
def test_one_tree_solver_matches_the_cylinder_formula(end: float, frequency: float) -> None:
    """The tree layer's solver on one cylinder is the closed-form input impedance of
    cable.input_impedance (Rall & Rinzel 1973 [RallRinzel1973]) at any frequency and end."""
    from cabletheory.cable import input_impedance
    from cabletheory.tree.geometry import input_admittances

    cyl = Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM, end_conductance=end)
    _, y = input_admittances([-1], [cyl.length], [cyl.diameter], [cyl.diameter], 2.0, 2.0, end_conductances=[end],
                             frequency=frequency, time_constant=cyl.time_constant)
    z = complex(input_impedance(cyl.semi_infinite_input_resistance, cyl.electrotonic_length,
                                cyl.end_conductance_ratio, frequency, cyl.time_constant))
    assert 1 / y == pytest.approx(z, rel=1e-12)


def test_advice_and_tree_audit_share_one_solver() -> None:
    """The advice's exact steady input resistance of a tree is the audit's (one solver, tree layer)."""
    from cabletheory.tree import Tree, exact_input_conductances

    parents = np.array([-1, 0, 0, 1, 1])
    lengths = np.array([300, 250, 200, 150, 100]) * UM
    diameters = np.array([3.0, 1.5, 2.0, 1.0, 0.8]) * UM
    advice = vf.advise_tree(parents, lengths, diameters, 2.0, 2.0, 0.01, "input-resistance", 1e-2)
    n = parents.size
    tree = Tree(source="test", labels=tuple(f"p{i}" for i in range(n)), parents=parents, lengths=lengths,
                proximal_diameters=diameters, distal_diameters=diameters, types=np.full(n, 3),
                lines=np.arange(1, n + 1))
    _, g_root = exact_input_conductances(tree, 2.0, 2.0)
    assert advice.exact_value.real == pytest.approx(1 / g_root, rel=1e-14)


def test_reference_table_writers_round_trip(tmp_path) -> None:
    table = vf.reference_table(CASE, TIMES, SITES)
    rec = vf.read_recording(vf.reference_csv(table), "ref.csv", parse)
    assert vf.compare(rec, CASE, 1e-12).max_abs_error < 1e-15
    assert "membrane_resistivity" in rec.metadata
    assert rec.metadata["tool"].startswith("cabletheory")
    path = tmp_path / "ref.npz"
    path.write_bytes(vf.reference_npz(table))
    with np.load(path) as npz:
        assert npz["voltage"] == pytest.approx(table.voltage, rel=0, abs=0)
        assert "Rall 1969" in str(npz["metadata"])
