"""Speed and recovery of the fits of a recorded trace (plain script; prints its figures).

Goal: a soma-plus-cylinder (ball-and-stick) fit to a 2,000-sample trace in <= 1 s on one core,
warm (imports and the first call's set-up not counted). The trace is the exact soma response of the
project's check case (τm = 20 ms, L = 1, ρ = 5, R_N = 200 MΩ, 100 pA) sampled every 50 µs, plus
0.1 mV of seeded noise; the figures also say how far each estimate lands from the truth.
"""

from __future__ import annotations

import time

import numpy as np

from cabletheory.fit_exponentials import decompose, fit_exponentials
from cabletheory.fit_model import fit_model, model_case
from cabletheory.transient import charge

TRUTH = (0.02, 1.0, 5.0, 200e6)


def trace(samples: int = 2000) -> tuple[np.ndarray, np.ndarray]:
    case, _ = model_case("ball-and-stick", *TRUTH, 100e-12)
    t = np.arange(1, samples + 1) * 0.05e-3
    v = charge(case.cell, case.stimulus, t, [0.0]).voltage[:, 0]
    return t, v + np.random.default_rng(1).normal(0.0, 0.1e-3, t.size)


def best_of(function, repeats: int = 3) -> tuple[float, object]:
    times, result = [], None
    for _ in range(repeats):
        start = time.perf_counter()
        result = function()
        times.append(time.perf_counter() - start)
    return min(times), result


def main() -> None:
    t, y = trace()
    fit_model(t, y, current=100e-12, window=(0.0, None))  # warm-up: imports, caches
    elapsed, fit = best_of(lambda: fit_model(t, y, current=100e-12, window=(0.0, None)))
    errors = ", ".join(f"{n} {100 * (e / v - 1):+.2f} %" for n, e, v in zip(
        ("τm", "L", "ρ", "R_N"), fit.estimates, TRUTH, strict=True))
    verdict = "meets" if elapsed <= 1.0 else "misses"
    print(f"ball-and-stick fit, {t.size} samples: {elapsed:.3f} s ({fit.evaluations} exact time courses; "
          f"goal <= 1 s: {verdict}); estimates vs truth: {errors}")
    elapsed, d = best_of(lambda: decompose(t, y, window=(0.0, None)))
    print(f"sum of exponentials, 1-4 tried, {t.size} samples: {elapsed:.3f} s ({d.fit.components} chosen)")
    elapsed, _ = best_of(lambda: fit_exponentials(t, y, d.fit.components, bootstrap=200, seed=0), repeats=1)
    print(f"the same with a 200-draw residual bootstrap: {elapsed:.3f} s")


if __name__ == "__main__":
    main()
