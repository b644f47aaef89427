"""Regenerate the "simulator runs" of this worked example (the CSV files beside this script).

They stand in for the Tidewater Station team's own simulator: cabletheory's sparse reference
discretisation (vertex-centred, Crank-Nicolson) of the mantle-edge dendrite, recorded the way
their simulator writes files: wide layout, absolute membrane potential (rest -62 mV), the
current step switched on at t = 1 ms of the file's clock.

Run from the project root:  .venv/bin/python worked/simulator_check/make_runs.py
"""

from __future__ import annotations

import pathlib

import numpy as np

from cabletheory import compartment as cp
from cabletheory.cable import Cylinder

HERE = pathlib.Path(__file__).resolve().parent
UM, MS, MV = 1e-6, 1e-3, 1e-3
# invented Lumenia vadosa dendrite: Rm 20 kΩ·cm², Ri 200 Ω·cm, Cm 1 µF/cm², 2 µm x 500 µm, sealed
DENDRITE = Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM)
REST = -62 * MV
ONSET = 1 * MS
AMPLITUDE = 100e-12
SITES = np.array([0.0, 250.0, 500.0]) * UM
SAMPLE_EVERY = 0.25 * MS
DURATION = 10 * MS

# name -> (compartments, time step)
RUNS = {
    "coarse.csv": (4, 0.25 * MS),
    "refined.csv": (40, 0.025 * MS),
    "grid_10.csv": (10, 0.0125 * MS),
    "grid_20.csv": (20, 0.0125 * MS),
    "grid_40.csv": (40, 0.0125 * MS),
}


def simulate(compartments: int, step: float) -> str:
    c = cp.discretise_cable(DENDRITE, compartments)
    current = np.zeros(c.size)
    current[0] = AMPLITUDE
    after = np.arange(0.0, DURATION - ONSET + SAMPLE_EVERY / 2, SAMPLE_EVERY)
    v = cp.sample(c, cp.integrate(c, current, after, scheme="crank-nicolson", step=step), SITES)
    before = np.arange(0.0, ONSET - SAMPLE_EVERY / 2, SAMPLE_EVERY)
    lines = [
        "# Tidewater Station cable simulator (stand-in), Lumenia vadosa mantle-edge dendrite",
        f"# dx = {DENDRITE.length / compartments / UM:g} um",
        f"# dt = {step / MS:g} ms",
        "# scheme = crank-nicolson",
        "time (ms)," + ",".join(f"V at {x / UM:g} um (mV)" for x in SITES),
    ]
    lines += [f"{t / MS:.4f}," + ",".join(f"{REST / MV:.6f}" for _ in SITES) for t in before]
    lines += [f"{(ONSET + t) / MS:.4f}," + ",".join(f"{(REST + vi) / MV:.6f}" for vi in row)
              for t, row in zip(after, v, strict=True)]
    return "\n".join(lines) + "\n"


if __name__ == "__main__":
    for name, (compartments, step) in RUNS.items():
        (HERE / name).write_text(simulate(compartments, step), encoding="utf-8")
        print(f"wrote {name}: {compartments} compartments, dt {step / MS:g} ms")
