"""Start-up cost of the command line, as a ratio to `python3 -c "import numpy"` in the same run.

Goals (issue 15): `cabletheory cable ...` with bare numbers takes at most 1.5x the time of importing
numpy alone, and with unit strings at most 2.5x. The unit registry is built from the package's own
definitions on every run (there is no unit cache to fill), so every run is a first run.
Median of interleaved runs, so that machine load affects every command alike.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time

from _table import Row, compile_package, report

RUNS = 11
GOALS = {"cable, bare numbers": 1.5, "cable, unit strings": 2.5}
COMMANDS = {
    "import numpy": [sys.executable, "-c", "import numpy"],
    "cable, bare numbers": [sys.executable, "-m", "cabletheory", "cable", "--Rm", "20000", "--Ri", "100", "--Cm", "1",
                            "--diameter", "2", "--length", "500", "--end", "sealed"],
    "cable, unit strings": [sys.executable, "-m", "cabletheory", "cable", "--Rm", "20 kΩ·cm²", "--Ri", "100 Ω·cm",
                            "--Cm", "1 µF/cm²", "--diameter", "2um", "--length", "500um", "--end", "sealed"],
}


def main() -> int:
    compile_package()
    times: dict[str, list[float]] = {name: [] for name in COMMANDS}
    for _ in range(RUNS):
        for name, argv in COMMANDS.items():
            start = time.perf_counter()
            subprocess.run(argv, check=True, stdout=subprocess.DEVNULL)
            times[name].append(time.perf_counter() - start)
    base = statistics.median(times["import numpy"])
    print(f"start-up, median of {RUNS} interleaved runs")
    print(f"  {'import numpy':22s} {base * 1e3:7.1f} ms")
    rows = []
    for name in list(COMMANDS)[1:]:
        t = statistics.median(times[name])
        ratio = t / base
        print(f"  {name:22s} {t * 1e3:7.1f} ms   ratio {ratio:4.2f} (goal <= {GOALS[name]})")
        rows.append(Row(f"`{name.replace(', ', '` with ')}, against `python -c \"import numpy\"`",
                        f"{ratio:.2f}× ({t * 1e3:.0f} ms / {base * 1e3:.0f} ms, median of {RUNS})",
                        f"≤ {GOALS[name]}×", ratio <= GOALS[name]))
    return report(rows)


if __name__ == "__main__":
    sys.exit(main())
