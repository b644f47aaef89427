"""Driving the app headless in tests (textual's Pilot), in one place for every app test file."""

from __future__ import annotations

import asyncio
from collections.abc import Awaitable, Callable

from cabletheory.tui.app import CableApp

SIZE = (120, 36)


async def settle(app: CableApp, pilot, rounds: int = 1) -> None:
    """Let the workers finish and the screen catch up (``rounds`` times, for results that start
    further work when they arrive)."""
    for _ in range(rounds):
        await pilot.pause()
        await app.workers.wait_for_complete()
    await pilot.pause()


def drive(script: Callable[[CableApp, object], Awaitable[None]], *, size: tuple[int, int] = SIZE,
          settled: bool = True, **options) -> CableApp:
    """Run ``script(app, pilot)`` against a headless app of ``options`` and return the app afterwards;
    the script starts once the first results are in (``settled``) or after the first frame."""
    app = CableApp(**options)

    async def main() -> None:
        async with app.run_test(size=size) as pilot:
            if settled:
                await settle(app, pilot)
            else:
                await pilot.pause()
            await script(app, pilot)

    asyncio.run(main())
    return app
