"""Regenerate the "simulator runs" of this worked example (the CSV files beside this script).

They stand in for the Tidewater Station team's own simulator on a branched cell: cabletheory's
sparse reference discretisation (vertex-centred, Crank-Nicolson) of the idealised mechanosensory
interneuron (cabletheory/data/morphologies/lumenia_demo.outline), an alpha current at the tip of
branch right.b, recorded the way their simulator writes files: wide layout, the recording points
named in cabletheory's tree column syntax, absolute membrane potential (rest -62 mV), the
current switched on at t = 1 ms of the file's clock.

Run from the project root:  .venv/bin/python worked/tree_simulator_check/make_runs.py
"""

from __future__ import annotations

import math
import pathlib

import numpy as np

from cabletheory import compartment as cp
from cabletheory.inputs import read_outline_value
from cabletheory.morphology import read_morphology
from cabletheory.tree import build_tree

HERE = pathlib.Path(__file__).resolve().parent
CELL = HERE.parents[1] / "cabletheory" / "data" / "morphologies" / "lumenia_demo.outline"
UM, MS, MV = 1e-6, 1e-3, 1e-3
RM, RI, CM = 2.0, 2.0, 0.01  # Rm 20 kΩ·cm², Ri 200 Ω·cm, Cm 1 µF/cm² (SI)
REST = -62 * MV
ONSET = 1 * MS
PEAK, TIME_TO_PEAK = 50e-12, 0.5 * MS  # alpha current at the tip of right.b
SAMPLE_EVERY = 0.25 * MS
DURATION = 12 * MS
HEADERS = ["V@soma", "V@right.b", "V@branch left +150 um"]

# name -> (compartment length, time step)
RUNS = {
    "coarse.csv": (100 * UM, 0.25 * MS),
    "grid_50.csv": (50 * UM, 0.0025 * MS),
    "grid_25.csv": (25 * UM, 0.0025 * MS),
    "grid_12.5.csv": (12.5 * UM, 0.0025 * MS),
}


def simulate(spacing: float, step: float) -> str:
    tree = build_tree(read_morphology(str(CELL), read_outline_value))
    counts = np.rint(tree.lengths / spacing).astype(int)
    c = cp.discretise_tree(tree.parents, tree.lengths, tree.distal_diameters, RM, RI, CM, counts,
                           soma_area=tree.soma_area)
    tip = int(cp.branch_nodes(c, tree.labels.index("right.b"))[-1])

    def current(t: float) -> np.ndarray:
        out = np.zeros(c.size)
        out[tip] = PEAK * t / TIME_TO_PEAK * math.exp(1 - t / TIME_TO_PEAK)
        return out

    after = np.arange(0.0, DURATION - ONSET + SAMPLE_EVERY / 2, SAMPLE_EVERY)
    v = cp.integrate(c, current, after, scheme="crank-nicolson", step=step)
    left = tree.labels.index("left")
    columns = np.stack([v[:, 0], v[:, tip],
                        cp.sample(c, v, [c.distance[c.proximal[left]] + 150 * UM], branch=left)[:, 0]], axis=1)
    before = np.arange(0.0, ONSET - SAMPLE_EVERY / 2, SAMPLE_EVERY)
    lines = [
        "# Tidewater Station cable simulator (stand-in), Lumenia vadosa mechanosensory interneuron",
        f"# dx = {spacing / UM:g} um",
        f"# dt = {step / MS:g} ms",
        "# scheme = crank-nicolson",
        ",".join(["time (ms)", *(f"{h} (mV)" for h in HEADERS)]),
    ]
    lines += [",".join([f"{t / MS:g}", *([f"{REST / MV:.6f}"] * 3)]) for t in before]
    lines += [",".join([f"{(ONSET + t) / MS:g}", *(f"{(REST + x) / MV:.6f}" for x in row)])
              for t, row in zip(after, columns, strict=True)]
    return "\n".join(lines) + "\n"


if __name__ == "__main__":
    for name, (spacing, step) in RUNS.items():
        (HERE / name).write_text(simulate(spacing, step), encoding="utf-8")
        print(f"wrote {name}")
