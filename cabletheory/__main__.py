"""The ``cabletheory`` program: the command line, which can also open the terminal app.

This module sits above both front ends so that neither imports the other: it runs
:func:`cabletheory.cli.main` and hands it the function that opens the app (``cabletheory ui``),
which imports :mod:`cabletheory.tui` (and textual) only when that command runs.
"""

from __future__ import annotations

import sys
from collections.abc import Sequence

from .cli import main


def open_app(*, view: str, swc: str | None, simulation: str | None, **files: str) -> None:
    """Open the terminal app on ``view`` (textual is imported here, never at start-up); ``files``:
    ``recording``, ``morphology`` (the fitting view) and ``table`` (the survey view)."""
    from .tui import launch

    launch(view=view, swc=swc, simulation=simulation, **files)


def run(argv: Sequence[str] | None = None) -> int:
    """The command line with the terminal app available; returns the exit status."""
    return main(argv, open_app=open_app)


def entry() -> None:
    """Console-script entry point."""
    sys.exit(run())


if __name__ == "__main__":
    entry()
