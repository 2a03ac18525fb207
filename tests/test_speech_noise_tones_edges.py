"""Known-answer tests of the pure modules behind analyze in noise: power subtraction
(speech_noise), steady tones and CTCSS (tones), fine-spectrum edges (edges)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from voiceband.bands import BandLevels, third_octave_bands
from voiceband.intelligibility import recording_intelligibility
from voiceband.measurement.edges import fine_edges
from voiceband.measurement.speech_noise import (
    SPEECH_FLOOR_DB_RE_NOISE,
    SpeechNoiseAccumulator,
    noise_psd_at_level,
    speech_band_power,
)
from voiceband.measurement.tones import CTCSS_TONES_HZ, ctcss_tone, find_tones, is_mains_comb


# --------------------------------------------------------------------------------------
# speech_noise
# --------------------------------------------------------------------------------------

def _frames(rng, n_noise, n_speech, noise_ms, speech_ms, dof=2048):
    # Frame mean squares of Gaussian noise: chi-square with `dof` degrees of freedom / dof.
    noise = noise_ms * rng.chisquare(dof, n_noise + n_speech) / dof
    speech = np.zeros(n_noise + n_speech)
    idx = rng.permutation(n_noise + n_speech)[:n_speech]
    speech[idx] = speech_ms * rng.lognormal(0.0, 0.6, n_speech)
    return noise + speech, speech


def test_noise_power_from_the_mirrored_mode(rng):
    # Noise at -40 dBFS, speech bursts 6 dB above it in 60 % of the frames: the pause class
    # "within 3 dB of the mode" would pick up the speech tails; the mirror does not.
    ms, _ = _frames(rng, 400, 600, 1e-4, 4e-4)
    acc = SpeechNoiseAccumulator(0.05)
    acc.update(ms)
    # ask with a coarse mode 1 dB off: the fine mode is searched within 2 dB
    res = acc.result(-39.0)
    assert abs(res.noise_level_dbfs - (-40.0)) < 0.3


def test_active_level_of_the_speech_alone_is_block_independent(rng):
    ms, speech = _frames(rng, 500, 500, 1e-5, 1e-3)
    a = SpeechNoiseAccumulator(0.05)
    a.update(ms)
    b = SpeechNoiseAccumulator(0.05)
    for i in range(0, ms.size, 7):
        b.update(ms[i:i + 7])
    ra, rb = a.result(-50.0), b.result(-50.0)
    assert ra.active_level_dbfs == pytest.approx(rb.active_level_dbfs, abs=1e-9)
    assert ra.snr_db == pytest.approx(ra.active_level_dbfs - ra.noise_level_dbfs)
    # The speech energy is the frames' power minus the noise (paper: sum(ms) - n * N).
    assert ra.speech_energy_frames == pytest.approx(float(np.sum(ms)) - ms.size * ra.noise_power_fs2)


def test_no_pauses_no_snr():
    acc = SpeechNoiseAccumulator(0.05)
    acc.update(np.full(100, 1e-3))
    res = acc.result(None)
    assert res.snr_db is None and res.noise_level_dbfs is None and res.active_level_dbfs is None


def test_speech_band_power_subtracts_and_floors():
    allp = np.array([2.0, 1.0, 1.0])
    noise = np.array([1.0, 1.0, 2.0])
    s = speech_band_power(allp, noise, 0.5)
    floor = 10 ** (SPEECH_FLOOR_DB_RE_NOISE / 10)
    assert s == pytest.approx([2.0, floor * 1.0, floor * 2.0])


def test_noise_psd_scaled_to_the_measured_power():
    f = np.arange(513) * 8.0
    p = np.ones(513)
    q = noise_psd_at_level(p, f, 1e-3)
    assert float(np.sum(q[1:]) * 8.0) == pytest.approx(1e-3)


def _sii_of(speech_power, noise_power):
    bands = third_octave_bands(16000)
    return recording_intelligibility(BandLevels(bands, 10 * np.log10(speech_power)),
                                     BandLevels(bands, 10 * np.log10(noise_power))).sii


def test_sii_of_noise_alone_is_near_zero():
    # Noise alone: all frames' band power equals the noise band power, so the subtracted
    # speech sits at the floor, 20 dB under the noise: ANSI S3.5-1997 eq. (band audibility
    # (SNR + 15)/30 clipped to 0 at SNR <= -15 dB) gives 0.
    n = third_octave_bands(16000).size
    noise = np.geomspace(1e-4, 1e-6, n)
    s = speech_band_power(noise, noise, 0.7)
    assert _sii_of(s, noise) < 0.01


@pytest.mark.parametrize("seed", range(5))
def test_adding_noise_never_raises_the_sii(seed):
    # Property: for any speech and noise band powers, more noise (by power addition, then
    # power subtraction as analyze does) never raises the SII.
    r = np.random.default_rng(seed)
    n = third_octave_bands(16000).size
    speech = 10 ** (r.uniform(-6, -3, n))
    noise = 10 ** (r.uniform(-8, -5, n))
    extra = 10 ** (r.uniform(-9, -4, n))
    act = r.uniform(0.4, 0.9)
    before = _sii_of(speech_band_power(act * speech + noise, noise, act), noise)
    after = _sii_of(speech_band_power(act * speech + noise + extra, noise + extra, act), noise + extra)
    assert after <= before + 1e-12


# --------------------------------------------------------------------------------------
# tones
# --------------------------------------------------------------------------------------

def test_ctcss_list_is_in_the_standard_range():
    # Trade notes 1.6 (from memory): CTCSS tones span 67.0-254.1 Hz.
    assert CTCSS_TONES_HZ[0] == 67.0 and CTCSS_TONES_HZ[-1] == 254.1
    assert all(b > a for a, b in zip(CTCSS_TONES_HZ, CTCSS_TONES_HZ[1:]))


@pytest.mark.parametrize("f, expected", [(100.2, 100.0), (150.6, 150.0), (250.0, 250.3), (60.0, None), (400.0, None)])
def test_ctcss_match(f, expected):
    assert ctcss_tone(f) == expected


def test_find_tones_against_scipy_welch(rng):
    # Reference PSD from scipy.signal.welch (Hann, one-sided density); a sine of amplitude a
    # carries a^2/2 of power.
    from scipy.signal import welch

    fs = 8000
    t = np.arange(10 * fs) / fs
    x = 0.1 * np.sin(2 * np.pi * 123.0 * t) + 0.01 * np.sin(2 * np.pi * 1000.0 * t) + 1e-3 * rng.standard_normal(t.size)
    f, p = welch(x, fs, window="hann", nperseg=4096)
    tones = find_tones(p, f)
    got = {round(tn.frequency_hz): tn for tn in tones}
    assert set(got) == {123, 1000}
    assert abs(got[123].frequency_hz - 123.0) < 0.3
    assert got[123].level_dbfs == pytest.approx(10 * math.log10(0.1 ** 2 / 2), abs=1.0)


def test_white_noise_has_no_tones(rng):
    from scipy.signal import welch

    f, p = welch(rng.standard_normal(80000), 8000, nperseg=2048)
    assert find_tones(p, f) == ()


@pytest.mark.parametrize("harmonics, f0, tones, levels, expected", [
    ((50.0, 100.0, 150.0), 50.0, (), None, True),                            # a mains comb
    ((50.0, 100.0, 150.0), 50.0, (50.0, 100.0, 150.0), (-50, -56, -60), True),  # strong hum: its lines are tones too
    ((50.0,), 50.0, (50.0,), None, False),                                   # one line at mains frequency: a tone
    ((100.0, 200.0), 50.0, (100.0,), (-40, -70), False),                     # a 100.0 Hz CTCSS tone and its 2nd harmonic
    ((200.0, 400.0), 50.0, (400.0, 1800.0), (-104, -23), False),             # a 400 Hz test tone plus a residue
    ((50.0, 100.0, 150.0), 50.0, (100.0,), None, True),                      # mains comb with a 100 Hz CTCSS tone on it
])
def test_is_mains_comb(harmonics, f0, tones, levels, expected):
    assert is_mains_comb(harmonics, f0, tones, levels) is expected


# --------------------------------------------------------------------------------------
# edges
# --------------------------------------------------------------------------------------

def _reference_psd(freqs, effort=0.0):
    from voiceband.measurement.edges import _reference_db

    f = np.maximum(freqs, 20.0)
    ref, _ = _reference_db(f, effort)
    return 10 ** (ref / 10)


@pytest.mark.parametrize("order, low, high, fs", [(4, 300.0, 3000.0, 16000), (8, 250.0, 3400.0, 8000), (6, 400.0, 2700.0, 48000)])
def test_edges_of_the_reference_talker_through_butterworth(order, low, high, fs):
    # A talker exactly on the reference spectrum, through a Butterworth band-pass whose exact
    # response comes from scipy.signal.sosfreqz: the -10 dB points are found within 3 %.
    from scipy import signal

    n = 4096 if fs > 16000 else 1024 * fs // 8000
    freqs = np.arange(n // 2 + 1) * fs / n
    sos = np.vstack([signal.butter(order, low, "highpass", fs=fs, output="sos"),
                     signal.butter(order, high, "lowpass", fs=fs, output="sos")])
    _, h = signal.sosfreqz(sos, worN=freqs, fs=fs)
    psd = _reference_psd(freqs) * np.abs(h) ** 2 + 1e-16
    fine = np.geomspace(20, fs / 2 * 0.999, 20000)
    _, hf = signal.sosfreqz(sos, worN=fine, fs=fs)
    db = 20 * np.log10(np.abs(hf))
    thr = db.max() - 10
    k = int(np.argmax(db))
    true_low = fine[np.flatnonzero(db[:k] < thr)[-1]]
    true_high = fine[k + np.flatnonzero(db[k:] < thr)[0]]
    e = fine_edges(freqs, psd, None, effort_index=0.0)
    assert e.high.hz == pytest.approx(true_high, rel=0.03)
    assert e.low.hz == pytest.approx(true_low, rel=0.03)
    assert e.low.range_hz[0] <= true_low <= e.low.range_hz[1]
    assert e.high.range_hz[0] <= true_high <= e.high.range_hz[1]


def test_gentle_edge_is_uncertain_and_hidden_edge_opens_its_range():
    fs = 16000
    freqs = np.arange(1025) * fs / 2048
    f = np.maximum(freqs, 1.0)
    rc = 1.0 / (1.0 + (f / 2000.0) ** 2)        # first-order RC low-pass, |H|^2
    speech = _reference_psd(freqs) * rc
    e = fine_edges(freqs, speech, None, effort_index=0.0)
    assert not e.high.certain
    # Noise that hides the speech above about 3 kHz: the upper range opens to Nyquist.
    noise = np.full(freqs.size, float(_reference_psd(np.array([3000.0]))[0]) * 0.5)
    e2 = fine_edges(freqs, speech + noise, noise, effort_index=0.0)
    assert e2.high.limited_by == "noise" and e2.high.range_hz[1] == pytest.approx(fs / 2)


def _comb_talker_psd(freqs, f0_hz, effort=0.0):
    # A voiced talker on the reference spectrum: power only near multiples of F0 (a comb of
    # narrow peaks, 10 % of the spacing wide), so between harmonics there is nothing.
    ref = _reference_psd(freqs, effort)
    k = freqs / f0_hz
    comb = np.where((np.abs(k - np.round(k)) < 0.05) & (np.round(k) >= 1), 1.0, 1e-6)
    return ref * comb * 10.0  # same power per harmonic spacing as the reference (1 / 0.1)


@pytest.mark.parametrize("kind, order, low, high, fs, f0", [
    ("butter", 6, 300.0, 3000.0, 16000, 110.0),
    ("butter", 8, 400.0, 2700.0, 48000, 120.0),
    ("cheby1", 4, 250.0, 3400.0, 16000, 100.0),
])
def test_edges_of_a_harmonic_comb_through_scipy_filters(kind, order, low, high, fs, f0):
    # The comb's valleys are bridged, not averaged over, so the low edge is not pulled down
    # by passband power spread outwards (it was read 5-20 % low with half an F0 spacing of
    # averaging).  Truth: the -10 dB points of scipy.signal.butter / cheby1 (0.5 dB ripple)
    # from scipy.signal.sosfreqz.  Edges above the talker's lowest F0, within issue 8's
    # targets: upper within 5 %, lower within 8 % or 25 Hz, whichever is larger.
    from scipy import signal

    n = 32768 if fs > 16000 else 8192
    freqs = np.arange(n // 2 + 1) * fs / n
    design = (lambda fc, bt: signal.butter(order, fc, bt, fs=fs, output="sos")) if kind == "butter" else (
        lambda fc, bt: signal.cheby1(order, 0.5, fc, bt, fs=fs, output="sos"))
    sos = np.vstack([design(low, "highpass"), design(high, "lowpass")])
    _, h = signal.sosfreqz(sos, worN=freqs, fs=fs)
    psd = _comb_talker_psd(freqs, f0) * np.abs(h) ** 2 + 1e-16
    fine = np.geomspace(20, fs / 2 * 0.999, 40000)
    _, hf = signal.sosfreqz(sos, worN=fine, fs=fs)
    db = 20 * np.log10(np.abs(hf))
    k = int(np.argmax(db))
    thr = db[k] - 10
    true_low = fine[np.flatnonzero(db[:k] < thr)[-1]]
    true_high = fine[k + np.flatnonzero(db[k:] < thr)[0]]
    e = fine_edges(freqs, psd, None, effort_index=0.0, f0_low_hz=0.9 * f0, f0_median_hz=f0)
    assert abs(e.low.hz - true_low) <= max(0.08 * true_low, 25.0)
    assert e.high.hz == pytest.approx(true_high, rel=0.05)
    assert e.low.range_hz[0] <= true_low <= e.low.range_hz[1]
    assert e.high.range_hz[0] <= true_high <= e.high.range_hz[1]


def test_low_edge_below_the_talkers_fundamental_is_reported_uncertain_not_null():
    # A 100 Hz Butterworth high-pass (order 6; -10 dB point from scipy.signal.sosfreqz) under a
    # talker whose lowest F0 is 180 Hz: below it there is no speech to show the chain.  The
    # edge is reported (not null), uncertain, limited by the talker, with the truth in range.
    from scipy import signal

    fs, f0 = 16000, 200.0
    freqs = np.arange(8193) * fs / 16384
    sos = signal.butter(6, 100.0, "highpass", fs=fs, output="sos")
    _, h = signal.sosfreqz(sos, worN=freqs, fs=fs)
    psd = _comb_talker_psd(freqs, f0) * np.abs(h) ** 2 + 1e-16
    fine = np.geomspace(20, 2000, 20000)
    _, hf = signal.sosfreqz(sos, worN=fine, fs=fs)
    db = 20 * np.log10(np.abs(hf))
    true_low = fine[np.flatnonzero(db < db.max() - 10)[-1]]
    e = fine_edges(freqs, psd, None, effort_index=0.0, f0_low_hz=180.0, f0_median_hz=f0)
    assert e.low.hz is not None
    assert not e.low.certain and e.low.limited_by == "talker"
    assert e.low.range_hz[0] <= true_low <= e.low.range_hz[1]


def test_gentle_low_edge_held_up_by_the_talkers_low_harmonics_stays_in_range():
    # A 170 Hz voice whose low harmonics (up to 2 x F0) stand 12 dB above the reference (a
    # strong fundamental region, as many voices have), through a 2nd-order Butterworth
    # 500 Hz high-pass and 2.7 kHz low-pass.  The skirt is gentle (12 dB/octave), and the
    # talker's own peak holds the response within 3 dB of the passband level below the
    # filter's -10 dB point, so the passband seems to begin below the true edge.  The
    # reported range must still hold the truth: the -10 dB point of the exact response
    # (scipy.signal.butter + sosfreqz), relative to its largest gain.
    from scipy import signal

    fs, f0 = 16000, 170.0
    freqs = np.arange(8193) * fs / 16384
    sos = np.vstack([signal.butter(2, 500.0, "highpass", fs=fs, output="sos"),
                     signal.butter(2, 2700.0, "lowpass", fs=fs, output="sos")])
    _, h = signal.sosfreqz(sos, worN=freqs, fs=fs)
    boost = np.where((freqs > 0.8 * f0) & (freqs < 2.1 * f0), 10 ** 1.2, 1.0)
    psd = _comb_talker_psd(freqs, f0) * boost * np.abs(h) ** 2 + 1e-16
    fine = np.geomspace(20, 2000, 20000)
    _, hf = signal.sosfreqz(sos, worN=fine, fs=fs)
    db = 20 * np.log10(np.abs(hf))
    k = int(np.argmax(db))
    true_low = fine[np.flatnonzero(db[:k] < db[k] - 10)[-1]]
    e = fine_edges(freqs, psd, None, effort_index=0.0, f0_low_hz=0.9 * f0, f0_median_hz=f0)
    assert e.low.hz is not None and not e.low.certain
    assert e.low.range_hz[0] <= true_low <= e.low.range_hz[1]
