"""Rows of the benchmark table: each benchmark script reports its figures against their goals.

A script prints its details for people, then calls :func:`report` with its rows. Run alone, the
script ends with its own short table; run by ``run_all.py`` (environment ``BENCH_ROWS=1``), each
row is also printed as one ``bench-row {json}`` line that ``run_all.py`` collects into one table.
"""

from __future__ import annotations

import compileall
import json
import os
import resource
import statistics
import subprocess
import time
from collections.abc import Sequence
from dataclasses import asdict, dataclass
from pathlib import Path

MARK = "bench-row "
PACKAGE = Path(__file__).resolve().parents[1] / "cabletheory"


def compile_package() -> None:
    """Write the package's bytecode, as installing a package does, so that start-up is timed as a
    user meets it: a checkout run with PYTHONDONTWRITEBYTECODE set (some sandboxes and CI runners
    set it) would otherwise compile every module from source at every start. Idempotent."""
    compileall.compile_dir(PACKAGE, quiet=1)


@dataclass(frozen=True, slots=True)
class Row:
    """One line of the table: what was measured, the figure, the goal, and whether it is met
    (None: a figure with no goal, or not measured)."""

    what: str
    measured: str
    goal: str
    met: bool | None


def run_timed(argv: Sequence[str], stdout: int | object = subprocess.DEVNULL) -> tuple[float, float]:
    """Wall-clock time of one command, and the CPU time (user + system) its process used: on a
    busy machine the wall time includes waiting for a core, the CPU time does not."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    subprocess.run(list(argv), check=True, stdout=stdout)  # type: ignore[call-overload]
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def median(values: Sequence[float]) -> float:
    return float(statistics.median(values))


def p90(values: Sequence[float]) -> float:
    """90th percentile (linear interpolation between order statistics; numpy's default rule)."""
    ordered = sorted(values)
    if len(ordered) == 1:
        return float(ordered[0])
    position = 0.9 * (len(ordered) - 1)
    low = int(position)
    high = min(low + 1, len(ordered) - 1)
    return float(ordered[low] + (ordered[high] - ordered[low]) * (position - low))


def verdict(met: bool | None) -> str:
    return {True: "met", False: "NOT met", None: "—"}[met]


def markdown(rows: Sequence[Row]) -> str:
    """The rows as a Markdown table (the README's benchmark table is pasted from this)."""
    lines = ["| what | measured | goal | met? |", "|---|---|---|---|"]
    lines += [f"| {r.what} | {r.measured} | {r.goal} | {verdict(r.met)} |" for r in rows]
    return "\n".join(lines)


def report(rows: Sequence[Row]) -> int:
    """Print the rows (as a table, and as machine lines under run_all.py); 1 if a goal is missed."""
    if os.environ.get("BENCH_ROWS") == "1":
        for row in rows:
            print(MARK + json.dumps(asdict(row), ensure_ascii=False), flush=True)
    else:
        print()
        print(markdown(rows))
    return 1 if any(r.met is False for r in rows) else 0


def parse(line: str) -> Row | None:
    """The row carried by one output line of a script, or None."""
    if not line.startswith(MARK):
        return None
    return Row(**json.loads(line[len(MARK):]))
