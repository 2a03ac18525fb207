"""Occupied bandwidth (ITU-R SM.328 beta-% method) and estimated passband edges.

Two different questions about how wide a transmit audio signal is:

* :func:`occupied_bandwidth` -- the band outside which lies a stated fraction of the mean
  power (ITU RR No. 1.153, ITU-R SM.328; identical wording in 47 CFR 2.202(a)): by default
  0.5 % below the lower edge and 0.5 % above the upper edge (the "99 % power bandwidth").
  It is a property of the signal, computed from a long-term PSD.
* :func:`passband_edges` -- where the response of the *chain* (microphone, processing,
  filters) falls 10 dB below its passband level.  The chain's response is not directly
  observable in a speech recording; it is estimated as the measured long-term speech
  spectrum minus a published reference long-term speech spectrum
  (:mod:`voiceband.reference_spectra`).  This is common practice when no test signal
  is available; its accuracy is limited by how far the talker's own spectrum departs from
  the reference (a few dB per band between talkers).

Both work on arrays; neither reads files.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from .errors import MeasurementError
from .reference_spectra import REFERENCE_SPECTRA, reference_band_levels_db

__all__ = [
    "OccupiedBandwidth",
    "PassbandEdges",
    "bin_boundaries_hz",
    "cumulative_power",
    "occupied_bandwidth",
    "passband_edges",
]


@dataclass(frozen=True)
class OccupiedBandwidth:
    """Occupied bandwidth of a power spectrum (ITU-R SM.328 beta-% method).

    Attributes
    ----------
    fraction : float
        Fraction of the mean power inside ``[low_hz, high_hz]`` (0.99 by default; the
        remaining ``1 - fraction`` is split equally below and above).
    low_hz, high_hz, width_hz : float
        Lower edge, upper edge and their difference (Hz).
    span_low_hz, span_high_hz : float
        The analysis span over which "total mean power" was taken (Hz).
    """

    fraction: float
    low_hz: float
    high_hz: float
    width_hz: float
    span_low_hz: float
    span_high_hz: float


@dataclass(frozen=True)
class PassbandEdges:
    """Estimated passband edges of the chain that produced a speech recording.

    Attributes
    ----------
    low_hz, high_hz : float or None
        Frequencies (Hz) where the estimated chain response has fallen ``drop_db`` below
        its passband level, interpolated linearly in log frequency between band centres.
        ``None`` when the response does not fall that far inside the analysed bands (the
        edge lies beyond ``lowest_band_hz`` / ``highest_band_hz``) or cannot be estimated.
    passband_level_db : float or None
        Median of the smoothed response over its 6 best bands; dB re the reference
        spectrum, so only differences are meaningful.
    drop_db : float
        The edge criterion (10 dB by default).
    reference : str
        Which reference speech spectrum was used (see :mod:`voiceband.reference_spectra`).
    bands_hz : tuple of float
        Nominal one-third-octave centres used (common to the measurement and the reference).
    response_db : tuple of float
        Smoothed estimated response at ``bands_hz``, dB re ``passband_level_db``.
    lowest_band_hz, highest_band_hz : float or None
        The ends of the analysed range; an edge outside it is reported as ``None``.
    """

    low_hz: Optional[float]
    high_hz: Optional[float]
    passband_level_db: Optional[float]
    drop_db: float
    reference: str
    bands_hz: tuple
    response_db: tuple
    lowest_band_hz: Optional[float]
    highest_band_hz: Optional[float]


def _as_spectrum(psd, freqs_hz) -> tuple[np.ndarray, np.ndarray]:
    p = np.asarray(psd, dtype=float)
    f = np.asarray(freqs_hz, dtype=float)
    if p.ndim != 1 or f.ndim != 1 or p.shape != f.shape:
        raise MeasurementError(
            f"psd and freqs_hz must be 1-D arrays of equal length; got shapes {p.shape} and {f.shape}"
        )
    if p.size < 2:
        raise MeasurementError(f"a spectrum needs at least 2 frequency bins; got {p.size}")
    if not (np.all(np.isfinite(p)) and np.all(np.isfinite(f))):
        raise MeasurementError("psd and freqs_hz must be finite")
    if np.any(p < 0):
        raise MeasurementError("psd must not be negative")
    df = np.diff(f)
    if np.any(df <= 0) or not np.allclose(df, df[0], rtol=1e-6, atol=0):
        raise MeasurementError("freqs_hz must be uniformly spaced and increasing")
    if f[0] < 0:
        raise MeasurementError(f"freqs_hz must not be negative; got {f[0]:g} Hz")
    return p, f


def bin_boundaries_hz(freqs_hz) -> np.ndarray:
    """Boundaries of the intervals that the bins of a uniform one-sided grid stand for.

    Bin ``k`` covers ``[f_k - df/2, f_k + df/2]``; the interval of a bin at 0 Hz is
    clipped to start at 0 Hz (it still carries the bin's whole power).

    Returns
    -------
    ndarray, shape (n + 1,)
    """
    f = np.asarray(freqs_hz, dtype=float)
    df = f[1] - f[0]
    b = np.empty(f.size + 1)
    b[:-1] = f - df / 2
    b[-1] = f[-1] + df / 2
    b[0] = max(b[0], 0.0)
    return b


def cumulative_power(psd, freqs_hz) -> tuple[np.ndarray, np.ndarray]:
    """Cumulative power of a one-sided PSD at the bin boundaries.

    The PSD is taken as constant over each bin's interval (:func:`bin_boundaries_hz`), so
    the cumulative power is piecewise linear in frequency and power between any two
    frequencies follows by linear interpolation ("fractional-bin integration").

    Parameters
    ----------
    psd : array_like, shape (n,)
        One-sided power spectral density (signal units squared per Hz).
    freqs_hz : array_like, shape (n,)
        Uniformly spaced bin frequencies (Hz), starting at or above 0.

    Returns
    -------
    boundaries_hz : ndarray, shape (n + 1,)
    cumulative : ndarray, shape (n + 1,)
        Power below each boundary (signal units squared); ``cumulative[-1]`` is the
        total power ``sum(psd) * df``.
    """
    p, f = _as_spectrum(psd, freqs_hz)
    df = f[1] - f[0]
    b = bin_boundaries_hz(f)
    c = np.concatenate(([0.0], np.cumsum(p * df)))
    return b, c


def occupied_bandwidth(psd, freqs_hz, *, fraction: float = 0.99, span_hz=None) -> OccupiedBandwidth:
    """Occupied bandwidth by the beta-% method.

    The lower edge is the frequency below which lies ``(1 - fraction) / 2`` of the mean
    power in the analysis span, the upper edge the frequency above which lies the same
    share (ITU RR No. 1.153 and ITU-R SM.328; 47 CFR 2.202(a); beta/2 = 0.5 % by default).
    The PSD is integrated with fractional bins (:func:`cumulative_power`), so the edges
    are interpolated inside bins.  Where the cumulative power is flat (bins with zero
    power) the narrowest band is returned.

    Parameters
    ----------
    psd : array_like, shape (n,)
        One-sided PSD, e.g. a Welch estimate with resolution well below the bandwidth
        (1 % of it or finer is usual practice).
    freqs_hz : array_like, shape (n,)
        Uniformly spaced bin frequencies (Hz).
    fraction : float, keyword-only
        Power fraction inside the band, 0 < fraction < 1.
    span_hz : (float, float) or None, keyword-only
        Analysis span ``(low, high)`` in Hz over which total power is taken.  DC, hum and
        out-of-band noise change the answer, so state it.  ``None``: the whole grid.

    Returns
    -------
    OccupiedBandwidth

    Raises
    ------
    MeasurementError
        Bad arrays or options, or no power in the span.

    References
    ----------
    ITU Radio Regulations No. 1.153; Recommendation ITU-R SM.328; 47 CFR 2.202(a).
    """
    fraction = float(fraction)
    if not 0.0 < fraction < 1.0:
        raise MeasurementError(f"fraction must be between 0 and 1 (exclusive); got {fraction:g}")
    b, c = cumulative_power(psd, freqs_hz)
    if span_hz is None:
        lo, hi = float(b[0]), float(b[-1])
    else:
        lo, hi = (float(v) for v in span_hz)
        if not (np.isfinite(lo) and np.isfinite(hi) and lo < hi):
            raise MeasurementError(f"span_hz must be (low, high) with low < high; got {span_hz!r}")
        lo, hi = max(lo, float(b[0])), min(hi, float(b[-1]))
        if lo >= hi:
            raise MeasurementError(
                f"span_hz {span_hz!r} does not overlap the spectrum ({b[0]:g}-{b[-1]:g} Hz)"
            )
    inside = (b > lo) & (b < hi)
    x = np.concatenate(([lo], b[inside], [hi]))
    y = np.interp(x, b, c) - np.interp(lo, b, c)
    total = y[-1]
    if not total > 0:
        raise MeasurementError(f"the spectrum has no power between {lo:g} and {hi:g} Hz")
    tail = (1.0 - fraction) / 2.0 * total
    # Lower edge: the highest frequency with at most `tail` below it.
    i = int(np.searchsorted(y, tail, side="right")) - 1
    i = min(max(i, 0), x.size - 2)
    low = _interp_segment(x, y, i, tail)
    # Upper edge: the lowest frequency with at least `total - tail` below it.
    j = int(np.searchsorted(y, total - tail, side="left"))
    j = min(max(j, 1), x.size - 1)
    high = _interp_segment(x, y, j - 1, total - tail)
    return OccupiedBandwidth(
        fraction=fraction,
        low_hz=float(low),
        high_hz=float(high),
        width_hz=float(high - low),
        span_low_hz=lo,
        span_high_hz=hi,
    )


def _interp_segment(x: np.ndarray, y: np.ndarray, i: int, target: float) -> float:
    dy = y[i + 1] - y[i]
    if dy <= 0:
        return float(x[i])
    t = min(max((target - y[i]) / dy, 0.0), 1.0)
    return float(x[i] + t * (x[i + 1] - x[i]))


#: Bands (two octaves' worth) whose median response is the passband level.
_PASSBAND_BANDS = 6
#: Depth below the response maximum at which the estimated response is floored (dB).
_FLOOR_DB = 30.0


def _exact_centre_hz(nominal_hz: np.ndarray) -> np.ndarray:
    # IEC 61260-1:2014, base-10 one-third-octave bands: exact mid-band 1000 * 10^(x/10) Hz.
    x = np.round(10.0 * np.log10(nominal_hz / 1000.0))
    return 1000.0 * 10.0 ** (x / 10.0)


def passband_edges(
    bands_hz,
    speech_band_db,
    *,
    noise_band_db=None,
    reference: str = "byrne1994",
    drop_db: float = 10.0,
) -> PassbandEdges:
    """Estimate the passband edges of a transmit chain from a long-term speech spectrum.

    Method (common practice when no test signal is available; see trade notes on
    "response from a reference LTASS"):

    1. Speech band power minus pause (noise) band power, where a noise spectrum is given,
       so that the estimate describes the speech that got through rather than the noise
       floor; a band where speech is not above the noise counts as far below the passband.
    2. Estimated response per one-third-octave band = that level minus the reference
       long-term speech spectrum level (:func:`voiceband.reference_spectra.reference_band_levels_db`),
       over the bands both cover.
    3. Response floored at 30 dB below its maximum (so a band with no speech left does not
       drag its neighbours far below the criterion) and smoothed with a (1, 2, 1)/4 kernel
       across adjacent bands.
    4. Passband level = median of the smoothed response over its 6 best bands (two octaves'
       worth: robust to a narrow peak, e.g. a talker's strong fundamental, and still inside
       the flat part of any voice passband).
    5. Starting from the maximum, the first band on each side below passband level minus
       ``drop_db`` marks an edge; the crossing is interpolated linearly in log frequency
       between exact band centres (IEC 61260-1 base-10).

    Limits: a talker's long-term spectrum differs from the reference by a few dB per band,
    which moves a 10 dB edge by roughly that amount divided by the chain's roll-off slope
    (e.g. 3 dB on a 24 dB/octave skirt: an eighth of an octave).  Below the talker's lowest
    fundamental frequency there is little speech energy whatever the chain, so a low edge
    near the talker's F0 may be the talker's, not the chain's; likewise above the highest
    analysed band nothing can be said.

    Parameters
    ----------
    bands_hz : array_like
        Nominal one-third-octave centres (Hz) of ``speech_band_db``.
    speech_band_db : array_like
        Band levels of the speech-active long-term spectrum (dB, e.g. dBFS).
    noise_band_db : array_like or None, keyword-only
        Band levels of the pause spectrum on the same bands, or ``None``.
    reference : {"byrne1994", "ansi_s3.5"}, keyword-only
        Reference long-term speech spectrum.
    drop_db : float, keyword-only
        Edge criterion: dB below the passband level.

    Returns
    -------
    PassbandEdges
        Edges are ``None`` when they cannot be determined (fewer than 5 bands with speech
        above noise, or the response does not fall ``drop_db`` inside the analysed range).

    Raises
    ------
    MeasurementError
        Mismatched arrays, unknown reference, or ``drop_db`` not positive.
    """
    f = np.asarray(bands_hz, dtype=float)
    s = np.asarray(speech_band_db, dtype=float)
    if f.ndim != 1 or s.shape != f.shape:
        raise MeasurementError(
            f"bands_hz and speech_band_db must be 1-D of equal length; got {f.shape} and {s.shape}"
        )
    n = None
    if noise_band_db is not None:
        n = np.asarray(noise_band_db, dtype=float)
        if n.shape != f.shape:
            raise MeasurementError(f"noise_band_db must have the shape of bands_hz {f.shape}; got {n.shape}")
    drop_db = float(drop_db)
    if not drop_db > 0:
        raise MeasurementError(f"drop_db must be positive; got {drop_db:g}")
    if reference not in REFERENCE_SPECTRA:
        raise MeasurementError(f"reference must be one of {', '.join(REFERENCE_SPECTRA)}; got {reference!r}")
    ref_f, ref_db = reference_band_levels_db(reference)

    # Bands common to the measurement and the reference (nominal labels).
    idx_meas, idx_ref = [], []
    for i, fc in enumerate(f):
        k = np.flatnonzero(np.isclose(ref_f, fc, rtol=1e-3))
        if k.size:
            idx_meas.append(i)
            idx_ref.append(int(k[0]))
    empty = PassbandEdges(None, None, None, drop_db, reference, (), (), None, None)
    if len(idx_meas) < 5:
        return empty
    im = np.array(idx_meas)
    common_f = f[im]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        power = 10.0 ** (s[im] / 10.0)
        if n is not None:
            npow = 10.0 ** (n[im] / 10.0)
            power = np.where(np.isfinite(npow), power - npow, power)
        level = np.where(power > 0, 10.0 * np.log10(np.where(power > 0, power, 1.0)), -np.inf)
    resp = level - ref_db[np.array(idx_ref)]
    finite = np.isfinite(resp)
    if np.count_nonzero(finite) < 5:
        return PassbandEdges(
            None, None, None, drop_db, reference, tuple(common_f.tolist()), (), None, None
        )
    top = np.max(resp[finite])
    resp = np.where(finite, np.maximum(resp, top - _FLOOR_DB), top - _FLOOR_DB)
    padded = np.concatenate(([resp[0]], resp, [resp[-1]]))
    smooth = 0.25 * padded[:-2] + 0.5 * padded[1:-1] + 0.25 * padded[2:]
    level_pb = float(np.median(np.sort(smooth)[-_PASSBAND_BANDS:]))
    thr = level_pb - drop_db
    logf = np.log2(_exact_centre_hz(common_f))
    i_max = int(np.argmax(smooth))

    low = None
    for i in range(i_max, 0, -1):
        if smooth[i - 1] < thr:
            low = _crossing_hz(logf[i - 1], logf[i], smooth[i - 1], smooth[i], thr)
            break
    high = None
    for i in range(i_max, common_f.size - 1):
        if smooth[i + 1] < thr:
            high = _crossing_hz(logf[i + 1], logf[i], smooth[i + 1], smooth[i], thr)
            break
    return PassbandEdges(
        low_hz=low,
        high_hz=high,
        passband_level_db=level_pb,
        drop_db=drop_db,
        reference=reference,
        bands_hz=tuple(float(v) for v in common_f),
        response_db=tuple(float(v) for v in smooth - level_pb),
        lowest_band_hz=float(common_f[0]),
        highest_band_hz=float(common_f[-1]),
    )


def _crossing_hz(logf_out: float, logf_in: float, r_out: float, r_in: float, thr: float) -> float:
    # Linear interpolation in log2 frequency between a band below the threshold (out)
    # and its neighbour at or above it (in).
    t = (r_in - thr) / (r_in - r_out)
    return float(2.0 ** (logf_in + t * (logf_out - logf_in)))
