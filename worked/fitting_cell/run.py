"""Worked example: Rm, Ri and Cm of a reconstructed Lumenia vadosa interneuron from six sweeps.

Run from the project root:  .venv/bin/python worked/fitting_cell/run.py
The output is checked against expected.txt by tests/test_worked.py, and the app's fitting view
shows the same numbers (tests/test_tui_fit.py).
"""

import shlex
import sys

from cabletheory.cli import main

ARGV = ["fit", "worked/fitting_cell/pv7_sweeps.csv", "--morphology",
        "cabletheory/data/morphologies/lumenia_pv7_interneuron.swc", "--current", "-40 pA", "--onset", "20 ms",
        "--bootstrap", "0"]

if __name__ == "__main__":
    print(f"$ cabletheory {shlex.join(ARGV)}\n")
    sys.exit(main(ARGV))
