"""Recognising a test stimulus from its samples: where it is active, and whether it is a
sweep or a set of steady tones.

The measurement only receives the stimulus *file*, not the parameters it was made with,
so they are read back from the samples: the active segments (sweep, markers, tone
bursts), the sweep's start/stop frequencies and rate constant L, or the tones'
frequencies.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import MeasurementError
from ..fourier import rfft
from ._framing import frames, moving_rms, parabolic_peak

__all__ = [
    "Segment",
    "SweepParameters",
    "ToneSet",
    "StimulusAnalysis",
    "active_segments",
    "analyse_stimulus",
    "find_tones",
    "ACTIVITY_THRESHOLD_DB",
]

#: A sample belongs to an active segment when its 20 ms moving RMS is within this many
#: dB of the loudest part of the stimulus.
ACTIVITY_THRESHOLD_DB = -40.0
_ENVELOPE_S = 0.02
_MERGE_GAP_S = 0.05
_MIN_SEGMENT_S = 0.01
#: Tones weaker than this, relative to the strongest tone, are ignored.
_TONE_THRESHOLD_DB = -30.0
_MAX_TONES = 400


@dataclass(frozen=True)
class Segment:
    """Samples ``[start, stop)`` of a signal."""

    start: int
    stop: int

    @property
    def length(self) -> int:
        return self.stop - self.start

    @property
    def centre(self) -> float:
        return 0.5 * (self.start + self.stop)


@dataclass(frozen=True)
class SweepParameters:
    """An exponential sweep read back from its samples.

    Attributes
    ----------
    start_hz, stop_hz : float
        Instantaneous frequency at the first and last active sample.
    rate_constant_s : float
        L, from the slope of ln f(t) (f(t) = f1·e^{t/L}).
    segment : Segment
        Where the sweep is in the stimulus.
    """

    start_hz: float
    stop_hz: float
    rate_constant_s: float
    segment: Segment


@dataclass(frozen=True)
class ToneSet:
    """Steady tones found in a stimulus.

    Attributes
    ----------
    frequencies_hz : numpy.ndarray
        Ascending.
    amplitudes : numpy.ndarray
        Peak amplitude of each tone averaged over the active span (full scale = 1).
    spacing_hz : float or None
        Smallest spacing between neighbouring tones; None for a single tone.
    span : Segment
        From the first to the last active sample of the stimulus.
    """

    frequencies_hz: np.ndarray
    amplitudes: np.ndarray
    spacing_hz: float | None
    span: Segment


@dataclass(frozen=True)
class StimulusAnalysis:
    """What a stimulus is.

    Attributes
    ----------
    kind : str
        ``"sweep"`` or ``"tones"``.
    sample_rate_hz : int
    segments : tuple of Segment
        Active segments in time order.
    span : Segment
        First to last active sample.
    sweep : SweepParameters or None
    tones : ToneSet or None
    anchors : tuple of Segment
        Segments other than the sweep (marker chirps), usable to measure clock drift.
    """

    kind: str
    sample_rate_hz: int
    segments: tuple[Segment, ...]
    span: Segment
    sweep: SweepParameters | None
    tones: ToneSet | None
    anchors: tuple[Segment, ...]


def active_segments(x: np.ndarray, sample_rate_hz: int, *, threshold_db: float = ACTIVITY_THRESHOLD_DB) -> tuple[Segment, ...]:
    """Active segments of ``x``: 20 ms moving RMS within ``threshold_db`` of its maximum.

    Gaps shorter than 50 ms are bridged; segments shorter than 10 ms are dropped.
    Returns an empty tuple for digital silence.
    """
    env = moving_rms(x, int(round(_ENVELOPE_S * sample_rate_hz)))
    peak = float(env.max()) if env.size else 0.0
    if peak <= 0.0:
        return ()
    on = env >= peak * 10.0 ** (threshold_db / 20.0)
    edges = np.flatnonzero(np.diff(np.concatenate(([0], on.view(np.int8), [0]))))
    starts, stops = edges[0::2], edges[1::2]
    merged: list[list[int]] = []
    gap = int(round(_MERGE_GAP_S * sample_rate_hz))
    for s, e in zip(starts, stops):
        if merged and s - merged[-1][1] < gap:
            merged[-1][1] = int(e)
        else:
            merged.append([int(s), int(e)])
    min_len = int(round(_MIN_SEGMENT_S * sample_rate_hz))
    return tuple(Segment(s, e) for s, e in merged if e - s >= min_len)


#: Frames transformed at a time by :func:`peak_frequency_track`.
_TRACK_BATCH = 256


def _frame_len(sample_rate_hz: int) -> int:
    return int(2 ** np.ceil(np.log2(0.025 * sample_rate_hz)))


def peak_frequency_track(x: np.ndarray, sample_rate_hz: int, *, frame_len: int | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Frequency of the strongest spectral peak in each Hann frame.

    Returns (frame centre sample, peak frequency Hz, peak power) with frames of about
    25 ms (a power of two) and a hop of a quarter frame; the peak is refined by a
    parabola through the log power of the 4× zero-padded spectrum.
    """
    n = frame_len or _frame_len(sample_rate_hz)
    hop = n // 4
    fr, starts = frames(x, n, hop)
    if fr.shape[0] == 0:
        return np.zeros(0), np.zeros(0), np.zeros(0)
    nfft = 4 * n
    win = np.hanning(n)
    count = fr.shape[0]
    idx = np.empty(count, dtype=np.int64)
    near = np.empty((count, 3))  # power in the peak bin and its neighbours
    top = 0.0
    # A few hundred frames at a time: the spectra of a long sweep would take hundreds of MB.
    for a in range(0, count, _TRACK_BATCH):
        # single precision: a peak's bin and its parabola move by about 1e-6 bin, and float32
        # transforms cost about half as much
        spec = np.abs(rfft(np.multiply(fr[a:a + _TRACK_BATCH], win, dtype=np.float32), nfft, axis=1)) ** 2
        i = 1 + np.argmax(spec[:, 1:], axis=1)  # never the DC bin
        top = max(top, float(spec.max()))
        idx[a:a + i.size] = i
        near[a:a + i.size] = np.take_along_axis(spec, np.clip(i, 1, spec.shape[1] - 2)[:, None] + np.arange(-1, 2), 1)
        # a peak on the last bin has no neighbour above: no parabola (offset 0, its own value)
        at_top = i == spec.shape[1] - 1
        near[a:a + i.size][at_top] = spec[at_top, i[at_top]][:, None]
    delta, peak_log = parabolic_peak(np.log(near + top * 1e-15 + 1e-300), np.ones(count, dtype=np.int64))
    freq = (idx + delta) * sample_rate_hz / nfft
    return starts + n / 2.0, freq, np.exp(peak_log)


def _fit_sweep(x: np.ndarray, seg: Segment, fs: int) -> SweepParameters | None:
    """Fit ln f(t) = ln f1 + t/L over the middle 80 % of a segment; None if it is no rising sweep."""
    if seg.length < int(0.25 * fs):
        return None
    centre, freq, power = peak_frequency_track(x[seg.start:seg.stop], fs)
    if centre.size < 8:
        return None
    n = _frame_len(fs)
    t = centre / fs
    dur = seg.length / fs
    keep = (t > 0.1 * dur) & (t < 0.9 * dur) & (freq > 4.0 * fs / n) & (power > power.max() * 1e-3)
    if np.count_nonzero(keep) < 6:
        return None
    tk, lf = t[keep], np.log(freq[keep])
    slope, intercept = np.polyfit(tk, lf, 1)
    resid = lf - (slope * tk + intercept)
    rises = np.mean(np.diff(freq[keep]) > 0.0)
    span_octaves = slope * dur / np.log(2.0)
    if slope <= 0.0 or rises < 0.8 or np.sqrt(np.mean(resid**2)) > 0.1 or span_octaves < 0.8:
        return None
    f1 = float(np.exp(intercept))
    f2 = float(np.exp(intercept + slope * dur))
    return SweepParameters(start_hz=f1, stop_hz=min(f2, 0.5 * fs), rate_constant_s=float(1.0 / slope), segment=seg)


def _tones_in(seg: np.ndarray, sample_rate_hz: int) -> tuple[np.ndarray, np.ndarray] | None:
    """(frequencies, amplitudes) of the spectral peaks of one steady segment, or None."""
    from .signaltools import find_peaks

    n = seg.size
    if n < 64:
        return None
    w = np.hanning(n)
    nfft = int(2 ** np.ceil(np.log2(4 * n)))
    mag = np.abs(rfft(seg * w, nfft))
    top = float(mag[1:].max())
    if top <= 0.0:
        return None
    pad = nfft / n
    peaks = find_peaks(mag, height=top * 10.0 ** (_TONE_THRESHOLD_DB / 20.0), distance=max(1, int(3 * pad)))
    if peaks.size == 0 or peaks.size > _MAX_TONES:
        return None
    power = mag**2
    near = np.zeros(mag.size, dtype=bool)
    reach = int(np.ceil(4 * pad))
    for p in peaks:
        near[max(0, p - reach):p + reach + 1] = True
    if power[near].sum() < 0.9 * power.sum():
        return None
    delta, peak_log = parabolic_peak(np.log(mag + top * 1e-12), peaks)
    return (peaks + delta) * sample_rate_hz / nfft, 2.0 * np.exp(peak_log) / w.sum()


def find_tones(x: np.ndarray, sample_rate_hz: int, segments: tuple[Segment, ...]) -> ToneSet | None:
    """Steady tones in the active segments of ``x`` (a multitone, or stepped tones).

    Each segment is searched on its own: spectral peaks within 30 dB of its strongest,
    from the Hann-windowed segment zero-padded 4×, each peak's frequency from a parabola
    through the log magnitude and its amplitude from the window-corrected magnitude.
    Tones found in several segments closer than two analysis bins are merged.  Returns
    None when a segment's energy is not concentrated in narrow peaks (90 % of it within
    ±4 bins of the peaks is required).
    """
    found_f: list[np.ndarray] = []
    found_a: list[np.ndarray] = []
    tol = 0.0
    for sg in segments:
        r = _tones_in(np.asarray(x[sg.start:sg.stop], dtype=np.float64), sample_rate_hz)
        if r is None:
            return None
        found_f.append(r[0])
        found_a.append(r[1])
        tol = max(tol, 2.0 * sample_rate_hz / sg.length)
    if not found_f:
        return None
    f = np.concatenate(found_f)
    a = np.concatenate(found_a)
    order = np.argsort(f)
    f, a = f[order], a[order]
    freqs: list[float] = []
    amps: list[float] = []
    for fi, ai in zip(f, a):
        if freqs and fi - freqs[-1] < tol:
            if ai > amps[-1]:
                freqs[-1], amps[-1] = float(fi), float(ai)
        else:
            freqs.append(float(fi))
            amps.append(float(ai))
    fr = np.array(freqs)
    spacing = float(np.min(np.diff(fr))) if fr.size > 1 else None
    return ToneSet(frequencies_hz=fr, amplitudes=np.array(amps), spacing_hz=spacing,
                   span=Segment(segments[0].start, segments[-1].stop))


def analyse_stimulus(x: np.ndarray, sample_rate_hz: int) -> StimulusAnalysis:
    """Find the active parts of a stimulus and recognise it as a sweep or steady tones.

    The longest active segment is tested first for a rising exponential sweep (its peak
    frequency track must be a straight line in ln f against t); the other segments are
    then markers.  Otherwise the whole active span is searched for steady tones.

    Raises
    ------
    MeasurementError
        The stimulus is silent, or is neither an exponential sweep nor steady tones.
    """
    fs = int(sample_rate_hz)
    segs = active_segments(x, fs)
    if not segs:
        raise MeasurementError("The stimulus is silent, so there is nothing to measure the recording against.")
    span = Segment(segs[0].start, segs[-1].stop)
    main = max(segs, key=lambda s: s.length)
    sweep = _fit_sweep(x, main, fs)
    if sweep is not None:
        anchors = tuple(s for s in segs if s != main)
        return StimulusAnalysis("sweep", fs, segs, span, sweep, None, anchors)
    tones = find_tones(x, fs, segs)
    if tones is not None:
        return StimulusAnalysis("tones", fs, segs, span, None, tones, ())
    raise MeasurementError(
        "The stimulus is neither a rising exponential sweep nor a set of steady tones; "
        "use a file made by 'voiceband testsignal'."
    )
