"""Accuracy fuzz: many random cases of the exact time courses against an independent reference.

Usage: ``.venv/bin/python benchmarks/fuzz_accuracy.py [--cases 10000] [--seed 1] [--workers 2] [--digits 20]``

Each case (a seeded random draw over L 1e-4..1000, T 1e-12..1e6, B 0..∞, soma ratio 1e-3..1e3,
every model and stimulus, stimulus and recording sites at the ends, 1 nm from the far end and
inside, times a few ulps after a pulse ends) runs ``transient.charge`` and compares every value
with the Laplace-domain reference of ``tests/laplace_reference.py`` (mpmath Talbot; 20 digits here,
40 in the tests: a value needs only a few digits beyond float64 to judge a bound of 1e-12).
Prints the number of cases, exceptions, bound violations and the worst error/bound ratio per
model and stimulus; exits 1 on any exception or violation. Not part of ``make test`` (about four
minutes on two cores for 10,000 cases).
"""

from __future__ import annotations

import argparse
import math
import multiprocessing
import pathlib
import sys
import time
import traceback

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent.parent / "tests"))

import laplace_reference
import numpy as np
from accuracy_cases import SITES, Draw, check


def draw_case(rng: np.random.Generator) -> Draw:
    model = str(rng.choice(["cylinder", "semi-infinite", "infinite", "ball"], p=[0.4, 0.1, 0.1, 0.4]))
    stimulus = str(rng.choice(["step", "pulse", "alpha", "clamp"]))
    end = float(rng.choice([0.0, math.inf, 10.0 ** rng.uniform(-3, 3)]))
    sites = tuple(str(s) for s in rng.choice(SITES, size=int(rng.integers(1, 3)), replace=False))
    return Draw(model=model, stimulus=stimulus, log_length=float(rng.uniform(-4, 3)), end=end,
                log_soma=float(rng.uniform(-3, 3)), source=str(rng.choice(["origin", "end", "inside"])),
                inside=float(rng.uniform()), log_duration=float(rng.uniform(-6, 1)),
                log_peak=float(rng.uniform(-4, 1)), log_time=float(rng.uniform(-12, 6)),
                after_switch=int(rng.choice([0, 0, 0, 1, 2, 6])), sites=sites)


def run_one(job: tuple[Draw, int]) -> tuple[Draw, float, str, str | None]:
    draw, digits = job
    laplace_reference.DIGITS = digits
    try:
        worst, where = check(draw)
        return draw, worst, where, None
    except Exception:
        return draw, math.nan, "", traceback.format_exc(limit=3)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=10_000)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--digits", type=int, default=20)
    args = parser.parse_args(argv)
    rng = np.random.default_rng(args.seed)
    draws = [draw_case(rng) for _ in range(args.cases)]
    start = time.perf_counter()
    results = []
    with multiprocessing.Pool(args.workers) as pool:
        for result in pool.imap_unordered(run_one, [(d, args.digits) for d in draws], chunksize=8):
            results.append(result)
            if len(results) % 500 == 0:
                bad = sum(r[3] is not None or r[1] > 1.0 for r in results)
                worst = max((r[1] for r in results if r[3] is None), default=0.0)
                print(f"  {len(results)} cases, {bad} exceptions or violations, worst ratio {worst:.3g}, "
                      f"{time.perf_counter() - start:.0f} s", flush=True)
    elapsed = time.perf_counter() - start
    exceptions = [r for r in results if r[3] is not None]
    violations = [r for r in results if r[3] is None and r[1] > 1.0]
    print(f"seed: {args.seed}   reference digits: {args.digits}")
    print(f"cases: {len(results)}   exceptions: {len(exceptions)}   violations: {len(violations)}   "
          f"time: {elapsed:.0f} s")
    table: dict[tuple[str, str], list[float]] = {}
    for d, worst, _, err in results:
        if err is None:
            table.setdefault((d.model, d.stimulus), []).append(worst)
    print(f"{'model':<14} {'stimulus':<8} {'cases':>6} {'worst error/bound':>18}")
    for (model, stim), ratios in sorted(table.items()):
        print(f"{model:<14} {stim:<8} {len(ratios):>6} {max(ratios):>18.3g}")
    for d, _, _, err in exceptions[:5]:
        print("EXCEPTION", d, err, sep="\n")
    for d, worst, where, _ in sorted(violations, key=lambda r: -r[1])[:5]:
        print("VIOLATION", f"{worst:.3g}", d, where, sep="\n")
    return 1 if exceptions or violations else 0


if __name__ == "__main__":
    sys.exit(main())
