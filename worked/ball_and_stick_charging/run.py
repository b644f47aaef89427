"""Worked example: how fast does a soma-plus-dendrite cell charge after a current step?

Run from the project root:  .venv/bin/python worked/ball_and_stick_charging/run.py
The output is checked against expected.txt by tests/test_worked.py.
"""

import shlex
import sys

from cabletheory.cli import main

ARGV = ["charge", "--Rm", "20 kΩ·cm²", "--Ri", "100 Ω·cm", "--Cm", "1 µF/cm²", "--diameter", "2 µm",
        "--length", "1 mm", "--end", "sealed", "--soma-diameter", "17.4539 µm", "--current", "100 pA",
        "--times", "0, 2, 10, 20, 40 ms", "--positions", "0, 500, 1000 µm", "--modes", "4"]

if __name__ == "__main__":
    print(f"$ cabletheory {shlex.join(ARGV)}\n")
    sys.exit(main(ARGV))
