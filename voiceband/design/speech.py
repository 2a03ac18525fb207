"""The speech a design is judged with: SII band spectrum levels and a long-term PSD for occupied bandwidth.

Two models:

* :func:`standard_speech` -- the SII engine's standard speech spectrum (ANSI S3.5-1997 Table 3, normal
  effort, 62.35 dB SPL overall) for the SII, and for the occupied bandwidth (which needs the spectrum
  beyond the SII's 141-8913 Hz) the Byrne et al. (1994) long-term average speech spectrum, 63 Hz-16 kHz,
  interpolated in spectrum level (dB per Hz) against log frequency between one-third-octave centres
  and zero outside its outermost band edges.
* :func:`talker_speech` -- a recording of the user's own voice: the long-term PSD of its speech frames
  (:func:`voiceband.analysis.measure_recording`) gives both, its SII band levels shifted to
  the same 62.35 dB SPL overall so only the talker's spectral shape differs from the standard.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import MeasurementError

__all__ = ["SpeechModel", "PSD_STEP_HZ", "PSD_TOP_HZ", "standard_speech", "talker_speech", "speech_from_psd"]

#: Resolution and top of the linear grid on which occupied bandwidth is computed, Hz.
PSD_STEP_HZ = 10.0
PSD_TOP_HZ = 20000.0


@dataclass(frozen=True)
class SpeechModel:
    """Speech for scoring a design.

    Attributes
    ----------
    name : str
        ``"standard"`` or the recording's file name.
    speech_db : ndarray, shape (21,)
        SII one-third-octave equivalent speech spectrum levels, dB SPL per Hz (62.35 dB SPL overall).
    freqs_hz : ndarray
        Uniform grid 0 ... top, Hz.
    psd : ndarray
        Long-term power per Hz on that grid (relative units), for occupied bandwidth.
    """

    name: str
    speech_db: np.ndarray
    freqs_hz: np.ndarray
    psd: np.ndarray


def _grid(top_hz: float = PSD_TOP_HZ) -> np.ndarray:
    return np.arange(0.0, top_hz + PSD_STEP_HZ / 2, PSD_STEP_HZ)


def standard_speech() -> SpeechModel:
    """The standard speech model (see the module docstring)."""
    from ..intelligibility import standard_speech_spectrum
    from ..reference_spectra import reference_band_levels_db

    spectrum = reference_band_levels_db("byrne1994").as_spectrum()
    lo, hi = spectrum.bands.lower_hz, spectrum.bands.upper_hz
    spectrum_db = spectrum.levels_db
    centres = spectrum.bands.centre_hz
    f = _grid()
    inside = (f >= lo[0]) & (f <= hi[-1])
    level = np.interp(np.log(np.where(f > 0, f, 1.0)), np.log(centres), spectrum_db)
    psd = np.where(inside, 10.0 ** (level / 10.0), 0.0)
    return SpeechModel("standard", np.asarray(standard_speech_spectrum("normal")), f, psd)


def speech_from_psd(name: str, freqs_hz, psd) -> SpeechModel:
    """A speech model from a measured long-term PSD (one-sided, uniform grid)."""
    from ..intelligibility.tables import OVERALL_SPEECH_LEVEL_DB_SPL, band_procedure
    from ..measurement.spectrum import band_powers

    f = np.asarray(freqs_hz, dtype=np.float64)
    p = np.asarray(psd, dtype=np.float64)
    if f.ndim != 1 or f.shape != p.shape or f.size < 16 or not np.all(np.isfinite(p)) or np.any(p < 0):
        raise MeasurementError("the speech PSD must be finite, not negative, on a uniform grid of at least 16 bins.")
    table = band_procedure("one-third-octave")
    nyquist = float(f[-1])
    if nyquist < 4000.0:
        raise MeasurementError(
            f"the speech recording reaches only {nyquist:g} Hz; the SII needs speech up to at least 4 kHz "
            "(record at 8 kHz or more, 16 kHz or more preferably).")
    width = table.upper_hz - table.lower_hz
    complete = table.upper_hz <= nyquist
    power = band_powers(p, f, table.lower_hz, np.minimum(table.upper_hz, nyquist))
    with np.errstate(divide="ignore"):
        level = 10.0 * np.log10(np.maximum(power, 1e-300) / width)
    if not np.all(np.isfinite(level[complete])) or not np.any(power[complete] > 0):
        raise MeasurementError("the speech recording has no power in the SII bands; is it silent?")
    standard = table.speech_spectrum_db["normal"]
    if not np.all(complete):
        # bands beyond the recording's Nyquist frequency: the standard shape, joined at the last complete band
        k = int(np.flatnonzero(complete)[-1])
        level = np.where(complete, level, standard + (level[k] - standard[k]))
    total = 10.0 * np.log10(np.sum(10.0 ** ((level + table.bandwidth_adjustment_db) / 10.0)))
    speech_db = level + (OVERALL_SPEECH_LEVEL_DB_SPL["normal"] - total)
    grid = _grid(min(PSD_TOP_HZ, nyquist))
    psd_grid = np.interp(grid, f, p)
    return SpeechModel(name, speech_db, grid, psd_grid)


def talker_speech(samples, sample_rate_hz: int, *, name: str = "talker") -> SpeechModel:
    """A speech model from a recording of one talker (speech frames only, pauses left out)."""
    from .. import validate
    from ..analysis import measure_recording

    fs = validate.sample_rate_hz(sample_rate_hz)
    x = validate.finite_samples(validate.block(samples))
    spec = measure_recording(x, fs).spectrum
    if spec is None or spec.speech_psd_fs2_per_hz is None:
        raise MeasurementError(
            f"no speech found in '{name}' (too short, silent or steady); record at least a few seconds of speech.")
    return speech_from_psd(name, spec.freqs_hz, spec.speech_psd_fs2_per_hz)
