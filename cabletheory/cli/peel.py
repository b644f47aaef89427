"""``cabletheory peel``: electrotonic length and soma ratio from a peeled charging curve (Rall 1969)."""

from __future__ import annotations

import argparse
import math
from dataclasses import fields
from typing import Any

from .. import PASSIVE_CAVEAT
from ..errors import InputError
from ..output import dump_json, quantity, table
from ..units import format_quantity, parse_quantity
from .common import whole_number

MODEL_CAVEAT = ("The model is a passive, linear, uniform membrane on one equivalent cylinder sealed at its far end; "
                "for the ball and stick, a lumped soma with the same τm as the dendrite.")
DATA_CAVEAT = ("C0 and C1 must come from a current step (or the decay after a long step) injected and recorded "
               "at the soma, as fractions of the final voltage; a brief pulse gives other coefficients.")
PEELING_CAVEAT = ("Peeling noisy data is ill-conditioned: every estimate inherits the error of τ1 and C1 "
                  "(see the sensitivity table); ρ is fragile when C1/C0 is close to 2τ1/τ0.")

# kind of each CellProperties field, for formatting and JSON units
_PROPERTY_KINDS = {
    "membrane_time_constant": ("membrane time constant τm = τ0", "time"),
    "membrane_resistivity": ("specific membrane resistance Rm = τ0/Cm", "membrane_resistivity"),
    "input_conductance": ("input conductance G_N = 1/R_N", "conductance"),
    "soma_conductance": ("soma conductance G_S = G_N/(1+ρ)", "conductance"),
    "dendrite_conductance": ("dendrite conductance G_D = ρG_N/(1+ρ)", "conductance"),
    "semi_infinite_input_resistance": ("semi-infinite input resistance R∞ = tanh L/G_D", "resistance"),
    "total_capacitance": ("cell capacitance τ0(G_S + L·G∞)", "capacitance"),
    "soma_capacitance": ("soma capacitance τ0·G_S", "capacitance"),
    "dendrite_capacitance": ("dendrite capacitance τ0·L·G∞", "capacitance"),
    "membrane_area": ("membrane area (cell)", "area"),
    "soma_area": ("soma area G_S·Rm", "area"),
    "soma_diameter": ("soma diameter (sphere of that area)", "length"),
    "diameter": ("equivalent cylinder diameter", "length"),
    "length_constant": ("length constant λ", "length"),
    "length": ("equivalent cylinder length ℓ = Lλ", "length"),
}


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "peel",
        help="electrotonic length L and soma ratio ρ from peeled time constants and coefficients",
        description="The inverse problem of Rall (1969): from the time constants τ0, τ1 (and C1/C0) peeled off "
                    "a charging curve recorded at the soma, estimate the electrotonic length L of the equivalent "
                    "cylinder and, with a lumped soma, ρ = G_D/G_S; with a measured input resistance and assumed "
                    "Cm and Ri, the membrane properties that follow.",
        epilog=f"{MODEL_CAVEAT} {PASSIVE_CAVEAT}",
    )
    peeled = parser.add_argument_group("peeled values (bare times: ms)")
    peeled.add_argument("--tau0", metavar="T", help="slowest time constant τ0 (= τm), e.g. 20ms")
    taus = peeled.add_mutually_exclusive_group(required=True)
    taus.add_argument("--tau1", metavar="T", help="first equalising time constant τ1, e.g. 2.34ms")
    taus.add_argument("--tau-ratio", metavar="R", help="τ0/τ1 directly, instead of --tau1")
    peeled.add_argument("--tau2", metavar="T",
                        help="second equalising time constant τ2 (optional: a mode-2 estimate and a check; "
                             "needs --tau0)")
    coef = peeled.add_mutually_exclusive_group()
    coef.add_argument("--c1-over-c0", metavar="R", help="coefficient ratio C1/C0 of the step response")
    coef.add_argument("--c0", metavar="C", help="coefficient C0 (fraction of the final voltage); give with --c1")
    peeled.add_argument("--c1", metavar="C", help="coefficient C1 (fraction of the final voltage); give with --c0")
    cell = parser.add_argument_group("cell (optional; bare numbers: MΩ, µF/cm², Ω·cm)")
    cell.add_argument("--input-resistance", metavar="R", help="input resistance R_N measured at the soma, e.g. 150MΩ")
    cell.add_argument("--Cm", metavar="C", help="assumed specific membrane capacitance, e.g. '1 µF/cm²' (no default)")
    cell.add_argument("--Ri", metavar="R", help="assumed axial resistivity, e.g. '100 Ω·cm'")
    out = parser.add_argument_group("output")
    out.add_argument("--uncertainty", default="5%", metavar="U",
                     help="relative uncertainty of τ1 and C1 for the sensitivity rows, e.g. 5%% or 0.05 "
                          "(default 5%%)")
    out.add_argument("--digits", type=whole_number(2, 15), default=4, metavar="N",
                     help="significant digits in the human-readable output (default 4)")
    out.add_argument("--json", action="store_true", help="print one JSON object with SI values")
    parser.set_defaults(run=run)


# --------------------------------------------------------------------------------------
# reading the options
# --------------------------------------------------------------------------------------
def _uncertainty(text: str) -> float:
    raw = text.strip()
    try:
        value = float(raw[:-1]) / 100 if raw.endswith("%") else float(raw)
    except ValueError:
        raise InputError(f"--uncertainty: cannot read {text!r}; expected a fraction such as 5% or 0.05") from None
    if not (math.isfinite(value) and 0 < value < 0.5):
        raise InputError(f"--uncertainty: {text!r} must lie between 0 and 50 %, e.g. 5% or 0.05")
    return value


def read_inputs(args: argparse.Namespace) -> dict[str, Any]:
    """Every option as an SI float (or None), each range checked with the option's name."""
    tau0 = parse_quantity(args.tau0, "time", "--tau0") if args.tau0 is not None else None
    tau1 = None
    if args.tau1 is not None:
        if tau0 is None:
            raise InputError("--tau1: give --tau0 as well (or give the ratio with --tau-ratio)")
        tau1 = parse_quantity(args.tau1, "time", "--tau1")
        if not tau1 < tau0:
            raise InputError(f"--tau1: {args.tau1!r} must be shorter than τ0 = {format_quantity(tau0, 'time')}; "
                             f"τ0/τ1 must exceed 1")
        ratio = tau0 / tau1
    else:
        ratio = parse_quantity(args.tau_ratio, "dimensionless", "--tau-ratio")
        if not ratio > 1:
            raise InputError(f"--tau-ratio: {args.tau_ratio!r} must exceed 1 (τ1 is shorter than τ0)")
        tau1 = tau0 / ratio if tau0 is not None else None
    tau2 = ratio2 = None
    if args.tau2 is not None:
        if tau0 is None:
            raise InputError("--tau2: give --tau0 as well")
        tau2 = parse_quantity(args.tau2, "time", "--tau2")
        ratio2 = tau0 / tau2
        if not ratio2 > ratio:
            raise InputError(f"--tau2: {args.tau2!r} must be shorter than τ1 = {format_quantity(tau0 / ratio, 'time')}")
    c0 = c1 = c_ratio = None
    if (args.c0 is None) != (args.c1 is None):
        raise InputError("--c0 and --c1 go together (or give their ratio with --c1-over-c0)")
    if args.c0 is not None:
        c0 = parse_quantity(args.c0, "dimensionless", "--c0")
        c1 = parse_quantity(args.c1, "dimensionless", "--c1")
        if not c0 <= 1:
            raise InputError(f"--c0: {args.c0!r} must not exceed 1 (C0 is a fraction of the final voltage)")
        c_ratio = c1 / c0
    elif args.c1_over_c0 is not None:
        c_ratio = parse_quantity(args.c1_over_c0, "dimensionless", "--c1-over-c0")
    field = "--c1-over-c0" if args.c1_over_c0 is not None else "--c0/--c1"
    uncertainty = _uncertainty(args.uncertainty)
    if c_ratio is not None:
        upper = 2.0 / ratio
        spread = (1 + uncertainty) / (1 - uncertainty)
        if c_ratio > upper * spread:
            raise InputError(f"{field}: C1/C0 = {c_ratio:.6g} fits no uniform model with τ0/τ1 = {ratio:.6g}: a ball "
                             f"and stick needs C1/C0 in (0, 2τ1/τ0) = (0, {upper:.6g}), a sealed cylinder exactly "
                             f"{upper:.6g} (±{100 * uncertainty:g} % uncertainty allows up to {upper * spread:.6g})")
    r_n = parse_quantity(args.input_resistance, "resistance", "--input-resistance") \
        if args.input_resistance is not None else None
    cm = parse_quantity(args.Cm, "membrane_capacitance", "--Cm") if args.Cm is not None else None
    ri = parse_quantity(args.Ri, "axial_resistivity", "--Ri") if args.Ri is not None else None
    if tau0 is None and (r_n is not None or cm is not None):
        raise InputError("--input-resistance/--Cm: the membrane properties need τ0; give --tau0")
    if ri is not None and (r_n is None or cm is None):
        raise InputError("--Ri: the cylinder's diameter and length need --input-resistance and --Cm as well")
    return {"slowest_time_constant": tau0, "first_time_constant": tau1, "second_time_constant": tau2,
            "time_constant_ratio": ratio, "second_time_constant_ratio": ratio2, "slowest_coefficient": c0,
            "first_coefficient": c1, "coefficient_ratio": c_ratio,
            "input_resistance": r_n, "membrane_capacitance": cm, "axial_resistivity": ri,
            "uncertainty": uncertainty}


def run(args: argparse.Namespace) -> int:
    from ..inverse import estimate_from_peeling, membrane_properties

    inputs = read_inputs(args)
    estimate = estimate_from_peeling(inputs["time_constant_ratio"], inputs["coefficient_ratio"],
                                     second_time_constant_ratio=inputs["second_time_constant_ratio"],
                                     uncertainty=inputs["uncertainty"])
    # the models whose membrane properties are shown: each ball-and-stick solution, else the cylinder
    models = [(s.electrotonic_length, s.conductance_ratio) for s in estimate.solutions]
    if not models:
        models = [(estimate.cylinder_length, math.inf)]
    properties = []
    if inputs["slowest_time_constant"] is not None:
        properties = [membrane_properties(inputs["slowest_time_constant"], L, rho,
                                          input_resistance=inputs["input_resistance"],
                                          membrane_capacitance=inputs["membrane_capacitance"],
                                          axial_resistivity=inputs["axial_resistivity"]) for L, rho in models]
    if args.json:
        print(dump_json(as_json(inputs, estimate, properties)))
    else:
        print(as_text(inputs, estimate, properties, args.digits))
    return 0


# --------------------------------------------------------------------------------------
# output
# --------------------------------------------------------------------------------------
CHANGED = {"tau1": "first_time_constant", "C1": "first_coefficient"}
"""JSON name of the peeled value a sensitivity row changes (the naming of ``inputs``)."""


def _maybe(value: float | None, kind: str) -> dict[str, Any] | None:
    return None if value is None else quantity(value, kind)


def _properties_json(p) -> dict[str, Any]:
    out: dict[str, Any] = {"electrotonic_length": quantity(p.electrotonic_length, "dimensionless"),
                           "conductance_ratio": quantity(p.conductance_ratio, "dimensionless")}
    for name, (_, kind) in _PROPERTY_KINDS.items():
        value = getattr(p, name)
        if value is not None:
            out[name] = {**quantity(value, kind), "needs": list(p.needs[name])}
    return out


def as_json(inputs: dict[str, Any], e, properties) -> dict[str, Any]:
    """The estimate as one JSON object; every quantity is ``{"value": SI, "unit": SI unit}``."""
    time_keys = ("slowest_time_constant", "first_time_constant", "second_time_constant")
    echo = {k: _maybe(inputs[k], "time") for k in time_keys}
    for k in ("time_constant_ratio", "second_time_constant_ratio", "slowest_coefficient", "first_coefficient",
              "coefficient_ratio", "uncertainty"):
        echo[k] = _maybe(inputs[k], "dimensionless")
    echo["input_resistance"] = _maybe(inputs["input_resistance"], "resistance")
    echo["membrane_capacitance"] = _maybe(inputs["membrane_capacitance"], "membrane_capacitance")
    echo["axial_resistivity"] = _maybe(inputs["axial_resistivity"], "axial_resistivity")
    solutions = []
    for s in e.solutions:
        solutions.append({
            "electrotonic_length": quantity(s.electrotonic_length, "dimensionless"),
            "conductance_ratio": quantity(s.conductance_ratio, "dimensionless"),
            "check": {"time_constant_ratio": quantity(s.time_constant_ratio, "dimensionless"),
                      "coefficient_ratio": quantity(s.coefficient_ratio, "dimensionless"),
                      "time_constant_residual": quantity(s.time_constant_residual, "dimensionless"),
                      "coefficient_residual": quantity(s.coefficient_residual, "dimensionless")},
            "predicted": {"second_time_constant_ratio": quantity(s.second_time_constant_ratio, "dimensionless"),
                          "coefficients": quantity(list(s.coefficients), "dimensionless")},
        })
    return {
        "inputs": echo,
        "cylinder": {
            "electrotonic_length": quantity(e.cylinder_length, "dimensionless"),
            "electrotonic_length_slope": quantity(e.cylinder_length_slope, "dimensionless"),
            "electrotonic_length_second_mode": _maybe(e.cylinder_length_second, "dimensionless"),
            "electrotonic_length_from_coefficients": _maybe(e.cylinder_length_coefficients, "dimensionless"),
            "cylinder_index": _maybe(e.cylinder_index, "dimensionless"),
            "consistent": e.cylinder_consistent,
        },
        "ball_and_stick": {
            "length_bounds": quantity(list(e.length_bounds), "dimensionless"),
            "solutions": solutions,
        },
        "sensitivity": [{
            "changed": CHANGED[p.changed], "factor": p.factor,
            "time_constant_ratio": quantity(p.time_constant_ratio, "dimensionless"),
            "coefficient_ratio": _maybe(p.coefficient_ratio, "dimensionless"),
            "cylinder_electrotonic_length": quantity(p.cylinder_length, "dimensionless"),
            "solutions": [{"electrotonic_length": quantity(L, "dimensionless"),
                           "conductance_ratio": quantity(rho, "dimensionless")} for L, rho in p.solutions],
        } for p in e.sensitivity],
        "membrane_properties": [_properties_json(p) for p in properties],
        "notes": list(e.notes),
        "caveats": [MODEL_CAVEAT, DATA_CAVEAT, PEELING_CAVEAT, PASSIVE_CAVEAT],
    }


def _residual(value: float) -> str:
    """Relative residual of the forward check; below 1e-12 it is rounding (and platform-dependent)."""
    return "relative residual < 1e-12" if abs(value) < 1e-12 else f"relative residual {value:.1e}"


def _rho_text(rho: float, fmt) -> str:
    return "∞ (no soma)" if math.isinf(rho) else fmt(rho)


def as_text(inputs: dict[str, Any], e, properties, digits: int = 4) -> str:
    def num(value: float) -> str:
        return format_quantity(value, "dimensionless", digits)

    def t(value: float) -> str:
        return format_quantity(value, "time", digits)

    echo = []
    if inputs["slowest_time_constant"] is not None:
        echo.append(("τ0 (slowest, = τm)", t(inputs["slowest_time_constant"])))
    if inputs["first_time_constant"] is not None:
        echo.append(("τ1", t(inputs["first_time_constant"])))
    echo.append(("τ0/τ1", num(inputs["time_constant_ratio"])))
    if inputs["second_time_constant"] is not None:
        echo += [("τ2", t(inputs["second_time_constant"])), ("τ0/τ2", num(inputs["second_time_constant_ratio"]))]
    if inputs["slowest_coefficient"] is not None:
        echo += [("C0", num(inputs["slowest_coefficient"])), ("C1", num(inputs["first_coefficient"]))]
    if inputs["coefficient_ratio"] is not None:
        echo.append(("C1/C0", num(inputs["coefficient_ratio"])))
    if inputs["input_resistance"] is not None:
        echo.append(("input resistance R_N (measured)", format_quantity(inputs["input_resistance"], "resistance",
                                                                        digits)))
    if inputs["membrane_capacitance"] is not None:
        echo.append(("Cm (assumed)", format_quantity(inputs["membrane_capacitance"], "membrane_capacitance", digits)))
    if inputs["axial_resistivity"] is not None:
        echo.append(("Ri (assumed)", format_quantity(inputs["axial_resistivity"], "axial_resistivity", digits)))
    echo.append(("uncertainty of τ1 and C1", f"±{100 * inputs['uncertainty']:g} %"))
    blocks = [table(echo, "Inputs (peeled from a current step at the soma)")]

    cyl = [("L from τ0/τ1 = π/√(τ0/τ1 − 1)", num(e.cylinder_length)),
           ("dL/d(τ0/τ1)", num(e.cylinder_length_slope))]
    if e.cylinder_length_second is not None:
        cyl.append(("L from τ0/τ2 = 2π/√(τ0/τ2 − 1)", num(e.cylinder_length_second)))
    if e.cylinder_length_coefficients is not None:
        cyl.append(("L from C1/C0 = π/√(2C0/C1 − 1)", num(e.cylinder_length_coefficients)
                    if math.isfinite(e.cylinder_length_coefficients) else "none (C1/C0 ≥ 2)"))
    if e.cylinder_index is not None:
        verdict = "agree" if e.cylinder_consistent else "disagree"
        cyl.append(("κ = (τ0/τ1)(C1/C0)/2", f"{num(e.cylinder_index)}  (1 for a cylinder; the two L {verdict})"))
    blocks.append(table(cyl, "Sealed cylinder without soma (Rall 1969)"))

    lo, hi = e.length_bounds
    bas = [("L for any ρ, from τ0/τ1 alone", f"{num(lo)} (ρ → 0) to {num(hi)} (ρ → ∞)")]
    if inputs["coefficient_ratio"] is None:
        bas.append(("L and ρ", "need C1/C0 (--c1-over-c0, or --c0 and --c1)"))
    elif not e.solutions:
        bas.append(("L and ρ", "no finite ρ: C1/C0 ≥ 2τ1/τ0 (no soma detectable)"))
    for i, s in enumerate(e.solutions, start=1):
        tag = f" {i}" if len(e.solutions) > 1 else ""
        bas += [(f"solution{tag}: L", num(s.electrotonic_length)),
                (f"solution{tag}: ρ = G_D/G_S", num(s.conductance_ratio)),
                ("  check τ0/τ1 (forward)", f"{num(s.time_constant_ratio)}  {_residual(s.time_constant_residual)}"),
                ("  check C1/C0 (forward)", f"{num(s.coefficient_ratio)}  {_residual(s.coefficient_residual)}")]
        tau2 = f"τ0/τ2 = {num(s.second_time_constant_ratio)}"
        if inputs["slowest_time_constant"] is not None:
            tau2 += f", τ2 = {t(inputs['slowest_time_constant'] / s.second_time_constant_ratio)}"
        if inputs["second_time_constant"] is not None:
            tau2 += f" (peeled {t(inputs['second_time_constant'])})"
        bas.append(("  predicted", tau2))
        c0 = f"C0 = {num(s.coefficients[0])}"
        if inputs["slowest_coefficient"] is not None:
            c0 += f" (peeled {num(inputs['slowest_coefficient'])})"
        bas.append(("  predicted", c0))
    blocks.append(table(bas, "Ball and stick: lumped soma + sealed cylinder (Rall 1969)"))

    blocks.append(_sensitivity_table(e, num))

    for p in properties:
        blocks.append(_properties_table(p, num, digits))

    notes = [f"Note: {n}." for n in e.notes]
    if properties and not e.solutions:
        notes.append("Note: the membrane properties use the sealed cylinder from τ0/τ1 (no soma, ρ = ∞).")
    caveats = [MODEL_CAVEAT, PEELING_CAVEAT]
    if inputs["coefficient_ratio"] is not None:
        caveats.insert(1, DATA_CAVEAT)
    caveats.append(PASSIVE_CAVEAT)
    blocks.append("\n".join(notes + [f"Caution: {c}" for c in caveats]))
    return "\n\n".join(blocks)


def _sensitivity_table(e, num) -> str:
    pct = f"{100 * e.uncertainty:g} %"
    header = ["change", "τ0/τ1", "C1/C0", "cylinder L", "ball and stick L, ρ"]
    rows = [["as peeled", num(e.time_constant_ratio),
             "—" if e.coefficient_ratio is None else num(e.coefficient_ratio), num(e.cylinder_length),
             _solutions_text([(s.electrotonic_length, s.conductance_ratio) for s in e.solutions], e, num)]]
    for p in e.sensitivity:
        name = "τ1" if p.changed == "tau1" else "C1"
        sign = "+" if p.factor > 1 else "−"
        rows.append([f"{name} {sign}{pct}", num(p.time_constant_ratio),
                     "—" if p.coefficient_ratio is None else num(p.coefficient_ratio),
                     num(p.cylinder_length), _solutions_text(list(p.solutions), e, num)])
    widths = [max(len(h), *(len(r[j]) for r in rows)) for j, h in enumerate(header)]
    title = f"Sensitivity: the estimates with τ1 and C1 changed by ±{pct}"
    lines = [title, "-" * len(title)]
    lines += [("  " + "  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True))).rstrip()
              for r in [header, *rows]]
    return "\n".join(lines)


def _solutions_text(solutions: list[tuple[float, float]], e, num) -> str:
    if e.coefficient_ratio is None:
        return "— (needs C1/C0)"
    if not solutions:
        return "none (C1/C0 ≥ 2τ1/τ0)"
    return "; ".join(f"L = {num(L)}, ρ = {num(rho)}" for L, rho in solutions)


def _properties_table(p, num, digits: int) -> str:
    rows = []
    for f in fields(p):
        if f.name not in _PROPERTY_KINDS:
            continue
        value = getattr(p, f.name)
        if value is None:
            continue
        label, kind = _PROPERTY_KINDS[f.name]
        needs = p.needs[f.name]
        text = format_quantity(value, kind, digits)
        rows.append((label, f"{text}  [{'model only' if not needs else 'needs ' + ', '.join(needs)}]"))
    title = f"Membrane properties for L = {num(p.electrotonic_length)}, ρ = {_rho_text(p.conductance_ratio, num)}"
    return table(rows, title)
