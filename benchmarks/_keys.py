"""Timing a keystroke in the terminal app, shared by the keystroke benchmarks (not a benchmark)."""

from __future__ import annotations

import asyncio
import time
from typing import Any, ClassVar


def timed_app(**options: Any) -> Any:
    """A headless CableApp that notes when each frame is handed to the terminal (as
    benchmarks/ui_start.py does): ``app.frames`` holds (wall clock, CPU time of the process)."""
    from cabletheory.tui.app import CableApp

    class Timed(CableApp):
        frames: ClassVar[list[tuple[float, float]]] = []

        def _display(self, screen, renderable):  # type: ignore[no-untyped-def]
            if renderable is not None:
                self.frames.append((time.perf_counter(), time.process_time()))
            super()._display(screen, renderable)

    return Timed(**options)


async def idle(app, pilot) -> None:  # type: ignore[no-untyped-def]
    """Let every worker finish (a worker replaced by a newer one ends cancelled)."""
    from textual.worker import WorkerCancelled

    await pilot.pause()
    for _ in range(3):
        try:
            await app.workers.wait_for_complete()
            break
        except WorkerCancelled:
            await pilot.pause()
    await pilot.pause()


async def timed_keystroke(app, pilot, view, field: str, text: str) -> tuple[float, float]:  # type: ignore[no-untyped-def]
    """Type ``text`` but its last character into the field ``#field`` and wait until its result is in;
    then time the last keystroke until the first frame that shows ``view``'s new report: (wall-clock
    seconds, CPU seconds of the process meanwhile, worker threads included)."""
    from textual.widgets import Input

    box = app.query_one(f"#{field}", Input)
    box.value = text[:-1]
    await idle(app, pilot)
    shown = view.report
    box.focus()
    await pilot.press("end")  # a focused field selects its text; typing would replace it
    await pilot.pause()
    began, cpu = time.perf_counter(), time.process_time()
    # the press runs beside the clock: Pilot.press returns only once every widget is idle, which is
    # later than the frame that shows the result
    pressing = asyncio.ensure_future(pilot.press(text[-1]))
    # poll without pilot.pause (which walks every widget and would slow the app)
    while view.report is shown or view.report is None:
        if time.perf_counter() - began > 60:
            raise SystemExit(f"no new result within 60 s after typing into {field}")
        await asyncio.sleep(0.001)
    ready = time.perf_counter()
    while not app.frames or app.frames[-1][0] < ready:  # the first frame that shows it
        await asyncio.sleep(0.001)
    frame = app.frames[-1]  # before the press is awaited: later frames (the features) are not timed
    await pressing
    return frame[0] - began, frame[1] - cpu
