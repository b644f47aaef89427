r"""Reference tables: an exact solution on a grid, with its metadata, as CSV, JSON or NPZ.

Every exact answer assumes a passive, linear membrane with uniform properties; so does every
verdict. A simulator with active conductances is outside what this package can check.
"""

from __future__ import annotations

import csv
import io
import json
import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .. import __version__
from ..errors import InputError
from .comparison import ExactCase

__all__ = [
    "STIMULUS_KEYS",
    "ReferenceTable",
    "csv_header",
    "json_number",
    "reference_csv",
    "reference_json",
    "reference_npz",
    "reference_table",
    "split_stimulus",
]

Array = NDArray[np.float64]


# ======================================================================================
# reference tables
# ======================================================================================
@dataclass(frozen=True, slots=True)
class ReferenceTable:
    """An exact solution on a grid, with what a reader needs to trust it.

    ``voltage`` and ``bound`` are ``[time, site]`` for a grid (``layout="wide"``) or one
    value per (time, position) pair (``layout="long"``).
    """

    times: Array  # s
    positions: Array  # m
    voltage: Array  # V from rest
    bound: Array  # V, error bound of each value
    layout: str
    description: str
    method: str
    parameters: Mapping[str, tuple[float, str]]
    version: str = __version__
    caveat: str = "passive, linear, uniform membrane"
    stimulus_shape: str = "step"

    @property
    def largest_bound(self) -> float:
        return float(np.max(self.bound)) if self.bound.size else 0.0


def reference_table(exact: ExactCase, times: ArrayLike, positions: ArrayLike, *, layout: str = "wide"
                    ) -> ReferenceTable:
    """Evaluate ``exact`` on a time × site grid (``"wide"``) or at paired points (``"long"``)."""
    t = np.asarray(times, dtype=float).ravel()
    x = np.asarray(positions, dtype=float).ravel()
    if t.size == 0 or x.size == 0:
        raise InputError("a reference table needs at least one time and one position")
    if np.any(t < 0):
        raise InputError("reference times must be >= 0 (time since the stimulus onset)")
    if np.any(x < exact.start) or np.any(x > exact.length * (1 + 1e-12)):
        raise InputError(f"reference positions must lie between 0 and the cable's length {exact.length!r} m")
    if layout == "wide":
        tt, xx = np.meshgrid(t, x, indexing="ij")
        v, b = exact.evaluate(tt.ravel(), xx.ravel())
        v, b = np.asarray(v).reshape(tt.shape), np.asarray(b).reshape(tt.shape)
    elif layout == "long":
        if t.shape != x.shape:
            raise InputError("a long reference table needs one position per time")
        v, b = exact.evaluate(t, x)
    else:
        raise InputError(f"layout {layout!r}: expected 'wide' or 'long'")
    return ReferenceTable(times=t, positions=x, voltage=np.asarray(v, dtype=float), bound=np.asarray(b, dtype=float),
                          layout=layout, description=exact.description, method=exact.method,
                          parameters=dict(exact.parameters), stimulus_shape=exact.stimulus_shape)


def csv_header(title: str, description: str, method: str, largest_bound: float, caveat: str, stimulus_shape: str,
               parameters: Mapping[str, tuple[float, str]]) -> str:
    """The ``#`` comment lines that open every CSV the tool writes (``reference`` and ``charge --csv``):
    the title, tool version, case, method, largest error bound (V), the assumptions, then every
    parameter as ``name: SI value SI unit``."""
    lines = [
        title,
        f"tool: cabletheory {__version__}",
        f"case: {description}",
        f"method: {method}",
        f"largest error bound: {largest_bound:.3e} V",
        f"assumptions: {caveat}",
        f"stimulus_shape: {stimulus_shape}",
    ]
    lines += [f"{name}: {value!r} {unit}" for name, (value, unit) in parameters.items()]
    return "".join(f"# {line}\n" for line in lines)


def _fmt(x: float) -> str:
    return repr(float(x))


def _fmt_grid(x: float) -> str:
    """A time or position after unit conversion: 15 significant digits drop the rounding noise of
    the conversion (199.99999999999997 -> 200.0) and keep far more than any grid needs."""
    return repr(float(f"{float(x):.15g}"))


def reference_csv(table: ReferenceTable) -> str:
    """CSV text: ``#`` metadata lines, then ``time (ms),V at <x> um (mV),...`` (wide) or
    ``time (ms),position (um),voltage (mV),bound (mV)`` (long). Full double precision."""
    out = io.StringIO()
    out.write(csv_header("cabletheory exact reference table", table.description, table.method, table.largest_bound,
                         table.caveat, table.stimulus_shape, table.parameters))
    writer = csv.writer(out, lineterminator="\n")
    if table.layout == "wide":
        writer.writerow(["time (ms)"] + [f"V at {_fmt_grid(x * 1e6)} um (mV)" for x in table.positions])
        for i, t in enumerate(table.times):
            writer.writerow([_fmt_grid(t * 1e3)] + [_fmt(v * 1e3) for v in table.voltage[i]])
    else:
        writer.writerow(["time (ms)", "position (um)", "voltage (mV)", "bound (mV)"])
        for t, x, v, b in zip(table.times, table.positions, table.voltage, table.bound, strict=True):
            writer.writerow([_fmt_grid(t * 1e3), _fmt_grid(x * 1e6), _fmt(v * 1e3), _fmt(b * 1e3)])
    return out.getvalue()


def json_number(value: float) -> float | str:
    """A parameter value for JSON: the number, or "inf" / "-inf" / "nan" (JSON has no literal for them)."""
    v = float(value)
    if math.isfinite(v):
        return v
    return "nan" if math.isnan(v) else ("inf" if v > 0 else "-inf")


STIMULUS_KEYS = {"stimulus_amplitude": "amplitude", "stimulus_position": "position", "pulse_duration": "duration",
                 "time_to_peak": "time_to_peak", "stimulus_onset": "onset"}
"""Parameters of an :class:`ExactCase` that describe the stimulus, and their key in a JSON ``stimulus``
object (the keys ``charge --json`` uses too)."""


def split_stimulus(parameters: Mapping[str, tuple[float, str]], shape: str
                   ) -> tuple[dict[str, Any], dict[str, Any]]:
    """JSON ``parameters`` (the cable and model) and ``stimulus`` (``shape``, ``amplitude``,
    ``position`` and, where they apply, ``duration``, ``time_to_peak``, ``onset``) of a case."""
    cable: dict[str, Any] = {}
    stimulus: dict[str, Any] = {"shape": shape}
    for name, (value, unit) in parameters.items():
        entry = {"value": json_number(value), "unit": unit}
        if name in STIMULUS_KEYS:
            stimulus[STIMULUS_KEYS[name]] = entry
        else:
            cable[name] = entry
    return cable, stimulus


def reference_json(table: ReferenceTable) -> str:
    """JSON text; every quantity is ``{"value": SI, "unit": SI unit}``."""
    parameters, stimulus = split_stimulus(table.parameters, table.stimulus_shape)
    obj: dict[str, Any] = {
        "tool": f"cabletheory {table.version}",
        "case": table.description,
        "method": table.method,
        "assumptions": table.caveat,
        "layout": table.layout,
        "parameters": parameters,
        "stimulus": stimulus,
        "times": {"value": table.times.tolist(), "unit": "s"},
        "positions": {"value": table.positions.tolist(), "unit": "m"},
        "voltage": {"value": table.voltage.tolist(), "unit": "V"},
        "error_bound": {"value": table.bound.tolist(), "unit": "V"},
        "largest_error_bound": {"value": table.largest_bound, "unit": "V"},
    }
    return json.dumps(obj, indent=1, allow_nan=False)


def reference_npz(table: ReferenceTable) -> bytes:
    """NPZ bytes: arrays ``times`` (s), ``positions`` (m), ``voltage`` (V), ``error_bound`` (V)
    and ``metadata`` (one JSON string with the parameters, method and version)."""
    meta = json.loads(reference_json(table))
    for key in ("times", "positions", "voltage", "error_bound"):
        meta.pop(key)
    buffer = io.BytesIO()
    np.savez_compressed(buffer, times=table.times, positions=table.positions, voltage=table.voltage,
                        error_bound=table.bound, metadata=np.array(json.dumps(meta)))
    return buffer.getvalue()
