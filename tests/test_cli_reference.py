"""``cabletheory reference``: exact tables in CSV, JSON and NPZ with metadata."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from cabletheory.cli import main

# a cable with L = 1: λ = 707.1067812 µm for the checks.md §1 demo properties
L1 = ["--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "707.1067811865476um", "--amplitude", "1 nA"]
R_INF = 450.1581581e6  # Ω, checks.md §1 [COMP]
FINAL = 1e-9 * R_INF / math.tanh(1.0)  # V(0,∞) = I R∞ coth L (Rall 1959)


def test_json_values_match_rall_series(tmp_path) -> None:
    """V(0,T)/V(0,∞) at T = 0.1, 0.5, 1 (checks.md §2.5 [COMP], from Rall 1969): τm = 20 ms."""
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
