"""Long-term spectrum of speech and of pauses (streamed Welch), one-third-octave bands, tilt.

:class:`LongTermSpectrumAccumulator` keeps the long-term spectra of the speech frames and of
the pause frames in constant memory.  It is fed the analysis frames and level bins of
:class:`voiceband.measurement.activity.ActivityAccumulator` by the pipeline in
:mod:`voiceband.analysis`, which also runs the other accumulators (levels, clipping, hum,
voice) and the bandwidth and edge estimates on the result.

Long-term spectrum
------------------
Welch's method (Welch, IEEE Trans. Audio Electroacoust. AU-15(2):70-73, 1967): periodic
Hann windows of ``nfft = 2**round(log2(fs/10))`` samples (11.7 Hz resolution at 48 kHz),
50 % overlap, one-sided PSD ``2 |X_k|^2 / (fs * sum(w^2))`` (DC and Nyquist bins not
doubled) in full-scale units squared per Hz, so integrating the PSD gives the mean square
(0 dBFS = full-scale square wave).  Each frame's power spectrum is added to a histogram
row chosen by the frame's level (1 dB bins), so the speech and pause spectra can be summed
at the end once the whole recording has decided where speech and pauses lie.

Long recordings: every frame's level is measured, but to bound the cost the frames
transformed thin out with time -- all of the first 2048 frames (1.5 min at 48 kHz), then
every 2nd frame of the next 4096, every 4th of the next 8192, and so on (each region
contributes 2048 transforms; a 1-hour file at 48 kHz uses about 11 000 of its 84 000
frames).  Each transformed frame is weighted by its stride, so every stretch of the
recording counts in proportion to its duration; with thousands of frames the long-term
spectrum has long converged (per-bin standard error of a few per cent, far below the
talker-to-talker spread).

One-third-octave bands
----------------------
IEC 61260-1:2014 base-10 bands from :mod:`voiceband.bands` (25 Hz ... 20 kHz); only bands
whose upper edge lies below the Nyquist frequency are used.  A band *level* is the power in the band (dBFS),
integrated from the PSD with fractional bins (:func:`voiceband.measurement.bandwidth.cumulative_power`).

Tilt
----
``tilt_db_per_octave`` is the least-squares slope of one-third-octave *band levels*
against log2(frequency) over 300-3000 Hz, clipped to the estimated passband (white noise
reads +3.01 dB/octave, pink noise 0.0).  ``tilt_psd_db_per_octave`` is the slope of the
band *spectrum levels* (band level minus 10 log10 of the band width, i.e. of the PSD): for
constant-percentage bands it is exactly 10 log10(2) = 3.01 dB/octave lower.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Optional

import numpy as np

from .activity import LEVEL_BIN_COUNT
from .bandwidth import cumulative_power
from ..bands import BandLevels, bands_for_nominal, third_octave_bands
from ..errors import MeasurementError
from ..fourier import rfft

__all__ = [
    "band_powers",
    "third_octave_levels_db",
    "tilt_db_per_octave",
    "psd_tilt_db_per_octave",
    "SpectrumResult",
    "LongTermSpectrumAccumulator",
]

#: Tilt span before clipping to the passband (Hz).
TILT_SPAN_HZ = (300.0, 3000.0)
#: Frames transformed at full density before thinning starts (see the module docstring).
_FULL_DENSITY_FRAMES = 2048


def _ro(a) -> np.ndarray:
    a = np.array(a, dtype=float)
    a.flags.writeable = False
    return a


def band_powers(psd, freqs_hz, lower_hz, upper_hz) -> np.ndarray:
    """Power of a one-sided PSD between band edges, with fractional-bin integration.

    Parameters
    ----------
    psd, freqs_hz : array_like, shape (n,)
        One-sided PSD (units squared per Hz) on a uniform grid.
    lower_hz, upper_hz : array_like, shape (m,)
        Band edges (Hz).

    Returns
    -------
    ndarray, shape (m,)
        Power in each band (units squared).
    """
    b, c = cumulative_power(psd, freqs_hz)
    lo = np.asarray(lower_hz, dtype=float)
    hi = np.asarray(upper_hz, dtype=float)
    return np.interp(hi, b, c) - np.interp(lo, b, c)


def _levels_db(power: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(np.maximum(power, 0.0))


def third_octave_levels_db(psd, freqs_hz) -> BandLevels:
    """One-third-octave band levels of a one-sided PSD.

    The grid's last frequency is taken as the Nyquist frequency: only bands whose upper
    edge lies below it are returned (:func:`voiceband.bands.third_octave_bands`).

    Returns
    -------
    BandLevels
        Band levels (kind ``"band"``), ``10 log10`` of the band power (dBFS for a
        full-scale PSD; ``-inf`` for a band without power).

    Examples
    --------
    >>> import numpy as np
    >>> f = np.arange(0, 4001.0)                      # 1 Hz bins up to 4 kHz
    >>> bl = third_octave_levels_db(np.full(f.size, 1e-6), f)   # white: -60 dB per Hz
    >>> round(float(bl.as_spectrum().levels_db[-1]), 6)
    -60.0
    """
    f = np.asarray(freqs_hz, dtype=float)
    bands = third_octave_bands(2.0 * f[-1])
    return BandLevels(bands, _levels_db(band_powers(psd, f, bands.lower_hz, bands.upper_hz)), "band")


def _slope(levels: BandLevels, span_hz) -> Optional[float]:
    if not isinstance(levels, BandLevels):
        raise MeasurementError(f"levels must be BandLevels (voiceband.bands); got {type(levels).__name__}")
    f = levels.bands.centre_hz
    v = levels.levels_db
    lo, hi = (float(s) for s in span_hz)
    sel = (f >= lo * 0.999) & (f <= hi * 1.001) & np.isfinite(v)
    if np.count_nonzero(sel) < 3:
        return None
    slope = np.polyfit(np.log2(f[sel]), v[sel], 1)[0]
    return float(slope)


def tilt_db_per_octave(levels: BandLevels, *, span_hz=TILT_SPAN_HZ) -> Optional[float]:
    """Spectral tilt: least-squares slope of one-third-octave *band levels* vs log2(f).

    Bands whose exact mid-band frequency lies in ``span_hz`` take part; white noise reads
    +3.01 dB/octave (10 log10 2: constant-percentage bands double in width per octave),
    pink noise 0.0.

    Parameters
    ----------
    levels : BandLevels
        One-third-octave levels; spectrum levels are converted to band levels.
    span_hz : (float, float), keyword-only

    Returns
    -------
    float or None
        dB per octave; ``None`` with fewer than 3 finite bands in the span.

    Examples
    --------
    >>> import numpy as np
    >>> from voiceband.bands import third_octave_bands
    >>> b = third_octave_bands(48000)
    >>> white = BandLevels(b, np.zeros(b.size), "spectrum")   # flat PSD
    >>> round(tilt_db_per_octave(white), 2)
    3.01
    """
    return _slope(levels.as_band(), span_hz)


def psd_tilt_db_per_octave(levels: BandLevels, *, span_hz=TILT_SPAN_HZ) -> Optional[float]:
    """Slope of the band *spectrum levels* (dB per Hz, i.e. the PSD) vs log2(f).

    Spectrum level = band level - 10 log10(band width); for one-third-octave bands this
    slope is 10 log10(2) = 3.01 dB/octave below :func:`tilt_db_per_octave` (white noise 0,
    pink noise -3.01 dB/octave).
    """
    return _slope(levels.as_spectrum(), span_hz)


@dataclass(frozen=True)
class SpectrumResult:
    """Long-term spectra of the speech and pause frames, and their band levels.

    Attributes
    ----------
    freqs_hz : ndarray
        PSD bin frequencies, 0 ... fs/2 (Hz).
    frequency_resolution_hz : float
        Bin spacing ``fs / nfft``.
    speech_psd_fs2_per_hz, noise_psd_fs2_per_hz : ndarray or None
        One-sided Welch PSD of the speech frames and of the pause frames, full-scale units
        squared per Hz (integral = mean square).  ``None`` when there are no such frames.
    bands_hz : ndarray
        Nominal one-third-octave centres (Hz).
    band_centres_hz : ndarray
        Exact mid-band frequencies (Hz).
    speech_band_db, noise_band_db : ndarray or None
        Band *levels* (power in band, dBFS) of the speech and pause spectra.
    tilt_db_per_octave : float or None
        Slope of ``speech_band_db`` vs log2 f over ``tilt_span_hz`` (band-level basis).
    tilt_psd_db_per_octave : float or None
        The same on a PSD (spectrum-level) basis: 3.01 dB/octave lower.
    tilt_span_hz : tuple or None
        ``(low, high)`` span actually used: 300-3000 Hz clipped to the passband edges.
    speech_frames_transformed, noise_frames_transformed : int
        Frames whose spectra went into each PSD (see thinning in the module docstring).
    """

    freqs_hz: np.ndarray
    frequency_resolution_hz: float
    speech_psd_fs2_per_hz: Optional[np.ndarray]
    noise_psd_fs2_per_hz: Optional[np.ndarray]
    bands_hz: np.ndarray
    band_centres_hz: np.ndarray
    speech_band_db: Optional[np.ndarray]
    noise_band_db: Optional[np.ndarray]
    tilt_db_per_octave: Optional[float]
    tilt_psd_db_per_octave: Optional[float]
    tilt_span_hz: Optional[tuple]
    speech_frames_transformed: int
    noise_frames_transformed: int

    @property
    def speech_levels(self) -> Optional[BandLevels]:
        """``speech_band_db`` on its bands (band levels), or ``None``."""
        return None if self.speech_band_db is None else BandLevels(bands_for_nominal(self.bands_hz), self.speech_band_db)

    @property
    def noise_levels(self) -> Optional[BandLevels]:
        """``noise_band_db`` on its bands (band levels), or ``None``."""
        return None if self.noise_band_db is None else BandLevels(bands_for_nominal(self.bands_hz), self.noise_band_db)

    def within_passband(self, low_hz: Optional[float], high_hz: Optional[float]) -> "SpectrumResult":
        """The same spectra with the tilt taken over 300-3000 Hz clipped to a passband (Hz; ``None``: open)."""
        lo, hi = TILT_SPAN_HZ
        if low_hz is not None:
            lo = max(lo, low_hz)
        if high_hz is not None:
            hi = min(hi, high_hz)
        tilt, tilt_psd, span = _tilt_over(self.speech_levels, (lo, hi))
        return replace(self, tilt_db_per_octave=tilt, tilt_psd_db_per_octave=tilt_psd, tilt_span_hz=span)


class LongTermSpectrumAccumulator:
    """Streamed long-term spectrum of the speech frames and of the pause frames.

    Fed with the analysis frames and their level bins from
    :meth:`voiceband.measurement.activity.ActivityAccumulator.update_frames` (the framing and
    the speech/pause decision belong to the activity measurement; the pipeline in
    :mod:`voiceband.analysis` hands them over), it keeps one power-spectrum histogram row per
    1 dB frame-level bin, so the speech and pause spectra can be summed once the whole
    recording has decided where speech and pauses lie.

    Parameters
    ----------
    sample_rate_hz : float
        Sample rate (Hz), already checked by the activity accumulator
        (:func:`voiceband.validate.sample_rate_hz`).
    nfft : int
        Frame length of the frames fed in (``activity.analysis_frame_length``).

    Notes
    -----
    Memory: a (180 x (nfft/2 + 1)) float64 histogram (2.9 MB at 48 kHz), independent of the
    recording's length.
    """

    def __init__(self, sample_rate_hz: float, nfft: int):
        self.sample_rate_hz = float(sample_rate_hz)
        self.nfft = int(nfft)
        nb = self.nfft // 2 + 1
        self._hist = np.zeros((LEVEL_BIN_COUNT, nb))
        self._weight = np.zeros(LEVEL_BIN_COUNT)
        self._transformed = np.zeros(LEVEL_BIN_COUNT, dtype=np.int64)
        n = self.nfft
        self._win = (0.5 - 0.5 * np.cos(2.0 * np.pi * np.arange(n) / n)).astype(np.float32)

    def update_frames(self, frames: np.ndarray, bins: np.ndarray, first: int) -> None:
        """Add analysis frames (rows of ``nfft`` samples), their level bins and the first frame's index."""
        if bins.size == 0:
            return
        idx = first + np.arange(bins.size, dtype=np.int64)
        # Region j covers frames F(2^j - 1) ... F(2^(j+1) - 1) - 1 and keeps every 2^j-th.
        _, e = np.frexp((idx // _FULL_DENSITY_FRAMES + 1).astype(np.float64))
        stride = np.left_shift(np.int64(1), (e - 1).astype(np.int64))
        sel = np.flatnonzero(idx % stride == 0)
        if sel.size == 0:
            return
        # Frames in level-bin order, so each bin's spectra are one contiguous run.
        sel = sel[np.argsort(bins[sel], kind="stable")]
        b = bins[sel]
        w = stride[sel]
        fr = frames[sel]
        fr *= self._win
        pw = np.abs(rfft(fr, axis=1))
        pw *= pw
        starts = np.flatnonzero(np.r_[True, b[1:] != b[:-1]])
        ends = np.r_[starts[1:], b.size]
        uniform = bool(np.all(w == w[0]))
        for s, e in zip(starts.tolist(), ends.tolist()):
            # summed in float64, so the result does not depend on how the frames were cut into blocks
            row = (pw[s:e].sum(axis=0, dtype=np.float64) * float(w[0]) if uniform
                   else w[s:e].astype(np.float64) @ pw[s:e].astype(np.float64))
            self._hist[b[s]] += row
            self._weight[b[s]] += float(w[s:e].sum())
            self._transformed[b[s]] += e - s

    def psd_of(self, mask: np.ndarray) -> Optional[np.ndarray]:
        """One-sided Welch PSD of the frames in the level bins ``mask`` (full-scale units
        squared per Hz), or ``None`` without such frames."""
        fs = self.sample_rate_hz
        n = self.nfft
        wsum = float(self._weight[mask].sum())
        if wsum <= 0:
            return None
        scale = 2.0 / (fs * float(np.sum(self._win.astype(np.float64) ** 2)))
        psd = self._hist[mask].sum(axis=0) * (scale / wsum)
        psd[0] /= 2.0
        if n % 2 == 0:
            psd[-1] /= 2.0
        return _ro(psd)

    def result(self, speech_bins: np.ndarray, pause_bins: np.ndarray) -> SpectrumResult:
        """The long-term spectra so far (does not change the accumulator).

        Parameters
        ----------
        speech_bins, pause_bins : ndarray of bool
            Which frame-level bins hold speech and which pauses
            (:func:`voiceband.measurement.activity.classify_level_bins`).

        The tilt is taken over 300-3000 Hz; :meth:`SpectrumResult.within_passband` narrows it
        to a passband once one is known.
        """
        fs = self.sample_rate_hz
        n = self.nfft
        freqs = np.arange(n // 2 + 1) * fs / n
        speech_psd = self.psd_of(speech_bins)
        noise_psd = self.psd_of(pause_bins)
        bands = third_octave_bands(fs)
        speech_db = noise_db = None
        if speech_psd is not None:
            speech_db = _ro(_levels_db(band_powers(speech_psd, freqs, bands.lower_hz, bands.upper_hz)))
        if noise_psd is not None:
            noise_db = _ro(_levels_db(band_powers(noise_psd, freqs, bands.lower_hz, bands.upper_hz)))

        tilt, tilt_psd, span = _tilt_over(None if speech_db is None else BandLevels(bands, speech_db), TILT_SPAN_HZ)
        return SpectrumResult(
            freqs_hz=_ro(freqs),
            frequency_resolution_hz=fs / n,
            speech_psd_fs2_per_hz=speech_psd,
            noise_psd_fs2_per_hz=noise_psd,
            bands_hz=bands.nominal_hz,
            band_centres_hz=bands.centre_hz,
            speech_band_db=speech_db,
            noise_band_db=noise_db,
            tilt_db_per_octave=tilt,
            tilt_psd_db_per_octave=tilt_psd,
            tilt_span_hz=span,
            speech_frames_transformed=int(self._transformed[speech_bins].sum()),
            noise_frames_transformed=int(self._transformed[pause_bins].sum()),
        )


def _tilt_over(speech: Optional[BandLevels], span_hz) -> tuple[Optional[float], Optional[float], Optional[tuple]]:
    """Band-level tilt, PSD tilt and the span used, or ``None`` for each without speech or span."""
    lo, hi = span_hz
    if speech is None or not lo < hi:
        return None, None, None
    tilt = tilt_db_per_octave(speech, span_hz=(lo, hi))
    tilt_psd = psd_tilt_db_per_octave(speech, span_hz=(lo, hi))
    return tilt, tilt_psd, ((float(lo), float(hi)) if tilt is not None else None)
