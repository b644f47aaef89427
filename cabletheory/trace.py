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

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import InputError

__all__ = ["DEPARTURE_RUN", "DEPARTURE_SIGMAS", "Trace", "detect_onset", "prepare_trace"]

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
