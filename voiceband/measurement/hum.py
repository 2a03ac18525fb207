"""Mains hum: one line model, used by the noise measurement and by the F0 tracker.

The rule (what a mains line is)
-------------------------------
* Fundamentals: 50 Hz and 60 Hz, the two public-supply frequencies in use (the 50 Hz and
  60 Hz systems of IEC 60038:2009; from memory), each within ±0.5 Hz (EN 50160:2010 clause 4.2.1 allows
  50 Hz ± 1 % for 99.5 % of a year on interconnected systems; from memory).  The
  harmonic ``k`` is looked for within ``k * (f_mains ± 0.5 Hz)``.
* Harmonics: ``k = 1, 2, ...`` up to 2 kHz (:data:`HUM_TOP_HZ`), as far as the spectrum
  at hand reaches with its ±20 Hz median neighbourhood (:func:`harmonic_numbers`).
* A line is a bin at least 12 dB above the median of the spectrum within ±20 Hz of it
  (:func:`stands_out`; this module's threshold, common practice for a line "standing out
  of the noise").

Both users apply that rule to a spectrum in which hum is already the steady part:
:class:`HumAccumulator` (the reported hum) to the mean spectrum of the quietest analysis
windows, where it also asks a line to be narrow (10 dB over its shoulders), and the F0
tracker (:mod:`voiceband.measurement.voice`) to the 20th percentile of its chunk
spectra (:func:`steady_mains_lines`), where it also asks a line to carry a share of the
power that could matter.  The F0 tracker then fits each line as a steady sinusoid off the
bin grid and subtracts it (:func:`subtract_line`, :func:`line_model`).

Examples
--------
>>> harmonic_numbers(50.0, 600.0)
[1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11]
>>> stands_out(20.0, 1.0), stands_out(10.0, 1.0)
(True, False)
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np
from numpy.lib.stride_tricks import as_strided

from ..arrays import median, percentile, running_median, sorted_unique
from .. import validate
from ..errors import SignalValueError
from ..fourier import rfft
from .activity import LEVEL_BIN_COUNT, LEVEL_BIN_DB, LEVEL_MIN_DBFS, level_bins

__all__ = [
    "MAINS_HZ",
    "MAINS_TOLERANCE_HZ",
    "HUM_TOP_HZ",
    "LINE_OVER_MEDIAN_DB",
    "MEDIAN_HALF_WIDTH_HZ",
    "block_as_stored",
    "harmonic_numbers",
    "stands_out",
    "HumResult",
    "HumAccumulator",
    "detect_hum",
    "line_model",
    "subtract_line",
    "steady_mains_lines",
]

#: Nominal mains frequencies (Hz): 50 Hz and 60 Hz supply systems (IEC 60038:2009; from memory).
MAINS_HZ = (50.0, 60.0)
#: Tolerance of the fundamental around each nominal frequency (Hz, ±): EN 50160:2010
#: clause 4.2.1, 50 Hz ± 1 % (from memory); real interconnected grids stay far inside it.
MAINS_TOLERANCE_HZ = 0.5
#: Highest harmonic frequency looked at (Hz).
HUM_TOP_HZ = 2000.0
#: A line stands at least this far above the median spectrum within ±MEDIAN_HALF_WIDTH_HZ (dB).
LINE_OVER_MEDIAN_DB = 12.0
MEDIAN_HALF_WIDTH_HZ = 20.0


def block_as_stored(block) -> np.ndarray:
    """A 1-D block for accumulators that keep float32 samples: float32 as it is, else float64.

    The hum detector and the F0 reservoir store and filter float32; the orchestrator hands them
    its float32 copy of each block, which needs no round trip through float64 (the float32 values
    are the same either way).  Anything else goes through :func:`voiceband.validate.block`.
    """
    x = np.asarray(block)
    if x.ndim == 1 and x.dtype == np.float32:
        return x
    return validate.block(block)


def harmonic_numbers(mains_hz: float, top_hz: float) -> list[int]:
    """Harmonic numbers ``k`` of a mains fundamental that the rule looks at.

    ``k * mains_hz <= HUM_TOP_HZ``, and the harmonic's search window
    ``k * (mains_hz + MAINS_TOLERANCE_HZ)`` plus the median neighbourhood
    (``MEDIAN_HALF_WIDTH_HZ``) lies below ``top_hz``, the top of the spectrum at hand.

    >>> harmonic_numbers(60.0, 4000.0)[-1]
    33
    """
    return [k for k in range(1, int(HUM_TOP_HZ // mains_hz) + 1)
            if k * (mains_hz + MAINS_TOLERANCE_HZ) + MEDIAN_HALF_WIDTH_HZ < top_hz]


def stands_out(peak_power, median_power):
    """Whether a peak stands at least :data:`LINE_OVER_MEDIAN_DB` above the local median power.

    Works on scalars and arrays (powers, not dB).
    """
    return peak_power >= median_power * 10.0 ** (LINE_OVER_MEDIAN_DB / 10.0)


#: Target rate of the low-rate hum path (Hz) and taps per polyphase branch.
_HUM_RATE_HZ = 2000.0
_HUM_TAPS_PER_PHASE = 10
#: Minimum durations of the two window lengths (s): long for narrow lines, short to fit in pauses.
_HUM_WINDOWS_S = (4.0, 2.0)
#: The F0 tracker's steadiness test: percentile of the chunk spectra taken as the steady
#: spectrum, fewest chunks for it, and the smallest share of the median chunk power (-60 dB).
_STEADY_PERCENTILE = 20.0
_STEADY_MIN_CHUNKS = 4
_MIN_SHARE = 1e-6
#: The report's narrowness test: a line's peak >= 10 dB over its shoulders (beside the Hann main lobe).
_LINE_OVER_SHOULDER_DB = 10.0
#: Windows averaged for detection: those within 3 dB (bins) of the quietest non-silent one.
_QUIET_SPREAD_BINS = 3
#: Lines whose summed power lies more than this far below the power of the windows they were found in
#: are not hum but the rounding noise of the float32 path (single precision resolves about 2**-24,
#: -144 dB; a clean float sine otherwise shows "lines" near -175 dB).  Real hum that far down is
#: below any recording's dynamic range (24-bit PCM spans about 144 dB; computed).
_ROUNDING_FLOOR_DB = 120.0


@dataclass(frozen=True)
class HumResult:
    """Mains hum found in a recording.

    Attributes
    ----------
    fundamental_hz : float
        Refined mains fundamental (within 49.5-50.5 or 59.5-60.5 Hz), even when only its
        harmonics are present.
    level_dbfs : float
        Total power of the detected lines (dBFS, full-scale square wave = 0 dBFS).
    level_db_re_speech : float or None
        ``level_dbfs - reference_level_dbfs``; ``None`` without a reference level.
    reference_level_dbfs : float or None
        The speech level the hum was referred to (normally the P.56 active level).
    harmonic_numbers : tuple of int
        Which multiples of the fundamental were detected (1 = the fundamental).
    harmonics_hz : tuple of float
        Their frequencies ``k * fundamental_hz``.
    harmonic_levels_dbfs : tuple of float
        Power of each line (dBFS).
    window_s : float
        Length of the analysis windows the detection used (s).
    windows_used : int
        Number of analysis windows averaged (the quietest ones).
    """

    fundamental_hz: float
    level_dbfs: float
    level_db_re_speech: Optional[float]
    reference_level_dbfs: Optional[float]
    harmonic_numbers: tuple
    harmonics_hz: tuple
    harmonic_levels_dbfs: tuple
    window_s: float
    windows_used: int


class _HumWindows:
    """Hann-window power spectra of the low-rate signal, histogrammed by window level."""

    def __init__(self, rate_hz: float, n: int, nbins: int, gain2: np.ndarray):
        self.rate_hz = rate_hz
        self.n = n
        self.hop = n // 2
        self.df = rate_hz / n
        self.nbins = nbins
        self.win = (0.5 - 0.5 * np.cos(2.0 * np.pi * np.arange(n) / n)).astype(np.float32)
        self.gain2 = gain2
        self.hist = np.zeros((LEVEL_BIN_COUNT, nbins))
        self.counts = np.zeros(LEVEL_BIN_COUNT, dtype=np.int64)

    def spectra(self, y: np.ndarray):
        """Level bins and power spectra of the windows lying wholly inside ``y``."""
        n, hop = self.n, self.hop
        nw = (y.size - n) // hop + 1 if y.size >= n else 0
        if nw == 0:
            return None
        frames = np.lib.stride_tricks.as_strided(
            y, shape=(nw, n), strides=(hop * y.itemsize, y.itemsize), writeable=False
        )
        ms = np.vecdot(frames, frames).astype(np.float64) / n  # BLAS sdot per window, one thread
        pw = np.abs(rfft(frames * self.win, axis=1)[:, : self.nbins]).astype(np.float64)
        pw *= pw
        return level_bins(ms), pw

    def add(self, y: np.ndarray, hist: np.ndarray, counts: np.ndarray) -> None:
        got = self.spectra(y)
        if got is None:
            return
        bins, pw = got
        for b in sorted_unique(bins).tolist():
            sel = bins == b
            hist[b] += pw[sel].sum(axis=0)
            counts[b] += int(np.count_nonzero(sel))

    def quiet_psd(self, hist: np.ndarray, counts: np.ndarray) -> tuple[Optional[np.ndarray], int, float]:
        """Mean one-sided PSD of the quietest windows in ``hist``/``counts``, corrected for the decimation
        filter; how many windows; the lower edge of their level (dBFS)."""
        occupied = np.flatnonzero(counts[1:]) + 1  # bin 0 is digital silence: no information
        if occupied.size == 0:
            return None, 0, -math.inf
        b_min = int(occupied[0])
        last = min(b_min + _QUIET_SPREAD_BINS, LEVEL_BIN_COUNT - 1)
        used = int(counts[b_min : last + 1].sum())
        mean_pw = hist[b_min : last + 1].sum(axis=0) / used
        scale = 2.0 / (self.rate_hz * float(np.sum(self.win.astype(np.float64) ** 2)))
        psd = mean_pw * scale / np.maximum(self.gain2, 1e-12)
        return psd, used, LEVEL_MIN_DBFS + b_min * LEVEL_BIN_DB

    def comb(self, psd: np.ndarray, mains: float):
        """Fit a comb k * f0 near ``mains``; return (f0, harmonics, powers, min ratio) or None."""
        df = self.df
        nb = psd.size
        f_top = (nb - 1) * df
        ks = harmonic_numbers(mains, f_top)
        if not ks:
            return None
        freqs = np.arange(nb) * df
        bg = np.empty(len(ks))
        for i, k in enumerate(ks):
            fk = k * mains
            excl = k * MAINS_TOLERANCE_HZ + 4.0 * df
            near = (np.abs(freqs - fk) <= MEDIAN_HALF_WIDTH_HZ) & (np.abs(freqs - fk) > excl)
            bg[i] = float(median(psd[near]))
        tiny = float(np.max(psd)) * 1e-15 + 1e-300
        bg = np.maximum(bg, tiny)
        # Coarse f0: maximise the summed log ratio of the comb to the local medians.
        grid = np.arange(mains - MAINS_TOLERANCE_HZ, mains + MAINS_TOLERANCE_HZ + 1e-9, df / 8.0)
        at = np.interp(np.outer(grid, np.array(ks, dtype=float)), freqs, psd)
        score = np.sum(np.log(np.maximum(at / bg, 1.0)), axis=1)
        if not np.any(score > 0):
            return None
        f0 = float(grid[int(np.argmax(score))])
        sh_hi = max(5, int(math.ceil(2.0 / df)))
        present, powers, f_est, ratios = [], [], [], []
        for k, b in zip(ks, bg):
            c = int(round(k * f0 / df))
            lo, hi = max(c - 1, 1), min(c + 2, nb - 1)
            p_i = lo + int(np.argmax(psd[lo:hi]))
            peak = float(psd[p_i])
            sh = np.r_[psd[max(p_i - sh_hi, 0) : max(p_i - 2, 0)], psd[p_i + 3 : p_i + sh_hi + 1]]
            shoulder = float(np.mean(sh)) if sh.size else 0.0
            if not stands_out(peak, b) or peak < shoulder * 10 ** (_LINE_OVER_SHOULDER_DB / 10):
                continue
            lobe = psd[max(p_i - 3, 0) : p_i + 4]
            p = float(np.sum(np.maximum(lobe - b, 0.0)) * df)
            if p <= 0 or p_i + 1 >= nb:
                continue
            # Peak frequency by parabolic interpolation of the log spectrum (common practice).
            a, bb, cc = np.log(np.maximum(psd[p_i - 1 : p_i + 2], tiny))
            den = a - 2 * bb + cc
            delta = 0.5 * (a - cc) / den if den < 0 else 0.0
            present.append(k)
            powers.append(p)
            f_est.append((p_i + float(np.clip(delta, -0.5, 0.5))) * df / k)
            ratios.append(peak / b)
        if not present:
            return None
        f0 = float(np.average(f_est, weights=powers))
        f0 = min(max(f0, mains - MAINS_TOLERANCE_HZ), mains + MAINS_TOLERANCE_HZ)
        return f0, present, powers, min(ratios)


class HumAccumulator:
    """Streamed mains-hum detector (50/60 Hz comb with harmonics).

    Method (this module's, built on common practice): the signal is low-pass filtered and
    decimated to about 2 kHz (a linear-phase Kaiser-window FIR, beta = 7, 10 taps per
    decimation phase, cut-off at the new Nyquist frequency).  The low-rate signal is cut
    into Hann windows of two lengths -- at least 4 s (about 0.24 Hz resolution: narrow
    lines stand out more under speech) and half that (0.5 Hz: more likely to fit inside a
    pause) -- with 50 % overlap.  Each window's power spectrum is added to a histogram
    keyed by the window's level (1 dB bins), so that at the end the quietest windows --
    those within 3 dB of the quietest window that is not digital silence: pauses, where
    there are any -- are averaged.

    In each averaged spectrum (corrected for the decimation filter's gain) a comb
    ``k * f0``, ``k = 1 ... 8`` (up to about 500 Hz), is fitted for ``f0`` in
    49.5-50.5 Hz and 59.5-60.5 Hz by maximising the summed log ratio of the spectrum at
    the harmonics to the local median spectrum (+/-20 Hz, excluding the search range
    around the line).  A harmonic counts as present if its peak is at least 12 dB above
    that median and 10 dB above its own shoulders (up to 2 Hz beside the Hann main lobe;
    mains lines are narrow, speech harmonics are not).  Line power is the spectrum
    integrated over the main lobe minus the median background; the fundamental is refined
    from the present lines' interpolated peaks.  The comb and window length with the most
    present harmonics (then the largest weakest-line ratio) win.

    Cost: the stream is processed in segments of four long windows (about 16 s); all of
    the first 32 segments (about 9 min) are analysed, then every 2nd of the next 64, every
    4th of the next 128, and so on (hum is steady, and the quietest stretches are what
    count).  Windows do not straddle segments.  The partial last segment is analysed at
    :meth:`result`.

    Hum under speech is found only when it is strong relative to the speech in the same
    bins; weak hum inside the speech band (e.g. 100/150 Hz ripple 50 dB below the speech)
    is found only if the recording has pauses of at least about 2 s.

    Parameters
    ----------
    sample_rate_hz : float
        8000–192000 Hz (:func:`voiceband.validate.sample_rate_hz`).
    """

    #: Segments analysed at full density before thinning starts.
    FULL_DENSITY_SEGMENTS = 32

    def __init__(self, sample_rate_hz: float):
        fs = validate.sample_rate_hz(sample_rate_hz)
        self.sample_rate_hz = fs
        k = max(1, int(fs // _HUM_RATE_HZ))
        self.decimation = k
        self.low_rate_hz = fs / k
        m = _HUM_TAPS_PER_PHASE
        from ..lowpass import kaiser_lowpass

        h = kaiser_lowpass(m * k, self.low_rate_hz / 2.0, fs, beta=7.0)
        # Polyphase branches: output y[j] = sum_i R[j + i] . g_i, with R the rows of k samples
        # and g_i the i-th k-tap segment of the time-reversed filter.
        self._g_matrix = np.ascontiguousarray(h[::-1].astype(np.float32).reshape(m, k).T)  # (k, m), g_i in column i
        self._m = m
        self._paths = []
        for dur in _HUM_WINDOWS_S:
            n = 1 << math.ceil(math.log2(dur * self.low_rate_hz))
            # Keep bins up to 0.3 x the low rate (600 Hz at 2 kHz): 8 x 60 Hz plus 20 Hz.
            nbins = int(0.3 * n) + 1
            gain2 = np.abs(np.fft.rfft(h, n=n * k)[:nbins]) ** 2
            self._paths.append(_HumWindows(self.low_rate_hz, n, nbins, gain2))
        self._seg_out = 4 * self._paths[0].n  # low-rate samples per segment
        self._seg_in = self._seg_out * k  # full-rate samples per segment
        self._look = (m - 1) * k  # full-rate samples needed beyond a segment's end
        self._buf = np.zeros(0, dtype=np.float32)  # samples kept for the next kept segment
        self._buf_len = 0
        self._p0 = 0  # global index of _buf[0]
        self._received = 0
        self._seg = 0

    def _kept(self, s: int) -> bool:
        stride = 1 << ((s // self.FULL_DENSITY_SEGMENTS + 1).bit_length() - 1)
        return s % stride == 0

    def _next_kept(self, s: int) -> int:
        while not self._kept(s):
            s += 1
        return s

    @property
    def window_count(self) -> int:
        """Short analysis windows seen so far, including the partial last segment."""
        tail = self._tail_y()
        extra = 0
        if tail is not None:
            path = self._paths[-1]
            extra = (tail.size - path.n) // path.hop + 1 if tail.size >= path.n else 0
        return int(self._paths[-1].counts.sum()) + extra

    def _decimate(self, seg: np.ndarray, n_out: int) -> np.ndarray:
        k, m = self.decimation, self._m
        r = seg[: (n_out + m - 1) * k].reshape(n_out + m - 1, k)
        y = np.empty(n_out, dtype=np.float32)
        # Per run of 1024 output rows, one product of the rows with all m branches at once
        # (P[j, i] = R[j] . g_i), then y[j] = sum_i P[j + i, i]: the rows are read once instead
        # of once per branch.  Runs this short stay on one BLAS thread; a tall-skinny product
        # over a whole segment was handed to BLAS threads that stall when the other core is busy.
        g = self._g_matrix
        step = 1024
        for a in range(0, n_out, step):
            b = min(a + step, n_out)
            p = r[a : b + m - 1] @ g  # (b - a + m - 1, m), C-contiguous
            # diag[i, j] = p[j + i, i]; summed over i in order, as a loop of `acc += p[i:, i]`
            # would, in one call
            st = p.strides[0]
            diag = as_strided(p, shape=(m, b - a), strides=(st + p.strides[1], st), writeable=False)
            np.add.reduce(diag, axis=0, out=y[a:b])
        if not np.all(np.isfinite(y)):
            raise SignalValueError("the samples contain NaN or infinite values")
        return y

    def _keep_samples(self, x: np.ndarray, start: int) -> None:
        """Keep what the next kept segment needs of the buffer plus ``x`` (global ``start``)."""
        end = start + x.size
        nk = self._next_kept(self._seg) * self._seg_in
        if nk >= end:
            self._buf_len = 0
            self._p0 = end
            return
        if nk >= start or self._buf_len == 0:
            self._buf_len = 0
            self._p0 = max(nk, start)
        else:
            drop = nk - self._p0
            if drop > 0:
                rest = self._buf_len - drop
                self._buf[:rest] = self._buf[drop : self._buf_len]
                self._buf_len = rest
                self._p0 = nk
        add = x[max(0, self._p0 + self._buf_len - start) :]
        need = self._buf_len + add.size
        if need > self._buf.size:
            grown = np.empty(max(need, 2 * self._buf.size), dtype=np.float32)
            grown[: self._buf_len] = self._buf[: self._buf_len]
            self._buf = grown
        self._buf[self._buf_len : need] = add
        self._buf_len = need

    def update(self, block) -> None:
        """Add the next block of samples (1-D, any length >= 1)."""
        x = block_as_stored(block)
        start = self._received
        end = start + x.size
        self._received = end
        while True:
            s = self._seg
            if not self._kept(s):
                if end >= (s + 1) * self._seg_in:
                    self._seg += 1
                    continue
                break
            lo = s * self._seg_in
            hi = lo + self._seg_in + self._look
            if end < hi:
                break
            if lo >= start:
                seg = np.asarray(x[lo - start : hi - start], dtype=np.float32)
            else:
                seg = np.empty(hi - lo, dtype=np.float32)
                held = start - lo
                seg[:held] = self._buf[lo - self._p0 : lo - self._p0 + held]
                seg[held:] = x[: hi - start]
            y = self._decimate(seg, self._seg_out)
            for path in self._paths:
                path.add(y, path.hist, path.counts)
            self._seg += 1
        self._keep_samples(x, start)

    def _tail_y(self) -> Optional[np.ndarray]:
        """Decimated samples of the partial segment not yet analysed (if it is a kept one)."""
        if not self._kept(self._seg) or self._buf_len == 0 or self._p0 != self._seg * self._seg_in:
            return None
        n_out = (self._buf_len - self._look) // self.decimation
        if n_out <= 0:
            return None
        return self._decimate(self._buf[: self._buf_len], n_out)

    def quiet_spectrum(self) -> Optional[tuple[np.ndarray, np.ndarray]]:
        """``(freqs_hz, psd)`` of the quietest long windows (0.24 Hz resolution, up to about
        600 Hz; full-scale units squared per Hz), or ``None`` before the first window.

        Steady low tones (CTCSS) are read from it by :mod:`voiceband.measurement.tones`.
        """
        tail = self._tail_y()
        path = self._paths[0]
        hist, counts = path.hist, path.counts
        if tail is not None:
            hist, counts = hist.copy(), counts.copy()
            path.add(tail, hist, counts)
        psd, _, _ = path.quiet_psd(hist, counts)
        if psd is None:
            return None
        return np.arange(psd.size) * path.df, psd

    def result(self, *, reference_level_dbfs: Optional[float] = None) -> Optional[HumResult]:
        """The hum found so far, or ``None`` if none was found (or no window is complete).

        Does not change the accumulator.

        Parameters
        ----------
        reference_level_dbfs : float or None, keyword-only
            Speech level to refer the hum to (normally the P.56 active speech level);
            without it ``level_db_re_speech`` is ``None``.
        """
        tail = self._tail_y()
        best = None
        for path in self._paths:
            hist, counts = path.hist, path.counts
            if tail is not None:
                hist, counts = hist.copy(), counts.copy()
                path.add(tail, hist, counts)
            psd, used, window_dbfs = path.quiet_psd(hist, counts)
            if psd is None:
                continue
            for mains in MAINS_HZ:
                found = path.comb(psd, mains)
                if found is None or 10.0 * math.log10(sum(found[2])) < window_dbfs - _ROUNDING_FLOOR_DB:
                    continue
                key = (len(found[1]), found[3])
                if best is None or key > best[0]:
                    best = (key, found, path, used)
        if best is None:
            return None
        (f0, ks, powers, _), path, used = best[1], best[2], best[3]
        level = 10.0 * math.log10(sum(powers))
        ref = None if reference_level_dbfs is None else float(reference_level_dbfs)
        re = level - ref if ref is not None and math.isfinite(ref) else None
        return HumResult(
            fundamental_hz=float(f0),
            level_dbfs=level,
            level_db_re_speech=re,
            reference_level_dbfs=ref,
            harmonic_numbers=tuple(int(v) for v in ks),
            harmonics_hz=tuple(float(v * f0) for v in ks),
            harmonic_levels_dbfs=tuple(10.0 * math.log10(p) for p in powers),
            window_s=path.n / path.rate_hz,
            windows_used=used,
        )


def detect_hum(x, sample_rate_hz: float, *, reference_level_dbfs: Optional[float] = None) -> Optional[HumResult]:
    """Look for mains hum in a whole signal (one pass of :class:`HumAccumulator`).

    Examples
    --------
    A 50 Hz line and its 2nd harmonic over a weak noise floor:

    >>> import numpy as np
    >>> fs = 8000
    >>> t = np.arange(20 * fs) / fs
    >>> x = 0.01 * np.sin(2 * np.pi * 50 * t) + 0.005 * np.sin(2 * np.pi * 100 * t)
    >>> x += 1e-4 * np.random.default_rng(0).standard_normal(t.size)
    >>> hum = detect_hum(x, fs)
    >>> round(hum.fundamental_hz, 2), hum.harmonic_numbers, round(hum.level_dbfs, 1)
    (50.0, (1, 2), -42.0)
    """
    acc = HumAccumulator(sample_rate_hz)
    acc.update(x)
    return acc.result(reference_level_dbfs=reference_level_dbfs)


def _dirichlet(m: np.ndarray, length: int) -> np.ndarray:
    """DFT at bin offsets ``m`` of a complex exponential over ``length`` samples:
    ``exp(-i pi m (L-1)/L) sin(pi m) / sin(pi m / L)`` (``L`` at ``m = 0``)."""
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = np.sin(np.pi * m) / np.sin(np.pi * m / length)
    ratio = np.where(np.abs(m) < 1e-9, float(length), ratio)
    return np.exp(-1j * np.pi * m * (length - 1) / length) * ratio


def line_model(k: np.ndarray, kappa: np.ndarray, length: int) -> tuple[np.ndarray, np.ndarray]:
    """DFTs at bins ``k`` of ``cos`` and ``sin`` at the fractional bins ``kappa``.

    Both have shape ``(len(kappa), len(k))``.
    """
    m = k[None, :] - kappa[:, None]
    d_pos, d_neg = _dirichlet(m, length), _dirichlet(k[None, :] + kappa[:, None], length)
    return 0.5 * (d_pos + d_neg), (d_pos - d_neg) / 2j


def subtract_line(spec: np.ndarray, kappa: float, length: int, *, refine: bool) -> float:
    """Subtract from each row of ``spec`` (rfft bins of ``length``-sample rows) the steady
    sinusoid at bin ``kappa`` that best fits the bins within 3 of it; returns its bin.

    The DFT of ``cos`` and ``sin`` at a frequency off the bin grid is known in closed form
    (Dirichlet kernel), so a least-squares fit on the few bins around the line gives its
    whole leakage pattern, which is subtracted from every bin: a line off the bin grid
    (mains off nominal) would otherwise leave a residue that a notch cannot reach.  With
    ``refine`` the frequency is searched within +-0.5 bin (steps of 0.05) for the fit that
    leaves the least power around the line in the median chunk.
    """
    n_bins = spec.shape[1]
    centre = int(round(kappa))
    near = np.arange(max(0, centre - 3), min(n_bins, centre + 4))
    data = np.concatenate((spec[:, near].real, spec[:, near].imag), axis=1).T.astype(np.float64)
    kappas = kappa + np.linspace(-0.5, 0.5, 21) if refine else np.array([kappa])
    c, s = line_model(near, kappas, length)
    model = np.stack(
        (np.concatenate((c.real, c.imag), axis=1), np.concatenate((s.real, s.imag), axis=1)), axis=2
    )                                                        # (kappas, 2 * bins, 2)
    coef = np.linalg.pinv(model) @ data                      # (kappas, 2, rows)
    left = median(np.sum((data[None] - model @ coef) ** 2, axis=1), axis=1)
    best = int(np.argmin(left))
    c, s = line_model(np.arange(n_bins), kappas[best : best + 1], length)
    spec -= (coef[best, 0][:, None] * c + coef[best, 1][:, None] * s).astype(spec.dtype)
    return float(kappas[best])


def steady_mains_lines(spec: np.ndarray, df: float) -> list[list[tuple[int, int]]]:
    """Steady mains lines in a set of chunk spectra, by the rule of this module.

    Hum is the one strictly periodic sound that stays the same in every chunk; spoken F0
    moves.  So the rule is applied to the steady spectrum, the 20th percentile of the chunk
    powers (needs at least 4 chunks), with the median taken over ±20 Hz around each bin.  A
    line must also carry at least -60 dB of the median chunk power (on a noise-free signal
    the spectrum between lines is at rounding level, and any bin would stand out from it),
    and a family counts only if its 1st or 2nd harmonic is among its lines (so a steady tone
    at 100 or 120 Hz is taken for hum).

    Parameters
    ----------
    spec : ndarray, shape (C, n)
        rfft bins of ``C`` equal-length chunks.
    df : float
        Bin spacing (Hz).

    Returns
    -------
    list of list of (int, int)
        Per mains family that counts, its lines as (harmonic number, FFT bin).
    """
    c_count = spec.shape[0]
    top = min(int((HUM_TOP_HZ + MEDIAN_HALF_WIDTH_HZ) / df) + 1, spec.shape[1])
    span = int(round(MEDIAN_HALF_WIDTH_HZ / df))
    if c_count < _STEADY_MIN_CHUNKS or top < 2 * span + 2 or df > 10.0:
        return []
    power = np.abs(spec[:, :top]) ** 2
    steady = percentile(power, _STEADY_PERCENTILE, axis=0)
    around = running_median(steady, span)
    total = float(median(np.sum(np.abs(spec) ** 2, axis=1)))
    is_line = stands_out(steady, np.nan_to_num(around, nan=np.inf)) & (steady >= _MIN_SHARE * total)
    families = []
    for mains in MAINS_HZ:
        found = []
        for k in harmonic_numbers(mains, (top - 1) * df):
            lo_b = max(1, int(math.floor(k * (mains - MAINS_TOLERANCE_HZ) / df)))
            hi_b = min(top - 1, int(math.ceil(k * (mains + MAINS_TOLERANCE_HZ) / df)))
            peak = lo_b + int(np.argmax(steady[lo_b : hi_b + 1]))
            if is_line[peak]:
                found.append((k, peak))
        if any(k <= 2 for k, _ in found):
            families.append(found)
    return families
