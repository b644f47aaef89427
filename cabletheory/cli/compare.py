"""``cabletheory compare``: a simulator's recorded output against the exact solution."""

from __future__ import annotations

import argparse
import math

import numpy as np

from .. import PASSIVE_CAVEAT
from ..compartment import SCHEMES
from ..errors import InputError
from ..inputs import read_pass_within
from ..output import dump_json, quantity, write_atomically
from ..units import format_quantity, parse_series
from ..verify.comparison import Comparison, Convergence, ExactCase, compare, convergence
from ..verify.reading import Recording, run_spacings
from ..verify.tables import split_stimulus
from .case import add_case_options
from .reference import (
    add_exact_truncation,
    add_layout_options,
    check_recorded_positions,
    exact_from_options,
    parser_for_quantities,
    read_run,
    read_tree_run,
)
from .tree_charge import add_tree_options


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "compare",
        help="errors of a simulator's output against the exact solution, and observed orders",
        description="Read one or more simulator output files (long or wide CSV, see docs/verify.md), evaluate "
                    "the exact solution at exactly the recorded points and report max/RMS absolute and "
                    "relative errors, where and when the worst error occurs, and a verdict against "
                    "--pass-within. With several runs, estimate the observed order of convergence in space "
                    "and time. Exit status: 0 every run within tolerance, 1 some run outside it, 2 bad input.",
        epilog=PASSIVE_CAVEAT,
    )
    parser.add_argument("runs", nargs="+", metavar="RUN.csv", help="simulator output files, coarse to fine")
    add_case_options(parser)
    add_tree_options(parser)
    add_exact_truncation(parser)
    add_layout_options(parser)
    check = parser.add_argument_group("verdict and convergence")
    check.add_argument("--pass-within", default="1%", metavar="ERR",
                       help="largest acceptable error: a voltage such as '10 uV' or a percentage of the peak "
                            "exact voltage such as '1%%' (default 1%%)")
    check.add_argument("--skip-onset-sample", action="store_true",
                       help="leave out the samples recorded exactly at the onset (simulators differ on whether "
                            "that sample already includes the stimulus)")
    check.add_argument("--dx", metavar="LIST", help="compartment length of each run, e.g. '50, 25, 12.5 um' "
                                                   "(or '# dx = 25 um' in each file)")
    check.add_argument("--dt", metavar="LIST", help="time step of each run, e.g. '0.1, 0.05 ms' "
                                                   "(or '# dt = 0.05 ms' in each file)")
    check.add_argument("--scheme", choices=list(SCHEMES), default="crank-nicolson",
                       help="the simulator's time scheme, for the expected orders (default crank-nicolson)")
    parser.add_argument("--report", metavar="FILE", help="also write the results as JSON to FILE (atomically)")
    parser.add_argument("--json", action="store_true", help="print JSON instead of text")
    parser.set_defaults(run=run, positions=None)


def _list(text: str | None, kind: str, field: str, count: int) -> np.ndarray:
    if not text:
        return np.full(count, np.nan)
    values = np.array(parse_series(text, kind, field, allow_zero=False))
    if values.size != count:
        raise InputError(f"{field}: {values.size} values for {count} runs")
    return values


def run(args: argparse.Namespace) -> int:
    tolerance, relative = read_pass_within(args.pass_within, "--pass-within")
    points: list[tuple[str, ...]] | None = None
    if args.morphology is not None:
        case, recordings, results, points = _compare_tree(args, tolerance, relative)
    else:
        cell_case, case = exact_from_options(args)
        recordings = [read_run(path, args) for path in args.runs]
        for recording in recordings:
            check_recorded_positions(cell_case, recording)
        results = [compare(r, case, tolerance, relative=relative, skip_onset=args.skip_onset_sample)
                   for r in recordings]
    order: Convergence | None = None
    if len(recordings) > 1:
        file_dx, file_dt = run_spacings(recordings, parser_for_quantities)
        dx = _list(args.dx, "length", "--dx", len(recordings))
        dt = _list(args.dt, "time", "--dt", len(recordings))
        dx = np.where(np.isnan(dx), file_dx, dx)
        dt = np.where(np.isnan(dt), file_dt, dt)
        if np.any(np.isfinite(dx)) or np.any(np.isfinite(dt)):
            order = convergence([c.max_abs_error for c in results], dx, dt, args.scheme)
    if args.report:
        write_atomically(args.report, dump_json(as_json(case, recordings, results, order, points, _tree_inputs(args))),
                         protected=[*args.runs, *([args.morphology] if args.morphology else [])])
    if args.json:
        print(dump_json(as_json(case, recordings, results, order, points, _tree_inputs(args))))
    else:
        print(as_text(case, recordings, results, order, points))
    return 0 if all(c.passed for c in results) else 1


def _tree_inputs(args: argparse.Namespace) -> dict | None:
    """The JSON's words for a tree case: the morphology file and where the stimulus is applied."""
    if args.morphology is None:
        return None
    return {"morphology": str(args.morphology), "stimulus_at": (args.stimulus_at or "soma").strip()}


def _compare_tree(args: argparse.Namespace, tolerance: float, relative: bool
                  ) -> tuple[ExactCase, list[Recording], list[Comparison], list[tuple[str, ...]]]:
    """``compare --morphology``: every run read at tree points (docs/verify.md, "On a whole tree") and
    compared with the exact solution of the tree case at exactly its points."""
    from ..verify.exact import tree_exact_case
    from .tree_charge import read_tree_case, read_tree_truncation

    tree_case = read_tree_case(args)
    value, relative_truncation = read_tree_truncation(args)
    recordings, results, points = [], [], []
    case: ExactCase | None = None
    for path in args.runs:
        read = read_tree_run(path, args, tree_case.cell.tree)
        case = tree_exact_case(tree_case, read.sites, value, relative=relative_truncation)
        recordings.append(read.recording)
        results.append(compare(read.recording, case, tolerance, relative=relative, skip_onset=args.skip_onset_sample))
        points.append(read.labels)
    assert case is not None  # argparse asks for at least one run
    return case, recordings, results, points


def _point(labels: tuple[str, ...], number: float) -> str:
    return labels[int(number)]


def _on_tree(label: str) -> str:
    """A tree point in words: 'the soma', 'point 412', 'branch 443 +25 um'."""
    from ..tree_sites import in_words

    return in_words(label)


def as_json(case: ExactCase, recordings: list[Recording], results: list[Comparison],
            order: Convergence | None, points: list[tuple[str, ...]] | None = None,
            tree: dict | None = None) -> dict:
    """The JSON report; on a tree (``points``: the labels of each run's sites) every position is the
    point's text in the column syntax instead of a length, the stimulus's ``position`` is its point
    and ``morphology`` names the file (``tree``: those two words)."""
    runs = []
    for k, (r, c) in enumerate(zip(recordings, results, strict=True)):
        labels = points[k] if points is not None else None
        runs.append({
            "file": r.name,
            "layout": r.layout,
            "samples": c.samples,
            "units": dict(r.units),
            "assumed_units": list(r.assumed),
            "resting_potential": quantity(r.resting_potential, "voltage"),
            "time_offset": quantity(r.time_offset, "time"),
            "max_abs_error": quantity(c.max_abs_error, "voltage"),
            "rms_abs_error": quantity(c.rms_abs_error, "voltage"),
            "max_rel_error": c.max_rel_error if math.isfinite(c.max_rel_error) else None,
            "rms_rel_error": c.rms_rel_error if math.isfinite(c.rms_rel_error) else None,
            "peak_exact_voltage": quantity(c.scale, "voltage"),
            "worst": {"time": quantity(c.worst_time, "time"),
                      "position": quantity(c.worst_position, "length") if labels is None
                      else _point(labels, c.worst_position),
                      "line": c.worst_line, "simulated": quantity(c.worst_simulated, "voltage"),
                      "exact": quantity(c.worst_exact, "voltage")},
            "sites": quantity(c.sites, "length") if labels is None else [_point(labels, x) for x in c.sites],
            "site_max_abs_error": quantity(c.site_max_abs_error, "voltage"),
            "pass_within": c.tolerance if c.relative else quantity(c.tolerance, "voltage"),
            "pass_within_is_relative": c.relative,
            "passed": c.passed,
            "hints": list(c.hints),
            "exact_error_bound": quantity(c.reference_bound, "voltage"),
        })
    parameters, stimulus = split_stimulus(case.parameters, case.stimulus_shape)
    if tree is not None:
        stimulus["position"] = tree["stimulus_at"]
    out: dict = {
        **({"morphology": tree["morphology"]} if tree is not None else {}),
        "case": case.description,
        "method": case.method,
        "parameters": parameters,
        "stimulus": stimulus,
        "runs": runs,
        "assumptions": PASSIVE_CAVEAT,
    }
    if order is not None:
        out["convergence"] = {
            "scheme": order.scheme,
            "spacings": quantity(order.spacings, "length"),
            "steps": quantity(order.steps, "time"),
            "estimates": [{"axis": e.axis, "observed": e.observed, "expected": e.expected,
                           "runs": list(e.runs), "verdict": e.verdict, "note": e.note}
                          for e in order.estimates],
        }
    return out


def _x(x: float) -> str:
    return "0 µm" if x == 0 else format_quantity(x, "length")


def _when(since_onset: float, onset: float) -> str:
    """The worst point's time, measured from the onset, and on the file's own clock when it differs;
    ends with an open parenthesis that the caller closes after the line number."""
    text = f"{format_quantity(since_onset, 'time')} after onset"
    if since_onset < 0:
        text = f"{format_quantity(-since_onset, 'time')} before onset"
    if onset:
        return f"{text} ({format_quantity(since_onset + onset, 'time', 4)} in the file; "
    return f"{text} ("


def _v(x: float) -> str:
    return format_quantity(x, "voltage", 3)


def as_text(case: ExactCase, recordings: list[Recording], results: list[Comparison],
            order: Convergence | None, points: list[tuple[str, ...]] | None = None) -> str:
    lines = [f"Exact case: {case.description}", f"  method: {case.method}"]
    for k, (r, c) in enumerate(zip(recordings, results, strict=True)):
        sites = r.sites
        labels = points[k] if points is not None else None
        assumed = f" (assumed: {', '.join(r.assumed)})" if r.assumed else ""
        where = (f"{sites.size} site(s); units time {r.units['time']}, position {r.units['position']}"
                 if labels is None else f"{sites.size} tree point(s); units time {r.units['time']}")
        lines += [
            "",
            f"{r.name}: {r.layout} table, {c.samples} samples at {where}, voltage {r.units['voltage']}{assumed}",
        ]
        if r.resting_potential or r.time_offset:
            lines.append(f"  subtracted: resting potential {_v(r.resting_potential)}, "
                         f"onset {format_quantity(r.time_offset, 'time')}")
        pct = tuple(f"{value * 100:.3g} %" if math.isfinite(value) else "n/a (the exact voltage is 0 at every sample)"
                    for value in (c.max_rel_error, c.rms_rel_error))
        lines += [
            f"  max error  {_v(c.max_abs_error)} at "
            f"{_x(c.worst_position) if labels is None else _on_tree(_point(labels, c.worst_position))}, "
            f"{_when(c.worst_time, r.time_offset)}"
            f"line {c.worst_line}: simulated "
            f"{_v(c.worst_simulated)}, exact {_v(c.worst_exact)})",
            f"  RMS error  {_v(c.rms_abs_error)}",
            f"  relative   max {pct[0]}, RMS {pct[1]} of the peak exact voltage {_v(c.scale)}",
            f"  exact values accurate to {_v(c.reference_bound)}",
        ]
        limit = f"{c.tolerance * 100:.3g} % of the peak" if c.relative else _v(c.tolerance)
        lines.append(f"  verdict    {'PASS' if c.passed else 'FAIL'} (pass within {limit})")
        lines += [f"  hint       {hint}" for hint in c.hints]
    if order is not None:
        lines += ["", f"Observed order of convergence ({order.scheme}):"]
        for e in order.estimates:
            lines.append(f"  {e.axis:<6} {e.observed:.2f}, expected {e.expected:g}: {e.verdict} "
                         f"(runs {', '.join(str(i + 1) for i in e.runs)}); {e.note}")
    elif len(recordings) > 1:
        lines += ["", "No order estimated: give each run's --dx and/or --dt (or '# dx = ...' lines)."]
    lines += ["", PASSIVE_CAVEAT]
    return "\n".join(lines)
