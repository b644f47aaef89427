"""The terminal app behind ``cabletheory ui`` (textual).

Only :mod:`cabletheory.tui.app` and the ``*_view`` modules import textual; the helpers in
:mod:`~cabletheory.tui.report`, :mod:`~cabletheory.tui.forms`, :mod:`~cabletheory.tui.plot`
and :mod:`~cabletheory.tui.export` are plain functions on the core's result objects, tested
without an App. The app only calls the core and shows what these helpers return.
"""
