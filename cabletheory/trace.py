r"""From recorded sweeps to one trace to fit: onset, baseline, mean and its standard error.

A current-clamp recording of a passive response is usually several sweeps of the same step.
:func:`prepare_trace` lines them up on the stimulus onset (given, or found by
:func:`detect_onset`), subtracts each sweep's baseline (the mean of its samples before the onset,
or a resting potential given by the user), and averages them, keeping the spread: the standard
error of the mean at every sample, :math:`s_i = \mathrm{SD}_i/\sqrt{n}`, which the fits use as
relative weights. Because a variance from a few sweeps is itself noisy (and weights built from it
bias a fit), the variance is first averaged over 51 neighbouring samples; the raw spread is kept.

**Onset detection** (on the mean of the sweeps), stated so that a reader can check it:

1. the provisional baseline is the median of the first 5 % of the samples (at least 5), and the
   noise σ is the median absolute successive difference divided by 0.6745·√2 [CP];
2. a *departure* is a run of at least 3 consecutive samples farther than 6σ from that baseline;
3. the response is the departure that contains the largest deviation, extended back over earlier
   departures the same way with no return to the baseline in between;
4. the onset is the sample, among the 200 before the response's start, after which the trace is
   best described (least squares over those samples and the 10 after the start) by zero followed
   by :math:`a\sqrt{t - t_0} + b(t - t_0)` with a, b ≥ 0 toward the response (the early charging
   of a cable and of a soma); a change point, not a threshold crossing, so it is not late.

The detector refuses, in one line, when the answer is ambiguous: no departure at all (no response
or too much noise), the first departure within the first 5 % of the record (no baseline before
it), or another departure before the response that returns to the baseline first or goes the other
way (a second event, an artefact or a drifting baseline); the user then gives the onset.

Every fit of the trace assumes a passive, linear, uniform membrane.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import InputError

__all__ = ["DEPARTURE_RUN", "DEPARTURE_SIGMAS", "RecordedSweeps", "Trace", "detect_onset", "prepare_trace",
           "read_nwb_sweeps"]

Array = NDArray[np.float64]

DEPARTURE_SIGMAS = 6.0  # a departure is farther than this many noise σ from the baseline ...
DEPARTURE_RUN = 3  # ... for at least this many consecutive samples
LEAD_SHARE = 0.05  # the first 5 % of the samples set the provisional baseline
SMOOTHING = 51  # samples over which the variance across sweeps is averaged before weighting


class OnsetError(InputError):
    """The stimulus onset cannot be found without ambiguity; the message says why."""


def _noise(v: Array) -> float:
    return float(np.median(np.abs(np.diff(v)))) / (0.6745 * math.sqrt(2.0))


def _runs(mask: NDArray[np.bool_]) -> list[tuple[int, int]]:
    """(start, stop) of each run of True of length >= DEPARTURE_RUN."""
    padded = np.concatenate([[False], mask, [False]])
    edges = np.flatnonzero(np.diff(padded.astype(np.int8)))
    return [(int(a), int(b)) for a, b in zip(edges[::2], edges[1::2], strict=True) if b - a >= DEPARTURE_RUN]


def detect_onset(times: ArrayLike, voltage: ArrayLike) -> float:
    """The stimulus onset of a trace, by the rule of the module docstring, in the trace's clock (s).

    Parameters
    ----------
    times : s, increasing
    voltage : V (rest not subtracted)

    Raises
    ------
    OnsetError (an InputError) : when the rule finds no onset or more than one candidate

    References
    ----------
    The rule is this project's; the noise estimate from successive differences is [CP].
    """
    t = np.asarray(times, dtype=float)
    v = np.asarray(voltage, dtype=float)
    if t.size < 20:
        raise OnsetError(f"only {t.size} samples: too few to find the onset; give it (--onset)")
    lead = max(5, int(LEAD_SHARE * t.size))
    base = float(np.median(v[:lead]))
    sigma = _noise(v)
    if not sigma > 0:
        sigma = 1e-12 * max(float(np.max(np.abs(v))), 1e-300)
    deviation = v - base
    runs = _runs(np.abs(deviation) > DEPARTURE_SIGMAS * sigma)
    if not runs:
        raise OnsetError(f"the trace never leaves its baseline by more than {DEPARTURE_SIGMAS:g} times its noise "
                         f"({sigma * 1e3:.3g} mV): no response found; give the onset (--onset)")
    peak = int(np.argmax(np.abs(deviation)))
    main = next((r for r in runs if r[0] <= peak < r[1]), max(runs, key=lambda r: np.max(np.abs(deviation[r[0]:r[1]]))))
    direction = 1.0 if deviation[peak] > 0 else -1.0
    start = main[0]
    for r in reversed([r for r in runs if r[1] <= main[0]]):
        # an earlier departure the same way, with no return to the baseline in between, is the
        # response's own beginning, broken up by noise; anything else is a second event
        same_way = direction * deviation[r[0]] > 0
        returned = np.any(direction * deviation[r[1]:start] <= 0.0)
        if not same_way or returned:
            raise OnsetError(f"the trace leaves its baseline at {t[r[0]] * 1e3:.6g} ms and again at "
                             f"{t[start] * 1e3:.6g} ms before the main response: the onset is ambiguous; give it "
                             f"(--onset)")
        start = r[0]
    main = (start, main[1])
    if main[0] < lead:
        raise OnsetError(f"the response starts within the first {lead} samples, so there is no baseline "
                         f"before it; give the onset (--onset) and the resting potential (--rest)")
    return float(t[_change_point(t, deviation, main[0], lead)])


def _change_point(t: Array, deviation: Array, start: int, lead: int) -> int:
    r"""The sample after which the trace turns from its baseline into the response: the k that best
    fits 0 up to sample k and :math:`a\sqrt{t - t_k} + b(t - t_k)` after it (a cable's and a soma's
    early charging), by least squares over up to 200 samples before the departure and 10 after it."""
    from scipy.optimize import nnls

    lo = max(lead // 2, start - 200)
    hi = min(t.size, start + 10)
    toward = deviation * (1.0 if deviation[start] > 0 else -1.0)  # the response made positive
    best, best_k = math.inf, start - 1
    for k in range(lo, start):
        before = toward[lo:k + 1]
        dt = t[k + 1:hi] - t[k]
        _, residual = nnls(np.column_stack([np.sqrt(dt), dt]), toward[k + 1:hi])
        sse = float(before @ before) + float(residual) ** 2
        if sse < best:
            best, best_k = sse, k
    return best_k


@dataclass(frozen=True, slots=True)
class Trace:
    """The averaged response, ready to fit.

    Attributes
    ----------
    times : s since the onset (all samples, including those before it, which are negative)
    voltage : V, mean over sweeps of (sweep - its baseline)
    standard_error : V, standard error of that mean per sample (√(variance averaged over
        :data:`SMOOTHING` neighbouring samples / n)); None for a single sweep
    spread : V, standard deviation across sweeps per sample (not smoothed); None for a single sweep
    sweeps : how many sweeps were averaged
    onset : s, the onset in the recording's clock
    onset_detected : whether :func:`detect_onset` found it (else it was given)
    baseline : V, the mean of the baselines subtracted
    baseline_source : "given", "first sample" or "mean before onset"
    baseline_error : V, standard error of the subtracted baseline of the mean trace (0 when given):
        it shifts every sample alike, so it is not in the per-sample errors
    noise : V, the noise of the mean trace from successive differences
    notes : plain-language remarks
    """

    times: Array
    voltage: Array
    standard_error: Array | None
    spread: Array | None
    sweeps: int
    onset: float
    onset_detected: bool
    baseline: float
    baseline_source: str
    noise: float
    baseline_error: float = 0.0
    notes: tuple[str, ...] = field(default_factory=tuple)

    def after_onset(self) -> tuple[Array, Array, Array | None]:
        """(times, voltage, standard error) of the samples after the onset."""
        keep = self.times > 0
        se = self.standard_error[keep] if self.standard_error is not None else None
        return self.times[keep], self.voltage[keep], se


def prepare_trace(times: ArrayLike, sweeps: ArrayLike, *, onset: float | None = None,
                  rest: float | str | None = None) -> Trace:
    """Line up, baseline-correct and average sweeps recorded on one clock.

    Parameters
    ----------
    times : s, increasing, shared by every sweep
    sweeps : V, shape (sweeps, times) or (times,) for one sweep
    onset : s, the stimulus onset on that clock; None to detect it (:func:`detect_onset`)
    rest : V, a resting potential to subtract from every sweep; ``"first"`` for each sweep's first
        sample; None for each sweep's mean before the onset (at least 3 samples needed)

    Returns
    -------
    :class:`Trace`

    Raises
    ------
    InputError : shapes that disagree, non-finite values, an onset outside the record, no
        baseline samples, an ambiguous onset (:class:`OnsetError`)
    """
    t = np.asarray(times, dtype=float).ravel()
    v = np.atleast_2d(np.asarray(sweeps, dtype=float))
    if v.shape[1] != t.size:
        raise InputError(f"each sweep must have one value per time ({t.size}), got {v.shape[1]}")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(v))):
        raise InputError("times and voltages must be finite")
    if t.size < 2 or np.any(np.diff(t) <= 0):
        raise InputError("times must increase (at least two samples)")
    n = v.shape[0]
    raw_mean = v.mean(axis=0)
    detected = onset is None
    start = detect_onset(t, raw_mean) if onset is None else float(onset)
    if not (t[0] <= start < t[-1]):
        raise InputError(f"the onset {start * 1e3:.6g} ms lies outside the record ({t[0] * 1e3:.6g} to "
                         f"{t[-1] * 1e3:.6g} ms)")
    notes: list[str] = []
    baseline_error = 0.0
    if rest is None:
        before = t <= start
        if before.sum() < 3:
            raise InputError(f"only {int(before.sum())} samples before the onset: too few for a baseline; give "
                             f"the resting potential (--rest)")
        baselines = v[:, before].mean(axis=1)
        source = "mean before onset"
        pre = (v[:, before] - baselines[:, None]).ravel()
        baseline_error = float(np.std(pre, ddof=1) / math.sqrt(pre.size)) if pre.size > 1 else 0.0
    elif isinstance(rest, str):
        if rest != "first":
            raise InputError(f"resting potential {rest!r}: expected a voltage or 'first'")
        if t[0] > start:
            raise InputError("the first sample is after the onset, so it cannot serve as the resting potential")
        baselines = v[:, 0].copy()
        source = "first sample"
    else:
        baselines = np.full(n, float(rest))
        source = "given"
    corrected = v - baselines[:, None]
    mean = corrected.mean(axis=0)
    spread = se = None
    if n > 1:
        spread = corrected.std(axis=0, ddof=1)
        # the variance across a few sweeps is itself very noisy (n - 1 degrees of freedom), and
        # weights 1/s² built from it distort a fit; it is averaged over neighbouring samples first
        width = min(SMOOTHING, t.size)
        kernel = np.ones(width) / width
        padded = np.pad(spread**2, (width // 2, width - 1 - width // 2), mode="edge")
        se = np.sqrt(np.convolve(padded, kernel, mode="valid") / n)
        if np.any(se <= 0):
            notes.append("some samples are identical in every sweep; their standard error is replaced by the "
                         "smallest non-zero one")
            positive = se[se > 0]
            floor = float(positive.min()) if positive.size else 1e-12
            se = np.where(se > 0, se, floor)
    return Trace(times=t - start, voltage=mean, standard_error=se, spread=spread, sweeps=n, onset=start,
                 onset_detected=detected, baseline=float(baselines.mean()), baseline_source=source,
                 noise=_noise(mean), baseline_error=baseline_error, notes=tuple(notes))


# --------------------------------------------------------------------------------------
# NWB files (the optional extra 'nwb')
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class RecordedSweeps:
    """Current-clamp sweeps taken from an NWB file, in SI.

    Attributes
    ----------
    name : the file (used in messages)
    times : s from the start of each sweep (shared by every sweep)
    voltages : V as recorded, shape (sweeps, times)
    labels : the name of each sweep's series in the file
    current : A, the step's amplitude read from the stimulus series recorded with the sweeps, or
        None when the file holds none or the sweeps' stimuli differ
    onset : s from each sweep's start, when the step switches on (same condition), or None
    notes : plain-language remarks on what was read
    """

    name: str
    times: Array
    voltages: Array
    labels: tuple[str, ...]
    current: float | None
    onset: float | None
    notes: tuple[str, ...] = field(default_factory=tuple)


def _series_times(series: Any, name: str, label: str) -> Array:
    """Sample times from the start of one series: its timestamps, or its rate."""
    stamps = getattr(series, "timestamps", None)
    n = int(series.data.shape[0])
    if stamps is not None:
        t = np.asarray(stamps[:], dtype=float)
        return t - t[0]
    rate = getattr(series, "rate", None)
    if not rate or not math.isfinite(float(rate)) or float(rate) <= 0:
        raise InputError(f"{name}: series {label!r} has neither timestamps nor a sampling rate")
    return np.arange(n) / float(rate)


def _step(stimulus: Array, times: Array) -> tuple[float, float] | None:
    """(amplitude A, onset s) of a current step in a stimulus series: the onset is the first sample
    farther than half the largest departure from the first sample's level, the amplitude the median
    departure of the samples beyond that half (a step held to the end, or a pulse)."""
    base = float(stimulus[0])
    departure = stimulus - base
    largest = float(np.max(np.abs(departure)))
    if not largest > 0:
        return None
    on = np.abs(departure) > 0.5 * largest
    first = int(np.argmax(on))
    return float(np.median(departure[on])), float(times[first])


def read_nwb_sweeps(path: str) -> RecordedSweeps:
    """The current-clamp sweeps of an NWB file (Neurodata Without Borders, an open standard).

    Every current-clamp series of the file's acquisition group is one sweep (series of the
    zero-current kind are left out), in the order of their sweep numbers, then names; their data
    are scaled to volts by each series' ``conversion`` and ``offset``. The sweeps must share one
    clock: the same number of samples at the same rate (or timestamps), each taken from its own
    start. When a current-clamp stimulus series is stored for every sweep (matched by sweep
    number, or by order) and they all hold the same step, its amplitude and onset are returned
    as well. The file is read with ``pynwb`` (install the extra: ``pip install 'cabletheory[nwb]'``).

    Raises
    ------
    InputError : pynwb missing, a file that is not NWB, no current-clamp sweeps, sweeps on
        different clocks, data not in volts (one line naming the file and the series)

    References
    ----------
    Rübel O et al. (2022) eLife 11:e78362 [Rubel2022] (the NWB standard).
    """
    import importlib.util
    import warnings

    if importlib.util.find_spec("pynwb") is None:
        raise InputError(f"{path}: reading NWB files needs the optional package 'pynwb': "
                         "pip install 'cabletheory[nwb]'")
    from pynwb import NWBHDF5IO
    from pynwb.icephys import CurrentClampSeries, CurrentClampStimulusSeries, IZeroClampSeries

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the reader's notices about the file's schema version
        try:
            io = NWBHDF5IO(str(path), "r")
            nwbfile = io.read()
        except Exception as exc:  # h5py and hdmf raise many kinds; each becomes one line
            first = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
            raise InputError(f"{path}: not a readable NWB file ({exc.__class__.__name__}"
                             f"{': ' + first[:160] if first else ''})") from None
        try:
            return _take_sweeps(str(path), nwbfile, CurrentClampSeries, CurrentClampStimulusSeries,
                                IZeroClampSeries)
        finally:
            io.close()


def _order(series: Any) -> tuple[int, str]:
    number = getattr(series, "sweep_number", None)
    return (int(number) if number is not None else -1, str(getattr(series, "name", "")))


def _take_sweeps(path: str, nwbfile: Any, clamp: type, stimulus_kind: type, zero: type) -> RecordedSweeps:
    acquired: list[Any] = [s for s in nwbfile.acquisition.values()
                if isinstance(s, clamp) and not isinstance(s, zero)]
    if not acquired:
        raise InputError(f"{path}: no current-clamp sweeps in the file's acquisition group")
    acquired.sort(key=_order)
    times: Array | None = None
    voltages = []
    for s in acquired:
        unit = str(getattr(s, "unit", "volts")).lower()
        if unit not in ("volts", "volt", "v"):
            raise InputError(f"{path}: series {s.name!r} is in {unit!r}; current-clamp data must be in volts")
        t = _series_times(s, path, s.name)
        if times is None:
            times = t
        elif t.size != times.size or not np.allclose(t, times, rtol=1e-9, atol=1e-12):
            raise InputError(f"{path}: series {s.name!r} has {t.size} samples on another clock than "
                             f"{acquired[0].name!r} ({times.size}); pooled sweeps must share one clock")
        offset = float(getattr(s, "offset", 0.0) or 0.0)
        voltages.append(np.asarray(s.data[:], dtype=float) * float(s.conversion) + offset)
    assert times is not None
    if times.size < 2 or np.any(np.diff(times) <= 0):
        raise InputError(f"{path}: the sample times of {acquired[0].name!r} do not increase")
    stimuli: list[Any] = [s for s in nwbfile.stimulus.values() if isinstance(s, stimulus_kind)]
    by_number = {int(s.sweep_number): s for s in stimuli if getattr(s, "sweep_number", None) is not None}
    notes: list[str] = []
    current = onset = None
    steps = []
    for k, s in enumerate(acquired):
        number = getattr(s, "sweep_number", None)
        match: Any = by_number.get(int(number)) if number is not None else None
        if match is None and len(stimuli) == len(acquired):
            match = sorted(stimuli, key=_order)[k]
        if match is None:
            break
        data = np.asarray(match.data[:], dtype=float) * float(match.conversion) + float(getattr(match, "offset", 0.0)
                                                                                       or 0.0)
        step = _step(data, _series_times(match, path, match.name)) if data.size else None
        if step is None:
            break
        steps.append(step)
    if steps and len(steps) == len(acquired):
        amplitudes = np.array([a for a, _ in steps])
        onsets = np.array([o for _, o in steps])
        if np.all(np.abs(amplitudes - amplitudes[0]) <= 0.01 * abs(amplitudes[0])) and np.ptp(onsets) == 0:
            current, onset = float(np.median(amplitudes)), float(onsets[0])
            notes.append(f"the step ({current * 1e12:.4g} pA from {onset * 1e3:.6g} ms) is read from the "
                         "stimulus series stored with the sweeps")
        else:
            notes.append("the sweeps' stimulus series differ, so the step is not taken from the file")
    return RecordedSweeps(name=path, times=times, voltages=np.vstack(voltages),
                          labels=tuple(str(s.name) for s in acquired), current=current, onset=onset,
                          notes=tuple(notes))
