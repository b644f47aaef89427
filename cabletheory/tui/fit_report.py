"""The fitting view's form and result, as plain data (no textual here; tested without an App).

:func:`read_fit_form` turns the texts of the form into a :class:`FitSetup` (or one message per
flagged field); :func:`run_fit` reads the files and runs the core's fitting recipe
(:func:`cabletheory.fit_recording.fit_recording`, the one the ``fit`` command runs, with the same
file-reading rules); :func:`fit_report` turns the result into the :class:`Report` the view shows
and saves. A file that cannot be read raises :class:`FileProblem`, which says which field named it.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import CableTheoryError, InputError
from ..fit_recording import FitRequest, RecordingFit
from .fields import FieldSpec
from .forms import parse_file_quantity, read_form
from .report import Column, PlotSpec, Report, Row, Series, Table

__all__ = ["FIT_CHOICES", "FIT_FIELDS", "FileProblem", "FitSetup", "fit_fields_used", "fit_in_child", "fit_outcome",
           "fit_report", "read_fit_form", "run_fit"]

# the cells the view fits (canonical words of the fit command's --model) and how the form names them
FIT_CHOICES: dict[str, str] = {
    "ball-and-stick": "ball and stick (τm, L, ρ, R_N)",
    "cylinder": "cylinder (τm, L, R_N)",
    "morphology": "reconstructed cell (Rm, Ri, Cm)",
    "exponentials": "exponentials only",
}

# Field names avoid the shared cell's (Rm, Ri, Cm ...): the membrane assumed here is not the cell
# typed in the other views. Blank optional fields mean what the fit command's missing option means.
FIT_FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("file", "recordings", "dimensionless", "",
              placeholder="sweeps: CSV, tab-separated or NWB; several: a.csv; b.csv"),
    FieldSpec("morphology", "morphology", "dimensionless", "", blank_ok=True,
              placeholder="SWC or tree outline of the recorded cell"),
    FieldSpec("current", "current", "current", "", allow_negative=True, blank_ok=True,
              placeholder="e.g. -40 pA; blank: unknown (only V∞)"),
    FieldSpec("duration", "pulse length", "time", "", blank_ok=True,
              placeholder="blank: a step lasting past the record"),
    FieldSpec("onset", "onset", "time", "", allow_zero=True, allow_negative=True, blank_ok=True,
              placeholder="in the file's clock; blank: found"),
    FieldSpec("rest", "resting V", "voltage", "", allow_zero=True, allow_negative=True, blank_ok=True,
              placeholder="blank: each sweep's mean before the onset"),
    FieldSpec("fit_from", "window from", "time", "", allow_zero=True, blank_ok=True,
              placeholder="after the onset; blank: past the electrode"),
    FieldSpec("fit_until", "window until", "time", "", blank_ok=True,
              placeholder="after the onset; blank: end of step or record"),
    FieldSpec("assumed_Cm", "assumed Cm", "membrane_capacitance", "1 µF/cm²"),
    FieldSpec("assumed_Ri", "assumed Ri", "axial_resistivity", "", blank_ok=True,
              placeholder="blank: no equivalent geometry"),
    FieldSpec("time_unit", "time unit", "dimensionless", "", blank_ok=True,
              placeholder="if the header has none (ms)"),
    FieldSpec("voltage_unit", "voltage unit", "dimensionless", "", blank_ok=True,
              placeholder="if the header has none (mV)"),
)
_SPECS = {spec.name: spec for spec in FIT_FIELDS}
LEVEL = 0.95  # every interval of the view


def fit_fields_used(model: str) -> set[str]:
    """The fields the chosen cell reads (a morphology's membrane is fitted, not assumed)."""
    used = {spec.name for spec in FIT_FIELDS}
    if model != "morphology":
        used.discard("morphology")
    if model in ("morphology", "exponentials"):
        used -= {"assumed_Cm", "assumed_Ri"}
    if model == "morphology":
        used.discard("duration")
    return used


@dataclass(frozen=True, slots=True)
class FitSetup:
    """The files and the request of one fit."""

    paths: tuple[Path, ...]
    morphology: Path | None
    request: FitRequest
    time_unit: str | None
    voltage_unit: str | None


class FileProblem(CableTheoryError):
    """A file of the form could not be read: ``field`` names the form field, the message the file
    and line."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(message)
        self.field = field


def _paths(text: str) -> list[str]:
    return [part.strip() for part in text.split(";") if part.strip()]


def read_fit_form(texts: Mapping[str, str], model: str = "ball-and-stick", shunt: bool = False
                  ) -> tuple[FitSetup | None, dict[str, str]]:
    """The files and options of the fitting form, or one message per flagged field."""
    from ..inputs import read_rest

    texts = {**{s.name: s.default for s in FIT_FIELDS}, **texts}
    used = fit_fields_used(model)
    quantities = [_SPECS[n] for n in ("current", "duration", "onset", "fit_from", "fit_until", "assumed_Cm",
                                      "assumed_Ri") if n in used]
    form = read_form(quantities, texts)
    errors = dict(form.errors)
    values = form.values
    paths = _paths(texts.get("file", ""))
    if not paths:
        errors["file"] = "recordings: empty; give the path of a file of sweeps (ctrl+o picks one)"
    for path in paths:
        if not Path(path).expanduser().is_file():
            errors["file"] = f"recordings: {path!r} does not exist or is not a file"
            break
    morphology = None
    if model == "morphology":
        text = texts.get("morphology", "").strip()
        if not text:
            errors["morphology"] = "morphology: empty; give the SWC or outline of the recorded cell"
        elif not Path(text).expanduser().is_file():
            errors["morphology"] = f"morphology: {text!r} does not exist or is not a file"
        else:
            morphology = Path(text).expanduser()
        stored = any(p.lower().endswith(".nwb") for p in paths)  # an NWB file may store the step
        if values.get("current") is None and "current" not in errors and not stored:
            errors["current"] = "injected current: needed for a reconstructed cell (Rm, Ri and Cm depend on it)"
    if values.get("current") == 0:
        errors["current"] = "injected current: 0 gives no response; give the injected current, e.g. -40 pA"
    rest: float | str | None = None
    if texts.get("rest", "").strip():
        try:
            rest = read_rest(texts["rest"], "resting V")
        except InputError as exc:
            errors["rest"] = str(exc)
    start, end = values.get("fit_from"), values.get("fit_until")
    if start is not None and end is not None and end <= start and "fit_until" not in errors:  # type: ignore[operator]
        errors["fit_until"] = "window until: must come after the window's start"
    if errors:
        return None, errors
    request = FitRequest(
        model=model, current=_float(values.get("current")), duration=_float(values.get("duration")),
        onset=_float(values.get("onset")), rest=rest, fit_from=_float(start), fit_until=_float(end), level=LEVEL,
        membrane_capacitance=_float(values.get("assumed_Cm")) or 0.01,
        axial_resistivity=_float(values.get("assumed_Ri")), shunt=shunt and model == "morphology")
    return FitSetup(tuple(Path(p).expanduser() for p in paths), morphology, request,
                    texts.get("time_unit", "").strip() or None, texts.get("voltage_unit", "").strip() or None), {}


def _float(value: Any) -> float | None:
    return None if value is None else float(value)


@dataclass(frozen=True, slots=True)
class FitRun:
    """What the worker computes: the files read and everything fitted to them."""

    files: tuple[Any, ...]
    result: RecordingFit
    setup: FitSetup  # with the current and onset a file stored, where the form left them blank
    from_file: tuple[str, ...] = ()  # which of "current" and "onset" came from the file


def run_fit(setup: FitSetup) -> FitRun:
    """Read the recordings (and the morphology) and fit them (the worker's job).

    Raises
    ------
    FileProblem : a file that cannot be read (its message names the file and line)
    CableTheoryError : a fit that cannot be made (one line)
    """
    from dataclasses import replace

    from ..fit_recording import complete_request, fit_recording, pool_sweeps, read_recordings

    try:
        files = read_recordings([str(p) for p in setup.paths], parse_file_quantity, time_unit=setup.time_unit,
                                voltage_unit=setup.voltage_unit)
        times, sweeps = pool_sweeps(files)
    except CableTheoryError as exc:
        raise FileProblem("file", str(exc)) from None
    tree = None
    if setup.morphology is not None:
        from .format import read_tree

        try:
            tree = read_tree(setup.morphology)
        except CableTheoryError as exc:
            raise FileProblem("morphology", str(exc)) from None
    request = complete_request(setup.request, files)  # the step an NWB file stores, where not typed
    from_file = tuple(name for name in ("current", "onset")
                      if getattr(setup.request, name) is None and getattr(request, name) is not None)
    return FitRun(tuple(files), fit_recording(times, sweeps, request, tree), replace(setup, request=request),
                  from_file)


def fit_outcome(setup: FitSetup) -> tuple[str, Any, str]:
    """The fit's report, or what went wrong, as plain picklable data: ``("report", report, "")``,
    ``("file", field, message)`` for a file that cannot be read, ``("error", "", message)``."""
    try:
        run = run_fit(setup)
        return "report", fit_report(run.setup, run), ""
    except FileProblem as exc:
        return "file", exc.field, str(exc)
    except CableTheoryError as exc:
        return "error", "", str(exc)


def fit_in_child(setup: FitSetup, pipe: Any) -> None:
    """Run :func:`fit_outcome` in a child process and send its outcome back through ``pipe``.

    The view fits in another process, not only another thread: a fit keeps the interpreter busy
    for seconds, and in a thread it would starve the screen of the time it needs to answer keys."""
    import os
    import warnings

    from ..errors import ImplausibleValueWarning

    # the child shares the app's terminal: nothing it might print may scribble over the screen
    quiet = os.open(os.devnull, os.O_WRONLY)
    os.dup2(quiet, 1)
    os.dup2(quiet, 2)
    warnings.filterwarnings("ignore", category=ImplausibleValueWarning)
    try:
        pipe.send(fit_outcome(setup))
    finally:
        pipe.close()


# ---------------------------------------------------------------------------------------------
# the report
# ---------------------------------------------------------------------------------------------
# canonical parameter name -> (label on screen, quantity kind, symbol)
PARAMETERS: dict[str, tuple[str, str, str]] = {
    "membrane_time_constant": ("membrane time constant τm", "time", "τm"),
    "electrotonic_length": ("electrotonic length L", "dimensionless", "L"),
    "conductance_ratio": ("dendrite/soma conductance ρ", "dimensionless", "ρ"),
    "input_resistance": ("input resistance R_N", "resistance", "R_N"),
    "membrane_resistivity": ("specific membrane resistance Rm", "membrane_resistivity", "Rm"),
    "axial_resistivity": ("axial resistivity Ri", "axial_resistivity", "Ri"),
    "membrane_capacitance": ("specific membrane capacitance Cm", "membrane_capacitance", "Cm"),
    "soma_shunt": ("soma shunt conductance", "conductance", "g_shunt"),
}


def _interval_text(value: float, lo: float, hi: float, kind: str) -> str:
    from .report import cell_text

    bounds = (f"[{cell_text(lo, kind)}, {cell_text(hi, kind)}]" if math.isfinite(lo) and math.isfinite(hi)
              else "[unbounded]")
    return f"{cell_text(value, kind)}  {bounds}"


def _estimates(result: RecordingFit) -> list[tuple[str, str, str, float, float, float]]:
    """(key, label, kind, estimate, low, high) of every fitted number, in SI, model first."""
    out = []
    model = result.model
    if model is not None:
        for k, name in enumerate(model.names):
            label, kind, _ = PARAMETERS[name]
            value, lo, hi = float(model.estimates[k]), float(model.intervals[k, 0]), float(model.intervals[k, 1])
            if name == "input_resistance" and not getattr(model, "current_known", True):
                # without the current only the product I·R_N (the final voltage) is measured
                label, kind, name = "final voltage V∞ = I·R_N", "voltage", "final_voltage"
                value, lo, hi = value * model.current, lo * model.current, hi * model.current
                lo, hi = min(lo, hi), max(lo, hi)
            out.append((name, label, kind, value, lo, hi))
    else:
        f = result.decomposition.fit
        for k in range(f.components):
            lo, hi = f.time_constant_intervals[k]
            out.append((f"time_constant_{k}", f"time constant τ{k}", "time", float(f.time_constants[k]),
                        float(lo), float(hi)))
        out.append(("final_voltage", "final voltage V∞", "voltage", float(f.offset), float(f.offset_interval[0]),
                    float(f.offset_interval[1])))
    return out


def fit_report(setup: FitSetup, run: FitRun) -> Report:
    """Inputs, fitted values with 95 % intervals, the plain statements, and two plots: the data
    with the fitted curves, and the residuals."""
    result = run.result
    trace, d, model = result.trace, result.decomposition, result.model
    r = result.request
    files = run.files
    assumed = sorted({a for f in files for a in f.assumed})
    inputs = [
        Row("recordings", "recordings", "; ".join(f.name for f in files)),
        Row("sweeps", "sweeps averaged", trace.sweeps),
        Row("samples", "samples per sweep", int(trace.times.size)),
        Row("units", "units in the file", f"time {files[0].units['time']}, voltage {files[0].units['voltage']}"
            + (f" (assumed: {', '.join(assumed)})" if assumed else "")),
        Row("model", "cell fitted", FIT_CHOICES[r.model] + (" with a soma shunt" if r.shunt else "")),
    ]
    if setup.morphology is not None:
        inputs.append(Row("morphology", "morphology", str(setup.morphology)))
    stored = [f.metadata.get("nwb_notes", "") for f in files]
    inputs += [
        Row("current", "injected current" + (" (from the file)" if "current" in run.from_file else ""), r.current,
            "current", shown=None if r.current is not None else "unknown"),
        Row("onset", "stimulus onset (file's clock)", trace.onset, "time"),
        Row("onset_detected", "onset found in the trace",
            "yes" if trace.onset_detected else "no (from the file)" if "onset" in run.from_file else "no (given)"),
        Row("baseline", f"baseline ({trace.baseline_source})", trace.baseline, "voltage"),
        Row("noise", "noise of the mean trace", trace.noise, "voltage"),
        Row("confidence_level", "confidence level", r.level, None, shown=f"{100 * r.level:g} %"),
    ]
    if r.model in ("ball-and-stick", "cylinder"):
        inputs.append(Row("assumed_membrane_capacitance", "assumed Cm", r.membrane_capacitance,
                          "membrane_capacitance"))
        if r.axial_resistivity is not None:
            inputs.append(Row("assumed_axial_resistivity", "assumed Ri", r.axial_resistivity, "axial_resistivity"))
    fitted = model if model is not None else d.fit
    window = model.window if model is not None else d.window
    results = [Row("interval_level", "intervals in brackets", f"{100 * r.level:g} % confidence"),
               Row("window_start", "fitted from (after onset)", float(window[0]), "time"),
               Row("window_end", "fitted until", float(window[1]), "time")]
    estimates = _estimates(result)
    for key, label, kind, value, lo, hi in estimates:
        results.append(Row(key, label, value, kind, shown=_interval_text(value, lo, hi, kind)))
    if model is not None and model.model == "reconstructed-cell":
        results.append(Row("membrane_time_constant", "Rm·Cm", model.membrane_time_constant, "time"))
    elif model is not None:
        props = model.properties
        results.append(Row("membrane_resistivity", "Rm = τm / assumed Cm", props.membrane_resistivity,
                           "membrane_resistivity"))
        if model.current_known and r.axial_resistivity is not None:
            results.append(Row("cylinder_diameter", "equivalent cylinder: diameter", props.diameter, "length"))
            results.append(Row("cylinder_length", "equivalent cylinder: length", props.length, "length"))
            if model.model == "ball-and-stick":
                results.append(Row("soma_diameter", "soma diameter (sphere)", props.soma_diameter, "length"))
    if model is None:
        results.append(Row("components", "exponentials (chosen by AICc)", d.fit.components))
    profile = getattr(model, "shunt_profile", None)  # a soma shunt the data may leave undetermined
    separable = fitted.condition.separable and (profile is None or profile.determined)
    results.append(Row("separable", "parameters told apart",
                       "yes" if separable else "NO: read the sentences below", flag=not separable))
    check = fitted.residual_check
    results.append(Row("residuals", "residuals", "structure left" if check.structured else "no structure left",
                       flag=check.structured))
    if model is not None:
        results.append(Row("converged", "search converged", "yes" if model.converged else "no",
                           flag=not model.converged))
    names = list(getattr(fitted, "names", ()))
    symbols = [PARAMETERS[n][2] for n in names] if model is not None else []
    correlations = [f"{symbols[i]}-{symbols[j]} {fitted.correlation[i, j]:+.2f}"
                    for i in range(len(symbols)) for j in range(i + 1, len(symbols))
                    if math.isfinite(fitted.correlation[i, j])]
    if correlations:
        results.append(Row("correlations", "correlations", "; ".join(correlations)))
    # the plain statements first: what the data cannot separate
    notes = [*fitted.condition.statements()]
    notes += [n for n in (model.notes if model is not None else d.notes) if n not in notes]
    notes += list(trace.notes) + [n for text in stored for n in text.split(" | ") if n]
    notes.append(f"residuals: {check.describe()}")
    if model is not None and hasattr(model, "case"):
        notes.append(f"fitted cell: {model.case.describe()}")
    tables = (Table("parameters", "Fitted values and 95 % intervals (SI)", (
        Column("parameter", "parameter", [e[0] for e in estimates]),
        Column("estimate", "estimate", [e[3] for e in estimates]),
        Column("low", "95 % low", [e[4] for e in estimates]),
        Column("high", "95 % high", [e[5] for e in estimates]),
        Column("unit", "SI unit", [_si(e[2]) for e in estimates]))),)
    if model is not None:
        tables += (Table("correlation", "Correlation of the fitted parameters", (
            Column("parameter", "parameter", names),
            *(Column(n, PARAMETERS[n][2], [_finite(x) for x in fitted.correlation[:, k]])
              for k, n in enumerate(names)))),)
    method = model.method if model is not None else d.method
    notes.append(f"method: {method}")
    return Report("fit", f"Fit: {'; '.join(f.name for f in files)}", tuple(inputs), tuple(results), tables,
                  _plots(result), tuple(notes))


def _si(kind: str) -> str:
    from ..units import si_unit

    return si_unit(kind)


def _finite(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


def _plots(result: RecordingFit) -> tuple[PlotSpec, PlotSpec]:
    """The mean trace with the fitted curves (mV over ms after the onset), and the residuals."""
    trace, d, model = result.trace, result.decomposition, result.model
    f = d.fit
    data = [Series(f"mean of {trace.sweeps} sweep(s)", trace.times * 1e3, trace.voltage * 1e3)]
    curves = [Series(f"{f.components} exponentials", f.times * 1e3, f.fitted * 1e3)]
    residuals = [Series(f"{f.components} exponentials", f.times * 1e3, (f.data - f.fitted) * 1e3)]
    if model is not None:
        label = "reconstructed cell" if model.model == "reconstructed-cell" else model.model.replace("-", " ")
        curves = [Series(label, model.times * 1e3, model.fitted * 1e3), *curves]
        residuals = [Series(label, model.times * 1e3, np.asarray(model.residuals) * 1e3)]
    top = PlotSpec("Recorded (mean) and fitted response", "t after onset (ms)", "V from baseline (mV)",
                   tuple(data + curves))
    bottom = PlotSpec("Residuals: data − fit", "t after onset (ms)", "residual (mV)", tuple(residuals))
    return top, bottom
