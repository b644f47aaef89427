"""Regenerate the invented recording of this worked example (pv7_sweeps.csv beside this script).

It stands in for six sweeps recorded at the Tidewater Station from the interneuron PV-7 of the
invented sea slug Lumenia vadosa, whose reconstruction ships with the package
(cabletheory/data/morphologies/lumenia_pv7_interneuron.swc): a hyperpolarising current step of
-40 pA injected at the soma, switched on at 20 ms of the file's clock, sampled every 0.1 ms for
170 ms, the membrane potential written in mV (rest near -61 mV). The membrane behind it is chosen
for this example, uniform over the cell: Rm = 20 kΩ·cm², Ri = 150 Ω·cm, Cm = 0.9 µF/cm² (inside
the ranges of docs/sources.md, "Typical membrane values"). The soma response is the exact time
course of the whole reconstructed tree (cabletheory.tree_time); each sweep gets a resting level
drifting by ±0.3 mV and independent noise of 0.3 mV per sample.

Run from the project root:  .venv/bin/python worked/fitting_cell/make_recording.py
"""

from __future__ import annotations

import pathlib

import numpy as np

from cabletheory.fit_tree import _cell
from cabletheory.inputs import read_outline_value
from cabletheory.morphology import read_morphology
from cabletheory.transient import CurrentStep
from cabletheory.tree import build_tree
from cabletheory.tree_laplace import root_site
from cabletheory.tree_time import tree_response

HERE = pathlib.Path(__file__).resolve().parent
MORPHOLOGY = HERE.parents[1] / "cabletheory" / "data" / "morphologies" / "lumenia_pv7_interneuron.swc"
TRUTH = {"membrane_resistivity": 2.0, "axial_resistivity": 1.5, "membrane_capacitance": 0.009}  # SI
CURRENT = -40e-12
ONSET = 20e-3
STEP = 0.1e-3
SAMPLES = 1900
SWEEPS = 6
REST = -61e-3
NOISE = 0.3e-3


def main() -> None:
    tree = build_tree(read_morphology(MORPHOLOGY, read_outline_value))
    t = np.arange(SAMPLES) * STEP
    after = t > ONSET + 1e-12
    v = np.zeros(t.size)
    v[after] = tree_response(_cell(tree, TRUTH), CurrentStep(CURRENT), t[after] - ONSET, root_site(),
                             [root_site()], tolerance=1e-10).voltage[:, 0]
    rng = np.random.default_rng(20261203)
    rows = [REST + rng.normal(0.0, 0.3e-3) + v + rng.normal(0.0, NOISE, t.size) for _ in range(SWEEPS)]
    lines = ["# Tidewater Station, interneuron PV-7 (invented), soma current step -40 pA at 20 ms",
             "time (ms)," + ",".join(f"sweep {k + 1} (mV)" for k in range(SWEEPS))]
    for i in range(t.size):
        lines.append(f"{t[i] * 1e3:.1f}," + ",".join(f"{r[i] * 1e3:.3f}" for r in rows))
    (HERE / "pv7_sweeps.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
