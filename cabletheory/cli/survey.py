"""``cabletheory survey``: Rall's audit and reduction of every morphology in an archive, one table out."""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

from .. import PASSIVE_CAVEAT
from ..errors import InputError
from ..output import table, write_atomically
from ..survey import (
    DaskRunner,
    PoolRunner,
    SerialRunner,
    SurveyResult,
    SurveySettings,
    find_files,
    require,
    run_survey,
    table_csv,
    table_parquet,
)
from ..tree import Tolerances
from ..units import format_quantity, parse_quantity
from .common import add_membrane_options, read_membrane, whole_number
from .tree import add_tree_reading_options, parse_types

_TABLE_SUFFIXES = (".csv", ".parquet")


def _default_workers() -> int:
    return max(1, len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1))


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "survey",
        help="audit every morphology of an archive against Rall's conditions: one table, one row per cell",
        description="Read every morphology under the given folders or glob patterns (.swc, .outline), "
                    "audit each against Rall's conditions, reduce it to an equivalent cylinder and compute its "
                    "exact and reduced input resistance, with one set of membrane values and tolerances; write "
                    "one table (CSV or Parquet) with one row per file and the settings in its header. A file "
                    "that cannot be read becomes a row with its error. Finished cells are journaled beside the "
                    "output as they complete, so an interrupted survey continues with --resume. Runs on a local "
                    "process pool by default, or on a Dask cluster with --scheduler; the table is the same either "
                    "way.",
        epilog=PASSIVE_CAVEAT,
    )
    parser.add_argument("where", nargs="+", metavar="FOLDER_OR_GLOB",
                        help="a folder (searched recursively), a glob pattern such as 'archive/**/*.swc' "
                             "(quote it), or a file")
    group = parser.add_argument_group("membrane, the same for every cell (bare numbers: Ω·cm², Ω·cm, µF/cm²)")
    add_membrane_options(group)
    add_tree_reading_options(parser, each_file=True)
    work = parser.add_argument_group("where the work runs")
    work.add_argument("--workers", type=whole_number(1, 1024), default=None, metavar="N",
                      help="worker processes of the local pool (default: one per core, here "
                           f"{_default_workers()}); 1 runs every cell in this process. With '--scheduler local', "
                           "the size of the local Dask cluster")
    work.add_argument("--scheduler", metavar="ADDRESS",
                      help="run on a Dask distributed cluster: the scheduler's address (e.g. tcp://host:8786), or "
                           "'local' to start a local Dask cluster (needs: pip install 'cabletheory[cluster]'; "
                           "every worker must see the files at the same absolute path)")
    work.add_argument("--batch", type=whole_number(1, 100_000), default=None, metavar="N",
                      help="files per task (default: about four tasks per worker, at most 32 files each)")
    out = parser.add_argument_group("output")
    out.add_argument("--output", required=True, metavar="FILE",
                     help="the table: FILE.csv, or FILE.parquet (needs: pip install 'cabletheory[parquet]'); "
                          "written when the survey ends, atomically. Finished cells are journaled meanwhile in "
                          "FILE.journal, which is removed once the table is written")
    out.add_argument("--resume", action="store_true",
                     help="continue an interrupted survey from FILE.journal: cells already journaled (and whose "
                          "file has not changed since) are not analysed again. The options must be the same as "
                          "the first time. Without a journal, starts afresh")
    out.add_argument("--report", metavar="FILE",
                     help="also write a one-page report with summary figures (FILE.html, self-contained)")
    out.add_argument("--show", type=whole_number(0, 1_000_000), default=5, metavar="N",
                     help="files with errors listed on screen (default 5; the table lists them all)")
    out.add_argument("--digits", type=whole_number(2, 15), default=4, metavar="N",
                     help="significant digits on screen (default 4; the table keeps full precision)")
    parser.set_defaults(run=run)


def read_settings(args: argparse.Namespace) -> SurveySettings:
    """The survey's settings from the options shared with ``cabletheory tree``, each checked."""
    rm, ri, cm = read_membrane(args)
    tolerances = Tolerances(branch_ratio=parse_quantity(args.ratio_tolerance, "dimensionless", "--ratio-tolerance",
                                                        allow_zero=True),
                            tip_spread=parse_quantity(args.tip_tolerance, "dimensionless", "--tip-tolerance",
                                                      allow_zero=True))
    from ..inputs import read_end, read_outline_value

    tips = None if args.tips is None else read_end(args.tips, "--tips")
    types = parse_types(args.types) if args.types is not None else None
    if types is not None and args.axon:
        types.add(2)
    return SurveySettings(rm, ri, cm, tolerances=tolerances, tip_conductance=tips, taper=args.taper,
                          types=None if types is None else tuple(sorted(types)), include_axon=args.axon,
                          read_value=read_outline_value)


def _check_output(path: str, suffixes: tuple[str, ...], option: str) -> Path:
    target = Path(path)
    if target.suffix.lower() not in suffixes:
        raise InputError(f"{option}: {path!r} must end in {' or '.join(suffixes)}")
    if target.is_dir():
        raise InputError(f"{option}: {path!r} is a folder")
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"{option}: folder {str(folder)!r} does not exist")
    if not os.access(folder, os.W_OK):
        raise InputError(f"{option}: folder {str(folder)!r} is not writable")
    return target


class Progress:
    """Cells done, rate and time left on one self-rewriting stderr line (only on a terminal)."""

    def __init__(self, enabled: bool) -> None:
        self.enabled = enabled
        self.start = time.monotonic()
        self.first: int | None = None
        self.last_draw = 0.0
        self.drawn = False

    def __call__(self, done: int, total: int) -> None:
        if self.first is None:
            self.first = done
            self.start = time.monotonic()
        now = time.monotonic()
        if not self.enabled or (now - self.last_draw < 0.2 and done < total):
            return
        self.last_draw = now
        elapsed = now - self.start
        rate = (done - self.first) / elapsed if elapsed > 0 else 0.0
        left = f", about {_duration((total - done) / rate)} left" if rate > 0 and done < total else ""
        pct = 100.0 * done / total if total else 100.0
        sys.stderr.write(f"\rsurvey: {done}/{total} cells ({pct:.0f} %), {rate:.1f} cells/s{left}\033[K")
        sys.stderr.flush()
        self.drawn = True

    def finish(self) -> None:
        if self.drawn:
            sys.stderr.write("\n")
            sys.stderr.flush()


def _duration(seconds: float) -> str:
    if seconds < 90:
        return f"{seconds:.0f} s"
    if seconds < 5400:
        return f"{seconds / 60:.0f} min"
    return f"{seconds / 3600:.1f} h"


def run(args: argparse.Namespace) -> int:
    settings = read_settings(args)
    output = _check_output(args.output, _TABLE_SUFFIXES, "--output")
    parquet = output.suffix.lower() == ".parquet"
    if parquet:
        require("pyarrow", "--output FILE.parquet", "parquet")
    report = None if args.report is None else _check_output(args.report, (".html",), "--report")
    workers = args.workers or _default_workers()
    if args.scheduler is not None:
        address = args.scheduler.strip()
        if not address:
            raise InputError("--scheduler: empty; expected an address such as tcp://host:8786, or 'local'")
        runner: SerialRunner | PoolRunner | DaskRunner = DaskRunner(None if address == "local" else address, workers)
    else:
        runner = SerialRunner() if workers == 1 else PoolRunner(workers)
    files = find_files(args.where)
    for f in files:
        for target in (output, report):
            if target is not None and target.exists() and target.resolve() == Path(f).resolve():
                raise InputError(f"output {str(target)!r} is also an input file; choose another name")
    journal = Path(f"{output}.journal")
    progress = Progress(sys.stderr.isatty())
    try:
        result = run_survey(files, settings, runner, journal, resume=args.resume, batch_size=args.batch,
                            progress=progress)
    except KeyboardInterrupt:
        progress.finish()
        print(f"cabletheory: survey interrupted; the finished cells are kept in {journal}; run the same command "
              "with --resume to continue", file=sys.stderr)
        return 130
    progress.finish()
    data = table_parquet(result.rows, settings) if parquet else table_csv(result.rows, settings)
    write_atomically(output, data, protected=files)
    if report is not None:
        from .survey_report import report_html

        write_atomically(report, report_html(result.rows, settings), protected=files)
    journal.unlink(missing_ok=True)
    print(as_text(result, str(output), None if report is None else str(report), args.show, args.digits))
    return 0


def _median(values: list[float]) -> float | None:
    if not values:
        return None
    s = sorted(values)
    mid = len(s) // 2
    return s[mid] if len(s) % 2 else 0.5 * (s[mid - 1] + s[mid])


def _cost(ok: list[dict]) -> str:
    """The median and the largest relative input-resistance difference of the reduced models."""
    costs = [r for r in ok if r["difference_percent"] is not None]
    if not costs:
        return "-"
    worst = max(costs, key=lambda r: abs(r["difference_percent"]))
    middle = _median([abs(r["difference_percent"]) for r in costs]) or 0.0
    return (f"median |difference| {middle:.3g} %, largest {worst['difference_percent']:+.3g} % "
            f"({Path(worst['path']).name})")


def as_text(result: SurveyResult, output: str, report: str | None = None, show: int = 5, digits: int = 4) -> str:
    """The summary printed at the end: counts, medians, errors, where the table went."""

    def num(value: float | None) -> str:
        return "-" if value is None else format_quantity(value, "dimensionless", digits)

    def fmt(value: float | None, kind: str) -> str:
        return "-" if value is None else format_quantity(value, kind, digits)

    rows = result.rows
    ok = [r for r in rows if r["status"] == "ok"]
    bad = [r for r in rows if r["status"] != "ok"]

    def median(name: str) -> float | None:
        return _median([r[name] for r in ok if r[name] is not None])

    tol = result.settings.tolerances
    lines = [
        ("cells", f"{len(rows)} ({len(ok)} analysed, {len(bad)} could not be read or analysed)"),
        ("reducible to an equivalent cylinder", f"{result.reducible} of {len(ok)} "
                                                f"(ratio 1 ± {tol.branch_ratio:g}, tip spread ≤ {tol.tip_spread:g})"),
        ("median branch ratio Σd_child^3/2 / d_parent^3/2", num(median("ratio_median"))),
        ("median tip spread ΔX", num(median("tip_spread"))),
        ("median electrotonic length L", num(median("electrotonic_length"))),
        ("median exact input resistance", fmt(median("input_resistance_ohm"), "resistance")),
        ("cost of reduction (reduced − exact R_in)", _cost(ok)),
        ("ran on", result.runner + (f"; {result.reused} cells taken from the journal" if result.reused else "")),
        ("table", output),
    ]
    if report is not None:
        lines.append(("report", report))
    blocks = [table(lines, "Survey")]
    if bad and show:
        listed = "\n".join(f"  - {r['error']}" for r in bad[:show])
        more = f"\n  ... and {len(bad) - show} more (see the table)" if len(bad) > show else ""
        blocks.append(f"Files that could not be read or analysed\n{'-' * 40}\n{listed}{more}")
    blocks.append(f"Note: {PASSIVE_CAVEAT}")
    return "\n\n".join(blocks)
