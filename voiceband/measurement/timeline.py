"""Level over time, a coarse spectrogram and the sample-value histogram, streamed in constant memory.

These are the statistics the report's figures draw (``voiceband report``); they come from the same
single pass over the audio as every other measurement, so nothing reads the file twice.

Chunks
------
The signal is cut into consecutive chunks of ``2**round(log2(fs / 50))`` samples (about 20 ms:
1024 at 48 kHz, 256 at 8 kHz), aligned to the first sample, so the result does not depend on how
the recording was cut into blocks.  For each chunk:

* its mean square about its own mean (the DC excluded, as for the activity frames of
  :mod:`voiceband.measurement.activity`) and its largest absolute sample;
* for a thinned subset, the power spectrum of the Hann-windowed chunk.

Columns
-------
Chunks are gathered into time columns of ``width`` chunks each.  When the columns reach their
cap, neighbouring pairs are merged and the width doubles, so a recording of any length ends with
between half the cap and the cap of columns (common practice for bounded-memory overviews).
A level column holds the mean of its chunks' mean squares (so its level is the RMS level of that
stretch, in dBFS with 0 dBFS = full-scale square wave) and the largest sample.  A spectrogram
column holds the mean power spectrum of the chunks transformed in it: every chunk while a column
is at most four chunks wide, then every ``width // 4``-th.

Histogram
---------
Sample values in 256 equal bins over -1 ... +1 full scale (values beyond full scale, possible in
floating-point files, fall in the end bins and are also counted apart).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..validate import block as _check_block
from ..validate import sample_rate_hz as _check_rate
from ..fourier import rfft

__all__ = ["TimelineAccumulator", "TimelineResult", "HISTOGRAM_BINS", "measure_timeline"]

#: Bins of the sample-value histogram over -1 ... +1 full scale.
HISTOGRAM_BINS = 256
#: Default caps on the level and spectrogram columns.
LEVEL_COLUMNS = 1200
SPECTROGRAM_COLUMNS = 400
#: Spectrogram columns transform every chunk up to this width, then every width // this-th chunk.
_TRANSFORMS_PER_COLUMN = 4


def _ro(a) -> np.ndarray:
    a = np.array(a, dtype=np.float64)
    a.flags.writeable = False
    return a


@dataclass(frozen=True)
class TimelineResult:
    """Level over time, coarse spectrogram and sample-value histogram of one recording.

    Attributes
    ----------
    chunk_s : float
        Chunk length (s).
    level_column_s : float
        Duration of one level column (s); column ``i`` starts at ``i * level_column_s``.
    level_rms_dbfs : ndarray, shape (n,)
        RMS level of each column (DC excluded), dBFS (0 dBFS = full-scale square wave);
        ``-inf`` for digital silence.  The last column may be partial.
    level_peak_dbfs : ndarray, shape (n,)
        Largest absolute sample in each column, dBFS peak.
    spectrogram_column_s : float
        Duration of one spectrogram column (s).
    spectrogram_freqs_hz : ndarray, shape (k,)
        Bin frequencies 0 ... fs/2 (Hz).
    spectrogram_db_per_hz : ndarray, shape (m, k)
        Mean power spectral density of each column, dB re full scale squared per Hz (one-sided,
        Hann window); ``-inf`` where there was no power.
    histogram_edges : ndarray, shape (257,)
        Bin edges of the sample-value histogram (full scale = 1).
    histogram_counts : ndarray, shape (256,)
        Samples in each bin (integers as floats).
    beyond_full_scale : int
        Samples with ``|x| > 1``.
    samples : int
        Samples seen.
    """

    chunk_s: float
    level_column_s: float
    level_rms_dbfs: np.ndarray
    level_peak_dbfs: np.ndarray
    spectrogram_column_s: float
    spectrogram_freqs_hz: np.ndarray
    spectrogram_db_per_hz: np.ndarray
    histogram_edges: np.ndarray
    histogram_counts: np.ndarray
    beyond_full_scale: int
    samples: int


class _Columns:
    """Time columns of summed per-chunk vectors (and a running max), merged pairwise at a cap."""

    def __init__(self, cap: int, k: int):
        self.cap = cap - cap % 2
        self.sums = np.zeros((self.cap, k))
        self.counts = np.zeros(self.cap)
        self.peaks = np.zeros(self.cap)
        self.n = 0  # closed columns
        self.width = 1  # chunks per column
        self.part_sum = np.zeros(k)
        self.part_count = 0.0
        self.part_peak = 0.0
        self.part_chunks = 0

    def room(self) -> int:
        return self.width - self.part_chunks

    def add(self, chunks: int, total: np.ndarray, count: float, peak: float) -> None:
        """Add ``chunks`` chunks (at most :meth:`room`) whose vectors sum to ``total``."""
        self.part_sum += total
        self.part_count += count
        self.part_peak = max(self.part_peak, peak)
        self.part_chunks += chunks
        if self.part_chunks == self.width:
            self.sums[self.n] = self.part_sum
            self.counts[self.n] = self.part_count
            self.peaks[self.n] = self.part_peak
            self.n += 1
            self.part_sum = np.zeros_like(self.part_sum)
            self.part_count = 0.0
            self.part_peak = 0.0
            self.part_chunks = 0
            if self.n == self.cap:
                h = self.cap // 2
                self.sums[:h] = self.sums[0::2] + self.sums[1::2]
                self.counts[:h] = self.counts[0::2] + self.counts[1::2]
                self.peaks[:h] = np.maximum(self.peaks[0::2], self.peaks[1::2])
                self.sums[h:] = 0.0
                self.counts[h:] = 0.0
                self.peaks[h:] = 0.0
                self.n = h
                self.width *= 2

    def arrays(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(sums, counts, peaks) of the closed columns plus the partial one, if any."""
        sums, counts, peaks = self.sums[: self.n], self.counts[: self.n], self.peaks[: self.n]
        if self.part_chunks:
            sums = np.vstack([sums, self.part_sum[None, :]])
            counts = np.r_[counts, self.part_count]
            peaks = np.r_[peaks, self.part_peak]
        return sums, counts, peaks


class TimelineAccumulator:
    """Streamed level-over-time, coarse spectrogram and sample-value histogram.

    Parameters
    ----------
    sample_rate_hz : int
        8000–192000 Hz.
    level_columns, spectrogram_columns : int, keyword-only
        Caps on the number of columns (even numbers of at least 4).

    Notes
    -----
    Memory: ``spectrogram_columns x (chunk/2 + 1)`` floats (1.6 MB at 48 kHz) plus the level
    columns and one partial chunk, whatever the recording's length.
    """

    def __init__(self, sample_rate_hz: int, *, level_columns: int = LEVEL_COLUMNS,
                 spectrogram_columns: int = SPECTROGRAM_COLUMNS):
        fs = _check_rate(sample_rate_hz)
        self.sample_rate_hz = fs
        self.chunk = int(2 ** round(math.log2(fs / 50.0)))
        n = self.chunk
        self._win = 0.5 - 0.5 * np.cos(2.0 * np.pi * np.arange(n) / n)
        self._psd_scale = 2.0 / (fs * float(np.sum(self._win ** 2)))
        self._levels = _Columns(max(4, int(level_columns)), 0)
        self._spec = _Columns(max(4, int(spectrogram_columns)), n // 2 + 1)
        self._carry = np.zeros(0)
        self._chunks = 0  # whole chunks processed
        self._hist = np.zeros(HISTOGRAM_BINS, dtype=np.int64)
        self._beyond = 0
        self._samples = 0

    def update(self, block) -> None:
        """Add the next block of samples (1-D, native scale, any length >= 1)."""
        x = np.asarray(_check_block(block), dtype=np.float64)
        self._samples += x.size
        q = np.floor((x + 1.0) * (HISTOGRAM_BINS / 2.0)).astype(np.intp)
        np.clip(q, 0, HISTOGRAM_BINS - 1, out=q)
        self._hist += np.bincount(q, minlength=HISTOGRAM_BINS)
        self._beyond += int(np.count_nonzero(np.abs(x) > 1.0))
        if self._carry.size:
            x = np.concatenate([self._carry, x])
        m = x.size // self.chunk
        self._carry = x[m * self.chunk:].copy()
        if m:
            self._chunks_in(x[: m * self.chunk].reshape(m, self.chunk))

    def _chunks_in(self, c: np.ndarray) -> None:
        mean = c.mean(axis=1)
        ms = np.maximum(np.einsum("ij,ij->i", c, c) / self.chunk - mean * mean, 0.0)
        peak = np.abs(c).max(axis=1)
        self._feed_levels(ms, peak)
        self._feed_spectra(c, peak)
        self._chunks += c.shape[0]

    def _feed_levels(self, ms: np.ndarray, peak: np.ndarray) -> None:
        cols, i, m = self._levels, 0, ms.size
        while i < m:
            take = min(cols.room(), m - i)
            cols.add(take, np.zeros(0), float(ms[i:i + take].sum()), float(peak[i:i + take].max()))
            i += take

    def _feed_spectra(self, c: np.ndarray, peak: np.ndarray) -> None:
        cols, i, m = self._spec, 0, c.shape[0]
        while i < m:
            take = min(cols.room(), m - i)
            stride = max(1, cols.width // _TRANSFORMS_PER_COLUMN)
            idx = self._chunks + i + np.arange(take)
            sel = np.flatnonzero(idx % stride == 0) + i
            if sel.size:
                fr = c[sel] - c[sel].mean(axis=1, keepdims=True)
                pw = np.abs(rfft(fr * self._win, axis=1)) ** 2
                total = pw.sum(axis=0)
            else:
                total = np.zeros(self.chunk // 2 + 1)
            cols.add(take, total, float(sel.size), float(peak[i:i + take].max()))
            i += take

    def result(self) -> TimelineResult:
        """Everything gathered so far (does not change the accumulator; a partial last chunk is left out)."""
        fs = self.sample_rate_hz
        n = self.chunk
        _, ms_sum, peaks = self._levels.arrays()
        widths = np.full(ms_sum.size, float(self._levels.width))
        if self._levels.part_chunks and widths.size:
            widths[-1] = self._levels.part_chunks
        with np.errstate(divide="ignore", invalid="ignore"):
            rms_db = 10.0 * np.log10(ms_sum / np.maximum(widths, 1.0))
            peak_db = 20.0 * np.log10(peaks)
            # 0 dBFS = full-scale square wave: a mean square of 1 is 0 dBFS (voiceband.measurement.levels)
            sums, counts, _ = self._spec.arrays()
            psd = sums * self._psd_scale / np.maximum(counts, 1.0)[:, None]
            psd[:, 0] /= 2.0
            psd[:, -1] /= 2.0
            spec_db = 10.0 * np.log10(psd)
        edges = np.linspace(-1.0, 1.0, HISTOGRAM_BINS + 1)
        return TimelineResult(
            chunk_s=n / fs,
            level_column_s=self._levels.width * n / fs,
            level_rms_dbfs=_ro(rms_db),
            level_peak_dbfs=_ro(peak_db),
            spectrogram_column_s=self._spec.width * n / fs,
            spectrogram_freqs_hz=_ro(np.arange(n // 2 + 1) * fs / n),
            spectrogram_db_per_hz=_ro(spec_db.reshape(-1, n // 2 + 1)),
            histogram_edges=_ro(edges),
            histogram_counts=_ro(self._hist),
            beyond_full_scale=int(self._beyond),
            samples=int(self._samples),
        )


def measure_timeline(x, sample_rate_hz: int, **options) -> TimelineResult:
    """Timeline statistics of a whole signal (one pass of :class:`TimelineAccumulator`)."""
    acc = TimelineAccumulator(sample_rate_hz, **options)
    acc.update(x)
    return acc.result()
