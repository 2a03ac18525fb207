"""Speech/pause classification, noise floor, SNR and mains hum."""

from __future__ import annotations

import numpy as np
import pytest

from voiceband.measurement.activity import (
    LEVEL_BIN_COUNT,
    LEVEL_MIN_DBFS,
    ActivityAccumulator,
    analysis_frame_length,
    classify_level_bins,
    measure_activity,
    snr_db,
)
from voiceband.measurement.hum import HumAccumulator, HumResult, detect_hum
from voiceband.errors import SignalValueError


def speech_like(rng, fs, seconds, *, f0_range=(100.0, 180.0)):
    """Syllable-like voiced bursts (0.15-0.35 s) with F0 glides and short gaps.

    Harmonic complex, amplitudes 1/k up to 4 kHz, sin^2 envelope; gaps of 0.05-0.2 s,
    and 0.8-1.6 s after every 4th syllable.
    """
    n = int(seconds * fs)
    x = np.zeros(n)
    t, syl = 0, 0
    while t < n:
        length = min(int(rng.uniform(0.15, 0.35) * fs), n - t)
        tt = np.arange(length) / fs
        fa, fb = rng.uniform(*f0_range, 2)
        f0 = fa + (fb - fa) * tt / max(tt[-1], 1e-9)
        phase = 2 * np.pi * np.cumsum(f0) / fs
        k = np.arange(1, int(min(4000.0, 0.45 * fs) // f0_range[1]) + 1)
        seg = ((1.0 / k)[:, None] * np.sin(k[:, None] * phase + rng.uniform(0, 2 * np.pi, k.size)[:, None])).sum(0)
        x[t : t + length] = seg * np.sin(np.pi * np.arange(length) / length) ** 2 * rng.uniform(0.5, 1.0)
        syl += 1
        t += length + int((rng.uniform(0.8, 1.6) if syl % 4 == 0 else rng.uniform(0.05, 0.2)) * fs)
    return x


def talk_with_gaps(rng, fs, overs=6):
    """Speech-like 'overs' of 3-5 s separated by 2.5-4 s pauses (as between transmissions)."""
    parts = []
    for _ in range(overs):
        parts.append(speech_like(rng, fs, rng.uniform(3.0, 5.0)))
        parts.append(np.zeros(int(rng.uniform(2.5, 4.0) * fs)))
    return np.concatenate(parts)


def at_level(x, level_dbfs):
    """Scale so the RMS over the non-silent samples is ``level_dbfs`` (0 dBFS = RMS 1)."""
    active = np.abs(x) > 1e-3 * np.max(np.abs(x))
    return x * 10 ** (level_dbfs / 20) / np.sqrt(np.mean(x[active] ** 2))


def sine(fs, n, freq_hz, level_dbfs):
    """Sine whose RMS is ``level_dbfs`` (amplitude sqrt(2) x RMS)."""
    return np.sqrt(2) * 10 ** (level_dbfs / 20) * np.sin(2 * np.pi * freq_hz * np.arange(n) / fs)


# ---------------------------------------------------------------------------------------
# Frames and classification
# ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("fs, nfft", [(48000, 4096), (44100, 4096), (16000, 2048), (8000, 1024)])
def test_frame_length_rule(fs, nfft):
    # nfft = 2^round(log2(fs/10)) (project design: about 0.1 s, 11.7 Hz bins at 48 kHz).
    assert analysis_frame_length(fs) == nfft


def test_full_scale_sine_frame_level():
    # Full-scale sine: -3.01 dBFS RMS (0 dBFS = full-scale square wave; DEVELOPERS.md).
    fs = 8000
    res = measure_activity(np.sin(2 * np.pi * 440 * np.arange(fs * 2) / fs), fs)
    assert res.speech_level_dbfs == pytest.approx(-3.0103, abs=0.01)
    # A steady signal has no pauses: all frames active, no floor (documented method).
    assert res.speech_fraction == 1.0 and res.pause_frame_count == 0 and res.noise_floor_dbfs is None


def test_classify_level_bins_on_a_known_histogram():
    # Noise cluster at -100 dBFS (bin 60) and speech spread over -60 ... -20 dBFS: the noise
    # mode is bin 60; pause bins reach 3 dB above it, speech bins start 10 dB above it.
    counts = np.zeros(LEVEL_BIN_COUNT, dtype=int)
    counts[59:62] = [50, 300, 40]
    counts[100:140] = 20
    speech, pause, mode = classify_level_bins(counts)
    assert mode == 60 and LEVEL_MIN_DBFS + mode == -100.0
    assert np.flatnonzero(pause)[-1] == 63
    assert np.flatnonzero(speech)[0] == 70 and speech[-1]


@pytest.mark.parametrize("noise_dbfs", [-70.0, -55.0])
def test_noise_floor_of_bursts_in_known_noise(rng, noise_dbfs):
    # Speech-like bursts at about -20 dBFS over white noise of known RMS: the floor (RMS of
    # the pause frames) reads the noise level within 1 dB (by construction).
    fs = 16000
    speech = at_level(speech_like(rng, fs, 20.0), -20.0)
    x = speech + 10 ** (noise_dbfs / 20) * rng.standard_normal(speech.size)
    res = measure_activity(x, fs)
    assert res.noise_floor_dbfs == pytest.approx(noise_dbfs, abs=1.0)
    assert res.pause_frame_count > 0.1 * res.frame_count
    assert 0.2 < res.speech_fraction < 0.8
    assert res.speech_level_dbfs > noise_dbfs + 30
    assert snr_db(-20.0, res.noise_floor_dbfs) == pytest.approx(-20.0 - noise_dbfs, abs=1.0)


def test_digital_silence():
    fs = 8000
    res = measure_activity(np.zeros(fs * 3), fs)
    assert res.speech_frame_count == 0 and res.pause_frame_count == res.frame_count
    assert res.noise_floor_dbfs == -np.inf and res.speech_level_dbfs is None


def test_bursts_with_digitally_silent_pauses(rng):
    fs = 8000
    x = at_level(speech_like(rng, fs, 10.0), -26.0)
    res = measure_activity(x, fs)
    assert res.noise_floor_dbfs == -np.inf
    assert res.noise_mode_dbfs == -np.inf
    assert -30.0 < res.speech_level_dbfs < -20.0


def test_snr_helper():
    # Active-speech SNR = active level - noise level (ITU-T test practice; from memory).
    assert snr_db(-20.0, -65.5) == pytest.approx(45.5)
    assert snr_db(None, -60.0) is None and snr_db(-20.0, None) is None
    assert snr_db(-20.0, -np.inf) is None


def test_activity_block_invariance(rng):
    fs = 8000
    x = at_level(speech_like(rng, fs, 8.0), -20.0) + 1e-4 * rng.standard_normal(fs * 8)
    whole = measure_activity(x, fs)
    acc = ActivityAccumulator(fs)
    for i in range(0, x.size, 333):
        acc.update(x[i : i + 333])
    assert acc.result() == whole


def test_activity_bad_input():
    with pytest.raises(SignalValueError, match="8000–192000 Hz"):
        ActivityAccumulator(1000)
    with pytest.raises(SignalValueError, match="sample_rate_hz must be a number"):
        ActivityAccumulator("fast")
    with pytest.raises(SignalValueError, match="one channel"):
        measure_activity(np.zeros((100, 2)), 8000)
    with pytest.raises(SignalValueError, match="NaN or infinite"):
        measure_activity(np.r_[np.zeros(5000), np.inf], 8000)
    with pytest.raises(SignalValueError, match="NaN or infinite"):
        detect_hum(np.r_[np.zeros(80000), np.nan, np.zeros(1000)], 8000)


# ---------------------------------------------------------------------------------------
# Mains hum (voiceband.measurement.hum: comb k * f0, f0 in 49.5-50.5 / 59.5-60.5 Hz, local median)
# ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("fs", [8000, 16000, 48000])
@pytest.mark.parametrize("mains_hz", [50.02, 59.97])
def test_hum_fundamental_under_continuous_speech(rng, fs, mains_hz):
    # Hum at the fundamental only, 50 dB below the speech level, under speech-like signal
    # with only short pauses: found, level within 1 dB, frequency within 0.05 Hz.
    speech = at_level(speech_like(rng, fs, 24.0), -20.0)
    ref = measure_activity(speech + 1e-4 * rng.standard_normal(speech.size), fs).speech_level_dbfs
    x = speech + 1e-4 * rng.standard_normal(speech.size) + sine(fs, speech.size, mains_hz, ref - 50.0)
    hum = detect_hum(x, fs, reference_level_dbfs=ref)
    assert isinstance(hum, HumResult)
    assert hum.fundamental_hz == pytest.approx(mains_hz, abs=0.05)
    assert hum.harmonic_numbers == (1,)
    assert hum.level_db_re_speech == pytest.approx(-50.0, abs=1.0)
    assert hum.reference_level_dbfs == ref


@pytest.mark.parametrize("mains_hz, harmonics", [(50.02, (2, 3)), (59.97, (2, 3))])
def test_hum_ripple_harmonics_only(rng, mains_hz, harmonics):
    # Rectifier ripple: 2nd and 3rd harmonics only (100/150 or 120/180 Hz), together 50 dB
    # below the speech level, inside the speech band; found in the pauses between overs,
    # attributed to the right mains frequency.
    fs = 16000
    speech = at_level(talk_with_gaps(rng, fs), -20.0)
    noise = 10 ** (-75 / 20) * rng.standard_normal(speech.size)
    ref = measure_activity(speech + noise, fs).speech_level_dbfs
    ripple = sum(sine(fs, speech.size, k * mains_hz, ref - 53.01) for k in harmonics)
    hum = detect_hum(speech + noise + ripple, fs, reference_level_dbfs=ref)
    assert hum is not None
    assert hum.fundamental_hz == pytest.approx(mains_hz, abs=0.05)
    assert hum.harmonic_numbers == harmonics
    assert hum.level_db_re_speech == pytest.approx(-50.0, abs=1.0)
    assert hum.harmonics_hz == pytest.approx(tuple(k * hum.fundamental_hz for k in harmonics))


@pytest.mark.parametrize("kind", ["speech", "overs", "white", "tone"])
def test_no_hum_on_clean_signals(rng, kind):
    fs = 16000
    if kind == "speech":
        x = at_level(speech_like(rng, fs, 30.0), -20.0) + 1e-4 * rng.standard_normal(fs * 30)
    elif kind == "overs":
        s = talk_with_gaps(rng, fs)
        x = at_level(s, -20.0) + 10 ** (-75 / 20) * rng.standard_normal(s.size)
    elif kind == "white":
        x = 0.1 * rng.standard_normal(fs * 30)
    else:
        x = sine(fs, fs * 30, 1000.0, -20.0) + 1e-4 * rng.standard_normal(fs * 30)
    assert detect_hum(x, fs) is None


def test_hum_without_reference_and_block_invariance(rng):
    fs = 8000
    x = 0.01 * rng.standard_normal(fs * 40) + sine(fs, fs * 40, 60.03, -60.0)
    whole = detect_hum(x, fs)
    assert whole.level_db_re_speech is None and whole.reference_level_dbfs is None
    assert whole.level_dbfs == pytest.approx(-60.0, abs=0.5)
    acc = HumAccumulator(fs)
    for i in range(0, x.size, 12345):
        acc.update(x[i : i + 12345])
    pieces = acc.result()
    assert pieces.level_dbfs == pytest.approx(whole.level_dbfs, abs=1e-4)
    assert pieces.fundamental_hz == pytest.approx(whole.fundamental_hz, abs=1e-6)


def test_hum_on_a_long_thinned_recording(rng):
    # More than 32 segments (about 9 min), so segments are thinned; the hum is still found
    # at its level (60 Hz plus 180 Hz, each -66 dBFS, in white noise at -40 dBFS).
    fs = 8000
    acc = HumAccumulator(fs)
    n_total = fs * 660
    block = 1 << 18
    t0 = 0
    while t0 < n_total:
        n = min(block, n_total - t0)
        t = (t0 + np.arange(n)) / fs
        hum = np.sqrt(2) * 10 ** (-66 / 20) * (np.sin(2 * np.pi * 59.98 * t) + np.sin(2 * np.pi * 3 * 59.98 * t))
        acc.update(0.01 * rng.standard_normal(n) + hum)
        t0 += n
    res = acc.result()
    assert res is not None and res.harmonic_numbers == (1, 3)
    assert res.level_dbfs == pytest.approx(-66.0 + 10 * np.log10(2), abs=0.5)
    assert res.fundamental_hz == pytest.approx(59.98, abs=0.02)


def test_too_short_for_hum():
    fs = 8000
    acc = HumAccumulator(fs)
    acc.update(np.zeros(fs))  # 1 s: no 2 s window yet
    assert acc.window_count == 0 and acc.result() is None
