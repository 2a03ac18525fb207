"""Noise generators: white, pink, receiver hiss, mains hum, static crashes."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from voiceband.errors import SignalValueError
from voiceband.synth.noise import (
    DEFAULT_HUM_HARMONICS_DB,
    mains_hum,
    pink_noise,
    receiver_hiss,
    static_crashes,
    white_noise,
)

FS = 48000


def _rms_dbfs(x):
    return 10 * np.log10(np.mean(x * x))


def _psd_slope_db_per_octave(x, fs, lo, hi):
    """Least-squares slope of the Welch PSD (dB) against log2 f over [lo, hi] Hz."""
    f, p = signal.welch(x, fs, nperseg=8192)
    m = (f >= lo) & (f <= hi)
    return np.polyfit(np.log2(f[m]), 10 * np.log10(p[m]), 1)[0]


@pytest.mark.parametrize("gen", [white_noise, pink_noise])
def test_rms_level_is_exact(gen):
    # Levels are RMS in the project convention, 10·log10(mean x²).
    assert _rms_dbfs(gen(2.0, FS, level_dbfs=-23.0, seed=4)) == pytest.approx(-23.0, abs=1e-9)


def test_white_noise_is_flat():
    # White noise: PSD slope 0 dB/octave (analytic).
    x = white_noise(20.0, FS, seed=1)
    assert _psd_slope_db_per_octave(x, FS, 50, 20000) == pytest.approx(0.0, abs=0.1)


def test_pink_noise_slope_is_minus_3_01_db_per_octave():
    # Pink noise: PSD ∝ 1/f, i.e. −10·log10(2) = −3.01 dB per octave (analytic); the
    # one-third-octave band levels are then flat (DEVELOPERS.md tilt convention: 0.0 dB/oct).
    x = pink_noise(20.0, FS, seed=1)
    assert _psd_slope_db_per_octave(x, FS, 50, 20000) == pytest.approx(-3.01, abs=0.1)
    f, p = signal.welch(x, FS, nperseg=FS)
    centres = 1000.0 * 2.0 ** (np.arange(-10, 14) / 3.0)  # 100 Hz … 16 kHz
    bands = [10 * np.log10(p[(f >= c * 2 ** (-1 / 6)) & (f < c * 2 ** (1 / 6))].sum()) for c in centres]
    assert np.polyfit(np.log2(centres), bands, 1)[0] == pytest.approx(0.0, abs=0.1)


def test_noise_is_deterministic_from_seed():
    assert np.array_equal(pink_noise(1.0, FS, seed=9), pink_noise(1.0, FS, seed=9))
    assert not np.array_equal(pink_noise(1.0, FS, seed=9), pink_noise(1.0, FS, seed=10))


def test_receiver_hiss_passband_edges():
    # Butterworth band-pass: |H|² = 1/2 (−3.01 dB) at both edges (analytic).
    x = receiver_hiss(30.0, FS, low_hz=300, high_hz=2700, order=4, level_dbfs=-40, seed=2)
    assert _rms_dbfs(x) == pytest.approx(-40.0, abs=1e-9)
    f, p = signal.welch(x, FS, nperseg=FS // 2)
    mid = np.median(10 * np.log10(p[(f > 800) & (f < 1200)]))
    for edge in (300.0, 2700.0):
        near = (f > edge - 10) & (f < edge + 10)
        assert np.mean(10 * np.log10(p[near])) - mid == pytest.approx(-3.01, abs=0.6)
    # Far outside the band: 4th-order high-pass at 150 Hz is 24 dB down (analytic, 4 poles × 6 dB/oct).
    assert np.mean(10 * np.log10(p[(f > 140) & (f < 160)])) - mid < -20.0


def test_mains_hum_harmonic_levels():
    # Harmonic k at (level_dbfs + harmonics_db[k-1]) RMS: amplitude √2·10^(L/20) (analytic).
    x = mains_hum(1.0, FS, mains_hz=50.0, level_dbfs=-40.0, seed=3)
    spec = np.abs(np.fft.rfft(x)) * 2 / x.size  # 1 s: bin k is k Hz
    for k, rel in enumerate(DEFAULT_HUM_HARMONICS_DB, start=1):
        level = 20 * np.log10(spec[50 * k] / np.sqrt(2))
        assert level == pytest.approx(-40.0 + rel, abs=1e-6)
    spec60 = np.abs(np.fft.rfft(mains_hum(1.0, FS, mains_hz=60.0, harmonics_db=(0.0, -6.0), seed=3))) * 2 / FS
    assert 20 * np.log10(spec60[120] / spec60[60]) == pytest.approx(-6.0, abs=1e-6)
    assert spec60[180] < 1e-9


def test_static_crashes_peak_and_sparsity():
    x = static_crashes(20.0, FS, rate_per_s=0.5, peak_dbfs=-6.0, seed=5)
    assert 20 * np.log10(np.max(np.abs(x))) == pytest.approx(-6.0, abs=1e-9)
    # Decaying bursts, silent between them: most samples are (near) zero.
    assert np.mean(np.abs(x) < 1e-4) > 0.8
    assert np.array_equal(x, static_crashes(20.0, FS, rate_per_s=0.5, peak_dbfs=-6.0, seed=5))
    assert not np.any(static_crashes(5.0, FS, rate_per_s=0.0))


@pytest.mark.parametrize(
    "call, match",
    [
        (lambda: white_noise(0.0, FS), "duration_s"),
        (lambda: pink_noise(1.0, FS, level_dbfs=float("nan")), "level_dbfs"),
        (lambda: receiver_hiss(1.0, 8000, low_hz=300, high_hz=5000), "passband"),
        (lambda: receiver_hiss(1.0, FS, order=0), "order"),
        (lambda: mains_hum(1.0, FS, mains_hz=100.0), "mains_hz"),
        (lambda: mains_hum(1.0, FS, harmonics_db=()), "harmonics_db"),
        (lambda: static_crashes(1.0, FS, rate_per_s=-1.0), "rate_per_s"),
    ],
)
def test_bad_input_raises_one_sentence(call, match):
    with pytest.raises(SignalValueError, match=match):
        call()
