"""Pieces shared by several commands: cable options, JSON quantities, tables, safe writing."""

from __future__ import annotations

import argparse
import json
import math
import os
import tempfile
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

from ..cable import Cylinder
from ..errors import InputError
from ..units import format_quantity, parse_quantity, si_unit

# Cm ≈ 1 µF/cm² is common practice (Gentet, Stuart & Clements 2000 measured 0.9); Rm and Ri vary
# tenfold between cells, so they have no default.
DEFAULT_CM = "1 µF/cm²"


def add_membrane_options(group: argparse._ActionsContainer) -> None:
    """--Rm --Ri (required) and --Cm (default 1 µF/cm²): the membrane and cytoplasm, uniform."""
    group.add_argument("--Rm", required=True, metavar="R",
                       help="specific membrane resistance, uniform, e.g. '20 kΩ·cm²' or 20000")
    group.add_argument("--Ri", required=True, metavar="R", help="axial resistivity, e.g. '150 Ω·cm' or 150")
    group.add_argument("--Cm", default=DEFAULT_CM, metavar="C",
                       help=f"specific membrane capacitance (default {DEFAULT_CM})")


def read_membrane(args: argparse.Namespace) -> tuple[float, float, float]:
    """(Rm in Ω·m², Ri in Ω·m, Cm in F/m²) from the membrane options, each checked."""
    return (parse_quantity(args.Rm, "membrane_resistivity", "--Rm"),
            parse_quantity(args.Ri, "axial_resistivity", "--Ri"),
            parse_quantity(args.Cm, "membrane_capacitance", "--Cm"))


def add_cable_options(parser: argparse.ArgumentParser, *, length_required: bool = True) -> None:
    """--Rm --Ri --Cm --diameter --length --end, shared by every command about one cylinder."""
    group = parser.add_argument_group("cable (bare numbers: Ω·cm², Ω·cm, µF/cm², µm, nS)")
    add_membrane_options(group)
    group.add_argument("--diameter", required=True, metavar="D", help="cylinder diameter, e.g. 2um")
    group.add_argument("--length", required=length_required, metavar="LEN",
                       help="cylinder length, e.g. 500um; 'inf' for a semi-infinite cable")
    group.add_argument("--end", default="sealed", metavar="END",
                       help="far end: sealed, killed, or a conductance to rest such as 0.5nS (default sealed)")


def whole_number(low: int, high: int):
    """An argparse ``type`` accepting whole numbers from ``low`` to ``high`` with a one-line message
    (``choices=range(...)`` would list every allowed value)."""

    def convert(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
        if not low <= value <= high:
            raise argparse.ArgumentTypeError(f"{value} is not between {low} and {high}")
        return value

    return convert


def parse_end(text: str) -> float:
    """The ``--end`` option: 'sealed' -> 0, 'killed' -> inf, else a conductance in S (bare numbers in nS);
    the one far-end reader of :func:`cabletheory.inputs.read_end`."""
    from ..inputs import read_end

    return read_end(text, "--end")


def read_cylinder(args: argparse.Namespace) -> Cylinder:
    """Build the :class:`Cylinder` from parsed cable options (every value checked, in SI)."""
    membrane_resistivity, axial_resistivity, membrane_capacitance = read_membrane(args)
    return Cylinder(
        membrane_resistivity=membrane_resistivity,
        axial_resistivity=axial_resistivity,
        membrane_capacitance=membrane_capacitance,
        diameter=parse_quantity(args.diameter, "length", "--diameter"),
        length=parse_quantity(args.length, "length", "--length", allow_inf=True),
        end_conductance=parse_end(args.end),
    )


def end_description(cylinder: Cylinder) -> str:
    g = cylinder.end_conductance
    if g == 0:
        return "sealed"
    if math.isinf(g):
        return "killed (clamped to rest)"
    return f"leaky, {format_quantity(g, 'conductance')} (B = {cylinder.end_conductance_ratio:.4g})"


def echo_cylinder(cylinder: Cylinder) -> list[tuple[str, str]]:
    """The inputs as (label, value with unit) rows, so that nothing is silent."""
    return [
        ("Rm (specific membrane resistance)", format_quantity(cylinder.membrane_resistivity,
                                                                "membrane_resistivity")),
        ("Ri (axial resistivity)", format_quantity(cylinder.axial_resistivity, "axial_resistivity")),
        ("Cm (specific membrane capacitance)", format_quantity(cylinder.membrane_capacitance,
                                                                "membrane_capacitance")),
        ("diameter", format_quantity(cylinder.diameter, "length")),
        ("length", "semi-infinite" if math.isinf(cylinder.length) else format_quantity(cylinder.length,
                                                                                        "length")),
        ("far end", "none (semi-infinite)" if math.isinf(cylinder.length) else end_description(cylinder)),
    ]


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
    mode = "wb" if isinstance(data, bytes) else "w"
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", dir=directory)
    try:
        with os.fdopen(fd, mode, **({} if mode == "wb" else {"encoding": "utf-8", "newline": ""})) as fh:
            fh.write(data)
        os.replace(tmp, target)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return target


def add_truncation_option(group: argparse._ActionsContainer, default: str) -> None:
    """``--truncation``: the error allowed in the exact series, absolute or relative (one meaning in
    ``charge``, ``reference`` and ``compare``)."""
    group.add_argument("--truncation", default=default, metavar="ERR",
                       help="truncation error allowed in every exact value: a voltage such as '1e-9 mV' "
                            "(absolute), or a plain number or percentage such as 1e-10, relative to the "
                            "case's reference voltage (the final voltage at the stimulus site of a step of "
                            f"the same amplitude; the clamp step for a clamp) (default {default})")


def _truncation(text: str) -> tuple[float, bool]:
    """(value, relative): a plain number or a percentage is relative, anything else a voltage."""
    raw = text.strip()
    if raw.endswith("%"):
        return parse_quantity(raw[:-1], "dimensionless", "--truncation") / 100.0, True
    try:
        return float(raw), True
    except ValueError:
        return parse_quantity(raw, "voltage", "--truncation"), False


def read_truncation(text: str, case: Any) -> float:
    """The ``--truncation`` text as a fraction of the case's reference voltage, in (0, 1)."""
    value, relative = _truncation(text)
    if relative:
        if not (math.isfinite(value) and 0 < value < 1):
            raise InputError(f"--truncation: {text.strip()!r} must lie between 0 and 1 (or be a voltage such "
                             "as '1e-9 mV')")
        return value
    reference = case.reference_voltage
    if not reference > 0:
        raise InputError("--truncation: the case's reference voltage is 0; give a relative truncation such as 1e-10")
    return min(value / reference, 1e-2)


def read_truncation_voltage(text: str, case: Any) -> float:
    """The ``--truncation`` text as an absolute voltage bound (V)."""
    value, relative = _truncation(text)
    if not relative:
        return value
    return read_truncation(text, case) * case.reference_voltage
