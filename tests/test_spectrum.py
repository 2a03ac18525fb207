"""Long-term spectrum, one-third-octave bands, tilt and the streamed RecordingAccumulator."""

from __future__ import annotations

import numpy as np
import pytest

from voiceband.analysis import Measurements, RecordingAccumulator, measure_recording
from voiceband.bands import NOMINAL_THIRD_OCTAVE_HZ, BandLevels, third_octave_bands
from voiceband.errors import SignalValueError
from voiceband.measurement.spectrum import (
    band_powers,
    psd_tilt_db_per_octave,
    third_octave_levels_db,
    tilt_db_per_octave,
)

TEN_LOG_2 = 10 * np.log10(2.0)  # 3.0103 dB per octave


def pink_noise(rng, n, fs):
    """Gaussian noise with PSD proportional to 1/f (FFT-domain shaping), DC removed."""
    spec = np.fft.rfft(rng.standard_normal(n))
    f = np.fft.rfftfreq(n, 1.0 / fs)
    spec[1:] /= np.sqrt(f[1:])
    spec[0] = 0.0
    x = np.fft.irfft(spec, n)
    return x / x.std()


def bursts_with_noise(rng, fs, seconds, *, noise_rms, burst_rms=0.1):
    """Gated tone-complex bursts (0.4 s on, 0.4 s off) plus steady white noise."""
    n = int(fs * seconds)
    t = np.arange(n) / fs
    tone = sum(np.sin(2 * np.pi * f * t + k) / (k + 1) for k, f in enumerate((150, 450, 900, 1800)))
    gate = ((t % 0.8) < 0.4).astype(float)
    tone *= burst_rms / np.sqrt(np.mean(tone[gate > 0] ** 2))
    return tone * gate + noise_rms * rng.standard_normal(n)


# ---------------------------------------------------------------------------------------
# Bands
# ---------------------------------------------------------------------------------------


def test_band_definitions_follow_iec_61260():
    # IEC 61260-1 base-10 bands: exact mid-band 1000 * 10^(x/10), edges 10^(+/-0.05) times it;
    # nominal labels per IEC 61260-1 Annex E / ISO 266.
    b48 = third_octave_bands(48000)
    assert tuple(b48.nominal_hz) == NOMINAL_THIRD_OCTAVE_HZ  # 20 kHz band top 22.4 kHz < 24 kHz
    i1k = list(b48.nominal_hz).index(1000.0)
    assert b48.centre_hz[i1k] == 1000.0
    assert b48.lower_hz[i1k] == pytest.approx(891.25, abs=0.01)
    assert b48.upper_hz[i1k] == pytest.approx(1122.02, abs=0.01)
    assert b48.centre_hz[list(b48.nominal_hz).index(31.5)] == pytest.approx(31.623, abs=1e-3)
    np.testing.assert_allclose(b48.upper_hz[:-1], b48.lower_hz[1:], rtol=1e-12)
    # 8 kHz sampling: the 3150 Hz band (top 3548 Hz) is the last below 4 kHz.
    assert third_octave_bands(8000).nominal_hz[-1] == 3150.0
    assert third_octave_bands(44100).nominal_hz[-1] == 16000.0  # 20 kHz band top 22.4 kHz > 22.05 kHz
    with pytest.raises(ValueError):
        b48.nominal_hz[0] = 1.0  # read-only


def test_band_level_of_full_scale_sine_at_1_khz():
    # A sine of amplitude 1 has mean square 1/2: -3.01 dBFS with 0 dBFS = full-scale square
    # wave RMS (DEVELOPERS.md convention; analytic).  All its power lies in the 1 kHz band.
    fs = 48000
    t = np.arange(fs * 3) / fs
    res = measure_recording(np.sin(2 * np.pi * 1000 * t), fs)
    sp = res.spectrum
    i1k = list(sp.bands_hz).index(1000.0)
    assert sp.speech_band_db[i1k] == pytest.approx(-3.0103, abs=0.01)
    others = np.delete(sp.speech_band_db, i1k)
    assert np.all(others < -3.0103 - 40.0)
    assert res.activity.speech_level_dbfs == pytest.approx(-3.0103, abs=0.001)


def test_band_powers_sum_to_total(rng):
    # Contiguous bands partition the frequency axis, so band powers plus what lies below the
    # first and above the last band add up to the PSD's integral (Parseval, fractional bins).
    fs = 48000
    res = measure_recording(0.1 * rng.standard_normal(fs * 4), fs)
    sp = res.spectrum
    psd, f = sp.speech_psd_fs2_per_hz, sp.freqs_hz
    bands = third_octave_bands(fs)
    df = f[1] - f[0]
    inside = band_powers(psd, f, bands.lower_hz, bands.upper_hz).sum()
    # Each bin stands for +/- df/2 around its frequency, the Nyquist bin included.
    outside = band_powers(psd, f, [0.0, bands.upper_hz[-1]], [bands.lower_hz[0], fs / 2 + df / 2]).sum()
    total = psd.sum() * df
    assert inside + outside == pytest.approx(total, rel=1e-12)
    # ... and that integral is the mean square of the signal (0.01), within Welch scatter.
    assert total == pytest.approx(0.01, rel=0.02)
    bl = third_octave_levels_db(psd, f)
    nominal, levels = bl.nominal_hz, bl.levels_db
    np.testing.assert_allclose(levels, sp.speech_band_db, atol=1e-12)
    assert tuple(nominal) == tuple(sp.bands_hz)


def test_white_noise_psd_is_flat_at_variance_over_nyquist(rng):
    # One-sided PSD of white noise of variance s^2 is s^2 / (fs/2) per Hz (analytic).
    fs = 16000
    res = measure_recording(0.1 * rng.standard_normal(fs * 10), fs)
    psd = res.spectrum.speech_psd_fs2_per_hz[1:-1]
    assert np.mean(psd) == pytest.approx(0.01 / (fs / 2), rel=0.01)


# ---------------------------------------------------------------------------------------
# Tilt
# ---------------------------------------------------------------------------------------


def test_tilt_of_analytic_band_levels():
    # White noise: band power proportional to band width, i.e. to f -> +10 log10(2) per
    # octave on band levels and 0 on spectrum levels (analytic).
    bands = third_octave_bands(48000)
    width = bands.upper_hz - bands.lower_hz
    white = 10 * np.log10(width)
    assert tilt_db_per_octave(BandLevels(bands, white)) == pytest.approx(TEN_LOG_2, rel=1e-9)
    assert psd_tilt_db_per_octave(BandLevels(bands, white)) == pytest.approx(0.0, abs=1e-9)
    pink = np.zeros_like(white)
    assert tilt_db_per_octave(BandLevels(bands, pink)) == pytest.approx(0.0, abs=1e-12)
    assert psd_tilt_db_per_octave(BandLevels(bands, pink)) == pytest.approx(-TEN_LOG_2, rel=1e-9)
    assert tilt_db_per_octave(BandLevels(bands, pink), span_hz=(900, 1100)) is None  # one band


@pytest.mark.parametrize("colour, band_tilt", [("white", TEN_LOG_2), ("pink", 0.0)])
def test_tilt_of_noise_through_the_accumulator(rng, colour, band_tilt):
    # White noise reads +3.01 dB/octave on one-third-octave band levels, pink noise 0.0,
    # over 300-3000 Hz; the PSD-basis slope is 3.01 dB/octave lower (analytic; issue 2).
    fs = 48000
    n = fs * 20
    x = 0.1 * rng.standard_normal(n) if colour == "white" else 0.1 * pink_noise(rng, n, fs)
    sp = measure_recording(x, fs).spectrum
    assert sp.tilt_db_per_octave == pytest.approx(band_tilt, abs=0.1)
    assert sp.tilt_psd_db_per_octave == pytest.approx(band_tilt - TEN_LOG_2, abs=0.1)
    assert sp.tilt_span_hz == (300.0, 3000.0)


# ---------------------------------------------------------------------------------------
# Speech / pause spectra
# ---------------------------------------------------------------------------------------


def test_pause_spectrum_is_the_noise(rng):
    # Bursts over steady white noise of RMS 1e-3 (-60 dBFS): the pause PSD is the noise PSD
    # (flat at s^2 / (fs/2), analytic), the speech PSD holds the burst tones.
    fs = 16000
    res = measure_recording(bursts_with_noise(rng, fs, 20.0, noise_rms=1e-3), fs)
    sp = res.spectrum
    noise = sp.noise_psd_fs2_per_hz
    assert np.median(noise[10:-10]) == pytest.approx(1e-6 / (fs / 2), rel=0.1)
    i500 = list(sp.bands_hz).index(500.0)  # holds the 450 Hz burst tone (band 447-562 Hz)
    assert sp.speech_band_db[i500] > sp.noise_band_db[i500] + 30
    assert sp.speech_frames_transformed > 0 and sp.noise_frames_transformed > 0


def test_block_size_invariance(rng):
    # DEVELOPERS.md streaming contract: results must not depend on how the signal is cut.
    fs = 8000
    x = bursts_with_noise(rng, fs, 12.0, noise_rms=1e-3)
    x += 3e-3 * np.sin(2 * np.pi * 50.0 * np.arange(x.size) / fs)
    results = []
    for block in (x.size, 8192, 1000, 337):
        acc = RecordingAccumulator(fs)
        for i in range(0, x.size, block):
            acc.update(x[i : i + block])
        results.append(acc.result())
    ref = results[0]
    assert isinstance(ref, Measurements)
    for r in results[1:]:
        assert r.activity == ref.activity
        np.testing.assert_allclose(r.spectrum.speech_band_db, ref.spectrum.speech_band_db, atol=1e-5)
        np.testing.assert_allclose(r.spectrum.noise_band_db, ref.spectrum.noise_band_db, atol=1e-5)
        assert r.occupied_bandwidth.width_hz == pytest.approx(ref.occupied_bandwidth.width_hz, rel=1e-6)
        assert r.hum is not None and r.hum.level_dbfs == pytest.approx(ref.hum.level_dbfs, abs=1e-4)
        assert r.voice == ref.voice
        assert r.hum_window_count == ref.hum_window_count


def test_result_does_not_change_the_accumulator(rng):
    fs = 8000
    x = bursts_with_noise(rng, fs, 6.0, noise_rms=1e-3)
    acc = RecordingAccumulator(fs)
    acc.update(x[:20000])
    first = acc.result()
    again = acc.result()
    np.testing.assert_array_equal(first.spectrum.speech_band_db, again.spectrum.speech_band_db)
    acc.update(x[20000:])
    whole = measure_recording(x, fs)
    np.testing.assert_allclose(acc.result().spectrum.speech_band_db, whole.spectrum.speech_band_db, atol=1e-5)


def test_thinned_long_recording_weights_each_stretch_by_duration():
    # After 2048 frames the transformed frames thin out (stride 2, 4, ...); each is weighted
    # by its stride, so two equal-length halves count equally (analytic: a 500 Hz sine for
    # 6 min then a 1600 Hz sine of the same amplitude for 6 min -> equal band levels, each
    # 3.01 dB below the sine's own level since each is present half of the time).
    fs = 8000
    half = fs * 360
    t = np.arange(half) / fs
    acc = RecordingAccumulator(fs)
    for f in (500.0, 1600.0):
        x = np.sin(2 * np.pi * f * t)
        for i in range(0, half, 1 << 18):
            acc.update(x[i : i + (1 << 18)])
    sp = acc.result().spectrum
    bands = list(sp.bands_hz)
    l500, l1600 = sp.speech_band_db[bands.index(500.0)], sp.speech_band_db[bands.index(1600.0)]
    assert l500 == pytest.approx(l1600, abs=0.05)
    assert l500 == pytest.approx(-3.0103 - 3.0103, abs=0.05)
    # 11249 frames of 1024 with hop 512: the first 2048 all transformed, every 2nd of the
    # next 4096, every 4th of the remaining 5105 (indices 6144 ... 11248).
    n_frames = (2 * half - 1024) // 512 + 1
    assert sp.speech_frames_transformed == 2048 + 2048 + (n_frames - 6144 + 3) // 4


def test_digital_silence_and_short_input():
    fs = 8000
    silent = measure_recording(np.zeros(fs * 5), fs)
    assert silent.activity.speech_frame_count == 0
    assert silent.activity.noise_floor_dbfs == -np.inf
    assert silent.spectrum.speech_psd_fs2_per_hz is None and silent.spectrum.speech_band_db is None
    assert silent.occupied_bandwidth is None and silent.edges is None and silent.hum is None
    assert silent.voice.f0_median_hz is None
    short = measure_recording(np.ones(100), fs)  # shorter than one 1024-sample frame
    assert short.spectrum is None and short.activity.frame_count == 0
    assert short.hum is None and short.hum_window_count == 0


def test_bad_input():
    with pytest.raises(SignalValueError, match="8000–192000 Hz"):
        RecordingAccumulator(1000)
    acc = RecordingAccumulator(8000)
    with pytest.raises(SignalValueError, match="one channel"):
        acc.update(np.zeros((10, 2)))
    with pytest.raises(SignalValueError, match="NaN or infinite"):
        acc.update(np.full(5000, np.nan))
