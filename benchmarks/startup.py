"""Start-up cost of the command line, as a ratio to `python3 -c "import numpy"` in the same run.

Goal (issue 2): `cabletheory cable ...` with unit strings and with bare numbers each take at most
3.5x the time of importing numpy alone (about half a second on a 2-core machine).
Median of interleaved runs, so that machine load affects every command alike.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time

RUNS = 11
GOAL = 3.5
COMMANDS = {
    "import numpy": [sys.executable, "-c", "import numpy"],
    "cable, unit strings": [sys.executable, "-m", "cabletheory", "cable", "--Rm", "20 kΩ·cm²", "--Ri", "100 Ω·cm",
                            "--Cm", "1 µF/cm²", "--diameter", "2um", "--length", "500um", "--end", "sealed"],
    "cable, bare numbers": [sys.executable, "-m", "cabletheory", "cable", "--Rm", "20000", "--Ri", "100", "--Cm", "1",
                            "--diameter", "2", "--length", "500", "--end", "sealed"],
}


def main() -> int:
    times: dict[str, list[float]] = {name: [] for name in COMMANDS}
    for _ in range(RUNS):
        for name, argv in COMMANDS.items():
            start = time.perf_counter()
            subprocess.run(argv, check=True, stdout=subprocess.DEVNULL)
            times[name].append(time.perf_counter() - start)
    base = statistics.median(times["import numpy"])
    print(f"start-up, median of {RUNS} interleaved runs")
    print(f"  {'import numpy':22s} {base * 1e3:7.1f} ms")
    worst = 0.0
    for name in list(COMMANDS)[1:]:
        t = statistics.median(times[name])
        ratio = t / base
        worst = max(worst, ratio)
        print(f"  {name:22s} {t * 1e3:7.1f} ms   ratio {ratio:4.2f} (goal <= {GOAL})")
    print(f"  verdict: {'met' if worst <= GOAL else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
