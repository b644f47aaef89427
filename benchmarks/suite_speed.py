"""The whole test suite, run as `make test` runs it (its pytest line), timed from start to end.

Goal (issue 15): at most 60 s on two cores. One run (the suite takes a minute or more, and its
own run-to-run spread is small next to the machine's load, which the figure states).
"""

from __future__ import annotations

import os
import re
import resource
import shlex
import subprocess
import sys
import time
from pathlib import Path

from _table import Row, compile_package, report

GOAL = 60.0  # s
ROOT = Path(__file__).resolve().parents[1]


def pytest_command() -> list[str]:
    """The pytest command of the Makefile's `test` target, with this interpreter."""
    text = (ROOT / "Makefile").read_text()
    found = re.search(r"^\t\$\(BIN\)/python -m pytest(.*)$", text, re.MULTILINE)
    extra = shlex.split(found.group(1)) if found else ["-q"]
    return [sys.executable, "-m", "pytest", *extra]


def main() -> int:
    compile_package()
    command = pytest_command()
    try:
        import pytest  # noqa: F401

        if "-n" in command:
            import xdist  # noqa: F401  (pytest-xdist, a test extra)
    except ImportError:
        print("pytest is not installed: `make .venv/.installed-test` first")
        return report([Row("test suite", "not measured (no test extras installed)", f"≤ {GOAL:g} s on two cores",
                           None)])
    load = os.getloadavg()[0]
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    done = subprocess.run(command, cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True)
    elapsed = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    # processor time of pytest, its workers and every process they waited for: unlike the elapsed
    # time it hardly depends on the machine's load; divided by the cores it is the least the run
    # could take on an otherwise idle machine
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    cores = os.cpu_count() or 1
    summary = [line for line in done.stdout.splitlines() if line.strip()][-1:] or ["(no output)"]
    print(f"`{' '.join(command[2:])}`: {elapsed:.1f} s on {cores} cores (load average {load:.1f} at the "
          f"start); processor time {cpu:.0f} s, {cpu / cores:.0f} s per core; {summary[0].strip('= ')}")
    passed = done.returncode == 0
    return report([Row("test suite, as `make test` runs it", f"{elapsed:.0f} s (one run, {cores} cores, load "
                       f"{load:.1f}; processor time {cpu / cores:.0f} s per core{'' if passed else ', FAILED'})",
                       f"≤ {GOAL:g} s on two cores", elapsed <= GOAL and passed)])


if __name__ == "__main__":
    sys.exit(main())
