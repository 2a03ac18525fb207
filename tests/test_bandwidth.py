"""Occupied bandwidth (ITU-R SM.328 beta-% method) and passband-edge estimation."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import optimize, signal

from voiceband.measurement.bandwidth import (
    OccupiedBandwidth,
    PassbandEdges,
    VocalEffortFit,
    cumulative_power,
    fit_vocal_effort,
    occupied_bandwidth,
    passband_edges,
)
from voiceband.bands import BandLevels, bands_for_nominal
from voiceband.errors import MeasurementError
from voiceband.intelligibility.tables import VOCAL_EFFORTS, band_procedure
from voiceband.reference_spectra import (
    BYRNE_1994_BANDS_HZ,
    BYRNE_1994_LTASS_BAND_DB,
    EFFORT_REFERENCES,
    REFERENCE_SPECTRA,
    effort_band_levels_db,
    reference_band_levels_db,
)
from voiceband.analysis import measure_recording

#: ANSI S3.5-1997 Table 3 (one-third-octave procedure): band centres and standard speech
#: spectrum levels per vocal effort, dB SPL per Hz.
TABLE_3 = band_procedure("one-third-octave")


def brick_wall_noise(rng, fs, seconds, lo_hz, hi_hz):
    """White noise through an ideal band-pass, by zeroing FFT bins outside [lo, hi]."""
    n = int(fs * seconds)
    spec = np.fft.rfft(rng.standard_normal(n))
    f = np.fft.rfftfreq(n, 1.0 / fs)
    spec[(f < lo_hz) | (f > hi_hz)] = 0.0
    return np.fft.irfft(spec, n)


def speech_shaped_noise(rng, fs, n, reference):
    """Gaussian noise whose PSD follows a reference long-term speech spectrum.

    Band levels are turned into spectrum levels (minus 10 log10 of the one-third-octave
    width) and interpolated linearly in log frequency; constant beyond the table's ends.
    """
    bands, band_db = _arrays(reference_band_levels_db(reference))
    spectrum_db = band_db - 10.0 * np.log10(bands * (10 ** 0.05 - 10 ** -0.05))
    f = np.fft.rfftfreq(n, 1.0 / fs)
    shape_db = np.interp(np.log2(np.maximum(f, 1.0)), np.log2(bands), spectrum_db)
    spec = np.fft.rfft(rng.standard_normal(n)) * 10 ** (shape_db / 20.0)
    spec[0] = 0.0
    x = np.fft.irfft(spec, n)
    return x / x.std()


def effort_shaped_noise(rng, fs, n, effort):
    """Gaussian noise whose PSD follows the ANSI S3.5-1997 Table 3 speech *spectrum* level.

    The spectrum levels (dB per Hz, no bandwidth adjustment) are interpolated linearly in
    log frequency and held constant beyond 160 Hz and 8 kHz; unit RMS.
    """
    f = np.fft.rfftfreq(n, 1.0 / fs)
    shape_db = np.interp(
        np.log2(np.maximum(f, 1.0)),
        np.log2(TABLE_3.centres_hz),
        TABLE_3.speech_spectrum_db[effort],
    )
    spec = np.fft.rfft(rng.standard_normal(n)) * 10 ** (shape_db / 20.0)
    spec[0] = 0.0
    x = np.fft.irfft(spec, n)
    return x / x.std()


def speech_gate(fs, n):
    """1.5 s on, 0.7 s off: pauses so the analysis treats the signal as speech."""
    t = np.arange(n) / fs
    return ((t % 2.2) < 1.5).astype(float)


def minus_10_db_points(sos, fs, lo_search, hi_search):
    """Frequencies where a filter's gain is -10 dB (scipy as the reference)."""

    def gain_db(f):
        return 20.0 * np.log10(abs(signal.sosfreqz(sos, [f], fs=fs)[1][0])) + 10.0

    return optimize.brentq(gain_db, *lo_search), optimize.brentq(gain_db, *hi_search)


# ---------------------------------------------------------------------------------------
# Occupied bandwidth
# ---------------------------------------------------------------------------------------


def test_obw_of_flat_band_is_analytic():
    # Flat PSD on 300-2700 Hz: 0.5 % of 2400 Hz = 12 Hz each side -> 312 / 2688 Hz,
    # width 2376 Hz (ITU-R SM.328 beta-% definition; issue 2 check value).
    f = np.arange(0, 4000.5, 0.5)
    psd = np.where((f >= 300) & (f <= 2700), 1.0, 0.0)
    # Make the band edges exact for the bin model (each bin stands for +/-0.25 Hz).
    psd[f == 300] = 0.5
    psd[f == 2700] = 0.5
    obw = occupied_bandwidth(psd, f)
    assert isinstance(obw, OccupiedBandwidth)
    assert obw.low_hz == pytest.approx(312.0, abs=1e-9)
    assert obw.high_hz == pytest.approx(2688.0, abs=1e-9)
    assert obw.width_hz == pytest.approx(2376.0, abs=1e-9)
    assert obw.fraction == 0.99


def test_obw_other_fraction_is_analytic():
    # beta = 10 %: 5 % of 2400 Hz = 120 Hz each side (SM.328 definition, analytic).
    f = np.arange(0, 4000.5, 0.5)
    psd = np.where((f > 300) & (f < 2700), 2.0, 0.0)
    psd[(f == 300) | (f == 2700)] = 1.0
    obw = occupied_bandwidth(psd, f, fraction=0.9)
    assert (obw.low_hz, obw.high_hz) == pytest.approx((420.0, 2580.0), abs=1e-9)


@pytest.mark.parametrize("fs", [8000, 48000])
def test_obw_of_brick_wall_white_noise(rng, fs):
    # Issue 2 check value: white noise through an ideal 300-2700 Hz band has a 99 %
    # occupied bandwidth of 2376 Hz with edges 312 / 2688 Hz (analytic, 0.5 % of 2400 Hz).
    x = brick_wall_noise(rng, fs, 60.0 if fs == 8000 else 20.0, 300.0, 2700.0)
    obw = measure_recording(x, fs).occupied_bandwidth
    assert obw.low_hz == pytest.approx(312.0, abs=2.0)
    assert obw.high_hz == pytest.approx(2688.0, abs=2.0)
    assert obw.width_hz == pytest.approx(2376.0, abs=3.0)
    assert (obw.span_low_hz, obw.span_high_hz) == (20.0, fs / 2)


def test_obw_of_butterworth_noise_matches_integrated_response(rng):
    # Reference: direct numerical integration of |H(f)|^2 of the same filter (scipy
    # sosfreqz on a dense grid), 0.5 % / 99.5 % points of its cumulative power.
    fs = 16000
    sos = signal.butter(4, [500, 2000], "bandpass", fs=fs, output="sos")
    x = signal.sosfilt(sos, rng.standard_normal(fs * 40))
    obw = measure_recording(x, fs).occupied_bandwidth
    f, h = signal.sosfreqz(sos, worN=1 << 18, fs=fs)
    sel = f >= 20.0
    p = np.abs(h[sel]) ** 2
    c = np.concatenate(([0.0], np.cumsum((p[1:] + p[:-1]) / 2 * np.diff(f[sel]))))
    c /= c[-1]
    lo_ref = np.interp(0.005, c, f[sel])
    hi_ref = np.interp(0.995, c, f[sel])
    assert obw.low_hz == pytest.approx(lo_ref, rel=0.01)
    assert obw.high_hz == pytest.approx(hi_ref, rel=0.01)


def test_obw_span_excludes_out_of_span_power():
    # Power outside the stated span must not move the edges (common practice: DC and hum
    # change the answer unless the span excludes them).
    f = np.arange(0, 4000.5, 0.5)
    psd = np.where((f > 300) & (f < 2700), 1.0, 0.0)
    psd[(f == 300) | (f == 2700)] = 0.5
    base = occupied_bandwidth(psd, f, span_hz=(100.0, 4000.0))
    psd_dc = psd.copy()
    psd_dc[f < 30] = 1e3
    with_dc = occupied_bandwidth(psd_dc, f, span_hz=(100.0, 4000.0))
    assert (with_dc.low_hz, with_dc.high_hz) == pytest.approx((base.low_hz, base.high_hz), abs=1e-9)
    assert with_dc.span_low_hz == 100.0


def test_cumulative_power_is_parseval():
    # Integral of the PSD equals its bin sum times the bin width (rectangle rule, by definition).
    f = np.linspace(0, 1000, 101)
    psd = np.linspace(1.0, 2.0, 101)
    b, c = cumulative_power(psd, f)
    assert b[0] == 0.0 and b[-1] == pytest.approx(1005.0)
    assert c[-1] == pytest.approx(psd.sum() * 10.0)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"fraction": 1.0}, "fraction must be between 0 and 1"),
        ({"span_hz": (3000.0, 100.0)}, "span_hz must be"),
        ({"span_hz": (5000.0, 6000.0)}, "does not overlap"),
    ],
)
def test_obw_bad_options(kwargs, match):
    f = np.arange(0, 4001.0)
    with pytest.raises(MeasurementError, match=match):
        occupied_bandwidth(np.ones_like(f), f, **kwargs)


def test_obw_bad_arrays():
    f = np.arange(0, 100.0)
    with pytest.raises(MeasurementError, match="equal length"):
        occupied_bandwidth(np.ones(5), f)
    with pytest.raises(MeasurementError, match="uniformly spaced"):
        occupied_bandwidth(np.ones(3), [0.0, 1.0, 3.0])
    with pytest.raises(MeasurementError, match="no power"):
        occupied_bandwidth(np.zeros_like(f), f)
    with pytest.raises(MeasurementError, match="negative"):
        occupied_bandwidth(-np.ones_like(f), f)


# ---------------------------------------------------------------------------------------
# Passband edges
# ---------------------------------------------------------------------------------------


def bl(nominal_hz, band_db):
    """Band levels on the given nominal one-third-octave centres."""
    return BandLevels(bands_for_nominal(nominal_hz), band_db)


def _arrays(levels):
    return levels.nominal_hz, levels.levels_db


def _exact_centre(nominal):
    # IEC 61260-1 base-10 exact mid-band frequency.
    return 1000.0 * 10 ** (np.round(10 * np.log10(np.asarray(nominal) / 1000.0)) / 10)


def test_edges_of_synthetic_response_are_analytic():
    # Response flat between the 400 Hz and 2000 Hz bands and falling 20 dB/octave outside,
    # on top of the reference spectrum: the -10 dB points are half an octave outside the
    # knees (analytic; the (1,2,1) smoothing leaves a straight ramp unchanged).
    bands, ref_db = _arrays(reference_band_levels_db("byrne1994"))
    fc = _exact_centre(bands)
    knee_lo, knee_hi = _exact_centre(400), _exact_centre(2000)
    resp = -20.0 * np.maximum(0, np.log2(knee_lo / fc)) - 20.0 * np.maximum(0, np.log2(fc / knee_hi))
    e = passband_edges(bl(bands, ref_db - 40.0 + resp))
    assert isinstance(e, PassbandEdges)
    assert e.low_hz == pytest.approx(knee_lo / np.sqrt(2), rel=1e-6)
    assert e.high_hz == pytest.approx(knee_hi * np.sqrt(2), rel=1e-6)
    assert e.passband_level_db == pytest.approx(-40.0, abs=1e-9)
    assert (e.lowest_band_hz, e.highest_band_hz) == (63.0, 16000.0)


def test_edges_none_when_response_does_not_fall():
    # A flat response over the whole table: neither edge lies inside the analysed bands.
    bands, ref_db = _arrays(reference_band_levels_db("byrne1994"))
    e = passband_edges(bl(bands, ref_db - 30.0))
    assert e.low_hz is None and e.high_hz is None
    assert e.passband_level_db == pytest.approx(-30.0)


def test_edges_noise_subtraction():
    # Speech that sinks into a flat noise floor above ~2 kHz: bands where speech is not
    # above the noise count as outside the passband, so the high edge is found there.
    bands, ref_db = _arrays(reference_band_levels_db("ansi_s3.5"))
    fc = _exact_centre(bands)
    speech_power = 10 ** ((ref_db - 40.0) / 10)
    noise_power = np.where(fc > 2200, speech_power, 1e-12 * speech_power)
    total_db = 10 * np.log10(speech_power * (fc <= 2200) + noise_power)
    e = passband_edges(bl(bands, total_db), noise=bl(bands, 10 * np.log10(noise_power)), reference="ansi_s3.5")
    assert e.high_hz is not None and 2000 < e.high_hz < 2600
    e_raw = passband_edges(bl(bands, total_db), reference="ansi_s3.5")
    assert e_raw.high_hz is None


def test_edges_of_filtered_speech_shaped_noise(rng):
    # Noise shaped to the ANSI S3.5-1997 Table 3 standard speech spectrum, gated like
    # speech, through a 4th-order Butterworth band-pass 300-2700 Hz: the estimated edges
    # fall near the filter's -10 dB points (scipy sosfreqz as the reference) -- within 2 %
    # with the matching reference spectrum, the analysis default (effort fitted) and the
    # normal-effort extended table, and within 10 % with the Byrne 1994 LTASS.
    fs = 16000
    n = fs * 40
    gate = speech_gate(fs, n)
    sos = signal.butter(4, [300, 2700], "bandpass", fs=fs, output="sos")
    x = signal.sosfilt(sos, 0.1 * speech_shaped_noise(rng, fs, n, "ansi_s3.5") * gate)
    x += 1e-5 * rng.standard_normal(n)
    lo_ref, hi_ref = minus_10_db_points(sos, fs, (50, 300), (2700, 7000))
    res = measure_recording(x, fs)
    assert res.activity.pause_frame_count > 0
    default = res.edges
    assert default.reference.startswith("ansi_s3.5") and default.reference.endswith("(fitted)")
    assert default.effort_index == pytest.approx(0.0, abs=0.3)
    assert default.low_hz == pytest.approx(lo_ref, rel=0.05)
    assert default.high_hz == pytest.approx(hi_ref, rel=0.05)
    spec = res.spectrum
    for reference, tol in (("ansi_s3.5", 0.02), ("ansi_s3.5_normal", 0.02), ("byrne1994", 0.10)):
        e = passband_edges(bl(spec.bands_hz, spec.speech_band_db), noise=bl(spec.bands_hz, spec.noise_band_db), reference=reference)
        assert e.reference == reference
        assert e.effort_index is None and e.effort_fit_bands_hz == ()
        assert e.low_hz == pytest.approx(lo_ref, rel=tol)
        assert e.high_hz == pytest.approx(hi_ref, rel=tol)


@pytest.mark.parametrize("effort", VOCAL_EFFORTS)
def test_edges_of_full_band_effort_shaped_noise(rng, effort):
    # Noise shaped to each ANSI S3.5-1997 Table 3 vocal-effort spectrum, gated like speech,
    # not band-limited (a flat chain): no low edge above 200 Hz.  Louder speech is flatter
    # (Table 3: shout lies ~10 dB lower at 250 Hz, relative to 1-2 kHz, than normal), which
    # a normal-effort reference would read as a high-pass; the fitted effort must be the
    # one the noise was shaped to (Table 3 by construction, +/- 0.3 on the 0-3 scale).
    fs = 32000
    n = fs * 12
    x = 0.1 * effort_shaped_noise(rng, fs, n, effort) * speech_gate(fs, n)
    x += 1e-6 * rng.standard_normal(n)
    e = measure_recording(x, fs).edges
    assert e.low_hz is None or e.low_hz <= 200.0
    assert e.effort_index == pytest.approx(VOCAL_EFFORTS.index(effort), abs=0.3)
    assert effort in e.reference


@pytest.mark.parametrize("effort", VOCAL_EFFORTS)
def test_edges_of_band_passed_effort_shaped_noise(rng, effort):
    # The same noise through a 4th-order Butterworth band-pass 300-2700 Hz (the usual SSB
    # transmit filter, common practice): the estimated edges lie within 10 % of the filter's
    # -10 dB points (scipy sosfreqz as the reference) whatever the vocal effort.
    fs = 16000
    n = fs * 20
    sos = signal.butter(4, [300, 2700], "bandpass", fs=fs, output="sos")
    x = signal.sosfilt(sos, 0.1 * effort_shaped_noise(rng, fs, n, effort) * speech_gate(fs, n))
    x += 1e-5 * rng.standard_normal(n)
    lo_ref, hi_ref = minus_10_db_points(sos, fs, (50, 300), (2700, 7000))
    e = measure_recording(x, fs).edges
    assert e.low_hz == pytest.approx(lo_ref, rel=0.10)
    assert e.high_hz == pytest.approx(hi_ref, rel=0.10)
    assert e.effort_index == pytest.approx(VOCAL_EFFORTS.index(effort), abs=0.3)


@pytest.mark.parametrize("effort", ["normal", "shout"])
def test_effort_fit_survives_a_high_pass_reaching_into_the_fit_span(rng, effort):
    # A 4th-order Butterworth high-pass at 600 Hz tilts the 500-800 Hz bands that the effort
    # is first fitted on; narrowing the fit span away from the estimated edge keeps the low
    # edge within 10 % of the filter's -10 dB point (scipy sosfreqz as the reference).
    fs = 16000
    n = fs * 20
    sos = signal.butter(4, 600, "highpass", fs=fs, output="sos")
    x = signal.sosfilt(sos, 0.1 * effort_shaped_noise(rng, fs, n, effort) * speech_gate(fs, n))
    x += 1e-5 * rng.standard_normal(n)
    lo_ref = optimize.brentq(
        lambda f: 20.0 * np.log10(abs(signal.sosfreqz(sos, [f], fs=fs)[1][0])) + 10.0, 100, 600
    )
    e = measure_recording(x, fs).edges
    assert e.low_hz == pytest.approx(lo_ref, rel=0.10)
    assert e.high_hz is None
    assert min(e.effort_fit_bands_hz) >= 800.0


def _table_band_db(effort):
    # ANSI S3.5-1997 Table 3: band level = spectrum level + bandwidth adjustment Delta.
    return np.asarray(TABLE_3.speech_spectrum_db[effort]) + np.asarray(TABLE_3.bandwidth_adjustment_db)


@pytest.mark.parametrize("k, effort", list(enumerate(VOCAL_EFFORTS)))
def test_fit_vocal_effort_recovers_table_3(k, effort):
    # The Table 3 band levels themselves, at any overall level, fit their own effort exactly
    # (a shape fit: the mean is removed), with zero residual.
    fit = fit_vocal_effort(bl(TABLE_3.centres_hz, _table_band_db(effort) - 83.0))
    assert isinstance(fit, VocalEffortFit)
    assert fit.effort_index == pytest.approx(k, abs=1e-9)
    assert fit.nearest_effort == effort
    assert fit.residual_rms_db == pytest.approx(0.0, abs=1e-9)
    assert fit.bands_hz == (500.0, 630.0, 800.0, 1000.0, 1250.0, 1600.0, 2000.0)


def test_fit_vocal_effort_between_efforts():
    # Band levels 40 % of the way from raised to loud (linear in dB, the interpolation the
    # effort scale is defined by) fit at 1.4 exactly.
    levels = 0.6 * _table_band_db("raised") + 0.4 * _table_band_db("loud")
    fit = fit_vocal_effort(bl(TABLE_3.centres_hz, levels))
    assert fit.effort_index == pytest.approx(1.4, abs=1e-9)
    assert fit.nearest_effort == "raised"
    e = passband_edges(bl(TABLE_3.centres_hz, levels), reference="auto")
    assert e.reference == "ansi_s3.5 60 % raised + 40 % loud effort (fitted)"
    assert e.effort_index == pytest.approx(1.4, abs=1e-9)
    assert e.low_hz is None and e.high_hz is None


def test_fit_vocal_effort_not_possible():
    # Speech not above the pause noise in the central bands: no fit (fewer than 4 bands).
    levels = _table_band_db("normal")
    noise = np.where((TABLE_3.centres_hz >= 630) & (TABLE_3.centres_hz <= 2000), levels + 1.0, levels - 40.0)
    assert fit_vocal_effort(bl(TABLE_3.centres_hz, levels), noise=bl(TABLE_3.centres_hz, noise)) is None
    # passband_edges(reference="auto") then falls back to the Byrne 1994 LTASS.
    e = passband_edges(bl(TABLE_3.centres_hz, levels), noise=bl(TABLE_3.centres_hz, noise), reference="auto")
    assert e.reference == "byrne1994" and e.effort_index is None


@pytest.mark.parametrize("effort", VOCAL_EFFORTS)
def test_auto_edges_of_synthetic_response_are_analytic(effort):
    # As test_edges_of_synthetic_response_are_analytic, on top of the extended effort
    # spectrum: flat between the 400 Hz and 2000 Hz bands, 20 dB/octave outside, so the
    # -10 dB points lie half an octave outside the knees (analytic).
    bands, ref_db = _arrays(effort_band_levels_db(effort))
    fc = _exact_centre(bands)
    knee_lo, knee_hi = _exact_centre(400), _exact_centre(2000)
    resp = -20.0 * np.maximum(0, np.log2(knee_lo / fc)) - 20.0 * np.maximum(0, np.log2(fc / knee_hi))
    e = passband_edges(bl(bands, ref_db - 50.0 + resp), reference="auto")
    assert e.reference == f"ansi_s3.5_{effort} (fitted)"
    assert e.effort_index == pytest.approx(VOCAL_EFFORTS.index(effort), abs=1e-9)
    assert e.effort_fit_rms_db == pytest.approx(0.0, abs=1e-9)
    assert e.low_hz == pytest.approx(knee_lo / np.sqrt(2), rel=1e-6)
    assert e.high_hz == pytest.approx(knee_hi * np.sqrt(2), rel=1e-6)
    # The explicit reference of the same name gives the same edges.
    named = passband_edges(bl(bands, ref_db - 50.0 + resp), reference=f"ansi_s3.5_{effort}")
    assert (named.low_hz, named.high_hz) == pytest.approx((e.low_hz, e.high_hz), rel=1e-12)


def test_noise_outside_the_voice_band_does_not_set_the_passband_level():
    # Flat chain, but broadband noise riding on the speech frames (static crashes) lifts
    # the bands from 5 kHz up by 15 dB: the passband level is taken among the bands centred
    # 250-4000 Hz, where the response is 0 dB, so no band falls 10 dB below it (by the
    # method's definition) -- with the level taken over all bands a low edge would appear.
    bands, ref_db = _arrays(effort_band_levels_db("loud"))
    resp = np.where(bands >= 5000, 15.0, 0.0)
    e = passband_edges(bl(bands, ref_db - 40.0 + resp), reference="auto")
    assert e.low_hz is None and e.high_hz is None
    assert e.passband_level_db == pytest.approx(-40.0, abs=1e-9)


def test_edges_too_few_bands():
    e = passband_edges(bl([25.0, 31.5, 40.0], [-30.0, -30.0, -30.0]))
    assert e.low_hz is None and e.high_hz is None and e.passband_level_db is None


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"reference": "nonesuch"}, "reference must be one of auto, byrne1994"),
        ({"reference": "auto", "effort_fit_span_hz": (2000.0, 500.0)}, "span_hz must be"),
        ({"reference": "auto", "effort_fit_span_hz": 500.0}, "span_hz must be"),
        ({"drop_db": 0.0}, "drop_db must be positive"),
        ({"noise": bl([100.0, 125.0], [1.0, 2.0])}, "noise must be on the bands of speech"),
    ],
)
def test_edges_bad_options(kwargs, match):
    bands, ref_db = _arrays(reference_band_levels_db("byrne1994"))
    with pytest.raises(MeasurementError, match=match):
        passband_edges(bl(bands, ref_db), **kwargs)


def test_reference_tables():
    # Byrne et al. (1994) universal LTASS sums to 70 dB SPL overall (openMHA table; its
    # band sum computes to 70.03 dB); ANSI S3.5-1997 Table 3 normal effort sums to 62.35 dB SPL
    # (the table's band sum computes to 62.36 dB).
    _, byrne = _arrays(reference_band_levels_db("byrne1994"))
    assert 10 * np.log10(np.sum(10 ** (byrne / 10))) == pytest.approx(70.03, abs=0.01)
    bands, ansi = _arrays(reference_band_levels_db("ansi_s3.5"))
    assert bands[0] == 160 and bands[-1] == 8000 and bands.size == 18
    assert 10 * np.log10(np.sum(10 ** (ansi / 10))) == pytest.approx(62.36, abs=0.01)
    with pytest.raises(MeasurementError, match="reference spectrum must be one of"):
        reference_band_levels_db("x")


def test_effort_reference_tables():
    # ANSI S3.5-1997 Table 3 band levels (U + Delta) over 160-8000 Hz sum to 62.36 / 68.28 /
    # 74.86 / 82.36 dB SPL for normal / raised / loud / shout (computed from the
    # table; the standard states 62.35 / 68.34 / 74.85 / 82.30).
    expected = {"normal": 62.36, "raised": 68.28, "loud": 74.86, "shout": 82.36}
    for name, effort in zip(EFFORT_REFERENCES, VOCAL_EFFORTS):
        assert name in REFERENCE_SPECTRA
        bands, band_db = _arrays(reference_band_levels_db(name))
        assert bands[0] == 63 and bands[-1] == 16000 and bands.size == 25
        inside = (bands >= 160) & (bands <= 8000)
        np.testing.assert_allclose(band_db[inside], _table_band_db(effort), atol=1e-12)
        assert 10 * np.log10(np.sum(10 ** (band_db[inside] / 10))) == pytest.approx(expected[effort], abs=0.01)
        # Outside 160-8000 Hz: the Byrne et al. (1994) LTASS shape joined at
        # the table's end bands, e.g. 63 Hz lies 38.6 - 56.8 = -18.2 dB re 160 Hz and 16 kHz
        # 40.7 - 43.7 = -3.0 dB re 8 kHz.
        assert band_db[0] - band_db[bands == 160][0] == pytest.approx(38.6 - 56.8, abs=1e-9)
        assert band_db[-1] - band_db[bands == 8000][0] == pytest.approx(40.7 - 43.7, abs=1e-9)
        assert not band_db.flags.writeable
    np.testing.assert_array_equal(BYRNE_1994_BANDS_HZ, effort_band_levels_db("normal").nominal_hz)
    assert BYRNE_1994_LTASS_BAND_DB.size == 25


def test_effort_scale_interpolates_in_db():
    # Between tabulated efforts the band levels are interpolated linearly in dB; the integer
    # points are the tables themselves (definition of the effort scale).
    _, raised = _arrays(effort_band_levels_db("raised"))
    _, loud = _arrays(effort_band_levels_db("loud"))
    _, mid = _arrays(effort_band_levels_db(1.5))
    np.testing.assert_allclose(mid, 0.5 * (raised + loud), atol=1e-12)
    np.testing.assert_allclose(effort_band_levels_db(3).levels_db, effort_band_levels_db("shout").levels_db, atol=1e-12)
    np.testing.assert_allclose(effort_band_levels_db(0.0).levels_db, effort_band_levels_db("normal").levels_db, atol=1e-12)


@pytest.mark.parametrize("effort", ["whisper", 3.5, -0.1, float("nan"), None])
def test_effort_reference_bad_input(effort):
    with pytest.raises(MeasurementError, match="effort must be one of normal, raised, loud, shout or a number"):
        effort_band_levels_db(effort)
