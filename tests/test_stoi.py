"""STOI (Taal et al. 2011): our implementation against known answers and against `pystoi` (test-only).

pystoi is a general-purpose reference implementation of the same paper; agreement within 0.005 is asked
for (the resampling filters differ slightly). Test speech is synthesised here with a seeded RNG: voiced
syllables (harmonic complexes with a gliding F0 and two formant-like peaks), fricative noise bursts, a
syllable-rate envelope and pauses.
"""

from __future__ import annotations

import numpy as np
import pytest
from pystoi import stoi as reference_stoi

from voiceband.errors import MeasurementError, SignalValueError
from voiceband.intelligibility import stoi


def speech_like(rng, fs, seconds=2.6):
    """Speech-like test signal: syllables of 120-280 ms at about 4 per second, with pauses."""
    n = int(seconds * fs)
    x = np.zeros(n)
    t0 = int(0.15 * fs)
    while t0 < n - int(0.3 * fs):
        dur = int(rng.uniform(0.12, 0.28) * fs)
        t = np.arange(dur) / fs
        if rng.random() < 0.75:  # voiced syllable
            f0 = rng.uniform(100, 200) * (1 + 0.15 * np.sin(2 * np.pi * rng.uniform(1, 3) * t))
            phase = 2 * np.pi * np.cumsum(f0) / fs
            formants = rng.uniform([400, 1100], [900, 2400])
            seg = np.zeros(dur)
            for k in range(1, int(4000 / 100)):
                fk = k * f0.mean()
                gain = sum(1.0 / (1 + ((fk - fm) / 120.0) ** 2) for fm in formants) + 0.05
                seg += gain / k**0.5 * np.sin(k * phase)
        else:  # fricative: noise emphasised at high frequencies by a first difference
            seg = np.diff(rng.standard_normal(dur + 1)) * 0.6
        env = np.sin(np.pi * np.arange(dur) / dur) ** 2 * rng.uniform(0.3, 1.0)
        x[t0 : t0 + dur] += seg * env
        t0 += dur + int(rng.uniform(0.04, 0.12) * fs)
        if rng.random() < 0.15:
            t0 += int(rng.uniform(0.25, 0.45) * fs)  # a pause, removed as silent frames
    return x / np.max(np.abs(x)) * 0.5


def add_noise(rng, x, snr_db):
    noise = rng.standard_normal(x.size)
    noise *= np.sqrt(np.mean(x**2) / np.mean(noise**2)) * 10 ** (-snr_db / 20)
    return x + noise


@pytest.mark.parametrize("fs", [8000, 10000, 16000, 44100])
def test_identical_signals_give_one(rng, fs):
    # Eq. 4: the correlation of a segment with itself is 1, and the clipping of Eq. 3 leaves it unchanged.
    x = speech_like(rng, fs)
    assert stoi(x, x, fs) == pytest.approx(1.0, abs=1e-9)


@pytest.mark.parametrize("fs", [10000, 16000])
@pytest.mark.parametrize("snr_db", [-5.0, 0.0, 5.0, 15.0])
def test_matches_pystoi_in_white_noise(rng, fs, snr_db):
    x = speech_like(rng, fs)
    y = add_noise(rng, x, snr_db)
    assert stoi(x, y, fs) == pytest.approx(reference_stoi(x, y, fs), abs=0.005)


@pytest.mark.parametrize("fs", [8000, 44100])
def test_matches_pystoi_at_other_rates(rng, fs):
    x = speech_like(rng, fs)
    y = add_noise(rng, x, 3.0)
    assert stoi(x, y, fs) == pytest.approx(reference_stoi(x, y, fs), abs=0.005)


def test_matches_pystoi_for_clipping_and_band_limiting(rng):
    from scipy import signal

    fs = 16000
    x = speech_like(rng, fs)
    clipped = np.clip(x, -0.05, 0.05)
    sos = signal.butter(6, [300, 2700], "bandpass", fs=fs, output="sos")
    narrow = signal.sosfilt(sos, x)
    for y in (clipped, narrow, 0.3 * add_noise(rng, clipped, 10.0)):
        assert stoi(x, y, fs) == pytest.approx(reference_stoi(x, y, fs), abs=0.005)


def test_more_noise_scores_lower(rng):
    # Section IV of the paper: STOI falls monotonically with SNR for additive noise.
    fs = 10000
    x = speech_like(rng, fs)
    noise = rng.standard_normal(x.size)
    scores = []
    for snr in (-10.0, -5.0, 0.0, 5.0, 10.0, 20.0):
        y = x + noise * np.sqrt(np.mean(x**2) / np.mean(noise**2)) * 10 ** (-snr / 20)
        scores.append(stoi(x, y, fs))
    assert all(b > a for a, b in zip(scores, scores[1:]))


def test_scale_invariance(rng):
    # Eq. 3 normalises each processed segment to the clean energy: a gain on the processed signal changes
    # nothing (up to floating point).
    fs = 10000
    x = speech_like(rng, fs)
    y = add_noise(rng, x, 5.0)
    assert stoi(x, 0.1 * y, fs) == pytest.approx(stoi(x, y, fs), abs=1e-9)


def test_too_short_raises(rng):
    fs = 10000
    x = rng.standard_normal(int(0.3 * fs))
    with pytest.raises(MeasurementError, match="384 ms"):
        stoi(x, x, fs)


@pytest.mark.parametrize(
    "clean, processed, fs, match",
    [
        (np.zeros(1000), np.zeros(999), 10000, "same length"),
        (np.zeros((2, 1000)), np.zeros((2, 1000)), 10000, "1-D"),
        (np.r_[np.nan, np.zeros(9999)], np.zeros(10000), 10000, "NaN"),
        (np.zeros(10000), np.zeros(10000), 0, "sample_rate_hz"),
        (np.zeros(10000), np.zeros(10000), 44100.5, "sample_rate_hz"),
    ],
)
def test_bad_input(clean, processed, fs, match):
    with pytest.raises(SignalValueError, match=match):
        stoi(clean, processed, fs)
