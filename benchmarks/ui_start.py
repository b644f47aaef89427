"""Start-up of the terminal app: wall time from launching Python to the first painted screen.

Goals: `cabletheory ui` shows its first screen in under a second on the bundled demo data (issue
6), and its first result at most 0.7 s after that first frame (issue 15). Each run starts a fresh
interpreter that imports the app and runs it headless
(textual's ``App.run_test``, 120 × 36 cells); the parent notes when the child reports its first
frame (the first screen update textual hands to its output), and when the view's first result is on screen (the cylinder
is computed at once; the tree view reads and audits the bundled SWC in a worker).
Median of interleaved runs, so that machine load affects every case alike; a one-line textual
app is timed the same way as a baseline for the machine's state.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time

from _table import Row, compile_package, report

RUNS = 7
GOAL = 1.0  # s, to first paint
RESULT_GOAL = 0.7  # s, from the first frame to the first result

CHILD = r"""
import asyncio, sys
from cabletheory.tui.app import CableApp

class Timed(CableApp):
    painted = False

    def _display(self, screen, renderable):  # textual calls this with each frame it would draw
        if renderable is not None and not self.painted:
            self.painted = True
            print("painted", flush=True)
        super()._display(screen, renderable)

async def main():
    app = Timed(view=sys.argv[1])
    async with app.run_test(size=(120, 36)) as pilot:
        await pilot.pause()
        await app.workers.wait_for_complete()
        await pilot.pause()
        assert app.query_one(f"#{sys.argv[1]}").report is not None, "no result on screen"
        print("result", flush=True)

asyncio.run(main())
"""

BASELINE = r"""
import asyncio
from textual.app import App
from textual.widgets import Static

class Hello(App):
    painted = False

    def compose(self):
        yield Static("hello")

    def _display(self, screen, renderable):
        if renderable is not None and not self.painted:
            self.painted = True
            print("painted", flush=True)
            print("result", flush=True)
        super()._display(screen, renderable)

async def main():
    async with Hello().run_test(size=(120, 36)) as pilot:
        await pilot.pause()

asyncio.run(main())
"""

# name -> view (None: a one-line textual app, to show what the machine gives textual itself)
CASES = {"textual hello-world": None, "cylinder view": "cylinder", "tree view, bundled SWC": "tree"}


def one_run(view: str | None) -> tuple[float, float]:
    start = time.perf_counter()
    argv = [sys.executable, "-c", BASELINE] if view is None else [sys.executable, "-c", CHILD, view]
    child = subprocess.Popen(argv, stdout=subprocess.PIPE, text=True)
    assert child.stdout is not None
    marks = {}
    for line in child.stdout:
        marks[line.strip()] = time.perf_counter() - start
    if child.wait() != 0 or set(marks) != {"painted", "result"}:
        raise SystemExit(f"ui_start: the {view} view did not start cleanly")
    return marks["painted"], marks["result"]


def main() -> int:
    compile_package()
    painted: dict[str, list[float]] = {name: [] for name in CASES}
    result: dict[str, list[float]] = {name: [] for name in CASES}
    for _ in range(RUNS):
        for name, view in CASES.items():
            p, r = one_run(view)
            painted[name].append(p)
            result[name].append(r)
    print(f"terminal app start-up (first frame: goal <= {GOAL:g} s), median of {RUNS} interleaved runs "
          "(fresh interpreter each)")
    rows = []
    for name, view in CASES.items():
        p, r = statistics.median(painted[name]), statistics.median(result[name])
        if view is None:
            print(f"  {name:24s} first paint {p * 1e3:7.1f} ms   (baseline)")
            continue
        after = statistics.median([b - a for a, b in zip(painted[name], result[name], strict=True)])
        print(f"  {name:24s} first paint {p * 1e3:7.1f} ms   first result {r * 1e3:7.1f} ms   "
              f"({after * 1e3:.0f} ms after the first paint)")
        rows.append(Row(f"app, {name}: first result after the first frame",
                        f"{after:.2f} s (median of {RUNS}; first frame at {p:.2f} s, a one-line textual app's at "
                        f"{statistics.median(painted['textual hello-world']):.2f} s)", f"≤ {RESULT_GOAL:g} s",
                        after <= RESULT_GOAL))
    return report(rows)


if __name__ == "__main__":
    sys.exit(main())
