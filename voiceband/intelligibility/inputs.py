"""Deriving SII inputs: ANSI S3.5-1997 clause 5.1 (direct measurement or estimation of levels).

The SII engine (:func:`voiceband.intelligibility.sii`) takes *equivalent spectrum levels* in dB per Hz.
These helpers produce them:

* band level <-> spectrum level (band level = spectrum level + bandwidth adjustment, Tables 1-4);
* the standard speech spectrum at a vocal effort and distance, with an insertion gain (Eq. 16);
* an insertion gain applied to measured speech or noise (Eqs. 17 and 18);
* the binaural-listening threshold (clause 5.1.5);
* the free-field-to-eardrum transfer function (Tables 1-4), for levels measured at the eardrum
  (clause 5.3, Eqs. 27 and 28);
* speech and noise levels from a modulation transfer function and the combined speech-and-noise
  spectrum level (clauses 5.2 and 5.3, Eqs. 22-28).
"""

from __future__ import annotations

from typing import Union

import numpy as np

from .. import validate
from ..errors import MeasurementError, SignalValueError
from .tables import (
    BINAURAL_THRESHOLD_ADVANTAGE_DB,
    VOCAL_EFFORTS,
    band_procedure,
)

__all__ = [
    "band_to_spectrum_level",
    "spectrum_to_band_level",
    "overall_level_db",
    "standard_speech_spectrum",
    "apply_insertion_gain",
    "binaural_threshold",
    "eardrum_to_free_field",
    "free_field_to_eardrum",
    "MODULATION_FREQUENCIES_HZ",
    "levels_from_mtf",
]

#: Modulation frequencies of the MTF method, Hz (ANSI S3.5-1997 clause 5.2.3.3).
MODULATION_FREQUENCIES_HZ: tuple[float, ...] = (0.5, 1.0, 1.5, 2.0, 3.0, 4.0, 6.0, 8.0, 16.0)
_APPARENT_SNR_LIMIT_DB = 15.0  # clause 5.2.3.5: apparent SNR limited to +-15 dB

ArrayLike = Union[float, np.ndarray, list, tuple]


def band_to_spectrum_level(band_level_db: ArrayLike, *, procedure: str = "one-third-octave") -> np.ndarray:
    """Spectrum level (dB per Hz) from band level (dB, power in the band).

    Parameters
    ----------
    band_level_db : array_like, shape (..., n_bands)
        Band levels in the procedure's bands.
    procedure : str, keyword-only
        SII procedure (its band widths are used).

    Returns
    -------
    ndarray
        ``band_level_db - delta``, with delta the bandwidth adjustment: Table 3 / Table 4 column
        "bandwidth adjustment" for one-third-octave and octave bands, 10 log10(h - l) for critical bands
        (band limits of Tables 1 and 2).

    Notes
    -----
    The SII's inputs are spectrum levels (ANSI S3.5-1997 clauses 3.6, 3.15). Feeding band levels by
    mistake drops the one-third-octave SII of normal speech in quiet from 0.9958 to 0.9042.
    """
    table = band_procedure(procedure)
    return validate.band_levels_db(band_level_db, name="band_level_db", n_bands=table.n_bands, procedure=procedure) - table.bandwidth_adjustment_db


def spectrum_to_band_level(spectrum_level_db: ArrayLike, *, procedure: str = "one-third-octave") -> np.ndarray:
    """Band level (dB, power in the band) from spectrum level (dB per Hz): the inverse of
    :func:`band_to_spectrum_level` (Tables 1-4)."""
    table = band_procedure(procedure)
    return validate.band_levels_db(spectrum_level_db, name="spectrum_level_db", n_bands=table.n_bands, procedure=procedure) + table.bandwidth_adjustment_db


def overall_level_db(spectrum_level_db: ArrayLike, *, procedure: str = "one-third-octave") -> Union[float, np.ndarray]:
    """Overall level, dB: the power sum of the band levels, 10 log10 sum 10^((E_i + delta_i)/10).

    For the normal-effort standard speech spectrum of Table 3 this is 62.36 dB SPL (the standard states
    62.35 dB SPL).

    Returns
    -------
    float or ndarray
        A float for one spectrum, an array over leading dimensions otherwise; ``-inf`` if every band is
        ``-inf``.
    """
    band = spectrum_to_band_level(spectrum_level_db, procedure=procedure)
    with np.errstate(divide="ignore"):
        total = 10.0 * np.log10(np.sum(10.0 ** (band / 10.0), axis=-1))
    return float(total) if np.ndim(total) == 0 else total


def standard_speech_spectrum(
    vocal_effort: str = "normal",
    *,
    distance_m: float = 1.0,
    insertion_gain_db: ArrayLike = 0.0,
    procedure: str = "one-third-octave",
) -> np.ndarray:
    """Equivalent speech spectrum level of the standard speech spectrum (ANSI S3.5-1997 Eq. 16).

    E' = U(effort) - 20 log10(distance / 1 m) + G, with U from Tables 1-4 (free field, 1 m in front of
    the talker) and G the insertion gain.

    Parameters
    ----------
    vocal_effort : {"normal", "raised", "loud", "shout"}
        Overall levels 62.35, 68.34, 74.85 and 82.30 dB SPL at 1 m.
    distance_m : float, keyword-only
        Talker-to-listener distance, metres (> 0). Inverse-square law.
    insertion_gain_db : float or array_like, keyword-only
        Insertion gain G per band, dB (clause 3.28).
    procedure : str, keyword-only
        SII procedure.

    Returns
    -------
    ndarray, shape (n_bands,) or broadcast with the insertion gain
        Spectrum levels, dB SPL per Hz.

    Raises
    ------
    voiceband.errors.MeasurementError
        Unknown vocal effort or procedure, or a distance that is not positive.
    """
    table = band_procedure(procedure)
    if vocal_effort not in VOCAL_EFFORTS:
        raise MeasurementError(f"vocal_effort must be one of {', '.join(VOCAL_EFFORTS)}; got {vocal_effort!r}.")
    if not (np.isfinite(distance_m) and distance_m > 0):
        raise MeasurementError(f"distance_m must be a positive number of metres; got {distance_m!r}.")
    gain = np.asarray(insertion_gain_db, dtype=np.float64)
    if gain.ndim > 0:
        gain = validate.band_levels_db(gain, name="insertion_gain_db", n_bands=table.n_bands, procedure=procedure)
    elif not np.isfinite(gain):
        raise SignalValueError("insertion_gain_db must be finite dB.")
    return table.speech_spectrum_db[vocal_effort] - 20.0 * np.log10(distance_m) + gain


def apply_insertion_gain(levels_db: ArrayLike, insertion_gain_db: ArrayLike) -> np.ndarray:
    """Levels at the listener after an insertion gain: E' = E + G (Eq. 17), N' = N + G (Eq. 18).

    Parameters
    ----------
    levels_db : array_like, shape (..., n_bands)
        Measured speech or noise spectrum levels at the listener's position, dB per Hz.
    insertion_gain_db : array_like, broadcastable to ``levels_db``
        Insertion gain per band, dB (clause 3.28). ``-inf`` (a band removed entirely) is allowed.

    Returns
    -------
    ndarray
        Equivalent spectrum levels, dB per Hz.
    """
    levels = np.asarray(levels_db, dtype=np.float64)
    gain = np.asarray(insertion_gain_db, dtype=np.float64)
    if np.any(np.isnan(levels)) or np.any(np.isnan(gain)) or np.any(gain == np.inf) or np.any(levels == np.inf):
        raise SignalValueError("levels_db and insertion_gain_db must be finite dB or -inf.")
    try:
        return levels + gain
    except ValueError:
        raise SignalValueError(
            f"levels_db shape {levels.shape} and insertion_gain_db shape {gain.shape} do not broadcast together."
        ) from None


def binaural_threshold(threshold_db: Union[ArrayLike, None] = None, *, procedure: str = "one-third-octave") -> np.ndarray:
    """Equivalent hearing threshold for binaural listening: T' - 1.7 dB (ANSI S3.5-1997 clause 5.1.5).

    Parameters
    ----------
    threshold_db : array_like, shape (..., n_bands), optional
        Monaural equivalent hearing threshold level, dB HL (default 0 dB HL in every band).
    procedure : str, keyword-only
        SII procedure.
    """
    table = band_procedure(procedure)
    base = np.zeros(table.n_bands) if threshold_db is None else validate.band_levels_db(threshold_db, name="threshold_db", n_bands=table.n_bands, procedure=procedure)
    if not np.all(np.isfinite(base)):
        raise SignalValueError("threshold_db must be finite dB HL values.")
    return base - BINAURAL_THRESHOLD_ADVANTAGE_DB


def eardrum_to_free_field(eardrum_level_db: ArrayLike, *, procedure: str = "one-third-octave") -> np.ndarray:
    """Equivalent free-field spectrum level from an eardrum spectrum level (ANSI S3.5-1997 clause 5.3,
    Eqs. 27 and 28): subtract the free-field-to-eardrum transfer function of Tables 1-4.

    Use for speech or noise measured at the eardrum (probe microphone, insert earphones, ear simulator).
    """
    table = band_procedure(procedure)
    return validate.band_levels_db(eardrum_level_db, name="eardrum_level_db", n_bands=table.n_bands, procedure=procedure) - table.free_field_to_eardrum_db


def free_field_to_eardrum(free_field_level_db: ArrayLike, *, procedure: str = "one-third-octave") -> np.ndarray:
    """Eardrum spectrum level from a free-field spectrum level: add the free-field-to-eardrum transfer
    function of Tables 1-4 (the inverse of :func:`eardrum_to_free_field`)."""
    table = band_procedure(procedure)
    return validate.band_levels_db(free_field_level_db, name="free_field_level_db", n_bands=table.n_bands, procedure=procedure) + table.free_field_to_eardrum_db


def levels_from_mtf(
    combined_spectrum_db: ArrayLike,
    mtf: ArrayLike,
    *,
    procedure: str = "one-third-octave",
    at_eardrum: bool = False,
) -> tuple[np.ndarray, np.ndarray]:
    """Equivalent speech and noise spectrum levels from an MTF measurement (ANSI S3.5-1997 clauses 5.2-5.3).

    Per band: apparent SNR = 10 log10(m / (1 - m)) limited to +-15 dB (Eq. 22) and averaged over the
    modulation frequencies (5.2.3.6); E' = SNR + 10 log10(10^(CSNSL/10) / (1 + 10^(SNR/10))) (Eq. 23);
    N' = E' - SNR (Eq. 24). Levels measured at the eardrum (clause 5.3) are moved to the free field by
    subtracting the free-field-to-eardrum transfer function (Eqs. 27 and 28).

    Parameters
    ----------
    combined_spectrum_db : array_like, shape (..., n_bands)
        Combined speech-and-noise spectrum level CSNSL, dB per Hz (clause 3.17).
    mtf : array_like, shape (..., n_bands, n_modulation)
        Modulation transfer function for intensity, 0..1, at the modulation frequencies of
        :data:`MODULATION_FREQUENCIES_HZ` (clause 5.2.3.3; any number of columns is averaged).
    procedure : str, keyword-only
        SII procedure.
    at_eardrum : bool, keyword-only
        True when CSNSL was measured at the eardrum (clause 5.3).

    Returns
    -------
    speech_db, noise_db : ndarray
        Equivalent speech and noise spectrum levels E' and N', dB per Hz.
    """
    table = band_procedure(procedure)
    n = table.n_bands
    csnsl = validate.band_levels_db(combined_spectrum_db, name="combined_spectrum_db", n_bands=n, procedure=procedure)
    if not np.all(np.isfinite(csnsl)):
        raise SignalValueError("combined_spectrum_db must be finite dB values.")
    try:
        m = np.asarray(mtf, dtype=np.float64)
    except (TypeError, ValueError):
        raise SignalValueError("mtf must be numbers between 0 and 1.") from None
    if m.ndim < 2 or m.shape[-2] != n:
        raise SignalValueError(f"mtf must have shape (..., {n}, n_modulation); got {m.shape}.")
    if not np.all(np.isfinite(m)) or np.any(m < 0) or np.any(m > 1):
        raise SignalValueError("mtf values must lie between 0 and 1.")
    with np.errstate(divide="ignore"):
        apparent = 10.0 * np.log10(m) - 10.0 * np.log10(1.0 - m)  # Eq. 22
    apparent = np.clip(apparent, -_APPARENT_SNR_LIMIT_DB, _APPARENT_SNR_LIMIT_DB).mean(axis=-1)
    speech = apparent + csnsl - 10.0 * np.log10(1.0 + 10.0 ** (apparent / 10.0))  # Eq. 23
    noise = speech - apparent  # Eq. 24
    if at_eardrum:
        speech = speech - table.free_field_to_eardrum_db  # Eq. 27
        noise = noise - table.free_field_to_eardrum_db  # Eq. 28
    return speech, noise
