"""Output helpers below both front ends: JSON quantities, aligned tables, atomic writing, and the
words that describe a cylinder.

The command line (:mod:`cabletheory.cli`) and the terminal app (:mod:`cabletheory.tui`) both use
these, so that a result reads the same in either and neither front end imports the other. This
module sits at the unit boundary: it may use :mod:`cabletheory.units` (and so pint), the core never
imports it.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

from .cable import Cylinder
from .case import describe_end
from .errors import InputError
from .units import format_quantity, si_unit

__all__ = ["CYLINDER_LABELS", "dump_json", "echo_cylinder", "end_description", "end_label", "far_end_text",
           "input_resistance_label", "quantity", "table", "write_atomically"]

CYLINDER_LABELS: dict[str, str] = {
    "membrane_resistivity": "Rm (specific membrane resistance)",
    "axial_resistivity": "Ri (axial resistivity)",
    "membrane_capacitance": "Cm (specific membrane capacitance)",
    "diameter": "diameter",
    "length": "length",
    "end_conductance": "far end",
    "frequency": "frequency",
    "length_constant": "length constant λ",
    "membrane_time_constant": "membrane time constant τm",
    "electrotonic_length": "electrotonic length L = ℓ/λ",
    "semi_infinite_input_resistance": "semi-infinite input resistance R∞",
    "semi_infinite_input_conductance": "semi-infinite input conductance G∞",
    "end_conductance_ratio": "end conductance ratio B = G_end/G∞",
    "input_conductance": "input conductance G_in",
    "far_end_voltage_ratio": "far-end voltage ratio V(ℓ)/V(0)",
    "input_impedance_magnitude": "input impedance |Z_in|",
    "input_impedance_phase": "input impedance phase",
    "length_constant_at_frequency": "length constant at {frequency}",
}
"""The label of each result of one cylinder (keys of :class:`cabletheory.cable.CableSummary` and of
the ``cable`` command's JSON): the command line and the app show the same words for the same number."""


def end_description(cylinder: Cylinder) -> str:
    """The far end of a finite cylinder in words: sealed, killed, or leaky with its conductance and B."""
    g = cylinder.end_conductance
    if g == 0 or math.isinf(g):
        return describe_end(g)  # the case model's words for a sealed or killed end
    return f"leaky, {format_quantity(g, 'conductance')} (B = {cylinder.end_conductance_ratio:.4g})"


def echo_cylinder(cylinder: Cylinder) -> list[tuple[str, str]]:
    """The inputs as (label, value with unit) rows, so that nothing is silent."""
    labels = CYLINDER_LABELS
    return [
        (labels["membrane_resistivity"], format_quantity(cylinder.membrane_resistivity, "membrane_resistivity")),
        (labels["axial_resistivity"], format_quantity(cylinder.axial_resistivity, "axial_resistivity")),
        (labels["membrane_capacitance"], format_quantity(cylinder.membrane_capacitance, "membrane_capacitance")),
        (labels["diameter"], format_quantity(cylinder.diameter, "length")),
        (labels["length"], "semi-infinite" if math.isinf(cylinder.length) else format_quantity(cylinder.length,
                                                                                                "length")),
        (labels["end_conductance"], far_end_text(cylinder)),
    ]


def end_label(cylinder: Cylinder) -> str:
    """The far end in one or two words, for labels: sealed end, killed end, leaky end, semi-infinite."""
    if math.isinf(cylinder.length):
        return "semi-infinite"
    if cylinder.end_conductance == 0:
        return "sealed end"
    return "killed end" if math.isinf(cylinder.end_conductance) else "leaky end"


def input_resistance_label(cylinder: Cylinder) -> str:
    """The input resistance's label, which names the far end it holds for."""
    return f"input resistance R_in ({end_label(cylinder)})"


def far_end_text(cylinder: Cylinder) -> str:
    """The far end in words, also for a semi-infinite cylinder (which has none)."""
    return "none (semi-infinite)" if math.isinf(cylinder.length) else end_description(cylinder)


def quantity(value: float | Sequence[Any] | Any, kind: str) -> dict[str, Any]:
    """A JSON quantity: ``{"value": <SI number or nested list>, "unit": "<SI unit>"}``.

    Non-finite numbers become the strings "inf", "-inf" or "nan" (JSON has no literal for them).
    """
    return {"value": _jsonable(value), "unit": si_unit(kind)}


def _jsonable(value: Any) -> Any:
    if hasattr(value, "tolist"):
        value = value.tolist()
    if isinstance(value, list | tuple):
        return [_jsonable(v) for v in value]
    if isinstance(value, float) and not math.isfinite(value):
        return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")
    return value


def dump_json(obj: Any) -> str:
    """JSON text of ``obj``: indented, UTF-8 kept, and no NaN or infinity literals (an error instead)."""
    return json.dumps(obj, indent=2, ensure_ascii=False, allow_nan=False)


def table(rows: Iterable[tuple[str, str]], title: str | None = None) -> str:
    """Two aligned columns: label and value-with-unit."""
    rows = list(rows)
    width = max((len(label) for label, _ in rows), default=0)
    lines = [title, "-" * len(title)] if title else []
    lines += [f"  {label.ljust(width)}  {value}" for label, value in rows]
    return "\n".join(lines)


def write_atomically(path: str | os.PathLike[str], data: str | bytes, *,
                     protected: Iterable[str | os.PathLike[str]] = ()) -> Path:
    """Write ``data`` to ``path`` via a temporary file and rename; refuse to overwrite inputs.

    ``protected`` lists input files of the same run; writing over one of them is an error.
    """
    target = Path(path)
    for other in protected:
        if Path(other).exists() and target.exists() and target.resolve() == Path(other).resolve():
            raise InputError(f"output {str(target)!r} is also an input file; choose another name")
    if target.is_dir():
        raise InputError(f"output {str(target)!r} is a directory")
    directory = target.parent if str(target.parent) else Path(".")
    if not directory.is_dir():
        raise InputError(f"output {str(target)!r}: folder {str(directory)!r} does not exist")
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", dir=directory)
    try:
        if isinstance(data, bytes):
            with os.fdopen(fd, "wb") as binary:
                binary.write(data)
        else:
            with os.fdopen(fd, "w", encoding="utf-8", newline="") as text:
                text.write(data)
        os.replace(tmp, target)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return target
