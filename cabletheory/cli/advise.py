"""``cabletheory advise``: compartments per branch for a target error, beside the rule of thumb."""

from __future__ import annotations

import argparse
import math
import re

import numpy as np

from .. import PASSIVE_CAVEAT
from ..compartment import SCHEMES
from ..errors import InputError
from ..output import dump_json, echo_cylinder, quantity, table
from ..units import format_quantity, parse_quantity, parse_series
from ..verify.advice import OUTPUTS, Advice, StepAdvice, advise_cable, advise_tree
from .common import add_membrane_options, parse_end, read_cylinder, read_membrane

TREE_QUANTITIES = ("input-resistance", "impedance")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "advise",
        help="compartments per branch needed for a target error, beside a rule of thumb",
        description="How many equal compartments a compartmental model needs so that one output is within a "
                    "target relative error, found by solving a reference discretisation (second order in "
                    "Δx) against the exact answer; shown beside the rule of thumb (compartments no longer than "
                    "a fraction of the length constant at 100 Hz) and the error that rule gives. For --quantity "
                    "time-course also the largest time step of --scheme, with half the target given to the "
                    "compartments and half to the time step, verified against the exact course. For one cable "
                    "use the cable "
                    "options; for a tree give --morphology FILE (SWC or tree outline) or --parents/--lengths/"
                    "--diameters. With --morphology, --quantity time-course reads a current step at the soma at the "
                    "--read-at points of the tree ('soma, 412, branch 443 +25 um', the column syntax of compare).",
        epilog=PASSIVE_CAVEAT,
    )
    group = parser.add_argument_group("cable (bare numbers: Ω·cm², Ω·cm, µF/cm², µm, nS)")
    add_membrane_options(group)
    group.add_argument("--diameter", metavar="D", help="cable diameter, e.g. 2um")
    group.add_argument("--length", metavar="LEN", help="cable length, e.g. 500um (finite)")
    group.add_argument("--end", default="sealed", metavar="END",
                       help="far end of the cable: sealed, killed or a conductance such as 0.5nS "
                            "(default sealed; a tree's tips: --tips)")
    tree = parser.add_argument_group("tree instead of one cable")
    tree.add_argument("--morphology", metavar="FILE",
                      help="morphology read as the tree command reads it: SWC (pieces as cylinders, axon left "
                           "out, soma lumped) or a tree outline; tapered branches are not allowed")
    tree.add_argument("--tips", metavar="END",
                      help="every tip of the tree: sealed, killed or a conductance such as 0.5nS (as in "
                           "charge and compare; default sealed)")
    tree.add_argument("--stimulus-at", metavar="POINT",
                      help="time-course on a tree: where the current step is applied, the soma (default) or a "
                           "point of the file such as 412")
    tree.add_argument("--parents", metavar="LIST", help="parent of each branch, -1 for the root: '-1,0,0'")
    tree.add_argument("--lengths", metavar="LIST", help="branch lengths: '300,300,300 um'")
    tree.add_argument("--diameters", metavar="LIST", help="branch diameters: '4,2.52,2.52 um'")
    parser.add_argument("--soma-diameter", metavar="D",
                        help="lumped spherical soma at the origin/root (area π d²), e.g. 20um")
    parser.add_argument("--quantity", default="input-resistance", choices=list(OUTPUTS),
                        help="the output that must be accurate (default input-resistance); trees: "
                             "input-resistance or impedance")
    parser.add_argument("--target", default="1%", metavar="ERROR",
                        help="largest relative error, e.g. 1%% or 0.001 (default 1%%)")
    parser.add_argument("--read-at", metavar="X",
                        help="where attenuation/time-course is read (default: far end); on a tree, points such as "
                             "'soma, 412, branch 443 +25 um' (default: the soma)")
    parser.add_argument("--frequency", default="100 Hz", metavar="F", help="for impedance (default 100 Hz)")
    parser.add_argument("--times", default="0:2:0.05 ms", metavar="RANGE",
                        help="sample times for time-course, e.g. '0:2:0.05 ms' (default)")
    parser.add_argument("--scheme", choices=list(SCHEMES), default=None,
                        help="time-course only: the time scheme whose largest Δt is advised (default "
                             "crank-nicolson)")
    parser.add_argument("--compare-step", metavar="DT",
                        help="time-course only: also measure the error of this fixed time step with the advised "
                             "compartments, e.g. '10 us', '25 us' or '50 us' (default: none)")
    parser.add_argument("--rule-fraction", default="0.1", metavar="FRACTION",
                        help="rule of thumb: compartment length as a fraction of the length constant at "
                             "--rule-frequency (default 0.1)")
    parser.add_argument("--rule-frequency", default="100 Hz", metavar="F",
                        help="rule of thumb: frequency of the length constant (default 100 Hz)")
    parser.add_argument("--json", action="store_true", help="print one JSON object with SI values")
    parser.set_defaults(run=run)


def parse_relative(text: str, field: str) -> float:
    """'1%' -> 0.01, '0.001' -> 0.001."""
    raw = text.strip()
    if raw.endswith("%"):
        return parse_quantity(raw[:-1], "dimensionless", field) / 100.0
    return parse_quantity(raw, "dimensionless", field)


def _tree_arrays(args: argparse.Namespace
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray, float | None, str, list[str]]:
    """Pieces of the tree (parents, lengths, diameters in SI), the soma area from the file (m², or
    None), a label and the name of every piece (the file's own point ids or branch names; the index
    for --parents lists). ``--tree`` is read as the ``tree`` command reads it (SWC or tree outline, told
    apart by :func:`cabletheory.morphology.read_morphology`; SWC with its defaults: each piece a
    cylinder with its own point's diameter, axon left out, soma lumped at the root)."""
    if args.tree:
        tree, label = _read_tree(args)
        return (tree.parents, tree.lengths, tree.proximal_diameters, tree.soma_area, label,
                [str(name) for name in tree.labels])
    if not (args.parents and args.lengths and args.diameters):
        raise InputError("a tree needs --parents, --lengths and --diameters together (or --tree FILE)")
    parents = parse_parents(args.parents)
    lengths = np.array(parse_series(args.lengths, "length", "--lengths", allow_zero=False))
    diameters = np.array(parse_series(args.diameters, "length", "--diameters", allow_zero=False))
    for name, arr in (("--lengths", lengths), ("--diameters", diameters)):
        if arr.size != parents.size:
            raise InputError(f"{name}: {arr.size} values for {parents.size} branches")
    return parents, lengths, diameters, None, f"{parents.size} branches", [str(i) for i in range(parents.size)]


def _read_tree(args: argparse.Namespace):  # -> tuple[tree.Tree, str]
    """The tree of ``--morphology`` (or ``--tree``) and a label for it; tapered pieces and pieces of
    zero length are refused, naming the option."""
    from ..inputs import read_outline_value
    from ..morphology import Outline, read_morphology
    from ..tree import build_tree

    option = "--morphology"
    morphology = read_morphology(args.tree, read_outline_value)
    tree = build_tree(morphology)
    tapered = np.flatnonzero(~np.isclose(tree.proximal_diameters, tree.distal_diameters, rtol=1e-12))
    if tapered.size:
        raise InputError(f"{option}: {args.tree}: piece {tree.labels[tapered[0]]!r} is tapered (a frustum); "
                         "advice treats uniform cylinders only (split each taper into steps)")
    short = np.flatnonzero(tree.lengths <= 0)
    if short.size:
        raise InputError(f"{option}: {args.tree}:{int(tree.lines[short[0]])}: piece "
                         f"{tree.labels[short[0]]!r} has zero length; advice needs every piece longer "
                         "than zero")
    what = "branches" if isinstance(morphology, Outline) else "SWC pieces"
    return tree, f"{args.tree} ({len(tree)} {what})"


def _tree_course(args: argparse.Namespace, target: float, scheme: str, compare_step: float | None,
                 soma_diameter: float | None, rule_fraction: float, rule_frequency: float):
    """``advise --morphology FILE --quantity time-course``: the advice, the echoed inputs, the pieces'
    names and the read points' texts."""
    import dataclasses

    from ..tree_laplace import PassiveTree
    from ..tree_sites import in_words
    from ..verify.advice import advise_tree_course
    from ..verify.tree_reading import TreePoints
    from .reference import parser_for_quantities

    tree, label = _read_tree(args)
    if soma_diameter:
        tree = dataclasses.replace(tree, soma_area=math.pi * soma_diameter**2)
    rm, ri, cm = read_membrane(args)
    cell = PassiveTree(tree, rm, ri, cm, tips=_tip_end(args))
    points = TreePoints(tree, parser_for_quantities)
    source = None
    if args.stimulus_at:
        try:
            source = points.point(args.stimulus_at).site
        except InputError as exc:
            raise InputError(f"--stimulus-at: {exc}") from None
        if source.piece >= 0 and not math.isclose(source.distance, float(tree.lengths[source.piece]), rel_tol=1e-9):
            raise InputError("--stimulus-at: give the soma or a point of the file (where every discretisation has "
                             f"a node), not a place part way along a piece ({args.stimulus_at.strip()!r})")
    texts = [item.strip() for item in (args.read_at or "soma").split(",")]
    read, labels = [], []
    for text in texts:
        try:
            point = points.point(text)
        except InputError as exc:
            raise InputError(f"--read-at: {exc}") from None
        if point.label not in labels:
            read.append(point.site)
            labels.append(point.label)
    held = np.isinf(cell.tip_conductances())
    for site, label_text in zip(read, labels, strict=True):
        if site.piece >= 0 and held[site.piece] and math.isclose(site.distance, float(tree.lengths[site.piece])):
            raise InputError(f"--read-at: {label_text} is a killed tip, held at rest, so a relative error means "
                             "nothing there; choose another point")
    times = np.array(parse_series(args.times, "time", "--times"))
    advice = advise_tree_course(cell, read, target, times=times, stimulus_at=source, scheme=scheme,
                                compare_step=compare_step,
                                rule_fraction=rule_fraction, rule_frequency=rule_frequency)
    inputs = [("tree", label), ("Rm", format_quantity(rm, "membrane_resistivity")),
              ("Ri", format_quantity(ri, "axial_resistivity")), ("Cm", format_quantity(cm, "membrane_capacitance")),
              ("tips", args.end), ("stimulus", "current step at " + ("the soma (root)" if args.stimulus_at is None
                                                                     else in_words(args.stimulus_at.strip(), source))),
              ("read at", ", ".join(labels))]
    if tree.soma_area and not soma_diameter:
        inputs.append(("soma area (from the file)", format_quantity(tree.soma_area, "area")))
    return advice, inputs, [str(name) for name in tree.labels], labels


def _tip_end(args: argparse.Namespace) -> float:
    """The tips' end of a tree, from --tips (or --end, the cable's word), in S."""
    from ..inputs import read_end

    return read_end(args.tips, "--tips") if args.tips is not None else parse_end(args.end)


def parse_parents(text: str) -> np.ndarray:
    """'-1,0,0' -> the parent index of each branch: -1 for the first (the root), and for every other
    branch the index of a branch before it; anything else is refused naming --parents."""
    items = [item.strip() for item in text.split(",")]
    if len(items) > 100_000:
        raise InputError(f"--parents: {len(items)} branches; at most 100000")
    parents: list[int] = []
    for i, item in enumerate(items):
        if not re.fullmatch(r"-?[0-9]{1,6}", item):
            raise InputError(f"--parents: item {i + 1} ({item[:20]!r}) is not a whole number; expected a list such "
                             "as '-1,0,0' (-1 for the root, then the index of each branch's parent)")
        parent = int(item)
        if i == 0 and parent != -1:
            raise InputError(f"--parents: the first branch is the root, so its parent must be -1, not {parent}")
        if i > 0 and not 0 <= parent < i:
            raise InputError(f"--parents: branch {i} has parent {parent}; expected the index of an earlier "
                             f"branch (0 to {i - 1}), counting from 0")
        parents.append(parent)
    return np.array(parents, dtype=np.int64)


def run(args: argparse.Namespace) -> int:
    args.tree = args.morphology
    target = parse_relative(args.target, "--target")
    if not 1e-9 <= target < 1:
        raise InputError(f"--target: {args.target!r} must lie between 1e-7 % and 100 % (e.g. 1%)")
    rule_fraction = parse_quantity(args.rule_fraction, "dimensionless", "--rule-fraction")
    rule_frequency = parse_quantity(args.rule_frequency, "frequency", "--rule-frequency")
    if args.quantity != "time-course":
        for option, value in (("--scheme", args.scheme), ("--compare-step", args.compare_step)):
            if value is not None:
                raise InputError(f"{option}: only --quantity time-course has a time step to advise")
    scheme = args.scheme or "crank-nicolson"
    compare_step = None if args.compare_step is None else parse_quantity(args.compare_step, "time", "--compare-step")
    frequency = parse_quantity(args.frequency, "frequency", "--frequency")
    soma_diameter = None
    if args.soma_diameter:
        soma_diameter = parse_quantity(args.soma_diameter, "length", "--soma-diameter")
    is_tree = bool(args.tree or args.parents or args.lengths or args.diameters)
    read_labels: list[str] | None = None
    if is_tree and args.end != "sealed":
        raise InputError("--end: a tree has tips, not one far end; give --tips")
    if args.tips is not None:
        if not is_tree:
            raise InputError("--tips: a cable has one far end; give --end")
        args.end = args.tips
    if args.stimulus_at is not None and not (is_tree and args.quantity == "time-course"):
        raise InputError("--stimulus-at: only a time course on a tree (--morphology, --quantity time-course) takes "
                         "a stimulus site; a cable's stimulus is at its origin")
    if is_tree and args.quantity == "time-course":
        if args.diameter or args.length:
            raise InputError("give either --diameter/--length (one cable) or a tree, not both")
        if not args.tree:
            raise InputError("--quantity: time-course on a tree needs the morphology file; give --morphology FILE")
        advice, inputs, names, read_labels = _tree_course(args, target, scheme, compare_step, soma_diameter,
                                                          rule_fraction, rule_frequency)
    elif is_tree:
        if args.diameter or args.length:
            raise InputError("give either --diameter/--length (one cable) or a tree, not both")
        if args.quantity not in TREE_QUANTITIES:
            raise InputError(f"--quantity: {args.quantity} is not available for a tree; choose "
                             f"{', '.join(TREE_QUANTITIES)} or (with --morphology) time-course")
        parents, lengths, diameters, file_soma_area, label, names = _tree_arrays(args)
        soma_area = math.pi * soma_diameter**2 if soma_diameter else (file_soma_area or 0.0)
        rm, ri, cm = read_membrane(args)
        end = _tip_end(args)
        tips = np.setdiff1d(np.arange(parents.size), parents[parents >= 0])
        ends = np.zeros(parents.size)
        ends[tips] = end
        advice = advise_tree(parents, lengths, diameters, rm, ri, cm, args.quantity, target,
                             end_conductances=ends, soma_area=soma_area,
                             frequency=frequency, rule_fraction=rule_fraction, rule_frequency=rule_frequency)
        inputs = [("tree", label), ("Rm", format_quantity(rm, "membrane_resistivity")),
                  ("Ri", format_quantity(ri, "axial_resistivity")), ("Cm", format_quantity(cm, "membrane_capacitance")),
                  ("tips", args.end)]
        if soma_area and not soma_diameter:
            inputs.append(("soma area (from the file)", format_quantity(soma_area, "area")))
    else:
        if not (args.diameter and args.length):
            raise InputError("one cable needs --diameter and --length (or give a tree)")
        cylinder = read_cylinder(args)
        site = parse_quantity(args.read_at, "length", "--read-at", allow_zero=True) if args.read_at else None
        if site is not None and site > cylinder.length:
            raise InputError(f"--read-at: {format_quantity(site, 'length')} lies beyond the cable's end "
                             f"({format_quantity(cylinder.length, 'length')})")
        exact_course = times = None
        if args.quantity == "time-course":
            times = np.array(parse_series(args.times, "time", "--times"))
            exact_course = _exact_time_course(cylinder, soma_diameter, site)
        advice = advise_cable(cylinder, args.quantity, target, site=site, frequency=frequency,
                              soma_area=math.pi * soma_diameter**2 if soma_diameter else 0.0,
                              rule_fraction=rule_fraction, rule_frequency=rule_frequency,
                              exact_time_course=exact_course, times=times, scheme=scheme, compare_step=compare_step)
        inputs = echo_cylinder(cylinder)
    if soma_diameter:
        inputs.append(("soma diameter", format_quantity(soma_diameter, "length")))
    names_or_none = names if is_tree else None
    print(dump_json(as_json(advice, names_or_none, read_labels)) if args.json
          else as_text(advice, inputs, names_or_none, read_labels))
    return 0


def _exact_time_course(cylinder, soma_diameter, site):
    """Exact voltage at ``site`` for a 1 A step at the origin (any far end; a soma makes it a ball and
    stick), from :mod:`cabletheory.transient`; the site is checked by the case's own rule."""
    from .. import transient as tr
    from ..case import Case, CaseFieldError

    where = cylinder.length if site is None else site
    model = tr.BallAndStick(cylinder, soma_diameter) if soma_diameter else cylinder
    try:
        case = Case(model, tr.CurrentStep(1.0), (where,))
    except CaseFieldError as exc:
        raise InputError(f"--read-at: {exc}") from None
    if math.isinf(cylinder.end_conductance) and where >= cylinder.length:
        raise InputError("--read-at: a killed end stays at rest, so a relative error means nothing there; "
                         "choose a --read-at inside the cable")

    def course(t):
        return tr.charge(case.cell, case.stimulus, t, case.positions, modes=0).voltage[:, 0]

    return course


TREE_COURSE = ("voltage at each read point of the tree during a current step at the stimulus point (max error over "
               "time, relative to that point's peak)")


def _definition(a: Advice, read_at: list[str] | None) -> str:
    return TREE_COURSE if read_at is not None and a.output == "time-course" else OUTPUTS[a.output]


def as_json(a: Advice, names: list[str] | None = None, read_at: list[str] | None = None) -> dict:
    out = {
        "quantity": a.output,
        "definition": _definition(a, read_at),
        "target_relative_error": a.target,
        "compartments": a.compartments.tolist(),
        **({"branches": list(names)} if names is not None else {}),
        "relative_error": a.error,
        "rule_of_thumb": {
            "compartments": a.rule_compartments.tolist(),
            "relative_error": a.rule_error,
            "fraction_of_length_constant": a.rule_fraction,
            "frequency": quantity(a.rule_frequency, "frequency"),
        },
        "length_constants": quantity(a.length_constants, "length"),
        "length_constants_at_frequency": quantity(a.length_constants_at_frequency, "length"),
        "electrotonic_lengths": quantity(a.electrotonic_lengths, "dimensionless"),
        "assumptions": PASSIVE_CAVEAT,
    }
    if a.site is not None:
        out["site"] = quantity(a.site, "length")
    if read_at is not None and a.site_peaks is not None:
        out["read_at"] = list(read_at)
        out["peak_voltage_per_current"] = quantity(a.site_peaks, "resistance")
    if a.frequency is not None:
        out["frequency"] = quantity(a.frequency, "frequency")
    if a.time_step is not None:
        out["space_target_relative_error"] = a.time_step.space_target
        out["time_step"] = _step_json(a.time_step)
    return out


SPLIT = ("{space} to the compartments (measured with a negligible time step) and {time} to the time step "
         "(measured against a time-converged run with the same compartments); the two errors add to at most the "
         "target")


def _step_json(s: StepAdvice) -> dict:
    out = {
        "scheme": s.scheme,
        "expected_order": s.order,
        "budget_split": SPLIT.format(space=_percent(s.space_target), time=_percent(s.time_target)),
        "space_target_relative_error": s.space_target,
        "time_target_relative_error": s.time_target,
        "step": quantity(s.step, "time"),
        "output_spacing": quantity(s.output_spacing, "time"),
        "window": quantity(s.last_time, "time"),
        "sample_times": s.samples,
        "steps_per_output_spacing": s.divisions,
        "time_relative_error": s.time_error,
        "relative_error": s.error,
        "verified": "one solve with the advised compartments and time step, compared with the exact course",
        "limited_by_output_spacing": s.limited_by_output,
        "step_estimate_without_output_limit": None if s.step_estimate is None else quantity(s.step_estimate, "time"),
        "reference_step": quantity(s.reference_step, "time"),
        "reference_time_relative_error": s.reference_error,
        "solves": s.solves,
    }
    if s.compare_step is not None:
        out["fixed_step"] = {
            "step": quantity(s.compare_step, "time"),
            "relative_error": s.compare_error,
            "note": "the fixed step asked for with --compare-step, with the advised compartments"
                    if s.compare_error is not None else "the step does not divide the sample times; not compared",
        }
    return out


def _percent(x: float) -> str:
    return f"{x * 100:.3g} %"


def as_text(a: Advice, inputs: list[tuple[str, str]], names: list[str] | None = None,
            read_at: list[str] | None = None) -> str:
    blocks = [table(inputs, "Inputs")]
    what = _definition(a, read_at)
    if a.site is not None:
        what += f", site {format_quantity(a.site, 'length')}"
    if a.frequency is not None:
        what += f", {format_quantity(a.frequency, 'frequency')}"
    rows = [("output", what), ("target relative error", _percent(a.target))]
    if a.output in ("input-resistance",):
        rows.append(("exact value", format_quantity(a.exact_value.real, "resistance")))
    elif a.output == "impedance":
        rows.append(("exact |Z|", format_quantity(abs(a.exact_value), "resistance")))
    elif a.output == "attenuation":
        rows.append(("exact V(site)/V(0)", f"{a.exact_value.real:.6g}"))
    elif a.time_step is not None:
        s = a.time_step
        rows.append(("time window", f"0 to {format_quantity(s.last_time, 'time')}, {s.samples} sample times "
                                    f"(common spacing {format_quantity(s.output_spacing, 'time')})"))
        if read_at is not None and a.site_peaks is not None:
            from ..tree_sites import in_words

            rows += [(f"exact peak V/I at {in_words(where)}", format_quantity(float(peak), "resistance"))
                     for where, peak in zip(read_at, a.site_peaks, strict=True)]
            rows.append(("relative errors", "at each point, per that point's own peak voltage"))
        else:
            rows.append(("exact peak V/I", f"{format_quantity(a.exact_value.real, 'resistance')} "
                                           "(relative errors are per the peak voltage)"))
    blocks.append(table(rows, "Question"))
    n_branches = a.compartments.size
    share = a.time_step.space_target if a.time_step is not None else a.target
    if n_branches == 1:
        need = ("needed for the target" if a.time_step is None
                else f"needed for the space share ({_percent(share)})")
        rows = [
            (need, f"{int(a.compartments[0])} compartments, error {_percent(a.error)}"),
            (f"rule of thumb ({a.rule_fraction:g} × length constant at "
             f"{format_quantity(a.rule_frequency, 'frequency')})",
             f"{int(a.rule_compartments[0])} compartments, error {_percent(a.rule_error)}"),
            ("length constant", format_quantity(float(a.length_constants[0]), "length")),
            (f"length constant at {format_quantity(a.rule_frequency, 'frequency')}",
             format_quantity(float(a.length_constants_at_frequency[0]), "length")),
            ("electrotonic length L", f"{float(a.electrotonic_lengths[0]):.4g}"),
        ]
        blocks.append(table(rows, "Compartments"))
    else:
        labels = names if names is not None else [str(i) for i in range(n_branches)]
        width = max(6, *(len(label) for label in labels))
        lines = ["Compartments per branch (named as in the file)", "-" * 46,
                 f"  {'branch':>{width}}       L   needed   rule of thumb"]
        for i in range(n_branches):
            lines.append(f"  {labels[i]:>{width}} {a.electrotonic_lengths[i]:7.4f} {a.compartments[i]:8d} "
                         f"{a.rule_compartments[i]:15d}")
        lines.append(f"  {'total':>{width}}         {int(a.compartments.sum()):8d} "
                     f"{int(a.rule_compartments.sum()):15d}")
        where = "at the root" if read_at is None else "at the read points"
        lines.append(f"  error {where}: needed {_percent(a.error)}, rule of thumb {_percent(a.rule_error)}")
        blocks.append("\n".join(lines))
    verdict = "meets" if a.rule_error <= share else "misses"
    goal = "the target" if a.time_step is None else "the space share"
    blocks.append(f"The rule of thumb {verdict} {goal} for this output. Compartment counts assume equal "
                  "compartments with nodes at both ends (second order in Δx); errors were measured, not guessed.")
    if a.time_step is not None:
        blocks.append(_step_text(a.time_step, int(a.compartments.sum()), a.target))
    blocks.append(PASSIVE_CAVEAT)
    return "\n\n".join(blocks)


def _step_text(s: StepAdvice, compartments: int, target: float) -> str:
    dt = format_quantity(s.step, "time")
    spacing = format_quantity(s.output_spacing, "time")
    largest = (f"{dt} = the output spacing" if s.divisions == 1
               else f"{dt} = output spacing {spacing} / {s.divisions}")
    rows = [
        ("error budget", f"{_percent(s.space_target)} to the compartments, {_percent(s.time_target)} to the "
                         "time step"),
        ("largest Δt", f"{largest}, time error {_percent(s.time_error)}"),
    ]
    if s.limited_by_output and s.step_estimate is not None:
        rows.append(("coarser steps", f"about {format_quantity(s.step_estimate, 'time')} would do by the order "
                                      "(not verified: Δt must divide the output times; give coarser --times)"))
    rows += [
        ("verified error", f"{_percent(s.error)} with {compartments} compartments and Δt {dt} "
                           f"(target {_percent(target)})"),
    ]
    if s.compare_step is not None:
        rows.append((f"fixed step {format_quantity(s.compare_step, 'time')} (asked for)",
                     f"error {_percent(s.compare_error)} with {compartments} compartments"
                     if s.compare_error is not None else "does not divide the output times; not compared"))
    rows += [
        ("time-converged reference", f"Crank–Nicolson Δt {format_quantity(s.reference_step, 'time')}, own time "
                                     f"error {s.reference_error * 100:.2g} % (Richardson estimate)"),
    ]
    title = f"Time step ({s.scheme}, order {s.order} in Δt)"
    note = ("The target is split: " + SPLIT.format(space=_percent(s.space_target), time=_percent(s.time_target))
            + ". The largest Δt was predicted from the scheme's order and measured; the verified error is one "
              "solve with both, compared with the exact course.")
    if s.compare_step is not None and s.compare_error is not None:
        verdict = "meets" if s.compare_error <= target else "misses"
        note += (f" The fixed {format_quantity(s.compare_step, 'time')} step you asked about {verdict} the target "
                 "with these compartments.")
    return table(rows, title) + "\n\n" + note
