"""Speech/pause classification, noise floor and SNR, streamed.

Frames
------
The analysis frame is ``nfft = 2**round(log2(fs / 10))`` samples (about 0.1 s: 4096 at
48 kHz, 1024 at 8 kHz) with a hop of ``nfft / 2``; the same frames feed the long-term
spectrum in :mod:`voiceband.measurement.spectrum`.  A frame's level is the mean square of its
(unwindowed) samples about the frame's own mean (DC excluded, so a DC offset is not read
as pause noise) in dBFS, where 0 dBFS is the RMS of a full-scale square wave, so a
full-scale sine reads -3.01 dBFS.

Speech/pause classification: :func:`classify_level_bins`.

Mains hum is measured in :mod:`voiceband.measurement.hum`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..errors import MeasurementError, SignalValueError
from .. import validate
from ..units import db_power

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
]

#: Lower edge of the frame-level histogram (dBFS); lower levels and digital silence fall in bin 0.
LEVEL_MIN_DBFS = -160.0
#: Width of a frame-level histogram bin (dB).
LEVEL_BIN_DB = 1.0
#: Speech frames in strong noise: at least this far above the noise mode (dB), used when
#: fewer than 5 % of frames reach the speech margin (see classify_level_bins).
LOW_SNR_MARGIN_DB = 5.0
#: Number of histogram bins, -160 ... +20 dBFS (the top bin also holds anything louder).
LEVEL_BIN_COUNT = 180

def analysis_frame_length(sample_rate_hz: float) -> int:
    """Analysis frame length ``nfft = 2**round(log2(fs / 10))`` samples (about 0.1 s).

    48 kHz -> 4096 (11.7 Hz bins), 44.1 kHz -> 4096, 16 kHz -> 2048, 8 kHz -> 1024.
    """
    fs = validate.sample_rate_hz(sample_rate_hz)
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
    """Which frame-level bins are speech and which are pause.

    Frame levels are counted in a histogram of 1 dB bins (-160 ... +20 dBFS; the lowest bin
    also holds digital silence).  From the histogram (so the whole recording decides, in one
    pass and constant memory):

    1. the noise mode is the most populated bin (3-bin running sum) at or below 3 dB above
       the 10th percentile of frame levels -- the low-energy mode of the level distribution,
       the usual histogram reading of a noise floor (common practice).
       Whole frames of ~0.1 s are averaged, so a frame level of steady noise scatters by only
       a fraction of a dB and the percentile bias noted for single periodogram bins does not
       arise;
    2. pause frames are those within ``pause_margin_db`` (3 dB) above the noise mode;
    3. speech frames are those at least ``speech_margin_db`` (10 dB) above the noise mode;
       frames in between (syllable edges, weak sounds) belong to neither class;
    4. when fewer than 5 % of frames lie ``speech_margin_db`` above the noise mode but at least
       5 % lie :data:`LOW_SNR_MARGIN_DB` (5 dB) above it, this is speech in strong noise:
       speech frames are then those 5 dB or more above the mode;
    5. when fewer than 5 % of frames lie even that far above the noise mode the level
       never rises clearly above a floor: a steady signal (noise, a tone, continuous
       programme).  All frames are then taken as active and no noise floor is reported
       (digital silence throughout counts as all pause).

    The method needs pauses: with fewer than about 10 % pause frames the "floor" is the level
    of the quietest speech.

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
    if above < 0.05 * total and b_n > 0:
        # Speech in strong noise (SNR below about 10 dB) rises less than speech_margin_db over
        # the noise; frames of 0.1 s of noise scatter by well under a dB, so frames
        # LOW_SNR_MARGIN_DB above the mode are speech too.
        lm = int(round(LOW_SNR_MARGIN_DB / LEVEL_BIN_DB))
        if int(c[min(b_n + lm, nb):].sum()) >= 0.05 * total:
            sm = lm
            above = int(c[b_n + sm:].sum())
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
    floor = db_power(float(ms[pause].sum()) / npause) if npause else None
    speech_level = db_power(float(ms[speech].sum()) / ns) if ns else None
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
        self._prepared: np.ndarray | None = None
        self.frames_done = 0

    def prepare(self, n: int) -> np.ndarray:
        """Where the next block's ``n`` samples go as float32, for a caller that converts them
        itself (:meth:`push` with ``prepared=True`` then takes them from there)."""
        t = self._tail.size
        buf = np.empty(t + int(n), dtype=np.float32)
        buf[:t] = self._tail
        self._prepared = buf
        return buf[t:]

    def push(self, x: np.ndarray, *, prepared: bool = False):
        hop, nfft = self.hop, self.nfft
        t = self._tail.size
        if prepared:
            buf, self._prepared = self._prepared, None
        else:
            buf = np.empty(t + x.size, dtype=np.float32)
            buf[:t] = self._tail
            buf[t:] = x
        n_new = (buf.size - nfft) // hop + 1 if buf.size >= nfft else 0
        first = self.frames_done
        if n_new == 0:
            validate.finite_samples(buf[t:])
            self._tail = buf
            return buf[:0].reshape(0, nfft), np.zeros(0), first, buf[t:]
        chunks = buf[: (n_new + 1) * hop].reshape(n_new + 1, hop)
        # vecdot: BLAS sdot per row (a row is far below its threading size), 2.5x einsum's speed
        sums = np.vecdot(chunks, chunks).astype(np.float64)
        if not np.all(np.isfinite(sums)):
            raise SignalValueError("the samples contain NaN or infinite values")
        ms = (sums[:-1] + sums[1:]) / nfft
        # Frame levels leave out the frame's own mean: a DC offset is reported as such by the
        # levels, and counting it as noise would bury the pause noise floor under it.
        s1 = np.einsum("ij->i", chunks).astype(np.float64)  # float32 sums, as the squares' (5x cheaper)
        mean = (s1[:-1] + s1[1:]) / nfft
        ms = np.maximum(ms - mean * mean, 0.0)
        frames = np.lib.stride_tricks.as_strided(
            buf, shape=(n_new, nfft), strides=(hop * buf.itemsize, buf.itemsize), writeable=False
        )
        # Samples not yet in a complete frame are checked here (the rest via their sums),
        # before any state changes, so a refused block leaves the framer as it was.
        validate.finite_samples(buf[(n_new + 1) * hop :])
        self._tail = buf[n_new * hop :].copy()
        self.frames_done += n_new
        return frames, ms, first, buf[t:]


class ActivityAccumulator:
    """Streamed speech/pause classification and noise floor.

    Parameters
    ----------
    sample_rate_hz : float
        8000–192000 Hz (:func:`voiceband.validate.sample_rate_hz`).
    pause_margin_db, speech_margin_db : float, keyword-only
        See :func:`classify_level_bins`.

    Notes
    -----
    Memory is two histograms of :data:`LEVEL_BIN_COUNT` bins plus one partial frame.
    """

    def __init__(self, sample_rate_hz: float, *, pause_margin_db: float = 3.0, speech_margin_db: float = 10.0):
        self.sample_rate_hz = validate.sample_rate_hz(sample_rate_hz)
        self.nfft = analysis_frame_length(self.sample_rate_hz)
        self._framer = _Framer(self.nfft)
        self._margins = (float(pause_margin_db), float(speech_margin_db))
        self.counts = np.zeros(LEVEL_BIN_COUNT, dtype=np.int64)
        self.mean_square_sums = np.zeros(LEVEL_BIN_COUNT)

    def float32_slot(self, n: int) -> np.ndarray:
        """Where the next block's ``n`` samples go as float32, for a caller that converts them
        on its own pass; then call :meth:`update_frames` with ``converted=True``."""
        return self._framer.prepare(n)

    def update_frames(self, block, *, converted: bool = False):
        """Add a block; return its new frames, their level bins, the first frame's index, the
        block as float32, and the frames' mean squares (DC excluded).

        ``frames`` (read-only) and the float32 block are views valid until the next call.
        Used by :class:`voiceband.analysis.RecordingAccumulator` to share the framing and
        the one conversion to float32 (``converted=True``: the block's float32 copy is
        already in :meth:`float32_slot`).
        """
        x = validate.block(block)
        frames, ms, first, x32 = self._framer.push(x, prepared=converted)
        bins = level_bins(ms)
        if bins.size:
            self.counts += np.bincount(bins, minlength=LEVEL_BIN_COUNT)
            self.mean_square_sums += np.bincount(bins, weights=ms, minlength=LEVEL_BIN_COUNT)
        return frames, bins, first, x32, ms

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

    This is the "active-speech SNR" of ITU-T test practice (from memory): P.56 active level
    (or another speech level) minus the noise level measured in the pauses.  Returns
    ``None`` when either level is missing or the difference is not finite (e.g. digital
    silence in the pauses).
    """
    if active_level_dbfs is None or noise_floor_dbfs is None:
        return None
    d = float(active_level_dbfs) - float(noise_floor_dbfs)
    return d if math.isfinite(d) else None
