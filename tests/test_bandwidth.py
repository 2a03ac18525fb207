"""Occupied bandwidth (ITU-R SM.328 beta-% method) and passband-edge estimation."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import optimize, signal

from voiceband.bandwidth import (
    OccupiedBandwidth,
    PassbandEdges,
    cumulative_power,
    occupied_bandwidth,
    passband_edges,
)
from voiceband.errors import MeasurementError
from voiceband.reference_spectra import reference_band_levels_db
from voiceband.spectrum import analyze_spectrum


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
    bands, band_db = reference_band_levels_db(reference)
    spectrum_db = band_db - 10.0 * np.log10(bands * (10 ** 0.05 - 10 ** -0.05))
    f = np.fft.rfftfreq(n, 1.0 / fs)
    shape_db = np.interp(np.log2(np.maximum(f, 1.0)), np.log2(bands), spectrum_db)
    spec = np.fft.rfft(rng.standard_normal(n)) * 10 ** (shape_db / 20.0)
    spec[0] = 0.0
    x = np.fft.irfft(spec, n)
    return x / x.std()


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
    obw = analyze_spectrum(x, fs).occupied_bandwidth
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
    obw = analyze_spectrum(x, fs).occupied_bandwidth
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
    # Power outside the stated span must not move the edges (trade notes 1.1: DC and hum
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


def _exact_centre(nominal):
    # IEC 61260-1 base-10 exact mid-band frequency.
    return 1000.0 * 10 ** (np.round(10 * np.log10(np.asarray(nominal) / 1000.0)) / 10)


def test_edges_of_synthetic_response_are_analytic():
    # Response flat between the 400 Hz and 2000 Hz bands and falling 20 dB/octave outside,
    # on top of the reference spectrum: the -10 dB points are half an octave outside the
    # knees (analytic; the (1,2,1) smoothing leaves a straight ramp unchanged).
    bands, ref_db = reference_band_levels_db("byrne1994")
    fc = _exact_centre(bands)
    knee_lo, knee_hi = _exact_centre(400), _exact_centre(2000)
    resp = -20.0 * np.maximum(0, np.log2(knee_lo / fc)) - 20.0 * np.maximum(0, np.log2(fc / knee_hi))
    e = passband_edges(bands, ref_db - 40.0 + resp)
    assert isinstance(e, PassbandEdges)
    assert e.low_hz == pytest.approx(knee_lo / np.sqrt(2), rel=1e-6)
    assert e.high_hz == pytest.approx(knee_hi * np.sqrt(2), rel=1e-6)
    assert e.passband_level_db == pytest.approx(-40.0, abs=1e-9)
    assert (e.lowest_band_hz, e.highest_band_hz) == (63.0, 16000.0)


def test_edges_none_when_response_does_not_fall():
    # A flat response over the whole table: neither edge lies inside the analysed bands.
    bands, ref_db = reference_band_levels_db("byrne1994")
    e = passband_edges(bands, ref_db - 30.0)
    assert e.low_hz is None and e.high_hz is None
    assert e.passband_level_db == pytest.approx(-30.0)


def test_edges_noise_subtraction():
    # Speech that sinks into a flat noise floor above ~2 kHz: bands where speech is not
    # above the noise count as outside the passband, so the high edge is found there.
    bands, ref_db = reference_band_levels_db("ansi_s3.5")
    fc = _exact_centre(bands)
    speech_power = 10 ** ((ref_db - 40.0) / 10)
    noise_power = np.where(fc > 2200, speech_power, 1e-12 * speech_power)
    total_db = 10 * np.log10(speech_power * (fc <= 2200) + noise_power)
    e = passband_edges(bands, total_db, noise_band_db=10 * np.log10(noise_power), reference="ansi_s3.5")
    assert e.high_hz is not None and 2000 < e.high_hz < 2600
    e_raw = passband_edges(bands, total_db, reference="ansi_s3.5")
    assert e_raw.high_hz is None


def test_edges_of_filtered_speech_shaped_noise(rng):
    # Noise shaped to the ANSI S3.5-1997 Table 3 standard speech spectrum, gated like
    # speech, through a 4th-order Butterworth band-pass 300-2700 Hz: the estimated edges
    # fall near the filter's -10 dB points (scipy sosfreqz as the reference) -- within 2 %
    # with the matching reference spectrum and within 10 % with the default (Byrne 1994).
    fs = 16000
    n = fs * 40
    t = np.arange(n) / fs
    gate = ((t % 2.2) < 1.5).astype(float)
    sos = signal.butter(4, [300, 2700], "bandpass", fs=fs, output="sos")
    x = signal.sosfilt(sos, 0.1 * speech_shaped_noise(rng, fs, n, "ansi_s3.5") * gate)
    x += 1e-5 * rng.standard_normal(n)
    lo_ref, hi_ref = minus_10_db_points(sos, fs, (50, 300), (2700, 7000))
    res = analyze_spectrum(x, fs)
    assert res.activity.pause_frame_count > 0
    default = res.edges
    assert default.reference == "byrne1994"
    assert default.low_hz == pytest.approx(lo_ref, rel=0.10)
    assert default.high_hz == pytest.approx(hi_ref, rel=0.10)
    matched = passband_edges(
        res.spectrum.bands_hz,
        res.spectrum.speech_band_db,
        noise_band_db=res.spectrum.noise_band_db,
        reference="ansi_s3.5",
    )
    assert matched.low_hz == pytest.approx(lo_ref, rel=0.02)
    assert matched.high_hz == pytest.approx(hi_ref, rel=0.02)


def test_edges_too_few_bands():
    e = passband_edges([25.0, 31.5, 40.0], [-30.0, -30.0, -30.0])
    assert e.low_hz is None and e.high_hz is None and e.passband_level_db is None


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"reference": "nonesuch"}, "reference must be one of"),
        ({"drop_db": 0.0}, "drop_db must be positive"),
        ({"noise_band_db": [1.0, 2.0]}, "noise_band_db must have the shape"),
    ],
)
def test_edges_bad_options(kwargs, match):
    bands, ref_db = reference_band_levels_db("byrne1994")
    with pytest.raises(MeasurementError, match=match):
        passband_edges(bands, ref_db, **kwargs)


def test_reference_tables():
    # Byrne et al. (1994) universal LTASS sums to 70 dB SPL overall (openMHA table; trade
    # notes 5.1 give 70.03 dB); ANSI S3.5-1997 Table 3 normal effort sums to 62.35 dB SPL
    # (reference notes compute 62.36 dB from the table).
    _, byrne = reference_band_levels_db("byrne1994")
    assert 10 * np.log10(np.sum(10 ** (byrne / 10))) == pytest.approx(70.03, abs=0.01)
    bands, ansi = reference_band_levels_db("ansi_s3.5")
    assert bands[0] == 160 and bands[-1] == 8000 and bands.size == 18
    assert 10 * np.log10(np.sum(10 ** (ansi / 10))) == pytest.approx(62.36, abs=0.01)
    with pytest.raises(MeasurementError, match="reference spectrum must be one of"):
        reference_band_levels_db("x")
