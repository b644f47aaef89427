r"""One case: a cell, a stimulus and where it is recorded, validated once.

Every front end (the command line, the terminal app, ``reference``, ``compare``, ``advise``) and
the exact solvers work on a :class:`Case`. A front end turns text into SI numbers (the unit
boundary, :mod:`cabletheory.inputs`) and hands them to :func:`build_case` under the canonical
field names of :data:`FIELDS`; every rule about which cell, which stimulus and which sites make a
valid case lives here and nowhere else, and each refusal names the field it concerns
(:class:`CaseFieldError`), so that the command line can say ``--stimulus-at`` and the app can
flag its "stimulus at" box with the same words.

Cells (:data:`CELL_KINDS`):

* ``cylinder``: a uniform finite cylinder with a sealed origin and a sealed, killed or leaky far
  end (:class:`~cabletheory.cable.Cylinder`); with ``length = inf``, a semi-infinite cable;
* ``ball-and-stick``: a lumped spherical soma at the origin of a finite cylinder with any far end
  (:class:`~cabletheory.transient.BallAndStick`; Rall 1969);
* ``infinite``: a doubly infinite cylinder (:class:`~cabletheory.transient.InfiniteCable`);
* a whole tree is the next kind; its tips take the same end words (:func:`end_from_word`).

Stimuli (:data:`STIMULUS_SHAPES`): a current ``step``, a rectangular current ``pulse``, an
``alpha`` current, or a voltage ``clamp`` step, all switched on at t = 0. A current may be
injected anywhere on the cell; a clamp holds the origin (the soma of a ball and stick), or any
point of an infinite cable.

Every case assumes a passive, linear membrane with uniform Rm, Ri and Cm.

References
----------
Rall W (1969) Biophys. J. 9:1483 (the cylinder and the soma-plus-cylinder cell);
Hodgkin AL & Rushton WAH (1946) Proc. R. Soc. B 133:444 (the infinite cable).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .cable import Cylinder, UniformMembrane
from .case_fields import CELL_KINDS, END_WORDS, FIELDS, STIMULUS_SHAPES, WHY_UNUSED, fields_for
from .errors import InputError
from .kernels import steady_green

__all__ = [
    "CELL_KINDS",
    "END_WORDS",
    "FIELDS",
    "STIMULUS_SHAPES",
    "AlphaCurrent",
    "BallAndStick",
    "Case",
    "CaseFieldError",
    "CurrentPulse",
    "CurrentStep",
    "InfiniteCable",
    "Model",
    "Stimulus",
    "VoltageStep",
    "build_case",
    "build_stimulus",
    "describe_end",
    "end_from_word",
    "fields_used",
    "shape_of",
]

# --------------------------------------------------------------------------------------
# stimuli
# --------------------------------------------------------------------------------------
def _finite(value: float, name: str, *, positive: bool = False, allow_zero: bool = True) -> float:
    v = float(value)
    if not math.isfinite(v):
        raise InputError(f"{name} must be finite, got {value!r}")
    if positive and not (v > 0 or (allow_zero and v == 0)):
        raise InputError(f"{name} must be {'non-negative' if allow_zero else 'positive'}, got {value!r}")
    return v


@dataclass(frozen=True, slots=True)
class CurrentStep:
    """A current step of ``amplitude`` (A) switched on at t = 0 at ``position`` (m from the origin)."""

    amplitude: float
    position: float = 0.0

    def __post_init__(self) -> None:
        _finite(self.amplitude, "current amplitude")
        _finite(self.position, "stimulus position")


@dataclass(frozen=True, slots=True)
class CurrentPulse:
    """A rectangular current pulse: ``amplitude`` (A) from t = 0 to ``duration`` (s), at ``position`` (m)."""

    amplitude: float
    duration: float
    position: float = 0.0

    def __post_init__(self) -> None:
        _finite(self.amplitude, "current amplitude")
        _finite(self.duration, "pulse duration", positive=True, allow_zero=False)
        _finite(self.position, "stimulus position")

    @property
    def charge(self) -> float:
        """Injected charge, C."""
        return self.amplitude * self.duration


@dataclass(frozen=True, slots=True)
class AlphaCurrent:
    r"""An alpha-function current :math:`I(t) = I_{peak}\,(t/t_p)\,e^{1 - t/t_p}` at ``position`` (m).

    ``peak`` in A is reached at ``time_to_peak`` :math:`t_p` (s); the injected charge is
    :math:`e\,I_{peak}t_p` (:attr:`charge`).
    """

    peak: float
    time_to_peak: float
    position: float = 0.0

    def __post_init__(self) -> None:
        _finite(self.peak, "peak current")
        _finite(self.time_to_peak, "time to peak", positive=True, allow_zero=False)
        _finite(self.position, "stimulus position")

    @property
    def charge(self) -> float:
        """Injected charge :math:`e I_{peak} t_p`, C."""
        return math.e * self.peak * self.time_to_peak


@dataclass(frozen=True, slots=True)
class VoltageStep:
    """A voltage-clamp step of ``amplitude`` (V, from rest) at t = 0.

    On a finite or semi-infinite cylinder (and a ball and stick, whose clamped soma then plays
    no role) the clamp is at the origin, ``position = 0``; on an :class:`InfiniteCable` it may
    be anywhere.
    """

    amplitude: float
    position: float = 0.0

    def __post_init__(self) -> None:
        _finite(self.amplitude, "clamp amplitude")
        _finite(self.position, "clamp position")


Stimulus = CurrentStep | CurrentPulse | AlphaCurrent | VoltageStep


# --------------------------------------------------------------------------------------
# models besides cable.Cylinder
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class BallAndStick:
    r"""A lumped spherical soma (diameter ``soma_diameter``, m) at the origin of a finite cylinder.

    The soma has the cylinder's Rm and Cm (same τm): :math:`G_S = \pi d_S^2/R_m`. Rall's
    conductance ratio is :math:`\rho = G_D/G_S` with :math:`G_D` the cylinder's input
    conductance; :math:`\rho_\infty = G_\infty/G_S`.

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483; Durand D (1984) Biophys. J. 46:645 (recalled from memory).
    """

    cylinder: Cylinder
    soma_diameter: float

    def __post_init__(self) -> None:
        if not (math.isfinite(self.soma_diameter) and self.soma_diameter > 0):
            raise InputError(f"soma diameter must be finite and positive, got {self.soma_diameter!r}")
        if not math.isfinite(self.cylinder.length):
            raise InputError("a ball and stick needs a finite cylinder length")

    @classmethod
    def with_conductance_ratio(cls, cylinder: Cylinder, conductance_ratio: float) -> BallAndStick:
        """The ball and stick whose soma gives Rall's ρ = G_D/G_S (soma diameter solved for)."""
        if not (math.isfinite(conductance_ratio) and conductance_ratio > 0):
            raise InputError(f"conductance ratio ρ must be finite and positive, got {conductance_ratio!r}")
        from .cable import input_conductance

        g_d = float(input_conductance(1.0 / cylinder.semi_infinite_input_resistance, cylinder.electrotonic_length,
                                      cylinder.end_conductance_ratio))
        g_s = g_d / conductance_ratio
        return cls(cylinder, math.sqrt(g_s * cylinder.membrane_resistivity / math.pi))

    @property
    def soma_conductance(self) -> float:
        """G_S = π d_S² / Rm, S."""
        return math.pi * self.soma_diameter**2 / self.cylinder.membrane_resistivity

    @property
    def soma_ratio(self) -> float:
        """y = G_S / G∞ = 1/ρ∞ (dimensionless)."""
        return self.soma_conductance * self.cylinder.semi_infinite_input_resistance

    @property
    def semi_infinite_conductance_ratio(self) -> float:
        """ρ∞ = G∞ / G_S."""
        return 1.0 / self.soma_ratio

    @property
    def conductance_ratio(self) -> float:
        """Rall's ρ = G_D / G_S."""
        c = self.cylinder
        return float(steady_green(0.0, 0.0, c.electrotonic_length, c.end_conductance_ratio) ** -1
                     / self.soma_ratio)


@dataclass(frozen=True, slots=True)
class InfiniteCable(UniformMembrane):
    """A doubly infinite uniform cylinder; positions are distances along it (m, any sign)."""

    membrane_resistivity: float  # Rm, Ω·m²
    axial_resistivity: float  # Ri, Ω·m
    membrane_capacitance: float  # Cm, F/m²
    diameter: float  # d, m

    def __post_init__(self) -> None:
        try:
            self._check_membrane()
        except ValueError as exc:
            raise InputError(str(exc)) from None

    @classmethod
    def like(cls, cylinder: Cylinder) -> InfiniteCable:
        """The infinite cable with the membrane, cytoplasm and diameter of ``cylinder``."""
        return cls(cylinder.membrane_resistivity, cylinder.axial_resistivity, cylinder.membrane_capacitance,
                   cylinder.diameter)


Model = Cylinder | BallAndStick | InfiniteCable


class CaseFieldError(InputError):
    """A case rule is broken; ``field`` is the canonical name (a key of :data:`FIELDS`) to blame.

    The message does not repeat the field's name: each front end puts its own label in front.
    """

    def __init__(self, field: str, message: str) -> None:
        super().__init__(message)
        self.field = field


def end_from_word(word: str) -> float | None:
    """0 for 'sealed', inf for 'killed' (any case, surrounding blanks ignored), None otherwise.

    The one reader of the end words, for a cylinder's far end and a tree's tips alike; a text
    that is not a word is a conductance for the unit boundary to read.
    """
    return END_WORDS.get(word.strip().lower())


def describe_end(conductance: float, ratio: float | None = None) -> str:
    """'sealed', 'killed (held at rest)' or 'leaky, G = ... nS (B = ...)' for a far-end conductance in S."""
    if conductance == 0:
        return "sealed"
    if math.isinf(conductance):
        return "killed (held at rest)"
    text = f"leaky, {conductance * 1e9:.4g} nS to rest"
    return text + (f" (B = {ratio:.4g})" if ratio is not None else "")


def fields_used(cell: str, shape: str) -> set[str]:
    """The fields of :data:`FIELDS` that a case of this cell kind and stimulus shape reads.

    A front end shows (or accepts) only these; :func:`build_case` refuses a value given for any
    other field, so that a forgotten option never silently does nothing.
    """
    if cell not in CELL_KINDS:
        raise CaseFieldError("cell", f"{cell!r} is not a cell kind; expected one of {', '.join(CELL_KINDS)}")
    if shape not in STIMULUS_SHAPES:
        raise CaseFieldError("shape", f"{shape!r} is not a stimulus shape; expected one of "
                                      f"{', '.join(STIMULUS_SHAPES)}")
    return fields_for(cell, shape)


def _infer_cell(values: Mapping[str, Any]) -> str:
    cell = values.get("cell")
    if cell is not None:
        return str(cell)
    return "ball-and-stick" if values.get("soma_diameter") is not None else "cylinder"


def _infer_shape(values: Mapping[str, Any]) -> str:
    shape = values.get("shape")
    if shape is not None:
        return str(shape)
    return "clamp" if values.get("voltage") is not None else "step"


def _required(values: Mapping[str, Any], field: str, example: str) -> float:
    value = values.get(field)
    if value is None:
        raise CaseFieldError(field, f"missing; give the {FIELDS[field][1]}, e.g. {example}")
    return float(value)


def build_case(values: Mapping[str, Any]) -> Case:
    """The :class:`Case` that SI field values describe; the only place where case rules live.

    Parameters
    ----------
    values : canonical field name (a key of :data:`FIELDS`) -> SI value, or None / absent for a
        field not given. ``cell`` and ``shape`` are words (keys of :data:`CELL_KINDS` and
        :data:`STIMULUS_SHAPES`); without ``cell`` a given soma diameter makes a ball and stick,
        else a cylinder; without ``shape`` a given clamp voltage makes a clamp, else a step.
        ``end`` is a conductance to rest in S (0 sealed, inf killed; :func:`end_from_word`);
        ``positions`` an iterable of recording positions in m. Lengths in m, Rm Ω·m², Ri Ω·m,
        Cm F/m², current A, voltage V, times s.

    Raises
    ------
    CaseFieldError
        naming the first field that breaks a rule (unknown field, missing value, a value given
        for a field the case does not use, a site outside the cell, ...).
    """
    unknown = sorted(set(values) - set(FIELDS))
    if unknown:
        raise CaseFieldError(unknown[0], f"{unknown[0]!r} is not a field of a case")
    cell = _infer_cell(values)
    shape = _infer_shape(values)
    used = fields_used(cell, shape)
    for field, value in values.items():
        if value is not None and field not in used:
            raise CaseFieldError(field, WHY_UNUSED.get(field, "not used by this case"))
    rm = _required(values, "membrane_resistivity", "20 kΩ·cm²")
    ri = _required(values, "axial_resistivity", "150 Ω·cm")
    cm = _required(values, "membrane_capacitance", "1 µF/cm²")
    diameter = _required(values, "diameter", "2 µm")
    model: Model
    try:
        if cell == "infinite":
            model = InfiniteCable(rm, ri, cm, diameter)
        else:
            length = _required(values, "length", "500 µm ('inf' for a semi-infinite cable)")
            end = float(values.get("end") or 0.0)
            if math.isinf(length) and end != 0:
                raise CaseFieldError("end", "a semi-infinite cable has no far end; leave it sealed")
            if cell == "ball-and-stick" and math.isinf(length):
                raise CaseFieldError("length", "a ball and stick needs a finite cylinder length")
            cylinder = Cylinder(rm, ri, cm, diameter, length, end)
            model = (BallAndStick(cylinder, _required(values, "soma_diameter", "20 µm"))
                     if cell == "ball-and-stick" else cylinder)
    except CaseFieldError:
        raise
    except ValueError as exc:  # the model's own checks (Rm, Ri, Cm, d positive and finite ...)
        raise CaseFieldError(_blame(str(exc)), str(exc)) from None
    stimulus = build_stimulus(values, shape, float(values.get("stimulus_at") or 0.0))
    positions = values.get("positions")
    return Case(model, stimulus, tuple(float(x) for x in positions) if positions is not None else ())


def shape_of(stimulus: Stimulus) -> str:
    """The shape word of a stimulus (a key of :data:`STIMULUS_SHAPES`), for every kind of cell."""
    if isinstance(stimulus, VoltageStep):
        return "clamp"
    if isinstance(stimulus, CurrentPulse):
        return "pulse"
    return "alpha" if isinstance(stimulus, AlphaCurrent) else "step"


def build_stimulus(values: Mapping[str, Any], shape: str, site: float = 0.0) -> Stimulus:
    """The stimulus of ``shape`` from the SI field values ``current`` or ``voltage``, ``duration``,
    ``time_to_peak`` (the stimulus rules of :func:`build_case`, shared by the tree case), at ``site`` (m)."""
    if shape not in STIMULUS_SHAPES:
        raise CaseFieldError("shape", f"{shape!r} is not a stimulus shape; expected one of "
                                      f"{', '.join(STIMULUS_SHAPES)}")
    for field, example, wanted in (("duration", "0.5 ms", "pulse"), ("time_to_peak", "1 ms", "alpha")):
        if shape == wanted:
            value = _required(values, field, example)
            if not (math.isfinite(value) and value > 0):
                raise CaseFieldError(field, f"must be finite and positive, got {value!r} s")
    amplitude = (_required(values, "voltage", "10 mV (a voltage clamp takes no current)") if shape == "clamp"
                 else _required(values, "current", "100 pA (or a clamp voltage instead, for a clamp)"))
    for field, value in (("voltage" if shape == "clamp" else "current", amplitude), ("stimulus_at", site)):
        if not math.isfinite(value):
            raise CaseFieldError(field, f"must be finite, got {value!r}")
    if shape == "clamp":
        return VoltageStep(amplitude, site)
    if shape == "pulse":
        return CurrentPulse(amplitude, _required(values, "duration", "0.5 ms"), site)
    if shape == "alpha":
        return AlphaCurrent(amplitude, _required(values, "time_to_peak", "1 ms"), site)
    return CurrentStep(amplitude, site)


def _blame(message: str) -> str:
    for field, words in (("membrane_resistivity", "membrane_resistivity"), ("axial_resistivity", "axial"),
                         ("membrane_capacitance", "capacitance"), ("diameter", "diameter"),
                         ("length", "length"), ("end", "end_conductance"), ("soma_diameter", "soma")):
        if words in message:
            return field
    return "cell"


def _um(x: float) -> str:
    return f"{x * 1e6:.6g} µm"


def _ms(t: float) -> str:
    return f"{t * 1e3:.6g} ms"


@dataclass(frozen=True, slots=True)
class Case:
    """A cell, a stimulus and the recording positions, checked together on construction.

    Attributes
    ----------
    cell : :class:`~cabletheory.cable.Cylinder` (finite or semi-infinite),
        :class:`~cabletheory.transient.BallAndStick` or :class:`~cabletheory.transient.InfiniteCable`
    stimulus : :class:`~cabletheory.transient.CurrentStep`, ``CurrentPulse``, ``AlphaCurrent`` or
        ``VoltageStep``, its ``position`` in m from the origin (the soma of a ball and stick)
    positions : m, where the voltage is recorded (may be empty: the caller supplies a grid)
    """

    cell: Model
    stimulus: Stimulus
    positions: tuple[float, ...] = ()

    def __post_init__(self) -> None:
        if not isinstance(self.cell, Cylinder | BallAndStick | InfiniteCable):
            raise CaseFieldError("cell", f"not a cell: {type(self.cell).__name__}")
        if not isinstance(self.stimulus, CurrentStep | CurrentPulse | AlphaCurrent | VoltageStep):
            raise CaseFieldError("shape", f"not a stimulus: {type(self.stimulus).__name__}")
        site = self.stimulus.position
        if self.kind != "infinite":
            if not 0 <= site <= self.length:
                raise CaseFieldError("stimulus_at", f"{_um(site)} lies outside the cell (0 to {self._extent()})")
            if self.shape == "clamp" and site != 0:
                raise CaseFieldError("stimulus_at", WHY_UNUSED["stimulus_at"])
        self.check_positions(self.positions)

    # ---- what the case is -------------------------------------------------------------
    @property
    def kind(self) -> str:
        """The cell kind: a key of :data:`CELL_KINDS`."""
        if isinstance(self.cell, InfiniteCable):
            return "infinite"
        return "ball-and-stick" if isinstance(self.cell, BallAndStick) else "cylinder"

    @property
    def shape(self) -> str:
        """The stimulus shape: a key of :data:`STIMULUS_SHAPES`."""
        return shape_of(self.stimulus)

    @property
    def cylinder(self) -> Cylinder | None:
        """The cylinder of a cylinder or ball and stick; None for an infinite cable."""
        if isinstance(self.cell, BallAndStick):
            return self.cell.cylinder
        return self.cell if isinstance(self.cell, Cylinder) else None

    @property
    def membrane(self) -> Cylinder | InfiniteCable:
        """The object carrying Rm, Ri, Cm, d, λ and τm."""
        return self.cylinder or self.cell  # type: ignore[return-value]

    @property
    def length(self) -> float:
        """m; inf for a semi-infinite or infinite cable."""
        c = self.cylinder
        return math.inf if c is None else c.length

    @property
    def length_constant(self) -> float:
        """λ, m."""
        return float(self.membrane.length_constant)

    @property
    def membrane_time_constant(self) -> float:
        """τm, s."""
        return float(self.membrane.time_constant)

    @property
    def amplitude(self) -> float:
        """The stimulus amplitude: A for a current (the peak of an alpha current), V for a clamp."""
        s = self.stimulus
        return s.peak if isinstance(s, AlphaCurrent) else s.amplitude

    @property
    def site_factor(self) -> float:
        r"""The steady voltage at the stimulus site per :math:`I R_\infty` for a current step there:
        1/2 on an infinite cable, else Rall's steady-state Green's function
        :func:`~cabletheory.kernels.steady_green` at :math:`X = X_0` (sealed origin, far end B, soma)."""
        c = self.cylinder
        if c is None:
            return 0.5
        soma = self.cell.soma_ratio if isinstance(self.cell, BallAndStick) else 0.0
        x0 = self.stimulus.position / c.length_constant
        return float(steady_green(x0, x0, c.electrotonic_length, c.end_conductance_ratio, soma))

    @property
    def reference_voltage(self) -> float:
        """V, the scale of relative truncation errors: the final voltage at the stimulus site for a
        current step of the stimulus's amplitude (its peak for an alpha current), or the clamp step."""
        if self.shape == "clamp":
            return abs(self.amplitude)
        return abs(self.amplitude) * self.membrane.semi_infinite_input_resistance * self.site_factor

    @property
    def lowest_position(self) -> float:
        """m; -inf on an infinite cable, else 0."""
        return -math.inf if self.kind == "infinite" else 0.0

    def _extent(self) -> str:
        return "its infinite length" if math.isinf(self.length) else _um(self.length)

    def check_positions(self, positions: Iterable[float] | NDArray[np.float64], field: str = "positions") -> None:
        """Refuse (naming ``field``) any recording position that is not finite or lies off the cell.

        A position past the far end by no more than a relative 1e-12 (rounding in a computed grid)
        counts as the end itself.
        """
        x = np.asarray(positions if isinstance(positions, np.ndarray) else list(positions), dtype=float).ravel()
        bad = ~np.isfinite(x)
        if bad.any():
            raise CaseFieldError(field, f"{x[bad][0]!r} is not a finite position")
        if self.kind != "infinite":
            outside = (x < 0) | (x > self.length * (1 + 1e-12))
            if outside.any():
                first = float(x[outside][0])
                raise CaseFieldError(field, f"{_um(first)} lies outside the cell (0 to {self._extent()})")

    def with_positions(self, positions: Iterable[float]) -> Case:
        """The same cell and stimulus recorded at other positions (checked)."""
        return Case(self.cell, self.stimulus, tuple(float(x) for x in positions))

    # ---- words and numbers --------------------------------------------------------------
    def describe(self) -> str:
        """The case in one line of words: the cell, then the stimulus and where it is applied."""
        c = self.cylinder
        if c is None:
            cell = "infinite cable"
        elif math.isinf(c.length):
            cell = "semi-infinite cylinder, sealed origin"
        else:
            g = c.end_conductance
            end = ("sealed" if g == 0 else "killed" if math.isinf(g) else f"leaky (B = {c.end_conductance_ratio:.4g})")
            cell = f"finite cylinder, {end} far end"
        if isinstance(self.cell, BallAndStick):
            cell = (f"ball and stick (soma {_um(self.cell.soma_diameter)}, "
                    f"rho = {self.cell.conductance_ratio:.4g}); {cell}")
        s = self.stimulus
        where = f"x = {_um(s.position)}"
        if s.position == 0 and self.kind != "infinite":
            where = "the soma" if self.kind == "ball-and-stick" else "the origin"
        what = {
            "clamp": "voltage-clamp step",
            "pulse": f"current pulse of {_ms(getattr(s, 'duration', 0.0))}",
            "alpha": f"alpha current peaking at {_ms(getattr(s, 'time_to_peak', 0.0))}",
            "step": "current step",
        }[self.shape]
        return f"{cell}, {what} at {where}"

    def parameters(self) -> dict[str, tuple[float, str]]:
        """Every number of the case as ``name -> (SI value, SI unit)``: the membrane and geometry, the
        derived λ, τm (and B, ρ where they apply), then the stimulus (``stimulus_*`` names)."""
        m = self.membrane
        out: dict[str, tuple[float, str]] = {
            "membrane_resistivity": (m.membrane_resistivity, "ohm*m**2"),
            "axial_resistivity": (m.axial_resistivity, "ohm*m"),
            "membrane_capacitance": (m.membrane_capacitance, "F/m**2"),
            "diameter": (m.diameter, "m"),
        }
        c = self.cylinder
        if c is not None:
            out["length"] = (c.length, "m")
            if math.isfinite(c.length):
                out["end_conductance"] = (c.end_conductance, "S")
                out["end_conductance_ratio"] = (c.end_conductance_ratio, "1")
        if isinstance(self.cell, BallAndStick):
            out["soma_diameter"] = (self.cell.soma_diameter, "m")
            out["conductance_ratio"] = (self.cell.conductance_ratio, "1")
        out["length_constant"] = (self.length_constant, "m")
        out["membrane_time_constant"] = (self.membrane_time_constant, "s")
        s = self.stimulus
        out["stimulus_amplitude"] = (self.amplitude, "V" if self.shape == "clamp" else "A")
        if isinstance(s, CurrentPulse):
            out["pulse_duration"] = (s.duration, "s")
        if isinstance(s, AlphaCurrent):
            out["time_to_peak"] = (s.time_to_peak, "s")
        out["stimulus_position"] = (s.position, "m")
        return out

    def field_values(self) -> dict[str, Any]:
        """The canonical field values (SI) that :func:`build_case` turns back into this case."""
        values: dict[str, Any] = {"cell": self.kind, "shape": self.shape}
        m = self.membrane
        values.update(membrane_resistivity=m.membrane_resistivity, axial_resistivity=m.axial_resistivity,
                      membrane_capacitance=m.membrane_capacitance, diameter=m.diameter)
        c = self.cylinder
        if c is not None:
            values.update(length=c.length, end=c.end_conductance)
        if isinstance(self.cell, BallAndStick):
            values["soma_diameter"] = self.cell.soma_diameter
        values["voltage" if self.shape == "clamp" else "current"] = self.amplitude
        s = self.stimulus
        if isinstance(s, CurrentPulse):
            values["duration"] = s.duration
        if isinstance(s, AlphaCurrent):
            values["time_to_peak"] = s.time_to_peak
        if "stimulus_at" in fields_for(self.kind, self.shape):
            values["stimulus_at"] = s.position
        if self.positions:
            values["positions"] = list(self.positions)
        return values

    def to_json(self) -> dict[str, Any]:
        """The case as a JSON-ready object ``{"cell": {...}, "stimulus": {...}, "positions": {...}}``.

        ``cell`` has ``kind`` and the membrane and geometry (``end_conductance``, ``soma_diameter``
        where they apply); ``stimulus`` has ``shape``, ``amplitude`` (A, or V for a clamp; the peak of
        an alpha current), ``position`` and ``duration`` or ``time_to_peak`` where they apply: the
        keys of every JSON output of the package. Quantities are ``{"value": SI number, "unit": SI
        unit}``; infinities are the strings "inf" and "-inf". :meth:`from_json` reads it back.
        """
        values = self.field_values()
        cell: dict[str, Any] = {"kind": values["cell"]}
        for field in _CELL_JSON:
            if field in values:
                key, unit = _CELL_JSON[field]
                cell[key] = {"value": _json_number(values[field]), "unit": unit}
        s = self.stimulus
        stimulus: dict[str, Any] = {
            "shape": self.shape,
            "amplitude": {"value": self.amplitude, "unit": "V" if self.shape == "clamp" else "A"},
            "position": {"value": s.position, "unit": "m"},
        }
        for field in ("duration", "time_to_peak"):
            if field in values:
                stimulus[field] = {"value": values[field], "unit": "s"}
        return {"cell": cell, "stimulus": stimulus, "positions": {"value": list(self.positions), "unit": "m"}}

    @classmethod
    def from_json(cls, obj: Mapping[str, Any]) -> Case:
        """The case of :meth:`to_json`'s object (SI values; every rule checked again)."""
        try:
            cell, stimulus = obj["cell"], obj["stimulus"]
            values: dict[str, Any] = {"cell": cell["kind"], "shape": stimulus["shape"]}
            for field, (key, _unit) in _CELL_JSON.items():
                if key in cell:
                    values[field] = float(cell[key]["value"])
            amplitude = float(stimulus["amplitude"]["value"])
            values["voltage" if values["shape"] == "clamp" else "current"] = amplitude
            position = float(stimulus.get("position", {"value": 0.0})["value"])
            if "stimulus_at" in fields_for(str(values["cell"]), str(values["shape"])):
                values["stimulus_at"] = position
            for field in ("duration", "time_to_peak"):
                if field in stimulus:
                    values[field] = float(stimulus[field]["value"])
            values["positions"] = [float(x) for x in obj.get("positions", {"value": []})["value"]]
        except (KeyError, TypeError, ValueError, AttributeError) as exc:
            raise InputError(f"case JSON: not the form of Case.to_json (missing or malformed {exc})") from None
        return build_case(values)


_CELL_JSON = {"membrane_resistivity": ("membrane_resistivity", "ohm*m**2"),
              "axial_resistivity": ("axial_resistivity", "ohm*m"),
              "membrane_capacitance": ("membrane_capacitance", "F/m**2"), "diameter": ("diameter", "m"),
              "length": ("length", "m"), "end": ("end_conductance", "S"), "soma_diameter": ("soma_diameter", "m")}


def _json_number(value: float) -> float | str:
    v = float(value)
    if math.isfinite(v):
        return v
    return "nan" if math.isnan(v) else ("inf" if v > 0 else "-inf")
