"""`cabletheory derive --origin soma --end leaky --part steady`: the whole command.

Goal (issue 15): at most 2 s (or the output says why it takes longer). The derivation is
symbolic (sympy), so the time is mostly sympy's; median of interleaved runs, with
``python -c "import numpy"`` timed alongside as a gauge of the machine's load.
"""

from __future__ import annotations

import statistics
import sys

from _table import Row, compile_package, report, run_timed

RUNS = 3
GOAL = 2.0  # s
COMMAND = [sys.executable, "-m", "cabletheory", "derive", "--origin", "soma", "--end", "leaky", "--part", "steady"]


def main() -> int:
    compile_package()
    times: list[float] = []
    cpu: list[float] = []
    gauge: list[float] = []
    for _ in range(RUNS):
        gauge.append(run_timed([sys.executable, "-c", "import numpy"])[0])
        wall, used = run_timed(COMMAND)
        times.append(wall)
        cpu.append(used)
    t, c, g = statistics.median(times), statistics.median(cpu), statistics.median(gauge)
    print(f"`{' '.join(COMMAND[3:])}`: median {t:.2f} s of {RUNS} (runs {', '.join(f'{x:.2f}' for x in times)} s; "
          f"CPU {c:.2f} s); `import numpy` alongside: {g * 1e3:.0f} ms")
    return report([Row("`derive --origin soma --end leaky --part steady`",
                       f"{t:.2f} s (median of {RUNS}; CPU {c:.2f} s)", f"≤ {GOAL:g} s", t <= GOAL)])


if __name__ == "__main__":
    sys.exit(main())
