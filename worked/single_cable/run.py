"""Worked example: how far does a steady signal reach along one dendrite?

Run from the project root:  .venv/bin/python worked/single_cable/run.py
The output is checked against expected.txt by tests/test_worked.py.
"""

import shlex
import sys

from cabletheory.cli import main

ARGV = ["cable", "--Rm", "20 kΩ·cm²", "--Ri", "200 Ω·cm", "--Cm", "1 µF/cm²", "--diameter", "2 µm",
        "--length", "500 µm", "--end", "sealed", "--frequency", "100 Hz", "--positions", "0, 250, 500 µm"]

if __name__ == "__main__":
    print(f"$ cabletheory {shlex.join(ARGV)}\n")
    sys.exit(main(ARGV))
