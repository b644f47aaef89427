"""Speed and accuracy of the transient evaluators (plain script; prints its figures).

Goal: a current-step response on 10^6 (X, T) points at the default tolerance in <= 1 s, with the
worst error against mpmath at 30 digits below the reported bound, and >= 100x faster than a plain
mpmath loop (timed on a sample and scaled up).

Hook: when cabletheory.compartment offers a time-course solver, add its time for the same grid in
``compartment_time`` below and print the ratio.
"""

from __future__ import annotations

import time

import mpmath as mp
import numpy as np

from cabletheory import precise
from cabletheory.transient import current_response

L, B = 1.0, 0.0
X = np.linspace(0.0, L, 1000)
T = np.linspace(0.0, 5.0, 1000)


def compartment_time() -> float | None:
    """Time of a compartmental solve of the same problem (None until compartment.py provides one)."""
    return None


def main() -> None:
    current_response(X[:10], 0.0, T[:10], L, B)  # warm-up (imports)
    start = time.perf_counter()
    values, bound, method = current_response(X, 0.0, T, L, B)
    elapsed = time.perf_counter() - start
    print(f"step response, sealed cylinder L = {L}: {values.size:,} points in {elapsed:.3f} s ({method})")
    print(f"  reported truncation bound: {bound.max():.2e} (units of I·R∞; tolerance 1e-10 × coth L)")

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
    other = compartment_time()
    if other is not None:
        print(f"  compartmental solve: {other:.3f} s; ratio {other / elapsed:.0f}x")
    else:
        print("  compartmental comparison: not yet available (see compartment_time)")
    ok = elapsed <= 1.0 and worst <= bound.max() + 1e-12 and per_point * values.size / elapsed >= 100
    print("goal met" if ok else "GOAL NOT MET")


if __name__ == "__main__":
    main()
