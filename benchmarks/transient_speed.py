"""Speed and accuracy of the transient evaluators (plain script; prints its figures).

Goal: a current-step response on 10^6 (X, T) points at the default tolerance in <= 1 s, with the
worst error against mpmath at 30 digits below the reported bound, and >= 100x faster than both a
plain mpmath loop (timed on a sample and scaled up) and a compartmental solve
(cabletheory.compartment, Crank-Nicolson) refined until its worst error on the same grid is below
1e-4 of the final voltage.
"""

from __future__ import annotations

import time
import tracemalloc

import mpmath as mp
import numpy as np

from cabletheory import precise
from cabletheory.transient import current_response

L, B = 1.0, 0.0
X = np.linspace(0.0, L, 1000)
T = np.linspace(0.0, 5.0, 1000)


def compartment_time(exact: np.ndarray) -> tuple[float, str]:
    """Time of the first compartmental solve (grid and step refined together) whose worst error on
    the benchmark grid is below 1e-4 of the final voltage; the refinement steps are not counted."""
    from cabletheory import compartment
    from cabletheory.cable import Cylinder

    cylinder = Cylinder(2.0, 1.0, 0.01, 2e-6, 1e-3)  # λ = 1 mm, ℓ = 1 mm (L = 1), τm = 20 ms
    tau, lam = cylinder.time_constant, cylinder.length_constant
    times = T * tau
    final = 1.0 / np.tanh(L)  # V(0, ∞) in units of I·R∞
    for compartments, substeps in ((16, 2), (32, 4), (64, 8), (128, 16), (256, 32), (512, 64)):
        c = compartment.discretise_cable(cylinder, compartments)
        current = np.zeros(c.size)
        current[0] = 1.0 / cylinder.semi_infinite_input_resistance  # so that V comes out in units of I·R∞
        start = time.perf_counter()
        nodes = compartment.integrate(c, current, times, step=times[1] / substeps)
        approx = compartment.sample(c, nodes, X * lam)
        elapsed = time.perf_counter() - start
        error = np.abs(approx - exact).max() / final
        if error <= 1e-4:
            return elapsed, f"{compartments} compartments, Δt = τm/{round(substeps / T[1])}: worst error {error:.1e}"
    return elapsed, f"did not reach 1e-4 (worst error {error:.1e} with {compartments} compartments)"


def main() -> None:
    current_response(X[:10], 0.0, T[:10], L, B)  # warm-up (imports)
    start = time.perf_counter()
    values, bound, method = current_response(X, 0.0, T, L, B)
    elapsed = time.perf_counter() - start
    print(f"step response, sealed cylinder L = {L}: {values.size:,} points in {elapsed:.3f} s ({method})")
    print(f"  reported truncation bound: {bound.max():.2e} (units of I·R∞; tolerance 1e-10 × coth L)")
    tracemalloc.start()
    current_response(X, 0.0, T, L, B)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    print(f"  peak memory of the evaluation: {peak / 1e6:.0f} MB ({peak / values.size:.0f} bytes per point; "
          "the result and its bound take 16)")

    rng = np.random.default_rng(1)
    rows = rng.integers(0, T.size, 40)
    cols = rng.integers(0, X.size, 40)
    start = time.perf_counter()
    worst = 0.0
    with mp.workdps(30):
        for i, j in zip(rows, cols, strict=True):
            exact, _ = precise.current_value(X[j], 0.0, T[i], L, B, 0.0, "step", 0.0, 0.0, 1e-20)
            worst = max(worst, abs(values[i, j] - float(exact)))
    per_point = (time.perf_counter() - start) / rows.size
    print(f"  worst error against mpmath (30 digits) on {rows.size} points: {worst:.2e}")
    print(f"  mpmath loop: {per_point * 1e3:.2f} ms per point -> {per_point * values.size:.0f} s for the grid; "
          f"speed-up {per_point * values.size / elapsed:.0f}x")
    other, how = compartment_time(values)
    print(f"  compartmental solve reaching 1e-4 ({how}): {other:.3f} s; speed-up {other / elapsed:.0f}x")
    verdicts = {
        "time <= 1 s": elapsed <= 1.0,
        "error within the reported bound": worst <= bound.max() + 1e-12,
        ">= 100x faster than mpmath": per_point * values.size / elapsed >= 100,
        ">= 100x faster than the compartmental solve": other / elapsed >= 100,
    }
    for goal, met in verdicts.items():
        print(f"  goal {goal}: {'met' if met else 'NOT met'}")


if __name__ == "__main__":
    main()
