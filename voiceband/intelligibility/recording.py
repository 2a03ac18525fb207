"""Intelligibility of a recording from its measured one-third-octave band levels (dBFS).

A recording has no absolute level, but the SII needs dB SPL (ANSI S3.5-1997 clauses 3.6, 4.2). The
mapping used here: scale so that the overall speech level -- the power sum of all the given speech band
levels -- equals a stated presentation level, by default 62.35 dB SPL, the overall level of
normal-effort speech at 1 m (Table 3 / clause 3.40); the noise gets the same offset, so the recording's
own speech-to-noise ratios are kept. Band levels become spectrum levels with the bandwidth adjustments of
Table 3, and the 18 one-third-octave SII bands are taken from the given bands.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import validate
from ..bands import BandLevels
from ..errors import MeasurementError, SignalValueError
from .channel import DEFAULT_CHANNEL_SNR_DB, ChannelSIIPoint, sii_vs_channel_snr
from .sii import sii
from .tables import OVERALL_SPEECH_LEVEL_DB_SPL, band_procedure

__all__ = [
    "RecordingIntelligibility",
    "recording_intelligibility",
    "sii_rating",
    "SII_RATING_THRESHOLDS",
    "SII_RATING_BASIS",
]

#: Lower SII limits of the words used by :func:`sii_rating`, best first.
SII_RATING_THRESHOLDS: tuple[tuple[str, float], ...] = (("good", 0.75), ("fair", 0.45), ("poor", 0.0))

#: Where the rating thresholds come from.
SII_RATING_BASIS: str = (
    "common practice (no single published source): SII of 0.75 or more is rated good, 0.45 up to 0.75 "
    "fair, below 0.45 poor for communication systems; ANSI S3.5-1997 itself defines no rating words"
)

_PROCEDURE = "one-third-octave"
#: Half the spacing of one-third-octave bands in octaves: a given centre matches an SII band centre
#: when it lies within this distance (so 3159 Hz or 3150 Hz both match 3150 Hz).
_MATCH_OCTAVES = 1.0 / 12.0


@dataclass(frozen=True)
class RecordingIntelligibility:
    """SII of a recording's speech against its own pause noise (one-third-octave procedure).

    Attributes
    ----------
    sii : float
        Speech Intelligibility Index (ANSI S3.5-1997 Eq. 14) of the recorded speech and noise at the
        presentation level.
    procedure : str
        ``"one-third-octave"`` (Table 3).
    presentation_level_db_spl : float
        Overall speech level the recording was mapped to, dB SPL.
    band_centres_hz : tuple of float
        The 18 SII band centres, Hz.
    band_audibility : tuple of float
        Band audibility A (Eq. 13), per band.
    band_importance : tuple of float
        Band importance I (Table 3, average speech), per band.
    sii_vs_channel_snr : tuple of ChannelSIIPoint
        SII when white channel noise is added over the whole SII range (141-8913 Hz, the limits of the
        first and last band) at each channel SNR from -10 to +30 dB in 5 dB steps, the SNR referenced to
        the recorded speech power in the SII bands; the recording's own noise is kept (power-added).
        A fixed noise band makes the curve a fixed-noise-density comparison between recordings.
    rating : str
        ``"good"``, ``"fair"`` or ``"poor"`` (see ``rating_basis``).
    rating_basis : str
        Source of the rating thresholds.
    """

    sii: float
    procedure: str
    presentation_level_db_spl: float
    band_centres_hz: tuple[float, ...]
    band_audibility: tuple[float, ...]
    band_importance: tuple[float, ...]
    sii_vs_channel_snr: tuple[ChannelSIIPoint, ...]
    rating: str
    rating_basis: str


def sii_rating(index: float) -> str:
    """Words for an SII value: good (>= 0.75), fair (>= 0.45), poor (below).

    The thresholds are common practice, not from a single published source (see
    :data:`SII_RATING_BASIS`).
    """
    if not np.isfinite(index):
        raise SignalValueError(f"an SII value must be finite; got {index!r}.")
    for word, lower in SII_RATING_THRESHOLDS:
        if index >= lower:
            return word
    return SII_RATING_THRESHOLDS[-1][0]


def _band_levels(levels, name: str) -> BandLevels:
    if not isinstance(levels, BandLevels):
        raise SignalValueError(f"{name} must be BandLevels (voiceband.bands); got {type(levels).__name__}.")
    if np.any(levels.levels_db == np.inf):
        raise SignalValueError(f"{name} contains +inf; use -inf for a band with no power.")
    return levels.as_band()


def _pick_sii_bands(levels: np.ndarray, centres_hz: np.ndarray, sii_centres_hz: np.ndarray) -> np.ndarray:
    """Levels at the SII band centres; -inf where no given centre matches."""
    out = np.full(sii_centres_hz.size, -np.inf)
    distance = np.abs(np.log2(centres_hz[None, :] / sii_centres_hz[:, None]))  # (n_sii, n_given)
    nearest = np.argmin(distance, axis=1)
    matched = distance[np.arange(sii_centres_hz.size), nearest] <= _MATCH_OCTAVES
    out[matched] = levels[nearest[matched]]
    return out


def recording_intelligibility(
    speech: BandLevels,
    noise: "BandLevels | None" = None,
    *,
    presentation_level_db_spl: float = OVERALL_SPEECH_LEVEL_DB_SPL["normal"],
) -> RecordingIntelligibility:
    """SII of a recording from one-third-octave band levels of its speech and pause noise.

    Parameters
    ----------
    speech : BandLevels
        Speech one-third-octave levels, dBFS (band levels; spectrum levels are converted), on any set
        of IEC 61260-1 bands (e.g. 25 Hz to 20 kHz); ``-inf`` for a band with no power. SII bands
        (160-8000 Hz) that are absent count as having no speech and no noise.
    noise : BandLevels or None
        Pause-noise levels, dBFS, on the same bands; ``None`` when no pause noise could be measured
        (the SII then uses the standard's "no noise" default, -50 dB per Hz).
    presentation_level_db_spl : float, keyword-only
        Overall speech level the recording is mapped to, dB SPL (default 62.35, normal effort at 1 m).

    Returns
    -------
    RecordingIntelligibility

    Raises
    ------
    voiceband.errors.SignalValueError
        Not BandLevels, noise on other bands than speech, +inf levels.
    voiceband.errors.MeasurementError
        No speech power in any given band, or no speech in any SII band.

    Notes
    -----
    Mapping (stated because the SII depends on absolute level, ANSI S3.5-1997 clauses 3.6 and 4.2):
    offset = presentation level - 10 log10(sum over all given bands of 10^(speech/10)); speech and noise
    band levels in dB SPL = dBFS + offset; spectrum level = band level - delta (Table 3 bandwidth
    adjustment, 15.65 dB at 160 Hz ... 32.65 dB at 8 kHz); then ANSI S3.5-1997 clause 4 with T' = 0 dB HL
    and the average-speech importance of Table 3.
    """
    speech_bl = _band_levels(speech, "speech")
    centres = np.asarray(speech_bl.nominal_hz, dtype=np.float64)
    validate.number(presentation_level_db_spl, name="presentation_level_db_spl", unit="dB SPL")
    speech = np.asarray(speech_bl.levels_db, dtype=np.float64)
    if noise is not None:
        noise_bl = _band_levels(noise, "noise")
        if noise_bl.nominal_hz.shape != centres.shape or not np.array_equal(noise_bl.nominal_hz, centres):
            raise SignalValueError(
                f"noise must be on the bands of speech ({centres.size} bands); got {noise_bl.nominal_hz.size} bands.")
        noise = np.asarray(noise_bl.levels_db, dtype=np.float64)

    with np.errstate(divide="ignore"):
        speech_total_dbfs = 10.0 * np.log10(np.sum(10.0 ** (speech / 10.0)))
    if not np.isfinite(speech_total_dbfs):
        raise MeasurementError("the speech band levels hold no power, so no presentation level can be set.")
    offset_db = float(presentation_level_db_spl) - speech_total_dbfs

    table = band_procedure(_PROCEDURE)
    speech_spectrum = _pick_sii_bands(speech, centres, table.centres_hz) + offset_db - table.bandwidth_adjustment_db
    if not np.any(np.isfinite(speech_spectrum)):
        raise MeasurementError("the recording has no speech power in the SII bands (160 Hz to 8 kHz).")
    noise_spectrum = (
        None
        if noise is None
        else _pick_sii_bands(noise, centres, table.centres_hz) + offset_db - table.bandwidth_adjustment_db
    )

    result = sii(speech_spectrum, noise_spectrum, procedure=_PROCEDURE)
    curve = sii_vs_channel_snr(
        DEFAULT_CHANNEL_SNR_DB,
        speech_db=speech_spectrum,
        receive_band_hz=None,
        noise_db=noise_spectrum,
        procedure=_PROCEDURE,
    )
    index = float(result.index)
    return RecordingIntelligibility(
        sii=index,
        procedure=_PROCEDURE,
        presentation_level_db_spl=float(presentation_level_db_spl),
        band_centres_hz=tuple(float(v) for v in table.centres_hz),
        band_audibility=tuple(float(v) for v in result.band_audibility),
        band_importance=tuple(float(v) for v in result.band_importance),
        sii_vs_channel_snr=curve,
        rating=sii_rating(index),
        rating_basis=SII_RATING_BASIS,
    )
