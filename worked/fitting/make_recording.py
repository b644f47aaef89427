"""Regenerate the invented recording of this worked example (lumenia_sweeps.csv beside this script).

It stands in for eight sweeps recorded at the Tidewater Station from a siphon interneuron of the
invented sea slug Lumenia vadosa: a hyperpolarising current step of -40 pA injected at the soma,
switched on at 20 ms of the file's clock, sampled every 0.1 ms for 160 ms, the membrane potential
written in mV (rest near -58 mV). The cell behind it is a ball and stick chosen for this example,
τm = 25 ms, L = 0.8, ρ = 4, R_N = 300 MΩ (inside the ranges of docs/sources.md, "Typical membrane
values"); its exact soma response (cabletheory.transient.charge) gets, per sweep, a resting level
drifting by ±0.3 mV, independent noise of 0.4 mV per sample, and a brief electrode transient after
the onset (an imperfectly balanced bridge: 3 mV decaying with τ = 0.15 ms).

Run from the project root:  .venv/bin/python worked/fitting/make_recording.py
"""

from __future__ import annotations

import pathlib

import numpy as np

from cabletheory.fit_model import model_case
from cabletheory.transient import charge

HERE = pathlib.Path(__file__).resolve().parent
TRUTH = {"membrane_time_constant": 25e-3, "electrotonic_length": 0.8, "conductance_ratio": 4.0,
         "input_resistance": 300e6}
CURRENT = -40e-12
ONSET = 20e-3
STEP = 0.1e-3
SAMPLES = 1600
SWEEPS = 8
REST = -58e-3
NOISE = 0.4e-3
ARTEFACT, ARTEFACT_TAU = -3e-3, 0.15e-3


def main() -> None:
    case, _ = model_case("ball-and-stick", TRUTH["membrane_time_constant"], TRUTH["electrotonic_length"],
                         TRUTH["conductance_ratio"], TRUTH["input_resistance"], CURRENT)
    t = np.arange(SAMPLES) * STEP
    after = t > ONSET + 1e-12
    v = np.zeros(t.size)
    v[after] = charge(case.cell, case.stimulus, t[after] - ONSET, [0.0]).voltage[:, 0]
    v[after] += ARTEFACT * np.exp(-(t[after] - ONSET) / ARTEFACT_TAU)
    rng = np.random.default_rng(20261203)
    rows = [REST + rng.normal(0.0, 0.3e-3) + v + rng.normal(0.0, NOISE, t.size) for _ in range(SWEEPS)]
    lines = ["# Tidewater Station, siphon interneuron LV-S3 (invented), soma current step -40 pA at 20 ms",
             "time (ms)," + ",".join(f"sweep {k + 1} (mV)" for k in range(SWEEPS))]
    for i in range(t.size):
        lines.append(f"{t[i] * 1e3:.1f}," + ",".join(f"{r[i] * 1e3:.3f}" for r in rows))
    (HERE / "lumenia_sweeps.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
