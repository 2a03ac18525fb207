"""Talker fundamental-frequency (F0) range, from a bounded sample of the speech.

Why: the lowest F0 of the talker tells how low a transmit high-pass filter may sit before
it removes the voice's fundamental (voice energy below F0 is small), and the F0 spread is
a sanity check on the recording.

Streaming: :class:`VoiceReservoir` keeps at most ``capacity_s`` (60 s) of the recording as
0.5 s chunks, chosen evenly across the file among chunks loud enough to be speech, so
memory is bounded whatever the file length.

Estimator: :meth:`VoiceReservoir.result`.  :func:`yin_f0` is the plain YIN estimator
(steps 1-5 of the paper) for a single signal.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..arrays import percentile, sorted_unique
from .. import validate
from ..fastlen import next_fast_len
from ..fourier import irfft, rfft
from ..errors import MeasurementError
from .hum import block_as_stored, steady_mains_lines, subtract_line

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

#: Frames this far below the speech threshold are not analysed (dB): with
#: :mod:`voiceband.measurement.activity`'s default margins (speech 10 dB, pause 3 dB above the noise
#: mode) that is the pause threshold, so pauses are out and weak voiced sounds stay in.
#: Gating at the speech threshold itself kept only the louder syllables, whose F0 is
#: higher, and raised the median by up to 15 % on noisy or hummy synthetic speech.
_PAUSE_BELOW_SPEECH_DB = 7.0
#: A frame is unvoiced when the analysis band keeps less than this share of its power
#: (-15 dB, 3 %): voiced speech has most of its power between 70 Hz and 3.5 kHz, even
#: under strong hum, while a pause keeps only what is left of the hum taken out.
_REMOVED_MAX_DB = 15.0
#: Lowest rate at which F0 is estimated (Hz); chunks are resampled to just above it.
_F0_RATE_HZ = 8000.0
#: F0 search range of the reservoir (Hz): adult speech including shouting.
_FMIN_HZ, _FMAX_HZ = 50.0, 500.0
#: Shortest YIN integration window (s); also at least one period of ``_FMIN_HZ``.
_WINDOW_S = 0.032
#: Frame hop (s).
_HOP_S = 0.01
#: High-pass corner of the analysis band (Hz) and its Butterworth order.
_HIGHPASS_HZ, _HIGHPASS_ORDER = 70.0, 4
#: Raised-cosine low-pass edge of the analysis band (Hz), below the resampled Nyquist.
_TOP_PASS_HZ, _TOP_STOP_HZ = 3200.0, 3800.0
#: Half-width of a hum notch (Hz): the gain rises as sin^2 from 0 at the line to 1.
_NOTCH_HALF_WIDTH_HZ = 10.0

# pYIN (Mauch & Dixon 2014; parameter values as in librosa.pyin's defaults, from memory):
# Beta(alpha=2, beta=18) threshold prior (mean 0.1) and 1 % of the mass below every dip to
# the lowest dip.  The Boltzmann parameter over dip order is 1 here (pYIN: 2): later dips
# keep more weight, which on band-limited synthetic speech (300-2700 Hz) cut the octave-up
# errors of frames where the 2nd harmonic dominates by a third and changed nothing
# measurable on full-band speech.
_BETA_B = 18.0
_BOLTZMANN = 1.0
_NO_DIP_WEIGHT = 0.01
#: Dips per frame considered (the lowest ones).
_DIPS = 8
#: HMM: pitch grid step (octave), largest move per hop (octave; librosa.pyin's default
#: 35.92 octaves/s at a 10 ms hop, from memory), voicing switch probability (pYIN's 0.01).
_GRID_OCT = 1.0 / 12.0
_MAX_MOVE_OCT = 0.36
_SWITCH_PROB = 0.01
#: Divisor of the unvoiced probability.  pYIN spreads it over its pitch grid (about 400
#: states for 50-500 Hz at 0.1 semitone), which makes it call a frame voiced on weak
#: periodicity; this fixed divisor keeps that balance on our coarser grid (chosen on
#: synthetic speech with hum, noise and band-limiting).
_UNVOICED_DIVISOR = 150.0
#: Second pass in the talker's own range, ``0.75 * q25`` to ``1.5 * q75`` of the first
#: pass (the two-pass pitch floor and ceiling of De Looze & Hirst, "Detecting changes in
#: key and range for the automatic modelling and coding of intonation", Speech Prosody
#: 2008; factors from memory).
_RANGE_FLOOR, _RANGE_CEILING = 0.75, 1.5


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


def _frames(rows: np.ndarray, length: int, hop: int) -> np.ndarray:
    """All frames of ``length`` samples every ``hop`` samples of each row, shape (rows, T, length)."""
    rows = np.ascontiguousarray(rows)
    n_frames = (rows.shape[1] - length) // hop + 1
    s0, s1 = rows.strides
    return np.lib.stride_tricks.as_strided(
        rows, shape=(rows.shape[0], n_frames, length), strides=(s0, hop * s1, s1), writeable=False
    )


def _cmnd(frames: np.ndarray, w: int, tau_max: int) -> tuple[np.ndarray, np.ndarray]:
    """YIN cumulative-mean-normalised difference of each frame (eqs. 6-8).

    ``frames`` has shape (N, w + tau_max + 1).  Returns ``dn`` (N, tau_max + 1) and the
    energy ``e0`` (N,) of each integration window.  ``d(tau) = e(0) + e(tau) - 2 r(tau)``
    (YIN eq. 7) with the cross term by FFT: lags up to ``tau_max`` with the first ``w``
    samples need no more than ``len(frame)`` points (no circular wrap).
    """
    n, length = frames.shape
    nfft = next_fast_len(length, real=True)
    # Cross term in the frames' own precision (float32 from the reservoir); energies,
    # whose differences matter near a dip, are accumulated in float64.
    r = irfft(np.conj(rfft(frames[:, :w], nfft, axis=1)) * rfft(frames, nfft, axis=1), nfft, axis=1)
    sq = np.empty((n, length + 1))
    sq[:, 0] = 0.0
    np.cumsum(np.square(frames, dtype=np.float64), axis=1, out=sq[:, 1:])
    e0 = sq[:, w].copy()
    d = sq[:, w : w + tau_max + 1] - sq[:, : tau_max + 1]
    d += e0[:, None]
    d -= 2.0 * r[:, : tau_max + 1]
    np.maximum(d, 0.0, out=d)
    cum = np.cumsum(d[:, 1:], axis=1)
    dn = np.ones_like(d)
    taus = np.arange(1, tau_max + 1)
    with np.errstate(divide="ignore", invalid="ignore"):
        dn[:, 1:] = np.where(cum > 0, d[:, 1:] * taus / cum, 1.0)
    return dn, e0


def _parabolic_period(dn: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Step 5 of YIN: parabolic interpolation of ``dn`` around integer lags ``t`` (same leading shape)."""
    last = dn.shape[-1] - 1
    lo = np.clip(t - 1, 1, last)
    hi = np.clip(t + 1, 1, last)
    a = np.take_along_axis(dn, lo, -1)
    b = np.take_along_axis(dn, t, -1)
    c = np.take_along_axis(dn, hi, -1)
    den = a - 2.0 * b + c
    with np.errstate(divide="ignore", invalid="ignore"):
        delta = np.where((den > 0) & (lo < t) & (hi > t), 0.5 * (a - c) / den, 0.0)
    return t + np.clip(delta, -0.5, 0.5)


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
    cross term by FFT, all frames at once.  This is the plain estimator, with no
    pre-filter and no tracking; :class:`VoiceReservoir` adds both for running speech.
    """
    fs = float(validate.sample_rate_hz(sample_rate_hz))
    sig = np.ascontiguousarray(validate.block(x, name="x"))
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
    frames = _frames(sig[None, :], length, hop)[0]
    n_frames = frames.shape[0]
    dn, e0 = _cmnd(frames, w, tau_max)
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
    period = _parabolic_period(dn, (tau + tau_min)[:, None])[:, 0]
    f0 = np.where(voiced, fs / period, np.nan)
    with np.errstate(divide="ignore"):
        level = 10.0 * np.log10(e0 / w)
    return f0, level, np.arange(n_frames) * hop / fs


def _beta_cdf(x: np.ndarray) -> np.ndarray:
    """CDF of Beta(2, b) (closed form for alpha = 2): ``1 - (1 - x)^b (1 + b x)``."""
    x = np.clip(x, 0.0, 1.0)
    return 1.0 - (1.0 - x) ** _BETA_B * (1.0 + _BETA_B * x)


def _dip_probabilities(dn: np.ndarray, tau_min: int) -> tuple[np.ndarray, np.ndarray]:
    """pYIN probability that each of a frame's lowest dips is its period.

    Parameters
    ----------
    dn : ndarray, shape (N, tau_max + 1)
        Cumulative-mean-normalised difference per frame.

    Returns
    -------
    period : ndarray, shape (N, _DIPS)
        Interpolated lag of each dip (samples); NaN where a frame has fewer dips.
    prob : ndarray, shape (N, _DIPS)
        Probability of each dip (0 where there is none); 1 minus the row sum is the
        probability that the frame is unvoiced.

    Notes
    -----
    With the dips' heights sorted, ``g_1 <= g_2 <= ...``, a threshold between ``g_k`` and
    ``g_{k+1}`` (probability ``F(g_{k+1}) - F(g_k)`` under the Beta prior ``F``) has the
    ``k`` lowest dips below it; among those the dip of order ``j`` by lag gets the
    Boltzmann weight ``exp(-c j) / sum_i exp(-c i)`` (``c = _BOLTZMANN``).  Thresholds
    below every dip (``F(g_1)``) give 1 % of their mass to the lowest dip.  This is pYIN's sum over a
    threshold grid taken in the limit of a fine grid.
    """
    n = dn.shape[0]
    seg = dn[:, tau_min:]
    h = np.full(seg.shape, np.inf)
    inner = (seg[:, 1:-1] < seg[:, :-2]) & (seg[:, 1:-1] <= seg[:, 2:])
    h[:, 1:-1] = np.where(inner, seg[:, 1:-1], np.inf)
    m = min(_DIPS, max(1, seg.shape[1] - 2))
    lowest = np.argpartition(h, m - 1, axis=1)[:, :m] if m < seg.shape[1] else np.argsort(h, axis=1)
    lag = np.sort(lowest, axis=1)                          # dips in lag order
    hh = np.take_along_axis(h, lag, 1)                     # their heights (inf: no dip)
    exists = np.isfinite(hh)
    order = np.argsort(hh, axis=1, kind="stable")          # height order
    g = np.take_along_axis(hh, order, 1)
    pos = np.empty_like(order)
    np.put_along_axis(pos, order, np.arange(m)[None, :].repeat(n, 0), 1)
    cdf = _beta_cdf(np.where(np.isfinite(g), g, 1.0))
    upper = np.concatenate((cdf[:, 1:], np.ones((n, 1))), axis=1)
    mass = np.maximum(upper - cdf, 0.0)                    # (N, k): threshold between g_k and g_k+1
    mass = np.where(np.isfinite(g), mass, 0.0)
    # member[:, k, i]: dip i (lag order) is among the k+1 lowest.
    member = pos[:, None, :] <= np.arange(m)[None, :, None]
    member &= exists[:, None, :]
    rank = np.cumsum(member, axis=2) - member
    weight = np.where(member, np.exp(-_BOLTZMANN * rank), 0.0)
    norm = weight.sum(axis=2, keepdims=True)
    with np.errstate(divide="ignore", invalid="ignore"):
        weight = np.where(norm > 0, weight / norm, 0.0)
    prob = np.einsum("nk,nki->ni", mass, weight)
    # Thresholds below every dip: a little of their mass to the lowest dip.
    first = np.argmin(hh, axis=1)
    extra = np.where(exists.any(axis=1), _NO_DIP_WEIGHT * cdf[:, 0], 0.0)
    prob[np.arange(n), first] += extra
    prob = np.where(exists, prob, 0.0)
    t = np.where(exists, lag + tau_min, 1)
    period = np.where(exists, _parabolic_period(dn, t), np.nan)
    return period, prob


def _track(log_f0: np.ndarray, prob: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """pYIN hidden-Markov tracking, all chunks at once.

    Parameters
    ----------
    log_f0, prob : ndarray, shape (C, T, K)
        Candidate log2 F0 and probability of each of K dips per frame, for C independent
        chunks of T frames.
    lo, hi : float
        log2 of the lowest and highest F0 of the pitch grid (Hz); candidates outside
        count in the nearest end bin.

    Returns
    -------
    ndarray, shape (C, T)
        log2 F0 of the Viterbi path, NaN where the path is unvoiced.
    """
    c_count, t_count, _ = prob.shape
    n_bins = int(math.ceil((hi - lo) / _GRID_OCT)) + 1
    b = np.clip(np.round((np.nan_to_num(log_f0, nan=lo) - lo) / _GRID_OCT).astype(np.int64), 0, n_bins - 1)
    flat = (np.arange(c_count * t_count).reshape(c_count, t_count, 1) * n_bins + b).ravel()
    pv = np.bincount(flat, weights=prob.ravel(), minlength=c_count * t_count * n_bins)
    pv = pv.reshape(c_count, t_count, n_bins)
    tiny = 1e-300
    ev = np.log(pv + tiny)
    eu = np.log(np.maximum(1.0 - prob.sum(axis=2), tiny) / _UNVOICED_DIVISOR)
    w = int(round(_MAX_MOVE_OCT / _GRID_OCT))
    tri = (w + 1.0 - np.abs(np.arange(-w, w + 1))) / (w + 1.0) ** 2   # triangular, sums to 1
    lt = np.log(tri)[::-1]
    stay, switch = math.log(1.0 - _SWITCH_PROB), math.log(_SWITCH_PROB)
    from numpy.lib.stride_tricks import sliding_window_view

    v = ev[:, 0].copy()
    u = np.repeat(eu[:, 0, None], n_bins, axis=1)
    back_v = np.zeros((c_count, t_count, n_bins), dtype=np.int16)
    back_u = np.zeros((c_count, t_count, n_bins), dtype=np.int16)
    pad = np.full((c_count, w), -np.inf)
    span = 2 * w + 1
    for t in range(1, t_count):
        # best predecessor within +-w bins: window position j is source bin (b + j - w)
        sv = sliding_window_view(np.concatenate((pad, v, pad), axis=1), span, axis=1) + lt
        su = sliding_window_view(np.concatenate((pad, u, pad), axis=1), span, axis=1) + lt
        jv = np.argmax(sv, axis=2)
        ju = np.argmax(su, axis=2)
        mv = np.take_along_axis(sv, jv[..., None], 2)[..., 0]
        mu = np.take_along_axis(su, ju[..., None], 2)[..., 0]
        from_v, from_u = mv + stay, mu + switch
        keep = from_v >= from_u
        v = np.where(keep, from_v, from_u) + ev[:, t]
        back_v[:, t] = np.where(keep, jv, ju + span)       # >= span: came from the other voicing
        from_u, from_v = mu + stay, mv + switch
        keep = from_u >= from_v
        u = np.where(keep, from_u, from_v) + eu[:, t, None]
        back_u[:, t] = np.where(keep, ju, jv + span)
    rows = np.arange(c_count)
    state = np.argmax(np.concatenate((v, u), axis=1), axis=1)
    voiced = state < n_bins
    bin_ = state % n_bins
    out = np.full((c_count, t_count), np.nan)
    for t in range(t_count - 1, -1, -1):
        # the frame's F0 is its most probable dip inside the chosen pitch bin
        inside = (b[:, t] == bin_[:, None]) & (prob[:, t] > 0)
        k = np.argmax(np.where(inside, prob[:, t], -1.0), axis=1)
        ok = voiced & inside.any(axis=1)
        out[ok, t] = log_f0[rows, t, k][ok]
        if t == 0:
            break
        code = np.where(voiced, back_v[rows, t, bin_], back_u[rows, t, bin_]).astype(np.int64)
        other = code >= span
        bin_ = bin_ + np.where(other, code - span, code) - w
        voiced = voiced ^ other
    return out


def _analysis_band(chunks: np.ndarray, sample_rate_hz: float) -> tuple[np.ndarray, float]:
    """Resample chunks to about 8 kHz, band-limit them and take out mains hum.

    Returns the filtered chunks (C, m) and their sample rate ``m * fs / L`` (Hz).  The
    chunks are treated as periodic (one FFT each).
    """
    fs = sample_rate_hz
    length = chunks.shape[1]
    m = length if fs <= _F0_RATE_HZ else int(math.ceil(length * _F0_RATE_HZ / fs))
    rate = m * fs / length
    spec = rfft(chunks, axis=1)[:, : m // 2 + 1]
    df = fs / length
    f = np.arange(spec.shape[1]) * df
    gain = np.zeros(f.size)
    gain[1:] = 1.0 / np.sqrt(1.0 + (_HIGHPASS_HZ / f[1:]) ** (2 * _HIGHPASS_ORDER))
    top_pass = min(_TOP_PASS_HZ, 0.40 * rate)
    top_stop = min(_TOP_STOP_HZ, 0.475 * rate)
    edge = (f > top_pass) & (f < top_stop)
    gain[edge] *= 0.5 + 0.5 * np.cos(np.pi * (f[edge] - top_pass) / (top_stop - top_pass))
    gain[f >= top_stop] = 0.0
    for found in steady_mains_lines(spec, df):
        # The lines found: fitted (frequency refined) and subtracted, then notched.
        # (Subtracting the family's other harmonics as well, where no line stands out,
        # would take the speech's share at those frequencies out of every chunk and leave
        # a 50/60 Hz-periodic residue in the pauses.)
        fitted = [subtract_line(spec, float(peak), length, refine=True) for _, peak in found]
        for kappa in fitted:
            # Smooth (sin^2) notch for what is left of a line that is not quite steady; a
            # sharp-edged notch would smear the speech it removes over the whole chunk, as
            # a 50/60 Hz-periodic residue in the pauses.
            u = np.abs(f - kappa * df) / _NOTCH_HALF_WIDTH_HZ
            near = u < 1.0
            gain[near] *= np.sin(0.5 * np.pi * u[near]) ** 2
    spec *= gain
    out = irfft(spec, m, axis=1)
    out *= m / length
    return out, rate


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
        fs = float(validate.sample_rate_hz(sample_rate_hz))
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
        x = block_as_stored(block)
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
        ms[1:] = np.vecdot(rows, rows)  # BLAS sdot per chunk, one thread
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

        Estimator, on the stored chunks:

        1. *Analysis band.*  One FFT of each chunk gives, by keeping the bins below 4 kHz, the
           chunk resampled to about 8 kHz (F0 and the harmonics that fix it lie far below
           4 kHz), band-limited to about 70-3500 Hz: a zero-phase 4th-order Butterworth
           high-pass magnitude at 70 Hz takes away rumble and most of a 50/60 Hz hum
           fundamental (YIN follows the period of the harmonics, so a voice whose fundamental is
           missing, as on a 300-2700 Hz channel, is still measured).
        2. *Mains hum.*  The lines of :mod:`voiceband.measurement.hum`'s rule (50/60 Hz and
           harmonics up to 2 kHz, 12 dB over the median within +-20 Hz), found in the steady
           (20th-percentile) chunk spectrum by :func:`~voiceband.measurement.hum.steady_mains_lines`,
           are hum.  Each line is fitted per chunk as a steady sinusoid (frequency refined off
           the bin grid, :func:`~voiceband.measurement.hum.subtract_line`) and subtracted, then
           notched (+-10 Hz, smooth), so hum supplies no period in the pauses and does not
           dominate it in the speech.  Frames that keep less than 3 % of their power in the
           analysis band (nearly all hum, rumble or out-of-band sound) are unvoiced.
        3. *Periodicity.*  The YIN difference function and its cumulative-mean-normalised form
           (de Cheveigne & Kawahara, J. Acoust. Soc. Am. 111(4):1917-1930, 2002, eqs. 6-8) in
           32 ms windows every 10 ms, 50-500 Hz.
        4. *Candidates and voicing* by pYIN (Mauch & Dixon, "pYIN: a fundamental frequency
           estimator using probabilistic threshold distributions", ICASSP 2014): instead of one
           YIN threshold, a Beta(2, 18) distribution of thresholds; for each threshold the dips
           below it get a Boltzmann prior over their order (parameter 1, see ``_BOLTZMANN``) so
           that, as in YIN, the first dip is preferred but later ones keep some weight; summing
           gives each dip a probability of being the period, and 1 minus their sum is the
           probability that the frame is unvoiced.  Frames at pause level (7 dB or more below
           the speech threshold given to :meth:`VoiceReservoir.result`) are unvoiced.
        5. *Tracking* by pYIN's hidden Markov model, on a 1/12-octave pitch grid with voiced and
           unvoiced copies of each pitch: F0 may move at most 0.36 octave per 10 ms frame
           (librosa.pyin's default 35.92 octaves/s; from memory), voicing switches with
           probability 0.01, and the Viterbi path picks the dip of each frame.  Continuity is
           what removes most octave errors on band-limited speech, where the 2nd harmonic often
           makes the deepest dip.
        6. *Talker range.*  The tracking is run again with only the dips between 0.75 x the
           first pass's lower quartile and 1.5 x its upper quartile (the two-pass floor and
           ceiling of De Looze & Hirst 2008), which removes the remaining octave jumps.

        The 5th, 50th and 95th percentiles of the voiced-frame F0 values are reported.

        Parameters
        ----------
        min_level_dbfs : float or None, keyword-only
            Speech threshold (from :class:`voiceband.measurement.activity.ActivityResult`).  Analysis
            frames more than 7 dB below it (pause level) are unvoiced, and chunks with no
            frame above that are not counted in ``analysed_s``.  ``None``: no level gate
            (voicing then rests on periodicity alone).
        """
        fs = self.sample_rate_hz
        gate = -math.inf if min_level_dbfs is None else float(min_level_dbfs) - _PAUSE_BELOW_SPEECH_DB
        floor = self._max_level - _ELIGIBLE_BELOW_MAX_DB
        # Chunks in priority order, so the result does not depend on storage slots.
        order = sorted(range(len(self._prio)), key=self._prio.__getitem__)
        slots = [j for j in order if self._level[j] >= floor]
        if not slots:
            return VoiceResult(None, None, None, 0, 0.0)
        chunks = self._store[slots]
        band, rate = _analysis_band(chunks, fs)
        tau_max = int(math.ceil(rate / _FMIN_HZ))
        tau_min = max(2, int(math.floor(rate / _FMAX_HZ)))
        w = max(tau_max, int(round(_WINDOW_S * rate)))
        length = w + tau_max + 1
        hop = max(1, int(round(_HOP_S * rate)))
        if band.shape[1] < length:
            return VoiceResult(None, None, None, 0, 0.0)
        frames = _frames(band, length, hop)
        c_count, t_count = frames.shape[:2]
        # Level of each integration window, from the stored (full-band) samples; only
        # frames at or above the gate are analysed, the others are unvoiced.
        scale = chunks.shape[1] / band.shape[1]
        level = self._window_levels(chunks, t_count, hop * scale, w * scale)
        loud = level >= gate
        sel = np.flatnonzero(loud.ravel())
        log_f0 = np.full((c_count * t_count, _DIPS), np.nan)
        prob = np.zeros((c_count * t_count, _DIPS))
        if sel.size:
            dn, e0 = _cmnd(frames.reshape(c_count * t_count, length)[sel], w, tau_max)
            period, p = _dip_probabilities(dn, tau_min)
            # A frame whose power was nearly all hum, rumble or out-of-band sound has no
            # voice left to measure, only the remains of what was taken out.
            with np.errstate(divide="ignore", invalid="ignore"):
                kept_db = 10.0 * np.log10(e0 / w) - level.ravel()[sel]
            p *= (kept_db >= -_REMOVED_MAX_DB)[:, None]
            with np.errstate(divide="ignore", invalid="ignore"):
                log_f0[sel, : p.shape[1]] = np.log2(rate / period)
            prob[sel, : p.shape[1]] = p
        log_f0 = log_f0.reshape(c_count, t_count, -1)
        prob = prob.reshape(c_count, t_count, -1)
        path = _track(log_f0, prob, math.log2(_FMIN_HZ), math.log2(_FMAX_HZ))
        v = 2.0 ** path[np.isfinite(path)]
        if v.size >= _MIN_VOICED_FRAMES:
            # Second pass: only dips within the talker's range found by the first.
            q25, q75 = percentile(v, [25.0, 75.0])
            lo, hi = math.log2(_RANGE_FLOOR * q25), math.log2(_RANGE_CEILING * q75)
            with np.errstate(invalid="ignore"):
                inside = (log_f0 >= lo) & (log_f0 <= hi)
            path = _track(log_f0, np.where(inside, prob, 0.0), lo, hi)
            v = 2.0 ** path[np.isfinite(path)]
        analysed = int(np.count_nonzero(loud.any(axis=1))) * self.chunk_length / fs
        if v.size < _MIN_VOICED_FRAMES:
            return VoiceResult(None, None, None, int(v.size), analysed)
        p5, p50, p95 = percentile(v, [5.0, 50.0, 95.0])
        return VoiceResult(float(p50), float(p5), float(p95), int(v.size), analysed)

    @staticmethod
    def _window_levels(chunks: np.ndarray, t_count: int, hop: float, width: float) -> np.ndarray:
        """Mean square (dBFS) of ``t_count`` windows of ``width`` samples every ``hop`` samples per chunk."""
        start = np.round(np.arange(t_count) * hop).astype(np.int64)
        n = max(1, int(round(width)))
        stop = np.minimum(start + n, chunks.shape[1])
        # Sums over the pieces between consecutive window edges, then windows from those.
        edges = sorted_unique(np.concatenate((start, stop, [chunks.shape[1]])))
        edges = edges[edges < chunks.shape[1]]
        pieces = np.add.reduceat(np.square(chunks), edges, axis=1, dtype=np.float64)
        cum = np.zeros((chunks.shape[0], edges.size + 1))
        np.cumsum(pieces, axis=1, out=cum[:, 1:])
        pos = {int(e): i for i, e in enumerate(edges)}
        pos[chunks.shape[1]] = edges.size
        i0 = np.array([pos[int(v)] for v in start])
        i1 = np.array([pos[int(v)] for v in stop])
        ms = (cum[:, i1] - cum[:, i0]) / n
        with np.errstate(divide="ignore"):
            return 10.0 * np.log10(np.maximum(ms, 0.0))


def measure_voice(x, sample_rate_hz: float, *, min_level_dbfs: Optional[float] = None, **options) -> VoiceResult:
    """F0 range of a whole signal (one pass of :class:`VoiceReservoir`)."""
    acc = VoiceReservoir(sample_rate_hz, **options)
    acc.update(x)
    return acc.result(min_level_dbfs=min_level_dbfs)
