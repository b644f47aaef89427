"""`cabletheory derive --origin soma --end leaky --part steady`: the whole command.

Goal (issue 15): at most 2 s (or the output says why it takes longer). The derivation is
symbolic (sympy), so the time is mostly sympy's; median of interleaved runs, with
``python -c "import numpy"`` timed alongside as a gauge of the machine's load.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time

from _table import Row, compile_package, report

RUNS = 3
GOAL = 2.0  # s
COMMAND = [sys.executable, "-m", "cabletheory", "derive", "--origin", "soma", "--end", "leaky", "--part", "steady"]


def timed(argv: list[str]) -> float:
    start = time.perf_counter()
    subprocess.run(argv, check=True, stdout=subprocess.DEVNULL)
    return time.perf_counter() - start


def main() -> int:
    compile_package()
    times: list[float] = []
    gauge: list[float] = []
    for _ in range(RUNS):
        gauge.append(timed([sys.executable, "-c", "import numpy"]))
        times.append(timed(COMMAND))
    t, g = statistics.median(times), statistics.median(gauge)
    print(f"`{' '.join(COMMAND[3:])}`: median {t:.2f} s of {RUNS} (runs {', '.join(f'{x:.2f}' for x in times)} s); "
          f"`import numpy` alongside: {g * 1e3:.0f} ms")
    return report([Row("`derive --origin soma --end leaky --part steady`", f"{t:.2f} s (median of {RUNS})",
                       f"≤ {GOAL:g} s", t <= GOAL)])


if __name__ == "__main__":
    sys.exit(main())
