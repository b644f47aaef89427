"""Run the benchmarks and print one table: what, measured, goal, met? (not part of the tests).

Usage: ``make bench`` (every row), ``make bench ROWS="startup app"`` or
``python benchmarks/run_all.py startup app`` (some rows), ``python benchmarks/run_all.py --list``.

Each benchmark runs in its own interpreter, one after the other, and prints its details as it
goes; the table at the end collects the rows every one of them reported (see ``_table.py``).
Times are medians of several runs or ratios to a baseline measured in the same run, so that a
loaded machine affects both sides alike. The machine and its load are printed with the table.
Exit status 1 if a benchmark failed to run (a missed goal is a row of the table, not a failure).
"""

from __future__ import annotations

import os
import platform
import subprocess
import sys
import time
from pathlib import Path

from _table import Row, markdown, parse

HERE = Path(__file__).resolve().parent

# name -> (script, what it covers); the default run is every entry of DEFAULT
BENCHMARKS: dict[str, tuple[str, str]] = {
    "startup": ("startup.py", "`cable` start-up against `import numpy`"),
    "tree-json": ("tree_json.py", "`tree FILE --json` on a 100,000-point SWC, whole command"),
    "transient": ("transient_speed.py", "10^6-point step and alpha responses; equal-accuracy compartmental ratio"),
    "app": ("ui_keystroke.py", "app keystroke to new result (charging view, tree view)"),
    "app-start": ("ui_start.py", "app first frame and first result"),
    "derive": ("derive_speed.py", "`derive --origin soma --end leaky --part steady`"),
    "tree-time": ("tree_time_speed.py", "exact time course of a 1,000-branch tree; compartmental ratio"),
    "tree-views": ("tree_views_speed.py", "`tree --map` on a 100,000-point SWC and `tree PV-7 --modes 3`"),
    "fit": ("fit_speed.py", "ball-and-stick and morphology fits"),
    "tests": ("suite_speed.py", "the test suite on two cores"),
    # not in the default run (figures of older issues; long)
    "tree-audit": ("tree_speed.py", "audit of generated trees of 25,000-200,000 points"),
    "survey": ("survey_speed.py", "survey of 1,000 invented cells (long)"),
    "fuzz": ("fuzz_accuracy.py", "10,000 random exact time courses against mpmath (about 4 min)"),
    "hostile": ("hostile_text.py", "hostile unit text"),
    "bad-input": ("bad_input.py", "the bad-input catalogue"),
    "app-large-tree": ("ui_large_tree.py", "tree view on an 82,000-point SWC"),
}
DEFAULT = ("startup", "tree-json", "transient", "app", "app-start", "derive", "tree-time", "tree-views", "fit",
           "tests")


def machine() -> str:
    cpu = platform.processor() or platform.machine()
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    load = ", ".join(f"{x:.1f}" for x in os.getloadavg()) if hasattr(os, "getloadavg") else "?"
    return (f"{cpu}, {os.cpu_count()} cores, Python {platform.python_version()}, {platform.system()}; "
            f"load average {load}")


def run(name: str) -> tuple[list[Row], int, float]:
    script, _ = BENCHMARKS[name]
    env = dict(os.environ, BENCH_ROWS="1")
    start = time.perf_counter()
    child = subprocess.Popen([sys.executable, str(HERE / script)], stdout=subprocess.PIPE, text=True, env=env)
    assert child.stdout is not None
    rows = []
    for line in child.stdout:
        row = parse(line)
        if row is None:
            print("  " + line, end="", flush=True)
        else:
            rows.append(row)
    return rows, child.wait(), time.perf_counter() - start


def main(argv: list[str]) -> int:
    if "--list" in argv:
        for name, (script, what) in BENCHMARKS.items():
            print(f"{name:15s} {script:22s} {what}{'' if name in DEFAULT else '  (not in the default run)'}")
        return 0
    names = [n for a in argv for n in a.replace(",", " ").split()] or list(DEFAULT)
    if names == ["all"]:
        names = list(BENCHMARKS)
    unknown = [n for n in names if n not in BENCHMARKS]
    if unknown:
        print(f"run_all.py: unknown benchmark {unknown[0]!r}; choose from {', '.join(BENCHMARKS)} or 'all'",
              file=sys.stderr)
        return 2
    started = time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime())
    before = machine()
    rows: list[Row] = []
    failed = []
    for name in names:
        print(f"== {name} ({BENCHMARKS[name][0]})", flush=True)
        got, status, seconds = run(name)
        print(f"   ({seconds:.0f} s)", flush=True)
        if not got and status != 0:
            failed.append(name)
            got = [Row(BENCHMARKS[name][1], f"benchmark failed (exit status {status})", "—", False)]
        rows.extend(got)
    print()
    print(f"benchmarks of {started} on {before}")
    print(f"(load average at the end: {machine().rsplit('load average ', 1)[-1]})")
    print()
    print(markdown(rows))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
