"""``cabletheory tree FILE --map | --frequencies | --modes | --reduction-cost``: a whole tree in time
and frequency, instead of the audit report.

* ``--map`` the electrotonic map: attenuation to and from the soma at ``--frequency`` (default the
  steady state) and the centroid delays, at the soma and at the end of every piece;
* ``--frequencies LIST`` input or transfer impedance, magnitude and phase, from ``--stimulus-at``
  to each of ``--positions`` (point labels, as ``charge --morphology`` names them);
* ``--modes N`` the N slowest time constants with a voltage at the soma, their coefficients, and
  the L and ρ that peeling τ0, τ1 and C1/C0 would report, beside the reduction's own;
* ``--reduction-cost`` the soma's response of the tree and of its Rall reduction to one stimulus
  at the soma, side by side, with the largest difference and when it occurs.

Each view prints text (every number with its unit), ``--json`` (SI ``{"value", "unit"}``) or
``--csv`` (SI columns, units in the header), and ``--plot FILE`` draws it where a drawing helps.
The arithmetic is in :mod:`cabletheory.tree_time` and :mod:`cabletheory.tree_modes`; this module
reads the options and formats the results.
"""

from __future__ import annotations

import argparse
import csv
import io
from pathlib import Path

import numpy as np

from .. import PASSIVE_CAVEAT
from ..errors import InputError
from ..output import dump_json, quantity, table, write_atomically
from ..units import format_quantity, parse_quantity, parse_series
from .common import whole_number

VIEW_OPTIONS = ("--map", "--frequencies", "--modes", "--reduction-cost")
COLOURINGS = ("attenuation-to-soma", "attenuation-from-soma", "delay-to-soma", "delay-from-soma")
_PLOT_SUFFIXES = (".png", ".svg", ".pdf")
_LISTED = 60  # the text of --map lists every point up to this many, else the soma, branch points and tips

MAP_CAUTION = ("The map is that of a passive membrane: voltage-gated channels in real dendrites change "
               "attenuations and delays, so read it as the passive scaffold, not as what an active cell does.")
COST_CAUTION = ("Both responses assume a passive membrane; the reduction is judged here only against the "
                "passive tree it came from.")


# --------------------------------------------------------------------------------------
# options
# --------------------------------------------------------------------------------------
def add_view_options(parser: argparse.ArgumentParser) -> None:
    """The four views and the options that go with them (each names the view it serves)."""
    views = parser.add_argument_group("time and frequency (each replaces the audit report)")
    which = views.add_mutually_exclusive_group()
    which.add_argument("--map", action="store_true",
                       help="attenuation to and from the soma and centroid delays at the soma and at the end of "
                            "every piece (the electrotonic map)")
    which.add_argument("--frequencies", metavar="LIST",
                       help="impedance magnitude and phase against frequency, from --stimulus-at to each of "
                            "--positions: a list '1, 10, 100 Hz' or a range '0:500:50 Hz' (bare: Hz)")
    which.add_argument("--modes", type=whole_number(1, 50), metavar="N",
                       help="the N slowest time constants seen at the soma with their coefficients, and the L "
                            "and ρ peeling them would report, beside the reduction's")
    which.add_argument("--reduction-cost", action="store_true",
                       help="the soma's response of the tree and of its equivalent cylinder (with the soma) to "
                            "one stimulus at the soma, side by side (needs --current)")
    views.add_argument("--frequency", metavar="F",
                       help="with --map: frequency of the attenuations (bare: Hz; default 0, the steady state)")
    views.add_argument("--stimulus-at", metavar="POINT",
                       help="with --frequencies: the point the current enters, a point label such as an SWC id "
                            "or a branch name (default the soma)")
    views.add_argument("--positions", metavar="POINTS",
                       help="with --frequencies: the points whose voltage is reported, e.g. 'soma, 412' "
                            "(default the stimulus point: its input impedance)")
    views.add_argument("--colour-by", choices=COLOURINGS, metavar="WHAT",
                       help="with --map --plot: what colours the tree, one of " + ", ".join(COLOURINGS)
                            + " (default attenuation-to-soma)")
    views.add_argument("--csv", action="store_true",
                       help="with a view above: print CSV rows in SI units after '#' lines with the inputs")
    stimulus = parser.add_argument_group("stimulus at the soma (with --reduction-cost)")
    stimulus.add_argument("--shape", choices=("step", "pulse", "alpha"), metavar="SHAPE",
                          help="step, pulse or alpha (default step)")
    stimulus.add_argument("--current", metavar="I",
                          help="current of a step or pulse, peak of an alpha current (bare: pA)")
    stimulus.add_argument("--duration", metavar="T", help="pulse duration, e.g. '0.5 ms' (bare: ms)")
    stimulus.add_argument("--time-to-peak", metavar="T", help="time to peak of an alpha current (bare: ms)")
    stimulus.add_argument("--times", metavar="TIMES",
                          help="times after onset: a list '0, 1, 5 ms' or a range '0:40:2 ms' (bare: ms; default "
                               "0 to 2τm in 20 steps)")


def chosen_view(args: argparse.Namespace) -> str | None:
    """"map", "frequencies", "modes", "reduction-cost", or None for the audit report; refuses an
    option given without the view it belongs to."""
    view = ("map" if args.map else "frequencies" if args.frequencies is not None
            else "modes" if args.modes is not None else "reduction-cost" if args.reduction_cost else None)
    belongs = {"frequency": ("--frequency", "map"), "stimulus_at": ("--stimulus-at", "frequencies"),
               "positions": ("--positions", "frequencies"), "colour_by": ("--colour-by", "map"),
               "shape": ("--shape", "reduction-cost"), "current": ("--current", "reduction-cost"),
               "duration": ("--duration", "reduction-cost"), "time_to_peak": ("--time-to-peak", "reduction-cost"),
               "times": ("--times", "reduction-cost")}
    for field, (option, owner) in belongs.items():
        if getattr(args, field) is not None and view != owner:
            raise InputError(f"{option}: goes with --{owner}; give --{owner} too or leave {option} out")
    if args.csv and view is None:
        raise InputError("--csv: the audit report has --json; CSV is for --map, --frequencies, --modes and "
                         "--reduction-cost")
    if args.csv and args.json:
        raise InputError("--csv: choose --json or --csv, not both")
    if view is not None and args.plot is not None:
        if view == "modes":
            raise InputError("--plot: --modes has no drawing; --plot draws the audit, --map, --frequencies or "
                             "--reduction-cost")
        if Path(args.plot).suffix.lower() not in _PLOT_SUFFIXES:
            raise InputError(f"--plot: {args.plot!r} must end in .png, .svg or .pdf")
    return view


def _point(tree, label: str, option: str):  # -> Site
    """A point label or 'branch 443 +25 um' (the one syntax of cabletheory.tree_sites)."""
    from ..tree_sites import tree_site
    from .reference import parser_for_quantities

    try:
        return tree_site(tree, label, parser_for_quantities)
    except InputError as exc:
        raise InputError(f"{option}: {exc}") from None


def _labels(text: str, option: str) -> list[str]:
    labels = [item.strip() for item in text.split(",")]
    if not all(labels):
        raise InputError(f"{option}: empty point label in {text!r}; expected e.g. 'soma, 412, 977'")
    if len(labels) > 200:
        raise InputError(f"{option}: {len(labels)} points; give at most 200")
    return labels


# --------------------------------------------------------------------------------------
# shared pieces
# --------------------------------------------------------------------------------------
def _inputs(cell, source: str, tips: str, digits: int) -> list[tuple[str, str]]:
    rm = float(np.asarray(cell.membrane_resistivity).ravel()[0])
    cm = float(np.asarray(cell.membrane_capacitance).ravel()[0])
    tree = cell.tree
    return [
        ("morphology", f"{source} ({len(tree)} pieces, {tree.geometry}; "
                       f"{'soma' if tree.soma_area is not None else 'no soma: the root point'} at the root)"),
        ("Rm (specific membrane resistance)", format_quantity(rm, "membrane_resistivity", digits)),
        ("Ri (axial resistivity)", format_quantity(float(cell.axial_resistivity), "axial_resistivity", digits)),
        ("Cm (specific membrane capacitance)", format_quantity(cm, "membrane_capacitance", digits)),
        ("membrane time constant τm", format_quantity(rm * cm, "time", digits)),
        ("tips", tips),
    ]


def _inputs_json(cell, source: str, tips: str) -> dict:
    rm = float(np.asarray(cell.membrane_resistivity).ravel()[0])
    cm = float(np.asarray(cell.membrane_capacitance).ravel()[0])
    return {"morphology": source, "pieces": len(cell.tree), "geometry": cell.tree.geometry,
            "soma": cell.tree.soma_area is not None,
            "membrane_resistivity": quantity(rm, "membrane_resistivity"),
            "axial_resistivity": quantity(float(cell.axial_resistivity), "axial_resistivity"),
            "membrane_capacitance": quantity(cm, "membrane_capacitance"),
            "membrane_time_constant": quantity(rm * cm, "time"), "tips": tips}


def _columns(header: list[str], rows: list[list[str]], title: str) -> str:
    """Aligned columns, the first left-aligned and the rest right-aligned, under a title."""
    widths = [max(len(h), *(len(r[j]) for r in rows)) if rows else len(h) for j, h in enumerate(header)]

    def line(cells: list[str]) -> str:
        return "  " + "  ".join(c.ljust(w) if j == 0 else c.rjust(w)
                                for j, (c, w) in enumerate(zip(cells, widths, strict=True))).rstrip()

    return "\n".join([title, "-" * len(title), line(header), *(line(r) for r in rows)])


def _csv(comments: list[str], header: list[str], rows: list[list[object]]) -> str:
    buffer = io.StringIO()
    for comment in comments:
        buffer.write(f"# {comment}\n")
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for row in rows:
        writer.writerow([repr(float(v)) if isinstance(v, float | np.floating) else v for v in row])
    return buffer.getvalue().rstrip("\n")


def _quantity_or_zero(value: float, kind: str, digits: int) -> str:
    """A quantity with its unit, and an exact zero as a bare 0 (no prefix to choose)."""
    return "0" if value == 0 else format_quantity(value, kind, digits)


def _path_distances(tree) -> np.ndarray:
    """Path distance (m) from the root to the root and to every piece's distal node."""
    # pointer doubling: each node adds what its current ancestor has summed, then jumps to that
    # ancestor's ancestor (log2 of the depth whole-array steps)
    up = np.concatenate(([0], np.asarray(tree.parents, dtype=np.int64) + 1))
    out = np.concatenate(([0.0], np.asarray(tree.lengths, dtype=float)))
    while np.any(up != 0):
        out = out + np.where(up != 0, out[up], 0.0)
        up = up[up]
    return out


# --------------------------------------------------------------------------------------
# --map
# --------------------------------------------------------------------------------------
def map_view(args: argparse.Namespace, cell, source: str, tips: str, points) -> str:
    """The electrotonic map as text, JSON or CSV; ``--plot`` draws the tree coloured by it."""
    from ..tree_figure import draw_map, map_colouring
    from ..tree_time import electrotonic_map

    frequency = 0.0 if args.frequency is None else parse_quantity(args.frequency, "frequency", "--frequency",
                                                                  allow_zero=True)
    m = electrotonic_map(cell, frequency)
    tree = cell.tree
    names = [tree.root_label, *tree.labels]  # the map's sites: the root, then each piece's distal node
    distance = _path_distances(tree)
    if args.plot is not None:
        colouring = map_colouring(m, args.colour_by or COLOURINGS[0])
        at = "steady state" if frequency == 0 else f"{format_quantity(frequency, 'frequency')}"
        title = f"{Path(source).name}: {colouring.label.split(',')[0]}" + (
            f" ({at})" if colouring.log else "")
        write_atomically(args.plot, draw_map(tree, colouring, points=points, title=title,
                                             note="Passive membrane assumed.",
                                             image_format=Path(args.plot).suffix.lower()[1:]),
                         protected=[args.file])
    when = "the steady state (0 Hz)" if frequency == 0 else format_quantity(frequency, "frequency", args.digits)
    if args.json:
        return dump_json({
            "view": "map", "inputs": _inputs_json(cell, source, tips),
            "frequency": quantity(frequency, "frequency"),
            "points": names,
            "path_distance": quantity(distance, "length"),
            "input_impedance": quantity(m.input_impedance, "resistance"),
            "transfer_impedance_to_soma": quantity(m.transfer_impedance, "resistance"),
            "attenuation_to_soma": quantity(m.attenuation_to_root, "dimensionless"),
            "attenuation_from_soma": quantity(m.attenuation_from_root, "dimensionless"),
            "local_delay": quantity(m.local_delay, "time"),
            "transfer_delay": quantity(m.transfer_delay, "time"),
            "delay_to_soma": quantity(m.delay_to_root, "time"),
            "delay_from_soma": quantity(m.delay_from_root, "time"),
            "plot": args.plot,
            "assumptions": PASSIVE_CAVEAT,
        })
    if args.csv:
        header = ["point", "path_distance_m", "input_impedance_ohm", "transfer_impedance_to_soma_ohm",
                  "attenuation_to_soma", "attenuation_from_soma", "local_delay_s", "transfer_delay_s",
                  "delay_to_soma_s", "delay_from_soma_s"]
        rows = [[names[k], distance[k], m.input_impedance[k], m.transfer_impedance[k], m.attenuation_to_root[k],
                 m.attenuation_from_root[k], m.local_delay[k], m.transfer_delay[k], m.delay_to_root[k],
                 m.delay_from_root[k]] for k in range(len(names))]
        return _csv([f"cabletheory: electrotonic map of {source}, attenuations at {frequency!r} Hz",
                     "delays are centroid delays (independent of the frequency)",
                     f"assumptions: {PASSIVE_CAVEAT}"], header, rows)
    d = args.digits
    parents = np.asarray(tree.parents)
    children = np.bincount(parents[parents >= 0], minlength=len(tree))
    keep = np.concatenate(([True], children != 1)) if len(names) > _LISTED else np.ones(len(names), dtype=bool)
    held = m.input_impedance == 0  # killed tips: held at rest, nothing to attenuate or delay

    def cells(k: int) -> list[str]:
        if held[k]:
            return ["held at rest (killed tip)", "", "", ""]
        return [format_quantity(float(m.attenuation_to_root[k]), "dimensionless", d),
                format_quantity(float(m.attenuation_from_root[k]), "dimensionless", d),
                _quantity_or_zero(float(m.delay_to_root[k]), "time", d),
                _quantity_or_zero(float(m.delay_from_root[k]), "time", d)]

    rows = [[names[k], _quantity_or_zero(float(distance[k]), "length", d), *cells(k)]
            for k in np.flatnonzero(keep).tolist()]
    listed = ("every point" if keep.all() else
              f"the soma, branch points and tips: {int(keep.sum())} of {len(names)} points; --json and --csv "
              "list them all")

    def largest(values: np.ndarray) -> int:
        return int(np.nanargmax(np.where(held, np.nan, values)))

    far_a, far_from, far_d = (largest(m.attenuation_to_root), largest(m.attenuation_from_root),
                              largest(m.delay_to_root))
    tau = float(np.asarray(cell.time_constants).ravel()[0])
    summary = [
        ("frequency of the attenuations", when),
        ("input resistance at the soma" if frequency == 0 else "|input impedance| at the soma",
         format_quantity(float(m.input_impedance[0]), "resistance", d)),
        ("largest attenuation to the soma",
         f"{format_quantity(float(m.attenuation_to_root[far_a]), 'dimensionless', d)} (point {names[far_a]})"),
        ("largest attenuation from the soma",
         f"{format_quantity(float(m.attenuation_from_root[far_from]), 'dimensionless', d)} (point {names[far_from]})"),
        ("longest delay to the soma", f"{format_quantity(float(m.delay_to_root[far_d]), 'time', d)} "
                                      f"(point {names[far_d]}; τm = {format_quantity(tau, 'time', d)})"),
        ("local delay at the soma", format_quantity(float(m.local_delay[0]), "time", d)),
        *([("killed tips", f"{int(held.sum())}, held at rest: no attenuation or delay to give ('nan' or 'inf' "
                           "in --json and --csv)")] if held.any() else []),
    ]
    blocks = [table(_inputs(cell, source, tips, args.digits), "Inputs (whole tree)"),
              table(summary, f"Electrotonic map of {Path(source).name}"),
              _columns(["point", "path distance", "attenuation to soma", "attenuation from soma", "delay to soma",
                        "delay from soma"], rows, f"Points ({listed})"),
              "How to read it: an attenuation is the voltage where a current enters divided by the voltage it "
              "makes at the other end (1 means no loss; its logarithm is the electrotonic distance of Zador, "
              "Agmon-Snir & Segev 1995). A delay is the time between the centroids of the voltage at the two "
              "ends (Agmon-Snir & Segev 1993): it holds for any input shape and does not depend on the "
              "frequency asked for.",
              f"Note: {MAP_CAUTION} {PASSIVE_CAVEAT}"]
    if args.plot is not None:
        blocks.insert(-1, f"Tree coloured by {args.colour_by or COLOURINGS[0]} written to {args.plot}.")
    return "\n\n".join(blocks)


# --------------------------------------------------------------------------------------
# --frequencies
# --------------------------------------------------------------------------------------
def frequencies_view(args: argparse.Namespace, cell, source: str, tips: str) -> str:
    """Input or transfer impedance against frequency, from --stimulus-at to each of --positions."""
    from ..tree_time import frequency_response

    f = np.asarray(parse_series(args.frequencies, "frequency", "--frequencies", allow_zero=True, max_points=10_000))
    tree = cell.tree
    start = (args.stimulus_at or "soma").strip()
    source_site = _point(tree, start, "--stimulus-at")
    labels = _labels(args.positions, "--positions") if args.positions is not None else [start]
    sites = [_point(tree, label, "--positions") for label in labels]
    response = frequency_response(cell, f, source_site, [source_site, *sites])
    z_in = response.impedance[:, 0]
    z = response.impedance[:, 1:]
    with np.errstate(divide="ignore", invalid="ignore"):
        attenuation = np.abs(z_in)[:, None] / np.abs(z)
    magnitude, phase = np.abs(z), np.angle(z)
    if args.plot is not None:
        write_atomically(args.plot, _draw_frequencies(f, magnitude, phase, labels, start, Path(source).name,
                                                      Path(args.plot).suffix.lower()[1:]), protected=[args.file])
    if args.json:
        return dump_json({
            "view": "frequencies", "inputs": _inputs_json(cell, source, tips),
            "stimulus_at": start, "positions": labels,
            "frequencies": quantity(f, "frequency"),
            "magnitude": quantity(magnitude, "resistance"),
            "phase": quantity(phase, "angle"),
            "attenuation": quantity(attenuation, "dimensionless"),
            "plot": args.plot,
            "assumptions": PASSIVE_CAVEAT,
        })
    if args.csv:
        rows = [[float(f[i]), label, float(magnitude[i, j]), float(phase[i, j]), float(attenuation[i, j])]
                for i in range(f.size) for j, label in enumerate(labels)]
        return _csv([f"cabletheory: impedance of {source}, current at {start}",
                     "attenuation = |V at the stimulus point| / |V at the point|",
                     f"assumptions: {PASSIVE_CAVEAT}"],
                    ["frequency_Hz", "point", "magnitude_ohm", "phase_rad", "attenuation"], rows)
    d = args.digits
    header = ["f"]
    for label in labels:
        what = "input" if label == start else label
        header += [f"|Z| {what}", f"phase {what}"] + ([] if label == start else [f"atten. {what}"])
    rows = []
    for i in range(f.size):
        row = [format_quantity(float(f[i]), "frequency", d)]
        for j, label in enumerate(labels):
            row += [format_quantity(float(magnitude[i, j]), "resistance", d),
                    format_quantity(float(phase[i, j]), "angle", d)]
            if label != start:
                row.append(format_quantity(float(attenuation[i, j]), "dimensionless", d))
        rows.append(row)
    title = (f"Impedance: current at {start}, voltage at " + ", ".join(labels))
    return "\n\n".join([
        table(_inputs(cell, source, tips, d), "Inputs (whole tree)"),
        _columns(header, rows, title),
        "How to read it: |Z| is the voltage per unit sinusoidal current; a negative phase means the voltage "
        "lags the current (phases are given between −180° and 180°); 'atten.' is the voltage at the stimulus "
        "point divided by the voltage at that point."
        + (f"\n\nPlot written to {args.plot}." if args.plot else ""),
        f"Note: {PASSIVE_CAVEAT} Resonances and band-pass behaviour of real dendrites come from voltage-gated "
        "channels and are absent here.",
    ])


def _draw_frequencies(f, magnitude, phase, labels, start, name, image_format) -> bytes:
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    fig = Figure(figsize=(8.0, 3.6), layout="constrained")
    left, right = fig.subplots(1, 2)
    positive = f > 0
    logx = bool(positive.sum() >= 2 and f[positive].max() / f[positive].min() > 20)
    for j, label in enumerate(labels):
        x = f[positive] if logx else f
        left.plot(x, magnitude[positive, j] / 1e6 if logx else magnitude[:, j] / 1e6, label=label)
        right.plot(x, np.degrees(phase[positive, j] if logx else phase[:, j]), label=label)
    for ax in (left, right):
        ax.set_xlabel("frequency (Hz)")
        if logx:
            ax.set_xscale("log")
    left.set_ylabel("|Z| (MΩ)")
    right.set_ylabel("phase (°)")
    left.legend(title=f"current at {start}", fontsize="small", frameon=False)
    fig.suptitle(f"{name}: input and transfer impedance (passive membrane)", fontsize="medium")
    buffer = io.BytesIO()
    fig.savefig(buffer, format=image_format)
    return buffer.getvalue()


# --------------------------------------------------------------------------------------
# --modes and --reduction-cost
# --------------------------------------------------------------------------------------
def _peeling_rows(cost, d: int) -> list[tuple[str, str]]:
    modes = cost.tree_modes
    rows: list[tuple[str, str]] = []
    if modes.time_constants.size >= 2:
        rows += [
            ("τ0/τ1 of the tree", format_quantity(float(modes.time_constants[0] / modes.time_constants[1]),
                                                  "dimensionless", d)),
            ("C1/C0 of the tree", format_quantity(float(modes.coefficients[1] / modes.coefficients[0]),
                                                  "dimensionless", d)),
            ("L of a sealed cylinder with this τ0/τ1", format_quantity(cost.peeled_length, "dimensionless", d)),
        ]
        if cost.peeled_ball_and_stick:
            rows += [("ball and stick with this τ0/τ1, C1/C0",
                      "; ".join(f"L = {format_quantity(L, 'dimensionless', d)}, ρ = "
                                f"{format_quantity(rho, 'dimensionless', d)}"
                                for L, rho in cost.peeled_ball_and_stick))]
        else:
            rows += [("ball and stick with this τ0/τ1, C1/C0", "none fits these two ratios")]
    rows += [("the reduction's own L", format_quantity(cost.electrotonic_length, "dimensionless", d)),
             ("the reduction's own ρ = G_D/G_S", "no soma" if cost.conductance_ratio is None
              else format_quantity(cost.conductance_ratio, "dimensionless", d))]
    return rows


def _time_constant_rows(cost, d: int) -> list[list[str]]:
    tree_tau, tree_c = cost.tree_modes.time_constants, cost.tree_modes.coefficients
    red_tau, red_c = cost.reduced_time_constants, cost.reduced_coefficients
    rows = []
    for n in range(2):
        rows.append([f"τ{n}", format_quantity(float(tree_tau[n]), "time", d) if n < tree_tau.size else "-",
                     format_quantity(float(red_tau[n]), "time", d) if n < red_tau.size else "-"])
        rows.append([f"C{n}", format_quantity(float(tree_c[n]), "dimensionless", d) if n < tree_c.size else "-",
                     format_quantity(float(red_c[n]), "dimensionless", d) if n < red_c.size else "-"])
    return rows


def _cost_json(cost) -> dict:
    m = cost.tree_modes
    return {
        "reduced_model": cost.reduced_model,
        "tree": {"time_constants": quantity(m.time_constants[:2], "time"),
                 "coefficients": quantity(m.coefficients[:2], "dimensionless")},
        "reduction": {"time_constants": quantity(cost.reduced_time_constants, "time"),
                      "coefficients": quantity(cost.reduced_coefficients, "dimensionless"),
                      "electrotonic_length": quantity(cost.electrotonic_length, "dimensionless"),
                      "conductance_ratio": None if cost.conductance_ratio is None
                      else quantity(cost.conductance_ratio, "dimensionless")},
        "peeling": {"time_constant_ratio": None if m.time_constants.size < 2
                    else quantity(float(m.time_constants[0] / m.time_constants[1]), "dimensionless"),
                    "coefficient_ratio": None if m.time_constants.size < 2
                    else quantity(float(m.coefficients[1] / m.coefficients[0]), "dimensionless"),
                    "electrotonic_length": quantity(cost.peeled_length, "dimensionless"),
                    "ball_and_stick": [{"electrotonic_length": quantity(L, "dimensionless"),
                                        "conductance_ratio": quantity(rho, "dimensionless")}
                                       for L, rho in cost.peeled_ball_and_stick]},
        "notes": list(cost.notes),
    }


def modes_view(args: argparse.Namespace, cell, source: str, tips: str) -> str:
    """The N slowest time constants seen at the soma, and what peeling them would report."""
    from ..tree_modes import root_modes
    from ..tree_time import reduction_modes

    modes = root_modes(cell, args.modes)
    cost = reduction_modes(cell, modes=modes)  # the reduction's τ and C, the peeled L and ρ
    if args.json:
        return dump_json({
            "view": "modes", "inputs": _inputs_json(cell, source, tips),
            "time_constants": quantity(modes.time_constants, "time"),
            "coefficients": quantity(modes.coefficients, "dimensionless"),
            "multiplicities": modes.multiplicities.tolist(),
            "hidden_time_constants": quantity(modes.hidden, "time"),
            **_cost_json(cost),
            "assumptions": PASSIVE_CAVEAT,
        })
    if args.csv:
        rows = [[n, float(modes.time_constants[n]), float(modes.coefficients[n]), int(modes.multiplicities[n])]
                for n in range(modes.time_constants.size)]
        return _csv([f"cabletheory: slowest time constants seen at the soma of {source}",
                     "coefficient: C_n of a current step at the soma, V/V_final = 1 - sum C_n exp(-t/tau_n)",
                     f"assumptions: {PASSIVE_CAVEAT}"],
                    ["n", "time_constant_s", "coefficient", "modes_sharing_it"], rows)
    d = args.digits
    rows = [[str(n), format_quantity(float(modes.time_constants[n]), "time", d),
             format_quantity(float(modes.time_constants[0] / modes.time_constants[n]), "dimensionless", d),
             format_quantity(float(modes.coefficients[n]), "dimensionless", d), str(int(modes.multiplicities[n]))]
            for n in range(modes.time_constants.size)]
    hidden = (f"{modes.hidden.size} more modes in this range leave the soma at rest (they cancel between "
              "symmetric branches) and are not listed." if modes.hidden.size else
              "Every mode in this range is seen at the soma.")
    return "\n\n".join([
        table(_inputs(cell, source, tips, d), "Inputs (whole tree)"),
        _columns(["n", "τ_n", "τ0/τ_n", "C_n", "modes sharing it"], rows,
                 "Slowest time constants seen at the soma (C_n: current step at the soma)"),
        hidden,
        _columns(["", "whole tree", cost.reduced_model], _time_constant_rows(cost, d),
                 "The tree beside its reduction"),
        table(_peeling_rows(cost, d), "What peeling the soma's charging curve would report (Rall 1969)"),
        *[f"Note: {note}." for note in cost.notes],
        f"Note: {PASSIVE_CAVEAT} Peeling assumes the cell is a cylinder or a ball and stick; where the tree "
        "is neither, the L and ρ above are what the method would report, not the tree's own.",
    ])


def _stimulus_values(args: argparse.Namespace) -> dict[str, object]:
    """The SI stimulus fields of the options (each message names its option)."""
    from ..inputs import read_field
    from .case import OPTIONS

    if args.current is None:
        raise InputError("--current: give the stimulus current, e.g. '100 pA' (bare: pA)")
    values: dict[str, object] = {}
    for field in ("shape", "current", "duration", "time_to_peak"):
        text = getattr(args, field)
        if text is not None:
            values[field] = read_field(field, text, OPTIONS[field])
    return values


def cost_view(args: argparse.Namespace, cell, source: str, tips: str) -> str:
    """The soma's response of the tree and of its reduction to one stimulus at the soma."""
    from ..case import CaseFieldError
    from ..tree_case import build_tree_case
    from ..tree_figure import draw_reduction_cost
    from ..tree_time import reduction_cost
    from .case import OPTIONS

    values = _stimulus_values(args)
    try:
        case = build_tree_case(cell, values, None, None)
    except CaseFieldError as exc:
        raise InputError(f"{OPTIONS.get(exc.field, exc.field)}: {exc}") from None
    tau_m = case.membrane_time_constant
    t = (np.linspace(0.0, 2 * tau_m, 21) if args.times is None
         else np.asarray(parse_series(args.times, "time", "--times", max_points=100_000)))
    cost = reduction_cost(cell, case.stimulus, t)
    d = args.digits
    if args.plot is not None:
        write_atomically(args.plot, draw_reduction_cost(
            cost.times, cost.tree_voltage, cost.reduced_voltage, reduced_model=cost.reduced_model, when=cost.when,
            largest=cost.largest_difference, title=f"{Path(source).name}: {case.describe().split(', ', 1)[-1]}",
            note="Passive membrane assumed.", image_format=Path(args.plot).suffix.lower()[1:]),
            protected=[args.file])
    error = max(cost.tree_error_bound, cost.reduced_error_bound)
    if args.json:
        return dump_json({
            "view": "reduction-cost", "inputs": _inputs_json(cell, source, tips),
            "stimulus": case.describe(),
            "parameters": {k: {"value": v, "unit": u} for k, (v, u) in case.parameters().items()},
            "times": quantity(cost.times, "time"),
            "tree_voltage": quantity(cost.tree_voltage, "voltage"),
            "reduced_voltage": quantity(cost.reduced_voltage, "voltage"),
            "largest_difference": quantity(cost.largest_difference, "voltage"),
            "when": quantity(cost.when, "time"),
            "tree_error_bound": quantity(cost.tree_error_bound, "voltage"),
            "reduced_error_bound": quantity(cost.reduced_error_bound, "voltage"),
            **_cost_json(cost),
            "plot": args.plot,
            "assumptions": PASSIVE_CAVEAT,
        })
    if args.csv:
        rows = [[float(cost.times[i]), float(cost.tree_voltage[i]), float(cost.reduced_voltage[i]),
                 float(cost.reduced_voltage[i] - cost.tree_voltage[i])] for i in range(cost.times.size)]
        return _csv([f"cabletheory: soma voltage of {source} and of its {cost.reduced_model}",
                     f"stimulus: {case.describe()}",
                     f"largest difference {cost.largest_difference!r} V at {cost.when!r} s; error bound {error!r} V",
                     f"assumptions: {PASSIVE_CAVEAT}"],
                    ["time_s", "tree_voltage_V", "reduced_voltage_V", "difference_V"], rows)
    echo = _inputs(cell, source, tips, d) + [
        (name.replace("_", " "), format_quantity(value, _KIND[unit], d))
        for name, (value, unit) in case.parameters().items() if unit in ("A", "s") and name != "membrane_time_constant"]
    echo.append(("applied at", "the soma (the reduction has no counterpart of a dendritic point)"))
    rows = [[format_quantity(float(time), "time", d) if time else "0",
             _quantity_or_zero(float(a), "voltage", d), _quantity_or_zero(float(b), "voltage", d),
             _quantity_or_zero(float(b - a), "voltage", d)]
            for time, a, b in zip(cost.times, cost.tree_voltage, cost.reduced_voltage, strict=True)]
    return "\n\n".join([
        table(echo, "Inputs (whole tree)"),
        _columns(["t", "whole tree", cost.reduced_model, "difference"], rows,
                 "Soma voltage (deviation from rest)"),
        table([("largest difference", f"{format_quantity(cost.largest_difference, 'voltage', d)} at "
                                      f"{format_quantity(cost.when, 'time', d)} (on the times above)"),
               ("error estimate", f"every voltage within {format_quantity(error, 'voltage', 2)}")],
              "The cost of reduction in time"),
        _columns(["", "whole tree", cost.reduced_model], _time_constant_rows(cost, d),
                 "Slowest time constants and step coefficients at the soma"),
        table(_peeling_rows(cost, d), "What peeling the tree's soma would report (Rall 1969)"),
        *([f"Plot written to {args.plot}."] if args.plot else []),
        *[f"Note: {note}." for note in cost.notes],
        f"Note: {COST_CAUTION} {PASSIVE_CAVEAT}",
    ])


_KIND = {"ohm*m**2": "membrane_resistivity", "ohm*m": "axial_resistivity", "F/m**2": "membrane_capacitance",
         "s": "time", "A": "current", "V": "voltage"}


# --------------------------------------------------------------------------------------
# dispatch
# --------------------------------------------------------------------------------------
def run_view(view: str, args: argparse.Namespace, tree, morphology, tip_conductance: float | None,
             membrane: tuple[float, float, float]) -> str:
    """The text (or JSON, or CSV) of ``view`` for the tree read by ``cabletheory tree``."""
    from ..morphology import SwcPoints
    from ..tree_laplace import PassiveTree

    rm, ri, cm = membrane
    cell = PassiveTree(tree, rm, ri, cm, tips=tip_conductance)
    tips = "as in the file" if args.tips is None else args.tips.strip()
    source = str(args.file)
    if view == "map":
        return map_view(args, cell, source, tips, morphology if isinstance(morphology, SwcPoints) else None)
    if view == "frequencies":
        return frequencies_view(args, cell, source, tips)
    if view == "modes":
        return modes_view(args, cell, source, tips)
    return cost_view(args, cell, source, tips)
