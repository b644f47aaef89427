"""The names of a case's fields and which of them each cell and stimulus uses: plain data.

Free of numpy and the numerical core, so that the terminal app can lay out its first screen
from it before anything heavy is imported; :mod:`cabletheory.case` holds the rules themselves.
"""

from __future__ import annotations

import math

__all__ = ["CELL_KINDS", "END_WORDS", "FIELDS", "STIMULUS_SHAPES", "WHY_UNUSED", "fields_for"]

CELL_KINDS: dict[str, str] = {
    "cylinder": "cylinder (finite, or semi-infinite with length inf)",
    "ball-and-stick": "spherical soma at the origin of a finite cylinder",
    "infinite": "infinite cable (positions may be negative)",
}
STIMULUS_SHAPES: dict[str, str] = {
    "step": "current step switched on at t = 0 and held",
    "pulse": "rectangular current pulse from t = 0 lasting the pulse duration",
    "alpha": "alpha-function current I(t/tp)e^(1-t/tp) peaking at the time to peak",
    "clamp": "voltage-clamp step at t = 0 (at the origin; anywhere on an infinite cable)",
}
END_WORDS: dict[str, float] = {"sealed": 0.0, "killed": math.inf}
"""The far-end words of a cylinder and of a tree's tips: no current leaves a sealed end; a killed
end is held at rest. Any other end is leaky: a conductance to rest (S)."""

# canonical field -> (kind of quantity, what it is); the unit boundary reads text into these
FIELDS: dict[str, tuple[str, str]] = {
    "cell": ("word", "cell kind"),
    "membrane_resistivity": ("membrane_resistivity", "specific membrane resistance Rm"),
    "axial_resistivity": ("axial_resistivity", "axial resistivity Ri"),
    "membrane_capacitance": ("membrane_capacitance", "specific membrane capacitance Cm"),
    "diameter": ("length", "cylinder diameter"),
    "length": ("length", "cylinder length"),
    "end": ("end", "far end"),
    "soma_diameter": ("length", "soma diameter"),
    "shape": ("word", "stimulus shape"),
    "current": ("current", "stimulus current (peak of an alpha current)"),
    "voltage": ("voltage", "voltage-clamp step"),
    "duration": ("time", "pulse duration"),
    "time_to_peak": ("time", "time to peak of an alpha current"),
    "stimulus_at": ("length", "stimulus position"),
    "positions": ("length", "recording positions"),
}


def fields_for(cell: str, shape: str) -> set[str]:
    """The fields a case of this cell kind and stimulus shape reads (both known; see
    :func:`cabletheory.case.fields_used` for the checked form)."""
    used = {"cell", "membrane_resistivity", "axial_resistivity", "membrane_capacitance", "diameter", "shape",
            "positions"}
    if cell != "infinite":
        used |= {"length", "end"}
    if cell == "ball-and-stick":
        used.add("soma_diameter")
    used.add("voltage" if shape == "clamp" else "current")
    if shape == "pulse":
        used.add("duration")
    if shape == "alpha":
        used.add("time_to_peak")
    if shape != "clamp" or cell == "infinite":
        used.add("stimulus_at")
    return used


WHY_UNUSED = {
    "length": "an infinite cable has no length",
    "end": "an infinite cable has no far end",
    "soma_diameter": "only a ball and stick has a soma",
    "voltage": "a voltage is the amplitude of a clamp; a current stimulus takes a current",
    "current": "a voltage clamp injects no set current; give the clamp voltage only",
    "duration": "only a pulse has a duration",
    "time_to_peak": "only an alpha current has a time to peak",
    "stimulus_at": "a voltage clamp on a cylinder or ball and stick holds the origin; only an infinite "
                   "cable takes it elsewhere",
}
