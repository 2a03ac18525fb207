"""Published tables of ANSI S3.5-1997 (Speech Intelligibility Index), once, as read-only constants.

Every number here is transcribed from ANSI/ASA S3.5-1997 (R2017, reaffirmed without technical
change) as cross-read in three open transcriptions: the ASA working
group S3-79 reference C program, the CRAN ``SII`` package data, and the ``speech-intelligibility-index``
Python package, which agree digit for digit except where a comment says otherwise.

Units
-----
* ``centres_hz``, ``lower_hz``, ``upper_hz`` -- band centre and limit frequencies, Hz.
* ``bandwidth_adjustment_db`` -- band level minus spectrum level, dB (10*log10 of the band width).
* ``speech_spectrum_db`` -- standard speech *spectrum* levels, dB SPL per Hz, free field at 1 m in
  front of the talker (Tables 1-4 column "standard speech spectrum level").
* ``internal_noise_db`` -- reference internal noise spectrum level X, dB per Hz (Tables 1-4).
* ``free_field_to_eardrum_db`` -- free-field-to-eardrum transfer function, dB (Tables 1-4).
* ``importance`` -- band-importance function I (average speech; Tables 1-4).
* ``annex_b_importance`` -- band-importance functions for specific speech tests (Annex B,
  Tables B.1-B.3).

Nothing in this module computes; :mod:`voiceband.intelligibility.sii` uses these tables.
"""

from __future__ import annotations

from dataclasses import dataclass
from types import MappingProxyType
from typing import Mapping

import numpy as np

from ..bands import band_limits_hz
from ..errors import MeasurementError

__all__ = [
    "PROCEDURES",
    "VOCAL_EFFORTS",
    "IMPORTANCE_NAMES",
    "IMPORTANCE_ALIASES",
    "OVERALL_SPEECH_LEVEL_DB_SPL",
    "SELF_SPEECH_MASKING_DB",
    "DEFAULT_NOISE_SPECTRUM_DB",
    "BINAURAL_THRESHOLD_ADVANTAGE_DB",
    "BandProcedure",
    "band_procedure",
]


def _ro(values) -> np.ndarray:
    """A float64 copy of ``values`` that cannot be written to (cached tables are read-only)."""
    arr = np.array(values, dtype=np.float64)
    arr.setflags(write=False)
    return arr


#: Procedure names, in the order of the standard's Tables 1-4 (clauses 3.4 and 4.1).
PROCEDURES: tuple[str, ...] = ("critical-band", "equal-critical-band", "one-third-octave", "octave")

#: Vocal efforts of the standard speech spectrum (clause 3.40; Tables 1-4).
VOCAL_EFFORTS: tuple[str, ...] = ("normal", "raised", "loud", "shout")

#: Overall speech level, dB SPL, of the standard speech spectrum at 1 m for each vocal effort
#: (ANSI S3.5-1997 Table 3 / clause 3.40; the reference C program's SOAL = 62.35 for normal effort).
OVERALL_SPEECH_LEVEL_DB_SPL: Mapping[str, float] = MappingProxyType(
    {"normal": 62.35, "raised": 68.34, "loud": 74.85, "shout": 82.30}
)

#: Self-speech masking: V = E' - 24 dB (ANSI S3.5-1997 clause 4.3.2.1, Eq. 5).
SELF_SPEECH_MASKING_DB: float = 24.0

#: Default equivalent noise spectrum level, dB, meaning "no noise" (ANSI S3.5-1997 clause 4.2, note;
#: -50 dB in the reference C program and the R and Python packages).
DEFAULT_NOISE_SPECTRUM_DB: float = -50.0

#: Binaural listening lowers the equivalent hearing threshold by 1.7 dB (ANSI S3.5-1997 clause 5.1.5).
BINAURAL_THRESHOLD_ADVANTAGE_DB: float = 1.7

#: Other accepted spellings of the importance names (after lower-casing and turning "_" and " " into "-").
IMPORTANCE_ALIASES: Mapping[str, str] = MappingProxyType(
    {
        "standard": "average",
        "nns": "nonsense-syllables",
        "nonsense": "nonsense-syllables",
        "cid-22": "cid-w22",
        "cid22": "cid-w22",
        "cidw22": "cid-w22",
        "w22": "cid-w22",
        "w-22": "cid-w22",
        "nu-6": "nu6",
        "short": "short-passages",
    }
)

#: Names of the Annex B band-importance functions, besides "average" (Tables 1-4).
#: nonsense-syllables: various nonsense-syllable tests in which most English phonemes occur equally
#: often; cid-w22: CID W-22 phonetically balanced words; nu6: NU-6 monosyllables; drt: diagnostic rhyme
#: test; short-passages: short passages of easy reading material; spin: speech in noise (SPIN) test.
IMPORTANCE_NAMES: tuple[str, ...] = (
    "average",
    "nonsense-syllables",
    "cid-w22",
    "nu6",
    "drt",
    "short-passages",
    "spin",
)


@dataclass(frozen=True)
class BandProcedure:
    """The band table of one SII procedure (ANSI S3.5-1997 Tables 1-4 and Annex B).

    Attributes
    ----------
    name : str
        One of :data:`PROCEDURES`.
    table : str
        The standard's table number for the band data.
    centres_hz, lower_hz, upper_hz : ndarray, shape (n_bands,)
        Nominal band centre frequencies and band limits, Hz.
    bandwidth_adjustment_db : ndarray, shape (n_bands,)
        Band level minus spectrum level, dB.
    importance : ndarray, shape (n_bands,)
        Band-importance function for average speech.
    speech_spectrum_db : mapping of str to ndarray
        Standard speech spectrum level, dB SPL per Hz, per vocal effort (normal, raised, loud, shout).
    internal_noise_db : ndarray, shape (n_bands,)
        Reference internal noise spectrum level X, dB.
    free_field_to_eardrum_db : ndarray, shape (n_bands,)
        Free-field-to-eardrum transfer function, dB.
    annex_b_importance : mapping of str to ndarray
        Band-importance functions for specific speech tests (Annex B); empty for the
        equally-contributing critical-band procedure, whose importance is uniform by design.
    spread_of_masking : bool
        Whether the procedure applies self-speech masking and upward spread of masking
        (clause 4.3.2; the octave procedure does not, clause 4.3.1).
    """

    name: str
    table: str
    centres_hz: np.ndarray
    lower_hz: np.ndarray
    upper_hz: np.ndarray
    bandwidth_adjustment_db: np.ndarray
    importance: np.ndarray
    speech_spectrum_db: Mapping[str, np.ndarray]
    internal_noise_db: np.ndarray
    free_field_to_eardrum_db: np.ndarray
    annex_b_importance: Mapping[str, np.ndarray]
    spread_of_masking: bool

    @property
    def n_bands(self) -> int:
        """Number of bands."""
        return int(self.centres_hz.size)


# ---------------------------------------------------------------------------------------------
# Table 1 -- critical-band procedure (21 bands). Columns: centre, lower limit, upper limit,
# importance, standard speech spectrum level normal/raised/loud/shout, internal noise X,
# free-field-to-eardrum transfer function.
# ---------------------------------------------------------------------------------------------
_TABLE_1 = np.array([
    # Fc     lo     hi     I       normal  raised  loud   shout   X      FF->ED
    [150,   100,   200,   0.0103, 31.44, 34.06, 34.21, 28.69,   1.5,  0.6],
    [250,   200,   300,   0.0261, 34.75, 38.98, 41.55, 42.50,  -3.9,  1.0],
    [350,   300,   400,   0.0419, 34.14, 38.62, 43.68, 47.14,  -7.2,  1.4],
    [450,   400,   510,   0.0577, 34.58, 39.84, 44.08, 48.46,  -8.9,  1.4],
    [570,   510,   630,   0.0577, 33.17, 39.44, 45.34, 50.17, -10.3,  1.9],
    [700,   630,   770,   0.0577, 30.64, 37.99, 45.22, 51.68, -11.4,  2.8],
    [840,   770,   920,   0.0577, 27.59, 35.85, 43.60, 51.43, -12.0,  3.0],
    [1000,  920,  1080,   0.0577, 25.01, 33.86, 42.16, 51.31, -12.5,  2.6],
    [1170, 1080,  1270,   0.0577, 23.52, 32.56, 41.07, 49.40, -13.2,  2.6],
    [1370, 1270,  1480,   0.0577, 22.28, 30.91, 39.68, 49.03, -14.0,  3.6],
    [1600, 1480,  1720,   0.0577, 20.15, 28.58, 37.70, 47.65, -15.4,  6.1],
    [1850, 1720,  2000,   0.0577, 18.29, 26.37, 35.62, 45.47, -16.9, 10.5],
    [2150, 2000,  2320,   0.0577, 16.37, 24.34, 33.17, 43.13, -18.8, 13.8],
    [2500, 2320,  2700,   0.0577, 13.80, 22.35, 30.98, 40.80, -21.2, 16.8],
    [2900, 2700,  3150,   0.0577, 12.21, 21.04, 29.01, 39.15, -23.2, 15.8],
    [3400, 3150,  3700,   0.0577, 11.09, 19.56, 27.71, 37.30, -24.9, 14.9],
    [4000, 3700,  4400,   0.0577,  9.33, 16.78, 25.41, 34.41, -25.9, 14.3],
    [4800, 4400,  5300,   0.0460,  5.84, 12.14, 19.20, 29.01, -24.2, 12.4],
    [5800, 5300,  6400,   0.0343,  3.47,  9.04, 15.37, 25.17, -19.0,  7.9],
    [7000, 6400,  7700,   0.0226,  1.78,  6.36, 12.61, 22.08, -11.7,  4.3],
    [8500, 7700,  9500,   0.0110, -0.14,  3.44,  9.62, 18.76,  -6.0,  0.5],
])

# Table B.1 -- critical-band importance for specific speech tests (Annex B).
# Columns: nonsense-syllables, cid-w22, nu6, drt, short-passages, spin.
_TABLE_B1 = np.array([
    [0.0000, 0.0507, 0.0234, 0.0122, 0.0192, 0.0130],
    [0.0230, 0.0677, 0.0366, 0.0553, 0.0312, 0.0478],
    [0.0385, 0.0641, 0.0520, 0.0581, 0.0926, 0.0451],
    [0.0410, 0.0552, 0.0672, 0.0672, 0.1031, 0.0470],
    [0.0433, 0.0474, 0.0638, 0.0680, 0.0735, 0.0523],
    [0.0472, 0.0468, 0.0566, 0.0667, 0.0611, 0.0591],
    [0.0473, 0.0466, 0.0503, 0.0587, 0.0495, 0.0591],
    [0.0470, 0.0502, 0.0465, 0.0547, 0.0440, 0.0503],
    [0.0517, 0.0586, 0.0539, 0.0563, 0.0440, 0.0503],
    [0.0537, 0.0591, 0.0576, 0.0575, 0.0490, 0.0556],
    [0.0582, 0.0586, 0.0642, 0.0625, 0.0486, 0.0699],
    [0.0679, 0.0609, 0.0741, 0.0598, 0.0493, 0.0625],
    [0.0745, 0.0596, 0.0709, 0.0555, 0.0490, 0.0602],
    [0.0750, 0.0618, 0.0621, 0.0521, 0.0547, 0.0684],
    [0.0685, 0.0501, 0.0553, 0.0480, 0.0555, 0.0638],
    [0.0662, 0.0439, 0.0505, 0.0443, 0.0493, 0.0605],
    [0.0636, 0.0370, 0.0417, 0.0356, 0.0359, 0.0534],
    [0.0607, 0.0268, 0.0291, 0.0280, 0.0387, 0.0394],
    [0.0511, 0.0201, 0.0186, 0.0237, 0.0256, 0.0291],
    [0.0216, 0.0186, 0.0141, 0.0205, 0.0219, 0.0132],
    [0.0000, 0.0162, 0.0113, 0.0153, 0.0043, 0.0000],
])

# Table 2 -- equally-contributing critical-band procedure: bands 3-19 of Table 1 with importance
# 0.0588 each (sum 0.9996, so the largest possible SII of this procedure is 0.9996).
_ECB_ROWS = slice(2, 19)
_ECB_IMPORTANCE = 0.0588

# ---------------------------------------------------------------------------------------------
# Table 3 -- one-third-octave procedure (18 bands). Columns: centre, bandwidth adjustment,
# importance, standard speech spectrum level normal/raised/loud/shout, internal noise X,
# free-field-to-eardrum transfer function. Loud effort at 400 Hz is 43.30 dB (one public
# transcription has 43.40, a typo: the other transcriptions agree on 43.30).
# ---------------------------------------------------------------------------------------------
_TABLE_3 = np.array([
    # Fc    delta   I       normal  raised  loud   shout   X      FF->ED
    [160,  15.65, 0.0083, 32.41, 33.81, 35.29, 30.77,   0.6,  0.0],
    [200,  16.65, 0.0095, 34.48, 33.92, 37.76, 36.65,  -1.7,  0.5],
    [250,  17.65, 0.0150, 34.75, 38.98, 41.55, 42.50,  -3.9,  1.0],
    [315,  18.65, 0.0289, 33.98, 38.57, 43.78, 46.51,  -6.1,  1.4],
    [400,  19.65, 0.0440, 34.59, 39.11, 43.30, 47.40,  -8.2,  1.5],
    [500,  20.65, 0.0578, 34.27, 40.15, 44.85, 49.24,  -9.7,  1.8],
    [630,  21.65, 0.0653, 32.06, 38.78, 45.55, 51.21, -10.8,  2.4],
    [800,  22.65, 0.0711, 28.30, 36.37, 44.05, 51.44, -11.9,  3.1],
    [1000, 23.65, 0.0818, 25.01, 33.86, 42.16, 51.31, -12.5,  2.6],
    [1250, 24.65, 0.0844, 23.00, 31.89, 40.53, 49.63, -13.5,  3.0],
    [1600, 25.65, 0.0882, 20.15, 28.58, 37.70, 47.65, -15.4,  6.1],
    [2000, 26.65, 0.0898, 17.32, 25.32, 34.39, 44.32, -17.7, 12.0],
    [2500, 27.65, 0.0868, 13.18, 22.35, 30.98, 40.80, -21.2, 16.8],
    [3150, 28.65, 0.0844, 11.55, 20.15, 28.21, 38.13, -24.2, 15.0],
    [4000, 29.65, 0.0771,  9.33, 16.78, 25.41, 34.41, -25.9, 14.3],
    [5000, 30.65, 0.0527,  5.31, 11.47, 18.35, 28.24, -23.6, 10.7],
    [6300, 31.65, 0.0364,  2.59,  7.67, 13.87, 23.45, -15.8,  6.4],
    [8000, 32.65, 0.0185,  1.13,  5.07, 11.39, 20.72,  -7.1,  1.8],
])

# Table B.2 -- one-third-octave importance for specific speech tests (Annex B).
# Columns: nonsense-syllables, cid-w22, nu6, drt, short-passages, spin.
_TABLE_B2 = np.array([
    [0.0000, 0.0365, 0.0168, 0.0000, 0.0114, 0.0000],
    [0.0000, 0.0279, 0.0130, 0.0240, 0.0153, 0.0255],
    [0.0153, 0.0405, 0.0211, 0.0330, 0.0179, 0.0256],
    [0.0284, 0.0500, 0.0344, 0.0390, 0.0558, 0.0360],
    [0.0363, 0.0530, 0.0517, 0.0571, 0.0898, 0.0362],
    [0.0422, 0.0518, 0.0737, 0.0691, 0.0944, 0.0514],
    [0.0509, 0.0514, 0.0658, 0.0781, 0.0709, 0.0616],
    [0.0584, 0.0575, 0.0644, 0.0751, 0.0660, 0.0770],
    [0.0667, 0.0717, 0.0664, 0.0781, 0.0628, 0.0718],
    [0.0774, 0.0873, 0.0802, 0.0811, 0.0672, 0.0718],
    [0.0893, 0.0902, 0.0987, 0.0961, 0.0747, 0.1075],
    [0.1104, 0.0938, 0.1171, 0.0901, 0.0755, 0.0921],
    [0.1120, 0.0928, 0.0932, 0.0781, 0.0820, 0.1026],
    [0.0981, 0.0678, 0.0783, 0.0691, 0.0808, 0.0922],
    [0.0867, 0.0498, 0.0562, 0.0480, 0.0483, 0.0719],
    [0.0728, 0.0312, 0.0337, 0.0330, 0.0453, 0.0461],
    [0.0551, 0.0215, 0.0177, 0.0270, 0.0274, 0.0306],
    [0.0000, 0.0253, 0.0176, 0.0240, 0.0145, 0.0000],
])

# ---------------------------------------------------------------------------------------------
# Table 4 -- octave procedure (6 bands). Columns: centre, bandwidth adjustment, importance,
# standard speech spectrum level normal/raised/loud/shout, internal noise X, free-field-to-eardrum
# transfer function. Spectrum levels equal those of Table 3 at the same centres. Band limits are
# those of the reference C program (fc * 2**(-1/2) .. fc * 2**(1/2), rounded to whole hertz).
# ---------------------------------------------------------------------------------------------
_TABLE_4 = np.array([
    # Fc    delta   I       normal  raised  loud   shout   X      FF->ED
    [250,  22.48, 0.0617, 34.75, 38.98, 41.55, 42.50,  -3.9,  1.0],
    [500,  25.48, 0.1671, 34.27, 40.15, 44.85, 49.24,  -9.7,  1.8],
    [1000, 28.48, 0.2373, 25.01, 33.86, 42.16, 51.31, -12.5,  2.6],
    [2000, 31.48, 0.2648, 17.32, 25.32, 34.39, 44.32, -17.7, 12.0],
    [4000, 34.48, 0.2142,  9.33, 16.78, 25.41, 34.41, -25.9, 14.3],
    [8000, 37.48, 0.0549,  1.13,  5.07, 11.39, 20.72,  -7.1,  1.8],
])
_TABLE_4_LIMITS_HZ = np.array([177.0, 354.0, 707.0, 1414.0, 2828.0, 5657.0, 11314.0])

# Table B.3 -- octave importance for specific speech tests (Annex B).
# Columns: nonsense-syllables, cid-w22, nu6, drt, short-passages, spin.
# Caution: as transcribed, the nu6 column sums to 0.978 and the cid-w22
# column to 0.9978, against about 1.000 for every other column; one value in each is probably a
# transcription slip that could not be checked against the printed standard.
_TABLE_B3 = np.array([
    [0.0437, 0.1549, 0.0653, 0.0960, 0.1004, 0.0871],
    [0.1294, 0.1562, 0.1912, 0.2043, 0.2551, 0.1493],
    [0.2025, 0.2165, 0.2110, 0.2343, 0.1960, 0.2206],
    [0.3117, 0.2768, 0.3090, 0.2643, 0.2322, 0.3022],
    [0.2576, 0.1466, 0.1662, 0.1501, 0.1744, 0.2102],
    [0.0551, 0.0468, 0.0353, 0.0510, 0.0419, 0.0306],
])

_ANNEX_B_NAMES = IMPORTANCE_NAMES[1:]


def _efforts(columns: np.ndarray) -> Mapping[str, np.ndarray]:
    return MappingProxyType({effort: _ro(columns[:, j]) for j, effort in enumerate(VOCAL_EFFORTS)})


def _annex_b(table: np.ndarray) -> Mapping[str, np.ndarray]:
    return MappingProxyType({name: _ro(table[:, j]) for j, name in enumerate(_ANNEX_B_NAMES)})


def _build() -> dict[str, BandProcedure]:
    cb = _TABLE_1
    cb_limits_width = cb[:, 2] - cb[:, 1]
    critical = BandProcedure(
        name="critical-band",
        table="Table 1",
        centres_hz=_ro(cb[:, 0]),
        lower_hz=_ro(cb[:, 1]),
        upper_hz=_ro(cb[:, 2]),
        bandwidth_adjustment_db=_ro(10.0 * np.log10(cb_limits_width)),
        importance=_ro(cb[:, 3]),
        speech_spectrum_db=_efforts(cb[:, 4:8]),
        internal_noise_db=_ro(cb[:, 8]),
        free_field_to_eardrum_db=_ro(cb[:, 9]),
        annex_b_importance=_annex_b(_TABLE_B1),
        spread_of_masking=True,
    )
    ecb = cb[_ECB_ROWS]
    equal = BandProcedure(
        name="equal-critical-band",
        table="Table 2",
        centres_hz=_ro(ecb[:, 0]),
        lower_hz=_ro(ecb[:, 1]),
        upper_hz=_ro(ecb[:, 2]),
        bandwidth_adjustment_db=_ro(10.0 * np.log10(ecb[:, 2] - ecb[:, 1])),
        importance=_ro(np.full(ecb.shape[0], _ECB_IMPORTANCE)),
        speech_spectrum_db=_efforts(ecb[:, 4:8]),
        internal_noise_db=_ro(ecb[:, 8]),
        free_field_to_eardrum_db=_ro(ecb[:, 9]),
        annex_b_importance=MappingProxyType({}),
        spread_of_masking=True,
    )
    to = _TABLE_3
    # Table 3 does not print band limits; these are the IEC 61260-1 base-10 limits the nominal
    # centres stand for (141, 178, 224, ... 8913 Hz).
    to_lower, to_upper = band_limits_hz(to[:, 0], fraction=3)
    third = BandProcedure(
        name="one-third-octave",
        table="Table 3",
        centres_hz=_ro(to[:, 0]),
        lower_hz=_ro(to_lower),
        upper_hz=_ro(to_upper),
        bandwidth_adjustment_db=_ro(to[:, 1]),
        importance=_ro(to[:, 2]),
        speech_spectrum_db=_efforts(to[:, 3:7]),
        internal_noise_db=_ro(to[:, 7]),
        free_field_to_eardrum_db=_ro(to[:, 8]),
        annex_b_importance=_annex_b(_TABLE_B2),
        spread_of_masking=True,
    )
    oc = _TABLE_4
    octave = BandProcedure(
        name="octave",
        table="Table 4",
        centres_hz=_ro(oc[:, 0]),
        lower_hz=_ro(_TABLE_4_LIMITS_HZ[:-1]),
        upper_hz=_ro(_TABLE_4_LIMITS_HZ[1:]),
        bandwidth_adjustment_db=_ro(oc[:, 1]),
        importance=_ro(oc[:, 2]),
        speech_spectrum_db=_efforts(oc[:, 3:7]),
        internal_noise_db=_ro(oc[:, 7]),
        free_field_to_eardrum_db=_ro(oc[:, 8]),
        annex_b_importance=_annex_b(_TABLE_B3),
        spread_of_masking=False,
    )
    return {p.name: p for p in (critical, equal, third, octave)}


_PROCEDURE_TABLES: Mapping[str, BandProcedure] = MappingProxyType(_build())


def band_procedure(procedure: str) -> BandProcedure:
    """The band table of an SII procedure (ANSI S3.5-1997 Tables 1-4, Annex B).

    Parameters
    ----------
    procedure : {"critical-band", "equal-critical-band", "one-third-octave", "octave"}
        Case and underscores are ignored ("One_Third_Octave" works).

    Returns
    -------
    BandProcedure
        Frozen, with read-only arrays.

    Raises
    ------
    voiceband.errors.MeasurementError
        If ``procedure`` is not one of :data:`PROCEDURES`.
    """
    try:
        return _PROCEDURE_TABLES[procedure.strip().lower().replace("_", "-")]
    except (KeyError, TypeError, AttributeError):
        raise MeasurementError(
            f"procedure must be one of {', '.join(PROCEDURES)}; got {procedure!r}."
        ) from None
