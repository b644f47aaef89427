"""The `tree` views users wait for: `--map` on a 100,000-point SWC and `--modes 3` on the bundled PV-7.

Both are whole commands (start-up, parsing and output included), output to a file. The SWC is the
one ``tree_speed.py`` generates (deterministic seed). Each figure is the median of interleaved runs,
wall-clock and CPU time (user + system of the child) both, since a loaded machine stretches the first
and hardly the second; ``python -c "import numpy"`` is timed alongside as a gauge of the load.

Goals (issue 15, speed where users wait; our own figures, in CPU time because the machine's load
stretches wall-clock time): the map of a 100,000-point tree, and the three slowest time constants of
PV-7 beside its reduction's with what peeling would report, each in at most 1 s of CPU for the whole
command, as `tree FILE --json` on the same tree is asked to take. About 0.45 s of the second is
importing scipy (scipy.optimize and the scipy.special it loads), for the root-finders of the reduction's
eigenvalues and of the peeling.
"""

from __future__ import annotations

import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from _table import Row, compile_package, report
from tree_speed import generate_swc

RUNS = 5
POINTS = 100_000
MAP_GOAL = 1.0  # s of CPU, median
MODES_GOAL = 1.0  # s of CPU, median
PV7 = Path(__file__).resolve().parents[1] / "cabletheory" / "data" / "morphologies" / "lumenia_pv7_interneuron.swc"


def timed(argv: list[str], out: Path) -> tuple[float, float]:
    """(wall-clock s, CPU s of the child) of one run."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    with out.open("wb") as sink:
        subprocess.run(argv, check=True, stdout=sink)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def measure(commands: dict[str, list[str]], out: Path, runs: int = RUNS) -> dict[str, tuple[float, float, list[float]]]:
    """name -> (median wall s, median CPU s, wall of every run), the commands run in turn ``runs`` times."""
    walls: dict[str, list[float]] = {name: [] for name in commands}
    cpus: dict[str, list[float]] = {name: [] for name in commands}
    for _ in range(runs):
        for name, argv in commands.items():
            wall, cpu = timed(argv, out)
            walls[name].append(wall)
            cpus[name].append(cpu)
    return {name: (statistics.median(walls[name]), statistics.median(cpus[name]), walls[name]) for name in commands}


def rows(folder: Path) -> list[Row]:
    """The two rows of the table (and their details printed)."""
    swc = folder / "generated.swc"
    swc.write_text(generate_swc(POINTS))
    out = folder / "out.txt"
    program = [sys.executable, "-m", "cabletheory", "tree"]
    got = measure({"numpy": [sys.executable, "-c", "import numpy"],
                   "map": [*program, str(swc), "--Rm", "20000", "--Ri", "200", "--map"],
                   "modes": [*program, str(PV7), "--Rm", "20000", "--Ri", "150", "--modes", "3"]}, out)
    gauge = got["numpy"][0]
    for name, what in (("map", f"`tree FILE --map`, {POINTS:,}-point generated SWC"),
                       ("modes", "`tree PV-7 --modes 3` (bundled lumenia_pv7_interneuron.swc)")):
        wall, cpu, every = got[name]
        print(f"{what}: median {wall:.2f} s wall ({', '.join(f'{x:.2f}' for x in every)}), {cpu:.2f} s CPU; "
              f"`import numpy` alongside {gauge:.2f} s")
    map_wall, map_cpu, _ = got["map"]
    modes_wall, modes_cpu, _ = got["modes"]
    return [Row(f"`tree FILE --map`, {POINTS:,}-point SWC, whole command",
                f"{map_wall:.2f} s, CPU {map_cpu:.2f} s (medians of {RUNS}; `import numpy` {gauge:.2f} s)",
                f"≤ {MAP_GOAL:g} s of CPU", map_cpu <= MAP_GOAL),
            Row("`tree PV-7 --modes 3`, whole command",
                f"{modes_wall:.2f} s, CPU {modes_cpu:.2f} s (medians of {RUNS}; `import numpy` {gauge:.2f} s)",
                f"≤ {MODES_GOAL:g} s of CPU", modes_cpu <= MODES_GOAL)]


def main() -> int:
    compile_package()
    with tempfile.TemporaryDirectory() as folder:
        return report(rows(Path(folder)))


if __name__ == "__main__":
    sys.exit(main())
