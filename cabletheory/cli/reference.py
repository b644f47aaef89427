"""``cabletheory reference``: an exact solution on a grid, to CSV, JSON or NPZ, with metadata."""

from __future__ import annotations

import argparse
import dataclasses
from pathlib import Path

import numpy as np

from .. import PASSIVE_CAVEAT
from ..case import Case, CaseFieldError
from ..errors import InputError
from ..inputs import read_column_positions, read_rest
from ..output import write_atomically
from ..textfile import read_input_text
from ..units import format_quantity, parse_quantity, parse_series
from ..verify.comparison import ExactCase
from ..verify.reading import Recording, read_recording
from ..verify.tables import ReferenceTable, reference_csv, reference_json, reference_npz, reference_table
from .case import add_case_options, read_case_options
from .common import add_truncation_option, read_truncation_voltage
from .tree_charge import add_tree_options, tree_table

FORMATS = ("csv", "json", "npz")


def add_exact_truncation(parser: argparse.ArgumentParser) -> None:
    """``--truncation`` with the default of the commands that compare against the exact solution."""
    add_truncation_option(parser, "1e-9 mV")


def exact_from_options(args: argparse.Namespace, positions: str | None = None) -> tuple[Case, ExactCase]:
    """The case the options describe and its exact solution (the rule of
    :func:`cabletheory.verify.exact_case`)."""
    from ..verify.exact import exact_case

    case = read_case_options(args, positions)
    return case, exact_case(case, read_truncation_voltage(args.truncation, case))


def check_recorded_positions(case: Case, recording: Recording) -> None:
    """Refuse a simulator file whose positions lie off the case's cell (the case's own rule)."""
    try:
        case.check_positions(recording.positions.tolist())
    except CaseFieldError as exc:
        raise InputError(f"{recording.name}: {exc}") from None


def parser_for_quantities(text: str, kind: str, where: str) -> float:
    """The :data:`~cabletheory.verify.QuantityParser` the command line gives the core."""
    return parse_quantity(text, kind, where, allow_zero=True, allow_negative=True)


def read_column_points(text: str) -> str | dict[str, str]:
    """``--column-at`` on a tree: one site ('412', 'branch 443 +25 um') for a file's single voltage
    column, or column names mapped to sites ('v_soma=soma, v_tip=443'; names in any case)."""
    if "=" not in text:
        return text.strip()
    mapping: dict[str, str] = {}
    for item in text.split(","):
        column, sep, where = item.partition("=")
        column = column.strip().lower()
        if not sep or not column or not where.strip():
            raise InputError(f"--column-at: {item.strip()!r} is not NAME=POINT; expected e.g. 'v_soma=soma, "
                             "v_tip=443'")
        if column in mapping:
            raise InputError(f"--column-at: column {column!r} is given twice")
        mapping[column] = where.strip()
    return mapping


def read_run(path: str, args: argparse.Namespace) -> Recording:
    """Read one simulator output file with the layout options of ``args``."""
    text = read_input_text(path, "simulator output")
    rest: float | str = read_rest(args.rest, "--rest") if getattr(args, "rest", None) else 0.0
    onset = parse_quantity(args.onset, "time", "--onset", allow_zero=True, allow_negative=True) \
        if getattr(args, "onset", None) else 0.0
    site = read_column_positions(args.column_at) if getattr(args, "column_at", None) else None
    return read_recording(text, path, parser_for_quantities, time_unit=args.time_unit,
                          position_unit=args.position_unit, voltage_unit=args.voltage_unit,
                          resting_potential=rest, time_offset=onset, site=site,
                          allow_negative_positions=True)


def read_tree_run(path: str, args: argparse.Namespace, tree):  # -> verify.tree_reading.TreeReading
    """Read one simulator output file recorded at points of ``tree`` (columns ``V@412``, a long
    table's ``point`` column, or ``--column-at``) with the layout options of ``args``."""
    from ..verify.tree_reading import read_tree_recording

    rest: float | str = read_rest(args.rest, "--rest") if args.rest else 0.0
    onset = parse_quantity(args.onset, "time", "--onset", allow_zero=True, allow_negative=True) if args.onset else 0.0
    return read_tree_recording(read_input_text(path, "simulator output"), path, parser_for_quantities, tree,
                               columns=read_column_points(args.column_at) if args.column_at else None,
                               time_unit=args.time_unit, distance_unit=args.position_unit,
                               voltage_unit=args.voltage_unit, resting_potential=rest, time_offset=onset)


def add_layout_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("reading simulator files (see docs/verify.md for the layouts)")
    group.add_argument("--time-unit", metavar="UNIT", help="unit of the time column if its header has none "
                                                          "(default ms)")
    group.add_argument("--position-unit", metavar="UNIT", help="unit of positions if not declared (default µm)")
    group.add_argument("--voltage-unit", metavar="UNIT", help="unit of voltages if not declared (default mV)")
    group.add_argument("--rest", metavar="V",
                       help="resting potential to subtract, e.g. '-65 mV', or 'first' to use each site's "
                            "first sample (default 0: the file already holds deviations from rest)")
    group.add_argument("--onset", metavar="T", help="stimulus onset in the file's clock (default 0)")
    group.add_argument("--column-at", metavar="X",
                       help="where the voltage columns were recorded when the header does not say it: one "
                            "position for a single column ('250 um'), or names mapped to positions "
                            "('v_soma=0 um, v_tip=500 um')")


def on_file_clock(table: ReferenceTable, since_onset: np.ndarray, onset: float) -> ReferenceTable:
    """The table with its times on the file's own clock (``onset`` s added) and every value at a time
    before the onset at rest, exactly 0 (as :func:`cabletheory.verify.compare` treats them); the onset
    is recorded as the ``stimulus_onset`` parameter so that a reader knows the clock."""
    before = since_onset < 0
    if table.layout == "wide":
        before = np.broadcast_to(before[:, None], table.voltage.shape)
    return dataclasses.replace(
        table, times=since_onset + onset, voltage=np.where(before, 0.0, table.voltage),
        bound=np.where(before, 0.0, table.bound),
        parameters={**table.parameters, "stimulus_onset": (onset, "s")})


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "reference",
        help="exact solution on a grid, to CSV/JSON/NPZ with metadata (to check a simulator)",
        description="Write the exact voltage of a passive cable case on a grid of times and positions, with "
                    "every parameter, the method, the tool version and the error bound of the values.",
        epilog=PASSIVE_CAVEAT,
    )
    add_case_options(parser)
    add_tree_options(parser)
    add_exact_truncation(parser)
    grid = parser.add_argument_group("grid")
    grid.add_argument("--times", metavar="RANGE", help="times since onset: '0:20:0.5 ms' or '1, 2, 5 ms'")
    grid.add_argument("--positions", metavar="RANGE", help="recording positions: '0:500:100 um' or '0, 250 um'")
    grid.add_argument("--like", metavar="FILE",
                      help="take the times and positions of an existing simulator output file instead; the "
                           "table keeps the file's own clock (onset at --onset, recorded as stimulus_onset) "
                           "and rows at or before the onset are at rest (0); with --morphology the file's "
                           "columns name tree points (V@412, V@branch 443 +25 um)")
    add_layout_options(parser)
    parser.add_argument("--output", "-o", metavar="FILE",
                        help="file to write (.csv, .json or .npz); default: CSV to standard output")
    parser.add_argument("--format", choices=FORMATS, help="file format (default: from the file name)")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    if getattr(args, "morphology", None) is not None:
        return _run_tree(args)
    if args.like and (args.times or args.positions):
        raise InputError("give either --like FILE or --times/--positions, not both")
    cell_case, case = exact_from_options(args, args.positions)
    inputs: list[str] = []
    onset = 0.0
    if args.like:
        recording = read_run(args.like, args)
        check_recorded_positions(cell_case, recording)
        inputs.append(args.like)
        if recording.layout == "wide":
            times = np.unique(recording.times)
            positions = recording.sites
            layout = "wide"
        else:
            times, positions, layout = recording.times, recording.positions, "long"
        onset = recording.time_offset
    else:
        if not (args.times and args.positions):
            raise InputError("give --times and --positions (or --like FILE)")
        times = np.array(parse_series(args.times, "time", "--times"))
        positions = np.array(cell_case.positions)
        layout = "wide"
    table = on_file_clock(reference_table(case, np.maximum(times, 0.0), positions, layout=layout), times, onset)
    fmt = args.format or (Path(args.output).suffix.lstrip(".").lower() if args.output else "csv")
    if fmt not in FORMATS:
        raise InputError(f"--output: cannot tell the format of {args.output!r}; use .csv, .json or .npz or "
                         "give --format")
    data: str | bytes = {"csv": reference_csv, "json": reference_json, "npz": reference_npz}[fmt](table)
    if args.output is None:
        if isinstance(data, bytes):
            raise InputError("NPZ is binary; give --output FILE.npz")
        print(data, end="")
        return 0
    write_atomically(args.output, data, protected=inputs)
    print(f"wrote {args.output} ({fmt.upper()}, {table.times.size} times × {table.positions.size} positions"
          f"{'' if layout == 'wide' else ' paired'}; largest error bound "
          f"{format_quantity(table.largest_bound, 'voltage')})")
    return 0


def _run_tree(args: argparse.Namespace) -> int:
    """``reference --morphology``: the exact table on a tree, long CSV rows (time_s, point, voltage_V)
    after '#' lines, or JSON; the points are the file's own labels."""
    if args.like:
        if args.times or args.positions:
            raise InputError("give either --like FILE or --times/--positions, not both")
        fmt = args.format or (Path(args.output).suffix.lstrip(".").lower() if args.output else "csv")
        if fmt != "csv":
            raise InputError(f"--output: with --like a tree's table is written as .csv, not {fmt!r}")
        text = _tree_like(args)
        if args.output is None:
            print(text, end="")
            return 0
        write_atomically(args.output, text, protected=[args.like, args.morphology])
        print(f"wrote {args.output} (CSV, exact time course on a tree at the samples of {args.like})")
        return 0
    if not (args.times and args.positions):
        raise InputError("give --times and --positions (point labels such as 'soma, 412')")
    fmt = args.format or (Path(args.output).suffix.lstrip(".").lower() if args.output else "csv")
    if fmt not in ("csv", "json"):
        raise InputError(f"--output: a tree's table is written as .csv or .json, not {fmt!r}")
    text = tree_table(args, parse_series(args.times, "time", "--times"), fmt)
    if args.output is None:
        print(text)
        return 0
    write_atomically(args.output, text + "\n")
    print(f"wrote {args.output} ({fmt.upper()}, exact time course on a tree)")
    return 0


def _tree_like(args: argparse.Namespace) -> str:
    """``reference --morphology --like FILE``: the exact voltage at every sample of a simulator file
    recorded at tree points, as long CSV rows (time_s on the file's own clock, point, voltage_V; at
    rest before the onset), readable by ``compare --morphology`` with the same --onset."""
    import csv
    import io

    from .. import PASSIVE_CAVEAT as CAVEAT
    from ..verify.exact import tree_exact_case
    from .tree_charge import read_tree_case, read_tree_truncation

    case = read_tree_case(args)
    value, relative = read_tree_truncation(args)
    onset = parse_quantity(args.onset, "time", "--onset", allow_zero=True, allow_negative=True) if args.onset else 0.0
    read = read_tree_run(args.like, args, case.cell.tree)
    exact = tree_exact_case(case, read.sites, value, relative=relative)
    r = read.recording
    after = r.times >= 0
    voltage = np.zeros(r.times.size)
    bound = np.zeros(r.times.size)
    if np.any(after):
        voltage[after], bound[after] = exact.evaluate(r.times[after], r.positions[after])
    buffer = io.StringIO()
    buffer.write(f"# cabletheory: exact voltage time course on a tree at the samples of {args.like}\n"
                 f"# case: {exact.description}\n# method: {exact.method}\n"
                 f"# stimulus onset: {onset!r} s on the file's clock (rows before it are at rest)\n"
                 f"# largest error estimate: {float(np.max(bound, initial=0.0))!r} V\n# assumptions: {CAVEAT}\n")
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["time_s", "point", "voltage_V"])
    labels = read.labels
    for k in np.lexsort((r.positions, r.times)):
        writer.writerow([repr(float(r.times[k] + onset)), labels[int(r.positions[k])], repr(float(voltage[k]))])
    return buffer.getvalue()
