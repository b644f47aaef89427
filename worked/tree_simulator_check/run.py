"""Worked example: is the Tidewater Station simulator right on a branched cell?

Run from the project root:  .venv/bin/python worked/tree_simulator_check/run.py
The output is checked against expected.txt by tests/test_worked.py and
tests/test_worked_tree_simulator_check.py. Exit status 0: the coarse run was flagged and the
finest run passed, as the story expects.
"""

import contextlib
import io
import pathlib
import shlex
import sys

from cabletheory.cli import main

HERE = pathlib.Path(__file__).resolve().parent
try:
    FOLDER = str(HERE.relative_to(pathlib.Path.cwd()))
    CELL = str((HERE.parents[1] / "cabletheory" / "data" / "morphologies" / "lumenia_demo.outline")
               .relative_to(pathlib.Path.cwd()))
except ValueError:  # run from elsewhere: use absolute paths
    FOLDER = str(HERE)
    CELL = str(HERE.parents[1] / "cabletheory" / "data" / "morphologies" / "lumenia_demo.outline")

MEMBRANE = ["--Rm", "20 kΩ·cm²", "--Ri", "200 Ω·cm", "--Cm", "1 µF/cm²", "--morphology", CELL]
CASE = [*MEMBRANE, "--shape", "alpha", "--current", "50 pA", "--time-to-peak", "0.5 ms", "--stimulus-at", "right.b",
        "--rest", "-62 mV", "--onset", "1 ms"]
STEPS = [
    ("1. The first run (100 µm compartments, Δt 0.25 ms) against the exact solution, tolerance 20 µV:",
     ["compare", f"{FOLDER}/coarse.csv", *CASE, "--pass-within", "20 uV"]),
    ("2. Three runs refined in space only (50, 25, 12.5 µm; Δt 2.5 µs): second order in Δx on the branched cell?",
     ["compare", f"{FOLDER}/grid_50.csv", f"{FOLDER}/grid_25.csv", f"{FOLDER}/grid_12.5.csv", *CASE,
      "--pass-within", "20 uV"]),
    ("3. Compartments and time step for 0.5 % at the three recording points (a current step at right.b):",
     ["advise", *MEMBRANE, "--quantity", "time-course", "--stimulus-at", "right.b",
      "--read-at", "soma, right.b, branch left +150 um", "--times", "0:11:0.25 ms", "--target", "0.5%"]),
]


def run_step(argv: list[str]) -> int:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        status = main(argv)
    # drop the repeated caveat; it is printed once at the end
    print(out.getvalue().replace(CAVEAT, "").rstrip())
    return status


if __name__ == "__main__":
    from cabletheory import PASSIVE_CAVEAT as CAVEAT

    statuses = []
    for story, argv in STEPS:
        print(story)
        print(f"$ cabletheory {shlex.join(argv)}\n")
        statuses.append(run_step(argv))
        print()
    print(CAVEAT)
    # the story: run 1 flagged (status 1), the refined set has a failing run too (1), advice given (0)
    sys.exit(0 if statuses == [1, 1, 0] else 1)
