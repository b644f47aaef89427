"""``cabletheory tree``: can this cell be reduced to an equivalent cylinder, and at what cost?"""

from __future__ import annotations

import argparse
import io
import math
import re
from pathlib import Path

import numpy as np

from .. import PASSIVE_CAVEAT
from ..errors import InputError
from ..inputs import read_end, read_outline_value
from ..morphology import SWC_TYPES, Outline, read_morphology
from ..output import dump_json, quantity, table, write_atomically
from ..tree import Tolerances, TreeReport, analyse_tree, build_tree, describe_tips, sample_profile
from ..units import format_quantity, parse_quantity
from .common import add_membrane_options, read_membrane, whole_number
from .tree_views import add_view_options, chosen_view

_TYPE_NAMES = {"soma": 1, "axon": 2, "basal": 3, "apical": 4}
_DEFAULT_TOLERANCE = Tolerances()


def add_tree_reading_options(parser: argparse.ArgumentParser, *, each_file: bool = False) -> None:
    """How a morphology is read and audited (--taper --types --axon --tips --ratio-tolerance
    --tip-tolerance): one definition for ``tree`` and ``survey``, same names, same meanings."""
    geometry = parser.add_argument_group("geometry")
    geometry.add_argument("--taper", action="store_true",
                          help="SWC: treat each piece between two points as a frustum from its parent point's "
                               "diameter to its own; a branch's first piece keeps its own first diameter "
                               "(default: a cylinder with its own point's diameter)")
    geometry.add_argument("--types", metavar="LIST",
                          help="SWC: keep only these point types, e.g. '3,4' or 'basal,apical' "
                               "(default: every type except the axon)")
    geometry.add_argument("--axon", action="store_true", help="SWC: keep the axon (type 2)")
    geometry.add_argument("--tips", metavar="END",
                          help="the end of every tip: 'sealed', 'killed' or a conductance to rest such as "
                               f"'0.5 nS' (default: as {'each' if each_file else 'the'} file says; sealed unless an "
                               "outline gives end=)")
    audit = parser.add_argument_group("audit tolerances")
    audit.add_argument("--ratio-tolerance", default=str(_DEFAULT_TOLERANCE.branch_ratio), metavar="T",
                       help="largest |Σd_child^3/2 / d_parent^3/2 − 1| at a branch point, and largest relative "
                            "change of d^3/2 along a branch (default %(default)s)")
    audit.add_argument("--tip-tolerance", default=str(_DEFAULT_TOLERANCE.tip_spread), metavar="ΔX",
                       help="largest spread of tip electrotonic distances, in λ (default %(default)s)")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "tree",
        help="audit a morphology against Rall's conditions, reduce it, exact input resistance",
        description="Read a morphology (SWC, or this package's tree outline), check Rall's conditions for "
                    "collapsing it into one equivalent cylinder (3/2 rule at branch points, equal electrotonic "
                    "distance of every tip), give the equivalent cylinder and ball-and-stick ρ, the exact "
                    "steady-state input resistance of the full tree and what the reduction costs.",
        epilog=PASSIVE_CAVEAT,
    )
    parser.add_argument("file", metavar="FILE", help="morphology: .swc, or a tree outline (.outline; see docs/tree.md)")
    group = parser.add_argument_group("membrane (bare numbers: Ω·cm², Ω·cm, µF/cm²)")
    add_membrane_options(group)
    add_tree_reading_options(parser)
    out = parser.add_argument_group("output")
    out.add_argument("--bins", type=int, default=12, metavar="N",
                     help="rows of the equivalent-cable table (default 12)")
    out.add_argument("--show", type=int, default=10, metavar="N",
                     help="departures listed in the text report (default 10; --json lists all)")
    out.add_argument("--plot", metavar="FILE",
                     help="also draw the report: the equivalent-cable profile (.png or .svg); with --map the tree "
                          "coloured by the map, with --frequencies the impedance, with --reduction-cost the two "
                          "soma responses (.png, .svg or .pdf)")
    out.add_argument("--digits", type=whole_number(2, 15), default=4, metavar="N",
                     help="significant digits in the text report (default 4)")
    out.add_argument("--json", action="store_true", help="print one JSON object with SI values")
    add_view_options(parser)
    parser.set_defaults(run=run)


def parse_types(text: str) -> set[int]:
    """'3,4' or 'basal, apical' -> {3, 4}."""
    found: set[int] = set()
    for item in (t.strip().lower() for t in text.split(",")):
        if not item:
            raise InputError(f"--types: empty item in {text!r}; expected e.g. '3,4' or 'basal,apical'")
        if item in _TYPE_NAMES:
            found.add(_TYPE_NAMES[item])
        elif re.fullmatch(r"[0-9]{1,4}", item):
            found.add(int(item))
        else:
            raise InputError(f"--types: {item[:20]!r} is neither an SWC type number nor one of "
                             f"{', '.join(_TYPE_NAMES)}")
    return found


def _tolerance(text: str, field: str) -> float:
    value = parse_quantity(text, "dimensionless", field, allow_zero=True)
    return value


def run(args: argparse.Namespace) -> int:
    rm, ri, cm = read_membrane(args)
    tolerances = Tolerances(branch_ratio=_tolerance(args.ratio_tolerance, "--ratio-tolerance"),
                            tip_spread=_tolerance(args.tip_tolerance, "--tip-tolerance"))
    if args.bins < 1 or args.bins > 1000:
        raise InputError(f"--bins: {args.bins} is out of range; expected 1 to 1000")
    if args.show < 0:
        raise InputError(f"--show: {args.show} is negative")
    view = chosen_view(args)
    if view is None and args.plot is not None and Path(args.plot).suffix.lower() not in (".png", ".svg"):
        raise InputError(f"--plot: {args.plot!r} must end in .png or .svg")
    types = parse_types(args.types) if args.types is not None else None
    if types is not None and args.axon:
        types.add(2)
    tip_conductance = read_end(args.tips, "--tips") if args.tips is not None else None
    morphology = read_morphology(args.file, read_outline_value)
    tree = build_tree(morphology, taper=args.taper, types=types, include_axon=args.axon)
    if view is not None:
        from .tree_views import run_view

        print(run_view(view, args, tree, morphology, tip_conductance, (rm, ri, cm)))
        return 0
    report = analyse_tree(tree, rm, ri, cm, tolerances=tolerances, tip_conductance=tip_conductance)
    fmt = "outline" if isinstance(morphology, Outline) else "SWC"
    if args.plot is not None:
        write_atomically(args.plot, plot_profile(report, Path(args.plot).suffix.lower()[1:]),
                         protected=[args.file])
    print(dump_json(as_json(report, fmt, len(morphology), args.bins)) if args.json
          else as_text(report, fmt, len(morphology), args.digits, args.bins, args.show, args.plot))
    return 0


# --------------------------------------------------------------------------------------
# JSON
# --------------------------------------------------------------------------------------
def _id(report: TreeReport, label: str) -> int | str:
    return int(label) if report.tree.numeric_ids else label


def _end_json(conductance: float) -> str | dict:
    """'sealed', 'killed' or ``{"value": S, "unit": "S"}`` for a leaky end."""
    if conductance == 0:
        return "sealed"
    if math.isinf(conductance):
        return "killed"
    return quantity(conductance, "conductance")


def tips_text(r: TreeReport) -> str:
    """How the tips end: the asked-for end, or a count of the file's own ends."""
    return describe_tips(r)


def as_json(r: TreeReport, file_format: str = "SWC", points: int = 0, bins: int = 12) -> dict:
    """The report as one JSON object; every quantity is ``{"value": SI, "unit": SI unit}``.

    The equivalent cable is given as the text report gives it: Σd^3/2 averaged over ``bins`` equal
    bins of X (``--bins``, up to 1000), not its full step function, which has a step at every piece
    of the tree (100,000 values for a tree of 100,000 points: 80 % of the output and of its writing
    time); :func:`cabletheory.tree.analyse_tree` returns the full one to scripts."""
    c = r.equivalent_cylinder
    bp, tips = r.branch_points, r.tips
    start, end, mean = sample_profile(r.equivalent_cable, bins)
    return {
        "source": r.tree.source,
        "format": file_format,
        "records": points,
        "pieces": r.pieces,
        "branches": r.branches,
        "geometry": r.tree.geometry,
        "conventions": list(r.notes),
        "input_site": r.tree.root_label,
        "inputs": {
            "membrane_resistivity": quantity(r.membrane_resistivity, "membrane_resistivity"),
            "axial_resistivity": quantity(r.axial_resistivity, "axial_resistivity"),
            "membrane_capacitance": quantity(r.membrane_capacitance, "membrane_capacitance"),
            "tips": "as in the file" if r.tip_conductance is None else _end_json(r.tip_conductance),
        },
        "tolerances": {"branch_ratio": r.tolerances.branch_ratio, "tip_spread": r.tolerances.tip_spread},
        "branch_points": [
            {"id": _id(r, bp.ids[k]), "ratio": float(bp.ratios[k]),
             "parent_diameter": quantity(float(bp.parent_diameters[k]), "length"),
             "children": int(bp.children[k]),
             "electrotonic_distance": float(bp.electrotonic_distances[k]), "line": int(bp.lines[k])}
            for k in range(len(bp.ids))],
        "tips": [
            {"id": _id(r, tips.ids[k]), "electrotonic_distance": float(tips.electrotonic_distances[k]),
             "path_length": quantity(float(tips.path_lengths[k]), "length"), "stem": _id(r, tips.stems[k]),
             "end": _end_json(float(tips.ends[k])), "line": int(tips.lines[k])}
            for k in range(len(tips.ids))],
        "tip_distance": {"min": r.tip_distance_min, "max": r.tip_distance_max, "mean": r.tip_distance_mean,
                         "spread": r.tip_distance_max - r.tip_distance_min},
        "stems": [
            {"id": _id(r, s.id), "type": s.type, "diameter": quantity(s.diameter, "length"), "tips": s.tips,
             "tip_distance_min": s.tip_distance_min, "tip_distance_max": s.tip_distance_max,
             "worst_ratio": s.worst_ratio, "worst_branch_change": s.worst_branch_change,
             "input_conductance": quantity(s.input_conductance, "conductance"),
             "membrane_area": quantity(s.membrane_area, "area"), "reducible": s.reducible}
            for s in r.stems],
        "reducible": r.reducible,
        "reasons": list(r.reasons),
        "violations": [{"kind": v.kind, "id": _id(r, v.id) if v.kind != "branch_diameter" else v.id,
                        "value": v.value if math.isfinite(v.value) else "killed", "limit": v.limit,
                        "line": v.line} for v in r.violations],
        "equivalent_cylinder": {
            "diameter": quantity(c.diameter, "length"),
            "length": quantity(c.length, "length"),
            "electrotonic_length": quantity(c.electrotonic_length, "dimensionless"),
            "length_constant": quantity(c.length_constant, "length"),
            "membrane_area": quantity(c.membrane_area, "area"),
            "semi_infinite_input_resistance": quantity(c.semi_infinite_input_resistance, "resistance"),
            "end": "sealed" if r.end_conductance_ratio == 0 else "killed" if math.isinf(r.end_conductance_ratio)
            else {"end_conductance_ratio": r.end_conductance_ratio},
        },
        "soma": None if r.soma_area is None else {
            "convention": r.tree.soma_convention,
            "area": quantity(r.soma_area, "area"),
            "conductance": quantity(r.soma_conductance, "conductance"),
        },
        "input_resistance": quantity(r.input_resistance, "resistance"),
        "input_resistance_includes_soma": r.soma_area is not None,
        "reduced_input_resistance": quantity(r.reduced_input_resistance, "resistance"),
        "difference_percent": r.difference_percent,
        "dendritic_input_conductance": quantity(r.dendritic_input_conductance, "conductance"),
        "conductance_ratio": r.conductance_ratio,
        "exact_conductance_ratio": r.exact_conductance_ratio,
        "membrane_area": quantity(r.membrane_area, "area"),
        "membrane_time_constant": quantity(r.membrane_time_constant, "time"),
        "equivalent_cable": {
            "bins": bins,
            "bin_start": quantity(start, "dimensionless"),
            "bin_end": quantity(end, "dimensionless"),
            "diameter_sum": {"value": mean.tolist(), "unit": "m**1.5"},
            "relative": quantity(mean / r.equivalent_cable.trunk, "dimensionless"),
        },
        "assumptions": PASSIVE_CAVEAT,
    }


# --------------------------------------------------------------------------------------
# text
# --------------------------------------------------------------------------------------
def _columns(header: list[str], rows: list[list[str]], title: str, left_last: bool = False) -> str:
    """Aligned columns: the first left-aligned, the others right-aligned (the last left if asked)."""
    widths = [max(len(h), *(len(row[j]) for row in rows)) if rows else len(h) for j, h in enumerate(header)]

    def line(cells: list[str]) -> str:
        last = len(cells) - 1
        return "  " + "  ".join((c.ljust(w) if j == 0 or (left_last and j == last) else c.rjust(w))
                                for j, (c, w) in enumerate(zip(cells, widths, strict=True))).rstrip()

    return "\n".join([title, "-" * len(title), line(header), *(line(r) for r in rows)])


def as_text(r: TreeReport, file_format: str = "SWC", points: int = 0, digits: int = 4, bins: int = 12,
            show: int = 10, plot: str | None = None) -> str:
    """A readable report: inputs and conventions, audit, verdict, reduction, profile, caveat."""

    def fmt(value: float, kind: str) -> str:
        return format_quantity(value, kind, digits)

    def num(value: float) -> str:
        return format_quantity(value, "dimensionless", digits)

    t = r.tree
    what = "points" if file_format == "SWC" else "branches"
    blocks = [f"Tree {t.source} ({file_format}, {points} {what} -> {r.pieces} pieces in {r.branches} "
              f"branches; input at the {t.root_label})"]
    blocks.append("Conventions\n-----------\n" + "\n".join(f"  - {n}" for n in r.notes))
    blocks.append(table([
        ("Rm (specific membrane resistance)", fmt(r.membrane_resistivity, "membrane_resistivity")),
        ("Ri (axial resistivity)", fmt(r.axial_resistivity, "axial_resistivity")),
        ("Cm (specific membrane capacitance)", fmt(r.membrane_capacitance, "membrane_capacitance")),
        ("membrane time constant τm", fmt(r.membrane_time_constant, "time")),
        ("tips", tips_text(r)),
    ], "Inputs"))
    bp = r.branch_points
    audit = [("branch points", str(len(bp.ids)))]
    if len(bp.ids):
        audit.append(("Σd_child^3/2 / d_parent^3/2", f"{num(float(bp.ratios.min()))} to "
                                                      f"{num(float(bp.ratios.max()))} (1 is Rall's 3/2 rule)"))
    audit += [
        ("tips", str(len(r.tips.ids))),
        ("tip electrotonic distance X", f"{num(r.tip_distance_min)} to {num(r.tip_distance_max)}, mean "
                                        f"{num(r.tip_distance_mean)}"),
        ("spread of tip distances", num(r.tip_distance_max - r.tip_distance_min)),
        ("dendritic membrane area", fmt(r.membrane_area, "area")),
        ("tolerances", f"ratio 1 ± {r.tolerances.branch_ratio:g}, tip spread ≤ {r.tolerances.tip_spread:g}"),
    ]
    blocks.append(table(audit, "Audit of Rall's conditions"))
    blocks.append(_columns(
        ["stem", "type", "diameter", "tips", "tip X min", "tip X max", "worst ratio", "input conductance",
         "alone"],
        [[s.id, SWC_TYPES.get(s.type, str(s.type)) if file_format == "SWC" else "-", fmt(s.diameter, "length"),
          str(s.tips), num(s.tip_distance_min), num(s.tip_distance_max), num(s.worst_ratio),
          fmt(s.input_conductance, "conductance"), "reducible" if s.reducible else "not reducible"]
         for s in r.stems],
        "Stem dendrites"))
    if r.reducible:
        verdict = ["Verdict: REDUCIBLE to an equivalent cylinder within the tolerances."]
    else:
        verdict = ["Verdict: NOT reducible to an equivalent cylinder within the tolerances, because"]
        verdict += [f"  - {reason}" for reason in r.reasons]
        if show and r.violations:
            verdict.append(f"  Largest departures ({min(show, len(r.violations))} of {len(r.violations)}):")
            for v in r.violations[:show]:
                verdict.append("    " + _violation_text(v, num))
    blocks.append("\n".join(verdict))
    c = r.equivalent_cylinder
    blocks.append(table([
        ("diameter (Σ d_stem^3/2)^(2/3)", fmt(c.diameter, "length")),
        ("length (same membrane area)", fmt(c.length, "length")),
        ("electrotonic length L", num(c.electrotonic_length)),
        ("length constant λ", fmt(c.length_constant, "length")),
        ("semi-infinite input resistance R∞", fmt(c.semi_infinite_input_resistance, "resistance")),
        *([] if r.end_conductance_ratio == 0 else [
            ("far end (all the tips' leak)", "killed (held at rest)" if math.isinf(r.end_conductance_ratio)
             else f"leaky, B = {num(r.end_conductance_ratio)}")]),
    ], "Equivalent cylinder"))
    site = "soma" if r.soma_area is not None else "root point"
    rows = [
        (f"exact, full tree (at the {site})", fmt(r.input_resistance, "resistance")),
        ("reduced model" + (" (soma + cylinder)" if r.soma_area is not None else " (cylinder)"),
         fmt(r.reduced_input_resistance, "resistance")),
        ("difference (reduced − exact)",
         "0 % (equal to rounding)" if abs(r.difference_percent) < 1e-9 else f"{r.difference_percent:+.3g} %"),
    ]
    if r.soma_area is not None and r.soma_conductance is not None:
        rows += [
            ("soma area, conductance", f"{fmt(r.soma_area, 'area')}, {fmt(r.soma_conductance, 'conductance')}"),
            ("ρ = G_D/G_S (ball-and-stick)", num(r.conductance_ratio or 0.0)),
            ("exact dendritic G / G_S", num(r.exact_conductance_ratio or 0.0)),
        ]
    else:
        rows.append(("soma membrane", "not included (the file has no soma)"))
    blocks.append(table(rows, f"Steady-state input resistance (tips: {tips_text(r)})"))
    blocks.append(profile_table(r, bins, digits))
    if plot:
        blocks.append(f"Equivalent-cable plot written to {plot}.")
    blocks.append(f"Note: {PASSIVE_CAVEAT} The reduction also assumes Rm and Ri are the same everywhere "
                  "and every tip has the same boundary condition.")
    return "\n\n".join(blocks)


def _violation_text(v, num) -> str:  # type: ignore[no-untyped-def]
    if v.kind == "branch_ratio":
        return f"branch point {v.id} (line {v.line}): ratio {num(v.value)}, allowed 1 ± {v.limit:g}"
    if v.kind == "branch_diameter":
        return (f"branch {v.id} (from line {v.line}): d^3/2 changes by {100 * v.value:.3g} % along it, "
                f"allowed {100 * v.limit:g} %")
    if v.kind == "tip_end":
        return f"tip {v.id} (line {v.line}): end-conductance ratio B = {num(v.value)}, unlike the other tips"
    return f"tip {v.id} (line {v.line}): X = {num(v.value)}, away from the middle of the tip range"


def profile_table(r: TreeReport, bins: int = 12, digits: int = 4, width: int = 30) -> str:
    """The equivalent cable as a text table with a bar chart of Σd^3/2 relative to the trunk."""
    start, end, mean = sample_profile(r.equivalent_cable, bins)
    rel = mean / r.equivalent_cable.trunk
    top = max(float(rel.max(initial=0.0)), 1.0)
    rows = []
    for a, b, value, m in zip(start, end, rel, mean, strict=True):
        bar = "#" * round(width * value / top)
        rows.append([f"{a:.3f}–{b:.3f}", format_quantity(float(value), "dimensionless", digits),
                     format_quantity(float(m) ** (2 / 3), "length", digits) if m > 0 else "0", bar])
    title = "Equivalent cable: Σ d^3/2 against electrotonic distance X (flat at 1 for a reducible tree)"
    return _columns(["X", "Σd^3/2 / D^3/2", "equiv. diameter", "profile"], rows, title, left_last=True)


def plot_profile(r: TreeReport, image_format: str = "png") -> bytes:
    """Draw the equivalent-cable profile (matplotlib, imported here) and return the image bytes."""
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    cable = r.equivalent_cable
    fig = Figure(figsize=(7.0, 3.6), layout="constrained")
    ax = fig.add_subplot()
    ax.step(cable.positions, cable.diameter_sum / cable.trunk, where="post", color="#225577",
            label=r"tree: $\Sigma d^{3/2} / D^{3/2}$")
    length = r.equivalent_cylinder.electrotonic_length
    ax.plot([0, length, length], [1, 1, 0], color="#cc6622", linestyle="--", label="equivalent cylinder")
    tips = r.tips.electrotonic_distances
    ax.plot(tips, np.zeros_like(tips), "|", color="#444444", markersize=10, label="tips")
    ax.set_xlabel("electrotonic distance X from the root")
    ax.set_ylabel(r"$\Sigma d^{3/2}$ relative to the trunk")
    verdict = "reducible" if r.reducible else "not reducible"
    ax.set_title(f"{Path(r.tree.source).name}: equivalent cable ({verdict})")
    ax.set_ylim(bottom=0)
    ax.legend(loc="best", fontsize="small")
    buffer = io.BytesIO()
    fig.savefig(buffer, format=image_format)
    return buffer.getvalue()
