"""Signal levels: sample peak, true peak, RMS, P.56 active level, crest factor, DC offset.

Level convention (decided once for voiceband)
---------------------------------------------
Every level here is in dB re digital full scale with **0 dBFS = the RMS of a
full-scale square wave**, i.e. ``level_dbfs = 10 log10(mean(x**2))`` for
samples scaled to ±1.0.  Peaks use the same reference, ``20 log10(max|x|)``.
So a full-scale sine reads 0 dBFS peak and −3.01 dBFS RMS, a full-scale square
wave 0 dBFS for both, and a sine's crest factor is 3.01 dB.  This equals the
dBov of ITU-T P.56 / G.191 practice.

Digital silence (every sample zero) gives levels of ``-inf`` (the caller shows
``null`` with a finding), an activity factor of 0.0, a crest factor of
``None`` and a DC offset of 0.0.  NaN or infinite samples raise
:class:`voiceband.errors.SignalValueError`.

Methods
-------
True peak
    ITU-R BS.1770-4 Annex 2: 4× over-sampling with the annex's 48-tap FIR
    interpolator (4 phases × 12 taps, table :data:`BS1770_TRUE_PEAK_PHASES`),
    max |y| in dBTP.  The same factor of 4 is used at every sample rate (at
    176.4 kHz and above this over-samples more than the annex's ≥ 192 kHz asks).
    The −12.04 dB pre-attenuation of the annex exists for integer arithmetic and
    is not needed in floating point.  To stay fast, the interpolator is only run
    on short windows around local maxima of |x| lying within
    :data:`TRUE_PEAK_SEARCH_MARGIN_DB` of the running true peak (the filter
    context is carried across blocks).  A sine's inter-sample peak exceeds its
    highest sample by at most 3.01 dB (at fs/4), so only contrived sequences with
    larger inter-sample overshoot, away from a local maximum of |x|, can be
    missed.  Only interpolator windows lying wholly inside the recording are
    used (zeros beyond an abrupt edge would add a spurious overshoot), so the
    first 5 and last 6 sample intervals contribute their samples only.  The
    reported true peak is never below the sample peak.
Active speech level
    ITU-T P.56 method B: envelope from two cascaded one-pole smoothers of |x|
    (time constant T = 0.03 s), hangover H = 0.2 s, margin M = 15.9 dB.  For
    speed the envelope runs at about 750 Hz (25 steps per time constant): |x|
    is averaged over groups of ``D = round(fs / 750)`` samples (64 at 48 kHz)
    and the smoother pole is raised to the power D; the hangover window and the
    activity counts then move in steps of D samples.  Against a
    sample-by-sample reference this changes the active level by less than
    0.01 dB on speech-like signals (tested to < 0.05 dB).  Thresholds
    form a ladder of 1/16-octave amplitude steps (0.376 dB) instead of
    G.191's 6.02 dB steps; the level where ``A - C`` falls to M is interpolated
    linearly between adjacent thresholds.  No input band-pass filter is applied.

References
----------
ITU-R BS.1770-4 (2015), Annex 2, "Guidelines for accurate measurement of
"true-peak" level", interpolating filter coefficients.
ITU-T P.56 (2011), "Objective measurement of active speech level", method B;
ITU-T G.191 software tool library, ``sv56demo``.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..arrays import PIECE, PiecePeaks, piece_extremes, row_sums, sorted_unique, sum_and_squares, where_beyond
from .. import validate
from ..errors import SignalValueError
from ..units import db_amplitude, db_power

__all__ = [
    "BS1770_TRUE_PEAK_PHASES",
    "P56_TIME_CONSTANT_S",
    "P56_HANGOVER_S",
    "P56_MARGIN_DB",
    "TRUE_PEAK_SEARCH_MARGIN_DB",
    "TRUE_PEAK_OVER_READ_DB",
    "LevelsResult",
    "LevelsAccumulator",
    "measure_levels",
]

#: ITU-R BS.1770-4 Annex 2 true-peak interpolating filter, order 48, as its
#: four phases of 12 taps (row = phase, column = tap).  The prototype tap
#: sequence is ``h[4 j + q] = BS1770_TRUE_PEAK_PHASES[q, j]``; the table is
#: symmetric (phase 3 is phase 0 reversed, phase 2 is phase 1 reversed) and
#: every value is a multiple of 2**-13.  Transcribed from the annex table as
#: quoted in public implementations (e.g. the Rust crates broadcast-loudness
#: ``src/true_peak.rs`` and ebur128-stream ``src/peak.rs`` on docs.rs), which
#: agree with each other.
BS1770_TRUE_PEAK_PHASES = np.array(
    [
        [0.0017089843750, 0.0109863281250, -0.0196533203125, 0.0332031250000,
         -0.0594482421875, 0.1373291015625, 0.9721679687500, -0.1022949218750,
         0.0476074218750, -0.0266113281250, 0.0148925781250, -0.0083007812500],
        [-0.0291748046875, 0.0292968750000, -0.0517578125000, 0.0891113281250,
         -0.1665039062500, 0.4650878906250, 0.7797851562500, -0.2003173828125,
         0.1015625000000, -0.0582275390625, 0.0330810546875, -0.0189208984375],
        [-0.0189208984375, 0.0330810546875, -0.0582275390625, 0.1015625000000,
         -0.2003173828125, 0.7797851562500, 0.4650878906250, -0.1665039062500,
         0.0891113281250, -0.0517578125000, 0.0292968750000, -0.0291748046875],
        [-0.0083007812500, 0.0148925781250, -0.0266113281250, 0.0476074218750,
         -0.1022949218750, 0.9721679687500, 0.1373291015625, -0.0594482421875,
         0.0332031250000, -0.0196533203125, 0.0109863281250, 0.0017089843750],
    ]
)
BS1770_TRUE_PEAK_PHASES.setflags(write=False)

#: ITU-T P.56 method B envelope time constant (s), hangover (s) and margin
#: (dB) — ITU-T P.56 (12/2011) method B as implemented in ITU-T G.191 ``sv56demo``
#: (values read in open ports of it).
P56_TIME_CONSTANT_S = 0.03
P56_HANGOVER_S = 0.2
P56_MARGIN_DB = 15.9

#: Inter-sample peaks are searched only near samples within this many dB of
#: the running true peak.  3.01 dB is the largest excess of a sine's true peak
#: over its highest sample (a sine at fs/4 sampled 45° off its peak); the rest
#: covers the interpolator's own ripple.
TRUE_PEAK_SEARCH_MARGIN_DB = 3.5

#: Largest over-read of the BS.1770-4 Annex 2 interpolator (dB): the highest gain of any of its
#: four phases for a sine from 0 to 0.45 fs, +0.222 dB at 0.253 fs (12.1 kHz at 48 kHz); at 1 kHz
#: +0.008 dB, at DC +0.014 dB (phases 1 and 4 sum to 1.00159).  Computed for this project from
#: :data:`BS1770_TRUE_PEAK_PHASES` (a test recomputes it).  A sine of sample peak 0 dBFS can
#: therefore read up to this much above 0 dBTP without any inter-sample over.  (Its under-read,
#: the other side, is -20 log10 cos(pi f / (4 fs)) for an ideal interpolator: 0.17 dB at fs/4.)
TRUE_PEAK_OVER_READ_DB = 0.222

# Over-sampling factor and taps per phase of the BS.1770 interpolator.
_OVERSAMPLING = 4
_TAPS = 12
# An output y[4 m + q] = sum_j P[q, j] x[m - j] lies (by the 23.5-tap group
# delay of the 48-tap prototype) at time m - 5.875 + q / 4 samples, so the
# four outputs of m = p + 6 fall inside the interval (p, p + 1), at offsets
# 1/8, 3/8, 5/8 and 7/8 of a sample.  For a candidate sample p we evaluate the
# intervals (p - 1, p) and (p, p + 1), which need x[p - 6] ... x[p + 6].
_CTX_BEFORE = 6
_CTX_AFTER = 6
_WIN = _CTX_BEFORE + _CTX_AFTER + 1


def _true_peak_window_matrix() -> np.ndarray:
    """(13, 8) matrix: window x[p-6 .. p+6] -> the 8 outputs in (p-1, p) and (p, p+1)."""
    w = np.zeros((_WIN, 2 * _OVERSAMPLING))
    for half, m_off in enumerate((5, 6)):  # m = p + 5 for (p-1, p); m = p + 6 for (p, p+1)
        for q in range(_OVERSAMPLING):
            for j in range(_TAPS):
                # x[m - j] = x[p + m_off - j]; window position = m_off - j + 6
                w[m_off - j + _CTX_BEFORE, half * _OVERSAMPLING + q] = BS1770_TRUE_PEAK_PHASES[q, j]
    return w


_TP_MATRIX = _true_peak_window_matrix()

# P.56 threshold ladder: c_t = 2**(t / 16), t in [_LADDER_MIN, _LADDER_MAX].
_LADDER_STEPS_PER_OCTAVE = 16
_LADDER_MIN = -40 * _LADDER_STEPS_PER_OCTAVE  # 2**-40, about -241 dBFS
_LADDER_MAX = 2 * _LADDER_STEPS_PER_OCTAVE  # 2**2: above any envelope of full-scale audio
_LADDER_BINS = _LADDER_MAX - _LADDER_MIN + 1
_DB_PER_LADDER_STEP = 20.0 * math.log10(2.0) / _LADDER_STEPS_PER_OCTAVE
# Added to |x| group means; 2**-40 (the lowest threshold) is 1e-12.
_ENVELOPE_FLOOR = 1e-20
# Envelope values are raised to this before binning (half a step below the ladder).
_BELOW_LADDER = np.float32(2.0 ** ((_LADDER_MIN - 0.5) / _LADDER_STEPS_PER_OCTAVE))
# Envelope sample rate aimed at by the grouping of |x| (Hz).
_ENVELOPE_RATE_HZ = 750.0
# Samples per inner chunk of a block (1 MiB of float64, in the last-level cache).  Measured per
# million samples on the 2-core test machine: 4.3 ms at 2**15, 3.6 at 2**17 and 2**18, 4.1 at 2**19
# (fewer numpy calls per sample against fewer cache hits).
_CHUNK = 1 << 17
# More true-peak candidates than this in a block are thinned to local maxima at once.
_PREFILTER_CANDIDATES = 256


@functools.lru_cache(maxsize=8)
def _decay_powers(decay: float, n: int) -> np.ndarray:
    """``exp(-decay * k)`` for ``k = 1 ... n`` (read-only; the same few tables serve every block)."""
    gk = np.exp(-decay * np.arange(1, n + 1, dtype=np.float64))
    gk.setflags(write=False)
    return gk


def _one_pole(u: np.ndarray, g: float, y_prev: float) -> np.ndarray:
    """First-order smoother ``y[n] = g·y[n-1] + (1-g)·u[n]`` starting from ``y_prev``, exactly.

    Vectorised with the geometric identity ``y[k] = g^k·(y_prev + (1-g)·Σ_{j<=k} u[j]·g^-j)``, in
    chunks short enough that ``g^-k`` stays far from overflow; the rounding error stays of the order
    of ``eps·k`` relative to the output because each partial sum holds only past terms. Numpy only,
    so the analyze path does not pay for importing ``scipy.signal``.
    """
    u = np.asarray(u, dtype=np.float64)
    out = np.empty_like(u)
    if u.size == 0:
        return out
    decay = -math.log(g) if g > 0 else 700.0
    chunk = max(1, int(600.0 / max(decay, 1e-12)))
    powers = _decay_powers(decay, min(chunk, u.size))
    for start in range(0, u.size, chunk):
        seg = u[start:start + chunk]
        gk = powers[:seg.size]
        acc = np.cumsum(seg / gk)
        acc *= 1.0 - g
        acc += y_prev
        acc *= gk
        out[start:start + seg.size] = acc
        y_prev = float(acc[-1])
    return out


def _sliding_max(a: np.ndarray, width: int) -> np.ndarray:
    """``out[j] = max(a[j : j + width])`` for ``j = 0 … len(a) - width`` (van Herk / Gil–Werman, numpy only)."""
    n = a.size
    m = n - width + 1
    if m <= 0:
        return np.empty(0, dtype=a.dtype)
    if width == 1:
        return a.copy()
    nb = -(-n // width)
    pad = np.full(nb * width, -np.inf, dtype=a.dtype)
    pad[:n] = a
    blocks = pad.reshape(nb, width)
    prefix = np.maximum.accumulate(blocks, axis=1).ravel()
    suffix = np.maximum.accumulate(blocks[:, ::-1], axis=1)[:, ::-1].ravel()
    return np.maximum(suffix[:m], prefix[width - 1:width - 1 + m])


@dataclass(frozen=True)
class LevelsResult:
    """Levels of one recording.

    Attributes
    ----------
    sample_rate_hz : float
    sample_count : int
    duration_s : float
    peak_dbfs : float
        Sample peak ``20 log10(max|x|)``; ``-inf`` for digital silence.
    peak_time_s : float or None
        Time of the first sample reaching the sample peak; None for silence.
    true_peak_dbtp : float
        BS.1770-4 Annex 2 true peak (4× over-sampled), never below
        ``peak_dbfs``; ``-inf`` for silence.
    true_peak_time_s : float or None
        Time of the true peak (to 1/8 sample); None for silence.
    rms_dbfs : float
        ``10 log10(mean(x**2))`` over the whole recording (DC included).
    active_level_dbfs : float or None
        P.56 method B active speech level; ``-inf`` for silence; None if the
        method finds no threshold (not measurable).
    activity_factor : float or None
        P.56 activity factor, ``mean(x**2) / 10**(active_level_dbfs / 10)``,
        in 0 … 1; 0.0 for silence; None when the active level is None.
    active_threshold_dbfs : float or None
        The P.56 threshold C at the solution (active level minus 15.9 dB).
    crest_factor_db : float or None
        ``true_peak_dbtp - active_level_dbfs``: true peak re active speech
        level, both on the full-scale reference above (a steady sine: 3.01 dB).
        None when either is not finite.
    dc_offset : float
        Mean of the samples, as a fraction of full scale (+1.0 = full scale).
    envelope_decimation : int
        Samples per P.56 envelope step (D above).
    true_peak_oversampling : int
        Over-sampling factor of the true-peak interpolator (4).
    """

    sample_rate_hz: float
    sample_count: int
    duration_s: float
    peak_dbfs: float
    peak_time_s: Optional[float]
    true_peak_dbtp: float
    true_peak_time_s: Optional[float]
    rms_dbfs: float
    active_level_dbfs: Optional[float]
    activity_factor: Optional[float]
    active_threshold_dbfs: Optional[float]
    crest_factor_db: Optional[float]
    dc_offset: float
    envelope_decimation: int
    true_peak_oversampling: int = _OVERSAMPLING


class LevelsAccumulator:
    """Streaming level meter (see the module docstring for the methods).

    Parameters
    ----------
    sample_rate_hz : float
        Sample rate of the blocks, Hz.

    Notes
    -----
    Feed consecutive 1-D blocks of any length with :meth:`update`; call
    :meth:`result` at any time (it does not change the accumulator).  The
    result does not depend on how the signal is cut into blocks, and memory
    does not grow with the signal length.
    """

    def __init__(self, sample_rate_hz: float) -> None:
        fs = validate.sample_rate_hz(sample_rate_hz)
        self._fs = fs
        self._n = 0
        self._sum = 0.0
        self._sumsq = 0.0
        self._peak = 0.0
        self._peak_index = -1
        # True peak: running maximum, its position (fractional samples), the
        # last 12 samples seen (zeros before the recording) and the candidate
        # samples still waiting for their 6-sample look-ahead.
        self._tp = 0.0
        self._tp_pos = -1.0
        self._tail = np.zeros(_CTX_BEFORE + _CTX_AFTER)
        self._pending = np.zeros(0, dtype=np.int64)
        # P.56 envelope at the decimated rate.
        self._dec = max(1, int(round(fs / _ENVELOPE_RATE_HZ)))
        g = math.exp(-1.0 / (P56_TIME_CONSTANT_S * fs))
        self._g_dec = g ** self._dec
        self._env_zi = np.zeros(2)  # last outputs of the two cascaded one-pole smoothers
        self._grp_sum = 0.0  # |x| sum of the incomplete group
        self._grp_len = 0
        self._hang = max(0, int(round(P56_HANGOVER_S * fs / self._dec)))  # hangover, envelope steps
        self._env_tail = np.zeros(0, dtype=np.float32)  # last `_hang` envelope values
        self._hist = np.zeros(_LADDER_BINS, dtype=np.int64)  # samples per ladder bin
        # Work buffers, sized for the block length (no state).
        # Peak pieces of whole envelope groups (about arrays.PIECE samples), so a chunk is whole
        # pieces and whole groups at once.
        self._piece = self._dec * max(1, round(PIECE / self._dec))
        self._chunk = self._piece * max(1, _CHUNK // self._piece)
        self._abs_buf = np.empty(self._chunk)

    # ------------------------------------------------------------------ update
    def update(self, block, *, copy_to: Optional[np.ndarray] = None) -> Optional[PiecePeaks]:
        """Add the next block of samples (1-D, full scale = ±1.0).

        Returns the block's :class:`voiceband.arrays.PiecePeaks`, found on the way (the
        orchestrator hands them to the clipping detector); ``copy_to`` (an array of the block's
        length, e.g. float32) receives a copy of the block while each chunk is in cache.

        Raises
        ------
        SignalValueError
            If the block is not 1-D real numbers or holds NaN or infinite
            values; the accumulator is then left as it was.
        """
        x = validate.block(block)
        n = x.size
        if n == 0:
            return None
        d = self._dec
        g0 = self._n
        margin = 10.0 ** (-TRUE_PEAK_SEARCH_MARGIN_DB / 20.0)
        thr = max(self._tp, self._peak) * margin
        # The first `head` samples complete the envelope group left open by the
        # previous block; after them, chunk boundaries stay aligned to groups.
        head = min((d - self._grp_len) % d, n)
        piece = self._piece
        maxima, minima = [], []
        sums = []
        sumsq = 0.0
        total = 0.0
        edges = [0, head] if head else [0]
        edges.extend(range(head + self._chunk, n, self._chunk))
        edges.append(n)
        # One chunk at a time, so every pass after the first reads cache instead of memory.
        for lo, hi in zip(edges[:-1], edges[1:]):
            if hi <= lo:
                continue
            xc = x[lo:hi]
            m = hi - lo
            # The peak pieces (the head is one piece of its own), and the copy, while in cache.
            maxima.append(piece_extremes(xc, piece=piece))
            minima.append(piece_extremes(xc, lowest=True, piece=piece))
            if copy_to is not None:
                copy_to[lo:hi] = xc
            # BLAS in calls small enough to stay on this thread (see voiceband.arrays)
            t, q = sum_and_squares(xc)
            total += t
            sumsq += q
            ac = np.abs(xc, out=self._abs_buf[:m])
            if lo == 0 and head:
                head_sum = float(ac.sum())
                continue
            full = m - m % d
            if full:
                sums.append(row_sums(ac[:full].reshape(-1, d)))
            if full < m:
                rest_sum, rest_len = float(ac[full:].sum()), m - full
        if not math.isfinite(sumsq):
            where = np.flatnonzero(~np.isfinite(x))
            if where.size == 0:
                raise SignalValueError("The samples are too large to measure: their squares overflow.")
            bad = int(where[0]) + g0
            raise SignalValueError(
                f"The signal holds a NaN or infinite sample (first at sample {bad}, "
                f"{bad / self._fs:.3f} s), so its levels cannot be measured."
            )

        # P.56 envelope.
        steps = []
        if head:
            self._grp_sum += head_sum
            self._grp_len += head
            if self._grp_len == d:
                steps.append(np.array([self._grp_sum]))
                self._grp_sum, self._grp_len = 0.0, 0
        steps.extend(sums)
        if (n - head) % d:
            self._grp_sum, self._grp_len = rest_sum, rest_len
        if steps:
            u = np.concatenate(steps) if len(steps) > 1 else steps[0]
            u *= 1.0 / d
            # A floor far below the threshold ladder keeps the smoothers out of
            # subnormal numbers (very slow) after digital silence.
            u += _ENVELOPE_FLOOR
            self._hist += self._envelope_steps(u, d, commit=True)

        # Sample peak, then true peak around the candidates: the samples within the search
        # margin of the highest peak so far, from only the pieces that reach it.
        peaks = PiecePeaks(np.concatenate(maxima), np.concatenate(minima), piece, head)
        pm = np.maximum(peaks.maxima, -peaks.minima)  # maxima of |x| per piece
        best_piece = int(np.argmax(pm))
        best = float(pm[best_piece])
        if best > self._peak:
            self._peak = best
            at, length = peaks.bounds(best_piece)
            self._peak_index = g0 + at + int(np.argmax(np.abs(x[at:at + length])))
        new = np.zeros(0, dtype=np.int64)
        if best >= thr and best > 0.0:
            thr = max(thr, best * margin)
            new = where_beyond(x, thr, pm, magnitude=True, piece=piece, offset=head)
            if new.size > _PREFILTER_CANDIDATES:
                # Keep local maxima of |x| (block-edge samples are checked later).  Only a saving
                # of memory: the interpolation applies the same test to every candidate, so a
                # few candidates are passed on as they are.
                ci = new[(new > 0) & (new < n - 1)]
                v = np.abs(x[ci])
                ci = ci[(v >= np.abs(x[ci - 1])) & (v >= np.abs(x[ci + 1]))]
                new = np.concatenate((new[:1][new[:1] == 0], ci, new[-1:][new[-1:] == n - 1]))
        self._true_peak_candidates(x, new, g0, thr)
        self._sumsq += sumsq
        self._sum += total
        self._n += n
        self._tail = np.concatenate((self._tail, x[-(_CTX_BEFORE + _CTX_AFTER):]))[-(_CTX_BEFORE + _CTX_AFTER):]
        return peaks

    def _true_peak_candidates(self, x: np.ndarray, new: np.ndarray, g0: int, thr: float) -> None:
        """Interpolate around candidate samples whose look-ahead is complete.

        ``new`` holds local indices into ``x`` of samples with |x| at or above
        a threshold (at most ``thr``); ``self._pending`` global indices left
        from the previous block.
        """
        n = x.size
        last = n - 1 - _CTX_AFTER  # last local index whose 6-sample look-ahead is in x
        pend = self._pending - g0  # local indices, negative or small
        if new.size:
            new = new[np.abs(x[new]) >= thr]
        # Body: context entirely inside x.
        body = new[(new >= _CTX_BEFORE) & (new <= last)]
        if body.size:
            self._interpolate(x, body, g0, None)
        # Head: pending candidates and new ones near the start of x.
        head = np.concatenate((pend, new[new < _CTX_BEFORE]))
        head = head[head <= last]
        if head.size:
            ext = np.concatenate((self._tail, x[: 2 * _CTX_BEFORE + 2]))
            off = self._tail.size
            self._interpolate(ext, head + off, g0 - off, None)
        # Candidates without look-ahead wait for the next block.
        later = np.concatenate((pend, new))
        self._pending = sorted_unique(later[later > last]) + g0

    def _interpolate(self, buf: np.ndarray, pos: np.ndarray, start: int, n_total: Optional[int]) -> None:
        """BS.1770 outputs in the two intervals next to each ``buf[pos]`` (global ``start + pos``).

        ``buf`` holds 6 samples either side of every position.  ``n_total``,
        known only at the end, marks the last sample of the recording.
        """
        offsets = np.arange(-_CTX_BEFORE, _CTX_AFTER + 1)
        for k0 in range(0, pos.size, 1 << 15):
            p = pos[k0:k0 + (1 << 15)]
            win = buf[p[:, None] + offsets]
            aw = np.abs(win[:, _CTX_BEFORE - 1:_CTX_BEFORE + 2])
            keep = (aw[:, 1] >= aw[:, 0]) & (aw[:, 1] >= aw[:, 2])  # local maxima of |x|
            if not keep.all():
                p, win = p[keep], win[keep]
                if p.size == 0:
                    continue
            y = np.abs(np.einsum("ij,jk->ik", win, _TP_MATRIX))
            g = p + start  # global index of each candidate
            # Only windows lying wholly inside the recording count: zeros
            # beyond its edges would make a step and a spurious overshoot.
            y[g < _CTX_BEFORE, :_OVERSAMPLING] = 0.0
            y[g < _CTX_BEFORE - 1, _OVERSAMPLING:] = 0.0
            if n_total is not None:
                y[g > n_total - _CTX_AFTER, :_OVERSAMPLING] = 0.0
                y[g > n_total - 1 - _CTX_AFTER, _OVERSAMPLING:] = 0.0
            flat = int(np.argmax(y))
            r, col = divmod(flat, y.shape[1])
            v = float(y[r, col])
            if v > self._tp:
                self._tp = v
                # column col: interval (p-1, p) for col < 4, (p, p+1) otherwise
                self._tp_pos = float(g[r]) - 1.0 + 0.125 + 0.25 * col

    def _envelope_steps(self, u: np.ndarray, weight: int, *, commit: bool) -> np.ndarray:
        """Advance the smoothers over group means ``u``; count samples per ladder bin with hangover.

        Returns the histogram increment; the smoother and hangover state are
        stored only with ``commit=True``.
        """
        gd = self._g_dec if weight == self._dec else math.exp(-weight / (P56_TIME_CONSTANT_S * self._fs))
        y1 = _one_pole(u, gd, float(self._env_zi[0]))
        q64 = _one_pole(y1, gd, float(self._env_zi[1]))
        zf = np.array([y1[-1], q64[-1]]) if u.size else self._env_zi
        q = q64.astype(np.float32)
        tail = self._env_tail
        if self._hang:
            ext = np.concatenate((tail, q))
            # trailing window: mx[i] = max(q[i - hang] ... q[i]); before the first sample the envelope is 0
            lead = np.zeros(max(0, self._hang - tail.size), dtype=np.float32)
            mx = _sliding_max(np.concatenate((lead, ext)), self._hang + 1)
            new_tail = ext[-self._hang:]
        else:
            mx = q
            new_tail = tail
        # ladder bin of each value: floor(16 log2 mx) - _LADDER_MIN + 1, with
        # everything below the ladder in bin 0 (dropped) and above it in the top bin
        np.maximum(mx, _BELOW_LADDER, out=mx)
        lg = np.log2(mx)
        lg *= _LADDER_STEPS_PER_OCTAVE
        lg += 1 - _LADDER_MIN
        counts = np.bincount(lg.astype(np.intp), minlength=_LADDER_BINS + 1)
        if counts.size > _LADDER_BINS + 1:
            counts[_LADDER_BINS] += counts[_LADDER_BINS + 1:].sum()
            counts = counts[:_LADDER_BINS + 1]
        counts = counts[1:] * weight
        if commit:
            self._env_zi = zf
            self._env_tail = new_tail
        return counts

    # ------------------------------------------------------------------ result
    def result(self) -> LevelsResult:
        """The levels of everything fed so far (the accumulator is not changed).

        Raises
        ------
        SignalValueError
            If no samples have been given.
        """
        n = self._n
        if n == 0:
            raise SignalValueError("No samples were given, so levels cannot be measured.")
        fs = self._fs

        # True peak: candidates still waiting for look-ahead see zeros after the end.
        saved = (self._tp, self._tp_pos)
        if self._pending.size:
            ext = np.concatenate((self._tail, np.zeros(_CTX_AFTER + 1)))
            start = n - self._tail.size
            self._interpolate(ext, self._pending - start, start, n)
        tp, tp_pos = self._tp, self._tp_pos
        self._tp, self._tp_pos = saved
        if self._peak > tp:
            tp, tp_pos = self._peak, float(self._peak_index)

        # P.56: the incomplete last envelope group, counted with its own weight.
        hist = self._hist
        if self._grp_len:
            u_last = np.array([self._grp_sum / self._grp_len + _ENVELOPE_FLOOR])
            hist = hist + self._envelope_steps(u_last, self._grp_len, commit=False)

        ms = self._sumsq / n
        tp_dbtp = db_amplitude(tp)
        if self._sumsq == 0.0:
            active, activity, thr_db = -math.inf, 0.0, None
        else:
            active, thr_db = _p56_solve(hist, self._sumsq)
            activity = None if active is None else min(1.0, ms / 10.0 ** (active / 10.0))
        crest = None
        if active is not None and math.isfinite(active) and math.isfinite(tp_dbtp):
            crest = tp_dbtp - active
        silent = self._peak == 0.0
        return LevelsResult(
            sample_rate_hz=fs,
            sample_count=n,
            duration_s=n / fs,
            peak_dbfs=db_amplitude(self._peak),
            peak_time_s=None if silent else self._peak_index / fs,
            true_peak_dbtp=tp_dbtp,
            true_peak_time_s=None if silent else tp_pos / fs,
            rms_dbfs=db_power(ms),
            active_level_dbfs=active,
            activity_factor=activity,
            active_threshold_dbfs=thr_db,
            crest_factor_db=crest,
            dc_offset=self._sum / n,
            envelope_decimation=self._dec,
        )


def _p56_solve(hist: np.ndarray, sumsq: float) -> tuple[Optional[float], Optional[float]]:
    """Active level and threshold (dB) from counts of the hangover envelope per ladder bin.

    ``hist[k]`` counts samples whose hangover envelope lies in
    ``[c_t, c_(t+1))`` with ``t = k + _LADDER_MIN``, so the active count at
    threshold ``c_t`` is the sum of ``hist[k:]`` (P.56 method B, step 4).
    """
    active = np.cumsum(hist[::-1])[::-1].astype(np.float64)
    valid = active > 0
    if not valid.any():
        return None, None
    t = np.arange(_LADDER_BINS) + _LADDER_MIN
    c_db = t * _DB_PER_LADDER_STEP
    with np.errstate(divide="ignore"):
        a_db = 10.0 * np.log10(sumsq / np.where(valid, active, np.nan))
    diff = a_db - c_db - P56_MARGIN_DB
    hit = np.flatnonzero(valid & (diff <= 0.0))
    if hit.size == 0:
        return None, None
    k = int(hit[0])
    if k == 0 or not valid[k - 1]:
        return float(a_db[k]), float(c_db[k])
    d0, d1 = diff[k - 1], diff[k]
    f = d0 / (d0 - d1)
    a = a_db[k - 1] + f * (a_db[k] - a_db[k - 1])
    c = c_db[k - 1] + f * (c_db[k] - c_db[k - 1])
    return float(a), float(c)


def measure_levels(x, sample_rate_hz: float) -> LevelsResult:
    """Levels of a whole signal in one call.

    Parameters
    ----------
    x : array_like, shape (n,)
        Samples, full scale = ±1.0.
    sample_rate_hz : float
        Sample rate, Hz.

    Returns
    -------
    LevelsResult

    Raises
    ------
    SignalValueError
        If ``x`` is empty, not 1-D, or holds NaN or infinite values.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(48000) / 48000
    >>> r = measure_levels(np.sin(2 * np.pi * 997 * t), 48000)
    >>> round(r.peak_dbfs, 2), round(r.rms_dbfs, 2)
    (0.0, -3.01)
    """
    acc = LevelsAccumulator(sample_rate_hz)
    acc.update(x)
    return acc.result()
