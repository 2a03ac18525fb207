"""Recording interface: dBFS one-third-octave band levels -> SII (voiceband.intelligibility.recording).

Known answers are the ASA S3-79 reference C program's and values computed from ANSI S3.5-1997
after the stated mapping (overall speech level set to the presentation level, noise with the same offset).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from voiceband.bands import BandLevels, bands_for_nominal
from voiceband.errors import MeasurementError, SignalValueError
from voiceband.intelligibility import (
    SII_RATING_BASIS,
    RecordingIntelligibility,
    band_procedure,
    overall_level_db,
    recording_intelligibility,
    sii,
    sii_rating,
    spectrum_to_band_level,
    standard_speech_spectrum,
)
from voiceband.serialize import dumps_json

# IEC 61260 nominal one-third-octave centres 25 Hz .. 20 kHz (common practice: the preferred-number series).
IEC_CENTRES = np.array([25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250,
                        1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000, 10000, 12500, 16000, 20000], dtype=float)
U = standard_speech_spectrum("normal")
U_BAND = spectrum_to_band_level(U)  # Table 3 normal effort as band levels, dB SPL
SII_IDX = np.searchsorted(IEC_CENTRES, band_procedure("one-third-octave").centres_hz)


def rec_sii(speech, noise, centres, **kwargs):
    """recording_intelligibility on the given nominal centres (levels as BandLevels)."""
    b = bands_for_nominal(centres)
    return recording_intelligibility(BandLevels(b, speech), None if noise is None else BandLevels(b, noise), **kwargs)


def recording_bands(offset_dbfs, outside_db=-np.inf):
    """Standard speech as a recording would show it: band levels in dBFS on the IEC centres."""
    bands = np.full(IEC_CENTRES.size, outside_db)
    bands[SII_IDX] = U_BAND + offset_dbfs
    return bands


def test_standard_speech_in_quiet_gives_the_quiet_sii():
    # ASA S3-79 reference C program output: 0.99582517. Presenting at the spectrum's own overall level (62.36 dB)
    # reproduces the Table 3 levels exactly.
    r = rec_sii(recording_bands(-80.0), None, IEC_CENTRES,
                                  presentation_level_db_spl=overall_level_db(U))
    assert r.sii == pytest.approx(0.99582517, abs=1e-6)
    assert r.procedure == "one-third-octave"
    assert r.rating == "good"


def test_speech_shaped_noise_at_zero_db_gives_0_4663():
    # Computed from ANSI S3.5-1997: N' = E' gives 0.4663; the noise gets the speech's offset.
    bands = recording_bands(-37.0)
    r = rec_sii(bands, bands, IEC_CENTRES, presentation_level_db_spl=overall_level_db(U))
    assert r.sii == pytest.approx(0.4663, abs=0.0005)
    assert r.rating == "fair"


def test_result_does_not_depend_on_recording_gain():
    # The mapping normalises the overall speech level, so scaling the recording (speech and noise alike)
    # changes nothing.
    a = rec_sii(recording_bands(-60.0), recording_bands(-85.0), IEC_CENTRES)
    b = rec_sii(recording_bands(-20.0), recording_bands(-45.0), IEC_CENTRES)
    assert a.sii == pytest.approx(b.sii, abs=1e-12)
    np.testing.assert_allclose(a.band_audibility, b.band_audibility, atol=1e-12)


def test_overall_speech_level_equals_presentation_level():
    # Presenting at 62.35 dB SPL maps the 62.36 dB spectrum 0.0096 dB lower; check through the SII of a
    # direct call with those levels.
    shift = 62.35 - overall_level_db(U)
    r = rec_sii(recording_bands(-50.0), None, IEC_CENTRES)
    assert r.presentation_level_db_spl == 62.35
    assert r.sii == pytest.approx(sii(U + shift).index, abs=1e-12)


def test_out_of_range_bands_count_in_the_overall_level():
    # The overall level is the sum over all given bands: power below 160 Hz takes a share, lowering the SII
    # bands relative to the presentation level. A 50 Hz band as strong as all speech bands together puts
    # them 3.01 dB lower.
    base = recording_bands(-50.0)
    with_rumble = base.copy()
    with_rumble[3] = 10 * np.log10(np.sum(10 ** (base[SII_IDX] / 10)))  # 50 Hz band as strong as all speech
    r = rec_sii(with_rumble, None, IEC_CENTRES)
    shift = 62.35 - overall_level_db(U) - 10 * np.log10(2)
    assert r.sii == pytest.approx(sii(U + shift).index, abs=1e-12)


def test_missing_bands_above_nyquist_have_no_audibility():
    # An 8 kHz recording: bands above 4 kHz absent (or -inf) -> no speech there, A = 0.
    keep = IEC_CENTRES <= 4000
    bands = recording_bands(-40.0)[keep]
    noise = bands - 30.0
    r = rec_sii(bands, noise, IEC_CENTRES[keep])
    assert r.band_audibility[-3:] == (0.0, 0.0, 0.0)
    assert 0.5 < r.sii < 0.95


def test_centres_within_a_twelfth_octave_match():
    # 3159 Hz (a typo seen in one library's table) still identifies the 3150 Hz band.
    centres = IEC_CENTRES.copy()
    centres[centres == 3150] = 3159
    a = rec_sii(recording_bands(-40.0), None, centres)
    b = rec_sii(recording_bands(-40.0), None, IEC_CENTRES)
    assert a.sii == b.sii


def test_channel_curve_is_monotone_and_keeps_recording_noise():
    r = rec_sii(recording_bands(-40.0), recording_bands(-70.0), IEC_CENTRES)
    snrs = [p.snr_db for p in r.sii_vs_channel_snr]
    values = [p.sii for p in r.sii_vs_channel_snr]
    assert snrs == list(np.arange(-10.0, 31.0, 5.0))
    assert all(b >= a for a, b in zip(values, values[1:]))
    assert values[-1] <= r.sii + 1e-12  # channel noise only adds to the recording's own noise


def test_json_friendly():
    r = rec_sii(recording_bands(-40.0), recording_bands(-70.0), IEC_CENTRES)
    assert isinstance(r, RecordingIntelligibility)
    data = json.loads(dumps_json(r))
    assert set(data) == {"sii", "procedure", "presentation_level_db_spl", "band_centres_hz", "band_audibility",
                         "band_importance", "sii_vs_channel_snr", "rating", "rating_basis"}
    assert data["sii_vs_channel_snr"][0].keys() == {"snr_db", "sii"}
    assert len(data["band_centres_hz"]) == 18
    assert isinstance(data["sii"], float)


@pytest.mark.parametrize("value, word", [(0.75, "good"), (0.7499, "fair"), (0.45, "fair"), (0.4499, "poor"),
                                         (0.0, "poor"), (1.0, "good")])
def test_rating_thresholds(value, word):
    # common practice thresholds (0.75 / 0.45), no single published source -- stated in SII_RATING_BASIS.
    assert sii_rating(value) == word
    assert "common practice" in SII_RATING_BASIS


@pytest.mark.parametrize(
    "speech, noise, centres, exc, match",
    [
        (np.zeros(3), None, [100.0, 200.0], MeasurementError, "one value per band"),
        (np.r_[np.nan, 0.0], None, [100.0, 200.0], MeasurementError, "NaN"),
        (np.zeros(2), None, [0.0, 200.0], MeasurementError, "positive"),
        (np.full(2, -np.inf), None, [1000.0, 2000.0], MeasurementError, "no power"),
        (np.zeros(2), None, [25.0, 31.5], MeasurementError, "SII bands"),
        (np.r_[0.0, np.inf], None, [1000.0, 2000.0], SignalValueError, r"\+inf"),
    ],
)
def test_bad_input(speech, noise, centres, exc, match):
    with pytest.raises(exc, match=match):
        rec_sii(speech, noise, centres)


def test_noise_on_other_bands_is_refused():
    speech = BandLevels(bands_for_nominal([1000.0, 2000.0]), np.zeros(2))
    noise = BandLevels(bands_for_nominal([1000.0, 2000.0, 2500.0]), np.zeros(3))
    with pytest.raises(SignalValueError, match="noise must be on the bands of speech"):
        recording_intelligibility(speech, noise)
    with pytest.raises(SignalValueError, match="must be BandLevels"):
        recording_intelligibility(np.zeros(2), None)
