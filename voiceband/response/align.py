"""Aligning a recording to its stimulus: sample-rate conversion, start delay and clock drift.

A recording made by another device starts at an unknown moment, may use another nominal
sample rate (a 48 kHz stimulus recorded at 44.1 kHz), and its clock runs slightly fast
or slow (a few hundred parts per million are usual for sound cards, common practice).
The model is

    t_rec = d + r · t_stim

(seconds on the recording's nominal clock; ``r`` the *clock ratio*).  It is estimated in
two steps:

1. a coarse delay from the cross-correlation of log band-energy envelopes (sweeps) or
   of energy envelopes (steady tones), insensitive to the chain's response and to an SSB
   frequency offset;
2. fine positions of *anchors* (the sweep's marker chirps)
   from the envelope of their cross-correlation with the recording; a straight-line fit
   of recorded against stimulus positions gives ``d`` and ``r``.

The recording is then resampled by ``1/r`` so that it runs on the stimulus clock.

References
----------
Cross-correlation time-delay estimation and its envelope (analytic signal) are textbook
methods, e.g. J. S. Bendat & A. G. Piersol, *Random Data*, 4th ed., Wiley 2010, ch. 5 and
13 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import MeasurementError
from ..fourier import fft, ifft, irfft, rfft
from ._framing import frames
from .stimulus import Segment

__all__ = [
    "Match",
    "Alignment",
    "resample_to_rate",
    "correct_clock",
    "envelope_match",
    "energy_match",
    "locate",
    "fit_clock",
    "align_to_anchors",
    "MAX_CLOCK_ERROR",
]

#: Largest clock error accepted (±1 %): more means the nominal sample rates are wrong.
MAX_CLOCK_ERROR = 0.01
_RESAMPLE_WINDOW = ("kaiser", 10.0)
_BANDS = 16


@dataclass(frozen=True)
class Match:
    """Where a reference was found in a signal.

    Attributes
    ----------
    lag : float
        Sample of the signal where the reference's first sample lies (sub-sample).
    coefficient : float
        Normalised match, 0 (unrelated) to 1 (identical up to gain).
    """

    lag: float
    coefficient: float


@dataclass(frozen=True)
class Alignment:
    """The recording's time axis in terms of the stimulus's.

    Attributes
    ----------
    delay_samples : float
        d: sample of the (rate-converted) recording where stimulus sample 0 lies.
    clock_ratio : float
        r: recorded duration of the stimulus ÷ its nominal duration.
    coefficient : float
        Coarse envelope-match coefficient (0–1).
    anchors_used : int
        Anchors that entered the clock fit (1 means the clock ratio was not measured).
    """

    delay_samples: float
    clock_ratio: float
    coefficient: float
    anchors_used: int


def resample_to_rate(x: np.ndarray, from_rate_hz: int, to_rate_hz: int) -> np.ndarray:
    """Exact rational sample-rate conversion (polyphase, Kaiser-windowed anti-alias filter, β = 10).

    Used only inside the measurement, never on load.  The stronger-than-default Kaiser
    window keeps images and aliases about 100 dB down, below what a sweep measurement
    could mistake for harmonic distortion.
    """
    if int(from_rate_hz) == int(to_rate_hz):
        return np.asarray(x, dtype=np.float64)
    from fractions import Fraction

    from scipy.signal import resample_poly  # only here: importing scipy.signal costs about a second

    fr = Fraction(int(to_rate_hz), int(from_rate_hz))
    return resample_poly(np.asarray(x, dtype=np.float64), fr.numerator, fr.denominator, window=_RESAMPLE_WINDOW)


def correct_clock(x: np.ndarray, clock_ratio: float) -> np.ndarray:
    """Resample so a recording stretched by ``clock_ratio`` runs on the stimulus clock.

    Output sample k is the input at sample k·r; the ratio is approximated by a fraction
    with a denominator of at most 4000 (error below 1e-7 for |r − 1| < 1 %).
    """
    r = float(clock_ratio)
    if abs(r - 1.0) < 1e-7:
        return np.asarray(x, dtype=np.float64)
    from fractions import Fraction

    from scipy.signal import resample_poly  # only here: importing scipy.signal costs about a second

    fr = Fraction(1.0 / r).limit_denominator(4000)
    return resample_poly(np.asarray(x, dtype=np.float64), fr.numerator, fr.denominator, window=_RESAMPLE_WINDOW)


def _band_log_envelopes(x: np.ndarray, fs: int, frame_len: int, hop: int) -> np.ndarray:
    """Log energy in 16 log-spaced bands per frame (bands × frames), mean removed per band."""
    fr, _ = frames(x, frame_len, hop)
    if fr.shape[0] == 0:
        return np.zeros((_BANDS, 0))
    # single precision: band energies for an alignment need no more, and float32 transforms
    # cost about half as much
    p = np.abs(rfft(np.multiply(fr, np.hanning(frame_len), dtype=np.float32), axis=1)) ** 2
    f = np.fft.rfftfreq(frame_len, 1.0 / fs)
    edges = np.geomspace(100.0, 0.45 * fs, _BANDS + 1)
    idx = np.clip(np.searchsorted(f, edges), 1, f.size - 1)
    e = np.stack([p[:, idx[b]:max(idx[b + 1], idx[b] + 1)].sum(axis=1) for b in range(_BANDS)])
    top = float(e.max())
    le = np.log10(e + (top if top > 0.0 else 1.0) * 1e-6)
    return le - le.mean(axis=1, keepdims=True)


def envelope_match(stimulus: np.ndarray, recording: np.ndarray, sample_rate_hz: int) -> Match:
    """Coarse position of the stimulus in the recording from band-energy envelopes.

    Log energies in 16 log-spaced bands (100 Hz to 0.45·fs) in 20 ms frames every 5 ms
    are cross-correlated along time and summed over bands.  The chain's response only
    adds a constant per band (removed), and a frequency offset of tens of hertz barely
    moves energy between bands, so the match survives both.  Resolution: one hop (5 ms).

    Positions where the stimulus runs off either end of the recording are considered
    too: the coefficient is normalised by the whole stimulus, so a partial overlap
    scores at most the square root of the share that overlaps.  The lag may therefore be
    negative, or put the stimulus's end beyond the recording's; the caller checks that
    what it needs lies inside.  Pass a stimulus without silent stretches (the sweep, not
    the file with its markers): silences would dominate the log envelopes.

    Raises
    ------
    MeasurementError
        The stimulus or the recording is shorter than one analysis frame.
    """
    fs = int(sample_rate_hz)
    frame_len = int(2 ** np.ceil(np.log2(0.02 * fs)))
    hop = frame_len // 4
    s = _band_log_envelopes(stimulus, fs, frame_len, hop)
    r = _band_log_envelopes(recording, fs, frame_len, hop)
    ns, nr = s.shape[1], r.shape[1]
    if ns == 0 or nr == 0:
        raise MeasurementError(
            f"The recording ({recording.size / fs:.3f} s) or the stimulus ({stimulus.size / fs:.3f} s) "
            "is too short to measure."
        )
    pad = ns - 1
    rp = np.pad(r, ((0, 0), (pad, pad)))  # 0 is each band's mean level: adds nothing to the sums
    nl = nr + pad  # lags in frames, from −pad to nr − 1
    n = int(2 ** np.ceil(np.log2(ns + rp.shape[1])))
    c = irfft(np.sum(rfft(rp, n, axis=1) * np.conj(rfft(s, n, axis=1)), axis=0), n)[:nl]
    e2 = np.concatenate(([0.0], np.cumsum(np.sum(rp * rp, axis=0))))
    win = np.sqrt(np.maximum(e2[ns:ns + nl] - e2[:nl], 1e-30))
    rho = c / (np.sqrt(np.sum(s * s)) * win)
    m = int(np.argmax(rho))
    return Match(lag=float((m - pad) * hop), coefficient=float(max(rho[m], 0.0)))


def energy_match(stimulus: np.ndarray, recording: np.ndarray, sample_rate_hz: int) -> Match:
    """Coarse position of a steady stimulus (tones) in the recording from energy envelopes.

    Frame energies (5 ms hops) of both are cross-correlated; for a stimulus whose
    envelope is flat this picks the position that captures the most recorded energy,
    i.e. full overlap with the recorded burst.  Each stimulus burst contributes most
    when it overlaps its own recorded burst fully, so stepped tones align as well.
    Resolution: one hop.  ``coefficient`` is the normalised correlation of the envelopes.

    Raises
    ------
    MeasurementError
        The recording is shorter than the stimulus.
    """
    fs = int(sample_rate_hz)
    hop = max(1, int(round(0.005 * fs)))
    ns, nr = stimulus.size // hop, recording.size // hop
    if ns == 0 or nr < ns:
        raise MeasurementError(
            f"The recording ({recording.size / fs:.2f} s) is shorter than the stimulus "
            f"({stimulus.size / fs:.2f} s), so it cannot contain all of it."
        )
    es = np.sum(np.asarray(stimulus[: ns * hop], dtype=np.float64).reshape(ns, hop) ** 2, axis=1)
    er = np.sum(np.asarray(recording[: nr * hop], dtype=np.float64).reshape(nr, hop) ** 2, axis=1)
    n = int(2 ** np.ceil(np.log2(ns + nr)))
    c = irfft(rfft(er, n) * np.conj(rfft(es, n)), n)[: nr - ns + 1]
    m = int(np.argmax(c))
    win = er[m:m + ns]
    den = float(np.sqrt(np.sum(es * es) * np.sum(win * win)))
    return Match(lag=float(m * hop), coefficient=float(c[m] / den) if den > 0.0 else 0.0)


def locate(reference: np.ndarray, recording: np.ndarray, *, expected_lag: float, search_samples: int) -> Match:
    """Fine position of ``reference`` in ``recording`` near ``expected_lag``.

    The envelope (magnitude of the analytic cross-correlation) is searched within
    ±``search_samples``; its peak is refined by a parabola.  The envelope, unlike the
    raw correlation, does not jump by a carrier cycle when the chain shifts the phase.
    """
    ref = np.asarray(reference, dtype=np.float64)
    nr = ref.size
    lo = max(0, int(np.floor(expected_lag)) - int(search_samples))
    hi = min(recording.size - nr, int(np.ceil(expected_lag)) + int(search_samples))
    if hi < lo:
        return Match(lag=float(expected_lag), coefficient=0.0)
    ex = np.asarray(recording[lo: hi + nr], dtype=np.float64)
    n = int(2 ** np.ceil(np.log2(ex.size + nr)))
    spec = fft(ex, n) * np.conj(fft(ref, n))
    spec[n // 2 + 1:] = 0.0
    spec[1: n // 2] *= 2.0
    env = np.abs(ifft(spec))[: hi - lo + 1]
    m = int(np.argmax(env))
    delta = 0.0
    if 0 < m < env.size - 1:
        a, b, c = env[m - 1], env[m], env[m + 1]
        den = a - 2.0 * b + c
        if den < 0.0:
            delta = float(np.clip(0.5 * (a - c) / den, -0.5, 0.5))
    seg = ex[m: m + nr]
    norm = float(np.sqrt(np.sum(ref * ref) * np.sum(seg * seg)))
    coef = float(env[m] / norm) if norm > 0.0 else 0.0
    return Match(lag=float(lo + m + delta), coefficient=min(coef, 1.0))


def fit_clock(stimulus_positions: np.ndarray, recording_positions: np.ndarray, weights: np.ndarray) -> tuple[float, float]:
    """Weighted straight line ``recording = d + r · stimulus``; returns (d, r).

    With one position, or positions closer together than 1 s worth of samples, r is 1.
    """
    s = np.asarray(stimulus_positions, dtype=np.float64)
    p = np.asarray(recording_positions, dtype=np.float64)
    w = np.asarray(weights, dtype=np.float64)
    if s.size < 2 or np.ptp(s) <= 0.0:
        return float(np.average(p - s, weights=w)), 1.0
    sm = np.average(s, weights=w)
    pm = np.average(p, weights=w)
    r = float(np.sum(w * (s - sm) * (p - pm)) / np.sum(w * (s - sm) ** 2))
    return float(pm - r * sm), r


def align_to_anchors(
    stimulus: np.ndarray,
    recording: np.ndarray,
    sample_rate_hz: int,
    *,
    anchors: tuple[Segment, ...],
    coarse: Match,
    min_baseline_s: float = 1.0,
) -> Alignment:
    """Delay and clock ratio from the fine positions of anchor segments of the stimulus.

    Each anchor is searched within ±(30 ms + 2.5 % of its distance from the stimulus
    centre) of where the coarse match puts it.  Anchors matching at less than 30 % of
    the best anchor's coefficient are ignored.  With fewer than two usable anchors, or
    anchors spanning less than ``min_baseline_s``, the clock ratio is taken as 1.

    Raises
    ------
    MeasurementError
        The clock ratio is more than 1 % from 1 (the nominal sample rates must be wrong).
    """
    fs = int(sample_rate_hz)
    centre = 0.5 * stimulus.size
    pos_s, pos_r, wts = [], [], []
    for a in anchors:
        search = int(0.03 * fs + 0.025 * abs(a.centre - centre))
        m = locate(stimulus[a.start:a.stop], recording, expected_lag=coarse.lag + a.start, search_samples=search)
        pos_s.append(float(a.start))
        pos_r.append(m.lag)
        wts.append(m.coefficient)
    w = np.array(wts)
    keep = w >= 0.3 * w.max() if w.size and w.max() > 0.0 else np.zeros(w.size, dtype=bool)
    s = np.array(pos_s)[keep]
    p = np.array(pos_r)[keep]
    w = w[keep]
    if s.size == 0:
        return Alignment(delay_samples=coarse.lag, clock_ratio=1.0, coefficient=coarse.coefficient, anchors_used=0)
    if s.size < 2 or np.ptp(s) < min_baseline_s * fs:
        d, r = fit_clock(s, p, w)
        return Alignment(delay_samples=d, clock_ratio=1.0, coefficient=coarse.coefficient, anchors_used=int(s.size))
    d, r = fit_clock(s, p, w**2)
    if abs(r - 1.0) > MAX_CLOCK_ERROR:
        raise MeasurementError(
            f"The recording runs {100.0 * (r - 1.0):+.2f} % against the stimulus clock, more than "
            f"±{100.0 * MAX_CLOCK_ERROR:g} %; check that both files state their true sample rates."
        )
    return Alignment(delay_samples=d, clock_ratio=r, coefficient=coarse.coefficient, anchors_used=int(s.size))
