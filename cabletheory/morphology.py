"""Reading neuron morphologies: SWC point files and a small hand-written section list.

Two inputs, both validated line by line (every error is a
:class:`~cabletheory.errors.FileFormatError` naming the file and the line):

**SWC** (the open community format). One point per line, seven fields
``id type x y z radius parent``; ``#`` starts a comment; ``parent = -1`` marks the root.
Coordinates and radii are in µm. Types: 1 soma, 2 axon, 3 basal dendrite, 4 apical
dendrite; other types are kept as they are. A child may come before its parent (the points
are reordered); missing parents, cycles, several roots, duplicate ids, non-positive radii,
NaN, non-numeric fields, empty files and binary data are errors.

**Section list** (this package's own format, for trees that were never reconstructed;
usual extension ``.tree``). One unbranched section per line::

    # comment
    soma 20 um                          # optional: a spherical soma of this diameter
    # name    parent   length   diameter   [end diameter]
    trunk     root     300 um   4 um
    left      trunk    300      2.52       # bare numbers are µm
    left.1    left     200um    1.59  1.2  # a taper (frustum) from 1.59 µm to 1.2 µm

* ``name``: letters, digits and ``_ - . : /``; unique; ``root`` is reserved.
* ``parent``: the name of another section (anywhere in the file) or ``root``, the point
  where input is applied (the soma when there is one).
* lengths and diameters: a number, optionally followed (with or without a space) by one of
  the units ``nm um µm μm mm cm m``; bare numbers are µm.

Readers return plain SI arrays (m); they never import pint. Turning points into cable
sections is :mod:`cabletheory.tree`'s job.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .errors import FileFormatError
from .textfile import read_input_bytes

__all__ = [
    "SWC_TYPES",
    "SectionList",
    "SwcPoints",
    "format_section_list",
    "parse_section_list",
    "parse_swc",
    "read_morphology",
    "read_section_list",
    "read_swc",
]

SWC_TYPES: dict[int, str] = {0: "undefined", 1: "soma", 2: "axon", 3: "basal dendrite",
                             4: "apical dendrite", 5: "custom", 6: "neurite", 7: "glia"}

MICROMETRE = 1e-6
_LENGTH_UNITS = {"nm": 1e-9, "um": 1e-6, "µm": 1e-6, "μm": 1e-6, "mm": 1e-3, "cm": 1e-2, "m": 1.0}
_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")
_NAME = re.compile(r"^[A-Za-z0-9_.:/-]+$")
_SWC_FIELDS = ("id", "type", "x", "y", "z", "radius", "parent")
ROOT = "root"


@dataclass(frozen=True, slots=True)
class SwcPoints:
    """The points of an SWC file, reordered so that every parent precedes its children.

    Attributes
    ----------
    source : file name (for messages)
    ids, types : SWC id and type of each point
    positions : (n, 3) coordinates, m
    radii : m
    parents : index (into these arrays) of each point's parent; -1 for the root (index 0)
    lines : line number of each point in the file
    reordered : how many points came before their parent in the file (allowed; reordered)
    """

    source: str
    ids: NDArray[np.int64]
    types: NDArray[np.int64]
    positions: NDArray[np.float64]
    radii: NDArray[np.float64]
    parents: NDArray[np.int64]
    lines: NDArray[np.int64]
    reordered: int = 0  # points that came before their parent in the file

    def __len__(self) -> int:
        return int(self.ids.size)


@dataclass(frozen=True, slots=True)
class SectionList:
    """Sections from the hand-written format, reordered so that parents come first.

    ``parents[i]`` is the index of section i's parent or -1 for the root; each section is a
    cylinder (``end_diameters[i] == diameters[i]``) or a frustum. SI units (m).
    """

    source: str
    names: tuple[str, ...]
    parents: NDArray[np.int64]
    lengths: NDArray[np.float64]
    diameters: NDArray[np.float64]
    end_diameters: NDArray[np.float64]
    lines: NDArray[np.int64]
    soma_diameter: float | None = None

    def __len__(self) -> int:
        return len(self.names)


# --------------------------------------------------------------------------------------
# shared helpers
# --------------------------------------------------------------------------------------
def _read_text(path: str | Path) -> tuple[str, str]:
    """The file's text: a regular file within the input size limit (:mod:`cabletheory.textfile`)."""
    p = Path(path)
    return _decode(read_input_bytes(p, "morphology file"), str(p)), str(p)


# characters that can be binary junk inside a line (line separators such as \n, \v, \f, \x1c-\x1e split lines)
_SUSPECT = re.compile("[\x00-\x08\x0e-\x1b\x1f\ufffd]")


def _decode(data: bytes, source: str) -> str:
    """Decode text (a leading byte-order mark is dropped); binary junk (NUL or other control bytes
    in a data line) is an error."""
    text = data.decode("utf-8-sig", errors="replace")
    if _SUSPECT.search(text) is None:  # the usual case, without a Python loop over every character
        return text
    for number, line in enumerate(text.splitlines(), start=1):
        content = line.split("#", 1)[0]
        bad = next((ch for ch in content if ch == "\ufffd" or (ord(ch) < 32 and ch not in "\t\r\f\v")), None)
        if bad is not None:
            raise FileFormatError(f"{source}:{number}: binary or undecodable data "
                                  f"({'invalid UTF-8' if bad == chr(0xFFFD) else f'byte {ord(bad):#04x}'}); "
                                  "expected a text file")
    return text


def _topological_order(parents: list[int], lines: list[int], labels: list[str], source: str,
                       what: str) -> list[int]:
    """Order indices so that parents come first; ``parents[i] == -1`` marks a root.

    Raises for several roots, no root and cycles (naming the lines involved).
    """
    n = len(parents)
    roots = [i for i in range(n) if parents[i] == -1]
    if not roots:
        raise FileFormatError(f"{source}: no root {what} (every {what} has a parent), so the tree has a "
                              f"cycle; first {what} at line {lines[0]}")
    if len(roots) > 1:
        shown = ", ".join(f"{labels[i]} (line {lines[i]})" for i in roots[:5])
        raise FileFormatError(f"{source}:{lines[roots[1]]}: several roots: {shown}"
                              f"{' ...' if len(roots) > 5 else ''}; expected exactly one {what} "
                              "without a parent")
    children: list[list[int]] = [[] for _ in range(n)]
    for i, p in enumerate(parents):
        if p >= 0:
            children[p].append(i)
    order = [roots[0]]
    k = 0
    while k < len(order):  # breadth-first, iterative (deep trees would overflow recursion)
        order.extend(children[order[k]])
        k += 1
    if len(order) < n:
        seen = bytearray(n)
        for i in order:
            seen[i] = 1
        start = next(i for i in range(n) if not seen[i])
        # walk up from an unreached item until something repeats: that is the cycle
        path: dict[int, int] = {}
        i = start
        while i not in path:
            path[i] = len(path)
            i = parents[i]
        cycle = list(path)[path[i]:]
        shown = " -> ".join(labels[j] for j in cycle[:8])
        raise FileFormatError(f"{source}:{lines[min(cycle, key=lambda j: lines[j])]}: {what}s form a cycle "
                              f"({shown}{' ...' if len(cycle) > 8 else ''}); a tree needs each {what} to "
                              "lead back to the root")
    return order


# --------------------------------------------------------------------------------------
# SWC
# --------------------------------------------------------------------------------------
def read_swc(path: str | Path) -> SwcPoints:
    """Read and validate an SWC file (see the module docstring)."""
    text, source = _read_text(path)
    return parse_swc(text, source)


def _swc_integer(token: str, field: str, source: str, number: int) -> int:
    try:
        value = float(token)
    except ValueError:
        raise FileFormatError(f"{source}:{number}: field '{field}' is {token!r}; expected an integer") from None
    if not math.isfinite(value) or value != int(value):
        raise FileFormatError(f"{source}:{number}: field '{field}' is {token!r}; expected an integer")
    return int(value)


def parse_swc(text: str, source: str = "<swc>") -> SwcPoints:
    """Parse SWC text; ``source`` names the file in error messages.

    Well-formed files take a vectorised path; anything it cannot accept is parsed again line
    by line, which finds the first problem and names its line.
    """
    fast = _parse_swc_fast(text)
    if fast is not None:
        ids, types, coords, parent_ids, lines = fast
        index = {point_id: i for i, point_id in enumerate(ids.tolist())}
        parents = [index[p] if p >= 0 else -1 for p in parent_ids.tolist()]
        return _ordered_points(source, ids.tolist(), types.tolist(), coords, parents, lines.tolist())
    return _parse_swc_lines(text, source)


def _parse_swc_fast(text: str) -> tuple[NDArray, NDArray, NDArray, NDArray, NDArray] | None:
    """All points as arrays, or None if any line is not plainly valid (then the slow path reports)."""
    rows: list[str] = []
    numbers: list[int] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        content = raw.split("#", 1)[0] if "#" in raw else raw
        if content.strip():
            rows.append(content)
            numbers.append(number)
    if not rows:
        return None
    tokens: list[str] = []
    for row in rows:
        fields = row.split()
        if len(fields) != 7:
            return None
        tokens += fields
    try:
        table = np.array(tokens, dtype=float).reshape(-1, 7)
    except ValueError:
        return None
    if not np.all(np.isfinite(table)):
        return None
    integral = table[:, [0, 1, 6]]
    if np.any(integral != np.round(integral)):
        return None
    ids = table[:, 0].astype(np.int64)
    types = table[:, 1].astype(np.int64)
    parents = table[:, 6].astype(np.int64)
    radii = table[:, 5]
    if (np.any(ids < 0) or np.any(parents < -1) or np.any(parents == ids) or np.any(radii < 0)
            or np.any((radii <= 0) & (types != 1)) or np.count_nonzero(parents == -1) != 1):
        return None
    ordered = np.sort(ids)
    if np.any(ordered[1:] == ordered[:-1]):
        return None
    known = parents[parents >= 0]
    if not np.all(ordered[np.minimum(np.searchsorted(ordered, known), ordered.size - 1)] == known):
        return None
    return ids, types, table[:, 2:6], parents, np.asarray(numbers, dtype=np.int64)


def _ordered_points(source: str, ids: list[int], types: list[int], coords, parents: list[int],
                    lines: list[int]) -> SwcPoints:
    """Reorder so that parents come first (checking roots and cycles) and convert to SI."""
    order = _topological_order(parents, lines, [str(i) for i in ids], source, "point")
    position_in_order = np.empty(len(order), dtype=np.int64)
    position_in_order[order] = np.arange(len(order))
    order_arr = np.asarray(order, dtype=np.int64)
    raw_parents = np.asarray(parents, dtype=np.int64)[order_arr]
    new_parents = np.where(raw_parents >= 0, position_in_order[np.maximum(raw_parents, 0)], -1)
    c = np.asarray(coords, dtype=float)[order_arr] * MICROMETRE
    return SwcPoints(
        source=source,
        ids=np.asarray(ids, dtype=np.int64)[order_arr],
        types=np.asarray(types, dtype=np.int64)[order_arr],
        positions=c[:, :3].copy(),
        radii=c[:, 3].copy(),
        parents=new_parents,
        lines=np.asarray(lines, dtype=np.int64)[order_arr],
        reordered=int(np.count_nonzero(np.asarray(parents, dtype=np.int64) > np.arange(len(parents)))),
    )


def _parse_swc_lines(text: str, source: str) -> SwcPoints:
    """Line-by-line SWC parser that names the line of the first problem."""
    ids: list[int] = []
    types: list[int] = []
    coords: list[tuple[float, float, float, float]] = []
    parent_ids: list[int] = []
    lines: list[int] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        content = raw.split("#", 1)[0].strip()
        if not content:
            continue
        fields = content.split()
        if len(fields) != 7:
            raise FileFormatError(f"{source}:{number}: {len(fields)} fields; an SWC line has 7: "
                                  "id type x y z radius parent")
        try:
            x, y, z, r = (float(t) for t in fields[2:6])
        except ValueError:
            bad = next(j for j in range(2, 6) if not _is_float(fields[j]))
            raise FileFormatError(f"{source}:{number}: field '{_SWC_FIELDS[bad]}' is {fields[bad]!r}; "
                                  "expected a number") from None
        for j, v in zip(range(2, 6), (x, y, z, r), strict=True):
            if not math.isfinite(v):
                raise FileFormatError(f"{source}:{number}: field '{_SWC_FIELDS[j]}' is {fields[j]!r}; "
                                      "expected a finite number")
        point_id = _swc_integer(fields[0], "id", source, number)
        point_type = _swc_integer(fields[1], "type", source, number)
        parent = _swc_integer(fields[6], "parent", source, number)
        if point_id < 0:
            raise FileFormatError(f"{source}:{number}: id {point_id} is negative; expected an id >= 0")
        if parent < -1:
            raise FileFormatError(f"{source}:{number}: parent {parent} is invalid; expected -1 (root) "
                                  "or the id of another point")
        if parent == point_id:
            raise FileFormatError(f"{source}:{number}: point {point_id} is its own parent")
        if r <= 0 and point_type != 1:
            raise FileFormatError(f"{source}:{number}: radius {fields[5]} of point {point_id} is not "
                                  "positive; expected a radius > 0 µm")
        if r < 0:
            raise FileFormatError(f"{source}:{number}: radius {fields[5]} of soma point {point_id} is "
                                  "negative")
        ids.append(point_id)
        types.append(point_type)
        coords.append((x, y, z, r))
        parent_ids.append(parent)
        lines.append(number)
    if not ids:
        raise FileFormatError(f"{source}: no points (the file is empty or holds only comments); "
                              "expected SWC lines 'id type x y z radius parent'")
    index = _first_positions(ids, lines, source, lambda point_id: f"id {point_id}")
    parents: list[int] = []
    for i, p in enumerate(parent_ids):
        if p == -1:
            parents.append(-1)
        elif p in index:
            parents.append(index[p])
        else:
            raise FileFormatError(f"{source}:{lines[i]}: parent {p} of point {ids[i]} is not defined "
                                  "anywhere in the file")
    return _ordered_points(source, ids, types, coords, parents, lines)


def _first_positions(keys: list[Any], lines: list[int], source: str,
                     describe: Callable[[Any], str]) -> dict[Any, int]:
    """Map each key to its position; a key seen twice is an error naming both lines."""
    index: dict[Any, int] = {}
    for i, key in enumerate(keys):
        if key in index:
            raise FileFormatError(f"{source}:{lines[i]}: duplicate {describe(key)} (first defined at line "
                                  f"{lines[index[key]]})")
        index[key] = i
    return index


def _is_float(token: str) -> bool:
    try:
        float(token)
    except ValueError:
        return False
    return True


# --------------------------------------------------------------------------------------
# hand-written section list
# --------------------------------------------------------------------------------------
def read_section_list(path: str | Path) -> SectionList:
    """Read and validate a section-list file (see the module docstring)."""
    text, source = _read_text(path)
    return parse_section_list(text, source)


def _quantities(tokens: list[str], source: str, number: int, fields: tuple[str, ...]) -> list[float]:
    """Read lengths: ``300``, ``300um``, ``300 um``; bare numbers are µm. Returns SI (m)."""
    values: list[float] = []
    k = 0
    while k < len(tokens):
        field = fields[len(values)] if len(values) < len(fields) else "extra field"
        if len(values) >= len(fields):
            raise FileFormatError(f"{source}:{number}: unexpected extra field {tokens[k]!r}; expected at most "
                                  f"{len(fields)} values ({', '.join(fields)})")
        token = tokens[k]
        match = _NUMBER.match(token)
        if not match:
            if values and token.isalpha() and _NUMBER.fullmatch(tokens[k - 1]):
                raise FileFormatError(f"{source}:{number}: unknown unit {token!r} after {tokens[k - 1]!r}; "
                                      f"expected one of {' '.join(_LENGTH_UNITS)}")
            raise FileFormatError(f"{source}:{number}: {field} {token!r} is not a number; expected e.g. "
                                  "'300', '300um' or '300 um'")
        unit = token[match.end():]
        if not unit and k + 1 < len(tokens) and tokens[k + 1] in _LENGTH_UNITS:
            unit = tokens[k + 1]
            k += 1
        if unit and unit not in _LENGTH_UNITS:
            raise FileFormatError(f"{source}:{number}: {field} {token!r} has unknown unit {unit!r}; "
                                  f"expected one of {' '.join(_LENGTH_UNITS)}")
        value = float(match.group(0)) * _LENGTH_UNITS[unit or "um"]
        if not math.isfinite(value):
            raise FileFormatError(f"{source}:{number}: {field} {token!r} is not finite")
        values.append(value)
        k += 1
    return values


def parse_section_list(text: str, source: str = "<tree>") -> SectionList:
    """Parse the hand-written section list; ``source`` names the file in error messages."""
    names: list[str] = []
    parent_names: list[str] = []
    numbers: list[tuple[float, float, float]] = []
    lines: list[int] = []
    soma: float | None = None
    soma_line = 0
    for number, raw in enumerate(text.splitlines(), start=1):
        content = raw.split("#", 1)[0].strip()
        if not content:
            continue
        tokens = content.split()
        if tokens[0].lower() == "soma":
            if soma is not None:
                raise FileFormatError(f"{source}:{number}: second 'soma' line (first at line {soma_line})")
            values = _quantities(tokens[1:], source, number, ("soma diameter",))
            if not values:
                raise FileFormatError(f"{source}:{number}: 'soma' needs a diameter, e.g. 'soma 20 um'")
            if values[0] <= 0:
                raise FileFormatError(f"{source}:{number}: soma diameter must be positive")
            soma, soma_line = values[0], number
            continue
        if len(tokens) < 4:
            raise FileFormatError(f"{source}:{number}: expected 'name parent length diameter "
                                  f"[end diameter]', got {content!r}")
        name, parent = tokens[0], tokens[1]
        if not _NAME.match(name):
            raise FileFormatError(f"{source}:{number}: section name {name!r} may hold only letters, digits "
                                  "and _ - . : /")
        if name.lower() == ROOT:
            raise FileFormatError(f"{source}:{number}: 'root' is reserved for the input point; choose "
                                  "another section name")
        values = _quantities(tokens[2:], source, number, ("length", "diameter", "end diameter"))
        if len(values) < 2:
            raise FileFormatError(f"{source}:{number}: section {name!r} needs a length and a diameter")
        length, diameter = values[0], values[1]
        end = values[2] if len(values) == 3 else diameter
        if length < 0:
            raise FileFormatError(f"{source}:{number}: length of section {name!r} is negative")
        for label, d in (("diameter", diameter), ("end diameter", end)):
            if d <= 0:
                raise FileFormatError(f"{source}:{number}: {label} of section {name!r} must be positive")
        names.append(name)
        parent_names.append(parent)
        numbers.append((length, diameter, end))
        lines.append(number)
    if not names:
        raise FileFormatError(f"{source}: no sections (the file is empty or holds only comments); expected "
                              "lines 'name parent length diameter'")
    index = _first_positions(names, lines, source, lambda name: f"section name {name!r}")
    parents: list[int] = []
    for i, p in enumerate(parent_names):
        if p.lower() == ROOT:
            parents.append(-1)
        elif p in index:
            if p == names[i]:
                raise FileFormatError(f"{source}:{lines[i]}: section {p!r} is its own parent")
            parents.append(index[p])
        else:
            raise FileFormatError(f"{source}:{lines[i]}: parent {p!r} of section {names[i]!r} is not "
                                  "defined; expected 'root' or the name of another section")
    order = _sections_order(parents, lines, names, source)
    position = {old: new for new, old in enumerate(order)}
    arr = np.asarray(numbers, dtype=float)[order]
    return SectionList(
        source=source,
        names=tuple(names[i] for i in order),
        parents=np.asarray([position[parents[i]] if parents[i] >= 0 else -1 for i in order], dtype=np.int64),
        lengths=arr[:, 0].copy(),
        diameters=arr[:, 1].copy(),
        end_diameters=arr[:, 2].copy(),
        lines=np.asarray([lines[i] for i in order], dtype=np.int64),
        soma_diameter=soma,
    )


def _sections_order(parents: list[int], lines: list[int], names: list[str], source: str) -> list[int]:
    """Several sections may hang on the root: add a virtual root, order, then drop it."""
    n = len(parents)
    shifted = [-1] + [p + 1 if p >= 0 else 0 for p in parents]
    order = _topological_order(shifted, [0, *lines], [ROOT, *names], source, "section")
    return [i - 1 for i in order if i > 0] if n else []


def format_section_list(names: list[str] | tuple[str, ...], parents: list[str] | tuple[str, ...],
                        lengths: NDArray | list[float], diameters: NDArray | list[float],
                        end_diameters: NDArray | list[float] | None = None, *,
                        soma_diameter: float | None = None, comments: tuple[str, ...] = (),
                        digits: int = 10) -> str:
    """Write sections (SI values) in the hand-written format; ``parents`` use names or ``root``."""
    out = [f"# {c}" if c else "#" for c in comments]
    if soma_diameter is not None:
        out.append(f"soma {soma_diameter / MICROMETRE:.{digits}g} um")
    out.append("# name parent length diameter [end diameter]   (µm)")
    width = max((len(n) for n in names), default=4)
    pwidth = max((len(p) for p in parents), default=4)
    for i, name in enumerate(names):
        row = (f"{name:<{width}}  {parents[i]:<{pwidth}}  {lengths[i] / MICROMETRE:.{digits}g}  "
               f"{diameters[i] / MICROMETRE:.{digits}g}")
        if end_diameters is not None and end_diameters[i] != diameters[i]:
            row += f"  {end_diameters[i] / MICROMETRE:.{digits}g}"
        out.append(row)
    return "\n".join(out) + "\n"


def read_morphology(path: str | Path) -> SwcPoints | SectionList:
    """Read an SWC file (``.swc``) or a section list (``.tree``, or anything else that is not SWC).

    Files with other extensions are recognised by their first data line: seven numeric
    fields mean SWC.
    """
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix == ".swc":
        return read_swc(p)
    text, source = _read_text(p)
    if suffix != ".tree":
        first = next((ln.split("#", 1)[0].split() for ln in text.splitlines()
                      if ln.split("#", 1)[0].strip()), [])
        if len(first) == 7 and all(_is_float(t) for t in first):
            return parse_swc(text, source)
    return parse_section_list(text, source)
