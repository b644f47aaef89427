"""The charging view (being built)."""

from __future__ import annotations

from textual.containers import Vertical
from textual.widgets import Static


class ChargingView(Vertical):
    report = None

    def __init__(self, *, id: str, **kwargs) -> None:
        super().__init__(id=id)

    def compose(self):
        yield Static("coming soon")
