"""From recording files to fitted passive parameters: the one recipe both front ends run.

The ``fit`` command and the app's fitting view read the same files the same way and fit them in
the same order, so that one recording gives one answer whichever front end is used:

1. :func:`read_recordings` reads every file with :func:`cabletheory.verify.reading.read_sweeps`
   (a time column and one voltage column per sweep; CSV or tab-separated), or an NWB file's
   current-clamp sweeps (:func:`cabletheory.trace.read_nwb_sweeps`), and pools their sweeps
   (:func:`pool_sweeps`: the files must share one clock);
2. :func:`fit_recording` lines the sweeps up on the onset and averages them
   (:func:`cabletheory.trace.prepare_trace`), fits a sum of exponentials
   (:func:`cabletheory.fit_exponentials.decompose`), hands its two slowest terms to the inverse
   problem of peeling (Rall 1969), and fits the chosen cell to the trace: a ball and stick or a
   cylinder (:func:`cabletheory.fit_model.fit_model`) or a reconstructed morphology
   (:func:`cabletheory.fit_tree.fit_morphology`). Unless the user gives the window's start, the
   model fit starts where the exponential fit's window rule starts, moved past an electrode term.

Every result assumes a passive, linear, uniform membrane and a current injected and recorded at
the soma.

References
----------
Rall W (1969) Biophys. J. 9:1483 [Rall1969] (peeling); Major G et al. (1994) J. Neurosci.
14:4613 [Major1994] (fitting the transient directly).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .errors import InputError

__all__ = ["FIT_MODELS", "FitRequest", "RecordingFit", "complete_request", "fit_recording", "pool_sweeps",
           "read_recordings", "stimulus_of"]

Array = NDArray[np.float64]

# the cells a recording can be fitted with (the canonical words of the command's --model)
FIT_MODELS = ("ball-and-stick", "cylinder", "morphology", "exponentials")


@dataclass(frozen=True, slots=True)
class FitRequest:
    """What to fit, in SI.

    Attributes
    ----------
    model : one of :data:`FIT_MODELS`
    current : A, the injected step (sign included), or None when unknown (then only V∞ = I·R_N
        is found; a morphology fit needs it)
    duration : s, the length of a current pulse, or None for a step lasting past the record
    onset : s, the stimulus onset in the files' clock, or None to detect it
    rest : V, ``"first"`` or None (see :func:`cabletheory.trace.prepare_trace`)
    fit_from, fit_until : s after the onset, or None (the start chosen by the window rule; the
        end of the pulse or of the record)
    level : confidence level of every interval
    membrane_capacitance : F/m², assumed for Rm = τm/Cm and the equivalent cell
    axial_resistivity : Ω·m, assumed for the equivalent cell's geometry, or None
    shunt : with a morphology, also fit a conductance from the soma to rest
    max_components : largest number of exponentials tried
    bootstrap, seed : residual-bootstrap refits of the exponentials and their seed
    """

    model: str = "ball-and-stick"
    current: float | None = None
    duration: float | None = None
    onset: float | None = None
    rest: float | str | None = None
    fit_from: float | None = None
    fit_until: float | None = None
    level: float = 0.95
    membrane_capacitance: float = 0.01
    axial_resistivity: float | None = None
    shunt: bool = False
    max_components: int = 4
    bootstrap: int = 0
    seed: int = 0


@dataclass(frozen=True, slots=True)
class RecordingFit:
    """Everything fitted to one recording.

    Attributes
    ----------
    trace : :class:`cabletheory.trace.Trace`, the averaged sweeps
    decomposition : :class:`cabletheory.fit_exponentials.ExponentialDecomposition`
    peel : :class:`cabletheory.fit_exponentials.PeelingFromFit` or None (fewer than two terms)
    model : :class:`cabletheory.fit_model.ModelFit`, :class:`cabletheory.fit_tree.MorphologyFit`
        or None (exponentials only)
    request : the :class:`FitRequest` fitted
    """

    trace: Any
    decomposition: Any
    peel: Any
    model: Any
    request: FitRequest


def read_recordings(paths: Sequence[str | Path], parse: Any, *, time_unit: str | None = None,
                    voltage_unit: str | None = None) -> list[Any]:
    """Read each file of sweeps (:func:`cabletheory.verify.reading.read_sweeps`).

    ``parse`` is the front end's quantity parser (text, kind, where → SI float). Errors name the
    file and line (:class:`cabletheory.errors.FileFormatError`), or the file when it cannot be read.
    """
    from .textfile import read_input_text
    from .verify.reading import read_sweeps

    if not paths:
        raise InputError("no recording given")
    files = []
    for path in paths:
        if str(path).lower().endswith(".nwb"):
            files.append(_nwb_sweeps(str(path)))
            continue
        text = read_input_text(path, "recording")
        files.append(read_sweeps(text, str(path), parse, time_unit=time_unit, voltage_unit=voltage_unit))
    return files


def _nwb_sweeps(path: str) -> Any:
    """An NWB file's current-clamp sweeps (:func:`cabletheory.trace.read_nwb_sweeps`) as the
    :class:`~cabletheory.verify.reading.Sweeps` a CSV file gives; the step read from the file's
    stimulus series, if any, is kept in the metadata (:func:`stimulus_of`)."""
    import os
    import stat

    from .errors import MissingFileError
    from .trace import read_nwb_sweeps
    from .verify.reading import Sweeps

    try:
        info = os.stat(path)
    except OSError:
        raise MissingFileError(f"recording {path!r} does not exist or cannot be read") from None
    if not stat.S_ISREG(info.st_mode):
        raise InputError(f"recording {path!r} is not a regular file; give a file")
    nwb = read_nwb_sweeps(path)
    metadata = {"nwb_notes": " | ".join(nwb.notes)}
    if nwb.current is not None and nwb.onset is not None:
        metadata |= {"stimulus_current": repr(nwb.current), "stimulus_onset": repr(nwb.onset)}
    return Sweeps(name=path, times=nwb.times, voltages=nwb.voltages, labels=nwb.labels,
                  lines=np.zeros(nwb.times.size, dtype=np.int64), units={"time": "s", "voltage": "V"}, assumed=(),
                  metadata=metadata)


def stimulus_of(files: Sequence[Any]) -> tuple[float | None, float | None]:
    """(current A, onset s) of the step stored in the files (NWB stimulus series), when every file
    stores the same one; (None, None) otherwise (a CSV file stores none)."""
    found = {(f.metadata.get("stimulus_current"), f.metadata.get("stimulus_onset")) for f in files}
    if len(found) != 1:
        return None, None
    current, onset = found.pop()
    if current is None or onset is None:
        return None, None
    return float(current), float(onset)


def complete_request(request: FitRequest, files: Sequence[Any]) -> FitRequest:
    """The request with its current and onset taken from the files' stored step where not given."""
    from dataclasses import replace

    current, onset = stimulus_of(files)
    return replace(request, current=request.current if request.current is not None else current,
                   onset=request.onset if request.onset is not None else onset)


def pool_sweeps(files: Sequence[Any]) -> tuple[Array, Array]:
    """(times, sweeps) of several files recorded on one clock: s and V, shape (sweeps, times).

    Raises
    ------
    InputError : a file whose sample times differ from the first file's
    """
    first = files[0]
    for other in files[1:]:
        if other.times.size != first.times.size or not np.allclose(other.times, first.times, rtol=1e-9, atol=0):
            raise InputError(f"{other.name}: its sample times differ from those of {first.name}; pooled sweeps "
                             "must share one clock")
    return first.times, np.vstack([f.voltages for f in files])


def fit_recording(times: Array, sweeps: Array, request: FitRequest, tree: Any = None) -> RecordingFit:
    """Average the sweeps and fit them as the module docstring says.

    Parameters
    ----------
    times : s, the files' clock
    sweeps : V as recorded, shape (sweeps, times)
    request : :class:`FitRequest`
    tree : the reconstructed cell (:class:`cabletheory.tree.model.Tree`) for ``model="morphology"``

    Raises
    ------
    InputError : a combination the fits cannot take (named in words a front end can show)
    """
    from .fit_exponentials import decompose, peeling_from_fit
    from .trace import prepare_trace

    r = request
    if r.model not in FIT_MODELS:
        raise InputError(f"model {r.model!r}: expected one of {', '.join(FIT_MODELS)}")
    if r.model == "morphology":
        if tree is None:
            raise InputError("a morphology fit needs the reconstructed cell (a morphology file)")
        if r.current is None:
            raise InputError("a morphology fit needs the injected current: Rm, Ri and Cm depend on it")
        if r.duration is not None:
            raise InputError("a morphology fit takes a step lasting the whole record; fit the charging part by "
                             "ending the window instead of giving a pulse length")
    elif r.shunt:
        raise InputError("only a morphology fit takes a soma shunt")
    if r.current == 0:
        raise InputError("a current of 0 gives no response; give the injected current, e.g. 100 pA")
    if r.fit_from is not None and r.fit_until is not None and r.fit_until <= r.fit_from:
        raise InputError("the fitting window must end after it starts")
    trace = prepare_trace(times, sweeps, onset=r.onset, rest=r.rest)
    t, y, se = trace.after_onset()
    end = r.fit_until
    if r.duration is not None and r.model == "exponentials":
        end = min(end, r.duration) if end is not None else r.duration
    charging_end = r.duration if r.duration is not None else end
    decomposition = decompose(t, y, standard_error=se, offset=True, window=(r.fit_from, charging_end),
                              max_components=r.max_components, level=r.level, bootstrap=r.bootstrap, seed=r.seed)
    peel = peeling_from_fit(decomposition.fit) if decomposition.fit.components >= 2 else None
    model: Any = None
    if r.model != "exponentials":
        start = r.fit_from
        if start is None:
            start = max(decomposition.window[0], decomposition.artefact_end or 0.0)
        if r.model == "morphology":
            from .fit_tree import fit_morphology

            assert r.current is not None  # checked above
            model = fit_morphology(t, y, tree, r.current, standard_error=se, shunt=r.shunt, window=(start, end),
                                   level=r.level)
        else:
            from .fit_model import DEFAULT_RI, fit_model

            model = fit_model(t, y, model=r.model, current=r.current, standard_error=se, duration=r.duration,
                              window=(start, end), level=r.level, membrane_capacitance=r.membrane_capacitance,
                              axial_resistivity=r.axial_resistivity if r.axial_resistivity is not None else DEFAULT_RI,
                              baseline_error=trace.baseline_error)
    return RecordingFit(trace, decomposition, peel, model, r)
