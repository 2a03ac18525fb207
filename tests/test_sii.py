"""SII engine (ANSI S3.5-1997 clause 4) against the published and derived check values.

Sources are named beside each check: ANSI S3.5-1997 Annex C worked examples (as reproduced by the CRAN
SII package), the ASA S3-79 working group's errata, the ASA S3-79 reference C program's output, values
computed from the standard's equations and tables, and pitfalls seen in public implementations.
"""

from __future__ import annotations

import numpy as np
import pytest

from voiceband.errors import MeasurementError, SignalValueError
from voiceband.intelligibility import (
    band_importance,
    band_procedure,
    band_to_spectrum_level,
    overall_level_db,
    sii,
    spectrum_to_band_level,
    standard_speech_spectrum,
)

PROCEDURE_BANDS = {"critical-band": 21, "equal-critical-band": 17, "one-third-octave": 18, "octave": 6}


def normal_speech(procedure="one-third-octave"):
    return standard_speech_spectrum("normal", procedure=procedure)


# --------------------------------------------------------------------------------------------------
# Section 3 check values
# --------------------------------------------------------------------------------------------------


def test_annex_c1_octave_example():
    # ANSI S3.5-1997 Annex C.1 (octave procedure) via the CRAN SII package: 0.504 (0.50395550625),
    # L = 0.9672, 1, 0.9688, 0.9832, 0.9958, 1; K = 0, 0, 0.3333, 0.6667, 1, 0.7367.
    r = sii([50, 40, 40, 30, 20, 0], [70, 65, 45, 25, 1, -15], np.zeros(6), procedure="octave")
    assert r.index == pytest.approx(0.504, abs=0.0005)
    assert r.index == pytest.approx(0.50395550625, abs=1e-9)
    np.testing.assert_allclose(r.L, [0.9672, 1, 0.9688, 0.9832, 0.9958, 1], atol=1e-4)
    np.testing.assert_allclose(r.K, [0, 0, 0.3333, 0.6667, 1, 0.7367], atol=1e-4)


def test_annex_c2_one_third_octave_example_with_errata():
    # ANSI S3.5-1997 Annex C.2 via the CRAN SII package: 0.851 (0.851374861875); working-group errata
    # value Z(200 Hz) = 34.66 dB; Z(250 Hz) = 25.05 dB; C(160 Hz) = -46.587 dB/octave.
    noise = [40, 30, 20] + [0] * 15
    r = sii(np.full(18, 54.0), noise, np.zeros(18), procedure="one-third-octave")
    assert r.index == pytest.approx(0.851, abs=0.0005)
    assert r.index == pytest.approx(0.851374861875, abs=1e-9)
    assert r.Z[1] == pytest.approx(34.66, abs=0.01)
    assert r.Z[2] == pytest.approx(25.05, abs=0.01)
    assert r.C[0] == pytest.approx(-46.587, abs=0.001)


def test_normal_speech_in_quiet_one_third_octave():
    # ASA S3-79 reference C program output: 0.99582517;
    # A = 1 in bands 1-17 and 0.7743 at 8 kHz.
    r = sii(normal_speech())
    assert r.index == pytest.approx(0.99582517, abs=1e-6)
    np.testing.assert_allclose(r.A[:17], 1.0)
    assert r.A[17] == pytest.approx(0.7743, abs=1e-4)


@pytest.mark.parametrize(
    "procedure, expected",
    [
        # Computed from ANSI S3.5-1997 clause 4 (consistent with the ASA S3-79 reference C program).
        ("critical-band", 0.995504),
        # Table 2: importance 0.0588 x 17 = 0.9996, the largest possible value of this procedure.
        ("equal-critical-band", 0.9996),
        ("one-third-octave", 0.9958252),
        ("octave", 0.987611),
    ],
)
def test_normal_speech_in_quiet_all_procedures(procedure, expected):
    r = sii(normal_speech(procedure), procedure=procedure)
    assert r.index == pytest.approx(expected, abs=1e-4)
    assert r.band_audibility.shape == (PROCEDURE_BANDS[procedure],)


@pytest.mark.parametrize("procedure, expected", [("one-third-octave", 0.4663), ("octave", 0.5000)])
def test_speech_shaped_noise_at_zero_db(procedure, expected):
    # Computed from ANSI S3.5-1997: N' = E' (normal effort): 0.4663 (one-third octave, agrees with
    # the speech-intelligibility-index package) and exactly 0.5 for octaves (K = 15/30, L = 1).
    u = normal_speech(procedure)
    assert sii(u, u, procedure=procedure).index == pytest.approx(expected, abs=0.0005)


@pytest.mark.parametrize("s_db", [-15.0, -10.0, -3.5, 0.0, 2.0, 5.0, 8.0])
def test_octave_analytic_snr(s_db):
    # Analytic from Eqs. 11-14: octave bands have Z = N' (4.3.1), so with
    # N' = E' - s above the internal noise and L = 1, K = (s + 15)/30 in every band and SII = (s + 15)/30
    # because the Table 4 importance sums to 1.
    u = normal_speech("octave")
    r = sii(u, u - s_db, procedure="octave")
    assert np.all(r.Z > r.X_prime)
    assert r.index == pytest.approx((s_db + 15.0) / 30.0, abs=1e-9)


def test_octave_analytic_snr_batched():
    s = np.linspace(-15, 8, 24)
    u = normal_speech("octave")
    r = sii(u, u - s[:, None], procedure="octave")
    np.testing.assert_allclose(r.index, (s + 15) / 30, atol=1e-9)


def test_overall_level_normal_effort_one_third_octave():
    # Table 3 / clause 3.40: normal effort is 62.35 dB SPL overall; the band sum computes to 62.36
    # (computed from ANSI S3.5-1997 Table 3, tolerance 0.02 dB).
    assert overall_level_db(normal_speech()) == pytest.approx(62.35, abs=0.02)


@pytest.mark.parametrize(
    "effort, stated_db", [("raised", 68.34), ("loud", 74.85), ("shout", 82.30)]
)
def test_overall_level_other_efforts(effort, stated_db):
    # Stated overall levels of the standard (ANSI S3.5-1997 Table 3 / clause 3.40); band sums of Table 3 compute to
    # 68.28 / 74.86 / 82.36, within the 0.1 dB that the speech-intelligibility-index package's own test allows.
    assert overall_level_db(standard_speech_spectrum(effort)) == pytest.approx(stated_db, abs=0.1)


@pytest.mark.parametrize(
    "name, expected",
    [
        # speech-intelligibility-index package run (weights passed
        # explicitly): normal speech in quiet with the Annex B Table B.2 functions.
        ("nonsense-syllables", 1.0000),
        ("cid-w22", 0.9943),
        ("nu6", 0.9960),
        ("drt", 0.9946),
        ("short-passages", 0.9967),
        ("spin", 0.9999),
    ],
)
def test_annex_b_importance_in_quiet(name, expected):
    assert sii(normal_speech(), importance=name).index == pytest.approx(expected, abs=1e-4)


# --------------------------------------------------------------------------------------------------
# Tables
# --------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("procedure", list(PROCEDURE_BANDS))
def test_average_importance_sums(procedure):
    # Tables 1, 3, 4 sum to 1.0000; Table 2 is 17 x 0.0588 = 0.9996 (ANSI S3.5-1997 Tables 1-4).
    expected = 0.9996 if procedure == "equal-critical-band" else 1.0
    assert band_procedure(procedure).importance.sum() == pytest.approx(expected, abs=1e-9)


def test_annex_b_column_sums():
    # Computed from ANSI S3.5-1997 Annex B Tables B.1-B.3: every column sums to 1.000 except B.1 NU6 0.9998, B.2 SPIN 0.9999,
    # B.3 NU6 0.978 and B.3 CID W-22 0.9978 (the last two flagged as probable transcription slips).
    sums = {
        (p, name): float(w.sum())
        for p in ("critical-band", "one-third-octave", "octave")
        for name, w in band_procedure(p).annex_b_importance.items()
    }
    flagged = {("critical-band", "nu6"): 0.9998, ("one-third-octave", "spin"): 0.9999,
               ("octave", "nu6"): 0.978, ("octave", "cid-w22"): 0.9978}
    for key, total in sums.items():
        assert total == pytest.approx(flagged.get(key, 1.0), abs=1e-6), key


def test_equal_critical_band_is_rows_3_to_19_of_table_1():
    # Table 2 = bands 3-19 of Table 1 (300-6400 Hz) with I = 0.0588 (ANSI S3.5-1997 Tables 1-4).
    cb, ecb = band_procedure("critical-band"), band_procedure("equal-critical-band")
    np.testing.assert_array_equal(ecb.centres_hz, cb.centres_hz[2:19])
    assert ecb.lower_hz[0] == 300 and ecb.upper_hz[-1] == 6400
    for effort in ("normal", "raised", "loud", "shout"):
        np.testing.assert_array_equal(ecb.speech_spectrum_db[effort], cb.speech_spectrum_db[effort][2:19])
    np.testing.assert_array_equal(ecb.importance, np.full(17, 0.0588))


def test_octave_levels_equal_one_third_octave_levels_at_same_centres():
    # ANSI S3.5-1997 Tables 3 and 4: spectrum levels do not depend on bandwidth, so U and X of Table 4
    # equal Table 3's at 250, 500, ... 8000 Hz.
    to, oc = band_procedure("one-third-octave"), band_procedure("octave")
    idx = [int(np.flatnonzero(to.centres_hz == f)[0]) for f in oc.centres_hz]
    for effort in ("normal", "raised", "loud", "shout"):
        np.testing.assert_array_equal(oc.speech_spectrum_db[effort], to.speech_spectrum_db[effort][idx])
    np.testing.assert_array_equal(oc.internal_noise_db, to.internal_noise_db[idx])


def test_one_third_octave_band_limits_are_base_ten():
    # IEC 61260-1:2014 clause 5.5 (Table 3 prints no limits): base-10 nominal limits 141, 178, 224, ... 7079, 8913 Hz.
    t = band_procedure("one-third-octave")
    nominal = [141, 178, 224, 282, 355, 447, 562, 708, 891, 1122, 1413, 1778, 2239, 2818, 3548, 4467, 5623, 7079, 8913]
    np.testing.assert_allclose(np.r_[t.lower_hz, t.upper_hz[-1]], nominal, atol=0.6)
    np.testing.assert_allclose(t.upper_hz[:-1], t.lower_hz[1:], rtol=1e-12)


def test_bandwidth_adjustment_matches_band_limits():
    # Table 3 delta = 10 log10(nominal bandwidth): the base-10 limits reproduce it within 0.05 dB.
    t = band_procedure("one-third-octave")
    np.testing.assert_allclose(10 * np.log10(t.upper_hz - t.lower_hz), t.bandwidth_adjustment_db, atol=0.05)


def test_tables_are_read_only():
    t = band_procedure("one-third-octave")
    with pytest.raises(ValueError):
        t.importance[0] = 1.0
    with pytest.raises(ValueError):
        t.speech_spectrum_db["normal"][0] = 0.0


def test_transcription_flags():
    # ANSI S3.5-1997 Table 3 (open transcriptions compared): loud effort at 400 Hz (Table 3) is 43.30 dB (43.40 is a typo in one
    # transcription); shout at 450 Hz (Tables 1 and 2) is 48.46 dB (one transcription has 48.48).
    to = band_procedure("one-third-octave")
    assert to.speech_spectrum_db["loud"][4] == 43.30
    cb, ecb = band_procedure("critical-band"), band_procedure("equal-critical-band")
    assert cb.speech_spectrum_db["shout"][3] == 48.46
    assert ecb.speech_spectrum_db["shout"][1] == 48.46


# --------------------------------------------------------------------------------------------------
# Section 4 pitfalls
# --------------------------------------------------------------------------------------------------


def test_pitfall_inputs_are_spectrum_levels_not_band_levels():
    # Computed (a pitfall of public implementations): feeding band levels drops quiet SII from 0.9958 to 0.9042 and the
    # 0 dB SNR value from 0.4663 to 0.4100.
    u = normal_speech()
    band = spectrum_to_band_level(u)
    assert sii(band).index == pytest.approx(0.9042, abs=1e-4)
    assert sii(band, band).index == pytest.approx(0.4100, abs=1e-4)
    back = band_to_spectrum_level(band)
    np.testing.assert_allclose(back, u, atol=1e-12)
    assert sii(back).index == pytest.approx(0.99582517, abs=1e-6)


def test_pitfall_disturbance_is_max_not_power_sum():
    # Clause 4.5: D = max(Z, X'). With octave bands (Z = N') and N' = X' exactly, a power sum would give
    # D = N' + 3.01 dB and K lower by 3.01/30; the max gives K = (E' - N' + 15)/30.
    t = band_procedure("octave")
    threshold = np.full(6, 30.0)  # a hearing loss
    noise = t.internal_noise_db + threshold  # N' equals X' in every band
    speech = noise + 5.0
    r = sii(speech, noise, threshold, procedure="octave")
    np.testing.assert_allclose(r.D, noise)
    np.testing.assert_allclose(r.K, (5.0 + 15.0) / 30.0)
    power_sum_k = (5.0 - 10 * np.log10(2) + 15.0) / 30.0
    assert r.index > float(np.sum(r.I * r.L * power_sum_k)) + 0.05


def test_pitfall_disturbance_max_hearing_loss_in_noise_one_third_octave():
    # Clause 4.5 on a hearing-loss-in-noise case where Z and X' are close: D equals the larger of the two
    # band by band.
    u = normal_speech()
    threshold = np.linspace(20, 45, 18)
    r = sii(u + 10, u - 5, threshold)
    np.testing.assert_array_equal(r.D, np.maximum(r.Z, r.X_prime))
    np.testing.assert_allclose(r.X_prime, band_procedure("one-third-octave").internal_noise_db + threshold)


def test_pitfall_level_distortion_clipped_at_zero():
    # Eq. 11 clipped to [0, 1] (ANSI S3.5-1997; a pitfall of public implementations): at E' = 250 dB one library that clips only the
    # top returns -0.006; clipping both ends gives L = 0 and SII = 0.
    r = sii(np.full(18, 250.0))
    np.testing.assert_array_equal(r.L, 0.0)
    assert r.index == 0.0


def test_level_distortion_uses_normal_effort_spectrum():
    # Eq. 11 with U the normal-effort spectrum whatever the vocal effort (ANSI S3.5-1997 Eq. 11):
    # shouted speech at 1 m has L = 1 - (U_shout - U_normal - 10)/160 where that is below 1.
    shout = standard_speech_spectrum("shout")
    normal = normal_speech()
    r = sii(shout)
    np.testing.assert_allclose(r.L, np.clip(1 - (shout - normal - 10) / 160, 0, 1))
    assert np.min(r.L) < 0.9


def test_pitfall_audibility_clipped_to_unit_range():
    # Eq. 12: K clipped to [0, 1].
    r = sii(np.r_[np.full(9, -20.0), np.full(9, 60.0)], np.full(18, 10.0))
    np.testing.assert_array_equal(r.K[:9], 0.0)
    np.testing.assert_array_equal(r.K[9:], 1.0)


def test_pitfall_first_band_masking_is_its_own_masker():
    # Clause 4.3.2.4: Z_1 = B_1 (= V_1 = E'_1 - 24 dB when speech masks itself more than the noise).
    for procedure in ("critical-band", "equal-critical-band", "one-third-octave"):
        u = normal_speech(procedure)
        r = sii(u, procedure=procedure)
        assert r.Z[0] == r.B[0] == pytest.approx(u[0] - 24.0)


def test_pitfall_octave_has_no_self_speech_or_spread_of_masking():
    # Clause 4.3.1: octave procedure, Z = N' -- a very loud 250 Hz band masks nothing above it.
    speech = np.array([110.0, 30, 30, 30, 30, 30])
    noise = np.full(6, 0.0)
    r = sii(speech, noise, procedure="octave")
    np.testing.assert_array_equal(r.Z, noise)
    assert r.V is None and r.B is None and r.C is None
    # The same spectrum with one-third-octave bands does spread masking upwards from a loud band.
    speech_to = np.full(18, 30.0)
    speech_to[2] = 110.0
    r_to = sii(speech_to, np.zeros(18))
    assert r_to.Z[5] > 20.0


def test_pitfall_annex_b_names_not_shifted():
    # Seen in a public implementation: one library's names are shifted by one ("spin" returns the DRT weights).
    # Table B.2 SPIN column starts 0.0000, 0.0255, 0.0256; DRT starts 0.0000, 0.0240, 0.0330.
    spin = band_importance("spin")
    drt = band_importance("drt")
    np.testing.assert_array_equal(spin[:3], [0.0, 0.0255, 0.0256])
    np.testing.assert_array_equal(drt[:3], [0.0, 0.0240, 0.0330])
    assert spin[10] == 0.1075 and drt[10] == 0.0961


def test_pitfall_mid_band_frequency_3150_not_3159():
    # ANSI S3.5-1997 Table 3: 3150 Hz (one library prints 3159); Eq. 7 uses the nominal centre.
    t = band_procedure("one-third-octave")
    assert t.centres_hz[13] == 3150.0
    r = sii(np.full(18, 40.0), np.zeros(18))
    assert r.C[13] == pytest.approx(-80 + 0.6 * (r.B[13] + 10 * np.log10(3150.0) - 6.353), abs=1e-12)


def test_default_noise_minus_50_equals_minus_80():
    # ANSI S3.5-1997 clause 4: N' = -50 dB (ASA S3-79 reference C program default) and -80 dB give the same SII
    # in quiet, 0.99582517.
    u = normal_speech()
    assert sii(u, np.full(18, -80.0)).index == pytest.approx(sii(u).index, abs=1e-12)
    np.testing.assert_array_equal(sii(u).noise_db, -50.0)


def test_critical_band_masking_ratio_uses_geometric_centre():
    # Eq. 8 with F_i = sqrt(l_i h_i) as in the ASA S3-79 reference C program:
    # check Z_2 by hand for a loud first band.
    t = band_procedure("critical-band")
    speech = np.full(21, -100.0)
    speech[0] = 100.0
    noise = np.full(21, -100.0)
    r = sii(speech, noise, procedure="critical-band")
    b1 = 100.0 - 24.0
    c1 = -80 + 0.6 * (b1 + 10 * np.log10(200 - 100))
    z2 = 10 * np.log10(10 ** (-10.0) + 10 ** (0.1 * (b1 + 3.32 * c1 * np.log10(np.sqrt(200 * 300) / 200))))
    assert r.Z[1] == pytest.approx(z2, abs=1e-9)
    assert t.upper_hz[0] == 200


# --------------------------------------------------------------------------------------------------
# API behaviour
# --------------------------------------------------------------------------------------------------


def test_minus_inf_speech_means_no_speech():
    speech = normal_speech().copy()
    speech[:6] = -np.inf
    r = sii(speech)
    np.testing.assert_array_equal(r.A[:6], 0.0)
    assert np.all(np.isfinite(r.A))
    assert r.index == pytest.approx(float(np.sum(r.I[6:] * r.A[6:])), abs=1e-12)


def test_minus_inf_noise_is_quiet():
    u = normal_speech()
    assert sii(u, np.full(18, -np.inf)).index == pytest.approx(0.99582517, abs=1e-6)


@pytest.mark.parametrize("rows", [1, 5000])
def test_minus_inf_speech_and_noise_together_give_no_nan(rows):
    # Bands with neither speech nor noise (-inf, e.g. outside a filter's passband) contribute A = 0.
    speech = np.tile(normal_speech(), (rows, 1))
    speech[:, 12:] = -np.inf
    noise = np.full((rows, 18), -np.inf)
    noise[:, :3] = 20.0
    r = sii(speech, noise)
    for arr in (r.Z, r.D, r.K, r.L, r.A, r.index):
        assert not np.any(np.isnan(arr))
    np.testing.assert_array_equal(r.A[:, 12:], 0.0)
    np.testing.assert_allclose(r.index, r.index[0])


def test_batch_shapes_and_float_index():
    u = normal_speech()
    r1 = sii(u)
    assert isinstance(r1.index, float)
    noise = u - np.arange(12).reshape(3, 4, 1)
    r = sii(u, noise)
    assert r.index.shape == (3, 4)
    assert r.A.shape == (3, 4, 18)
    assert r.band_centres_hz.shape == (18,)


def test_custom_importance_array_and_batched_importance():
    u = normal_speech()
    flat = np.full(18, 1 / 18)
    r = sii(u, importance=flat)
    assert r.index == pytest.approx(float(np.mean(sii(u).A)), abs=1e-12)
    two = np.stack([flat, band_procedure("one-third-octave").importance])
    rb = sii(u, importance=two)
    np.testing.assert_allclose(rb.index, [r.index, sii(u).index], atol=1e-12)


def test_names_ignore_case_and_underscores_and_accept_aliases():
    u = normal_speech()
    r = sii(u, procedure="One_Third_Octave", importance="CID_22")
    assert r.procedure == "one-third-octave"
    np.testing.assert_array_equal(r.band_importance, band_importance("cid-w22"))
    for alias, name in (("nns", "nonsense-syllables"), ("short", "short-passages"), ("Standard", "average")):
        np.testing.assert_array_equal(band_importance(alias), band_importance(name))


def test_result_is_frozen_and_read_only():
    r = sii(normal_speech())
    with pytest.raises(AttributeError):
        r.index = 0.0  # type: ignore[misc]
    with pytest.raises(ValueError):
        r.band_audibility[0] = 0.0


def test_input_array_not_modified_or_frozen():
    u = normal_speech().copy()
    before = u.copy()
    sii(u)
    np.testing.assert_array_equal(u, before)
    u[0] = 1.0  # still writable


@pytest.mark.parametrize(
    "kwargs, exc, match",
    [
        ({"speech_db": np.zeros(17)}, SignalValueError, "18 bands"),
        ({"speech_db": np.r_[np.nan, np.zeros(17)]}, SignalValueError, "NaN"),
        ({"speech_db": np.r_[np.inf, np.zeros(17)]}, SignalValueError, r"\+inf"),
        ({"speech_db": np.zeros(18), "threshold_db": np.r_[-np.inf, np.zeros(17)]}, SignalValueError, "finite"),
        ({"speech_db": np.zeros(18), "procedure": "third-octave"}, MeasurementError, "procedure must be one of"),
        ({"speech_db": np.zeros(18), "importance": "speech"}, MeasurementError, "importance must be one of"),
        ({"speech_db": np.zeros(18), "importance": np.ones(6)}, MeasurementError, "18 values"),
        ({"speech_db": np.zeros(18), "importance": -np.ones(18)}, MeasurementError, "not negative"),
        ({"speech_db": np.zeros(17), "procedure": "equal-critical-band", "importance": "spin"},
         MeasurementError, "no table"),
        ({"speech_db": np.zeros((2, 18)), "noise_db": np.zeros((3, 18))}, SignalValueError, "broadcast"),
        ({"speech_db": "loud"}, SignalValueError, "numbers"),
    ],
)
def test_bad_input_raises_one_clear_error(kwargs, exc, match):
    with pytest.raises(exc, match=match):
        sii(**kwargs)


def test_standard_speech_distance_and_gain():
    # Eq. 16: E' = U - 20 log10(d) + G; inverse-square law, 2 m is 6.02 dB down.
    u = normal_speech()
    np.testing.assert_allclose(standard_speech_spectrum(distance_m=2.0), u - 20 * np.log10(2), atol=1e-12)
    np.testing.assert_allclose(standard_speech_spectrum(insertion_gain_db=np.full(18, 3.0)), u + 3.0)
    with pytest.raises(MeasurementError, match="vocal_effort"):
        standard_speech_spectrum("whisper")
    with pytest.raises(MeasurementError, match="distance_m"):
        standard_speech_spectrum(distance_m=0.0)


@pytest.mark.parametrize("procedure", ["one-third-octave", "critical-band", "equal-critical-band", "octave"])
def test_sii_index_equals_full_result(procedure):
    # The index-only path must give exactly sii(...).index (same chain, chunked through a reused block);
    # batch larger than one chunk, with -inf bands, broadcast noise and per-row importance.
    from voiceband.intelligibility import band_procedure, sii_index

    n = band_procedure(procedure).n_bands
    rng = np.random.default_rng(11)
    rows = 5000
    e = rng.uniform(-10, 90, (rows, n))
    e[::7, 0] = -np.inf
    noise = rng.uniform(-20, 70, (1, n))
    t = rng.uniform(0, 30, (rows, n))
    assert np.array_equal(sii_index(e, noise, t, procedure=procedure), sii(e, noise, t, procedure=procedure).index)
    w = rng.uniform(0, 1, (rows, n))
    w /= w.sum(axis=-1, keepdims=True)
    np.testing.assert_allclose(sii_index(e, noise, t, procedure=procedure, importance=w),
                               sii(e, noise, t, procedure=procedure, importance=w).index, rtol=0, atol=1e-15)
    assert isinstance(sii_index(e[0], noise[0], t[0], procedure=procedure), float)
