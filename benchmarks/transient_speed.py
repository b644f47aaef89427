"""Speed and accuracy of the transient evaluators on 10^6 (X, T) points (prints its figures).

Goals (issue 15): a current-step response on 10^6 (X, T) points at the default tolerance in at
most 25 ms (median of several runs, the API warm); an alpha current on the same grid in at most
2× the step's time (median of CPU-time ratios, each alpha run right after a step run); and, at
equal accuracy (every value within 1e-8 of the final voltage), at
least 1,000× faster than a compartmental solve tuned as a careful user would (``_careful.py``:
the package's own discretisation, banded LU factorised once, graded steps, Richardson
extrapolation; the cheapest setting that reaches the error is timed, median of 3, its search is not).
Also printed: the worst error against mpmath at 30 digits on a sample of points (it must stay
below the reported bound), and the peak memory.
"""

from __future__ import annotations

import statistics
import sys
import time
import tracemalloc

import mpmath as mp
import numpy as np
from _careful import cheapest
from _table import Row, report

from cabletheory import precise
from cabletheory.transient import current_response

L, B = 1.0, 0.0
X = np.linspace(0.0, L, 1000)
T = np.linspace(0.0, 5.0, 1000)
ALPHA_PEAK = 0.1  # time to peak of the alpha current, in τm
ALPHA_OTHERS = (0.001, 3.0)  # a very short and a long time to peak, printed beside the goal's case
RUNS = 9
TARGET = 1e-8  # of the final voltage
STEP_GOAL, ALPHA_GOAL, RATIO_GOAL = 25e-3, 2.0, 1000.0
# compartmental settings, cheapest first: ((compartments, first, power, least), levels); the
# compartments are a multiple of 999 so that nodes fall on the 1,000 requested positions
LADDER = [((999, 128, 1.0, 1), 2), ((999, 256, 1.0, 1), 2), ((999, 512, 1.0, 1), 2), ((999, 128, 1.0, 1), 3)]


def timed(function, runs: int = RUNS, budget: float = 10.0) -> tuple[float, int, object]:
    """Median time of ``runs`` calls (fewer, at least one, once ``budget`` seconds are spent)."""
    times, result = [], None
    while len(times) < runs and sum(times) < budget:
        start = time.perf_counter()
        result = function()
        times.append(time.perf_counter() - start)
    return statistics.median(times), len(times), result


def compartmental(exact: np.ndarray) -> tuple[float | None, str]:
    """Time of the cheapest careful compartmental solve within TARGET on the grid (T > 0)."""
    from cabletheory import compartment
    from cabletheory.cable import Cylinder

    cylinder = Cylinder(2.0, 1.0, 0.01, 2e-6, 1e-3)  # λ = 1 mm, ℓ = 1 mm (L = 1), τm = 20 ms
    unit = 1.0 / cylinder.semi_infinite_input_resistance  # so that V comes out in units of I·R∞

    def build(n: int):
        c = compartment.discretise_cable(cylinder, n)
        current = np.zeros(c.size)
        current[0] = unit
        return c, current, np.arange(0, n + 1, n // (X.size - 1))

    final = 1.0 / np.tanh(L)  # V(0, ∞) in units of I·R∞
    found, tried = cheapest(build, T[1:] * cylinder.time_constant, LADDER, exact[1:], final, TARGET, repeats=3)
    if found is None:
        best = min(tried, key=lambda a: a.error)
        return None, f"did not reach {TARGET:g} (best {best.error:.1g} in {best.seconds:.2f} s: {best.setting})"
    return found.seconds, f"{found.setting}; worst error {found.error:.1g}"


def against_step(peak_at: float, runs: int = RUNS) -> tuple[float, float, int, tuple]:
    """Median CPU-time ratio alpha/step, each alpha run right after a step run (the machine is
    shared, so a ratio of neighbours says more than two separate medians); the alpha's median CPU
    time; the runs; the last alpha result."""
    ratios, times, result = [], [], None
    for _ in range(runs):
        start = time.process_time()
        current_response(X, 0.0, T, L, B)
        middle = time.process_time()
        result = current_response(X, 0.0, T, L, B, shape="alpha", time_to_peak=peak_at)
        end = time.process_time()
        ratios.append((end - middle) / max(middle - start, 1e-9))
        times.append(end - middle)
    return statistics.median(ratios), statistics.median(times), runs, result


def alpha_check(values: np.ndarray, bound: np.ndarray, count: int = 12) -> bool:
    """Worst error of the alpha current against mpmath (30 digits) on a sample, printed; within the bound?"""
    rng = np.random.default_rng(2)
    rows = np.concatenate(([1], rng.integers(1, T.size, count - 1)))  # the earliest time is the hardest
    cols = rng.integers(0, X.size, count)
    worst, beyond = 0.0, -np.inf
    with mp.workdps(30):
        for i, j in zip(rows, cols, strict=True):
            exact, _ = precise.current_value(X[j], 0.0, T[i], L, B, 0.0, "alpha", 0.0, ALPHA_PEAK, 1e-20)
            error = abs(values[i, j] - float(exact))
            worst, beyond = max(worst, error), max(beyond, error - bound[i, j])
    within = beyond <= 1e-12
    print(f"  alpha: worst error against mpmath (30 digits) on {count} points {worst:.1e}, largest reported "
          f"bound {bound.max():.1e} ({'within' if within else 'OUTSIDE'} each point's bound)")
    return within


def main() -> int:
    current_response(X[:10], 0.0, T[:10], L, B)  # warm-up (imports)
    current_response(X[:10], 0.0, T[:10], L, B, shape="alpha", time_to_peak=ALPHA_PEAK)
    step_time, step_runs, (values, bound, method) = timed(lambda: current_response(X, 0.0, T, L, B))
    alpha_ratio, alpha_time, alpha_runs, (alpha_values, alpha_bound, alpha_method) = against_step(ALPHA_PEAK)
    print(f"step response, sealed cylinder L = {L}: {values.size:,} points, median {step_time * 1e3:.1f} ms "
          f"of {step_runs} ({method})")
    print(f"  reported truncation bound: {bound.max():.2e} (units of I·R∞; tolerance 1e-10)")
    print(f"alpha current (peak at {ALPHA_PEAK} τm), same grid: median {alpha_time * 1e3:.1f} ms of CPU of "
          f"{alpha_runs}, {alpha_ratio:.2f}x the step run just before it ({alpha_method}); "
          f"bound {alpha_bound.max():.2e}")
    alpha_within = alpha_check(alpha_values, alpha_bound)
    for peak_at in ALPHA_OTHERS:
        r, t, _, (_, b, how) = against_step(peak_at, runs=3)
        print(f"  peak at {peak_at:g} τm: {t * 1e3:.1f} ms of CPU, {r:.2f}x the step ({how}); bound {b.max():.2e}")
    tracemalloc.start()
    current_response(X, 0.0, T, L, B)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    print(f"  peak memory of the step evaluation: {peak / 1e6:.0f} MB ({peak / values.size:.0f} bytes per point; "
          "the result and its bound take 16)")

    rng = np.random.default_rng(1)
    rows = rng.integers(0, T.size, 40)
    cols = rng.integers(0, X.size, 40)
    worst = 0.0
    with mp.workdps(30):
        for i, j in zip(rows, cols, strict=True):
            exact, _ = precise.current_value(X[j], 0.0, T[i], L, B, 0.0, "step", 0.0, 0.0, 1e-20)
            worst = max(worst, abs(values[i, j] - float(exact)))
    within = worst <= bound.max() + 1e-12
    print(f"  worst error against mpmath (30 digits) on {rows.size} points: {worst:.2e} "
          f"({'within' if within else 'OUTSIDE'} the reported bound)")
    other, how = compartmental(values)
    print(f"  compartmental solve within {TARGET:g} of the final voltage: "
          f"{'-' if other is None else f'{other:.2f} s'} ({how})")
    ratio = None if other is None else other / step_time
    table = [
        Row("10⁶-point step response (API)", f"{step_time * 1e3:.0f} ms (median of {step_runs})",
            f"≤ {STEP_GOAL * 1e3:.0f} ms", step_time <= STEP_GOAL and within),
        Row("alpha current on 10⁶ points, against the step", f"{alpha_ratio:.1f}× "
            f"({alpha_time * 1e3:.0f} ms of CPU, median of {alpha_runs} pairs)", f"≤ {ALPHA_GOAL:g}×",
            alpha_ratio <= ALPHA_GOAL and alpha_within),
        Row(f"10⁶-point step, compartmental solve at equal accuracy ({TARGET:g} of the final voltage), against exact",
            f"{ratio:.0f}× ({other:.2f} s / {step_time * 1e3:.0f} ms)" if ratio is not None and other is not None
            else how, f"≥ {RATIO_GOAL:,.0f}×", None if ratio is None else ratio >= RATIO_GOAL),
    ]
    return report(table)


if __name__ == "__main__":
    sys.exit(main())
