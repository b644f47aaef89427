"""Worked example: what does collapsing a hand-drawn neuron into a ball and stick cost in time?

Run from the project root:  .venv/bin/python worked/tree_in_time/run.py
The output is checked against expected.txt by tests/test_worked.py, and its key numbers against
values computed outside the package (Rall's steady-state formulas) there too.
"""

import os
import pathlib
import shlex
import sys

from cabletheory.cli import main

ROOT = pathlib.Path(__file__).resolve().parents[2]
CELL = ["tree", "worked/tree_in_time/lumenia_sr3.outline", "--Rm", "15 kΩ·cm²", "--Ri", "180 Ω·cm",
        "--Cm", "1 µF/cm²"]
STEPS = [
    # 1. how far, in attenuation and in time, is every point from the soma?
    [*CELL, "--map"],
    # 2. the slowest time constants the soma sees, and what peeling its charging curve would report
    [*CELL, "--modes", "3"],
    # 3. the soma's response to an alpha current at the soma, tree beside its reduction
    [*CELL, "--reduction-cost", "--current", "200 pA", "--shape", "alpha", "--time-to-peak", "1 ms",
     "--times", "0:20:2 ms"],
]
ARGV = STEPS[0]

if __name__ == "__main__":
    os.chdir(ROOT)  # the outline's path is relative to the project root
    status = 0
    for k, argv in enumerate(STEPS):
        if k:
            print()
        print(f"$ cabletheory {shlex.join(argv)}\n", flush=True)
        status = max(status, main(argv))
        sys.stdout.flush()
    sys.exit(status)
