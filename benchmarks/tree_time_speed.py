"""Speed of exact time courses on a large tree, and what a compartmental solve needs for the same accuracy.

Goal (issue 16): a 1,000-branch tree, a current step at a tip, 100 times at 10 points, every value
within 1e-8 of the final voltage at the stimulated tip, in at most 2 s on one core; and at least
100 times faster than a compartmental solve that reaches the same accuracy.

The tree is generated (deterministic seed): a 20 µm soma and 6 stems that branch in two until
there are 1,000 branches; each branch is a chain of 4-12 cylinders (as an SWC file gives them)
whose diameter shrinks along the way, 20-120 µm long in all, so that the tree is far from Rall's
conditions. Rm 20 kΩ·cm², Ri 150 Ω·cm, Cm 1 µF/cm², sealed tips.

Exact solution: cabletheory.tree_time.tree_response with tolerance 1e-8 (relative to the final
voltage at the stimulus site); its own error estimate is printed. Median of 3 runs.

Compartmental: the cheapest careful solve that reaches the same accuracy (``_careful.py``: the
package's own discretisation, sparse LU factorised once per step size, graded steps and
Richardson extrapolation over 2, 4 and 8 compartments per cylinder), timed once (its search is
not counted). Prints the figures; exits 1 if a goal is missed.
"""

from __future__ import annotations

import statistics
import sys
import time
import tracemalloc

import _one_core  # noqa: F401  (one BLAS thread: the goal is on one core)
import numpy as np
from _careful import cheapest
from _table import Row, report

from cabletheory import compartment
from cabletheory.case import CurrentStep
from cabletheory.morphology import Outline
from cabletheory.tree import tree_from_outline
from cabletheory.tree_laplace import PassiveTree, Site, root_site
from cabletheory.tree_time import tree_response

GOAL_SECONDS = 2.0
BRANCHES = 1000
RM, RI, CM = 2.0, 1.5, 0.01
TOLERANCE = 1e-8
RUNS = 9  # the exact solve takes 0.05-0.2 s on a shared machine: nine runs steady its median
RATIO_GOAL = 100.0
# compartmental settings, cheapest first: ((compartments per cylinder, first, power, least), levels)
LADDER = [((2, 64, 1.0, 2), 3), ((2, 64, 1.0, 4), 3)]


def generate(branches: int = BRANCHES, seed: int = 16) -> tuple[Outline, list[int]]:
    """Pieces of a generated tree, and for each branch the index of its last piece."""
    rng = np.random.default_rng(seed)
    parents: list[int] = []
    lengths: list[float] = []
    diameters: list[float] = []
    ends: list[int] = []
    open_ends = [(-1, d) for d in rng.uniform(2.0, 4.0, 6)]
    while len(ends) < branches:
        parent, d = open_ends.pop(int(rng.integers(len(open_ends))))
        pieces = int(rng.integers(4, 13))
        total = rng.uniform(20.0, 120.0)
        for k in range(pieces):
            parents.append(parent)
            lengths.append(total / pieces * 1e-6)
            diameters.append(max(0.3, d * (1 - 0.04 * k)) * 1e-6)
            parent = len(parents) - 1
        ends.append(parent)
        d_end = diameters[-1] * 1e6
        if len(ends) + len(open_ends) < branches:
            for share in rng.dirichlet([2.0, 2.0]):
                open_ends.append((parent, max(0.3, (share * d_end**1.5) ** (2 / 3) * rng.uniform(0.9, 1.3))))
    n = len(parents)
    d = np.asarray(diameters)
    outline = Outline(source="generated", names=tuple(f"p{i}" for i in range(n)),
                           parents=np.asarray(parents, dtype=np.int64), lengths=np.asarray(lengths), diameters=d,
                           end_diameters=d, lines=np.arange(1, n + 1, dtype=np.int64), soma_diameter=20e-6)
    return outline, ends


def main() -> int:
    outline, _ = generate()
    tree = tree_from_outline(outline)
    cell = PassiveTree(tree, RM, RI, CM)
    has_child = np.zeros(len(tree), dtype=bool)
    has_child[tree.parents[tree.parents >= 0]] = True
    tips = np.flatnonzero(~has_child)
    stim_piece = int(tips[len(tips) // 2])
    stim = Site(stim_piece, float(tree.lengths[stim_piece]))
    rng = np.random.default_rng(3)
    chosen = rng.choice(len(tree), 8, replace=False)
    record = [root_site(), stim] + [Site(int(i), 0.5 * float(tree.lengths[i])) for i in chosen]
    times = np.arange(1, 101) * 0.5e-3  # 0.5 ms .. 50 ms
    step = CurrentStep(10e-12)
    print(f"tree: {BRANCHES} branches, {len(tree)} cylinders, soma; step at a tip, {times.size} times at "
          f"{len(record)} points, tolerance {TOLERANCE:g} of the final voltage at the tip")

    elapsed = []
    result = None
    for _ in range(RUNS):
        start = time.perf_counter()
        result = tree_response(cell, step, times, stim, record, tolerance=TOLERANCE)
        elapsed.append(time.perf_counter() - start)
    assert result is not None
    exact_time = statistics.median(elapsed)
    tracemalloc.start()
    tree_response(cell, step, times, stim, record, tolerance=TOLERANCE)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    final = result.reference_voltage
    growth = []
    for branches in (250, 500):  # memory and time against tree size (the same recipe, fewer branches)
        small = PassiveTree(tree_from_outline(generate(branches)[0]), RM, RI, CM)
        small_tips = np.flatnonzero(np.bincount(small.tree.parents[small.tree.parents >= 0],
                                                minlength=len(small.tree)) == 0)
        at = Site(int(small_tips[0]), float(small.tree.lengths[small_tips[0]]))
        start = time.perf_counter()
        tree_response(small, step, times, at, [root_site(), at], tolerance=TOLERANCE)
        seconds = time.perf_counter() - start
        tracemalloc.start()
        tree_response(small, step, times, at, [root_site(), at], tolerance=TOLERANCE)
        growth.append((branches, len(small.tree), seconds, tracemalloc.get_traced_memory()[1]))
        tracemalloc.stop()
    growth.append((BRANCHES, len(tree), exact_time, peak))
    print("size: " + "; ".join(f"{b} branches ({n} cylinders) {t:.3f} s, {m / 2**20:.1f} MiB"
                                for b, n, t, m in growth))
    print(f"exact (Laplace + hyperbolic contours): {exact_time:.3f} s (median of {RUNS}), peak memory "
          f"{peak / 2**20:.1f} MiB; estimated error {result.error_bound / final:.2g} of the final voltage "
          f"({final * 1e3:.4g} mV); {result.method}")

    def build(n: int):
        c = compartment.discretise_tree(tree.parents, tree.lengths, tree.distal_diameters, RM, RI, CM, n,
                                        soma_area=tree.soma_area)
        # recorded nodes: root, stimulated tip, and the middle of each chosen piece (n is even)
        idx = [0, int(compartment.branch_nodes(c, stim_piece)[-1])]
        for i in chosen:
            own = compartment.branch_nodes(c, int(i))
            idx.append(int(own[len(own) // 2]))
        current = np.zeros(c.size)
        current[idx[1]] = step.amplitude
        return c, current, np.asarray(idx)

    found, tried = cheapest(build, times, LADDER, result.voltage, final, TOLERANCE)
    if found is None:
        best = min(tried, key=lambda a: a.error)
        ratio = None
        measured = f"not reached (best {best.error:.1g} of the final voltage in {best.seconds:.1f} s)"
    else:
        ratio = found.seconds / exact_time
        measured = f"{ratio:.0f}× ({found.seconds:.1f} s / {exact_time:.2f} s)"
        print(f"compartmental solve within {TOLERANCE:g}: {found.seconds:.1f} s ({found.setting}; worst error "
              f"{found.error:.1g}); ratio to the exact solution {ratio:.0f}")
    return report([
        Row(f"exact time course, {BRANCHES}-branch tree, step at a tip, {times.size} times × {len(record)} points, "
            f"error ≤ {TOLERANCE:g} of the final voltage", f"{exact_time:.2f} s (median of {RUNS}; estimated error "
            f"{result.error_bound / final:.1g})", f"≤ {GOAL_SECONDS:g} s on one core",
            exact_time <= GOAL_SECONDS and result.error_bound <= TOLERANCE * final),
        Row(f"the same, compartmental solve at equal accuracy ({TOLERANCE:g}), against exact", measured,
            f"≥ {RATIO_GOAL:.0f}×", None if ratio is None else ratio >= RATIO_GOAL),
    ])


if __name__ == "__main__":
    sys.exit(main())
