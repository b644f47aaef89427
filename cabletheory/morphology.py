"""Reading neuron morphologies: SWC point files and tree outlines.

Two inputs, both validated line by line (every error is a
:class:`~cabletheory.errors.FileFormatError` naming the file and the line):

**SWC** (the open community format). One point per line, seven fields
``id type x y z radius parent``; ``#`` starts a comment; ``parent = -1`` marks the root.
Coordinates and radii are in µm. Types: 1 soma, 2 axon, 3 basal dendrite, 4 apical
dendrite; other types are kept as they are. A child may come before its parent (the points
are reordered); missing parents, cycles, several roots, duplicate ids, non-positive radii,
NaN, non-numeric fields, empty files and binary data are errors.

**Tree outline** (this package's own format for trees that were never reconstructed;
extension ``.outline``). One branch per line; indentation gives the parent, fields are named::

    # cabletheory tree outline v1 (lengths and diameters in µm unless a unit is given)
    soma diameter=20
    trunk length=300 diameter=4
      left length=300 diameter=2.52
        left-a length=200 diameter=1.59..1.2      # a taper from 1.59 µm to 1.2 µm
        left-b length=0.2mm diameter=1.59 end=killed
      right length=300 diameter=2.52 end=0.5nS

* A line is a branch name followed by ``key=value`` fields, separated by blanks. ``#``
  starts a comment anywhere; blank lines are ignored.
* Nesting: a line indented deeper than the line above it is that branch's child; lines at
  the same indentation under one parent are siblings; a line at the left margin starts at
  the root (the soma, or the input point when there is no ``soma`` line). Indent with
  spaces only (a tab in the indentation is an error); any width works, but a line that
  comes back out must line up with an earlier branch that encloses it.
* Fields: ``length`` (required, >= 0), ``diameter`` (required, > 0; ``d0..d1`` for a
  linear taper from the proximal to the distal end) and, on a tip only, ``end``: ``sealed``
  (the default), ``killed`` or a conductance to rest such as ``0.5nS``. Each field at most once.
* Values: a number with an optional unit written right after it (``300``, ``300um``,
  ``0.3mm``); bare lengths are µm, bare conductances nS.
* ``soma diameter=D``: an optional spherical soma, at the left margin, at most once, with no
  branches under it. Branch names hold letters, digits and ``_ - . : /``; they are unique and
  ``soma`` is reserved.

Errors name the file, line and column (``cell.outline:4:12: ...``). Readers return plain SI
arrays (m, S); they never import pint: the units in a value are read by a function the caller
hands in (:data:`ValueReader`; the front ends pass the package's unit boundary,
:func:`cabletheory.inputs.read_outline_value`, so that a value means the same as on the command
line). Turning points and branches into the pieces of a cable tree is :mod:`cabletheory.tree`'s job.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .errors import FileFormatError, InputError
from .textfile import read_input_bytes

__all__ = [
    "OUTLINE_SUFFIX",
    "SWC_TYPES",
    "Outline",
    "SwcPoints",
    "ValueReader",
    "format_outline",
    "parse_outline",
    "parse_swc",
    "read_morphology",
    "read_outline",
    "read_swc",
]

SWC_TYPES: dict[int, str] = {0: "undefined", 1: "soma", 2: "axon", 3: "basal dendrite",
                             4: "apical dendrite", 5: "custom", 6: "neurite", 7: "glia"}

MICROMETRE = 1e-6
_NAME = re.compile(r"^[A-Za-z0-9_.:/-]+$")
_SWC_FIELDS = ("id", "type", "x", "y", "z", "radius", "parent")
OUTLINE_SUFFIX = ".outline"
SOMA_WORD = "soma"
_OUTLINE_KEYS = ("length", "diameter", "end")
_TAPER = ".."

ValueReader = Callable[[str, str], float]
"""Reads one value of an outline: ``(field, text) -> SI float``. ``field`` is "length",
"diameter" (lengths, bare numbers in µm) or "end" ('sealed' 0, 'killed' inf, or a conductance
to rest in S, bare numbers in nS). Raises ValueError (InputError is one) with a one-line
reason that starts with the field's name."""


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
class Outline:
    """The branches of a tree outline in file order (every parent before its children), SI.

    ``parents[i]`` is the index of branch i's parent or -1 for the root; each branch is a
    cylinder (``end_diameters[i] == diameters[i]``) or a frustum. ``ends[i]`` is the
    conductance from branch i's far end to rest in S (0 sealed, inf killed); only tips carry one.
    """

    source: str
    names: tuple[str, ...]
    parents: NDArray[np.int64]
    lengths: NDArray[np.float64]
    diameters: NDArray[np.float64]
    end_diameters: NDArray[np.float64]
    lines: NDArray[np.int64]
    soma_diameter: float | None = None
    ends: NDArray[np.float64] | None = None

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


def _topological_order(parents: Sequence[int] | NDArray, lines: Sequence[int] | NDArray,
                       labels: Sequence[str] | _Labels, source: str, what: str) -> list[int]:
    """Order indices so that parents come first; ``parents[i] == -1`` marks a root.

    Raises for several roots, no root and cycles (naming the lines involved).
    """
    n = len(parents)
    roots = np.flatnonzero(np.asarray(parents, dtype=np.int64) == -1).tolist()
    if not roots:
        raise FileFormatError(f"{source}: no root {what} (every {what} has a parent), so the tree has a "
                              f"cycle; first {what} at line {lines[0]}")
    if len(roots) > 1:
        shown = ", ".join(f"{labels[i]} (line {lines[i]})" for i in roots[:5])
        raise FileFormatError(f"{source}:{lines[roots[1]]}: several roots: {shown}"
                              f"{' ...' if len(roots) > 5 else ''}; expected exactly one {what} "
                              "without a parent")
    # children grouped by parent, each group in file order (a stable sort): CSR lists
    links = np.asarray(parents, dtype=np.int64)
    child = np.flatnonzero(links >= 0)
    grouped = child[np.argsort(links[child], kind="stable")].tolist()
    starts = np.concatenate(([0], np.cumsum(np.bincount(links[child], minlength=n)))).tolist()
    order = [roots[0]]
    for p in order:  # breadth-first: the loop reaches what it appends (deep trees need no recursion)
        order.extend(grouped[starts[p]:starts[p + 1]])
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
            i = int(parents[i])
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
        by_id = np.argsort(ids, kind="stable")
        found = by_id[np.searchsorted(ids[by_id], np.maximum(parent_ids, 0))]
        parents = np.where(parent_ids >= 0, found, -1)
        return _ordered_points(source, ids, types, coords, parents, lines)
    return _parse_swc_lines(text, source)


def _parse_swc_fast(text: str) -> tuple[NDArray, NDArray, NDArray, NDArray, NDArray] | None:
    """All points as arrays, or None if any line is not plainly valid (then the slow path reports).

    The numbers are read by numpy's text reader (``numpy.loadtxt``, in C) from the lines that hold
    data; a line it cannot read, or with other than 7 fields, sends the file to the line parser,
    which names the line of the first problem."""
    lines = text.splitlines()
    if "#" in text:
        lines = [line.split("#", 1)[0] if "#" in line else line for line in lines]
    numbers = [number for number, line in enumerate(lines, start=1) if line and not line.isspace()]
    if not numbers:
        return None
    rows = [lines[number - 1] for number in numbers]
    try:
        table = np.loadtxt(rows, dtype=float, comments=None, ndmin=2)
    except ValueError:
        return None
    if table.shape != (len(rows), 7):
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


class _Labels:
    """Point ids as the text of messages, made only when a message needs one."""

    def __init__(self, ids: Sequence[int] | NDArray) -> None:
        self.ids = ids

    def __getitem__(self, i: int) -> str:
        return str(self.ids[i])


def _ordered_points(source: str, ids: Sequence[int] | NDArray, types: Sequence[int] | NDArray, coords: Any,
                    parents: Sequence[int] | NDArray, lines: Sequence[int] | NDArray) -> SwcPoints:
    """Reorder so that parents come first (checking roots and cycles) and convert to SI."""
    order = _topological_order(parents, lines, _Labels(ids), source, "point")
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
# tree outline
# --------------------------------------------------------------------------------------
def read_outline(path: str | Path, read_value: ValueReader) -> Outline:
    """Read and validate a tree outline (see the module docstring)."""
    text, source = _read_text(path)
    return parse_outline(text, read_value, source)


@dataclass(slots=True)
class _Line:
    number: int
    indent: int
    name: str
    fields: dict[str, tuple[str, int]]  # key -> (value text, column)


def _outline_lines(text: str, source: str) -> list[_Line]:
    """Split an outline into (line, indentation, name, fields), checking the lexical rules."""
    out: list[_Line] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        content = raw.split("#", 1)[0].rstrip()
        if not content.strip():
            continue
        body = content.lstrip(" ")
        indent = len(content) - len(body)
        if body[:1] in ("\t", "\f", "\v"):
            raise FileFormatError(f"{source}:{number}:{indent + 1}: tab in the indentation; indent with "
                                  "spaces only")
        tokens = [(m.group(0), m.start() + 1) for m in re.finditer(r"\S+", content)]
        (name, name_col), rest = tokens[0], tokens[1:]
        if "=" in name:
            raise FileFormatError(f"{source}:{number}:{name_col}: the line starts with a field ({name!r}); "
                                  "expected a branch name first, e.g. 'trunk length=300 diameter=4'")
        if not _NAME.match(name):
            raise FileFormatError(f"{source}:{number}:{name_col}: branch name {name!r} may hold only letters, "
                                  "digits and _ - . : /")
        fields: dict[str, tuple[str, int]] = {}
        for token, col in rest:
            key, eq, value = token.partition("=")
            if not eq:
                raise FileFormatError(f"{source}:{number}:{col}: {token!r} is not a field; expected key=value "
                                      "with no blanks around '=', e.g. 'length=300'")
            if key not in _OUTLINE_KEYS:
                raise FileFormatError(f"{source}:{number}:{col}: unknown field {key!r}; expected "
                                      f"{', '.join(_OUTLINE_KEYS)}")
            if key in fields:
                raise FileFormatError(f"{source}:{number}:{col}: field {key!r} given twice (first at column "
                                      f"{fields[key][1]})")
            if not value:
                raise FileFormatError(f"{source}:{number}:{col}: field {key!r} has no value")
            fields[key] = (value, col + len(key) + 1)
        out.append(_Line(number, indent, name, fields))
    return out


def _value(read_value: ValueReader, field: str, text: str, where: str) -> float:
    try:
        value = float(read_value(field, text))
    except ValueError as exc:
        raise FileFormatError(f"{where}: {exc}") from None
    if math.isnan(value):
        raise FileFormatError(f"{where}: {field} {text!r} is not a number")
    return value


def _diameters(read_value: ValueReader, text: str, where: str) -> tuple[float, float]:
    """``'3'`` -> (3, 3) µm; ``'3..2'`` -> a taper from 3 µm (proximal) to 2 µm (distal); SI."""
    parts = text.split(_TAPER)
    if len(parts) > 2:
        raise FileFormatError(f"{where}: diameter {text!r} has more than one '..'; expected 'd' or "
                              "'d0..d1' (a taper)")
    values = [_value(read_value, "diameter", part, where) for part in parts]
    for part, value in zip(parts, values, strict=True):
        if not (math.isfinite(value) and value > 0):
            raise FileFormatError(f"{where}: diameter {part!r} must be finite and positive")
    return values[0], values[-1]


def parse_outline(text: str, read_value: ValueReader, source: str = "<outline>") -> Outline:
    """Parse a tree outline; ``source`` names the file in error messages (file:line:column)."""
    lines = _outline_lines(text, source)
    names: list[str] = []
    parents: list[int] = []
    numbers: list[tuple[float, float, float, float]] = []
    line_numbers: list[int] = []
    seen: dict[str, int] = {}
    soma: float | None = None
    soma_line = 0
    stack: list[tuple[int, int]] = []  # (indentation, branch index) of the enclosing branches
    previous_indent = -1
    for ln in lines:
        where = f"{source}:{ln.number}:{ln.indent + 1}"
        if previous_indent < 0 and ln.indent > 0:
            raise FileFormatError(f"{where}: the first line is indented; the outline starts at the left margin")
        if ln.name.lower() == SOMA_WORD:
            if ln.indent > 0:
                raise FileFormatError(f"{where}: 'soma' must be at the left margin (it is the root, not a branch)")
            if soma is not None:
                raise FileFormatError(f"{where}: second 'soma' line (first at line {soma_line})")
            extra = sorted(set(ln.fields) - {"diameter"})
            if extra:
                key_column = ln.fields[extra[0]][1] - len(extra[0]) - 1
                raise FileFormatError(f"{source}:{ln.number}:{key_column}: the soma takes only a diameter, "
                                      f"not {extra[0]!r}")
            if "diameter" not in ln.fields:
                raise FileFormatError(f"{where}: 'soma' needs a diameter, e.g. 'soma diameter=20'")
            value, col = ln.fields["diameter"]
            d0, d1 = _diameters(read_value, value, f"{source}:{ln.number}:{col}")
            if d0 != d1:
                raise FileFormatError(f"{source}:{ln.number}:{col}: the soma is a sphere; give one diameter")
            soma, soma_line = d0, ln.number
            stack = []
            previous_indent = 0
            continue
        if ln.indent > previous_indent:  # one level deeper: a child of the line above
            if previous_indent >= 0 and not stack:
                raise FileFormatError(f"{where}: nothing may be nested under the 'soma' line (line "
                                      f"{soma_line}); start the first branch at the left margin")
        else:
            while stack and stack[-1][0] > ln.indent:
                stack.pop()
            if stack and stack[-1][0] == ln.indent:
                stack.pop()
            elif ln.indent > 0 and (not stack or stack[-1][0] < ln.indent):
                raise FileFormatError(f"{where}: this indentation ({ln.indent} spaces) lines up with no enclosing "
                                      "branch; a line that comes back out must start where an earlier sibling did")
        if ln.name in seen:
            raise FileFormatError(f"{where}: duplicate branch name {ln.name!r} (first defined at line "
                                  f"{line_numbers[seen[ln.name]]})")
        for key in ("length", "diameter"):
            if key not in ln.fields:
                raise FileFormatError(f"{where}: branch {ln.name!r} needs a {key}, e.g. "
                                      f"'{ln.name} length=300 diameter=2'")
        value, col = ln.fields["length"]
        length = _value(read_value, "length", value, f"{source}:{ln.number}:{col}")
        if not (math.isfinite(length) and length >= 0):
            raise FileFormatError(f"{source}:{ln.number}:{col}: length {value!r} of branch {ln.name!r} must be "
                                  "finite and >= 0")
        value, col = ln.fields["diameter"]
        d0, d1 = _diameters(read_value, value, f"{source}:{ln.number}:{col}")
        end = 0.0
        if "end" in ln.fields:
            value, col = ln.fields["end"]
            end = _value(read_value, "end", value, f"{source}:{ln.number}:{col}")
            if end < 0:
                raise FileFormatError(f"{source}:{ln.number}:{col}: end {value!r} of branch {ln.name!r} is "
                                      "negative; expected 'sealed', 'killed' or a conductance >= 0")
        index = len(names)
        seen[ln.name] = index
        names.append(ln.name)
        parents.append(stack[-1][1] if stack else -1)
        numbers.append((length, d0, d1, end))
        line_numbers.append(ln.number)
        stack.append((ln.indent, index))
        previous_indent = ln.indent
    if not names:
        raise FileFormatError(f"{source}: no branches (the file is empty or holds only comments); expected "
                              "lines such as 'trunk length=300 diameter=4'")
    has_child = [False] * len(names)
    for p in parents:
        if p >= 0:
            has_child[p] = True
    for i, (ln_no, (_, _, _, end)) in enumerate(zip(line_numbers, numbers, strict=True)):
        if has_child[i] and end != 0.0:
            line = next(x for x in lines if x.number == ln_no)
            raise FileFormatError(f"{source}:{ln_no}:{line.fields['end'][1]}: branch {names[i]!r} has branches "
                                  "nested under it, so it has no free end; 'end=' belongs on a tip")
    arr = np.asarray(numbers, dtype=float)
    return Outline(source=source, names=tuple(names), parents=np.asarray(parents, dtype=np.int64),
                   lengths=arr[:, 0].copy(), diameters=arr[:, 1].copy(), end_diameters=arr[:, 2].copy(),
                   lines=np.asarray(line_numbers, dtype=np.int64), soma_diameter=soma, ends=arr[:, 3].copy())


def _number(value: float, digits: int) -> str:
    return f"{value:.{digits}g}"


def _end_text(conductance: float, digits: int) -> str:
    if conductance == 0:
        return "sealed"
    if math.isinf(conductance):
        return "killed"
    return f"{conductance * 1e9:.{digits}g}nS"


def format_outline(names: Sequence[str], parents: Sequence[int], lengths: NDArray | Sequence[float],
                   diameters: NDArray | Sequence[float], end_diameters: NDArray | Sequence[float] | None = None,
                   *, ends: NDArray | Sequence[float] | None = None, soma_diameter: float | None = None,
                   comments: tuple[str, ...] = (), digits: int = 10, indent: int = 2) -> str:
    """Write branches (SI values) as a tree outline.

    ``parents`` are indices (-1 for the root); children are written under their parent in
    the given order, ``indent`` spaces deeper. ``ends``: conductance to rest at each tip, S
    (0 sealed, written only when not 0; inf killed).
    """
    n = len(names)
    children: list[list[int]] = [[] for _ in range(n)]
    roots: list[int] = []
    for i, p in enumerate(parents):
        (children[p] if p >= 0 else roots).append(i)
    out = [f"# {c}" if c else "#" for c in comments]
    if soma_diameter is not None:
        out.append(f"soma diameter={_number(soma_diameter / MICROMETRE, digits)}")
    todo = [(i, 0) for i in reversed(roots)]
    while todo:  # depth first, iterative
        i, depth = todo.pop()
        d0 = _number(diameters[i] / MICROMETRE, digits)
        diameter = d0
        if end_diameters is not None and end_diameters[i] != diameters[i]:
            diameter = f"{d0}{_TAPER}{_number(end_diameters[i] / MICROMETRE, digits)}"
        row = (f"{' ' * (indent * depth)}{names[i]} length={_number(lengths[i] / MICROMETRE, digits)} "
               f"diameter={diameter}")
        if ends is not None and ends[i] != 0:
            row += f" end={_end_text(float(ends[i]), digits)}"
        out.append(row)
        todo.extend((c, depth + 1) for c in reversed(children[i]))
    return "\n".join(out) + "\n"


def read_morphology(path: str | Path, read_value: ValueReader | None = None) -> SwcPoints | Outline:
    """Read an SWC file (``.swc``) or a tree outline (``.outline``, or anything else that is not SWC).

    Files with other extensions are recognised by their first data line: seven numeric
    fields mean SWC. ``read_value`` reads the values of an outline (see :data:`ValueReader`);
    it is required for outlines.
    """
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix == ".swc":
        return read_swc(p)
    text, source = _read_text(p)
    if suffix != OUTLINE_SUFFIX:
        first = next((ln.split("#", 1)[0].split() for ln in text.splitlines()
                      if ln.split("#", 1)[0].strip()), [])
        if len(first) == 7 and all(_is_float(t) for t in first):
            return parse_swc(text, source)
    if read_value is None:
        raise InputError("read_morphology: reading a tree outline needs read_value (the unit reader)")
    return parse_outline(text, read_value, source)
