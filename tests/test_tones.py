"""Test signals: Schroeder multitone, SSB two-tone pair, reference tone, stepped tones."""

from __future__ import annotations

import numpy as np
import pytest

from voiceband.errors import SignalValueError
from voiceband.synth.tones import (
    SSB_TWO_TONE_HZ,
    multitone,
    reference_tone,
    schroeder_phases,
    stepped_tones,
    third_octave_step_frequencies_hz,
    two_tone,
)

FS = 48000


def _amplitude_at(x: np.ndarray, fs: int, f_hz: float) -> float:
    """Sine amplitude at ``f_hz`` from an FFT over a whole number of periods (rectangular window)."""
    spec = np.fft.rfft(x)
    k = int(round(f_hz * x.size / fs))
    assert abs(k * fs / x.size - f_hz) < 1e-9, "choose a length holding whole periods"
    return 2.0 * abs(spec[k]) / x.size


def test_schroeder_phase_formula():
    # Schroeder (1970), φ_k = −π k² / K for k = 1 … K (from memory).
    k = np.arange(1, 29)
    assert np.allclose(schroeder_phases(28), -np.pi * k**2 / 28)


def test_schroeder_multitone_crest_factor_28_tones():
    # 28 equal tones 300–3000 Hz: Schroeder phases ≈ 5.5 dB (computed; Schroeder
    # 1970, from memory); zero phases 10·log10(2K) = 17.48 dB (analytic: peak K·a, RMS a·√(K/2)).
    s = multitone(1.0, FS, low_hz=300, high_hz=3000, n_tones=28)
    assert s.crest_factor_db == pytest.approx(5.5, abs=0.15)
    z = multitone(1.0, FS, low_hz=300, high_hz=3000, n_tones=28, schroeder=False)
    assert z.crest_factor_db == pytest.approx(10 * np.log10(56), abs=0.02)


def test_multitone_frequencies_and_equal_amplitudes_by_fft():
    # The default grid is 300, 400 … 3000 Hz (Δf = 100 Hz); 1 s holds whole periods.
    s = multitone(1.0, FS, peak_dbfs=-6.0)
    assert np.allclose(s.frequencies_hz, np.arange(300, 3001, 100))
    amps = np.array([_amplitude_at(s.samples, FS, f) for f in s.frequencies_hz])
    assert np.ptp(20 * np.log10(amps)) < 0.01
    # Nothing between the tones (analytic: a sum of bin-centred sines).
    spec = np.abs(np.fft.rfft(s.samples)) * 2 / s.samples.size
    off = np.ones(spec.size, dtype=bool)
    off[(s.frequencies_hz).astype(int)] = False
    assert spec[off].max() < 1e-9
    # Level is the sample peak.
    assert 20 * np.log10(np.max(np.abs(s.samples))) == pytest.approx(-6.0, abs=1e-9)
    # RMS of K equal tones of amplitude a is a·√(K/2) (analytic).
    assert s.rms_dbfs == pytest.approx(20 * np.log10(amps[0] * np.sqrt(28 / 2)), abs=0.01)


def test_two_tone_default_is_47_cfr_2_1049_pair():
    # 47 CFR 2.1049: 400 + 1800 Hz for SSB with 3.0 kHz authorised bandwidth (from memory).
    assert SSB_TWO_TONE_HZ == (400.0, 1800.0)
    s = two_tone(1.0, FS, peak_dbfs=-6.0, ramp_s=0.0)
    a400 = _amplitude_at(s.samples, FS, 400.0)
    a1800 = _amplitude_at(s.samples, FS, 1800.0)
    # Equal tones, each half the peak: 6.02 dB below it (analytic).
    assert 20 * np.log10(a400) == pytest.approx(-6.0 - 6.02, abs=0.01)
    assert 20 * np.log10(a1800) == pytest.approx(-6.0 - 6.02, abs=0.01)
    # The two largest spectral lines are exactly these two.
    spec = np.abs(np.fft.rfft(s.samples))
    assert sorted(np.argsort(spec)[-2:].tolist()) == [400, 1800]
    # Envelope PAPR of a two-tone signal is 3.01 dB (PEP = 2 × average; analytic).
    # Signal crest factor: peak 2a, RMS a → 20·log10(2) = 6.02 dB (analytic).
    assert s.crest_factor_db == pytest.approx(6.02, abs=0.01)


def test_reference_tone_levels():
    # 1 kHz at −20 dBFS peak reads −23.01 dBFS RMS (project convention: full-scale sine −3.01 dBFS).
    s = reference_tone(2.0, FS, ramp_s=0.0)
    assert s.frequencies_hz.tolist() == [1000.0]
    assert s.peak_dbfs == -20.0
    assert s.rms_dbfs == pytest.approx(-23.01, abs=0.005)
    assert 20 * np.log10(_amplitude_at(s.samples, FS, 1000.0)) == pytest.approx(-20.0, abs=1e-6)


def test_stepped_tones_schedule_and_frequencies():
    freqs = [300.0, 1000.0, 2500.0]
    st = stepped_tones(freqs, FS, dwell_s=0.5, gap_s=0.1, peak_dbfs=-10.0)
    x = st.signal.samples
    assert x.size == int(0.1 * FS) + 3 * int(0.6 * FS)
    assert np.allclose(st.stops_s - st.starts_s, 0.5)
    assert np.allclose(np.diff(st.starts_s), 0.6)
    for f, a, b in zip(freqs, st.starts_s, st.stops_s):
        seg = x[int(a * FS):int(b * FS)]
        peak_bin = np.argmax(np.abs(np.fft.rfft(seg * np.hanning(seg.size))))
        assert peak_bin * FS / seg.size == pytest.approx(f, abs=2.0)
    # Silence in the gaps.
    assert np.all(x[: int(0.1 * FS)] == 0.0)
    assert st.signal.peak_dbfs == -10.0


def test_third_octave_step_list_respects_nyquist():
    # Nominal one-third-octave centres (from memory, IEC 61260 preferred numbers) below 0.45·fs.
    f = third_octave_step_frequencies_hz(8000)
    assert f[0] == 100.0 and f[-1] == 3150.0


@pytest.mark.parametrize(
    "call, match",
    [
        (lambda: multitone(1.0, FS, low_hz=3000, high_hz=300), "low_hz"),
        (lambda: multitone(1.0, FS, high_hz=30000), "Nyquist"),
        (lambda: multitone(1.0, FS, n_tones=1), "n_tones"),
        (lambda: two_tone(1.0, FS, tones_hz=(1000.0, 1000.0)), "two different"),
        (lambda: reference_tone(1.0, FS, peak_dbfs=3.0), "peak_dbfs"),
        (lambda: reference_tone(0.0, FS), "duration_s"),
        (lambda: stepped_tones([], FS), "at least one"),
        (lambda: stepped_tones([1000.0], FS, dwell_s=0.0), "dwell_s"),
        (lambda: multitone(1.0, 44100.5), "whole number"),
    ],
)
def test_bad_input_raises_one_sentence(call, match):
    with pytest.raises(SignalValueError, match=match):
        call()
