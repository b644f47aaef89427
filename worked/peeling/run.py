"""Worked example: how long is the cell electrically, and how big is its soma's share?

Run from the project root:  .venv/bin/python worked/peeling/run.py
The output is checked against expected.txt by tests/test_worked.py, and its numbers against
outside values by tests/test_cli_peel.py.
"""

import shlex
import sys

from cabletheory.cli import main

ARGV = ["peel", "--tau0", "31.5 ms", "--tau1", "3.12 ms", "--tau2", "0.78 ms", "--c0", "0.851", "--c1", "0.126",
        "--input-resistance", "240 MΩ", "--Cm", "1 µF/cm²", "--Ri", "150 Ω·cm"]

if __name__ == "__main__":
    print(f"$ cabletheory {shlex.join(ARGV)}\n")
    sys.exit(main(ARGV))
