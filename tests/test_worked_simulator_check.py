"""The simulator-check worked example (worked/simulator_check) against outside values.

tests/test_worked.py checks that run.py prints expected.txt; here the story's numbers are tied
to references outside the project.
"""

from __future__ import annotations

import math
import pathlib

import numpy as np
import pytest
from worked_runner import run_worked

from cabletheory import verify as vf
from cabletheory.cable import Cylinder

ROOT = pathlib.Path(__file__).resolve().parents[1]
FOLDER = ROOT / "worked" / "simulator_check"


@pytest.fixture(scope="module")
def output() -> str:
    run = run_worked(FOLDER.name)  # in this process (tests/worked_runner.py), shared with test_worked.py
    assert run.returncode == 0, run.stderr  # coarse run flagged, refined run passed
    return run.stdout


def test_coarse_run_is_flagged_and_refined_run_passes(output: str) -> None:
    verdicts = [line.split()[1] for line in output.splitlines() if line.strip().startswith("verdict")]
    assert verdicts[:2] == ["FAIL", "PASS"]
    assert output == (FOLDER / "expected.txt").read_text(encoding="utf-8")


def test_observed_space_order_is_two(output: str) -> None:
    """Three-point difference: second order in Δx ([CP]; e.g. Crank & Nicolson 1947
    [CrankNicolson1947] for the scheme family)."""
    line = next(s for s in output.splitlines() if s.strip().startswith("space"))
    assert float(line.split()[1].rstrip(",")) == pytest.approx(2.0, abs=0.15)


def test_exact_values_behind_the_example_match_rall_series() -> None:
    """The dendrite's exact charging at X = 0 with L = 1 matches the Rall 1969 series [Rall1969] (computed)."""
    um = 1e-6
    cylinder = Cylinder(2.0, 2.0, 0.01, 2 * um, 1000 * math.sqrt(0.5) * um)  # ℓ = λ, so L = 1
    T = np.array([0.1, 0.5, 1.0, 2.0])
    v, bound = vf.sealed_step_voltage(cylinder, 1.0, T * cylinder.time_constant, np.zeros(4))
    final = cylinder.semi_infinite_input_resistance / math.tanh(1.0)  # R∞ coth L (Rall 1959)
    assert v / final == pytest.approx([0.2629635738, 0.5374585210, 0.7198225011, 0.8969294391], abs=2e-10)
    assert np.all(bound < 1e-6 * final)
    # the example's own dendrite (L = 0.7071): steady V(0) = 100 pA × 739.3466931 MΩ (computed, [Rall1959])
    demo = Cylinder(2.0, 2.0, 0.01, 2 * um, 500 * um)
    late, _ = vf.sealed_step_voltage(demo, 100e-12, np.array([1.0]), np.array([0.0]))
    assert late[0] == pytest.approx(73.93466931e-3, rel=1e-9)
