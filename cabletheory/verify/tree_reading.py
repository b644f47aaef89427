r"""A simulator's output recorded at the points of a tree: the column syntax and the reader.

A tree site is written as everywhere else (:mod:`cabletheory.tree_sites`): a point label
(``412``, ``left.a``, ``soma``) or ``branch LABEL +DISTANCE`` (``branch 443 +25 um``, measured
from the start of the branch that ends at point 443; a bare distance in µm, or in the unit of
``--position-unit``).

In a wide table's header the site follows ``V@`` (or ``V at``, ``Vm@``, ``@``) and the voltage
unit comes last in brackets: ``V@412 (mV)``, ``V@soma (mV)``, ``V@branch 443 +25 um (mV)``. A
long table's site column is named ``point`` (or ``site``, ``position``) and holds the same texts.

Each distinct site read gets a number (0, 1, 2 ... in the order first met); the
:class:`~cabletheory.verify.reading.Recording` holds those numbers as its positions and
:class:`TreeRecording` the sites they stand for. Two columns naming one point are refused, as are
unknown labels, distances beyond a branch, a branch named by a point inside it, and a label that
could mean two points.

Every exact answer assumes a passive, linear membrane with uniform properties; so does every
verdict. A simulator with active conductances is outside what this package can check.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from ..errors import InputError
from ..tree import Tree
from ..tree_laplace import Site
from ..tree_sites import TreePoint, TreeSites
from .reading import QuantityParser, Recording, read_recording

__all__ = ["TreePoint", "TreePoints", "TreeRecording", "read_tree_recording"]

_VOLTAGE_WORDS = {"v", "vm", "v_m", "voltage", "potential", "membrane potential"}


class TreePoints(TreeSites):
    """Reads site texts into numbers, one per distinct point of the tree (0, 1, 2 ... in the order
    first met), for :func:`cabletheory.verify.reading.read_recording`'s ``read_site``; ``points``
    holds the point each number stands for."""

    def __init__(self, tree: Tree, parse: QuantityParser | None = None, distance_unit: float = 1e-6) -> None:
        super().__init__(tree, parse, distance_unit)
        self.points: list[TreePoint] = []
        self._numbers: dict[tuple[int, float], int] = {}

    def __call__(self, text: str, where: str) -> float:
        bare = text.strip()
        if bare.lower() in _VOLTAGE_WORDS and bare not in self.tree.labels:
            raise InputError("the column does not say where it was recorded; name the point in the header "
                             "('V@412 (mV)') or give --column-at")
        point = self.point(text)
        key = self.key(point.site)
        if key not in self._numbers:
            self._numbers[key] = len(self.points)
            self.points.append(point)
        return float(self._numbers[key])


@dataclass(frozen=True, slots=True)
class TreeRecording:
    """A simulator's output recorded at tree points: the recording, whose positions are the numbers
    0, 1, 2 ... of ``points``, and the points themselves."""

    recording: Recording
    points: tuple[TreePoint, ...]

    @property
    def sites(self) -> tuple[Site, ...]:
        return tuple(p.site for p in self.points)

    @property
    def labels(self) -> tuple[str, ...]:
        return tuple(p.label for p in self.points)


def read_tree_recording(text: str, name: str, parse: QuantityParser, tree: Tree, *,
                        columns: str | Mapping[str, str] | None = None, time_unit: str | None = None,
                        distance_unit: str | None = None, voltage_unit: str | None = None,
                        resting_potential: float | str = 0.0, time_offset: float = 0.0) -> TreeRecording:
    """Read a simulator's CSV (or tab-separated) output recorded at points of ``tree``.

    The layouts, units, offsets and checks are those of
    :func:`cabletheory.verify.reading.read_recording`; only the sites differ (the column syntax of
    this module's docstring).

    Parameters
    ----------
    columns : where the voltage columns were recorded when the header does not say it: one site
        text for a file's single voltage column (``'412'``), or column names (any case) mapped to
        site texts (``{'v_soma': 'soma', 'v_tip': '443'}``): the command line's ``--column-at``
    distance_unit : unit of bare distances in ``branch LABEL +DISTANCE`` (default µm)
    the others : as for :func:`~cabletheory.verify.reading.read_recording`

    Raises
    ------
    FileFormatError : naming the file, line and column of the first problem
    InputError : a ``columns`` entry that names no site (naming ``--column-at``)
    """
    factor = 1e-6 if distance_unit is None else parse(f"1 {distance_unit}", "length", "--position-unit")
    points = TreePoints(tree, parse, factor)
    site: float | dict[str, float] | None = None

    def resolve(text: str, label: str) -> float:
        try:
            return points(text, label)
        except InputError as exc:
            raise InputError(f"{label}: {exc}") from None

    if isinstance(columns, str):
        site = resolve(columns, "--column-at")
    elif columns is not None:
        site = {key.strip().lower(): resolve(value, f"--column-at {key.strip()}") for key, value in columns.items()}
    recording = read_recording(text, name, parse, time_unit=time_unit, voltage_unit=voltage_unit,
                               resting_potential=resting_potential, time_offset=time_offset, site=site,
                               read_site=points)
    used = sorted({int(k) for k in np.unique(recording.positions)})
    if used != list(range(len(points.points))):  # a --column-at entry for a column the file lacks: drop it
        keep = {old: new for new, old in enumerate(used)}
        recording = _renumber(recording, keep)
        kept = tuple(points.points[i] for i in used)
        return TreeRecording(recording, kept)
    return TreeRecording(recording, tuple(points.points))


def _renumber(recording: Recording, keep: Mapping[int, int]) -> Recording:
    positions = np.array([keep[int(p)] for p in recording.positions], dtype=float)
    return replace(recording, positions=positions)
