"""``cabletheory charge --morphology FILE``: the exact time course on a whole reconstructed tree.

The tree is read as ``cabletheory tree`` reads it (SWC or an outline), the stimulus options are
the case options of every other cell, and the sites are the morphology's own point labels
(``--stimulus-at 412 --positions 'soma, 412, 977'``). The solution is the Laplace-domain recursion
from the tips inverted on a contour with an error estimate (:mod:`cabletheory.tree_time`).
"""

from __future__ import annotations

import argparse
import csv
import io

import numpy as np

from .. import PASSIVE_CAVEAT
from ..errors import InputError
from ..inputs import read_end, read_outline_value
from ..output import dump_json, quantity, table
from ..tree_sites import in_words
from ..units import format_quantity
from .case import OPTIONS
from .common import read_membrane

# cylinder options that a morphology replaces
CYLINDER_ONLY = {"diameter": "--diameter", "length": "--length", "soma_diameter": "--soma-diameter"}


def add_tree_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("whole tree (instead of a cylinder)")
    group.add_argument("--morphology", metavar="FILE",
                       help="a reconstructed tree (SWC or outline, read as 'cabletheory tree' reads it); the "
                            "sites are then point labels: --stimulus-at 412 --positions 'soma, 412'")
    group.add_argument("--tips", metavar="END",
                       help="every tip's end with --morphology: sealed, killed or a conductance to rest "
                            "(default: as the file says, else sealed)")


def read_tree_truncation(args: argparse.Namespace) -> tuple[float, bool]:
    """``--truncation`` on a tree: (value, relative); a voltage, or a fraction in (0, 1) of the
    case's reference voltage."""
    from .common import _truncation

    value, relative = _truncation(args.truncation)
    if relative and not 0 < value < 1:
        raise InputError(f"--truncation: {args.truncation.strip()!r} must lie between 0 and 1 (or be a voltage)")
    return value, relative


def read_tree_case(args: argparse.Namespace):  # -> tree_case.TreeCase
    """The tree case of the options (every value checked; messages name the option)."""
    from ..inputs import TREE_STIMULUS_FIELDS
    from ..inputs import read_tree_case as read_case_texts
    from ..morphology import read_morphology
    from ..tree import build_tree
    from ..tree_laplace import PassiveTree

    for field, option in CYLINDER_ONLY.items():
        if getattr(args, field) is not None:
            raise InputError(f"{option}: the morphology gives the geometry; leave {option} out with --morphology")
    if args.infinite:
        raise InputError("--infinite: a morphology is a finite tree; leave --infinite out")
    if args.end != "sealed":
        raise InputError("--end: a tree has tips, not one far end; give --tips")
    rm, ri, cm = read_membrane(args)
    tree = build_tree(read_morphology(args.morphology, read_outline_value))
    tips = read_end(args.tips, "--tips") if args.tips is not None else None
    cell = PassiveTree(tree, rm, ri, cm, tips=tips)
    # the one reader of a tree's stimulus texts, shared with the app (its error names the option)
    texts = {field: getattr(args, field) for field in TREE_STIMULUS_FIELDS}
    return read_case_texts(cell, {**texts, "stimulus_at": args.stimulus_at, "positions": args.positions}, OPTIONS)


def run_tree(args: argparse.Namespace, times: list[float] | None) -> str:
    """The text, JSON or CSV of a tree case's time course (``charge --morphology``), with the response
    features of every point unless ``--no-features`` or ``--csv`` (as for a cylinder)."""
    return tree_table(args, times, "json" if args.json else "csv" if args.csv else "text",
                      features=args.features and not args.csv)


def tree_table(args: argparse.Namespace, times: list[float] | None, form: str, *, features: bool = False) -> str:
    """A tree case's exact time course as ``form``: "text", "json" or "csv" (long rows), with the
    ``--truncation`` of the options (relative, or a voltage turned relative by the case's reference
    voltage, as for every other cell); ``features``: also the response features
    (:func:`cabletheory.waveform.response_features`, the same as a cylinder's) at up to
    ``FEATURE_POSITIONS`` points."""
    from ..tree_time import tree_response

    case = read_tree_case(args)
    t = np.linspace(0.0, 2 * case.membrane_time_constant, 11) if times is None else np.asarray(times)
    value, relative = read_tree_truncation(args)
    if not relative:
        probe = tree_response(case.cell, case.stimulus, [0.0], case.stimulus_site, case.sites[:1])
        value = value / probe.reference_voltage if probe.reference_voltage > 0 else 1e-10
    tolerance = min(max(value, 1e-14), 1e-2)
    response = tree_response(case.cell, case.stimulus, t, case.stimulus_site, case.sites, tolerance=tolerance)
    found = None
    if features:
        from ..waveform import response_features
        from .features import FEATURE_POSITIONS

        if len(case.labels) <= FEATURE_POSITIONS:
            found = response_features(case, tolerance=tolerance)
    if form == "json":
        out: dict = {
            "inputs": {"morphology": str(args.morphology), "case": case.describe(),
                       "stimulus_at": case.stimulus_label, "positions": list(case.labels),
                       "parameters": {k: {"value": v, "unit": u} for k, (v, u) in case.parameters().items()}},
            "times": quantity(response.times, "time"),
            "positions": list(case.labels),
            "voltage": quantity(response.voltage, "voltage"),
            "error_estimate": quantity(response.errors, "voltage"),
            "largest_error_estimate": quantity(response.error_bound, "voltage"),
            "steady_state": None if response.steady_state is None else quantity(response.steady_state, "voltage"),
            "method": response.method,
            "assumptions": PASSIVE_CAVEAT,
        }
        if found is not None:
            from .features import features_json

            out["features"] = features_json(found)
        return dump_json(out)
    if form == "csv":
        buffer = io.StringIO()
        buffer.write(f"# cabletheory: exact voltage time course on a tree\n# case: {case.describe()}\n"
                     f"# method: {response.method}\n# largest error estimate: {response.error_bound!r} V\n"
                     f"# assumptions: {PASSIVE_CAVEAT}\n")
        writer = csv.writer(buffer, lineterminator="\n")
        writer.writerow(["time_s", "point", "voltage_V"])
        for i, time in enumerate(response.times):
            for j, label in enumerate(case.labels):
                writer.writerow([repr(float(time)), label, repr(float(response.voltage[i, j]))])
        return buffer.getvalue().rstrip("\n")
    digits = args.digits
    echo = [("morphology", f"{args.morphology} ({len(case.cell.tree)} pieces)")]
    echo += [(name.replace("_", " "), format_quantity(value, _KIND[unit], digits))
             for name, (value, unit) in case.parameters().items()]
    echo += [("applied at", in_words(case.stimulus_label, case.stimulus_site)),
             ("tips", "as in the file" if args.tips is None else args.tips)]
    header = ["t"] + [f"V at {label}" for label in case.labels]
    rows = [[format_quantity(time, "time", digits) if time else "0"]
            + [format_quantity(v, "voltage", digits) for v in response.voltage[i]] for i, time in enumerate(t)]
    if response.steady_state is not None:
        rows.append(["final"] + [format_quantity(v, "voltage", digits) for v in response.steady_state])
    widths = [max(len(h), *(len(r[j]) for r in rows)) for j, h in enumerate(header)]
    lines = ["Voltage (deviation from rest)", "-" * 29,
             "  " + "  ".join(h.rjust(w) for h, w in zip(header, widths, strict=True))]
    lines += ["  " + "  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True)) for r in rows]
    blocks = [table(echo, "Inputs (whole tree)"), "\n".join(lines)]
    if found:
        from .features import features_table

        blocks.append(features_table(found, digits))
    blocks += [f"Error estimate: every voltage above is within {format_quantity(response.error_bound, 'voltage')} "
               f"of the exact solution ({response.method}).",
               *[f"Note: {note}." for note in response.notes], f"Note: {PASSIVE_CAVEAT}"]
    return "\n\n".join(blocks)


_KIND = {"ohm*m**2": "membrane_resistivity", "ohm*m": "axial_resistivity", "F/m**2": "membrane_capacitance",
         "s": "time", "A": "current", "V": "voltage"}
