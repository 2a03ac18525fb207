"""Published long-term average speech spectra, as one-third-octave band levels.

These are the reference shapes against which a measured speech spectrum is compared to
estimate the response of a transmit chain (:func:`voiceband.bandwidth.passband_edges`).
Only the *shape* matters there, so each table keeps its published absolute level.

Tables
------
``"byrne1994"``
    Byrne, Dillon, Tran et al., "An international comparison of long-term average speech
    spectra", J. Acoust. Soc. Am. 96(4):2108-2120 (1994): the combined male + female
    ("universal") LTASS, one-third-octave band SPL normalised to 70 dB SPL overall,
    63 Hz - 16 kHz (25 bands).  Values as tabulated in HoerTech openMHA
    ``mha/tools/mfiles/LTASS_speech_level_in_frequency_bands.m``, which cites the paper.
``"ansi_s3.5"``
    ANSI S3.5-1997, Table 3: standard speech spectrum level, normal vocal effort
    (dB SPL per Hz at 1 m), 160 Hz - 8 kHz (18 bands), converted to band levels by adding
    the table's own bandwidth adjustment (column "Delta", = 10 log10 of the nominal band width).
    The table itself lives once, in :mod:`voiceband.intelligibility.tables`.
"""

from __future__ import annotations

import numpy as np

from .errors import MeasurementError

__all__ = [
    "BYRNE_1994_BANDS_HZ",
    "BYRNE_1994_LTASS_BAND_DB",
    "REFERENCE_SPECTRA",
    "reference_band_levels_db",
]


def _frozen(values) -> np.ndarray:
    a = np.array(values, dtype=float)
    a.flags.writeable = False
    return a


#: Nominal one-third-octave centres of the Byrne et al. (1994) table (Hz).
BYRNE_1994_BANDS_HZ = _frozen(
    [63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000,
     1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000, 10000, 12500, 16000]
)
#: Byrne et al. (1994) universal LTASS, band level dB SPL at 70 dB SPL overall
#: (J. Acoust. Soc. Am. 96(4):2108-2120; via openMHA LTASS_speech_level_in_frequency_bands.m).
BYRNE_1994_LTASS_BAND_DB = _frozen(
    [38.6, 43.5, 54.4, 57.7, 56.8, 60.2, 60.3, 59.0, 62.1, 62.1, 60.5, 56.8, 53.7,
     53.0, 52.0, 48.7, 48.1, 46.8, 45.6, 44.5, 44.3, 43.7, 43.4, 41.3, 40.7]
)

#: Names accepted by :func:`reference_band_levels_db`.
REFERENCE_SPECTRA = ("byrne1994", "ansi_s3.5")


def reference_band_levels_db(name: str = "byrne1994") -> tuple[np.ndarray, np.ndarray]:
    """One-third-octave band levels of a published long-term speech spectrum.

    Parameters
    ----------
    name : {"byrne1994", "ansi_s3.5"}
        Which table (see the module docstring for the sources).

    Returns
    -------
    bands_hz : ndarray
        Nominal band centres (Hz), ascending, read-only.
    band_db : ndarray
        Band levels (dB SPL in the source's own reference condition), read-only.

    Raises
    ------
    MeasurementError
        ``name`` is not one of :data:`REFERENCE_SPECTRA`.
    """
    if name == "byrne1994":
        return BYRNE_1994_BANDS_HZ, BYRNE_1994_LTASS_BAND_DB
    if name == "ansi_s3.5":
        from .intelligibility.tables import band_procedure

        table = band_procedure("one-third-octave")
        band = _frozen(table.speech_spectrum_db["normal"] + table.bandwidth_adjustment_db)
        return table.centres_hz, band
    raise MeasurementError(f"reference spectrum must be one of {', '.join(REFERENCE_SPECTRA)}; got {name!r}")
