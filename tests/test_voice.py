"""Talker F0 range: our YIN estimator and the bounded reservoir."""

from __future__ import annotations

import numpy as np
import pytest

from voiceband.errors import MeasurementError, SignalValueError
from voiceband.spectrum import analyze_spectrum
from voiceband.voice import VoiceReservoir, VoiceResult, measure_voice, yin_f0


def harmonic_complex(rng, fs, f0_hz, *, amplitude=0.1, nharm=20):
    """Harmonics k * f0(t), amplitudes 1/k, random phases; ``f0_hz`` is an array per sample."""
    phase = 2 * np.pi * np.cumsum(f0_hz) / fs
    top = float(np.max(f0_hz))
    x = sum(np.sin(k * phase + rng.uniform(0, 2 * np.pi)) / k for k in range(1, nharm + 1) if k * top < 0.45 * fs)
    return amplitude * x


def glide(fs, seconds, f_start, f_end):
    """Exponential F0 glide; its median over time is sqrt(f_start * f_end) (analytic)."""
    t = np.arange(int(seconds * fs)) / fs
    return f_start * (f_end / f_start) ** (t / seconds)


@pytest.mark.parametrize("f0", [80.0, 150.0, 220.0, 380.0])
def test_yin_on_steady_harmonic_complex(rng, f0):
    # Known F0 (analytic): YIN with parabolic interpolation within 0.5 %.
    fs = 8000
    x = harmonic_complex(rng, fs, np.full(fs * 2, f0))
    est, level, start = yin_f0(x, fs)
    assert np.isfinite(est).mean() > 0.95
    assert np.nanmedian(est) == pytest.approx(f0, rel=0.005)
    assert start[1] - start[0] == pytest.approx(0.01)
    assert np.median(level) == pytest.approx(10 * np.log10(np.mean(x**2)), abs=0.5)


def test_yin_calls_white_noise_unvoiced(rng):
    est, _, _ = yin_f0(0.1 * rng.standard_normal(8000 * 2), 8000)
    assert np.isfinite(est).mean() < 0.05


@pytest.mark.parametrize("f_start, f_end", [(90.0, 250.0), (250.0, 90.0)])
def test_f0_range_of_glide_against_pyin(rng, f_start, f_end):
    # Reference: librosa.pyin (general-purpose reference library, test-only) on the same
    # harmonic complex with an F0 glide 90-250 Hz: median within 3 %, 5th/95th percentiles
    # within 5 %; the analytic median of an exponential glide is sqrt(90 * 250) = 150 Hz.
    import librosa  # test-only reference; kept out of module start-up

    fs = 8000
    f0 = glide(fs, 3.0, f_start, f_end)
    x = harmonic_complex(rng, fs, f0)
    ours = measure_voice(x, fs)
    ref, voiced, _ = librosa.pyin(x, fmin=60, fmax=400, sr=fs, frame_length=512, hop_length=80)
    ref = ref[voiced]
    assert isinstance(ours, VoiceResult)
    assert ours.f0_median_hz == pytest.approx(np.median(ref), rel=0.03)
    assert ours.f0_p5_hz == pytest.approx(np.percentile(ref, 5), rel=0.05)
    assert ours.f0_p95_hz == pytest.approx(np.percentile(ref, 95), rel=0.05)
    assert ours.f0_median_hz == pytest.approx(np.sqrt(f_start * f_end), rel=0.02)
    assert ours.voiced_frame_count > 200 and ours.analysed_s == pytest.approx(3.0)


def test_reservoir_is_bounded_and_spread_over_the_file(rng):
    # 4 minutes: first half F0 = 100 Hz, second half 200 Hz; a 10 s reservoir must hold
    # chunks from both halves (evenly spread), so p5 ~ 100 Hz and p95 ~ 200 Hz.
    fs = 8000
    half = fs * 120
    acc = VoiceReservoir(fs, capacity_s=10.0)
    for f0 in (100.0, 200.0):
        x = harmonic_complex(rng, fs, np.full(half, f0))
        for i in range(0, half, 50000):
            acc.update(x[i : i + 50000])
    res = acc.result()
    assert res.analysed_s <= 10.0
    assert res.f0_p5_hz == pytest.approx(100.0, rel=0.01)
    assert res.f0_p95_hz == pytest.approx(200.0, rel=0.01)


def test_reservoir_block_invariance_and_level_gate(rng):
    # Loud part (-20 dBFS class) at 110 Hz, quiet part 25 dB lower at 210 Hz: with the
    # speech threshold between them only the loud part counts.
    fs = 8000
    loud = harmonic_complex(rng, fs, np.full(fs * 4, 110.0), amplitude=0.1)
    quiet = harmonic_complex(rng, fs, np.full(fs * 4, 210.0), amplitude=0.1 * 10 ** (-25 / 20))
    x = np.concatenate((loud, quiet, loud))
    whole = VoiceReservoir(fs)
    whole.update(x)
    pieces = VoiceReservoir(fs)
    for i in range(0, x.size, 777):
        pieces.update(x[i : i + 777])
    assert pieces.result() == whole.result()
    both = whole.result()
    assert both.f0_p95_hz == pytest.approx(210.0, rel=0.01)
    gate = 10 * np.log10(np.mean(loud**2)) - 12.0
    gated = whole.result(min_level_dbfs=gate)
    assert gated.f0_p95_hz == pytest.approx(110.0, rel=0.01)
    assert gated.analysed_s == pytest.approx(8.0)


def test_spectral_accumulator_reports_voice_range(rng):
    # Syllable-like bursts with F0 drawn from 100-180 Hz, in quiet noise: the F0 range
    # found through the full accumulator lies inside the synthetic range.
    fs = 8000
    n = fs * 12
    t = np.arange(n) / fs
    f0 = 140.0 + 40.0 * np.sin(2 * np.pi * 0.37 * t)
    gate = ((t % 0.6) < 0.35).astype(float)
    x = harmonic_complex(rng, fs, f0) * gate + 1e-4 * rng.standard_normal(n)
    voice = analyze_spectrum(x, fs).voice
    assert 95.0 < voice.f0_p5_hz < voice.f0_median_hz < voice.f0_p95_hz < 185.0


def test_no_f0_when_nothing_is_voiced(rng):
    fs = 8000
    assert measure_voice(0.1 * rng.standard_normal(fs * 3), fs).f0_median_hz is None
    short = measure_voice(np.zeros(100), fs)
    assert short == VoiceResult(None, None, None, 0, 0.0)


def test_voice_bad_input():
    with pytest.raises(MeasurementError, match="fmin_hz < fmax_hz"):
        yin_f0(np.zeros(8000), 8000, fmin_hz=300.0, fmax_hz=100.0)
    with pytest.raises(SignalValueError, match="one-dimensional"):
        yin_f0(np.zeros((10, 10)), 8000)
    with pytest.raises(MeasurementError, match="capacity_s >= chunk_s"):
        VoiceReservoir(8000, capacity_s=0.1, chunk_s=0.5)
    with pytest.raises(SignalValueError, match="one-dimensional"):
        VoiceReservoir(8000).update(np.zeros((3, 3)))
