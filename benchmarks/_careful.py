r"""A compartmental solve as a careful user would tune it to reach a tight error (benchmarks only).

The spatial discretisation is the package's own (:mod:`cabletheory.compartment`: vertex-centred,
second order in Δx). Time stepping is Crank–Nicolson, second order in Δt (Crank & Nicolson 1947),
started with four backward-Euler half-steps (Rannacher 1984 [MEM]), with these refinements:

* every matrix is factorised once per distinct step and reused: LAPACK's tridiagonal LU
  (``dgttrf``/``dgttrs`` through scipy) for an unbranched cable, scipy's sparse LU otherwise;
* graded steps: each interval between two requested times is cut into a number of equal steps
  that falls with time, ``ceil(s · (t_1 / t)^p)`` but at least ``s_min``, because the response to a
  step changes fastest just after the onset;
* Richardson extrapolation: the same solve with every compartment and every step halved;
  errors of order Δx² and Δt² cancel in (4 V_fine − V_coarse) / 3 (Richardson 1911 [MEM], common
  practice [CP]).

The benchmarks search a few settings of (compartments, s, p) and keep the cheapest that meets the
target error against the exact answer; that is more than a user could do (a user does not know
the exact answer), so the ratio it gives favours the compartmental side.
"""

from __future__ import annotations

import itertools
import math
import statistics
import time
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from cabletheory import compartment


def graded_steps(times: np.ndarray, first: int, power: float, least: int) -> tuple[np.ndarray, np.ndarray]:
    """Step sizes from 0 through every requested time, and the step count at each time.

    The interval ending at ``times[j]`` gets ``max(least, ceil(first · (times[0]/times[j])^power))``
    equal steps (the first interval ``first``).
    """
    bounds = np.concatenate(([0.0], times))
    widths = np.diff(bounds)
    counts = np.maximum(least, np.ceil(first * (times[0] / times) ** power - 1e-9)).astype(np.int64)
    steps = np.repeat(widths / counts, counts)
    return steps, np.cumsum(counts)


def _solver(c: compartment.Compartments) -> Callable[[float, float], Callable[[np.ndarray], np.ndarray]]:
    """factory(dt, theta) -> solve(rhs) for (C/dt + θG) V = rhs, factorised once per (dt, θ)."""
    import scipy.sparse
    import scipy.sparse.linalg
    from scipy.linalg import lapack

    g = c.conductance.tocsr()
    cap = np.asarray(c.capacitance)
    tridiagonal = all(abs(i - j) <= 1 for i, j in zip(*g.nonzero(), strict=True))
    cache: dict[tuple[float, float], Callable[[np.ndarray], np.ndarray]] = {}
    if tridiagonal:
        main, upper, lower = g.diagonal(0), g.diagonal(1), g.diagonal(-1)

    def factory(dt: float, theta: float) -> Callable[[np.ndarray], np.ndarray]:
        key = (dt, theta)
        if key not in cache:
            if tridiagonal:
                dl, d, du, du2, ipiv, info = lapack.dgttrf(theta * lower, cap / dt + theta * main, theta * upper)
                assert info == 0

                def solve(rhs: np.ndarray, f=(dl, d, du, du2, ipiv)) -> np.ndarray:
                    x, _ = lapack.dgttrs(*f, rhs)
                    return x
            else:
                lu = scipy.sparse.linalg.splu((scipy.sparse.diags(cap / dt) + theta * g).tocsc())
                solve = lu.solve
            cache[key] = solve
        return cache[key]

    return factory


def march(c: compartment.Compartments, current: np.ndarray, steps: np.ndarray, marks: np.ndarray,
          record: np.ndarray) -> np.ndarray:
    """Crank–Nicolson (Rannacher start) from rest under a current switched on at t = 0 and held.

    ``steps``: the step sizes; ``marks``: after how many steps each output is taken; ``record``:
    the nodes kept. Returns V[output, recorded node].
    """
    factory = _solver(c)
    g = c.conductance.tocsr()
    cap = np.asarray(c.capacitance)
    out = np.empty((marks.size, record.size))
    v = np.zeros(c.size)
    j = 0
    for k, dt in enumerate(steps):
        if k < 2:  # two backward-Euler half-steps for each of the first two steps
            solve = factory(dt / 2, 1.0)
            v = solve(cap / (dt / 2) * v + current)
            v = solve(cap / (dt / 2) * v + current)
        else:
            v = factory(dt, 0.5)(cap / dt * v - 0.5 * (g @ v) + current)
        while j < marks.size and marks[j] == k + 1:
            out[j] = v[record]
            j += 1
    return out


@dataclass(frozen=True, slots=True)
class Attempt:
    setting: str
    seconds: float
    error: float


def richardson(build: Callable[[int], tuple[compartment.Compartments, np.ndarray, np.ndarray]],
               times: np.ndarray, setting: tuple[int, int, float, int], levels: int,
               exact: np.ndarray, scale: float, clock: Callable[[], float] = time.perf_counter) -> Attempt:
    """Solve at ``levels`` refinements (every compartment and step halved each time), extrapolate
    repeatedly (orders 2, 4, ...), and give the time of all the solves and the worst error / scale.

    ``build(k)`` gives the discretisation with ``k`` compartments (per cylinder, or in all), the
    current per node and the recorded nodes (the same places at every k); ``setting`` is
    ``(k, first, power, least)`` of the coarsest level (see :func:`graded_steps`); ``clock`` times
    the solves (wall clock by default, ``time.process_time`` for CPU time).
    """
    compartments, first, power, least = setting
    table: list[np.ndarray] = []
    seconds = 0.0
    for level in range(levels):
        scale_up = 2**level
        start = clock()
        c, current, record = build(compartments * scale_up)
        steps, marks = graded_steps(times, first * scale_up, power, least * scale_up)
        table.append(march(c, current, steps, marks, record))
        seconds += clock() - start
    for order in range(1, levels):  # Richardson's table, column by column
        factor = 4.0**order
        table = [(factor * fine - coarse) / (factor - 1.0) for coarse, fine in itertools.pairwise(table)]
    error = float(np.abs(table[0] - exact).max() / scale)
    if not math.isfinite(error):
        raise RuntimeError("the compartmental solve diverged")
    label = (f"{compartments}{''.join(f'→{compartments * 2**k}' for k in range(1, levels))} compartments, "
             f"steps per interval max({first}·(t₁/t)^{power:g}, {least}) and halved")
    return Attempt(label, seconds, error)


def cheapest(build: Callable[[int], tuple[compartment.Compartments, np.ndarray, np.ndarray]],
             times: np.ndarray, ladder: list[tuple[tuple[int, int, float, int], int]],
             exact: np.ndarray, scale: float, target: float, repeats: int = 1) -> tuple[Attempt | None, list[Attempt]]:
    """Try the settings of ``ladder`` (cheapest first) until one reaches ``target``; that one is
    timed ``repeats`` times in all (median)."""
    tried = []
    for setting, levels in ladder:
        attempt = richardson(build, times, setting, levels, exact, scale)
        tried.append(attempt)
        print(f"  compartmental: {attempt.setting}, {levels} levels: {attempt.seconds:.2f} s, "
              f"worst error {attempt.error:.2g} of the final voltage", flush=True)
        if attempt.error <= target:
            seconds = [attempt.seconds] + [richardson(build, times, setting, levels, exact, scale).seconds
                                           for _ in range(repeats - 1)]
            return Attempt(attempt.setting, statistics.median(seconds), attempt.error), tried
    return None, tried


def fastest(build: Callable[[int], tuple[compartment.Compartments, np.ndarray, np.ndarray]],
            times: np.ndarray, ladder: list[tuple[tuple[int, int, float, int], int]],
            exact: np.ndarray, scale: float, target: float, repeats: int = 3,
            clock: Callable[[], float] = time.perf_counter) -> tuple[Attempt | None, list[Attempt]]:
    """Try every setting of ``ladder`` and keep the fastest that reaches ``target``, timed
    ``repeats`` times in all (median) with ``clock``; the search itself is not timed."""
    tried = []
    for setting, levels in ladder:
        attempt = richardson(build, times, setting, levels, exact, scale, clock)
        tried.append((attempt, setting, levels))
        print(f"  compartmental: {attempt.setting}, {levels} levels: {attempt.seconds:.3f} s, "
              f"worst error {attempt.error:.2g} of the final voltage", flush=True)
    good = [t for t in tried if t[0].error <= target]
    if not good:
        return None, [t[0] for t in tried]
    best, setting, levels = min(good, key=lambda t: t[0].seconds)
    seconds = [best.seconds] + [richardson(build, times, setting, levels, exact, scale, clock).seconds
                                for _ in range(repeats - 1)]
    return Attempt(best.setting, statistics.median(seconds), best.error), [t[0] for t in tried]
