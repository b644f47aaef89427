"""``cabletheory fit``: passive parameters fitted to a recorded response, with intervals."""

from __future__ import annotations

import argparse
import io
import math
from pathlib import Path
from typing import Any

from .. import PASSIVE_CAVEAT
from ..errors import InputError
from ..inputs import read_rest
from ..output import dump_json, quantity, table, write_atomically
from ..units import format_quantity, parse_quantity
from .common import DEFAULT_CM, whole_number

MODEL_CHOICES = ("ball-and-stick", "cylinder", "morphology", "exponentials")
FIT_CAVEAT = ("The fits assume a passive, linear, uniform membrane, a current injected and recorded at the soma "
              "through a perfectly compensated electrode, and independent noise; intervals are only as good as "
              "those assumptions (look at the residual checks).")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "fit",
        help="passive parameters (τm, L, ρ, R_N) fitted to a recorded response, with intervals",
        description="Read one or more recordings of the response to a current step at the soma (sweeps as "
                    "columns of CSV or tab-separated text, see docs/fit.md), find the onset and baseline, average "
                    "the sweeps keeping their standard error, fit a sum of exponentials (the number chosen by "
                    "AICc) and hand its two slowest terms to the inverse problem of 'peel', then fit the exact "
                    "response of a ball and stick or a cylinder to the trace: estimates with intervals, their "
                    "correlations, residual checks and a plain statement of what the data cannot separate.",
        epilog=f"{FIT_CAVEAT} {PASSIVE_CAVEAT}",
    )
    parser.add_argument("recordings", nargs="+", metavar="RECORDING.csv",
                        help="files with a time column and one voltage column per sweep, or NWB files (their "
                             "current-clamp sweeps; needs the extra 'nwb'); several files are pooled (same sample "
                             "times)")
    layout = parser.add_argument_group("reading the recordings (bare numbers: ms, mV)")
    layout.add_argument("--time-unit", metavar="UNIT", help="unit of the time column if its header has none "
                                                           "(default ms)")
    layout.add_argument("--voltage-unit", metavar="UNIT", help="unit of voltages if not declared (default mV)")
    layout.add_argument("--rest", metavar="V",
                        help="resting potential to subtract, e.g. '-65 mV', or 'first' to use each sweep's first "
                             "sample (default: each sweep's mean before the onset)")
    layout.add_argument("--onset", metavar="T", help="stimulus onset in the file's clock (default: detected, "
                                                     "see docs/fit.md)")
    stim = parser.add_argument_group("stimulus")
    stim.add_argument("--current", metavar="I", help="injected current, e.g. '-50 pA' (bare: pA); without it "
                                                     "only V∞ = I·R_N is found, not R_N")
    stim.add_argument("--duration", metavar="T", help="length of the current pulse, e.g. '50 ms' (default: a step "
                                                      "lasting past the end of the record)")
    how = parser.add_argument_group("fitting")
    how.add_argument("--model", choices=MODEL_CHOICES, default=None,
                     help="the cell fitted to the trace: ball-and-stick (τm, L, ρ, R_N), cylinder (τm, L, R_N), "
                          "morphology (Rm, Ri, Cm of --morphology), or exponentials only (default ball-and-stick, "
                          "or morphology when --morphology is given)")
    how.add_argument("--morphology", metavar="FILE",
                     help="the reconstructed cell (SWC, or a tree outline as 'cabletheory tree' reads it): fit its "
                          "uniform Rm, Ri and Cm (needs --current)")
    how.add_argument("--soma-shunt", action="store_true",
                     help="with --morphology, also fit a conductance from the soma to rest (electrode damage)")
    how.add_argument("--fit-from", metavar="T", help="start of the fitted window, time after the onset "
                                                     "(default: chosen, see docs/fit.md)")
    how.add_argument("--fit-until", metavar="T", help="end of the fitted window, time after the onset (default: the "
                                                      "end of the step or of the record)")
    how.add_argument("--exponentials", type=whole_number(1, 6), default=4, metavar="N",
                     help="largest number of exponentials tried (default 4)")
    how.add_argument("--bootstrap", type=whole_number(0, 100_000), default=200, metavar="N",
                     help="residual-bootstrap refits of the exponentials (default 200; 0: none)")
    how.add_argument("--seed", type=whole_number(0, 2**32 - 1), default=0, metavar="N",
                     help="seed of the bootstrap (default 0)")
    how.add_argument("--level", default="95%", metavar="P", help="confidence level, e.g. 95%% or 0.9 (default 95%%)")
    cell = parser.add_argument_group("assumed membrane (for Rm and the equivalent cell's geometry)")
    cell.add_argument("--Cm", default=DEFAULT_CM, metavar="C",
                      help=f"assumed specific membrane capacitance (default {DEFAULT_CM})")
    cell.add_argument("--Ri", metavar="R", help="assumed axial resistivity, e.g. '150 Ω·cm' (default: the geometry "
                                                "is not reported)")
    out = parser.add_argument_group("output")
    out.add_argument("--digits", type=whole_number(2, 15), default=4, metavar="N",
                     help="significant digits in the text output (default 4)")
    out.add_argument("--json", action="store_true", help="print one JSON object with SI values")
    out.add_argument("--figure", metavar="FILE", help="write the data, the fit and the residuals to FILE "
                                                      "(.png, .svg or .pdf)")
    parser.set_defaults(run=run)


# --------------------------------------------------------------------------------------
# reading
# --------------------------------------------------------------------------------------
def _level(text: str) -> float:
    raw = text.strip()
    try:
        value = float(raw[:-1]) / 100 if raw.endswith("%") else float(raw)
    except ValueError:
        raise InputError(f"--level: cannot read {text!r}; expected e.g. 95% or 0.95") from None
    if not (math.isfinite(value) and 0.5 <= value < 1):
        raise InputError(f"--level: {text!r} must lie between 50 % and 100 %, e.g. 95%")
    return value


def _time(text: str | None, option: str, *, allow_zero: bool = True) -> float | None:
    if text is None:
        return None
    return parse_quantity(text, "time", option, allow_zero=allow_zero)


def read_inputs(args: argparse.Namespace) -> dict[str, Any]:
    """Every option as SI (or None), each checked with its option's name; and the pooled sweeps."""
    from ..fit_recording import pool_sweeps, read_recordings, stimulus_of
    from .reference import parser_for_quantities

    if args.figure is not None and Path(args.figure).suffix.lower() not in (".png", ".svg", ".pdf"):
        raise InputError(f"--figure: {args.figure!r} must end in .png, .svg or .pdf")
    values: dict[str, Any] = {
        "level": _level(args.level),
        "onset": (parse_quantity(args.onset, "time", "--onset", allow_zero=True, allow_negative=True)
                  if args.onset is not None else None),
        "rest": read_rest(args.rest, "--rest") if args.rest is not None else None,
        "current": (parse_quantity(args.current, "current", "--current", allow_negative=True)
                    if args.current is not None else None),
        "duration": _time(args.duration, "--duration", allow_zero=False),
        "fit_from": _time(args.fit_from, "--fit-from"),
        "fit_until": _time(args.fit_until, "--fit-until", allow_zero=False),
        "Cm": parse_quantity(args.Cm, "membrane_capacitance", "--Cm"),
        "Ri": parse_quantity(args.Ri, "axial_resistivity", "--Ri") if args.Ri is not None else None,
    }
    model = args.model or ("morphology" if args.morphology else "ball-and-stick")
    if model == "morphology" and args.morphology is None:
        raise InputError("--model morphology: give the reconstructed cell with --morphology FILE")
    if args.morphology is not None and model != "morphology":
        raise InputError(f"--morphology: the cell is fitted as a morphology, not as --model {model}; drop one")
    if args.soma_shunt and model != "morphology":
        raise InputError("--soma-shunt: only a morphology fit (--morphology FILE) takes a soma shunt")
    stored = any(str(path).lower().endswith(".nwb") for path in args.recordings)  # may store the step
    if model == "morphology" and values["current"] is None and not stored:
        raise InputError("--morphology: give the injected current (--current); Rm, Ri and Cm depend on it")
    values["model"] = model
    if args.morphology is not None:
        from ..inputs import read_outline_value
        from ..morphology import read_morphology
        from ..tree import build_tree

        values["tree"] = build_tree(read_morphology(args.morphology, read_outline_value))
    if values["current"] == 0:
        raise InputError("--current: a current of 0 gives no response; give the injected current, e.g. 100 pA")
    if values["fit_from"] is not None and values["fit_until"] is not None and values["fit_until"] <= values["fit_from"]:
        raise InputError("--fit-until must come after --fit-from")
    files = read_recordings(args.recordings, parser_for_quantities, time_unit=args.time_unit,
                            voltage_unit=args.voltage_unit)
    values["files"] = files
    values["times"], values["sweeps"] = pool_sweeps(files)
    current, onset = stimulus_of(files)  # the step an NWB file stores beside its sweeps
    values["stimulus_from_file"] = [name for name, given, found in (("current", values["current"], current),
                                                                    ("onset", values["onset"], onset))
                                    if given is None and found is not None]
    values["current"] = values["current"] if values["current"] is not None else current
    values["onset"] = values["onset"] if values["onset"] is not None else onset
    if model == "morphology" and values["current"] is None:
        raise InputError("--morphology: give the injected current (--current); Rm, Ri and Cm depend on it")
    return values


# --------------------------------------------------------------------------------------
# running
# --------------------------------------------------------------------------------------
def run(args: argparse.Namespace) -> int:
    from ..fit_recording import FitRequest, fit_recording

    v = read_inputs(args)
    request = FitRequest(model=v["model"], current=v["current"], duration=v["duration"], onset=v["onset"],
                         rest=v["rest"], fit_from=v["fit_from"], fit_until=v["fit_until"], level=v["level"],
                         membrane_capacitance=v["Cm"], axial_resistivity=v["Ri"], shunt=args.soma_shunt,
                         max_components=args.exponentials, bootstrap=args.bootstrap, seed=args.seed)
    if v["model"] == "morphology" and v["duration"] is not None:
        raise InputError("--duration: a morphology fit takes a step lasting the whole record; fit the "
                         "charging part with --fit-until")
    result = fit_recording(v["times"], v["sweeps"], request, v.get("tree"))
    trace, decomposition, peel, model = result.trace, result.decomposition, result.peel, result.model
    if args.figure:
        write_atomically(args.figure, figure(trace, decomposition, model, Path(args.figure).suffix.lower()),
                         protected=[*args.recordings, *([args.morphology] if args.morphology else [])])
    if args.json:
        print(dump_json(as_json(v, trace, decomposition, peel, model)))
    else:
        print(as_text(v, trace, decomposition, peel, model, args.digits))
    return 0


# --------------------------------------------------------------------------------------
# formatting
# --------------------------------------------------------------------------------------
def _q(value: float, kind: str, digits: int) -> str:
    return format_quantity(value, kind, digits)


def _iv(lo: float, hi: float, kind: str, digits: int) -> str:
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return "[unbounded]"
    return f"[{_q(lo, kind, digits)}, {_q(hi, kind, digits)}]"


_KIND = {"membrane_time_constant": "time", "electrotonic_length": "dimensionless",
         "conductance_ratio": "dimensionless", "input_resistance": "resistance"}
_TREE = {"membrane_resistivity": ("specific membrane resistance Rm", "membrane_resistivity", "Rm"),
         "axial_resistivity": ("axial resistivity Ri", "axial_resistivity", "Ri"),
         "membrane_capacitance": ("specific membrane capacitance Cm", "membrane_capacitance", "Cm"),
         "soma_shunt": ("soma shunt conductance", "conductance", "g_shunt")}
_LABEL = {"membrane_time_constant": "membrane time constant τm", "electrotonic_length": "electrotonic length L",
          "conductance_ratio": "dendrite/soma conductance ρ", "input_resistance": "input resistance R_N"}


def as_text(v: dict[str, Any], trace: Any, decomposition: Any, peel: Any, model: Any, digits: int) -> str:
    files = v["files"]
    n_samples = trace.times.size
    units = files[0].units
    assumed = sorted({a for f in files for a in f.assumed})
    pct = f"{100 * v['level']:g} %"
    lines = [f"Recording: {', '.join(f.name for f in files)}: {trace.sweeps} sweep(s) of {n_samples} samples; "
             f"units time {units['time']}, voltage {units['voltage']}"
             + (f" (assumed: {', '.join(assumed)})" if assumed else "")]
    how = "detected" if trace.onset_detected else ("from the file" if "onset" in v.get("stimulus_from_file", ())
                                                   else "given")
    lines.append(f"  onset {_q(trace.onset, 'time', digits)} ({how}); baseline {_q(trace.baseline, 'voltage', digits)} "
                 f"({trace.baseline_source}); noise of the mean {_q(trace.noise, 'voltage', 3)}")
    lines += [f"  note: {n}" for n in trace.notes]
    lines += [f"  note: {n}" for f in files for n in f.metadata.get("nwb_notes", "").split(" | ") if n]
    # exponentials
    d = decomposition
    f = d.fit
    lo, hi = d.window
    lines += ["", f"Exponentials: {f.components} chosen by AICc among 1-{max(c.components for c in d.candidates)}, "
                  f"fitted from {_q(lo, 'time', digits)} to {_q(hi, 'time', digits)} after the onset"
                  + (" (start chosen by the window rule)" if d.window_chosen else "")]
    rows = []
    for k in range(f.components):
        tau_lo, tau_hi = f.time_constant_intervals[k]
        text = f"{_q(f.time_constants[k], 'time', digits)}  {pct} {_iv(tau_lo, tau_hi, 'time', digits)}"
        if f.bootstrap_time_constant_intervals is not None:
            b_lo, b_hi = f.bootstrap_time_constant_intervals[k]
            text += f", bootstrap {_iv(b_lo, b_hi, 'time', digits)}"
        if f.coefficients is not None:
            text += f"; C{k} = {f.coefficients[k]:.{digits}g}"
        rows.append((f"τ{k}", text))
    rows.append(("final voltage V∞", f"{_q(f.offset, 'voltage', digits)}  {pct} "
                                     f"{_iv(*f.offset_interval, 'voltage', digits)}"))
    lines.append(table(rows))
    lines.append(f"  residuals: {f.residual_check.describe()}")
    lines += [f"  note: {n}" for n in d.notes]
    if peel is not None:
        lines += ["", "Into the inverse problem (as 'peel' with these τ0/τ1 and C1/C0):"]
        rows = [("τ0/τ1", f"{peel.time_constant_ratio:.{digits}g}  {pct} "
                          f"{_iv(*peel.time_constant_ratio_interval, 'dimensionless', digits)}"),
                ("C1/C0", f"{peel.coefficient_ratio:.{digits}g}  {pct} "
                          f"{_iv(*peel.coefficient_ratio_interval, 'dimensionless', digits)}")]
        if math.isfinite(peel.electrotonic_length):
            rows += [("L (ball and stick)", f"{peel.electrotonic_length:.{digits}g}  {pct} "
                                            f"{_iv(*peel.electrotonic_length_interval, 'dimensionless', digits)}"),
                     ("ρ (ball and stick)", f"{peel.conductance_ratio:.{digits}g}  {pct} "
                                            f"{_iv(*peel.conductance_ratio_interval, 'dimensionless', digits)}")]
        rows.append(("L (sealed cylinder, from τ0/τ1)", f"{peel.estimate.cylinder_length:.{digits}g}"))
        lines.append(table(rows))
        lines += [f"  note: {n}" for n in peel.estimate.notes]
    if model is not None and model.model == "reconstructed-cell":
        lines += ["", f"Reconstructed cell fitted to the trace from {_q(model.window[0], 'time', digits)} to "
                      f"{_q(model.window[1], 'time', digits)} after the onset (uniform membrane):"]
        rows = []
        profile = model.shunt_profile
        for k, name in enumerate(model.names):
            label, kind, _ = _TREE[name]
            how = pct
            if name == "soma_shunt" and profile is not None:
                label, how = f"{label}, fixed", f"{pct} profile {'interval' if profile.determined else 'range'}"
            rows.append((label, f"{_q(model.estimates[k], kind, digits)}  {how} "
                                f"{_iv(model.intervals[k, 0], model.intervals[k, 1], kind, digits)}"))
        rows.append(("membrane time constant Rm·Cm", _q(model.membrane_time_constant, "time", digits)))
        lines.append(table(rows))
        symbols = [_TREE[n][2] for n in model.names]
        lines.append("  correlations: " + "; ".join(
            f"{symbols[i]}-{symbols[j]} {model.correlation[i, j]:+.2f}"
            for i in range(len(symbols)) for j in range(i + 1, len(symbols)) if math.isfinite(model.correlation[i, j])))
        if profile is not None:
            lines.append(f"  soma shunt: {profile.statement()}")
        lines.append(f"  residuals: {model.residual_check.describe()}")
        if model.condition.separable and (profile is None or profile.determined):
            lines.append("  the data separate every fitted parameter (no correlation beyond 0.95, no flat direction)")
        lines += [f"  note: {n}" for n in model.notes if profile is None or n != profile.statement()]
    elif model is not None:
        lines += ["", f"{model.model.replace('-', ' ').capitalize()} fitted to the trace from "
                      f"{_q(model.window[0], 'time', digits)} to {_q(model.window[1], 'time', digits)} "
                      "after the onset:"]
        rows = []
        for k, name in enumerate(model.names):
            value, (a, b) = model.estimates[k], model.intervals[k]
            label, kind = _LABEL[name], _KIND[name]
            if name == "input_resistance" and not model.current_known:
                label, kind = "final voltage V∞ = I·R_N", "voltage"
                value, a, b = value * model.current, a * model.current, b * model.current
                if a > b:
                    a, b = b, a
            rows.append((label, f"{_q(value, kind, digits)}  {pct} {_iv(a, b, kind, digits)}"))
        props = model.properties
        rows.append((f"Rm = τm/Cm (Cm {_q(model.membrane_capacitance, 'membrane_capacitance', 3)} assumed)",
                     _q(props.membrane_resistivity, "membrane_resistivity", digits)))
        if model.current_known and v["Ri"] is not None:
            rows += [(f"equivalent cylinder (Ri {_q(v['Ri'], 'axial_resistivity', 3)} assumed)",
                      f"diameter {_q(props.diameter, 'length', digits)}, length {_q(props.length, 'length', digits)}")]
            if model.model == "ball-and-stick":
                rows.append(("soma diameter (sphere)", _q(props.soma_diameter, "length", digits)))
        lines.append(table(rows))
        symbols = [{"membrane_time_constant": "τm", "electrotonic_length": "L", "conductance_ratio": "ρ",
                    "input_resistance": "R_N"}[n] for n in model.names]
        lines.append("  correlations: " + "; ".join(
            f"{symbols[i]}-{symbols[j]} {model.correlation[i, j]:+.2f}"
            for i in range(len(symbols)) for j in range(i + 1, len(symbols))))
        lines.append(f"  residuals: {model.residual_check.describe()}")
        if model.condition.separable:
            lines.append("  the data separate every fitted parameter (no correlation beyond 0.95, no flat direction)")
        lines += [f"  note: {n}" for n in model.notes]
        lines.append(f"  fitted cell: {model.case.describe()}")
    lines += ["", FIT_CAVEAT, PASSIVE_CAVEAT]
    return "\n".join(lines)


def _interval(lo: float, hi: float, kind: str) -> dict[str, Any]:
    return {"low": quantity(lo, kind), "high": quantity(hi, kind)}


def as_json(v: dict[str, Any], trace: Any, decomposition: Any, peel: Any, model: Any) -> dict[str, Any]:
    f = decomposition.fit
    out: dict[str, Any] = {
        "recordings": [{"file": x.name, "sweeps": int(x.voltages.shape[0]), "units": dict(x.units),
                        "assumed_units": list(x.assumed)} for x in v["files"]],
        "trace": {"sweeps": trace.sweeps, "samples": int(trace.times.size),
                  "onset": quantity(trace.onset, "time"), "onset_detected": trace.onset_detected,
                  "baseline": quantity(trace.baseline, "voltage"), "baseline_source": trace.baseline_source,
                  "noise": quantity(trace.noise, "voltage"), "notes": list(trace.notes)},
        "confidence_level": v["level"],
        "exponentials": {
            "method": decomposition.method,
            "window": {"start": quantity(decomposition.window[0], "time"),
                       "end": quantity(decomposition.window[1], "time"), "chosen": decomposition.window_chosen},
            "candidates": [{"components": c.components, "aicc": c.aicc if math.isfinite(c.aicc) else None,
                            "admissible": c.admissible, "reason": c.reason} for c in decomposition.candidates],
            "components": f.components,
            "time_constants": quantity(f.time_constants, "time"),
            "time_constant_intervals": quantity(f.time_constant_intervals, "time"),
            "bootstrap_time_constant_intervals": (quantity(f.bootstrap_time_constant_intervals, "time")
                                                  if f.bootstrap_time_constant_intervals is not None else None),
            "bootstrap_draws": f.bootstrap_draws,
            "amplitudes": quantity(f.amplitudes, "voltage"),
            "amplitude_intervals": quantity(f.amplitude_intervals, "voltage"),
            "final_voltage": quantity(f.offset, "voltage"),
            "final_voltage_interval": quantity(f.offset_interval, "voltage"),
            "coefficients": None if f.coefficients is None else [float(c) for c in f.coefficients],
            "residual_runs_z": f.residual_check.runs_z,
            "residual_runs_p": f.residual_check.runs_p,
            "residual_autocorrelation": f.residual_check.autocorrelation,
            "residuals_structured": f.residual_check.structured,
            "electrode_component_end": (quantity(decomposition.artefact_end, "time")
                                        if decomposition.artefact_end is not None else None),
            "notes": list(decomposition.notes),
        },
        "assumptions": f"{FIT_CAVEAT} {PASSIVE_CAVEAT}",
    }
    if peel is not None:
        out["peeling"] = {
            "time_constant_ratio": peel.time_constant_ratio,
            "time_constant_ratio_interval": list(peel.time_constant_ratio_interval),
            "coefficient_ratio": peel.coefficient_ratio,
            "coefficient_ratio_interval": list(peel.coefficient_ratio_interval),
            "electrotonic_length": peel.electrotonic_length if math.isfinite(peel.electrotonic_length) else None,
            "electrotonic_length_interval": [x if math.isfinite(x) else None
                                             for x in peel.electrotonic_length_interval],
            "conductance_ratio": peel.conductance_ratio if math.isfinite(peel.conductance_ratio) else None,
            "conductance_ratio_interval": [x if math.isfinite(x) else None for x in peel.conductance_ratio_interval],
            "cylinder_length": peel.estimate.cylinder_length,
            "notes": list(peel.estimate.notes),
        }
    if model is not None and model.model == "reconstructed-cell":
        out["morphology_fit"] = {
            "method": model.method,
            "window": {"start": quantity(model.window[0], "time"), "end": quantity(model.window[1], "time")},
            "parameters": {name: {"estimate": quantity(float(model.estimates[k]), _TREE[name][1]),
                                  "interval": _interval(float(model.intervals[k, 0]), float(model.intervals[k, 1]),
                                                        _TREE[name][1])}
                           for k, name in enumerate(model.names)},
            "parameter_order": list(model.names),
            "membrane_time_constant": quantity(model.membrane_time_constant, "time"),
            "correlation": [[None if not math.isfinite(x) else float(x) for x in row] for row in model.correlation],
            "separable": model.condition.separable,
            "residual_runs_z": model.residual_check.runs_z,
            "residuals_structured": model.residual_check.structured,
            "converged": model.converged,
            "evaluations": model.evaluations,
            "notes": list(model.notes),
        }
        profile = model.shunt_profile
        if profile is not None:
            out["morphology_fit"]["soma_shunt_profile"] = {
                "determined": profile.determined,
                "statement": profile.statement(),
                "level": profile.level,
                "interval": _interval(profile.interval[0], profile.interval[1], "conductance"),
                "interval_open": {"low": profile.low_open, "high": profile.high_open},
                "fixed_at": quantity(profile.fixed, "conductance"),
                "chi_square_threshold": profile.threshold,
                "points": [{"shunt": quantity(float(g), "conductance"), "chi_square": float(c),
                            "membrane_resistivity": quantity(float(r), "membrane_resistivity")}
                           for g, c, r in zip(profile.shunts, profile.chi_square, profile.membrane_resistivity,
                                              strict=True)],
            }
    elif model is not None:
        params = {}
        for k, name in enumerate(model.names):
            kind = _KIND[name]
            params[name] = {"estimate": quantity(float(model.estimates[k]), kind),
                            "interval": _interval(float(model.intervals[k, 0]), float(model.intervals[k, 1]), kind)}
        out["model"] = {
            "cell": model.model,
            "method": model.method,
            "window": {"start": quantity(model.window[0], "time"), "end": quantity(model.window[1], "time")},
            "current": quantity(model.current, "current"), "current_known": model.current_known,
            "parameters": params,
            "parameter_order": list(model.names),
            "correlation": [[None if not math.isfinite(x) else float(x) for x in row] for row in model.correlation],
            "separable": model.condition.separable,
            "membrane_resistivity": quantity(model.properties.membrane_resistivity, "membrane_resistivity"),
            "assumed_membrane_capacitance": quantity(model.membrane_capacitance, "membrane_capacitance"),
            "assumed_axial_resistivity": quantity(model.axial_resistivity, "axial_resistivity"),
            "residual_runs_z": model.residual_check.runs_z,
            "residual_runs_p": model.residual_check.runs_p,
            "residuals_structured": model.residual_check.structured,
            "converged": model.converged,
            "evaluations": model.evaluations,
            "notes": list(model.notes),
            "case": model.case.to_json(),
        }
    return out


def figure(trace: Any, decomposition: Any, model: Any, suffix: str) -> bytes:
    """Data (mean ± standard error), the fitted curves, and the residuals, as PNG, SVG or PDF bytes."""
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib import rcParams
    from matplotlib.figure import Figure

    rcParams["svg.hashsalt"] = "cabletheory-fit"
    fig = Figure(figsize=(8.0, 6.0), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=[3, 1])
    t_ms = trace.times * 1e3
    top.plot(t_ms, trace.voltage * 1e3, color="#777777", lw=0.8, label=f"mean of {trace.sweeps} sweep(s)")
    if trace.standard_error is not None:
        top.fill_between(t_ms, (trace.voltage - trace.standard_error) * 1e3,
                         (trace.voltage + trace.standard_error) * 1e3, color="#bbbbbb", alpha=0.6, lw=0,
                         label="± standard error")
    f = decomposition.fit
    top.plot(f.times * 1e3, f.fitted * 1e3, color="#225577", lw=1.4, label=f"{f.components} exponentials")
    bottom.plot(f.times * 1e3, f.residuals * 1e3, color="#225577", lw=0.7, label="exponentials")
    if model is not None:
        top.plot(model.times * 1e3, model.fitted * 1e3, color="#cc6622", lw=1.4, ls="--",
                 label=model.model.replace("-", " "))
        bottom.plot(model.times * 1e3, model.residuals * 1e3, color="#cc6622", lw=0.7,
                    label=model.model.replace("-", " "))
    bottom.axhline(0.0, color="black", lw=0.6)
    top.axvline(0.0, color="black", lw=0.5, ls=":")
    top.set_ylabel("voltage from baseline (mV)")
    bottom.set_ylabel("residual (mV)")
    bottom.set_xlabel("time after onset (ms)")
    top.legend(loc="best", fontsize="small")
    bottom.legend(loc="best", fontsize="small")
    buffer = io.BytesIO()
    fig.savefig(buffer, format=suffix.lstrip("."), metadata={"Date": None} if suffix == ".svg" else None)
    return buffer.getvalue()
