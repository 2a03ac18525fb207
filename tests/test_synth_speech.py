"""Speech synthesiser: determinism, voices, efforts, output level and bad input."""

from __future__ import annotations

import numpy as np
import pytest

from voiceband.errors import SignalValueError
from voiceband.measurement.levels import measure_levels
from voiceband.synth.speech import (
    CALIBRATION_DB,
    EFFORTS,
    VOICES,
    calibration_fir,
    synthesize_speech,
    synthesize_speech_raw,
)


def median_f0_hz(x: np.ndarray, fs: int) -> float:
    """Median F0 of the voiced frames by librosa's pYIN (a general-purpose reference library)."""
    import librosa

    f0, voiced, _ = librosa.pyin(x, fmin=60.0, fmax=500.0, sr=fs, frame_length=1024)
    return float(np.median(f0[voiced]))


def test_same_seed_same_samples_and_different_seed_differs():
    a = synthesize_speech(3.0, 16000, seed=5)
    b = synthesize_speech(3.0, 16000, seed=5)
    c = synthesize_speech(3.0, 16000, seed=6)
    assert np.array_equal(a, b)
    assert not np.array_equal(a, c)


@pytest.mark.parametrize("fs", [8000, 16000, 44100, 48000])
def test_length_and_dtype(fs):
    x = synthesize_speech(2.5, fs, seed=1)
    assert x.dtype == np.float64 and x.shape == (int(round(2.5 * fs)),)
    assert np.all(np.isfinite(x))


def test_starts_and_ends_in_silence():
    # The timeline leaves at least 0.25 s before the first and 0.3 s after the last phrase;
    # only the calibration FIR's tail (symmetric, fs/16 taps ≈ 31 ms) can reach into them.
    fs = 16000
    x = synthesize_speech(5.0, fs, seed=2)
    edge = int(0.2 * fs)
    assert np.max(np.abs(x[:edge])) < 1e-3 * np.max(np.abs(x))
    assert np.max(np.abs(x[-edge:])) < 1e-3 * np.max(np.abs(x))


@pytest.mark.parametrize("voice, f0", [("low", 100.0), ("medium", 150.0), ("high", 220.0)])
def test_voice_fundamental_frequency(voice, f0):
    # Voices are defined by F0 about 100 / 150 / 220 Hz (issue 4); the contour's median
    # stays within 15 % of it (declination and accents move it both ways).
    assert VOICES[voice].f0_hz == f0
    x = synthesize_speech(8.0, 16000, voice=voice, seed=4)
    assert median_f0_hz(x, 16000) == pytest.approx(f0, rel=0.15)


def test_f0_rises_with_effort():
    # Raised F0 with vocal effort (from memory, Traunmüller & Eriksson 2000).
    f0 = [median_f0_hz(synthesize_speech(8.0, 16000, effort=e, seed=8), 16000) for e in EFFORTS]
    assert all(b > a for a, b in zip(f0, f0[1:]))


@pytest.mark.parametrize("level", [-26.0, -35.0, -16.0])
def test_output_active_level(level):
    # Scaled to an ITU-T P.56 method B active level (voiceband.measurement.levels).
    x = synthesize_speech(6.0, 16000, seed=3, active_level_dbfs=level)
    assert measure_levels(x, 16000).active_level_dbfs == pytest.approx(level, abs=0.01)


def test_peaks_stay_below_full_scale_at_default_level():
    # Speech peaks lie ≈ 12–20 dB above the active level (Cox et al. 1988; from memory), so −26 dBFS
    # leaves headroom.
    for effort in EFFORTS:
        x = synthesize_speech(10.0, 48000, effort=effort, seed=1)
        assert np.max(np.abs(x)) < 1.0


def test_calibration_fir_passes_through_the_table_gains():
    # The equaliser's response at the band centres follows the gains (linear-phase FIR by
    # frequency sampling; the ±64 Hz resolution smooths the sharpest steps).
    fs = 48000
    g = np.asarray(CALIBRATION_DB["normal"])
    h = calibration_fir(g, fs)
    assert h.size % 2 == 1 and np.allclose(h, h[::-1])
    resp = 20 * np.log10(np.abs(np.fft.rfft(h, n=fs)))
    centres = np.array([160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000])
    assert np.max(np.abs(resp[centres][4:] - g[4:])) < 1.5


def test_raw_output_is_level_independent_of_rate():
    # The raw synthesiser runs at ≥ 32 kHz, so 16 kHz and 48 kHz outputs carry the same
    # long-term power below 8 kHz (to within 0.5 dB).
    a = synthesize_speech_raw(6.0, 48000, seed=9)
    b = synthesize_speech_raw(6.0, 16000, seed=9)
    from scipy import signal

    sa = signal.sosfilt(signal.butter(8, 7000, fs=48000, output="sos"), a)
    sb = signal.sosfilt(signal.butter(8, 7000, fs=16000, output="sos"), b)
    assert 10 * np.log10(np.mean(sa**2) / np.mean(sb**2)) == pytest.approx(0.0, abs=0.5)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        (dict(voice="tenor"), "voice must be one of"),
        (dict(effort="whisper"), "effort must be one of"),
        (dict(seed=-1), "seed"),
        (dict(active_level_dbfs=5.0), "active_level_dbfs"),
    ],
)
def test_bad_options(kwargs, match):
    with pytest.raises(SignalValueError, match=match):
        synthesize_speech(2.0, 16000, **kwargs)


@pytest.mark.parametrize("duration, fs, match", [(0.5, 16000, "duration_s"), (2.0, 4000, "sample_rate_hz"), (2.0, 16000.5, "whole number")])
def test_bad_duration_or_rate(duration, fs, match):
    with pytest.raises(SignalValueError, match=match):
        synthesize_speech(duration, fs)
