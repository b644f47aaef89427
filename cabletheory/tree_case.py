"""A case on a whole tree: a passive tree, a stimulus at one of its points, the points recorded.

The tree counterpart of :class:`cabletheory.case.Case`: the cell is a
:class:`~cabletheory.tree_laplace.PassiveTree` (any reconstructed morphology, its tips sealed,
killed or leaky), the stimulus one of the case model's (built by the same rules,
:func:`cabletheory.case.build_stimulus`), and the sites are named by the morphology's own point
labels (SWC ids or outline branch names; 'soma' or 'root' for the root) or as distances along a
branch ('branch 443 +25 um'; :mod:`cabletheory.tree_sites`). Every rule is checked on
construction and each refusal names its field (:class:`~cabletheory.case.CaseFieldError`), so the
command line can say ``--stimulus-at`` or ``--positions``.

Every result assumes a passive, linear membrane, uniform within each piece of the tree.

References
----------
Butz EG & Cowan JD (1974) Biophys. J. 14:661; Holmes WR (1986) Biol. Cybern. 55:115 (the
Laplace-domain solution of a passive tree that :mod:`cabletheory.tree_time` inverts).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import NDArray

from .case import (
    STIMULUS_SHAPES,
    AlphaCurrent,
    CaseFieldError,
    CurrentPulse,
    Stimulus,
    VoltageStep,
    build_stimulus,
    shape_of,
)
from .errors import InputError
from .tree_laplace import PassiveTree, Site
from .tree_sites import in_words, tree_site

if TYPE_CHECKING:
    from .waveform import Sampler

__all__ = ["TreeCase", "build_tree_case"]

ROOT_WORDS = ("soma", "root")


@dataclass(frozen=True, slots=True)
class TreeCase:
    """A passive tree, a stimulus at the point ``stimulus_label`` and the points ``labels`` recorded.

    The stimulus's own ``position`` is 0: on a tree the site is the label. A voltage clamp holds
    the root (soma).
    """

    cell: PassiveTree
    stimulus: Stimulus
    stimulus_label: str
    labels: tuple[str, ...]

    def __post_init__(self) -> None:
        if self.stimulus.position != 0:
            raise CaseFieldError("stimulus_at", "on a tree the stimulus site is a point label; leave the "
                                                "stimulus position at 0")
        site = self._resolve(self.stimulus_label, "stimulus_at")
        if isinstance(self.stimulus, VoltageStep) and site.piece != -1:
            raise CaseFieldError("stimulus_at", "a voltage clamp on a tree holds the root (soma); leave "
                                                "--stimulus-at out or give 'soma'")
        if not self.labels:
            raise CaseFieldError("positions", "give at least one point to record at")
        for label in self.labels:
            self._resolve(label, "positions")

    def _resolve(self, label: str, field: str) -> Site:
        try:
            return tree_site(self.cell.tree, label)
        except InputError as exc:
            raise CaseFieldError(field, str(exc).split(": ", 1)[-1]) from None

    @property
    def shape(self) -> str:
        """The stimulus shape: a key of :data:`cabletheory.case.STIMULUS_SHAPES`."""
        return shape_of(self.stimulus)

    @property
    def stimulus_site(self) -> Site:
        return tree_site(self.cell.tree, self.stimulus_label)

    @property
    def sites(self) -> tuple[Site, ...]:
        return tuple(tree_site(self.cell.tree, label) for label in self.labels)

    @property
    def membrane_time_constant(self) -> float:
        """τm = Rm Cm of the first piece (the tree's membrane is uniform unless given per piece), s."""
        return float(np.asarray(self.cell.time_constants).ravel()[0])

    def sampler(self, labels: Sequence[str] | None, tolerance: float) -> tuple[Sampler, list[str], float]:
        """How :func:`cabletheory.waveform.response_features` reads this case (its ``SelfSampling``
        protocol): ``run(times) -> (voltage at the points ``labels`` (default the case's) and, last,
        the stimulus site; final voltages or None)`` by :func:`cabletheory.tree_time.tree_response`,
        the labels, and the clamp step (0 for a current)."""
        from dataclasses import replace

        from .tree_time import tree_response

        case = self if labels is None else replace(self, labels=tuple(labels))
        at = case.stimulus_site
        sites = [*case.sites, at]

        def run(times: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64] | None]:
            r = tree_response(case.cell, case.stimulus, times, at, sites, tolerance=tolerance)
            return r.voltage, r.steady_state

        clamp = case.stimulus.amplitude if isinstance(case.stimulus, VoltageStep) else 0.0
        return run, list(case.labels), float(clamp)

    def describe(self) -> str:
        """The case in one line of words."""
        tree = self.cell.tree
        what = {"step": "current step", "pulse": "current pulse", "alpha": "alpha current",
                "clamp": "voltage-clamp step"}[self.shape]
        where = in_words(self.stimulus_label, self.stimulus_site)
        return f"passive tree from {tree.source} ({len(tree)} pieces), {what} at {where}"

    def parameters(self) -> dict[str, tuple[float, str]]:
        """The membrane and stimulus numbers as ``name -> (SI value, SI unit)`` (uniform values)."""
        c = self.cell
        out: dict[str, tuple[float, str]] = {
            "membrane_resistivity": (float(np.asarray(c.membrane_resistivity).ravel()[0]), "ohm*m**2"),
            "axial_resistivity": (float(c.axial_resistivity), "ohm*m"),
            "membrane_capacitance": (float(np.asarray(c.membrane_capacitance).ravel()[0]), "F/m**2"),
            "membrane_time_constant": (self.membrane_time_constant, "s"),
        }
        s = self.stimulus
        amplitude = s.peak if isinstance(s, AlphaCurrent) else s.amplitude
        out["stimulus_amplitude"] = (amplitude, "V" if self.shape == "clamp" else "A")
        if isinstance(s, CurrentPulse):
            out["pulse_duration"] = (s.duration, "s")
        if isinstance(s, AlphaCurrent):
            out["time_to_peak"] = (s.time_to_peak, "s")
        return out


def build_tree_case(cell: PassiveTree, values: Mapping[str, Any], stimulus_label: str | None,
                    labels: Sequence[str] | None) -> TreeCase:
    """The :class:`TreeCase` of a tree and the stimulus fields of :func:`cabletheory.case.build_stimulus`.

    Parameters
    ----------
    cell : the tree with its membrane and tips
    values : SI field values ``shape`` (default step, or clamp when ``voltage`` is given), ``current``
        or ``voltage``, ``duration``, ``time_to_peak``; no other stimulus field applies to a tree
    stimulus_label : the point the stimulus is applied at (default the soma)
    labels : the points recorded (default the stimulus point)
    """
    extra = sorted(k for k, v in values.items() if v is not None
                   and k not in ("shape", "current", "voltage", "duration", "time_to_peak"))
    if extra:
        raise CaseFieldError(extra[0], "does not apply to a tree (the morphology gives the geometry)")
    shape = str(values.get("shape") or ("clamp" if values.get("voltage") is not None else "step"))
    if shape not in STIMULUS_SHAPES:
        raise CaseFieldError("shape", f"{shape!r} is not a stimulus shape")
    unused = {"step": ("voltage", "duration", "time_to_peak"), "pulse": ("voltage", "time_to_peak"),
              "alpha": ("voltage", "duration"), "clamp": ("current", "duration", "time_to_peak")}[shape]
    for field in unused:
        if values.get(field) is not None:
            raise CaseFieldError(field, f"does not apply to a {shape}")
    stimulus = build_stimulus(values, shape)
    where = (stimulus_label or ROOT_WORDS[0]).strip()
    return TreeCase(cell, stimulus, where, tuple(labels) if labels else (where,))
