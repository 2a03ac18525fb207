"""Talker fundamental-frequency (F0) range, from a bounded sample of the speech.

Why: the lowest F0 of the talker tells how low a transmit high-pass filter may sit before
it removes the voice's fundamental (voice energy below F0 is small), and the F0 spread is
a sanity check on the recording.

Streaming: :class:`VoiceReservoir` keeps at most ``capacity_s`` (60 s) of the recording as
0.5 s chunks, chosen evenly across the file among chunks loud enough to be speech, so
memory is bounded whatever the file length.  At the end the stored chunks that reach the
speech threshold found by :mod:`voiceband.activity` are analysed with :func:`yin_f0`, our
implementation of the YIN estimator (de Cheveigne & Kawahara, J. Acoust. Soc. Am.
111(4):1917-1930, 2002): difference function (eq. 6), cumulative-mean-normalised
difference (eq. 8), absolute threshold (step 4) and parabolic interpolation (step 5).
The 5th, 50th and 95th percentiles of the voiced-frame F0 values are reported.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from .errors import MeasurementError, SignalValueError

__all__ = [
    "VoiceResult",
    "VoiceReservoir",
    "yin_f0",
    "measure_voice",
]

_GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0
#: Fewest voiced frames (10 ms hop) for an F0 range to be reported.
_MIN_VOICED_FRAMES = 20
#: Chunks more than this far below the loudest chunk so far are not kept (dB).
_ELIGIBLE_BELOW_MAX_DB = 30.0
#: Most samples the reservoir stores (16.8 MB of float32): 60 s up to 69.9 kHz, less above.
_MAX_STORED_SAMPLES = 1 << 22
#: Rate at which F0 is estimated (about 8 kHz; F0 and its low harmonics are far below 4 kHz).
_F0_RATE_HZ = 8000.0


@dataclass(frozen=True)
class VoiceResult:
    """Talker F0 range.

    Attributes
    ----------
    f0_median_hz, f0_p5_hz, f0_p95_hz : float or None
        Median, 5th and 95th percentile of F0 over voiced frames (Hz); ``None`` when fewer
        than 20 voiced frames were found.
    voiced_frame_count : int
        Voiced 10 ms frames the percentiles are based on.
    analysed_s : float
        Duration of audio analysed (s), at most the reservoir capacity.
    """

    f0_median_hz: Optional[float]
    f0_p5_hz: Optional[float]
    f0_p95_hz: Optional[float]
    voiced_frame_count: int
    analysed_s: float


def yin_f0(
    x,
    sample_rate_hz: float,
    *,
    fmin_hz: float = 50.0,
    fmax_hz: float = 500.0,
    hop_s: float = 0.01,
    threshold: float = 0.15,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Frame-wise F0 by the YIN method (de Cheveigne & Kawahara 2002).

    Parameters
    ----------
    x : array_like, 1-D
        Signal.
    sample_rate_hz : float
    fmin_hz, fmax_hz : float, keyword-only
        Search range (Hz).
    hop_s : float, keyword-only
        Frame hop (s).
    threshold : float, keyword-only
        YIN absolute threshold on the cumulative-mean-normalised difference (step 4); a
        frame with no dip below it is unvoiced.

    Returns
    -------
    f0_hz : ndarray
        F0 per frame (Hz), NaN where unvoiced.
    level_dbfs : ndarray
        Mean square of each frame's integration window (dBFS).
    start_s : ndarray
        Start time of each frame (s).

    Notes
    -----
    Integration window ``W = max(fs / fmin, 25 ms)``, lags up to ``fs / fmin``; the
    difference function is ``d(tau) = e(0) + e(tau) - 2 r(tau)`` (YIN eq. 7) with the
    cross term by FFT, all frames at once.
    """
    fs = float(sample_rate_hz)
    sig = np.asarray(x, dtype=np.float64)
    if sig.ndim != 1:
        raise SignalValueError(f"the signal must be one-dimensional; got shape {sig.shape}")
    if not (0 < fmin_hz < fmax_hz < fs / 2):
        raise MeasurementError(
            f"need 0 < fmin_hz < fmax_hz < sample_rate_hz / 2; got {fmin_hz:g}, {fmax_hz:g}, {fs:g}"
        )
    tau_max = int(math.ceil(fs / fmin_hz))
    tau_min = max(2, int(math.floor(fs / fmax_hz)))
    w = max(tau_max, int(round(0.025 * fs)))
    length = w + tau_max + 1
    hop = max(1, int(round(hop_s * fs)))
    if sig.size < length:
        empty = np.zeros(0)
        return empty, empty, empty
    n_frames = (sig.size - length) // hop + 1
    frames = np.lib.stride_tricks.as_strided(
        sig, shape=(n_frames, length), strides=(hop * sig.itemsize, sig.itemsize), writeable=False
    )
    from scipy.fft import irfft, next_fast_len, rfft

    nfft = next_fast_len(length + w)
    head = np.zeros((n_frames, w))
    head[:] = frames[:, :w]
    r = irfft(np.conj(rfft(head, nfft, axis=1)) * rfft(frames, nfft, axis=1), nfft, axis=1)[:, : tau_max + 1]
    sq = np.concatenate((np.zeros((n_frames, 1)), np.cumsum(frames * frames, axis=1)), axis=1)
    e0 = sq[:, w]
    taus = np.arange(tau_max + 1)
    e_tau = sq[:, taus + w] - sq[:, taus]
    d = np.maximum(e0[:, None] + e_tau - 2.0 * r, 0.0)
    # Cumulative-mean-normalised difference (YIN eq. 8).
    cum = np.cumsum(d[:, 1:], axis=1)
    dn = np.ones_like(d)
    with np.errstate(divide="ignore", invalid="ignore"):
        dn[:, 1:] = np.where(cum > 0, d[:, 1:] * taus[1:] / cum, 1.0)
    seg = dn[:, tau_min : tau_max + 1]
    below = seg < threshold
    voiced = below.any(axis=1)
    tau = np.argmax(below, axis=1)
    # Step 4: from the first dip below threshold, go down to its local minimum.
    last = seg.shape[1] - 1
    rows = np.arange(n_frames)
    for _ in range(seg.shape[1]):
        nxt = np.minimum(tau + 1, last)
        move = voiced & (tau < last) & (seg[rows, nxt] < seg[rows, tau])
        if not move.any():
            break
        tau = np.where(move, nxt, tau)
    t_abs = tau + tau_min
    # Step 5: parabolic interpolation of the normalised difference around the minimum.
    lo = np.clip(t_abs - 1, 1, tau_max)
    hi = np.clip(t_abs + 1, 1, tau_max)
    a, b, c = dn[rows, lo], dn[rows, t_abs], dn[rows, hi]
    den = a - 2.0 * b + c
    with np.errstate(divide="ignore", invalid="ignore"):
        delta = np.where((den > 0) & (lo < t_abs) & (hi > t_abs), 0.5 * (a - c) / den, 0.0)
    period = t_abs + np.clip(delta, -0.5, 0.5)
    f0 = np.where(voiced, fs / period, np.nan)
    with np.errstate(divide="ignore"):
        level = 10.0 * np.log10(e0 / w)
    return f0, level, np.arange(n_frames) * hop / fs


class VoiceReservoir:
    """Bounded, evenly spread sample of the loud parts of a stream, for F0 analysis.

    The stream is cut into chunks of ``chunk_s`` seconds.  A chunk is eligible while its
    level is within 30 dB of the loudest chunk seen so far; among eligible chunks the
    reservoir keeps the ``capacity_s / chunk_s`` with the smallest priority
    ``frac(index * 0.618...)`` (a golden-ratio sequence, so kept chunks spread evenly over
    the file).  Memory: ``capacity_s`` of float32 samples (11.5 MB at 48 kHz), and never
    more than 2**22 samples (so 21.8 s at 192 kHz).  The choice depends only on the chunk
    sequence, not on how the stream was cut into blocks.

    Parameters
    ----------
    sample_rate_hz : float
    capacity_s : float, keyword-only
        Most audio kept (s).
    chunk_s : float, keyword-only
        Chunk length (s).
    """

    def __init__(self, sample_rate_hz: float, *, capacity_s: float = 60.0, chunk_s: float = 0.5):
        fs = float(sample_rate_hz)
        if not (math.isfinite(fs) and fs > 0):
            raise SignalValueError(f"sample_rate_hz must be a positive number; got {sample_rate_hz!r}")
        if not (capacity_s >= chunk_s > 0):
            raise MeasurementError(f"need capacity_s >= chunk_s > 0; got {capacity_s!r}, {chunk_s!r}")
        self.sample_rate_hz = fs
        self.chunk_length = max(1, int(round(chunk_s * fs)))
        self.capacity = max(1, min(int(capacity_s // chunk_s), _MAX_STORED_SAMPLES // self.chunk_length))
        self._store: Optional[np.ndarray] = None
        self._prio: list[float] = []
        self._level: list[float] = []
        self._carry = np.zeros(0, dtype=np.float32)
        self._chunks_done = 0
        self._max_level = -math.inf

    def update(self, block) -> None:
        """Add the next block of samples (1-D, any length >= 1)."""
        x = np.asarray(block)
        if x.ndim != 1:
            raise SignalValueError(f"a block of samples must be one-dimensional; got shape {x.shape}")
        L = self.chunk_length
        c = self._carry.size
        if c + x.size < L:
            buf = np.empty(c + x.size, dtype=np.float32)
            buf[:c] = self._carry
            buf[c:] = x
            self._carry = buf
            return
        # The first chunk completes the carried samples; the rest are views of the block.
        first = np.empty(L, dtype=np.float32)
        first[:c] = self._carry
        first[c:] = x[: L - c]
        body = np.asarray(x[L - c :], dtype=np.float32)
        n = body.size // L
        rows = body[: n * L].reshape(n, L)
        ms = np.empty(n + 1)
        ms[0] = float(np.dot(first, first))
        ms[1:] = np.einsum("ij,ij->i", rows, rows)
        ms /= L
        with np.errstate(divide="ignore"):
            lev = 10.0 * np.log10(ms)
        idx = self._chunks_done + np.arange(n + 1)
        # Only chunks that could change the reservoir need the per-chunk logic: any chunk
        # while it is filling or a new maximum arrives, else those with a winning priority.
        full = len(self._prio) >= self.capacity
        if full and not np.any(lev > self._max_level):
            worst = max(self._prio)
            cand = np.flatnonzero((idx * _GOLDEN) % 1.0 < worst).tolist()
        else:
            cand = range(n + 1)
        levl = lev.tolist()
        for i in cand:
            self._offer(int(idx[i]), levl[i], first if i == 0 else rows[i - 1])
        self._chunks_done += n + 1
        self._carry = body[n * L :].copy()

    def _offer(self, index: int, level: float, row: np.ndarray) -> None:
        if not math.isfinite(level):
            return
        if level > self._max_level:
            self._max_level = level
            floor = level - _ELIGIBLE_BELOW_MAX_DB
            keep = [j for j, v in enumerate(self._level) if v >= floor]
            if len(keep) < len(self._level) and self._store is not None:
                self._store[: len(keep)] = self._store[keep]
                self._prio = [self._prio[j] for j in keep]
                self._level = [self._level[j] for j in keep]
        if level < self._max_level - _ELIGIBLE_BELOW_MAX_DB:
            return
        u = (index * _GOLDEN) % 1.0
        if self._store is None:
            self._store = np.empty((self.capacity, self.chunk_length), dtype=np.float32)
        if len(self._prio) < self.capacity:
            slot = len(self._prio)
            self._prio.append(u)
            self._level.append(level)
        else:
            worst = max(range(len(self._prio)), key=self._prio.__getitem__)
            if u >= self._prio[worst]:
                return
            slot = worst
            self._prio[slot] = u
            self._level[slot] = level
        self._store[slot] = row

    def result(self, *, min_level_dbfs: Optional[float] = None) -> VoiceResult:
        """F0 range of the kept chunks (does not change the reservoir).

        Parameters
        ----------
        min_level_dbfs : float or None, keyword-only
            Speech threshold (from :class:`voiceband.activity.ActivityResult`): chunks and
            YIN frames below it are ignored.
        """
        fs = self.sample_rate_hz
        gate = -math.inf if min_level_dbfs is None else float(min_level_dbfs)
        floor = self._max_level - _ELIGIBLE_BELOW_MAX_DB
        slots = [j for j in sorted(range(len(self._prio)), key=self._prio.__getitem__)
                 if self._level[j] >= max(gate, floor)]
        if not slots:
            return VoiceResult(None, None, None, 0, 0.0)
        q = max(1, int(fs // _F0_RATE_HZ))
        chunks = self._store[slots].astype(np.float64)
        if q > 1:
            from .lowpass import decimate_rows

            chunks = decimate_rows(chunks, q)
        rate = fs / q
        f0s, levels = [], []
        for ch in chunks:
            f0, lev, _ = yin_f0(ch, rate)
            f0s.append(f0)
            levels.append(lev)
        f0 = np.concatenate(f0s)
        lev = np.concatenate(levels)
        voiced = np.isfinite(f0) & (lev >= gate)
        v = f0[voiced]
        analysed = len(slots) * self.chunk_length / fs
        if v.size < _MIN_VOICED_FRAMES:
            return VoiceResult(None, None, None, int(v.size), analysed)
        p5, p50, p95 = np.percentile(v, [5.0, 50.0, 95.0])
        return VoiceResult(float(p50), float(p5), float(p95), int(v.size), analysed)


def measure_voice(x, sample_rate_hz: float, *, min_level_dbfs: Optional[float] = None, **options) -> VoiceResult:
    """F0 range of a whole signal (one pass of :class:`VoiceReservoir`)."""
    acc = VoiceReservoir(sample_rate_hz, **options)
    acc.update(x)
    return acc.result(min_level_dbfs=min_level_dbfs)
