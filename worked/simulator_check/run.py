"""Worked example: is the Tidewater Station simulator's dendrite fine enough?

Run from the project root:  .venv/bin/python worked/simulator_check/run.py
The output is checked against expected.txt by tests/test_worked.py and
tests/test_worked_simulator_check.py. Exit status 0: the coarse run was flagged and the
refined run passed, as the story expects.
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
except ValueError:  # run from elsewhere: use the absolute path
    FOLDER = str(HERE)

CASE = ["--Rm", "20 kΩ·cm²", "--Ri", "200 Ω·cm", "--Cm", "1 µF/cm²", "--diameter", "2 µm", "--length", "500 µm",
        "--end", "sealed", "--current", "100 pA", "--rest", "-62 mV", "--onset", "1 ms"]
STEPS = [
    ("1. The first run (4 compartments, Δt 0.25 ms) against the exact solution, tolerance 20 µV:",
     ["compare", f"{FOLDER}/coarse.csv", *CASE, "--pass-within", "20 uV"]),
    ("2. The refined run (40 compartments, Δt 0.025 ms):",
     ["compare", f"{FOLDER}/refined.csv", *CASE, "--pass-within", "20 uV"]),
    ("3. Three runs refined in space only (Δt 0.0125 ms): is the simulator second order in Δx?",
     ["compare", f"{FOLDER}/grid_10.csv", f"{FOLDER}/grid_20.csv", f"{FOLDER}/grid_40.csv", *CASE,
      "--pass-within", "20 uV"]),
    ("4. How many compartments would the steady input resistance need for 0.1 %?",
     ["advise", *CASE[:12], "--quantity", "input-resistance", "--target", "0.1%"]),
]


def run_step(argv: list[str]) -> int:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        status = main(argv)
    text = out.getvalue()
    # drop the repeated caveat; it is printed once at the end
    print(text.replace(CAVEAT, "").rstrip())
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
    # the story: run 1 flagged (status 1), run 2 passes (0)
    sys.exit(0 if statuses[:2] == [1, 0] else 1)
