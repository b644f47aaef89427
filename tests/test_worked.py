"""Worked examples in worked/: each run.py prints exactly its expected.txt.

The expected outputs are also checked against values computed outside the project, so that
regenerating expected.txt cannot hide a wrong number.
"""

from __future__ import annotations

import pathlib
import subprocess
import sys

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[1]
EXAMPLES = sorted(p.parent for p in (ROOT / "worked").glob("*/expected.txt") if (p.parent / "run.py").exists())


def test_there_are_worked_examples():
    assert "single_cable" in {p.name for p in EXAMPLES}


@pytest.mark.parametrize("folder", EXAMPLES, ids=lambda p: p.name)
def test_worked_example_output_is_as_documented(folder):
    proc = subprocess.run([sys.executable, str(folder / "run.py")], capture_output=True, text=True, cwd=ROOT)
    expected_status = int((folder / "status").read_text()) if (folder / "status").exists() else 0
    assert proc.returncode == expected_status, proc.stderr
    assert proc.stdout == (folder / "expected.txt").read_text(encoding="utf-8")


@pytest.mark.parametrize(
    "line",
    [
        # shared/reference/checks.md §1 demo cable [COMP]: λ 707.1067812 µm, R∞ 450.1581581 MΩ,
        # R∞ coth L 739.3466931 MΩ (Rall 1959), 1/cosh L 0.7932781817, profile at L/2 0.8433766820
        "length constant λ                    707.1 µm",
        "semi-infinite input resistance R∞    450.2 MΩ",
        "input resistance R_in (sealed end)   739.3 MΩ",
        "far-end voltage ratio V(ℓ)/V(0)      0.7933",
        "  250.0 µm   0.3536     0.8434",
        # checks.md §1.1 [COMP] at 100 Hz: |Z_in| 120.8122622 MΩ at -41.97365288°, λ_f 271.1023147 µm
        "input impedance |Z_in|  120.8 MΩ",
        "input impedance phase   -41.97°",
        "AC length constant λ_f  271.1 µm",
    ],
)
def test_single_cable_numbers_match_outside_values(line):
    assert line in (ROOT / "worked" / "single_cable" / "expected.txt").read_text(encoding="utf-8")
