"""Worked example: can an idealised interneuron be collapsed into one equivalent cylinder?

Run from the project root:  .venv/bin/python worked/tree_reduction/run.py
The output is checked against expected.txt by tests/test_worked.py.
"""

import os
import pathlib
import shlex
import sys

from cabletheory.cli import main

ROOT = pathlib.Path(__file__).resolve().parents[2]
ARGV = ["tree", "cabletheory/data/morphologies/lumenia_demo.outline", "--Rm", "20 kΩ·cm²", "--Ri", "200 Ω·cm",
        "--Cm", "1 µF/cm²"]

if __name__ == "__main__":
    os.chdir(ROOT)  # the morphology path is relative to the project root
    print(f"$ cabletheory {shlex.join(ARGV)}\n")
    sys.exit(main(ARGV))
