"""SII of speech through a channel with additive noise at a stated channel SNR.

This answers the weak-signal question: with a given transmit filter (band gains), how intelligible is the
speech when the channel adds noise at a stated signal-to-noise ratio in the receive passband? The noise
is placed in the SII bands as an equivalent noise spectrum level N' (ANSI S3.5-1997 clauses 3.15, 4.2)
and the SII follows clause 4.

Definitions used here
---------------------
* **Speech power** -- the average power of the speech as transmitted (after the filter): the power sum
  of its band levels over all SII bands, sum 10^((E'_i + delta_i)/10), with delta the bandwidth
  adjustment of Tables 1-4.
* **Noise power** -- the noise power inside the receive passband ``receive_band_hz`` (a brick-wall
  range). White noise has the same spectrum level at every frequency of the passband and none outside;
  in a band only partly inside the passband its spectrum level is reduced by the fraction of the band
  covered. A given noise shape is defined on the SII bands (relative spectrum levels), limited to the
  passband the same way, and its power is counted inside the SII bands.
* **Channel SNR** -- 10 log10(speech power / noise power).

The receive passband is applied to the noise only: the speech is taken as already shaped by the
transmit filter. To model a receive filter acting on the speech too, add its band gains to the transmit
band gains.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Union

import numpy as np

from .. import validate
from ..errors import MeasurementError, SignalValueError
from .inputs import standard_speech_spectrum
from .sii import SIIResult, sii
from .tables import band_procedure

__all__ = [
    "ChannelSIIPoint",
    "DEFAULT_CHANNEL_SNR_DB",
    "channel_noise_spectrum",
    "channel_sii",
    "sii_vs_channel_snr",
]

ArrayLike = Union[float, np.ndarray, list, tuple]

#: Default grid of channel SNRs for :func:`sii_vs_channel_snr`, dB: -10 to +30 dB in 5 dB steps.
DEFAULT_CHANNEL_SNR_DB: tuple[float, ...] = tuple(float(v) for v in range(-10, 31, 5))


@dataclass(frozen=True)
class ChannelSIIPoint:
    """One point of SII against channel SNR.

    Attributes
    ----------
    snr_db : float
        Channel SNR, dB (speech power over noise power in the receive passband).
    sii : float
        Speech Intelligibility Index at that SNR.
    """

    snr_db: float
    sii: float


def _receive_fraction(receive_band_hz, procedure: str) -> np.ndarray:
    """Fraction of each SII band inside the receive passband (the whole SII range if None)."""
    table = band_procedure(procedure)
    lo, hi = table.lower_hz, table.upper_hz
    if receive_band_hz is None:
        return np.ones(table.n_bands)
    try:
        f1, f2 = (float(v) for v in receive_band_hz)
    except (TypeError, ValueError):
        raise MeasurementError(
            f"receive_band_hz must be a pair (low_hz, high_hz) or None; got {receive_band_hz!r}."
        ) from None
    if not (np.isfinite(f1) and np.isfinite(f2) and 0 <= f1 < f2):
        raise MeasurementError(f"receive_band_hz must satisfy 0 <= low < high; got ({f1:g}, {f2:g}).")
    fraction = np.clip((np.minimum(hi, f2) - np.maximum(lo, f1)) / (hi - lo), 0.0, 1.0)
    if not np.any(fraction > 0):
        raise MeasurementError(
            f"receive_band_hz ({f1:g}-{f2:g} Hz) lies outside the SII bands ({lo[0]:.0f}-{hi[-1]:.0f} Hz)."
        )
    return fraction


def channel_noise_spectrum(
    speech_db: ArrayLike,
    snr_db: ArrayLike,
    *,
    receive_band_hz: Union[tuple[float, float], None] = (300.0, 3000.0),
    noise_shape_db: Union[ArrayLike, None] = None,
    procedure: str = "one-third-octave",
) -> np.ndarray:
    """Noise spectrum levels N' (dB per Hz) that give a stated channel SNR against the given speech.

    Parameters
    ----------
    speech_db : array_like, shape (..., n_bands)
        Speech spectrum levels as transmitted (after the filter), dB per Hz; sets the speech power.
    snr_db : float or array_like
        Channel SNR(s), dB; broadcast against the speech's leading (batch) shape, so a 1-D array of SNRs
        with a single speech spectrum gives one noise spectrum per SNR.
    receive_band_hz : (float, float) or None, keyword-only
        Receive passband, Hz, within which the noise lies and its power is counted (default 300-3000 Hz).
        ``None``: the whole SII range (band limits of the first and last band).
    noise_shape_db : array_like, shape (n_bands,), optional, keyword-only
        Relative noise spectrum levels per band, dB (default: white, 0 dB in every band).
    procedure : str, keyword-only
        SII procedure.

    Returns
    -------
    ndarray
        Equivalent noise spectrum levels, dB per Hz (``-inf`` in bands outside the passband).
    """
    table = band_procedure(procedure)
    n = table.n_bands
    speech = validate.band_levels_db(speech_db, name="speech_db", n_bands=n, procedure=procedure)
    snr = np.asarray(snr_db, dtype=np.float64)
    if not np.all(np.isfinite(snr)):
        raise SignalValueError("snr_db must be finite dB values.")
    fraction = _receive_fraction(receive_band_hz, procedure)
    if noise_shape_db is None:
        shape = np.zeros(n)
    else:
        shape = validate.band_levels_db(noise_shape_db, name="noise_shape_db", n_bands=n, procedure=procedure)
        if shape.ndim != 1:
            raise SignalValueError(f"noise_shape_db must be {n} finite dB values (or -inf); got shape {shape.shape}.")

    width_hz = table.upper_hz - table.lower_hz
    with np.errstate(divide="ignore"):
        speech_power = np.sum(10.0 ** ((speech + table.bandwidth_adjustment_db) / 10.0), axis=-1)
        if not np.all(speech_power > 0):
            raise SignalValueError("speech_db has no power in any band; a channel SNR needs speech.")
        density = 10.0 ** (shape / 10.0) * fraction  # relative noise power per Hz in each band
        if noise_shape_db is None and receive_band_hz is not None:
            f1, f2 = (float(v) for v in receive_band_hz)
            reference_power = f2 - f1  # white noise: the whole passband counts, inside the SII range or not
        else:
            reference_power = float(np.sum(density * width_hz))
        if reference_power <= 0:
            raise SignalValueError("noise_shape_db leaves no noise inside the receive passband.")
        try:
            noise_power = np.asarray(speech_power / 10.0 ** (snr / 10.0))
        except ValueError:
            raise SignalValueError(
                f"snr_db shape {snr.shape} does not broadcast with the speech batch shape {speech.shape[:-1]}."
            ) from None
        level = 10.0 * np.log10(noise_power[..., None] * density / reference_power)
    return level


def _channel_speech(speech_db, band_gains_db, procedure: str) -> np.ndarray:
    table = band_procedure(procedure)
    if speech_db is None:
        speech = standard_speech_spectrum("normal", procedure=procedure)
    else:
        speech = validate.band_levels_db(speech_db, name="speech_db", n_bands=table.n_bands, procedure=procedure)
    if band_gains_db is not None:
        gains = validate.band_levels_db(band_gains_db, name="band_gains_db", n_bands=table.n_bands,
                                        procedure=procedure)
        speech = speech + gains
    return speech


def _combine_noise(channel_noise_db: np.ndarray, extra_noise_db) -> np.ndarray:
    if extra_noise_db is None:
        return channel_noise_db
    extra = np.asarray(extra_noise_db, dtype=np.float64)
    if np.any(np.isnan(extra)) or np.any(extra == np.inf):
        raise SignalValueError("noise_db contains NaN or +inf.")
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(10.0 ** (channel_noise_db / 10.0) + 10.0 ** (extra / 10.0))


def channel_sii(
    snr_db: ArrayLike,
    *,
    speech_db: Union[ArrayLike, None] = None,
    band_gains_db: Union[ArrayLike, None] = None,
    receive_band_hz: Union[tuple[float, float], None] = (300.0, 3000.0),
    noise_shape_db: Union[ArrayLike, None] = None,
    noise_db: Union[ArrayLike, None] = None,
    threshold_db: Union[ArrayLike, None] = None,
    procedure: str = "one-third-octave",
    importance: Union[str, ArrayLike] = "average",
) -> SIIResult:
    """SII of speech after a filter with channel noise at a stated SNR (ANSI S3.5-1997 clause 4).

    Parameters
    ----------
    snr_db : float or array_like
        Channel SNR(s), dB: speech power (after the filter, all SII bands) over noise power in the
        receive passband. An array gives a batch (its shape leads the result's).
    speech_db : array_like, shape (..., n_bands), optional, keyword-only
        Speech spectrum levels before the filter, dB SPL per Hz. Default: the normal-effort standard
        speech spectrum at 1 m (62.35 dB SPL overall; Tables 1-4).
    band_gains_db : array_like, shape (..., n_bands), optional, keyword-only
        Filter band gains, dB (from :func:`voiceband.intelligibility.band_gains_db`).
    receive_band_hz : (float, float) or None, keyword-only
        Receive passband of the noise, Hz (default 300-3000 Hz; None: the whole SII range).
    noise_shape_db : array_like, shape (n_bands,), optional, keyword-only
        Relative spectrum of the channel noise, dB (default white).
    noise_db : array_like, optional, keyword-only
        Noise already present with the speech (for example a recording's own noise), dB per Hz; power-added
        to the channel noise. Default: none.
    threshold_db : array_like, optional, keyword-only
        Equivalent hearing threshold, dB HL (default 0).
    procedure, importance : keyword-only
        As for :func:`voiceband.intelligibility.sii`.

    Returns
    -------
    SIIResult
        ``index`` is a float for a scalar SNR and single speech spectrum.
    """
    speech = _channel_speech(speech_db, band_gains_db, procedure)
    noise = channel_noise_spectrum(
        speech, snr_db, receive_band_hz=receive_band_hz, noise_shape_db=noise_shape_db, procedure=procedure
    )
    noise = _combine_noise(noise, noise_db)
    return sii(speech, noise, threshold_db, procedure=procedure, importance=importance)


def sii_vs_channel_snr(
    snr_db: ArrayLike = DEFAULT_CHANNEL_SNR_DB,
    *,
    speech_db: Union[ArrayLike, None] = None,
    band_gains_db: Union[ArrayLike, None] = None,
    receive_band_hz: Union[tuple[float, float], None] = (300.0, 3000.0),
    noise_shape_db: Union[ArrayLike, None] = None,
    noise_db: Union[ArrayLike, None] = None,
    threshold_db: Union[ArrayLike, None] = None,
    procedure: str = "one-third-octave",
    importance: Union[str, ArrayLike] = "average",
) -> tuple[ChannelSIIPoint, ...]:
    """SII as a function of channel SNR, for one speech spectrum and filter (one batched SII call).

    Parameters are those of :func:`channel_sii`; ``snr_db`` is a 1-D sequence (default -10 to +30 dB in
    5 dB steps) and ``speech_db`` / ``band_gains_db`` describe a single spectrum.

    Returns
    -------
    tuple of ChannelSIIPoint
        One point per SNR, in the given order.
    """
    snr = np.asarray(snr_db, dtype=np.float64)
    if snr.ndim != 1 or snr.size == 0:
        raise SignalValueError(f"snr_db must be a non-empty 1-D sequence of dB values; got shape {snr.shape}.")
    speech = _channel_speech(speech_db, band_gains_db, procedure)
    if speech.ndim != 1:
        raise SignalValueError("sii_vs_channel_snr takes one speech spectrum; use channel_sii for batches.")
    result = channel_sii(
        snr,
        speech_db=speech,
        receive_band_hz=receive_band_hz,
        noise_shape_db=noise_shape_db,
        noise_db=noise_db,
        threshold_db=threshold_db,
        procedure=procedure,
        importance=importance,
    )
    index = np.atleast_1d(result.index)
    return tuple(ChannelSIIPoint(snr_db=float(s), sii=float(v)) for s, v in zip(snr, index))
