"""Speed and recovery of the fits of a recorded trace (plain script; prints its figures).

Goals (issue 12): a soma-plus-cylinder (ball-and-stick) fit to a 2,000-sample trace in <= 1 s on
one core (one BLAS thread), warm (imports and the first call's set-up not counted; median of 3); a
morphology fit (the bundled 1,338-branch interneuron, Rm, Ri, Cm, and then with a soma shunt and
its χ² profile) in <= 30 s each (one run each), converged (with a shunt: Rm, Ri, Cm at the stated
shunt, the row also saying whether the data determine the shunt). The trace is the exact soma
response of the project's check case (τm = 20 ms, L = 1, ρ = 5, R_N = 200 MΩ, 100 pA) sampled every 50 µs, plus
0.1 mV of seeded noise; the figures also say how far each estimate lands from the truth.
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import _one_core  # noqa: F401  (one BLAS thread: the goal is on one core)
import numpy as np
from _table import Row, report

from cabletheory.fit_exponentials import decompose, fit_exponentials
from cabletheory.fit_model import fit_model, model_case
from cabletheory.transient import charge

TRUTH = (0.02, 1.0, 5.0, 200e6)


def trace(samples: int = 2000) -> tuple[np.ndarray, np.ndarray]:
    case, _ = model_case("ball-and-stick", *TRUTH, 100e-12)
    t = np.arange(1, samples + 1) * 0.05e-3
    v = charge(case.cell, case.stimulus, t, [0.0]).voltage[:, 0]
    return t, v + np.random.default_rng(1).normal(0.0, 0.1e-3, t.size)


def median_of(function, repeats: int = 3) -> tuple[float, object]:
    times, result = [], None
    for _ in range(repeats):
        start = time.perf_counter()
        result = function()
        times.append(time.perf_counter() - start)
    return statistics.median(times), result


def main() -> int:
    t, y = trace()
    fit_model(t, y, current=100e-12, window=(0.0, None))  # warm-up: imports, caches
    elapsed, fit = median_of(lambda: fit_model(t, y, current=100e-12, window=(0.0, None)))
    errors = ", ".join(f"{n} {100 * (e / v - 1):+.2f} %" for n, e, v in zip(
        ("τm", "L", "ρ", "R_N"), fit.estimates, TRUTH, strict=True))
    verdict = "meets" if elapsed <= 1.0 else "misses"
    print(f"ball-and-stick fit, {t.size} samples: {elapsed:.3f} s ({fit.evaluations} exact time courses; "
          f"goal <= 1 s: {verdict}); estimates vs truth: {errors}")
    rows = [Row(f"ball-and-stick fit to {t.size:,} samples (warm, one core)",
                f"{elapsed:.2f} s (median of 3; {fit.evaluations} exact time courses)", "≤ 1 s", elapsed <= 1.0)]
    b_elapsed, d = median_of(lambda: decompose(t, y, window=(0.0, None)))
    print(f"sum of exponentials, 1-4 tried, {t.size} samples: {b_elapsed:.3f} s ({d.fit.components} chosen)")
    b_elapsed, _ = median_of(lambda: fit_exponentials(t, y, d.fit.components, bootstrap=200, seed=0), repeats=1)
    print(f"the same with a 200-draw residual bootstrap: {b_elapsed:.3f} s")
    return report(rows + morphology())


def morphology() -> list[Row]:
    from cabletheory.fit_tree import _cell, fit_morphology
    from cabletheory.morphology import read_swc
    from cabletheory.transient import CurrentStep
    from cabletheory.tree import build_tree
    from cabletheory.tree_laplace import root_site
    from cabletheory.tree_time import tree_response

    data = Path(__file__).resolve().parents[1] / "cabletheory" / "data" / "morphologies"
    path = data / "lumenia_pv7_interneuron.swc"
    tree = build_tree(read_swc(path))
    truth = {"membrane_resistivity": 2.5, "axial_resistivity": 1.2, "membrane_capacitance": 0.009,
             "soma_shunt": 0.2e-9}
    t = np.arange(1, 801) * 0.1e-3
    rows = []
    for shunt in (False, True):
        p = truth if shunt else {k: v for k, v in truth.items() if k != "soma_shunt"}
        v = tree_response(_cell(tree, p), CurrentStep(-40e-12), t, root_site(), [root_site()]).voltage[:, 0]
        y = v + np.random.default_rng(3).normal(0.0, 0.05e-3, t.size)
        start = time.perf_counter()
        fit = fit_morphology(t, y, tree, -40e-12, shunt=shunt, window=(0.0, None))
        elapsed = time.perf_counter() - start
        errors = ", ".join(f"{n} {100 * (fit.value(n) / p[n] - 1):+.1f} %" for n in fit.names)
        verdict = "meets" if elapsed <= 30.0 else "misses"
        print(f"morphology fit ({len(tree)} branches, {len(fit.names)} parameters): {elapsed:.1f} s "
              f"({fit.evaluations} exact time courses, converged {fit.converged}; goal <= 30 s: {verdict}); {errors}; "
              f"separable: {fit.condition.separable}")
        what = "Rm, Ri, Cm and a soma shunt" if shunt else "Rm, Ri, Cm"
        profile = fit.shunt_profile
        if profile is not None:
            print(f"  {profile.statement()}")
        shunt_word = "" if profile is None else (", shunt determined" if profile.determined
                                                 else ", shunt not determined by the data")
        rows.append(Row(f"morphology fit, {len(tree):,} branches, {what}",
                        f"{elapsed:.1f} s (one run; {fit.evaluations} exact time courses"
                        f"{'' if fit.converged else ', not converged'}{shunt_word})", "≤ 30 s",
                        elapsed <= 30.0 and fit.converged))
    return rows


if __name__ == "__main__":
    sys.exit(main())
