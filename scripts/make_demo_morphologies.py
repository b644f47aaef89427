"""Generate the bundled demo morphologies (invented; deterministic).

Scenario: at the invented Tidewater Station, modellers study the sensory interneurons of the
invented intertidal sea slug *Lumenia vadosa*. None of these cells exists; the numbers are
chosen to sit in realistic ranges for passive dendrites (diameters 0.3–4 µm, tips a few hundred
µm from the soma, electrotonic lengths near 1).

Writes to ``cabletheory/data/morphologies/``:

* ``lumenia_lw1_conforming.swc``: the "lateral-wing interneuron LW-1", three stem dendrites
  built to satisfy Rall's conditions exactly (3/2 rule at every branch point, uneven but
  exact daughter splits, every tip at X = 1.1), a one-point spherical soma;
* ``lumenia_pv7_interneuron.swc``: the "pedal-ventral interneuron PV-7", realistic-looking
  and *not* reducible (daughters too thick or too thin, tapering branches, tips at
  different distances), with an outline soma, four basal dendrites, an apical dendrite and
  an axon;
* ``lumenia_demo.outline``: the small symmetric demo tree (trunk 4 µm, two orders of 3/2-rule
  daughters, 20 µm soma) as a tree outline (docs/tree.md).

Run: ``python scripts/make_demo_morphologies.py`` (it overwrites the three files).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from cabletheory.morphology import format_outline

OUT = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"
# the Station's working values (only the ratio Rm/Ri matters for electrotonic distances)
RM = 2.0  # Ω·m² (20 kΩ·cm²)
RI = 2.0  # Ω·m (200 Ω·cm)
UM = 1e-6


def length_constant_um(diameter_um: float) -> float:
    return math.sqrt(RM * diameter_um * UM / (4.0 * RI)) / UM


class SwcWriter:
    def __init__(self) -> None:
        self.rows: list[tuple[int, int, float, float, float, float, int]] = []

    def add(self, kind: int, xyz: np.ndarray, radius: float, parent: int) -> int:
        self.rows.append((len(self.rows) + 1, kind, *map(float, xyz), radius, parent))
        return len(self.rows)

    def text(self, header: list[str]) -> str:
        out = [f"# {h}" if h else "#" for h in header]
        out.append("# id type x y z radius parent   (µm)")
        out += [f"{i} {t} {x:.6f} {y:.6f} {z:.6f} {r:.10g} {p}" for i, t, x, y, z, r, p in self.rows]
        return "\n".join(out) + "\n"


def _turn(direction: np.ndarray, rng: np.random.Generator, angle: float) -> np.ndarray:
    """Rotate a unit vector by a small random angle."""
    kick = rng.normal(size=3)
    kick -= kick.dot(direction) * direction
    kick /= np.linalg.norm(kick)
    new = math.cos(angle) * direction + math.sin(angle) * kick
    return new / np.linalg.norm(new)


def _walk(writer: SwcWriter, kind: int, start: np.ndarray, direction: np.ndarray, length: float,
          radii: tuple[float, float], parent: int, rng: np.random.Generator, step: float = 8.0,
          wiggle: float = 0.15, straight_first: bool = False) -> tuple[int, np.ndarray, np.ndarray]:
    """Lay points along a gently bending path of the given length; radius linear from radii[0] to [1].

    ``straight_first`` keeps the first step along ``direction`` (a stem leaving a spherical soma
    radially, so that its length from the soma's surface is exact).
    Returns (id of the last point, its position, final direction).
    """
    pieces = max(1, math.ceil(length / step))
    h = length / pieces
    position, last = start.astype(float), parent
    for k in range(pieces):
        if not (straight_first and k == 0):
            direction = _turn(direction, rng, wiggle * rng.random())
        position = position + direction * h
        frac = (k + 1) / pieces
        last = writer.add(kind, position, radii[0] + (radii[1] - radii[0]) * frac, last)
    return last, position, direction


# --------------------------------------------------------------------------------------
# LW-1: exactly conforming
# --------------------------------------------------------------------------------------
def conforming_cell() -> str:
    rng = np.random.default_rng(20260301)
    writer = SwcWriter()
    soma_r = 8.0
    soma = writer.add(1, np.zeros(3), soma_r, -1)
    target = 1.1  # every tip at X = 1.1
    stems = [(2.6, np.array([1.0, 0.2, 0.1]), 3), (2.0, np.array([-0.6, 0.8, -0.1]), 2),
             (1.6, np.array([-0.4, -0.9, 0.2]), 3)]
    for diameter, heading, depth in stems:
        heading = heading / np.linalg.norm(heading)
        start = heading * soma_r
        # stack of (diameter, parent id, position, direction, remaining X, levels left, first section?)
        stack = [(diameter, soma, start, heading, target, depth, True)]
        while stack:
            d, parent, pos, direction, remaining, levels, first = stack.pop()
            terminal = levels == 0
            dx = remaining if terminal else remaining * rng.uniform(0.25, 0.45)
            length = dx * length_constant_um(d)
            last, end, direction = _walk(writer, 3, pos, direction, length, (d / 2, d / 2), parent, rng,
                                         straight_first=first)
            if terminal:
                continue
            share = rng.uniform(0.3, 0.7)  # uneven split, exact 3/2 rule
            for part, side in ((share, 1.0), (1.0 - share, -1.0)):
                child = (part * d**1.5) ** (2.0 / 3.0)
                new_dir = _turn(direction, rng, 0.5) if side > 0 else _turn(direction, rng, -0.5)
                stack.append((child, last, end, new_dir, remaining - dx, levels - 1, False))
    return writer.text([
        "Lumenia vadosa lateral-wing interneuron LW-1 (invented; Tidewater Station demo data)",
        "Built to satisfy Rall's conditions exactly: sum of d^3/2 of daughters equals d^3/2 of the parent",
        "at every branch point, uniform sections, every tip at electrotonic distance X = 1.1.",
        "Soma: one point (sphere of radius 8 um); stems start at its surface.",
    ])


# --------------------------------------------------------------------------------------
# PV-7: realistic-looking, not reducible
# --------------------------------------------------------------------------------------
def realistic_cell() -> str:
    rng = np.random.default_rng(77)
    writer = SwcWriter()
    # soma outline: 14 points on an ellipse in the z = 0 plane, chained, radius 0.25 µm
    ring = []
    for k in range(14):
        a = 2 * math.pi * k / 14
        ring.append(np.array([9.5 * math.cos(a), 7.0 * math.sin(a), 0.0]))
    soma_ids = [writer.add(1, ring[0], 0.25, -1)]
    for k in range(1, 14):
        soma_ids.append(writer.add(1, ring[k], 0.25, soma_ids[-1]))

    def grow(kind: int, anchor: int, pos: np.ndarray, direction: np.ndarray, diameter: float,
             max_order: int, length_range: tuple[float, float]) -> None:
        stack = [(anchor, pos, direction, diameter, 0)]
        while stack:
            parent, p, heading, d, order = stack.pop()
            length = rng.uniform(*length_range) * (1.0 + 0.4 * order)
            end_d = max(0.3, d * rng.uniform(0.78, 0.97))  # taper along the section
            last, end, heading = _walk(writer, kind, p, heading, length, (d / 2, end_d / 2), parent, rng,
                                       wiggle=0.25)
            stop = order >= max_order or end_d < 0.45 or rng.random() < 0.12 * order
            if stop:
                continue
            for side in (0.6, -0.6):
                child = max(0.3, end_d * rng.uniform(0.52, 0.86))
                stack.append((last, end, _turn(heading, rng, abs(side)), child, order + 1))

    basal = [(1, np.array([1.0, 0.3, -0.2]), 1.9), (4, np.array([0.2, 1.0, 0.1]), 1.4),
             (8, np.array([-1.0, 0.1, 0.3]), 1.7), (11, np.array([-0.3, -1.0, -0.2]), 1.2)]
    for index, heading, d in basal:
        heading = heading / np.linalg.norm(heading)
        grow(3, soma_ids[index], ring[index], heading, d, 4, (30.0, 90.0))
    apical_dir = np.array([0.2, 0.1, 1.0]) / np.linalg.norm([0.2, 0.1, 1.0])
    grow(4, soma_ids[0], ring[0], apical_dir, 3.4, 5, (50.0, 120.0))
    # axon: thin, long, two collaterals (left out by default)
    axon_dir = np.array([0.0, -0.2, -1.0]) / np.linalg.norm([0.0, -0.2, -1.0])
    last, end, heading = _walk(writer, 2, ring[7], axon_dir, 350.0, (0.45, 0.4), soma_ids[7], rng)
    for _ in range(2):
        _walk(writer, 2, end, _turn(heading, rng, 0.9), 120.0, (0.25, 0.2), last, rng)
        last, end, heading = _walk(writer, 2, end, heading, 200.0, (0.4, 0.35), last, rng)
    return writer.text([
        "Lumenia vadosa pedal-ventral interneuron PV-7 (invented; Tidewater Station demo data)",
        "Realistic-looking and NOT built to Rall's conditions: daughters 0.52-0.86 of the parent diameter,",
        "branches taper, tips end at different electrotonic distances.",
        "Soma: 14-point outline in the z = 0 plane; 4 basal dendrites (type 3), 1 apical (type 4), axon (type 2).",
    ])


# --------------------------------------------------------------------------------------
# the small symmetric demo tree, as a tree outline
# --------------------------------------------------------------------------------------
def demo_tree() -> str:
    d0 = 4.0 * UM
    d1 = d0 * 2.0 ** (-2.0 / 3.0)
    d2 = d0 * 4.0 ** (-2.0 / 3.0)
    names = ["trunk", "left", "right", "left.a", "left.b", "right.a", "right.b"]
    parents = [-1, 0, 0, 1, 1, 2, 2]
    lengths = [300 * UM, 300 * UM, 300 * UM, 200 * UM, 200 * UM, 200 * UM, 200 * UM]
    diameters = [d0, d1, d1, d2, d2, d2, d2]
    return format_outline(names, parents, lengths, diameters, soma_diameter=20 * UM, digits=12, comments=(
        "cabletheory tree outline v1 (lengths and diameters in µm unless a unit is given)",
        "Lumenia vadosa mechanosensory interneuron, idealised (invented; Tidewater Station demo data)",
        "Trunk 4 µm, two orders of daughters obeying the 3/2 rule exactly, 20 µm spherical soma.",
        "One branch per line; indentation gives the parent; every tip sealed (no end= given).",
    ))


def main() -> None:
    OUT.mkdir(parents=True, exist_ok=True)
    files = {
        "lumenia_lw1_conforming.swc": conforming_cell(),
        "lumenia_pv7_interneuron.swc": realistic_cell(),
        "lumenia_demo.outline": demo_tree(),
    }
    for name, text in files.items():
        (OUT / name).write_text(text, encoding="utf-8")
        print(f"wrote {OUT / name} ({text.count(chr(10))} lines)")


if __name__ == "__main__":
    main()
