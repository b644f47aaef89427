r"""Survey an archive: Rall's audit and reduction of many morphology files, one flat row per file.

A survey applies :func:`cabletheory.tree.analyse_tree` to every file it is given, with one set of
membrane values and tolerances (:class:`SurveySettings`), and keeps for each file one row of
plain numbers (:data:`COLUMNS`): the statistics of the branch ratios
:math:`\sum d_{child}^{3/2} / d_{parent}^{3/2}`, the spread of tip electrotonic distances, the
verdict and its reasons, the equivalent cylinder, the exact and the reduced input resistance and
the ball-and-stick :math:`\rho`. A file that cannot be read or analysed gives a row with its
error (``file:line: message``) instead of stopping the survey.

The work is cut into batches (many files per task, so that the cost of sending a task does not
dominate) and handed to a runner: this process (:class:`SerialRunner`), a local process pool
(:class:`PoolRunner`) or a Dask distributed cluster (:class:`DaskRunner`, optional extra).
Every row depends only on its file and the settings, and rows are sorted by path, so the table
is the same, bit for bit, whichever runner made it.

Finished rows go to an append-only journal (JSON lines, flushed and fsync'd after every batch),
so an interrupted survey continues where it stopped (:func:`run_survey` with ``resume=True``).

Everything here is in SI units; the model is passive, linear and uniform
(:data:`cabletheory.PASSIVE_CAVEAT`).
"""

from __future__ import annotations

import csv
import glob
import io
import json
import math
import os
import warnings
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Protocol

import numpy as np

from . import PASSIVE_CAVEAT, __version__
from .errors import CableTheoryError, InputError, MissingFileError, UsageError
from .morphology import Outline, ValueReader, read_morphology
from .tree import Tolerances, TreeReport, analyse_tree, build_tree

__all__ = ["COLUMNS", "MORPHOLOGY_SUFFIXES", "Column", "DaskRunner", "Journal", "PoolRunner", "SerialRunner",
           "SurveyResult", "SurveySettings", "audit_batch", "audit_file", "find_files", "make_batches",
           "read_table", "run_survey", "table_csv", "table_parquet"]

Row = dict[str, Any]
MORPHOLOGY_SUFFIXES = (".swc", ".outline")
JOURNAL_KIND = "cabletheory survey journal"


# --------------------------------------------------------------------------------------
# the row
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Column:
    """One column of the survey table: its name, value type ("text", "int", "float", "bool"),
    SI unit ("1" for a pure number, "" for text) and meaning."""

    name: str
    kind: str
    unit: str
    meaning: str


COLUMNS: tuple[Column, ...] = (
    Column("path", "text", "", "the morphology file, as found"),
    Column("status", "text", "", "'ok', or 'error' when the file could not be read or analysed"),
    Column("error", "text", "", "why not (file:line: message); empty when ok"),
    Column("format", "text", "", "SWC or the package's own tree outline"),
    Column("records", "int", "1", "points (SWC) or branches (outline) in the file"),
    Column("pieces", "int", "1", "cylinders or frusta the tree is made of"),
    Column("branches", "int", "1", "unbranched runs between branch points and tips"),
    Column("branch_points", "int", "1", "points with two or more children"),
    Column("tips", "int", "1", "terminal points"),
    Column("stems", "int", "1", "dendrites leaving the soma (or the root point)"),
    Column("soma_area_m2", "float", "m²", "membrane area of the lumped soma; empty without a soma"),
    Column("membrane_area_m2", "float", "m²", "membrane area of the dendrites"),
    Column("ratio_min", "float", "1", "smallest branch ratio Σd_child^3/2 / d_parent^3/2 (1 meets the 3/2 rule)"),
    Column("ratio_median", "float", "1", "median branch ratio"),
    Column("ratio_mean", "float", "1", "mean branch ratio"),
    Column("ratio_max", "float", "1", "largest branch ratio"),
    Column("ratio_worst", "float", "1", "the branch ratio farthest from 1"),
    Column("ratio_outside", "int", "1", "branch points whose ratio is outside 1 ± the ratio tolerance"),
    Column("branch_change_max", "float", "1", "largest relative change of d^3/2 along one branch"),
    Column("branches_outside", "int", "1", "branches whose d^3/2 changes by more than the ratio tolerance"),
    Column("tip_distance_min", "float", "1", "smallest tip electrotonic distance X from the root"),
    Column("tip_distance_mean", "float", "1", "mean tip electrotonic distance"),
    Column("tip_distance_max", "float", "1", "largest tip electrotonic distance"),
    Column("tip_spread", "float", "1", "largest minus smallest tip electrotonic distance"),
    Column("path_length_max_m", "float", "m", "longest path from the root to a tip"),
    Column("reducible", "bool", "", "meets Rall's conditions within the tolerances"),
    Column("reasons", "text", "", "why not, one sentence per broken condition, separated by ' | '"),
    Column("cylinder_diameter_m", "float", "m", "equivalent cylinder: diameter (Σ d_stem^3/2)^(2/3)"),
    Column("cylinder_length_m", "float", "m", "equivalent cylinder: length (same membrane area as the tree)"),
    Column("electrotonic_length", "float", "1", "equivalent cylinder: electrotonic length L"),
    Column("length_constant_m", "float", "m", "equivalent cylinder: length constant"),
    Column("input_resistance_ohm", "float", "Ω", "exact steady-state input resistance of the full tree"),
    Column("reduced_input_resistance_ohm", "float", "Ω", "input resistance of the reduced model"),
    Column("difference_percent", "float", "%", "the cost of reduction: 100 (reduced − exact) / exact"),
    Column("conductance_ratio", "float", "1", "ρ = G_D/G_S of the soma-plus-cylinder model; empty without a soma"),
    Column("exact_conductance_ratio", "float", "1", "exact dendritic conductance / G_S; empty without a soma"),
)
COLUMN_NAMES = tuple(c.name for c in COLUMNS)
_EMPTY_ROW: Row = {c.name: "" if c.kind == "text" else None for c in COLUMNS}


@dataclass(frozen=True, slots=True)
class SurveySettings:
    """What every file of a survey is analysed with, SI.

    membrane_resistivity : Rm, Ω·m²; axial_resistivity : Ri, Ω·m; membrane_capacitance : Cm, F/m²
    tolerances : :class:`~cabletheory.tree.Tolerances` of the audit
    tip_conductance : conductance from every tip to rest, S (0 sealed, inf killed); ``None`` keeps
        what each file says (sealed unless it states otherwise)
    taper, types, include_axon : how an SWC file becomes a tree (:func:`~cabletheory.tree.build_tree`)
    read_value : reads the values of a tree outline (the front end passes
        :func:`cabletheory.inputs.read_outline_value`); without it an outline is refused
    """

    membrane_resistivity: float
    axial_resistivity: float
    membrane_capacitance: float = 0.01
    tolerances: Tolerances = field(default_factory=Tolerances)
    tip_conductance: float | None = None
    taper: bool = False
    types: tuple[int, ...] | None = None
    include_axon: bool = False
    read_value: ValueReader | None = field(default=None, compare=False)

    def __post_init__(self) -> None:
        for name in ("membrane_resistivity", "axial_resistivity", "membrane_capacitance"):
            value = getattr(self, name)
            if not (math.isfinite(value) and value > 0):
                raise InputError(f"{name} must be finite and positive, got {value!r}")
        if self.tip_conductance is not None and not self.tip_conductance >= 0:
            raise InputError(f"tip_conductance must be >= 0 S, got {self.tip_conductance!r}")

    def parameters(self) -> dict[str, tuple[Any, str]]:
        """Every setting as ``name -> (value, SI unit)``, in a fixed order (the table's header)."""
        tips: Any = "as in each file" if self.tip_conductance is None else (
            "sealed" if self.tip_conductance == 0 else "killed" if math.isinf(self.tip_conductance)
            else self.tip_conductance)
        return {
            "membrane_resistivity": (self.membrane_resistivity, "Ω·m²"),
            "axial_resistivity": (self.axial_resistivity, "Ω·m"),
            "membrane_capacitance": (self.membrane_capacitance, "F/m²"),
            "tips": (tips, "S" if isinstance(tips, float) else ""),
            "ratio_tolerance": (self.tolerances.branch_ratio, "1"),
            "tip_tolerance": (self.tolerances.tip_spread, "1"),
            "taper": ("yes" if self.taper else "no", ""),
            "types": ("default (all but the axon)" if self.types is None
                      else ",".join(str(t) for t in self.types), ""),
            "axon": ("yes" if self.include_axon else "no", ""),
            "tool": (f"cabletheory {__version__}", ""),
        }

    def as_json(self) -> dict[str, Any]:
        """A JSON-safe form that identifies the settings (a journal is resumed only with equal settings)."""
        return {name: value if not (isinstance(value, float) and math.isinf(value)) else "inf"
                for name, (value, _unit) in self.parameters().items()}


def _analyse(path: str, settings: SurveySettings) -> tuple[TreeReport, str, int]:
    if settings.read_value is None and Path(path).suffix.lower() == ".outline":
        raise InputError(f"{path}: this survey was set up without a reader for tree outlines")
    morphology = read_morphology(path, settings.read_value)
    types = None if settings.types is None else set(settings.types)
    tree = build_tree(morphology, taper=settings.taper, types=types, include_axon=settings.include_axon)
    report = analyse_tree(tree, settings.membrane_resistivity, settings.axial_resistivity,
                          settings.membrane_capacitance, tolerances=settings.tolerances,
                          tip_conductance=settings.tip_conductance)
    file_format = "outline" if isinstance(morphology, Outline) else "SWC"
    return report, file_format, len(morphology)


def _row(path: str, report: TreeReport, file_format: str, records: int) -> Row:
    """The flat row of one analysed tree: plain Python numbers, SI."""
    r = report
    tol = r.tolerances
    ratios = r.branch_points.ratios
    changes = np.asarray([v.value for v in r.violations if v.kind == "branch_diameter"])
    stems_change = max((s.worst_branch_change for s in r.stems), default=0.0)
    c = r.equivalent_cylinder
    has_ratios = ratios.size > 0

    def stat(fn: Callable[[Any], Any]) -> float | None:
        return float(fn(ratios)) if has_ratios else None

    return {
        **_EMPTY_ROW,
        "path": path, "status": "ok", "error": "", "format": file_format, "records": int(records),
        "pieces": int(r.pieces), "branches": int(r.branches), "branch_points": int(ratios.size),
        "tips": len(r.tips.ids), "stems": len(r.stems),
        "soma_area_m2": None if r.soma_area is None else float(r.soma_area),
        "membrane_area_m2": float(r.membrane_area),
        "ratio_min": stat(np.min), "ratio_median": stat(np.median), "ratio_mean": stat(np.mean),
        "ratio_max": stat(np.max),
        "ratio_worst": float(ratios[np.argmax(np.abs(ratios - 1.0))]) if has_ratios else None,
        "ratio_outside": int(np.count_nonzero(np.abs(ratios - 1.0) > tol.branch_ratio)),
        "branch_change_max": float(stems_change),
        "branches_outside": int(changes.size),
        "tip_distance_min": float(r.tip_distance_min), "tip_distance_mean": float(r.tip_distance_mean),
        "tip_distance_max": float(r.tip_distance_max),
        "tip_spread": float(r.tip_distance_max - r.tip_distance_min),
        "path_length_max_m": float(r.tips.path_lengths.max()),
        "reducible": bool(r.reducible), "reasons": " | ".join(r.reasons),
        "cylinder_diameter_m": float(c.diameter), "cylinder_length_m": float(c.length),
        "electrotonic_length": float(c.electrotonic_length), "length_constant_m": float(c.length_constant),
        "input_resistance_ohm": float(r.input_resistance),
        "reduced_input_resistance_ohm": float(r.reduced_input_resistance),
        "difference_percent": float(r.difference_percent),
        "conductance_ratio": None if r.conductance_ratio is None else float(r.conductance_ratio),
        "exact_conductance_ratio": None if r.exact_conductance_ratio is None else float(r.exact_conductance_ratio),
    }


def error_row(path: str, message: str) -> Row:
    """The row of a file that could not be read or analysed."""
    return {**_EMPTY_ROW, "path": path, "status": "error", "error": " ".join(message.split())}


def audit_file(path: str, settings: SurveySettings, *, name: str | None = None) -> Row:
    """Read, audit and reduce one morphology file; its row, or its error row (never raises for a bad file).

    Parameters
    ----------
    path : where to read the file
    settings : membrane, tolerances and tree options, SI
    name : the path to show in the row and in error messages (default ``path``); a cluster
        worker reads an absolute path but reports the path as the user found it

    Overflow and invalid floating-point operations are errors of that file (as on the command
    line), never a silent ``inf`` or ``nan`` in the table.

    References
    ----------
    Rall W (1959) Exp. Neurol. 1:491; Rall W (1964) in Neural Theory and Modeling (Reiss, ed.),
    Stanford Univ. Press, 73–97 (the conditions, the equivalent cylinder) [Rall1964].
    """
    shown = path if name is None else name
    try:
        with warnings.catch_warnings(), np.errstate(over="raise", invalid="raise", divide="ignore"):
            warnings.simplefilter("error", RuntimeWarning)
            report, file_format, records = _analyse(path, settings)
            return _row(shown, report, file_format, records)
    except CableTheoryError as exc:
        message = str(exc)
    except ValueError as exc:  # a reader's own check (InputError is one too)
        message = f"{shown}: {exc}"
    except (ArithmeticError, RuntimeWarning) as exc:
        detail = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        message = f"{shown}: numbers too large or too small to evaluate ({detail})"
    except (OSError, MemoryError, RecursionError) as exc:
        message = f"{shown}: {type(exc).__name__}: {exc}"
    if name is not None:
        message = message.replace(path, name)
    return error_row(shown, message)


def audit_batch(jobs: Sequence[tuple[str, str]], settings: SurveySettings) -> list[Row]:
    """Rows of a batch of ``(where to read, name to show)`` pairs: the unit of work sent to a worker."""
    return [audit_file(where, settings, name=shown) for where, shown in jobs]


# --------------------------------------------------------------------------------------
# finding files, batches
# --------------------------------------------------------------------------------------
def _is_morphology(path: Path) -> bool:
    return path.suffix.lower() in MORPHOLOGY_SUFFIXES and path.is_file()


def find_files(patterns: Iterable[str]) -> list[str]:
    """The morphology files named by folders (searched recursively for .swc and .outline),
    glob patterns (``**`` allowed) or file names; sorted, each once.

    Raises :class:`~cabletheory.errors.InputError` naming a pattern that matches nothing.
    """
    found: set[str] = set()
    for pattern in patterns:
        p = Path(pattern)
        if p.is_dir():
            hits = [str(q) for q in p.rglob("*") if _is_morphology(q)]
            what = "holds no morphology file (.swc or .outline)"
        elif p.is_file():
            hits = [pattern]
            what = ""
        elif glob.has_magic(pattern):
            hits = [h for h in glob.glob(pattern, recursive=True) if os.path.isfile(h)]
            what = "matches no file"
        else:
            raise MissingFileError(f"{pattern!r} is neither a file, a folder nor a glob pattern that matches")
        if not hits:
            raise InputError(f"{pattern!r} {what}")
        found.update(hits)
    return sorted(found)


def make_batches(jobs: Sequence[tuple[str, str]], batch_size: int) -> list[list[tuple[str, str]]]:
    """Consecutive batches of at most ``batch_size`` jobs."""
    if batch_size < 1:
        raise InputError(f"batch size must be >= 1, got {batch_size}")
    return [list(jobs[k:k + batch_size]) for k in range(0, len(jobs), batch_size)]


def default_batch_size(cells: int, workers: int) -> int:
    """About four batches per worker, at most 32 files each: the per-task cost stays small and an
    interruption loses little."""
    return max(1, min(32, math.ceil(cells / (4 * max(1, workers)))))


# --------------------------------------------------------------------------------------
# runners
# --------------------------------------------------------------------------------------
class Runner(Protocol):
    """Runs :func:`audit_batch` on every batch and yields each batch's rows as it finishes."""

    workers: int

    def describe(self) -> str: ...

    def run(self, batches: Sequence[list[tuple[str, str]]], settings: SurveySettings) -> Iterator[list[Row]]: ...


class SerialRunner:
    """Everything in this process, one batch after the other."""

    workers = 1

    def describe(self) -> str:
        return "one process"

    def run(self, batches: Sequence[list[tuple[str, str]]], settings: SurveySettings) -> Iterator[list[Row]]:
        for batch in batches:
            yield audit_batch(batch, settings)


class PoolRunner:
    """A local pool of worker processes (:class:`concurrent.futures.ProcessPoolExecutor`)."""

    def __init__(self, workers: int) -> None:
        if workers < 1:
            raise InputError(f"workers must be >= 1, got {workers}")
        self.workers = workers

    def describe(self) -> str:
        return f"a local pool of {self.workers} processes"

    def run(self, batches: Sequence[list[tuple[str, str]]], settings: SurveySettings) -> Iterator[list[Row]]:
        from concurrent.futures import ProcessPoolExecutor, as_completed

        pool = ProcessPoolExecutor(max_workers=self.workers, initializer=_ignore_interrupt)
        try:
            futures = [pool.submit(audit_batch, batch, settings) for batch in batches]
            for future in as_completed(futures):
                yield future.result()
        finally:
            pool.shutdown(wait=False, cancel_futures=True)


def _ignore_interrupt() -> None:
    """In a pool worker: leave Ctrl-C to the parent, which stops the pool and keeps the journal."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)


class DaskRunner:
    """A Dask distributed cluster: an existing scheduler (``address``) or, with ``address=None``, a
    local cluster of ``workers`` single-threaded processes started here (for testing).

    Needs the optional extra ``cabletheory[cluster]``. The files must be readable by every worker
    at the same absolute path (a shared file system).
    """

    def __init__(self, address: str | None, workers: int = 2) -> None:
        require("distributed", "a Dask scheduler", "cluster")
        if workers < 1:
            raise InputError(f"workers must be >= 1, got {workers}")
        self.address = address
        self.workers = workers

    def describe(self) -> str:
        return (f"a local Dask cluster of {self.workers} processes" if self.address is None
                else f"the Dask scheduler at {self.address}")

    def run(self, batches: Sequence[list[tuple[str, str]]], settings: SurveySettings) -> Iterator[list[Row]]:
        import logging

        import dask
        from distributed import Client, LocalCluster, as_completed

        cluster = None
        if self.address is None:
            import tempfile

            # the workers' sampling profiler costs a third of the time of these pure-Python tasks;
            # a random port for the dashboard, so that two local clusters never collide
            with dask.config.set({"distributed.worker.profile.enabled": False}):
                cluster = LocalCluster(n_workers=self.workers, threads_per_worker=1, processes=True,
                                       dashboard_address=":0", silence_logs=logging.ERROR,
                                       local_directory=tempfile.gettempdir())
            client = Client(cluster)
        else:
            try:
                client = Client(self.address, timeout=10)
            except (OSError, TimeoutError) as exc:
                raise InputError(f"--scheduler: cannot reach a Dask scheduler at {self.address!r} ({exc})") from None
        try:
            shared = client.scatter(settings, broadcast=True)
            futures = client.map(audit_batch, batches, settings=shared, pure=False)
            for future in as_completed(futures):
                yield future.result()
        finally:
            client.close()
            if cluster is not None:
                cluster.close()


def require(module: str, purpose: str, extra: str) -> None:
    """Raise a one-line :class:`InputError` when an optional package is missing."""
    import importlib.util

    if importlib.util.find_spec(module) is None:
        raise InputError(f"{purpose} needs the optional package {module!r}: "
                         f"pip install 'cabletheory[{extra}]'")


# --------------------------------------------------------------------------------------
# the journal
# --------------------------------------------------------------------------------------
def file_stamp(path: str) -> list[int] | None:
    """``[size in bytes, modification time in ns]`` of a file (``None`` if it cannot be read): a
    journaled row is reused only while its file is unchanged."""
    try:
        st = os.stat(path)
    except OSError:
        return None
    return [int(st.st_size), int(st.st_mtime_ns)]


class Journal:
    """The append-only record of finished rows beside a survey's output (JSON lines).

    The first line names the settings; every later line is ``{"stamp": [size, mtime_ns], "row": {...}}``.
    :meth:`record` flushes and fsyncs after each batch, so a killed survey loses at most the
    batches that were still running. A last line cut short by the kill is dropped on reading.
    """

    def __init__(self, path: str | os.PathLike[str], settings: SurveySettings) -> None:
        self.path = Path(path)
        self.settings = settings
        self._handle: io.TextIOWrapper | None = None

    def read(self) -> dict[str, tuple[list[int] | None, Row]]:
        """Rows already finished, by path; checks that they were made with the same settings."""
        data = self.path.read_bytes()
        lines = data.split(b"\n")
        entries: dict[str, tuple[list[int] | None, Row]] = {}
        good_end = 0
        for number, raw in enumerate(lines, start=1):
            last = number == len(lines)
            if not raw.strip():
                if not last:
                    good_end += len(raw) + 1
                continue
            try:
                item = json.loads(raw)
            except ValueError:
                if last:  # cut short by an interruption: forget it
                    break
                raise InputError(f"{self.path}:{number}: damaged survey journal line; delete the journal to "
                                 "start the survey again") from None
            if number == 1:
                if not isinstance(item, dict) or item.get("journal") != JOURNAL_KIND:
                    raise InputError(f"{self.path}:1: not a cabletheory survey journal")
                if item.get("settings") != self.settings.as_json():
                    raise InputError(f"{self.path}: this journal was written with other settings "
                                     f"({_settings_difference(item.get('settings'), self.settings.as_json())}); "
                                     "use the same options to continue it, or delete it")
            elif isinstance(item, dict) and isinstance(item.get("row"), dict) and "path" in item["row"]:
                entries[item["row"]["path"]] = (item.get("stamp"), {**_EMPTY_ROW, **item["row"]})
            else:
                raise InputError(f"{self.path}:{number}: damaged survey journal line; delete the journal to "
                                 "start the survey again")
            good_end += len(raw) + (0 if last else 1)
        if not data.startswith(b"{"):
            raise InputError(f"{self.path}:1: not a cabletheory survey journal")
        if good_end < len(data):  # drop the cut line so that the next record starts on a line of its own
            with open(self.path, "r+b") as fh:
                fh.truncate(good_end)
        return entries

    def open(self) -> None:
        """Open for appending (once); a new journal starts with its settings line."""
        if self._handle is not None:
            return
        new = not self.path.exists() or self.path.stat().st_size == 0
        self._handle = open(self.path, "a", encoding="utf-8", newline="\n")  # noqa: SIM115
        if new:
            self._write([{"journal": JOURNAL_KIND, "settings": self.settings.as_json()}])

    def record(self, rows: Sequence[Row], stamps: Mapping[str, list[int] | None]) -> None:
        """Append finished rows and force them to disk."""
        self._write([{"stamp": stamps.get(row["path"]), "row": row} for row in rows])

    def _write(self, items: Sequence[dict[str, Any]]) -> None:
        if self._handle is None:
            raise UsageError("journal is not open")
        self._handle.write("".join(json.dumps(item, ensure_ascii=False) + "\n" for item in items))
        self._handle.flush()
        os.fsync(self._handle.fileno())

    def close(self) -> None:
        if self._handle is not None:
            self._handle.close()
            self._handle = None


def _settings_difference(old: Any, new: dict[str, Any]) -> str:
    if not isinstance(old, dict):
        return "unreadable settings line"
    changed = [f"{k} {old.get(k)!r} then, {v!r} now" for k, v in new.items() if old.get(k) != v]
    return "; ".join(changed) or "different keys"


# --------------------------------------------------------------------------------------
# the survey
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class SurveyResult:
    """The rows of a survey, sorted by path, and how they were obtained."""

    rows: tuple[Row, ...]
    settings: SurveySettings
    computed: int  # rows made by this run
    reused: int  # rows taken from the journal of an earlier, interrupted run
    runner: str

    @property
    def errors(self) -> int:
        return sum(1 for r in self.rows if r["status"] != "ok")

    @property
    def reducible(self) -> int:
        return sum(1 for r in self.rows if r["reducible"])


def run_survey(files: Sequence[str], settings: SurveySettings, runner: Runner, journal_path: str | os.PathLike[str],
               *, resume: bool = False, batch_size: int | None = None,
               progress: Callable[[int, int], None] | None = None) -> SurveyResult:
    """Audit every file, recording each finished batch in the journal; the rows sorted by path.

    Parameters
    ----------
    files : morphology files (e.g. from :func:`find_files`), shown in the rows as given
    settings : what every file is analysed with
    runner : :class:`SerialRunner`, :class:`PoolRunner` or :class:`DaskRunner`
    journal_path : the journal file (created; appended to when resuming)
    resume : continue from an existing journal, reusing rows of files that have not changed since;
        without it an existing journal is an error (it would be lost)
    batch_size : files per task (default :func:`default_batch_size`)
    progress : called as ``progress(done, total)`` after every batch

    The journal is left in place; remove it once the table is safely written.
    """
    journal = Journal(journal_path, settings)
    done: dict[str, Row] = {}
    stamps = {f: file_stamp(f) for f in files}
    if journal.path.exists():
        if not resume:
            raise InputError(f"{journal.path}: the journal of an unfinished survey is in the way; continue that "
                             "survey (--resume) or delete the journal")
        wanted = set(files)
        done = {p: row for p, (stamp, row) in journal.read().items() if p in wanted and stamp == stamps[p]}
    jobs = [(os.path.abspath(f), f) for f in files if f not in done]
    size = batch_size or default_batch_size(len(jobs), runner.workers)
    batches = make_batches(jobs, size)
    total, finished = len(files), len(done)
    if progress is not None:
        progress(finished, total)
    new: list[Row] = []
    try:
        for rows in runner.run(batches, settings):
            if not new:  # opened at the first finished batch: a runner that cannot start leaves no journal
                journal.open()
            journal.record(rows, stamps)
            new.extend(rows)
            finished += len(rows)
            if progress is not None:
                progress(finished, total)
    finally:
        journal.close()
    rows = sorted([*done.values(), *new], key=lambda r: r["path"])
    return SurveyResult(rows=tuple(rows), settings=settings, computed=len(new), reused=len(done),
                        runner=runner.describe())


# --------------------------------------------------------------------------------------
# tables
# --------------------------------------------------------------------------------------
def _cell(value: Any) -> str:
    """One CSV cell, written the same way on every machine: shortest round-trip floats."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(value)
    return str(value)


def header_lines(result_rows: Sequence[Row], settings: SurveySettings) -> list[str]:
    """The table's description: title, assumptions, every setting with its unit, the counts."""
    errors = sum(1 for r in result_rows if r["status"] != "ok")
    lines = ["cabletheory survey: Rall's audit and reduction, one row per morphology file",
             f"assumptions: {PASSIVE_CAVEAT}"]
    lines += [f"{name}: {value!r} {unit}".rstrip() if isinstance(value, float) else f"{name}: {value} {unit}".rstrip()
              for name, (value, unit) in settings.parameters().items()]
    lines.append(f"cells: {len(result_rows)} ({len(result_rows) - errors} analysed, {errors} errors)")
    lines.append("units: " + ", ".join(f"{c.name} {c.unit}" for c in COLUMNS if c.unit not in ("", "1")))
    return lines


def table_csv(rows: Sequence[Row], settings: SurveySettings) -> str:
    """The survey table as CSV text: ``#`` lines with the settings, a header row, one row per file."""
    out = io.StringIO()
    out.write("".join(f"# {line}\n" for line in header_lines(rows, settings)))
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(COLUMN_NAMES)
    for row in rows:
        writer.writerow([_cell(row[name]) for name in COLUMN_NAMES])
    return out.getvalue()


def table_parquet(rows: Sequence[Row], settings: SurveySettings) -> bytes:
    """The survey table as Parquet bytes (needs ``cabletheory[parquet]``); the settings and column
    units are in the file's key-value metadata under ``cabletheory``."""
    require("pyarrow", "Parquet output", "parquet")
    import pyarrow as pa
    import pyarrow.parquet as pq

    types = {"text": pa.string(), "int": pa.int64(), "float": pa.float64(), "bool": pa.bool_()}
    schema = pa.schema([pa.field(c.name, types[c.kind]) for c in COLUMNS], metadata={
        "cabletheory": json.dumps({"description": header_lines(rows, settings), "settings": settings.as_json(),
                                   "units": {c.name: c.unit for c in COLUMNS}}, ensure_ascii=False)})
    table = pa.table({c.name: [row[c.name] for row in rows] for c in COLUMNS}, schema=schema)
    buffer = io.BytesIO()
    pq.write_table(table, buffer)
    return buffer.getvalue()


def _parse_cell(text: str, kind: str) -> Any:
    if text == "":
        return "" if kind == "text" else None
    if kind == "int":
        return int(text)
    if kind == "float":
        return float(text)
    if kind == "bool":
        return text == "true"
    return text


def read_table(path: str | os.PathLike[str]) -> tuple[list[Row], list[str]]:
    """Rows and ``#`` description lines of a survey table written by :func:`table_csv` or
    :func:`table_parquet`."""
    p = Path(path)
    if not p.is_file():
        raise MissingFileError(f"survey table {str(p)!r} does not exist")
    if p.suffix.lower() == ".parquet":
        require("pyarrow", "reading Parquet", "parquet")
        import pyarrow.parquet as pq

        table = pq.read_table(p)
        meta = json.loads((table.schema.metadata or {}).get(b"cabletheory", b"{}"))
        return table.to_pylist(), list(meta.get("description", []))
    text = p.read_text(encoding="utf-8")
    comments = [ln[2:] for ln in text.splitlines() if ln.startswith("# ")]
    reader = csv.reader(ln for ln in text.splitlines() if not ln.startswith("#"))
    header = next(reader, None)
    if header is None or tuple(header) != COLUMN_NAMES:
        raise InputError(f"{p}: not a survey table (its header row differs from this version's columns)")
    kinds = [c.kind for c in COLUMNS]
    rows = []
    for number, cells in enumerate(reader, start=2):
        if len(cells) != len(kinds):
            raise InputError(f"{p}: data row {number}: {len(cells)} cells, expected {len(kinds)}")
        try:
            rows.append({c.name: _parse_cell(v, k) for c, v, k in zip(COLUMNS, cells, kinds, strict=True)})
        except ValueError as exc:
            raise InputError(f"{p}: data row {number}: {exc}") from None
    return rows, comments
