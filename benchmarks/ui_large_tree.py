"""Keystroke to result in the app's tree view, on a generated morphology of 82,000 points.

The tree view reads and builds a file once; a membrane value or a tolerance typed afterwards
re-audits the tree already read (the parse is not repeated). This measures, headless at 120 × 36:
the first result after opening the file, and the time from one keystroke in Rm (and in the
ratio tolerance) until the results panel shows the new audit. Median of 3 keystrokes each.

Run: ``.venv/bin/python benchmarks/ui_large_tree.py``.
"""

from __future__ import annotations

import asyncio
import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from tree_speed import generate_swc

POINTS = int(sys.argv[1]) if len(sys.argv) > 1 else 82_000


async def measure(path: Path) -> dict[str, float | list[float]]:
    from textual.widgets import Input

    from cabletheory.tui.app import CableApp

    app = CableApp(view="tree", swc=str(path))
    out: dict[str, float | list[float]] = {}
    start = time.perf_counter()
    async with app.run_test(size=(120, 36)) as pilot:
        view = app.query_one("#tree")
        while view.report is None:
            await pilot.pause(0.01)
        out["first result"] = time.perf_counter() - start
        typed = (("tr-Rm", ("30000", "40000", "50000")), ("tr-ratio_tolerance", ("0.06", "0.07", "0.08")))
        for field, texts in typed:
            times = []
            for text in texts:
                app.query_one(f"#{field}", Input).value = text[:-1]
                await pilot.pause()
                await app.workers.wait_for_complete()
                await pilot.pause()
                shown = view.report
                box = app.query_one(f"#{field}", Input)
                box.focus()
                await pilot.press("end")  # a focused field selects its text; typing would replace it
                await pilot.pause()
                began = time.perf_counter()
                await pilot.press(text[-1])
                while view.report is shown or view.report is None:
                    if time.perf_counter() - began > 120:
                        raise SystemExit(f"no new result within 120 s after typing into {field}")
                    await pilot.pause(0.005)
                times.append(time.perf_counter() - began)
            out[field] = times
    return out


def main() -> int:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "large.swc"
        path.write_text(generate_swc(POINTS))
        result = asyncio.run(measure(path))
    print(f"tree view, generated SWC of {POINTS:,} points (headless, 120 × 36)")
    print(f"  open: first result                     {1e3 * float(result['first result']):8.0f} ms")
    keystrokes = (("tr-Rm", "Rm keystroke -> new audit"), ("tr-ratio_tolerance", "tolerance keystroke -> new audit"))
    for field, what in keystrokes:
        times = result[field]
        assert isinstance(times, list)
        print(f"  {what:38s} {1e3 * statistics.median(times):8.0f} ms (median of {len(times)})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
