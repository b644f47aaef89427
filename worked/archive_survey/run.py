"""Worked example: which cells of an archive can be reduced to an equivalent cylinder, and at what cost?

Run from the project root:  .venv/bin/python worked/archive_survey/run.py
The output is checked against expected.txt by tests/test_worked.py.
"""

import csv
import os
import pathlib
import shlex
import sys
import tempfile

from cabletheory.cli import main

ROOT = pathlib.Path(__file__).resolve().parents[2]
ARGV = ["survey", "archive", "--Rm", "20 kΩ·cm²", "--Ri", "150 Ω·cm", "--output", "lumenia_survey.csv",
        "--workers", "1", "--show", "3"]
SHOWN = ("path", "status", "reducible", "ratio_worst", "tip_spread", "electrotonic_length", "input_resistance_ohm",
         "difference_percent")

if __name__ == "__main__":
    with tempfile.TemporaryDirectory() as scratch:
        os.chdir(scratch)  # the table goes to a scratch folder; the archive is seen there as 'archive'
        os.symlink(ROOT / "cabletheory" / "data" / "archive", "archive")
        print(f"$ cabletheory {shlex.join(ARGV)}\n")
        status = main(ARGV)
        text = pathlib.Path("lumenia_survey.csv").read_text(encoding="utf-8")
        print("\nThe table's header and eight of its rows, a few columns each:\n")
        print("".join(line + "\n" for line in text.splitlines() if line.startswith("#") and "assumptions" not in line))
        rows = list(csv.DictReader(line for line in text.splitlines() if not line.startswith("#")))
        writer = csv.writer(sys.stdout, lineterminator="\n")
        writer.writerow(SHOWN)
        for row in rows[:6] + rows[15:17]:  # numbers to 6 significant digits (the table keeps them all)
            writer.writerow([f"{float(row[name]):.6g}" if name.endswith(("_worst", "spread", "length", "ohm",
                                                                          "percent")) and row[name] else row[name]
                             for name in SHOWN])
        os.chdir(ROOT)
    sys.exit(status)
