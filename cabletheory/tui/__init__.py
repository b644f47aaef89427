"""The terminal app behind ``cabletheory ui`` (textual).

Only :mod:`cabletheory.tui.app` and the ``*_view`` modules import textual; the helpers in
:mod:`~cabletheory.tui.report`, :mod:`~cabletheory.tui.forms`, :mod:`~cabletheory.tui.plot`
and :mod:`~cabletheory.tui.export` are plain functions on the core's result objects, tested
without an App. The app only calls the core and shows what these helpers return.

The app never imports the command line; :func:`launch` is how the ``cabletheory`` program
(:mod:`cabletheory.__main__`) opens it.
"""

from __future__ import annotations


def launch(*, view: str, swc: str | None = None, simulation: str | None = None, **files: str) -> None:
    """Run the app on ``view`` until the user quits (textual is imported here, not at start-up);
    ``files``: ``recording`` and ``morphology`` for the fitting view, ``table`` for the survey view."""
    from .app import CableApp

    CableApp(view=view, swc=swc, simulation=simulation, **files).run()
