"""Worked examples in worked/: each run.py prints exactly its expected.txt.

Each example runs inside the test process (tests/worked_runner.py: as ``__main__``, from the
project root, output captured); one runs as a script in a fresh interpreter, as users run them.

The expected outputs are also checked against values computed outside the project, so that
regenerating expected.txt cannot hide a wrong number.
"""

from __future__ import annotations

import pathlib
import subprocess
import sys

import pytest
from worked_runner import run_worked

ROOT = pathlib.Path(__file__).resolve().parents[1]
EXAMPLES = sorted(p.parent for p in (ROOT / "worked").glob("*/expected.txt") if (p.parent / "run.py").exists())


def test_there_are_worked_examples():
    assert "single_cable" in {p.name for p in EXAMPLES}


def _expected_status(folder: pathlib.Path) -> int:
    return int((folder / "status").read_text()) if (folder / "status").exists() else 0


@pytest.mark.parametrize("folder", EXAMPLES, ids=lambda p: p.name)
def test_worked_example_output_is_as_documented(folder):
    run = run_worked(folder.name)
    assert run.returncode == _expected_status(folder), run.stderr
    assert run.stdout == (folder / "expected.txt").read_text(encoding="utf-8")


def test_a_worked_example_runs_as_a_script_in_a_fresh_interpreter():
    """As the README runs them: `python worked/NAME/run.py` from the project root."""
    folder = ROOT / "worked" / "single_cable"
    proc = subprocess.run([sys.executable, str(folder / "run.py")], capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == _expected_status(folder), proc.stderr
    assert proc.stdout == (folder / "expected.txt").read_text(encoding="utf-8")


@pytest.mark.parametrize(
    "line",
    [
        # demo cable of docs/sources.md, computed: λ 707.1067812 µm, R∞ 450.1581581 MΩ,
        # R∞ coth L 739.3466931 MΩ (Rall 1959 [Rall1959]), 1/cosh L 0.7932781817, profile at L/2 0.8433766820
        "length constant λ                    707.1 µm",
        "semi-infinite input resistance R∞    450.2 MΩ",
        "input resistance R_in (sealed end)   739.3 MΩ",
        "far-end voltage ratio V(ℓ)/V(0)      0.7933",
        "  250.0 µm   0.3536     0.8434",
        # computed (Koch 1999 [Koch1999]) at 100 Hz: |Z_in| 120.8122622 MΩ at -41.97365288°, length constant
        # at 100 Hz 271.1023147 µm
        "input impedance |Z_in|       120.8 MΩ",
        "input impedance phase        -41.97°",
        "length constant at 100.0 Hz  271.1 µm",
    ],
)
def test_single_cable_numbers_match_outside_values(line):
    assert line in (ROOT / "worked" / "single_cable" / "expected.txt").read_text(encoding="utf-8")


def _json(argv):
    import json

    from cabletheory.cli import main

    return argv, json.loads(_capture(main, [*argv, "--json"]))


def _capture(function, argv):
    import contextlib
    import io

    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        assert function(argv) == 0
    return out.getvalue()


def _load_argv(folder):
    import importlib.util

    spec = importlib.util.spec_from_file_location(f"worked_{folder}", ROOT / "worked" / folder / "run.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module.ARGV


@pytest.mark.parametrize(
    ("time_ms", "fraction"),
    # computed: soma voltage for a current step, L = 1, ρ = 5, V(T)/V(∞); eigen-series and Talbot
    # inversion agree (ball and stick: Rall 1969 [Rall1969]; Durand 1984 [Durand1984] [MEM])
    [(2.0, 0.2124536900), (10.0, 0.5166979813), (20.0, 0.7082003630), (40.0, 0.8926645328)],
)
def test_ball_and_stick_example_matches_published_charging(time_ms, fraction):
    _, data = _json(_load_argv("ball_and_stick_charging"))
    times = data["times"]["value"]
    voltage = data["voltage"]["value"]
    final = data["steady_state"]["value"][0]
    # the example's 17.4539 µm soma gives ρ = 5 to 6 digits, hence rtol 2e-5
    assert voltage[times.index(pytest.approx(time_ms * 1e-3))][0] / final == pytest.approx(fraction, rel=2e-5)


def test_ball_and_stick_example_time_constants():
    """L = 1, ρ = 5 gives τ0/τ1 = 8.537785309, C0 = 0.7931077428 and C1 = 0.1613066229 (computed
    from Rall 1969's eigenvalue equation and residues [Rall1969])."""
    _, data = _json(_load_argv("ball_and_stick_charging"))
    tau = data["time_constants"]["value"]
    assert tau[0] == pytest.approx(0.020, rel=1e-12)
    assert tau[0] / tau[1] == pytest.approx(8.537785309, rel=2e-5)
    text = (ROOT / "worked" / "ball_and_stick_charging" / "expected.txt").read_text(encoding="utf-8")
    assert "τ0  20.00 ms  (τm/τ0 = 1.000)  C0 = 0.7931" in text
    assert "τ1  2.343 ms  (τm/τ1 = 8.538)  C1 = 0.1613" in text


def test_tree_example_matches_the_reference_tree():
    """Demo tree of docs/sources.md, computed (Rall 1959/1964 equivalent cylinder [Rall1964]): L_eq = 0.9954565254,
    ρ = 7.596794008, R_N = 185.1329030 MΩ with the 20 µm soma, dendrites alone 209.5027757 MΩ."""
    import os

    cwd = os.getcwd()
    os.chdir(ROOT)
    try:
        _, data = _json(_load_argv("tree_reduction"))
    finally:
        os.chdir(cwd)
    assert data["reducible"] is True
    assert data["equivalent_cylinder"]["electrotonic_length"]["value"] == pytest.approx(0.9954565254, rel=1e-9)
    assert data["equivalent_cylinder"]["diameter"]["value"] == pytest.approx(4e-6, rel=1e-12)
    assert data["input_resistance"]["value"] == pytest.approx(185.1329030e6, rel=1e-9)
    assert data["reduced_input_resistance"]["value"] == pytest.approx(185.1329030e6, rel=1e-9)


def test_python_notebook_numbers_match_outside_values():
    """The notebook example: λ = sqrt(Rm d / 4 Ri) = 707.1067811865475 µm for the demo dendrite
    [Rall1959], and an input at the middle of a cylinder sealed at both ends gives the same response
    at both ends (symmetry of the cable equation's boundary problem, common practice [CP])."""
    text = (ROOT / "worked" / "python_notebook" / "expected.txt").read_text(encoding="utf-8")
    assert "| length_constant | 0.0007071067811865475 | m |" in text
    ends = [line.split(":", 1)[1] for line in text.splitlines() if line.startswith(("at     0 µm", "at   500 µm"))]
    assert len(ends) == 2
    assert ends[0] == ends[1]


def _sr3_steady_state():
    """Input resistance at the soma and the soma-to-tip attenuations of the invented SR-3 outline
    (worked/tree_in_time), computed here from Rall's steady-state cylinder formulas (Rall 1959
    [Rall1959]; Jack, Noble & Tsien 1975 [JackNobleTsien1975]): a sealed-or-loaded cylinder of
    characteristic conductance G∞ = (π/2) d^3/2 / sqrt(Rm Ri) and L = ℓ/λ, λ = sqrt(Rm d / 4 Ri),
    has G_in = G∞ (G_L + G∞ tanh L) / (G∞ + G_L tanh L) and V_near/V_far = cosh L + (G_L/G∞) sinh L."""
    import math

    rm, ri = 1.5, 1.8  # Ω·m², Ω·m
    branches = {"trunk": (None, 250e-6, 3e-6), "oblique": ("trunk", 120e-6, 0.8e-6),
                "tuft": ("trunk", 400e-6, 2.2e-6), "tuft.a": ("tuft", 250e-6, 1.2e-6),
                "tuft.b": ("tuft", 450e-6, 1.4e-6)}

    def g_inf(d):
        return math.pi / 2 * d**1.5 / math.sqrt(rm * ri)

    def electrotonic(length, d):
        return length / math.sqrt(rm * d / (4 * ri))

    def load(name):  # conductance at the distal end of ``name``: its children's inputs
        return sum(g_in(child) for child, (parent, _, _) in branches.items() if parent == name)

    def g_in(name):
        _, length, d = branches[name]
        g, gl, big_l = g_inf(d), load(name), electrotonic(length, d)
        return g * (gl + g * math.tanh(big_l)) / (g + gl * math.tanh(big_l))

    def ratio(name):  # V at the proximal end / V at the distal end
        _, length, d = branches[name]
        big_l = electrotonic(length, d)
        return math.cosh(big_l) + load(name) / g_inf(d) * math.sinh(big_l)

    soma = math.pi * 18e-6**2 / rm
    resistance = 1 / (soma + g_in("trunk"))
    to_tip = {tip: ratio("trunk") * ratio("tuft") * ratio(tip) for tip in ("tuft.a", "tuft.b")}
    to_tip["oblique"] = ratio("trunk") * ratio("oblique")
    return resistance, to_tip


def test_tree_in_time_example_matches_rall_steady_state():
    import os

    resistance, to_tip = _sr3_steady_state()
    cwd = os.getcwd()
    os.chdir(ROOT)
    try:
        _, data = _json(_load_argv("tree_in_time"))
    finally:
        os.chdir(cwd)
    assert data["input_impedance"]["value"][0] == pytest.approx(resistance, rel=1e-10)
    for tip, attenuation in to_tip.items():
        k = data["points"].index(tip)
        assert data["attenuation_from_soma"]["value"][k] == pytest.approx(attenuation, rel=1e-10)
    text = (ROOT / "worked" / "tree_in_time" / "expected.txt").read_text(encoding="utf-8")
    assert f"input resistance at the soma       {resistance / 1e6:.1f} MΩ" in text
    # sealed tips, uniform membrane: the slowest time constant is τm = Rm Cm = 15 ms (Rall 1969 [Rall1969])
    assert "  0  15.00 ms   1.000" in text
