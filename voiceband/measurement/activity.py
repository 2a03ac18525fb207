"""Speech/pause classification, noise floor, SNR and mains hum, streamed.

Frames
------
The analysis frame is ``nfft = 2**round(log2(fs / 10))`` samples (about 0.1 s: 4096 at
48 kHz, 1024 at 8 kHz) with a hop of ``nfft / 2``; the same frames feed the long-term
spectrum in :mod:`voiceband.measurement.spectrum`.  A frame's level is the mean square of its
(unwindowed) samples about the frame's own mean (DC excluded, so a DC offset is not read
as pause noise) in dBFS, where 0 dBFS is the RMS of a full-scale square wave, so a
full-scale sine reads -3.01 dBFS.

Speech/pause classification
---------------------------
Frame levels are counted in a histogram of 1 dB bins (-160 ... +20 dBFS; the lowest bin
also holds digital silence).  From the histogram (so the whole recording decides, in one
pass and constant memory):

1. the noise mode is the most populated bin (3-bin running sum) at or below 3 dB above
   the 10th percentile of frame levels -- the low-energy mode of the level distribution,
   the usual histogram reading of a noise floor (common practice; trade notes 6.2/6.3).
   Whole frames of ~0.1 s are averaged, so a frame level of steady noise scatters by only
   a fraction of a dB and the percentile bias noted for single periodogram bins does not
   arise;
2. pause frames are those within ``pause_margin_db`` (3 dB) above the noise mode;
3. speech frames are those at least ``speech_margin_db`` (10 dB) above the noise mode;
   frames in between (syllable edges, weak sounds) belong to neither class;
4. when fewer than 5 % of frames lie ``speech_margin_db`` above the noise mode the level
   never rises clearly above a floor: a steady signal (noise, a tone, continuous
   programme).  All frames are then taken as active and no noise floor is reported
   (digital silence throughout counts as all pause).

The method needs pauses: with fewer than about 10 % pause frames the "floor" is the level
of the quietest speech.

Mains hum
---------
See :class:`HumAccumulator`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..errors import MeasurementError, SignalValueError
from .levels import _db_power

__all__ = [
    "LEVEL_MIN_DBFS",
    "LEVEL_BIN_DB",
    "LEVEL_BIN_COUNT",
    "analysis_frame_length",
    "level_bins",
    "classify_level_bins",
    "ActivityResult",
    "activity_from_histogram",
    "ActivityAccumulator",
    "measure_activity",
    "snr_db",
    "MAINS_HZ",
    "HumResult",
    "HumAccumulator",
    "detect_hum",
]

#: Lower edge of the frame-level histogram (dBFS); lower levels and digital silence fall in bin 0.
LEVEL_MIN_DBFS = -160.0
#: Width of a frame-level histogram bin (dB).
LEVEL_BIN_DB = 1.0
#: Number of histogram bins, -160 ... +20 dBFS (the top bin also holds anything louder).
LEVEL_BIN_COUNT = 180

_MIN_RATE_HZ = 4000.0


def _check_rate(sample_rate_hz) -> float:
    try:
        fs = float(sample_rate_hz)
    except (TypeError, ValueError):
        raise SignalValueError(f"sample_rate_hz must be a number; got {sample_rate_hz!r}") from None
    if not math.isfinite(fs) or fs < _MIN_RATE_HZ:
        raise SignalValueError(f"sample_rate_hz must be at least {_MIN_RATE_HZ:g} Hz; got {sample_rate_hz!r}")
    return fs


def _check_block(block) -> np.ndarray:
    x = np.asarray(block)
    if x.ndim != 1:
        raise SignalValueError(f"a block of samples must be one-dimensional; got shape {x.shape}")
    if not (np.issubdtype(x.dtype, np.floating) or np.issubdtype(x.dtype, np.integer)):
        raise SignalValueError(f"samples must be real numbers; got dtype {x.dtype}")
    return x


def analysis_frame_length(sample_rate_hz: float) -> int:
    """Analysis frame length ``nfft = 2**round(log2(fs / 10))`` samples (about 0.1 s).

    48 kHz -> 4096 (11.7 Hz bins), 44.1 kHz -> 4096, 16 kHz -> 2048, 8 kHz -> 1024.
    """
    fs = _check_rate(sample_rate_hz)
    return int(2 ** round(math.log2(fs / 10.0)))


def level_bins(mean_square) -> np.ndarray:
    """Histogram bin index of frame mean squares (bin ``b`` covers -160 + b ... -159 + b dBFS)."""
    ms = np.asarray(mean_square, dtype=float)
    with np.errstate(divide="ignore"):
        lev = 10.0 * np.log10(ms)
    b = np.floor((lev - LEVEL_MIN_DBFS) / LEVEL_BIN_DB)
    b = np.nan_to_num(b, nan=0.0, neginf=0.0, posinf=LEVEL_BIN_COUNT - 1)
    return np.clip(b, 0, LEVEL_BIN_COUNT - 1).astype(np.intp)


def _bin_lower_dbfs(b: int) -> float:
    return LEVEL_MIN_DBFS + b * LEVEL_BIN_DB


def classify_level_bins(
    counts, *, pause_margin_db: float = 3.0, speech_margin_db: float = 10.0
) -> tuple[np.ndarray, np.ndarray, Optional[int]]:
    """Which frame-level bins are speech and which are pause (method in the module docstring).

    Parameters
    ----------
    counts : array_like of int, shape (LEVEL_BIN_COUNT,)
        Frames per 1 dB level bin.
    pause_margin_db, speech_margin_db : float, keyword-only
        Pause frames lie at most ``pause_margin_db`` above the noise mode, speech frames at
        least ``speech_margin_db`` above it (rounded to whole bins).

    Returns
    -------
    speech_bins, pause_bins : ndarray of bool, shape (LEVEL_BIN_COUNT,)
    noise_mode_bin : int or None
        Bin of the noise mode, ``None`` when no pauses were found (steady signal).
    """
    c = np.asarray(counts, dtype=np.int64)
    if c.shape != (LEVEL_BIN_COUNT,):
        raise MeasurementError(f"counts must have {LEVEL_BIN_COUNT} bins; got shape {c.shape}")
    nb = LEVEL_BIN_COUNT
    speech = np.zeros(nb, dtype=bool)
    pause = np.zeros(nb, dtype=bool)
    total = int(c.sum())
    if total == 0:
        return speech, pause, None
    pm = int(round(pause_margin_db / LEVEL_BIN_DB))
    sm = int(round(speech_margin_db / LEVEL_BIN_DB))
    cum = np.cumsum(c)
    b10 = int(np.searchsorted(cum, 0.10 * total, side="left"))
    smooth = np.convolve(c, np.ones(3, dtype=np.int64), mode="same")
    hi = min(b10 + pm, nb - 1)
    # Most populated bin (3-bin running sum), among bins that hold frames.
    b_n = int(np.argmax(np.where(c[: hi + 1] > 0, smooth[: hi + 1], -1)))
    above = int(c[min(b_n + sm, nb) :].sum()) if b_n + sm < nb else 0
    if above < 0.05 * total:
        # Steady signal: no frames clearly above a floor.
        if int(c[0]) == total:
            pause[:] = True
        else:
            speech[:] = True
        return speech, pause, None
    pause[: b_n + pm + 1] = True
    speech[b_n + sm :] = True
    return speech, pause, b_n


@dataclass(frozen=True)
class ActivityResult:
    """Speech/pause classification of a recording and the noise floor it implies.

    Attributes
    ----------
    frame_duration_s, hop_duration_s : float
        Analysis frame length and hop.
    frame_count, speech_frame_count, pause_frame_count : int
        Frames in total, classified speech, classified pause (the rest are transitions).
    speech_fraction : float or None
        ``speech_frame_count / frame_count``; ``None`` with no frames.
    noise_floor_dbfs : float or None
        RMS level of the pause frames, DC excluded (dBFS); ``-inf`` if the pauses are digital
        silence; ``None`` when no pause frames were found.
    speech_level_dbfs : float or None
        RMS level of the speech frames, DC excluded (dBFS); ``None`` with no speech frames.
    noise_mode_dbfs : float or None
        Centre of the noise-mode bin (``-inf`` if it is the silence bin); ``None`` for a
        steady signal.
    pause_threshold_dbfs, speech_threshold_dbfs : float or None
        Pause frames lie below the first, speech frames at or above the second.
    """

    frame_duration_s: float
    hop_duration_s: float
    frame_count: int
    speech_frame_count: int
    pause_frame_count: int
    speech_fraction: Optional[float]
    noise_floor_dbfs: Optional[float]
    speech_level_dbfs: Optional[float]
    noise_mode_dbfs: Optional[float]
    pause_threshold_dbfs: Optional[float]
    speech_threshold_dbfs: Optional[float]


def activity_from_histogram(
    counts,
    mean_square_sums,
    *,
    frame_duration_s: float,
    hop_duration_s: float,
    pause_margin_db: float = 3.0,
    speech_margin_db: float = 10.0,
) -> ActivityResult:
    """Classify frames from their level histogram and compute the noise floor.

    Parameters
    ----------
    counts : array_like of int, shape (LEVEL_BIN_COUNT,)
        Frames per level bin.
    mean_square_sums : array_like, shape (LEVEL_BIN_COUNT,)
        Sum of the frames' mean squares per bin (full-scale units squared).
    frame_duration_s, hop_duration_s : float, keyword-only
    pause_margin_db, speech_margin_db : float, keyword-only
        See :func:`classify_level_bins`.

    Returns
    -------
    ActivityResult
    """
    c = np.asarray(counts, dtype=np.int64)
    ms = np.asarray(mean_square_sums, dtype=float)
    speech, pause, b_n = classify_level_bins(
        c, pause_margin_db=pause_margin_db, speech_margin_db=speech_margin_db
    )
    n = int(c.sum())
    ns = int(c[speech].sum())
    npause = int(c[pause].sum())
    floor = _db_power(float(ms[pause].sum()) / npause) if npause else None
    speech_level = _db_power(float(ms[speech].sum()) / ns) if ns else None
    if b_n is None:
        mode = None
        p_thr = math.inf if npause else None
        s_thr = -math.inf if ns else None
    else:
        mode = -math.inf if b_n == 0 else _bin_lower_dbfs(b_n) + LEVEL_BIN_DB / 2
        p_thr = _bin_lower_dbfs(int(np.flatnonzero(pause)[-1]) + 1)
        s_thr = _bin_lower_dbfs(int(np.flatnonzero(speech)[0]))
    return ActivityResult(
        frame_duration_s=float(frame_duration_s),
        hop_duration_s=float(hop_duration_s),
        frame_count=n,
        speech_frame_count=ns,
        pause_frame_count=npause,
        speech_fraction=(ns / n) if n else None,
        noise_floor_dbfs=floor,
        speech_level_dbfs=speech_level,
        noise_mode_dbfs=mode,
        pause_threshold_dbfs=p_thr,
        speech_threshold_dbfs=s_thr,
    )


class _Framer:
    """Cuts a stream into frames of ``nfft`` samples with hop ``nfft // 2`` (float32).

    ``push`` returns the complete new frames as a strided view, the mean square of each
    about its own mean (AC power: DC excluded), the global index of the first, and the
    pushed samples as float32; partial frames are carried to the next call.
    """

    def __init__(self, nfft: int):
        self.nfft = int(nfft)
        self.hop = self.nfft // 2
        self._tail = np.zeros(0, dtype=np.float32)
        self.frames_done = 0

    def push(self, x: np.ndarray):
        hop, nfft = self.hop, self.nfft
        t = self._tail.size
        buf = np.empty(t + x.size, dtype=np.float32)
        buf[:t] = self._tail
        buf[t:] = x
        n_new = (buf.size - nfft) // hop + 1 if buf.size >= nfft else 0
        first = self.frames_done
        if n_new == 0:
            if not np.all(np.isfinite(buf[t:])):
                raise SignalValueError("the samples contain NaN or infinite values")
            self._tail = buf
            return buf[:0].reshape(0, nfft), np.zeros(0), first, buf[t:]
        chunks = buf[: (n_new + 1) * hop].reshape(n_new + 1, hop)
        sums = np.einsum("ij,ij->i", chunks, chunks).astype(np.float64)
        if not np.all(np.isfinite(sums)):
            raise SignalValueError("the samples contain NaN or infinite values")
        ms = (sums[:-1] + sums[1:]) / nfft
        # Frame levels leave out the frame's own mean: a DC offset is reported as such by the
        # levels, and counting it as noise would bury the pause noise floor under it.
        s1 = chunks.sum(axis=1, dtype=np.float64)
        mean = (s1[:-1] + s1[1:]) / nfft
        ms = np.maximum(ms - mean * mean, 0.0)
        frames = np.lib.stride_tricks.as_strided(
            buf, shape=(n_new, nfft), strides=(hop * buf.itemsize, buf.itemsize), writeable=False
        )
        # Samples not yet in a complete frame are checked here (the rest via their sums),
        # before any state changes, so a refused block leaves the framer as it was.
        if not np.all(np.isfinite(buf[(n_new + 1) * hop :])):
            raise SignalValueError("the samples contain NaN or infinite values")
        self._tail = buf[n_new * hop :].copy()
        self.frames_done += n_new
        return frames, ms, first, buf[t:]


class ActivityAccumulator:
    """Streamed speech/pause classification and noise floor.

    Parameters
    ----------
    sample_rate_hz : float
        At least 4000 Hz.
    pause_margin_db, speech_margin_db : float, keyword-only
        See :func:`classify_level_bins`.

    Notes
    -----
    Memory is two histograms of :data:`LEVEL_BIN_COUNT` bins plus one partial frame.
    """

    def __init__(self, sample_rate_hz: float, *, pause_margin_db: float = 3.0, speech_margin_db: float = 10.0):
        self.sample_rate_hz = _check_rate(sample_rate_hz)
        self.nfft = analysis_frame_length(self.sample_rate_hz)
        self._framer = _Framer(self.nfft)
        self._margins = (float(pause_margin_db), float(speech_margin_db))
        self.counts = np.zeros(LEVEL_BIN_COUNT, dtype=np.int64)
        self.mean_square_sums = np.zeros(LEVEL_BIN_COUNT)

    def update_frames(self, block):
        """Add a block; return its new frames, their level bins, the first frame's index, and
        the block as float32.

        ``frames`` (read-only) and the float32 block are views valid until the next call.
        Used by :class:`voiceband.analysis.RecordingAccumulator` to share the framing and
        the one conversion to float32.
        """
        x = _check_block(block)
        frames, ms, first, x32 = self._framer.push(x)
        bins = level_bins(ms)
        if bins.size:
            self.counts += np.bincount(bins, minlength=LEVEL_BIN_COUNT)
            self.mean_square_sums += np.bincount(bins, weights=ms, minlength=LEVEL_BIN_COUNT)
        return frames, bins, first, x32

    def update(self, block) -> None:
        """Add the next block of samples (1-D, any length >= 1)."""
        self.update_frames(block)

    def result(self) -> ActivityResult:
        """Classification over everything seen so far (does not change the accumulator)."""
        return activity_from_histogram(
            self.counts,
            self.mean_square_sums,
            frame_duration_s=self.nfft / self.sample_rate_hz,
            hop_duration_s=(self.nfft // 2) / self.sample_rate_hz,
            pause_margin_db=self._margins[0],
            speech_margin_db=self._margins[1],
        )


def measure_activity(x, sample_rate_hz: float, **options) -> ActivityResult:
    """Speech/pause classification of a whole signal (one pass of :class:`ActivityAccumulator`)."""
    acc = ActivityAccumulator(sample_rate_hz, **options)
    acc.update(x)
    return acc.result()


def snr_db(active_level_dbfs: Optional[float], noise_floor_dbfs: Optional[float]) -> Optional[float]:
    """Active-speech SNR: active speech level minus noise floor (dB).

    This is the "active-speech SNR" of ITU-T practice (trade notes 6.3): P.56 active level
    (or another speech level) minus the noise level measured in the pauses.  Returns
    ``None`` when either level is missing or the difference is not finite (e.g. digital
    silence in the pauses).
    """
    if active_level_dbfs is None or noise_floor_dbfs is None:
        return None
    d = float(active_level_dbfs) - float(noise_floor_dbfs)
    return d if math.isfinite(d) else None


# --------------------------------------------------------------------------------------
# Mains hum
# --------------------------------------------------------------------------------------

#: Nominal mains frequencies searched (Hz).
MAINS_HZ = (50.0, 60.0)
#: Search range of the fundamental around each nominal frequency (Hz, +/-).
_F0_SEARCH_HZ = 0.5
#: Highest harmonic number examined.
_MAX_HARMONIC = 8
#: Target rate of the low-rate hum path (Hz) and taps per polyphase branch.
_HUM_RATE_HZ = 2000.0
_HUM_TAPS_PER_PHASE = 10
#: Minimum durations of the two window lengths (s): long for narrow lines, short to fit in pauses.
_HUM_WINDOWS_S = (4.0, 2.0)
#: Detection: line peak >= 12 dB over the local median (+/-20 Hz), and >= 10 dB over its shoulders.
_LINE_OVER_MEDIAN_DB = 12.0
_LINE_OVER_SHOULDER_DB = 10.0
_MEDIAN_HALF_WIDTH_HZ = 20.0
#: Windows averaged for detection: those within 3 dB (bins) of the quietest non-silent one.
_QUIET_SPREAD_BINS = 3


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
        ms = np.einsum("ij,ij->i", frames, frames).astype(np.float64) / n
        from scipy.fft import rfft

        pw = np.abs(rfft(frames * self.win, axis=1)[:, : self.nbins]).astype(np.float64)
        pw *= pw
        return level_bins(ms), pw

    def add(self, y: np.ndarray, hist: np.ndarray, counts: np.ndarray) -> None:
        got = self.spectra(y)
        if got is None:
            return
        bins, pw = got
        for b in np.unique(bins).tolist():
            sel = bins == b
            hist[b] += pw[sel].sum(axis=0)
            counts[b] += int(np.count_nonzero(sel))

    def quiet_psd(self, hist: np.ndarray, counts: np.ndarray) -> tuple[Optional[np.ndarray], int]:
        """Mean one-sided PSD of the quietest windows in ``hist``/``counts``, corrected for the decimation filter."""
        occupied = np.flatnonzero(counts[1:]) + 1  # bin 0 is digital silence: no information
        if occupied.size == 0:
            return None, 0
        b_min = int(occupied[0])
        last = min(b_min + _QUIET_SPREAD_BINS, LEVEL_BIN_COUNT - 1)
        used = int(counts[b_min : last + 1].sum())
        mean_pw = hist[b_min : last + 1].sum(axis=0) / used
        scale = 2.0 / (self.rate_hz * float(np.sum(self.win.astype(np.float64) ** 2)))
        psd = mean_pw * scale / np.maximum(self.gain2, 1e-12)
        return psd, used

    def comb(self, psd: np.ndarray, mains: float):
        """Fit a comb k * f0 near ``mains``; return (f0, harmonics, powers, min ratio) or None."""
        df = self.df
        nb = psd.size
        f_top = (nb - 1) * df
        ks = [k for k in range(1, _MAX_HARMONIC + 1)
              if k * (mains + _F0_SEARCH_HZ) + _MEDIAN_HALF_WIDTH_HZ < f_top]
        if not ks:
            return None
        freqs = np.arange(nb) * df
        bg = np.empty(len(ks))
        for i, k in enumerate(ks):
            fk = k * mains
            excl = k * _F0_SEARCH_HZ + 4.0 * df
            near = (np.abs(freqs - fk) <= _MEDIAN_HALF_WIDTH_HZ) & (np.abs(freqs - fk) > excl)
            bg[i] = float(np.median(psd[near]))
        tiny = float(np.max(psd)) * 1e-15 + 1e-300
        bg = np.maximum(bg, tiny)
        # Coarse f0: maximise the summed log ratio of the comb to the local medians.
        grid = np.arange(mains - _F0_SEARCH_HZ, mains + _F0_SEARCH_HZ + 1e-9, df / 8.0)
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
            if peak < b * 10 ** (_LINE_OVER_MEDIAN_DB / 10) or peak < shoulder * 10 ** (_LINE_OVER_SHOULDER_DB / 10):
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
        f0 = min(max(f0, mains - _F0_SEARCH_HZ), mains + _F0_SEARCH_HZ)
        return f0, present, powers, min(ratios)


class HumAccumulator:
    """Streamed mains-hum detector (50/60 Hz comb with harmonics).

    Method (common practice, trade notes 6.1): the signal is low-pass filtered and
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
        At least 4000 Hz.
    """

    #: Segments analysed at full density before thinning starts.
    FULL_DENSITY_SEGMENTS = 32

    def __init__(self, sample_rate_hz: float):
        fs = _check_rate(sample_rate_hz)
        self.sample_rate_hz = fs
        k = max(1, int(fs // _HUM_RATE_HZ))
        self.decimation = k
        self.low_rate_hz = fs / k
        m = _HUM_TAPS_PER_PHASE
        from ..lowpass import kaiser_lowpass

        h = kaiser_lowpass(m * k, self.low_rate_hz / 2.0, fs, beta=7.0)
        # Polyphase branches: output y[j] = sum_i R[j + i] . g_i, with R the rows of k samples
        # and g_i the i-th k-tap segment of the time-reversed filter.
        self._g = [np.ascontiguousarray(seg) for seg in h[::-1].astype(np.float32).reshape(m, k)]
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
        # One matrix-vector product per polyphase branch, over cache-sized runs of rows
        # (far cheaper here than one tall-skinny matrix product, which multithreaded
        # BLAS handles badly).
        step = max(1, 65536 // k)
        for a in range(0, n_out, step):
            b = min(a + step, n_out)
            acc = r[a:b] @ self._g[0]
            for i in range(1, m):
                acc += r[a + i : b + i] @ self._g[i]
            y[a:b] = acc
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
        x = _check_block(block)
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
            psd, used = path.quiet_psd(hist, counts)
            if psd is None:
                continue
            for mains in MAINS_HZ:
                found = path.comb(psd, mains)
                if found is None:
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
    """Look for mains hum in a whole signal (one pass of :class:`HumAccumulator`)."""
    acc = HumAccumulator(sample_rate_hz)
    acc.update(x)
    return acc.result(reference_level_dbfs=reference_level_dbfs)
