"""Generate an invented archive of varied morphologies for ``cabletheory survey`` (deterministic).

Scenario: the invented Tidewater Station keeps the reconstructions of its invented sea slug,
*Lumenia vadosa*, in two collections, one per tide pool. None of these cells exists. Each cell
is one of three kinds, in realistic ranges for passive dendrites (diameters 0.3-4 µm, tips a few
hundred µm from the soma, electrotonic lengths near 1):

* ``conforming``: built to Rall's conditions exactly (3/2 rule at every branch point, uniform
  branches, every tip at the same electrotonic distance), with uneven daughter splits;
* ``near``: a conforming cell whose diameters and lengths were measured with small errors
  (1-6 %), so that some pass the audit's default tolerances and some do not;
* ``realistic``: daughters 0.5-0.9 of their parent's diameter, tapering branches, tips at
  different distances; sometimes an axon.

Most cells have a one-point spherical soma; some have none (input at the root point). A few
files are broken on purpose (cut short, a missing parent, no points), to show that a survey
reports them as rows instead of stopping.

Run ``python scripts/make_survey_archive.py`` to rewrite the small bundled archive under
``cabletheory/data/archive/``; benchmarks and tests call :func:`make_archive` for larger ones.
"""

from __future__ import annotations

import argparse
import math
import shutil
from pathlib import Path

import numpy as np

OUT = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "archive"
RM_OVER_RI = 1.0  # m (Rm/Ri of the Station's working values); electrotonic equality does not depend on it
UM = 1e-6

# a branch before it is laid out as points: (parent branch or -1, length µm, start diameter µm,
# end diameter µm, SWC type)
Branch = tuple[int, float, float, float, int]


def _lambda_um(diameter_um: float) -> float:
    return math.sqrt(RM_OVER_RI * diameter_um * UM / 4.0) / UM


def _conforming(rng: np.random.Generator) -> list[Branch]:
    """Stems that branch in two with the exact 3/2 rule, every tip at one electrotonic distance."""
    branches: list[Branch] = []
    target = rng.uniform(0.6, 1.5)
    for _ in range(int(rng.integers(2, 6))):
        stack = [(-1, rng.uniform(1.2, 3.5), target, int(rng.integers(1, 4)))]
        while stack:
            parent, d, remaining, levels = stack.pop()
            dx = remaining if levels == 0 else remaining * rng.uniform(0.25, 0.5)
            branches.append((parent, dx * _lambda_um(d), d, d, 3))
            me = len(branches) - 1
            if levels:
                share = rng.uniform(0.3, 0.7)
                for part in (share, 1.0 - share):
                    stack.append((me, (part * d**1.5) ** (2.0 / 3.0), remaining - dx, levels - 1))
    return branches


def _near(rng: np.random.Generator) -> list[Branch]:
    """A conforming cell measured with errors of a few per cent."""
    error = rng.choice([0.01, 0.03, 0.06])
    out = []
    for parent, length, d0, _d1, kind in _conforming(rng):
        d = d0 * (1.0 + rng.normal(scale=error))
        out.append((parent, length * (1.0 + rng.normal(scale=error)), d, d, kind))
    return out


def _realistic(rng: np.random.Generator) -> list[Branch]:
    """Random daughters, tapers, uneven lengths; an axon in one cell of three."""
    branches: list[Branch] = []
    for s in range(int(rng.integers(3, 7))):
        kind = 4 if s == 0 else 3
        stack = [(-1, rng.uniform(1.0, 3.6), 0)]
        while stack:
            parent, d, order = stack.pop()
            end = max(0.3, d * rng.uniform(0.78, 0.97))
            branches.append((parent, rng.uniform(30.0, 110.0) * (1.0 + 0.3 * order), d, end, kind))
            me = len(branches) - 1
            if order < 4 and end >= 0.45 and rng.random() > 0.12 * order:
                for _ in range(2):
                    stack.append((me, max(0.3, end * rng.uniform(0.5, 0.9)), order + 1))
    if rng.random() < 1 / 3:
        branches.append((-1, rng.uniform(250.0, 450.0), 0.5, 0.4, 2))
    return branches


KINDS = {"conforming": _conforming, "near": _near, "realistic": _realistic}


def _unit(v: np.ndarray) -> np.ndarray:
    return v / np.linalg.norm(v)


def cell_swc(kind: str, seed: int, points: int, soma: bool = True, title: str = "") -> str:
    """One invented cell of ``kind`` with about ``points`` SWC points, as SWC text."""
    rng = np.random.default_rng(seed)
    branches = KINDS[kind](rng)
    total = sum(b[1] for b in branches)
    step = max(total / max(points, len(branches) + 1), 0.5)
    rows: list[str] = []
    soma_radius = rng.uniform(5.0, 10.0) if soma else 0.0
    if soma:
        rows.append(f"1 1 0 0 0 {soma_radius:.4f} -1")
    else:
        rows.append("1 3 0 0 0 1 -1")
    # each branch ends at (point id, position, heading)
    ends: list[tuple[int, np.ndarray, np.ndarray]] = []
    for parent, length, d0, d1, swc_type in branches:
        if parent < 0:
            heading = _unit(rng.normal(size=3))
            pid, pos = 1, heading * soma_radius
            straight = True
        else:
            pid, pos, heading = ends[parent]
            heading = _unit(heading + rng.normal(scale=0.6, size=3))
            straight = False
        n = max(1, math.ceil(length / step))
        h = length / n
        for k in range(n):
            if not (straight and k == 0):
                heading = _unit(heading + rng.normal(scale=0.12, size=3))
            pos = pos + h * heading
            radius = 0.5 * (d0 + (d1 - d0) * (k + 1) / n)
            rows.append(f"{len(rows) + 1} {swc_type} {pos[0]:.4f} {pos[1]:.4f} {pos[2]:.4f} {radius:.6g} {pid}")
            pid = len(rows)
        ends.append((pid, pos, heading))
    header = [f"# {title or f'Lumenia vadosa interneuron, {kind} (invented; Tidewater Station archive)'}",
              f"# kind: {kind}; seed {seed}; soma: {'one-point sphere' if soma else 'none'}",
              "# id type x y z radius parent   (µm)"]
    return "\n".join(header + rows) + "\n"


BROKEN = {
    # cut short in the middle of a line, as by an interrupted copy
    "cut_short.swc": lambda text: text[: len(text) * 2 // 3].rsplit(" ", 2)[0] + "\n",
    # a point whose parent was lost
    "orphan.swc": lambda text: text.rstrip("\n").rsplit(" ", 1)[0] + " 9999\n",
    # a header and nothing else
    "no_points.swc": lambda text: "\n".join(ln for ln in text.splitlines() if ln.startswith("#")) + "\n",
}


def make_archive(folder: str | Path, cells: int, points: int = 3000, seed: int = 2026, broken: int = 0,
                 distinct: int | None = None) -> list[Path]:
    """Write ``cells`` invented cells (about ``points`` points each) in two collections under
    ``folder``, plus ``broken`` broken files; with ``distinct`` < ``cells``, only that many are
    generated and the rest are copies under other names (fast for large benchmark archives)."""
    folder = Path(folder)
    pools = [folder / "north_pool", folder / "south_pool"]
    for p in pools:
        p.mkdir(parents=True, exist_ok=True)
    written: list[Path] = []
    rng = np.random.default_rng(seed)
    unique = cells if distinct is None else min(distinct, cells)
    for k in range(cells):
        path = pools[k % 2] / f"lumenia_{k + 1:05d}.swc"
        if k < unique:
            kind = ("conforming", "near", "realistic")[int(rng.integers(3))]
            soma = bool(rng.random() < 0.85)
            path.write_text(cell_swc(kind, seed * 100_003 + k, points, soma), encoding="utf-8")
        else:
            shutil.copyfile(written[k % unique], path)
        written.append(path)
    template = cell_swc("realistic", seed, max(points, 40))
    for name, damage in list(BROKEN.items())[:broken]:
        path = pools[0] / f"lumenia_{name}"
        path.write_text(damage(template), encoding="utf-8")
        written.append(path)
    return written


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--folder", default=str(OUT), help="where to write (default: the bundled archive)")
    parser.add_argument("--cells", type=int, default=30)
    parser.add_argument("--points", type=int, default=250, help="about this many SWC points per cell")
    parser.add_argument("--seed", type=int, default=2026)
    args = parser.parse_args()
    folder = Path(args.folder)
    if folder == OUT and folder.exists():
        shutil.rmtree(folder)
    files = make_archive(folder, args.cells, args.points, args.seed, broken=len(BROKEN))
    print(f"wrote {len(files)} files under {folder}")


if __name__ == "__main__":
    main()
