"""Worked example: passive parameters of a Lumenia vadosa interneuron from eight recorded sweeps.

Run from the project root:  .venv/bin/python worked/fitting/run.py
The output is checked against expected.txt by tests/test_worked.py, and its intervals against the
cell that made the recording by tests/test_cli_fit.py.
"""

import shlex
import sys

from cabletheory.cli import main

ARGV = ["fit", "worked/fitting/lumenia_sweeps.csv", "--onset", "20 ms", "--current", "-40 pA", "--Ri", "150 Ω·cm",
        "--bootstrap", "100", "--seed", "7"]

if __name__ == "__main__":
    print(f"$ cabletheory {shlex.join(ARGV)}\n")
    sys.exit(main(ARGV))
