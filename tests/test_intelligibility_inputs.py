"""Clause 5.1 input helpers (voiceband.intelligibility.inputs) against ANSI S3.5-1997 equations and tables."""

from __future__ import annotations

import numpy as np
import pytest

from voiceband.errors import SignalValueError
from voiceband.intelligibility import (
    apply_insertion_gain,
    band_procedure,
    band_to_spectrum_level,
    binaural_threshold,
    eardrum_to_free_field,
    free_field_to_eardrum,
    levels_from_mtf,
    overall_level_db,
    sii,
    spectrum_to_band_level,
    standard_speech_spectrum,
)


@pytest.mark.parametrize("procedure", ["critical-band", "equal-critical-band", "one-third-octave", "octave"])
def test_band_and_spectrum_level_round_trip(procedure):
    t = band_procedure(procedure)
    spectrum = np.linspace(0, 40, t.n_bands)
    band = spectrum_to_band_level(spectrum, procedure=procedure)
    np.testing.assert_allclose(band - spectrum, t.bandwidth_adjustment_db)
    np.testing.assert_allclose(band_to_spectrum_level(band, procedure=procedure), spectrum, atol=1e-12)


def test_bandwidth_adjustments_from_tables():
    # Table 3: 15.65 dB at 160 Hz rising 1 dB per band to 32.65 dB at 8 kHz; Table 4: 22.48 ... 37.48 dB
    # (3 dB per octave); critical bands: 10 log10(h - l), e.g. 20 dB for 100-200 Hz (Table 1 limits).
    np.testing.assert_allclose(band_procedure("one-third-octave").bandwidth_adjustment_db, 15.65 + np.arange(18))
    np.testing.assert_allclose(band_procedure("octave").bandwidth_adjustment_db, 22.48 + 3 * np.arange(6))
    assert band_procedure("critical-band").bandwidth_adjustment_db[0] == pytest.approx(20.0)


def test_overall_levels_of_other_procedures():
    # Computed from ANSI S3.5-1997 Tables 1 and 4: normal effort sums to 62.40 dB over Table 1 (critical bands) and
    # 62.56 dB over Table 4 (octaves).
    assert overall_level_db(standard_speech_spectrum(procedure="critical-band"), procedure="critical-band") == pytest.approx(62.40, abs=0.01)
    assert overall_level_db(standard_speech_spectrum(procedure="octave"), procedure="octave") == pytest.approx(62.56, abs=0.01)


def test_overall_level_batched_and_silent():
    u = standard_speech_spectrum()
    levels = overall_level_db(np.stack([u, u + 10]))
    np.testing.assert_allclose(levels[1] - levels[0], 10.0)
    assert overall_level_db(np.full(18, -np.inf)) == -np.inf


def test_insertion_gain_eqs_17_18():
    # Eq. 17 / 18: E' = E + G, N' = N + G.
    e = np.full(18, 40.0)
    g = np.linspace(-10, 10, 18)
    np.testing.assert_allclose(apply_insertion_gain(e, g), e + g)
    assert np.isneginf(apply_insertion_gain(e, np.r_[-np.inf, np.zeros(17)])[0])
    with pytest.raises(SignalValueError, match="broadcast"):
        apply_insertion_gain(e, np.zeros(5))
    with pytest.raises(SignalValueError, match="finite"):
        apply_insertion_gain(e, np.r_[np.nan, np.zeros(17)])


def test_binaural_threshold_clause_5_1_5():
    # Clause 5.1.5: binaural listening, T' - 1.7 dB.
    np.testing.assert_allclose(binaural_threshold(), -1.7)
    np.testing.assert_allclose(binaural_threshold(np.full(6, 20.0), procedure="octave"), 18.3)
    # Binaural listening helps a listener whose threshold limits audibility.
    u = standard_speech_spectrum()
    t = np.full(18, 40.0)
    assert sii(u, None, binaural_threshold(t)).index > sii(u, None, t).index


def test_free_field_to_eardrum_table_3_values():
    # Table 3 free-field-to-eardrum column: 0.0 dB at 160 Hz, 16.8 dB at 2500 Hz, 1.8 dB at 8 kHz.
    ff = np.zeros(18)
    ed = free_field_to_eardrum(ff)
    assert (ed[0], ed[12], ed[17]) == (0.0, 16.8, 1.8)
    np.testing.assert_allclose(eardrum_to_free_field(ed), ff, atol=1e-12)


def test_mtf_method_check_value():
    # ANSI S3.5-1997 clause 5.2 check (speech-intelligibility-index test against a Matlab
    # implementation): CSNSL = 50 dB in all bands, m = 1 -> E' = 49.8648 dB, N' = 34.8648 dB.
    speech, noise = levels_from_mtf(np.full(18, 50.0), np.ones((18, 9)))
    np.testing.assert_allclose(speech, 49.8648, atol=1e-4)
    np.testing.assert_allclose(noise, 34.8648, atol=1e-4)


def test_mtf_method_analytic_and_eardrum():
    # Eq. 22: m = 0.5 is an apparent SNR of 0 dB, so E' = N' = CSNSL - 3.01 dB (Eqs. 23-24); clause 5.3
    # subtracts the free-field-to-eardrum function (Eqs. 27-28).
    speech, noise = levels_from_mtf(np.full(18, 40.0), np.full((18, 9), 0.5))
    np.testing.assert_allclose(speech, 40.0 - 10 * np.log10(2), atol=1e-12)
    np.testing.assert_allclose(noise, speech, atol=1e-12)
    s_ed, n_ed = levels_from_mtf(np.full(18, 40.0), np.full((18, 9), 0.5), at_eardrum=True)
    np.testing.assert_allclose(speech - s_ed, band_procedure("one-third-octave").free_field_to_eardrum_db)
    # m = 0 limits the apparent SNR at -15 dB (clause 5.2.3.5).
    speech0, noise0 = levels_from_mtf(np.full(18, 40.0), np.zeros((18, 9)))
    np.testing.assert_allclose(speech0 - noise0, -15.0, atol=1e-12)
    with pytest.raises(SignalValueError, match="between 0 and 1"):
        levels_from_mtf(np.full(18, 40.0), np.full((18, 9), 1.5))


def test_bad_band_count():
    with pytest.raises(SignalValueError, match="18 bands"):
        band_to_spectrum_level(np.zeros(6))
    with pytest.raises(SignalValueError, match="NaN"):
        spectrum_to_band_level(np.r_[np.nan, np.zeros(17)])
