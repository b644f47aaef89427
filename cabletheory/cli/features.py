"""Response features as the command line prints them: a table and JSON objects, for a cable or a tree.

The figures come from :func:`cabletheory.waveform.response_features`, for every cell kind alike;
on a cable a position is a length, on a tree a point label.
"""

from __future__ import annotations

import math

from ..output import quantity
from ..units import format_quantity
from ..waveform import ResponseFeatures

FEATURE_POSITIONS = 20  # response features are read off the exact solution at up to this many positions


def features_json(features: tuple[ResponseFeatures, ...]) -> list[dict]:
    """One JSON object per position (a length on a cable, the point label on a tree)."""
    return [{
        "position": f.position if isinstance(f.position, str) else quantity(f.position, "length"),
        "peak": quantity(f.peak, "voltage"),
        "time_to_peak": quantity(f.time_to_peak, "time"),
        "rise_time_10_90": quantity(f.rise_time, "time"),
        "half_width": quantity(f.half_width, "time"),
        "attenuation": quantity(f.attenuation, "dimensionless"),
        "held": f.held,
    } for f in features]


def features_table(features: tuple[ResponseFeatures, ...], digits: int) -> str:
    """The features as a table, one row per position or tree point (held stimuli: final value, no peak time)."""
    held = features[0].held

    def cell(value: float, kind: str) -> str:
        return "—" if math.isnan(value) else format_quantity(value, kind, digits)

    header = ["at", "final V" if held else "peak V", "rise 10–90 %"]
    if not held:
        header[2:2] = ["time to peak"]
        header.append("half-width")
    header.append("attenuation")
    rows = []
    for f in features:
        at = (f.position if isinstance(f.position, str)
              else format_quantity(f.position, "length", digits) if f.position else "0")
        row = [at, cell(f.peak, "voltage")]
        if not held:
            row.append(cell(f.time_to_peak, "time"))
        row.append(cell(f.rise_time, "time"))
        if not held:
            row.append(cell(f.half_width, "time"))
        row.append(cell(f.attenuation, "dimensionless"))
        rows.append(row)
    widths = [max(len(h), *(len(row[j]) for row in rows)) for j, h in enumerate(header)]
    title = ("Response features (read off the exact solution, not the output grid; attenuation: V / V at the "
             "stimulus site)")
    out = [title, "-" * len(title), "  " + "  ".join(h.rjust(w) for h, w in zip(header, widths, strict=True))]
    out += ["  " + "  ".join(c.rjust(w) for c, w in zip(row, widths, strict=True)) for row in rows]
    if held:
        out.append("  a held stimulus charges monotonically to its final value: no peak time or half-width")
    return "\n".join(out)
