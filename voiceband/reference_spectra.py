"""Published long-term average speech spectra, as one-third-octave band levels.

These are the reference shapes against which a measured speech spectrum is compared to
estimate the response of a transmit chain (:func:`voiceband.measurement.bandwidth.passband_edges`).
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
``"ansi_s3.5_normal"``, ``"ansi_s3.5_raised"``, ``"ansi_s3.5_loud"``, ``"ansi_s3.5_shout"``
    ANSI S3.5-1997 Table 3 for each vocal effort (spectrum level plus Delta, as above) over
    160 Hz - 8 kHz, *extended* to the Byrne et al. (1994) bands 63 Hz - 16 kHz by the Byrne
    shape: below 160 Hz a band is the effort's 160 Hz level plus the Byrne level difference
    between that band and 160 Hz, above 8 kHz likewise from 8 kHz
    (:func:`effort_band_levels_db`).  The extension is this module's choice, not a published
    table: the standard says nothing outside 160-8000 Hz, and the Byrne shape is the only
    published long-term shape at hand there (it describes normal effort, so the extended
    bands of the louder efforts are the least certain values here).

Vocal effort
------------
Louder speech has a flatter spectrum: relative to their 1-2 kHz bands, the Table 3 spectra
for raised, loud and shouted speech lie 4.3, 10.5 and 19.1 dB lower at 250 Hz than the
normal one, and the shout spectrum's 500-4000 Hz tilt is -5.5 instead of -8.6 dB/octave
(spectrum levels; linear regression of the Table 3 levels on log2 f, computed here).  A reference of the wrong
effort therefore reads as a tilted chain response.  :func:`effort_band_levels_db` also takes
a number on the effort scale 0 (normal), 1 (raised), 2 (loud), 3 (shout) and interpolates
linearly in dB between the two neighbouring tabulated efforts (this module's choice: the
standard tabulates four efforts only).
"""

from __future__ import annotations

import numpy as np

from .bands import BandLevels, bands_for_nominal
from .errors import MeasurementError

__all__ = [
    "BYRNE_1994_BANDS_HZ",
    "BYRNE_1994_LTASS_BAND_DB",
    "EFFORT_REFERENCES",
    "REFERENCE_SPECTRA",
    "effort_band_levels_db",
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

#: Names of the extended effort spectra, in order of rising vocal effort (effort index 0-3);
#: the suffixes are the efforts of ANSI S3.5-1997 Table 3
#: (:data:`voiceband.intelligibility.tables.VOCAL_EFFORTS`).
EFFORT_REFERENCES = ("ansi_s3.5_normal", "ansi_s3.5_raised", "ansi_s3.5_loud", "ansi_s3.5_shout")

#: Names accepted by :func:`reference_band_levels_db`.
REFERENCE_SPECTRA = ("byrne1994", "ansi_s3.5") + EFFORT_REFERENCES

_EFFORT_TABLE = None


def _effort_table() -> np.ndarray:
    """Extended band levels of the four efforts, shape (4, 25), read-only (built once)."""
    global _EFFORT_TABLE
    if _EFFORT_TABLE is None:
        from .intelligibility.tables import VOCAL_EFFORTS, band_procedure

        table = band_procedure("one-third-octave")
        centres = np.asarray(table.centres_hz, dtype=float)
        # Positions of the Table 3 bands inside the Byrne band list (same nominal labels).
        pos = np.array([int(np.flatnonzero(BYRNE_1994_BANDS_HZ == fc)[0]) for fc in centres])
        rows = []
        for effort in VOCAL_EFFORTS:
            ansi = np.asarray(table.speech_spectrum_db[effort]) + np.asarray(table.bandwidth_adjustment_db)
            row = np.empty(BYRNE_1994_BANDS_HZ.size)
            row[pos] = ansi
            below = np.arange(pos[0])
            above = np.arange(pos[-1] + 1, BYRNE_1994_BANDS_HZ.size)
            row[below] = ansi[0] + BYRNE_1994_LTASS_BAND_DB[below] - BYRNE_1994_LTASS_BAND_DB[pos[0]]
            row[above] = ansi[-1] + BYRNE_1994_LTASS_BAND_DB[above] - BYRNE_1994_LTASS_BAND_DB[pos[-1]]
            rows.append(row)
        _EFFORT_TABLE = _frozen(rows)
    return _EFFORT_TABLE


def _levels(nominal_hz, band_db) -> BandLevels:
    return BandLevels(bands_for_nominal(nominal_hz), band_db, "band")


def effort_band_levels_db(effort) -> BandLevels:
    """ANSI S3.5-1997 Table 3 speech band levels at a vocal effort, extended to 63 Hz - 16 kHz.

    Table 3 spectrum level plus its bandwidth adjustment Delta at 160-8000 Hz; outside that
    range the Byrne et al. (1994) LTASS shape, joined at 160 Hz and at 8 kHz (see the module
    docstring).

    Parameters
    ----------
    effort : str or float
        One of ``"normal"``, ``"raised"``, ``"loud"``, ``"shout"``
        (:data:`voiceband.intelligibility.tables.VOCAL_EFFORTS`), or a number on the effort
        scale 0 (normal) ... 3 (shout): between two tabulated efforts the band levels are
        interpolated linearly in dB.

    Returns
    -------
    BandLevels
        Band levels (kind ``"band"``), dB SPL at 1 m (ANSI S3.5-1997 clause 3.40
        condition), on the nominal centres 63 ... 16000 Hz (the Byrne et al. 1994 bands).

    Examples
    --------
    >>> loud = effort_band_levels_db("loud")
    >>> float(loud.nominal_hz[0]), float(loud.nominal_hz[-1])
    (63.0, 16000.0)

    Raises
    ------
    MeasurementError
        ``effort`` is neither a tabulated effort nor a number from 0 to 3.

    References
    ----------
    ANSI S3.5-1997, Table 3; Byrne et al., J. Acoust. Soc. Am. 96(4):2108-2120 (1994).
    """
    from .intelligibility.tables import VOCAL_EFFORTS

    table = _effort_table()
    if isinstance(effort, str):
        if effort not in VOCAL_EFFORTS:
            raise MeasurementError(
                f"effort must be one of {', '.join(VOCAL_EFFORTS)} or a number from 0 to 3; got {effort!r}"
            )
        return _levels(BYRNE_1994_BANDS_HZ, table[VOCAL_EFFORTS.index(effort)])
    try:
        x = float(effort)
    except (TypeError, ValueError):
        x = float("nan")
    if not 0.0 <= x <= len(VOCAL_EFFORTS) - 1:
        raise MeasurementError(
            f"effort must be one of {', '.join(VOCAL_EFFORTS)} or a number from 0 to 3; got {effort!r}"
        )
    k = min(int(np.floor(x)), len(VOCAL_EFFORTS) - 2)
    w = x - k
    return _levels(BYRNE_1994_BANDS_HZ, (1.0 - w) * table[k] + w * table[k + 1])


def reference_band_levels_db(name: str = "byrne1994") -> BandLevels:
    """One-third-octave band levels of a published long-term speech spectrum.

    Parameters
    ----------
    name : {"byrne1994", "ansi_s3.5", "ansi_s3.5_normal", "ansi_s3.5_raised", "ansi_s3.5_loud", "ansi_s3.5_shout"}
        Which table (see the module docstring for the sources).  ``"ansi_s3.5"`` is Table 3
        at normal effort over 160-8000 Hz only; the effort-suffixed names are the extended
        spectra of :func:`effort_band_levels_db`.

    Returns
    -------
    BandLevels
        Band levels (kind ``"band"``; dB SPL in the source's own reference condition), on
        ascending nominal band centres.

    Raises
    ------
    MeasurementError
        ``name`` is not one of :data:`REFERENCE_SPECTRA`.
    """
    if name == "byrne1994":
        return _levels(BYRNE_1994_BANDS_HZ, BYRNE_1994_LTASS_BAND_DB)
    if name == "ansi_s3.5":
        from .intelligibility.tables import band_procedure

        table = band_procedure("one-third-octave")
        return _levels(table.centres_hz, table.speech_spectrum_db["normal"] + table.bandwidth_adjustment_db)
    if name in EFFORT_REFERENCES:
        return effort_band_levels_db(name[len("ansi_s3.5_"):])
    raise MeasurementError(f"reference spectrum must be one of {', '.join(REFERENCE_SPECTRA)}; got {name!r}")
