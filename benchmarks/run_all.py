"""Run every benchmark script in this folder and print its figures (not part of the tests)."""

from __future__ import annotations

import pathlib
import subprocess
import sys

here = pathlib.Path(__file__).parent
status = 0
for script in sorted(here.glob("*.py")):
    if script.name == pathlib.Path(__file__).name or script.name.startswith("_"):
        continue
    print(f"== {script.name}", flush=True)
    status |= subprocess.run([sys.executable, str(script)]).returncode
sys.exit(status)
