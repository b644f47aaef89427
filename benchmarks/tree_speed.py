"""Speed of the tree audit and exact input resistance, and its growth with the number of points.

Goal (issue 4): audit + exact steady-state input resistance of a generated tree of 100,000
SWC points in at most 1 s, growing linearly with the number of points.

The tree is generated (deterministic seed): a soma and 8 stems that branch in two, with
branches of 10–60 points whose diameters shrink along the way. The SWC text is
parsed once (timed separately); "analysis" is tree_from_swc + analyse_tree (branches, 3/2
ratios, tip distances, equivalent cylinder and cable, exact tips-inward input resistance).
Best of 3 runs. Prints the figures and exits 1 if the 100,000-point goal is missed.
"""

from __future__ import annotations

import sys
import time
import tracemalloc

import numpy as np

from cabletheory.morphology import parse_swc
from cabletheory.tree import analyse_tree, tree_from_swc

GOAL_SECONDS = 1.0
SIZES = (25_000, 50_000, 100_000, 200_000)
RUNS = 3


def generate_swc(points: int, seed: int = 4) -> str:
    """An SWC text with exactly ``points`` points (soma included)."""
    rng = np.random.default_rng(seed)
    lines = ["1 1 0 0 0 8 -1"]
    # open branch ends: (parent id, position, direction, radius)
    ends = []
    for k in range(8):
        a = 2 * np.pi * k / 8
        ends.append((1, np.array([8 * np.cos(a), 8 * np.sin(a), 0.0]), np.array([np.cos(a), np.sin(a), 0.0]), 1.2))
    count = 1
    while count < points:
        parent, pos, heading, radius = ends.pop(int(rng.integers(len(ends)))) if len(ends) > 64 else ends.pop(0)
        for _ in range(int(rng.integers(10, 61))):
            if count >= points:
                break
            heading = heading + rng.normal(scale=0.2, size=3)
            heading /= np.linalg.norm(heading)
            pos = pos + 5.0 * heading
            radius = max(0.15, radius * 0.995)
            count += 1
            lines.append(f"{count} 3 {pos[0]:.3f} {pos[1]:.3f} {pos[2]:.3f} {radius:.4f} {parent}")
            parent = count
        for _ in range(2):
            ends.append((parent, pos, heading + rng.normal(scale=0.5, size=3), radius * 0.7))
    return "\n".join(lines) + "\n"


def best(fn, runs: int = RUNS) -> tuple[float, object]:
    times, result = [], None
    for _ in range(runs):
        start = time.perf_counter()
        result = fn()
        times.append(time.perf_counter() - start)
    return min(times), result


def main() -> int:
    print(f"tree audit + exact input resistance, best of {RUNS} (Rm 20 kΩ·cm², Ri 200 Ω·cm)")
    print(f"  {'points':>8}  {'parse SWC':>10}  {'analysis':>10}  {'per point':>10}  {'branch pts':>10}  "
          f"{'tips':>6}  R_in")
    at_goal = None
    per_point = []
    for size in SIZES:
        text = generate_swc(size)
        t_parse, points = best(lambda text=text: parse_swc(text, "generated.swc"))
        t_analysis, report = best(lambda points=points: analyse_tree(tree_from_swc(points), 2.0, 2.0))
        per_point.append(t_analysis / size)
        if size == 100_000:
            at_goal = t_analysis
        print(f"  {size:>8}  {t_parse * 1e3:8.1f} ms  {t_analysis * 1e3:8.1f} ms  {t_analysis / size * 1e6:7.2f} µs"
              f"  {len(report.branch_points.ids):>10}  {len(report.tips.ids):>6}  "
              f"{report.input_resistance / 1e6:.4g} MΩ")
    text = generate_swc(100_000)
    tracemalloc.start()
    analyse_tree(tree_from_swc(parse_swc(text, "generated.swc")), 2.0, 2.0)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    print(f"  peak memory of parse + analysis at 100,000 points: {peak / 1e6:.1f} MB "
          f"({peak / 100_000:.0f} bytes per point; tracemalloc)")
    growth = per_point[-1] / per_point[0]
    print(f"  time per point, largest vs smallest size: x{growth:.2f} (1.0 = linear)")
    ok = at_goal is not None and at_goal <= GOAL_SECONDS
    print(f"  goal: analysis of 100,000 points <= {GOAL_SECONDS:g} s: {'met' if ok else 'MISSED'} "
          f"({at_goal:.3f} s)")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
