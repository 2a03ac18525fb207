"""Speech intelligibility: ANSI S3.5-1997 Speech Intelligibility Index and STOI.

* :func:`sii` -- the SII calculation chain of ANSI S3.5-1997 clause 4, all four procedures
  (critical band, equally-contributing critical band, one-third octave, octave), batched.
* :mod:`.inputs` -- clause 5.1 helpers: band <-> spectrum level, standard speech at a vocal effort and
  distance, insertion gain, binaural listening, free-field-to-eardrum transfer; clauses 5.2-5.3 MTF input.
* :func:`band_gains_db` -- SII band gains of a filter from its frequency response (power average).
* :func:`channel_sii`, :func:`sii_vs_channel_snr` -- speech through a filter with channel noise.
* :func:`recording_intelligibility` -- SII of a recording from its dBFS band levels.
* :func:`stoi` -- short-time objective intelligibility (Taal et al. 2011).

Tables (Tables 1-4 and Annex B) live in :mod:`.tables`. Importing this package needs only numpy;
scipy is imported inside :func:`stoi`.
"""

from .channel import (
    DEFAULT_CHANNEL_SNR_DB,
    ChannelSIIPoint,
    channel_noise_spectrum,
    channel_sii,
    sii_vs_channel_snr,
)
from .filters import band_gains_db, brick_wall_band_gains_db
from .inputs import (
    MODULATION_FREQUENCIES_HZ,
    apply_insertion_gain,
    band_to_spectrum_level,
    binaural_threshold,
    eardrum_to_free_field,
    free_field_to_eardrum,
    levels_from_mtf,
    overall_level_db,
    spectrum_to_band_level,
    standard_speech_spectrum,
)
from .recording import (
    SII_RATING_BASIS,
    SII_RATING_THRESHOLDS,
    RecordingIntelligibility,
    recording_intelligibility,
    sii_rating,
)
from .sii import SIIResult, band_importance, sii, sii_index
from .stoi import stoi
from .tables import IMPORTANCE_NAMES, PROCEDURES, VOCAL_EFFORTS, BandProcedure, band_procedure

__all__ = [
    "sii",
    "sii_index",
    "SIIResult",
    "band_importance",
    "band_procedure",
    "BandProcedure",
    "PROCEDURES",
    "IMPORTANCE_NAMES",
    "VOCAL_EFFORTS",
    "band_to_spectrum_level",
    "spectrum_to_band_level",
    "overall_level_db",
    "standard_speech_spectrum",
    "apply_insertion_gain",
    "binaural_threshold",
    "eardrum_to_free_field",
    "free_field_to_eardrum",
    "levels_from_mtf",
    "MODULATION_FREQUENCIES_HZ",
    "band_gains_db",
    "brick_wall_band_gains_db",
    "ChannelSIIPoint",
    "DEFAULT_CHANNEL_SNR_DB",
    "channel_noise_spectrum",
    "channel_sii",
    "sii_vs_channel_snr",
    "RecordingIntelligibility",
    "recording_intelligibility",
    "sii_rating",
    "SII_RATING_THRESHOLDS",
    "SII_RATING_BASIS",
    "stoi",
]
