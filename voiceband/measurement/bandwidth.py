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
  the reference (a few dB per band between talkers).  Vocal effort changes the spectrum's
  shape far more than that (ANSI S3.5-1997 Table 3), so with ``reference="auto"`` the
  reference is the Table 3 spectrum at the effort fitted to the measured spectrum's shape
  in its central bands (:func:`fit_vocal_effort`; this module's method, built on the
  common-practice reference-LTASS comparison).

Both work on arrays; neither reads files.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..arrays import median
from ..bands import BandLevels, exact_centre_hz
from ..errors import MeasurementError
from ..reference_spectra import REFERENCE_SPECTRA, effort_band_levels_db, reference_band_levels_db

__all__ = [
    "OccupiedBandwidth",
    "EFFORT_FIT_SPAN_HZ",
    "PASSBAND_LEVEL_SPAN_HZ",
    "PassbandEdges",
    "VocalEffortFit",
    "bin_boundaries_hz",
    "cumulative_power",
    "fit_vocal_effort",
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
        Median of the smoothed response over its 6 best bands centred 250-4000 Hz
        (:data:`PASSBAND_LEVEL_SPAN_HZ`); dB re the reference
        spectrum, so only differences are meaningful.
    drop_db : float
        The edge criterion (10 dB by default).
    reference : str
        Which reference speech spectrum was used (see :mod:`voiceband.reference_spectra`):
        a name from ``REFERENCE_SPECTRA``, or for ``reference="auto"`` the fitted ANSI
        S3.5-1997 effort, e.g. ``"ansi_s3.5_loud (fitted)"`` or
        ``"ansi_s3.5 60 % raised + 40 % loud effort (fitted)"``.
    bands_hz : tuple of float
        Nominal one-third-octave centres used (common to the measurement and the reference).
    response_db : tuple of float
        Smoothed estimated response at ``bands_hz``, dB re ``passband_level_db``.
    lowest_band_hz, highest_band_hz : float or None
        The ends of the analysed range; an edge outside it is reported as ``None``.
    effort_index : float or None
        With ``reference="auto"``: the fitted vocal effort, 0 (normal) ... 3 (shout) on the
        ANSI S3.5-1997 Table 3 scale (:class:`VocalEffortFit`); otherwise ``None``.
    effort_fit_rms_db : float or None
        With ``reference="auto"``: RMS shape residual of that fit (dB); otherwise ``None``.
    effort_fit_bands_hz : tuple of float
        With ``reference="auto"``: nominal centres of the bands the effort was fitted on;
        otherwise empty.
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
    effort_index: Optional[float] = None
    effort_fit_rms_db: Optional[float] = None
    effort_fit_bands_hz: tuple = ()


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

    Examples
    --------
    A flat spectrum 0-4 kHz (1 Hz bins) keeps 0.5 % of its power (20 Hz worth) below the
    lower edge and 0.5 % above the upper edge:

    >>> import numpy as np
    >>> f = np.arange(0, 4001.0)
    >>> obw = occupied_bandwidth(np.ones(f.size), f)
    >>> round(obw.low_hz, 2), round(obw.high_hz, 2)
    (19.51, 3980.49)
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
#: Band centres (Hz, inclusive) among which the passband level is taken and the edge search
#: starts: the voice band that every voice transmit passband overlaps.  Noise that rides on
#: the speech frames outside it (static crashes, hiss above 4 kHz, rumble) then cannot
#: set the passband level.
PASSBAND_LEVEL_SPAN_HZ = (250.0, 4000.0)
#: Depth below the response maximum at which the estimated response is floored (dB).
_FLOOR_DB = 30.0
#: Nominal band centres (Hz, inclusive) over which ``reference="auto"`` fits the vocal effort:
#: the middle of every voice passband, clear of the skirts of a 300-2700 Hz SSB filter (a
#: 4th-order Butterworth band-pass 300-2700 Hz takes 1.7 dB off the 2500 Hz band of white
#: noise, 0.15 dB off the 2000 Hz band).
EFFORT_FIT_SPAN_HZ = (500.0, 2000.0)
#: Fewest bands with speech above noise inside the fit span for an effort fit.
_MIN_FIT_BANDS = 4
#: Most effort fits made by ``reference="auto"`` (the first, then narrowed spans).
_MAX_FIT_PASSES = 4
#: Frequency ratios (an octave, else two thirds of one) by which a narrowed effort-fit span
#: keeps clear of an estimated edge; a 4th-order Butterworth skirt, |H|^2 = 1/(1 + (fc/f)^8),
#: takes 0.15 dB an octave inside its -10 dB point and 0.9 dB two thirds of an octave inside.
_EDGE_CLEARANCES = (2.0, 2.0 ** (2.0 / 3.0))
#: Reference used by ``reference="auto"`` when the effort cannot be fitted.
_FALLBACK_REFERENCE = "byrne1994"


@dataclass(frozen=True)
class VocalEffortFit:
    """The vocal effort whose standard speech spectrum best matches a measured spectrum's shape.

    Attributes
    ----------
    effort_index : float
        Position on the effort scale 0 (normal), 1 (raised), 2 (loud), 3 (shout) of ANSI
        S3.5-1997 Table 3; between two integers the reference is interpolated in dB
        (:func:`voiceband.reference_spectra.effort_band_levels_db`).
    nearest_effort : str
        The tabulated effort nearest ``effort_index``.
    residual_rms_db : float
        RMS of the measured-minus-reference band levels over ``bands_hz`` after removing
        their mean (dB): how well the shape fits.
    bands_hz : tuple of float
        Nominal centres of the bands used for the fit.
    """

    effort_index: float
    nearest_effort: str
    residual_rms_db: float
    bands_hz: tuple


def _check_levels(speech, noise) -> tuple[np.ndarray, np.ndarray, Optional[np.ndarray]]:
    # Nominal centres, speech band levels and noise band levels (or None) as arrays.
    if not isinstance(speech, BandLevels):
        raise MeasurementError(f"speech must be BandLevels (voiceband.bands); got {type(speech).__name__}")
    sp = speech.as_band()
    f = np.asarray(sp.nominal_hz, dtype=float)
    n = None
    if noise is not None:
        if not isinstance(noise, BandLevels):
            raise MeasurementError(f"noise must be BandLevels (voiceband.bands) or None; got {type(noise).__name__}")
        nb = noise.as_band()
        if nb.nominal_hz.shape != f.shape or not np.allclose(nb.nominal_hz, f, rtol=1e-3):
            raise MeasurementError(
                f"noise must be on the bands of speech ({f.size} bands); got {nb.nominal_hz.size} bands")
        n = np.asarray(nb.levels_db, dtype=float)
    return f, np.asarray(sp.levels_db, dtype=float), n


def _speech_minus_noise_db(s: np.ndarray, n: Optional[np.ndarray]) -> np.ndarray:
    # Band power of speech minus that of the pauses; -inf where speech is not above noise.
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        power = 10.0 ** (s / 10.0)
        if n is not None:
            npow = 10.0 ** (n / 10.0)
            power = np.where(np.isfinite(npow), power - npow, power)
        return np.where(power > 0, 10.0 * np.log10(np.where(power > 0, power, 1.0)), -np.inf)


def _common_bands(f: np.ndarray, ref_f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    # Indices of the bands common to the measurement and a reference (nominal labels).
    idx_meas, idx_ref = [], []
    for i, fc in enumerate(f):
        k = np.flatnonzero(np.isclose(ref_f, fc, rtol=1e-3))
        if k.size:
            idx_meas.append(i)
            idx_ref.append(int(k[0]))
    return np.array(idx_meas, dtype=int), np.array(idx_ref, dtype=int)


def _fit_effort(f, level_db, span_hz) -> Optional[VocalEffortFit]:
    from ..intelligibility.tables import VOCAL_EFFORTS

    lo, hi = span_hz
    refs = [effort_band_levels_db(e) for e in VOCAL_EFFORTS]
    im, ir = _common_bands(f, refs[0].nominal_hz)
    if im.size == 0:
        return None
    fb = f[im]
    use = (fb >= lo * (1 - 1e-3)) & (fb <= hi * (1 + 1e-3)) & np.isfinite(level_db[im])
    if np.count_nonzero(use) < _MIN_FIT_BANDS:
        return None
    m = level_db[im][use]
    r = np.array([ref.levels_db[ir][use] for ref in refs])
    best = None
    # The reference is piecewise linear in the effort index, so its least-squares shape fit
    # (mean removed) is a one-parameter linear regression on each segment [k, k + 1].
    for k in range(len(VOCAL_EFFORTS) - 1):
        y = m - r[k]
        g = r[k + 1] - r[k]
        y = y - y.mean()
        g = g - g.mean()
        gg = float(g @ g)
        w = min(max(float(y @ g) / gg, 0.0), 1.0) if gg > 0 else 0.0
        rms = float(np.sqrt(np.mean((y - w * g) ** 2)))
        if best is None or rms < best[1] - 1e-12:
            best = (k + w, rms)
    x, rms = best
    return VocalEffortFit(
        effort_index=float(x),
        nearest_effort=VOCAL_EFFORTS[int(round(x))],
        residual_rms_db=rms,
        bands_hz=tuple(float(v) for v in fb[use]),
    )


def fit_vocal_effort(
    speech: BandLevels,
    *,
    noise: Optional[BandLevels] = None,
    span_hz=EFFORT_FIT_SPAN_HZ,
) -> Optional[VocalEffortFit]:
    """Fit the vocal effort of a long-term speech spectrum by the shape of its central bands.

    The measured band levels (speech minus pause power where a noise spectrum is given) are
    compared with the ANSI S3.5-1997 Table 3 standard speech spectrum (band level = spectrum
    level + Delta) at every effort on the continuous scale 0 (normal) ... 3 (shout),
    interpolated linearly in dB between tabulated efforts; the effort minimising the RMS of
    the difference after removing its mean (a least-squares fit of shape, not of level) over
    the bands inside ``span_hz`` is returned.  The bands of 500-2000 Hz carry the effort's
    tilt (ANSI S3.5-1997 Table 3 spectrum levels regressed on log2 f over 500-4000 Hz:
    -8.6 / -8.0 / -7.1 / -5.5 dB/octave for normal / raised / loud / shout) and lie inside any voice passband.

    Limits: a chain whose response tilts across the fit span (pre-emphasis, a rising SSB
    transmit response) is indistinguishable here from a change of vocal effort: 6 dB/octave
    of pre-emphasis on normal speech fits as a shout or beyond (clipped to 3).  The
    effort-interpolation is this module's choice; the standard tabulates four efforts.

    Parameters
    ----------
    speech : BandLevels
        One-third-octave levels of the speech-active long-term spectrum (band levels, dB;
        spectrum levels are converted).
    noise : BandLevels or None, keyword-only
        Levels of the pause spectrum on the same bands, or ``None``.
    span_hz : (float, float), keyword-only
        Lowest and highest nominal band centre (Hz, inclusive) used for the fit.

    Returns
    -------
    VocalEffortFit or None
        ``None`` when fewer than 4 bands inside ``span_hz`` have speech above noise.

    Raises
    ------
    MeasurementError
        Mismatched arrays or a bad ``span_hz``.

    References
    ----------
    ANSI S3.5-1997, Table 3 (standard speech spectrum levels for normal, raised, loud and
    shouted vocal effort).
    """
    f, s, n = _check_levels(speech, noise)
    lo, hi = _check_span(span_hz)
    return _fit_effort(f, _speech_minus_noise_db(s, n), (lo, hi))


def _check_span(span_hz) -> tuple[float, float]:
    try:
        lo, hi = (float(v) for v in span_hz)
    except (TypeError, ValueError):
        raise MeasurementError(f"span_hz must be (low, high) in Hz; got {span_hz!r}") from None
    if not (np.isfinite(lo) and np.isfinite(hi) and 0 < lo < hi):
        raise MeasurementError(f"span_hz must be (low, high) with 0 < low < high; got {span_hz!r}")
    return lo, hi


def _effort_label(x: float) -> str:
    # Human-readable name of a point on the effort scale, to 10 % steps.
    from ..intelligibility.tables import VOCAL_EFFORTS

    k = min(int(np.floor(x)), len(VOCAL_EFFORTS) - 2)
    w = np.floor((x - k) * 10.0 + 0.5) / 10.0
    if w <= 0.0:
        return f"ansi_s3.5_{VOCAL_EFFORTS[k]} (fitted)"
    if w >= 1.0:
        return f"ansi_s3.5_{VOCAL_EFFORTS[k + 1]} (fitted)"
    return (
        f"ansi_s3.5 {100 * (1 - w):.0f} % {VOCAL_EFFORTS[k]} + {100 * w:.0f} % {VOCAL_EFFORTS[k + 1]} effort (fitted)"
    )


def passband_edges(
    speech: BandLevels,
    *,
    noise: Optional[BandLevels] = None,
    reference: str = "byrne1994",
    drop_db: float = 10.0,
    effort_fit_span_hz=EFFORT_FIT_SPAN_HZ,
) -> PassbandEdges:
    """Estimate the passband edges of a transmit chain from a long-term speech spectrum.

    Method (common practice when no test signal is available: the measured long-term
    spectrum against a reference long-term speech spectrum):

    1. Speech band power minus pause (noise) band power, where a noise spectrum is given,
       so that the estimate describes the speech that got through rather than the noise
       floor; a band where speech is not above the noise counts as far below the passband.
    2. Estimated response per one-third-octave band = that level minus the reference
       long-term speech spectrum level (:func:`voiceband.reference_spectra.reference_band_levels_db`),
       over the bands both cover.  With ``reference="auto"`` the reference is the ANSI
       S3.5-1997 Table 3 spectrum (extended to 63 Hz - 16 kHz,
       :func:`voiceband.reference_spectra.effort_band_levels_db`) at the vocal effort that
       best fits the shape of the measured spectrum over ``effort_fit_span_hz``
       (:func:`fit_vocal_effort`); louder speech is much flatter (Table 3: relative to
       its 1-2 kHz bands, loud speech lies 10.5 dB and shouted speech 19 dB lower at 250 Hz
       than normal speech), so a normal-effort reference makes a loud talker look
       high-passed.  Where no effort can be
       fitted (fewer than 4 bands with speech in the span) it falls back to ``"byrne1994"``.
    3. Response floored at 30 dB below its maximum (so a band with no speech left does not
       drag its neighbours far below the criterion) and smoothed with a (1, 2, 1)/4 kernel
       across adjacent bands.
    4. Passband level = median of the smoothed response over its 6 best bands (two octaves'
       worth: robust to a narrow peak, e.g. a talker's strong fundamental, and still inside
       the flat part of any voice passband) among the bands centred 250-4000 Hz
       (:data:`PASSBAND_LEVEL_SPAN_HZ`; all bands when fewer than 6 lie there), so that
       noise riding on the speech frames outside the voice band -- static crashes, hiss --
       cannot set it.
    5. Starting from the maximum in that span, the first band on each side below passband level minus
       ``drop_db`` marks an edge; the crossing is interpolated linearly in log frequency
       between exact band centres (IEC 61260-1 base-10).

    Limits: a talker's long-term spectrum differs from the reference by a few dB per band,
    which moves a 10 dB edge by roughly that amount divided by the chain's roll-off slope
    (e.g. 3 dB on a 24 dB/octave skirt: an eighth of an octave).  Below the talker's lowest
    fundamental frequency there is little speech energy whatever the chain, so a low edge
    near the talker's F0 may be the talker's, not the chain's; likewise above the highest
    analysed band nothing can be said.  With ``"auto"``, a chain that tilts the spectrum
    inside the fit span is taken for a change of vocal effort, so its tilt is not seen and
    its edges are judged against the flattened reference.

    Parameters
    ----------
    speech : BandLevels
        One-third-octave levels of the speech-active long-term spectrum (band levels, dB,
        e.g. dBFS; spectrum levels are converted).
    noise : BandLevels or None, keyword-only
        Levels of the pause spectrum on the same bands, or ``None``.
    reference : str, keyword-only
        ``"auto"`` (vocal effort fitted), or a name from
        :data:`voiceband.reference_spectra.REFERENCE_SPECTRA`: ``"byrne1994"`` (default),
        ``"ansi_s3.5"``, ``"ansi_s3.5_normal"``, ``"ansi_s3.5_raised"``, ``"ansi_s3.5_loud"``,
        ``"ansi_s3.5_shout"``.
    drop_db : float, keyword-only
        Edge criterion: dB below the passband level.
    effort_fit_span_hz : (float, float), keyword-only
        Band-centre span (Hz, inclusive) of the effort fit; used only with ``"auto"``.

    Returns
    -------
    PassbandEdges
        Edges are ``None`` when they cannot be determined (fewer than 5 bands with speech
        above noise, or the response does not fall ``drop_db`` inside the analysed range).
        ``reference`` names the spectrum used; with ``"auto"`` it reads e.g.
        ``"ansi_s3.5_loud (fitted)"`` and ``effort_index`` / ``effort_fit_rms_db`` are set.

    Raises
    ------
    MeasurementError
        Mismatched arrays, unknown reference, ``drop_db`` not positive, or a bad
        ``effort_fit_span_hz``.

    Examples
    --------
    The Byrne et al. (1994) spectrum 40 dB down, with the bands below 300 Hz a further 20 dB
    down (a high-pass chain), against that same reference:

    >>> import numpy as np
    >>> from voiceband.bands import BandLevels
    >>> from voiceband.reference_spectra import reference_band_levels_db
    >>> ref = reference_band_levels_db("byrne1994")
    >>> cut = np.where(ref.nominal_hz < 300, -20.0, 0.0)
    >>> e = passband_edges(BandLevels(ref.bands, ref.levels_db - 40.0 + cut))
    >>> round(e.low_hz), e.high_hz, e.passband_level_db
    (282, None, -40.0)
    """
    f, s, n = _check_levels(speech, noise)
    drop_db = float(drop_db)
    if not drop_db > 0:
        raise MeasurementError(f"drop_db must be positive; got {drop_db:g}")
    if reference != "auto" and reference not in REFERENCE_SPECTRA:
        raise MeasurementError(
            f"reference must be one of auto, {', '.join(REFERENCE_SPECTRA)}; got {reference!r}"
        )
    level_all = _speech_minus_noise_db(s, n)
    if reference != "auto":
        return _edges_against(f, level_all, reference_band_levels_db(reference), reference, drop_db, {})
    span = _check_span(effort_fit_span_hz)
    fit = _fit_effort(f, level_all, span)
    if fit is None:
        return _edges_against(f, level_all, reference_band_levels_db(_FALLBACK_REFERENCE), _FALLBACK_REFERENCE,
                              drop_db, {})
    # Where the chain's skirts reach into the fit span they tilt it and bias the effort, so
    # the span is narrowed to an octave (or, if that leaves too few bands, two thirds of an
    # octave) inside the edges just found and the fit repeated, a few times at most: the
    # span only ever shrinks.
    for _ in range(_MAX_FIT_PASSES):
        edges = _edges_against(
            f,
            level_all,
            effort_band_levels_db(fit.effort_index),
            _effort_label(fit.effort_index),
            drop_db,
            {
                "effort_index": fit.effort_index,
                "effort_fit_rms_db": fit.residual_rms_db,
                "effort_fit_bands_hz": fit.bands_hz,
            },
        )
        narrower = None
        for clearance in _EDGE_CLEARANCES:
            lo, hi = span
            if edges.low_hz is not None:
                lo = max(lo, clearance * edges.low_hz)
            if edges.high_hz is not None:
                hi = min(hi, edges.high_hz / clearance)
            narrower = _fit_effort(f, level_all, (lo, hi)) if lo < hi else None
            if narrower is not None:
                break
        if narrower is None or narrower.bands_hz == fit.bands_hz:
            break
        span, fit = (lo, hi), narrower
    return edges


def _edges_against(f, level_all, ref: BandLevels, label, drop_db, extra) -> PassbandEdges:
    # Steps 2-5 of passband_edges against one reference spectrum.
    ref_db = ref.levels_db
    im, ir = _common_bands(f, ref.nominal_hz)
    if im.size < 5:
        return PassbandEdges(None, None, None, drop_db, label, (), (), None, None, **extra)
    common_f = f[im]
    level = level_all[im]
    resp = level - ref_db[ir]
    finite = np.isfinite(resp)
    if np.count_nonzero(finite) < 5:
        return PassbandEdges(
            None, None, None, drop_db, label, tuple(common_f.tolist()), (), None, None, **extra
        )
    top = np.max(resp[finite])
    resp = np.where(finite, np.maximum(resp, top - _FLOOR_DB), top - _FLOOR_DB)
    padded = np.concatenate(([resp[0]], resp, [resp[-1]]))
    smooth = 0.25 * padded[:-2] + 0.5 * padded[1:-1] + 0.25 * padded[2:]
    lo_pb, hi_pb = PASSBAND_LEVEL_SPAN_HZ
    in_span = (common_f >= lo_pb * (1 - 1e-3)) & (common_f <= hi_pb * (1 + 1e-3))
    if np.count_nonzero(in_span) < _PASSBAND_BANDS:
        in_span = np.ones(common_f.size, dtype=bool)
    level_pb = float(median(np.sort(smooth[in_span])[-_PASSBAND_BANDS:]))
    thr = level_pb - drop_db
    logf = np.log2(exact_centre_hz(common_f))
    i_max = int(np.flatnonzero(in_span)[np.argmax(smooth[in_span])])

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
        reference=label,
        bands_hz=tuple(float(v) for v in common_f),
        response_db=tuple(float(v) for v in smooth - level_pb),
        lowest_band_hz=float(common_f[0]),
        highest_band_hz=float(common_f[-1]),
        **extra,
    )


def _crossing_hz(logf_out: float, logf_in: float, r_out: float, r_in: float, thr: float) -> float:
    # Linear interpolation in log2 frequency between a band below the threshold (out)
    # and its neighbour at or above it (in).
    t = (r_in - thr) / (r_in - r_out)
    return float(2.0 ** (logf_in + t * (logf_out - logf_in)))
