"""SSB carrier offset: detection from a multitone, a pilot tone and a sweep, and per-tone tracking.

The shifted recordings are made here with an independent single-sideband shift:
Re{x_a(t)·e^{j2πΔf t}}, x_a the analytic signal from scipy.signal.hilbert (Oppenheim &
Schafer, Discrete-Time Signal Processing, 3rd ed., section 12.4, from memory).  A shift moves
every frequency by Δf (a shift, not a scaling; common practice).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.signal as ss

from voiceband.response import measure_response
from voiceband.response.offset import shift_frequency, tone_offset
from voiceband.response.stimulus import analyse_stimulus
from voiceband.synth.sweep import exponential_sweep

FS = 16000


def _ssb_shift(x, shift_hz, fs):
    t = np.arange(x.size) / fs
    return np.real(ss.hilbert(x) * np.exp(2j * np.pi * shift_hz * t))


def _schroeder_multitone(seconds, fs, *, low=300.0, high=3000.0, k=28):
    # Equal-amplitude tones with Schroeder phases φ_k = −πk²/K (Schroeder, IEEE Trans. IT-16, 1970),
    # built here rather than with the project's generator so the test is independent of it.
    f = np.linspace(low, high, k)
    t = np.arange(int(seconds * fs)) / fs
    x = sum(np.cos(2 * np.pi * fk * t - np.pi * (i + 1) ** 2 / k) for i, fk in enumerate(f))
    return 0.5 * x / np.max(np.abs(x)), f


def _chain(x, sos, *, lead_s=0.4, fs=FS, shift_hz=0.0, stretch=1.0, rng=None):
    y = ss.sosfilt(sos, np.concatenate([np.zeros(int(lead_s * fs)), x, np.zeros(int(0.6 * fs))]))
    if shift_hz:
        y = _ssb_shift(y, shift_hz, fs)
    if stretch != 1.0:
        y = ss.resample(y, int(round(y.size * stretch)))
    if rng is not None:
        y = y + 1e-4 * rng.standard_normal(y.size)
    return y


BANDPASS = ss.butter(2, [300.0, 3400.0], "bandpass", fs=FS, output="sos")


def test_shift_frequency_moves_a_tone():
    t = np.arange(2 * FS) / FS
    y = shift_frequency(np.sin(2 * np.pi * 1000.0 * t), 23.0, FS)
    spec = np.abs(np.fft.rfft(y * np.hanning(y.size), 1 << 20))
    assert np.fft.rfftfreq(1 << 20, 1 / FS)[np.argmax(spec)] == pytest.approx(1023.0, abs=0.01)
    assert np.sqrt(np.mean(y[FS // 2:-FS // 2] ** 2)) == pytest.approx(np.sqrt(0.5), rel=1e-3)  # amplitude kept


@pytest.mark.parametrize("shift_hz, stretch", [(23.0, 1.0), (-37.0, 1.0), (7.5, 1.001), (-12.0, 0.999)])
def test_multitone_offset_detected_within_1_hz(shift_hz, stretch, rng):
    x, f = _schroeder_multitone(3.0, FS)
    y = _chain(x, BANDPASS, shift_hz=shift_hz, stretch=stretch, rng=rng)
    r = measure_response(x, FS, y, FS)
    assert r.stimulus_kind == "tones" and r.frequency_offset_corrected
    # the offset is applied before the clock error here, so on the stimulus clock it is shift·stretch
    assert r.frequency_offset_hz == pytest.approx(shift_hz * stretch, abs=1.0)
    assert r.clock_ratio == pytest.approx(stretch, abs=1e-5)
    assert np.all(np.isnan(r.phase_deg))  # carrier phase unknown
    # per-tone tracking: each tone's level still matches the filter (scipy.signal.sosfreqz)
    _, h = ss.sosfreqz(BANDPASS, worN=f, fs=FS)
    ref = 20 * np.log10(np.abs(h))
    assert np.max(np.abs((r.magnitude_db + r.passband_level_db) - ref)) < 0.5
    assert r.frequency_offset_spread_hz is not None and r.frequency_offset_spread_hz < 0.5


def test_multitone_without_offset_reports_zero_and_phase(rng):
    x, f = _schroeder_multitone(3.0, FS)
    y = _chain(x, BANDPASS, rng=rng)
    r = measure_response(x, FS, y, FS)
    assert r.frequency_offset_hz == 0.0 and not r.frequency_offset_corrected
    assert np.all(np.isfinite(r.phase_deg))
    tau = r.delay_s - 0.4  # latency to the response's time zero
    _, h = ss.sosfreqz(BANDPASS, worN=f, fs=FS)
    err = np.angle(np.exp(1j * np.radians(r.phase_deg)) / (h * np.exp(2j * np.pi * f * tau)), deg=True)
    assert np.max(np.abs(err)) < 2.0
    assert r.edges_hz.low_3db == pytest.approx(300.0, rel=0.02)  # Butterworth design edge (scipy.signal.butter)


def test_pilot_tone_offset_detected_within_1_hz(rng):
    t = np.arange(3 * FS) / FS
    pilot = np.concatenate([np.zeros(FS // 4), 0.3 * np.sin(2 * np.pi * 1000.0 * t), np.zeros(FS // 4)])
    y = _chain(pilot, BANDPASS, shift_hz=23.0, rng=rng)
    r = measure_response(pilot, FS, y, FS)
    assert r.frequencies_hz.size == 1 and r.frequency_offset_hz == pytest.approx(23.0, abs=1.0)
    assert not r.clock_ratio_measured


def test_sweep_offset_detected_within_1_hz(rng):
    # A sweep confuses an offset with group delay that falls as 1/f (see voiceband.response.offset),
    # so a chain with modest delay variation is used: a 200–5000 Hz Butterworth band-pass from a
    # first-order prototype.
    s = exponential_sweep(duration_s=4.0, sample_rate_hz=FS)
    sos = ss.butter(1, [200.0, 5000.0], "bandpass", fs=FS, output="sos")
    x = np.asarray(s.samples)
    r = measure_response(x, FS, _chain(x, sos, shift_hz=23.0, rng=rng), FS)
    assert r.frequency_offset_corrected
    assert r.frequency_offset_hz == pytest.approx(23.0, abs=1.0)
    assert np.all(np.isnan(r.phase_deg))
    # after removing the offset the response is measured as usual
    assert r.edges_hz.low_3db == pytest.approx(200.0, rel=0.03)
    assert r.edges_hz.high_3db == pytest.approx(5000.0, rel=0.03)


def test_sweep_without_offset_is_not_corrected(rng):
    s = exponential_sweep(duration_s=3.0, sample_rate_hz=FS)
    x = np.asarray(s.samples)
    r = measure_response(x, FS, _chain(x, BANDPASS, rng=rng), FS)
    assert r.frequency_offset_hz == 0.0 and not r.frequency_offset_corrected
    assert r.frequency_offset_resolution_hz == 2.0


def test_tone_offset_fits_offset_and_clock_from_the_tone_frequencies():
    x, f = _schroeder_multitone(3.0, FS)
    stim = analyse_stimulus(x, FS).tones
    y = ss.resample(_ssb_shift(x, 10.0, FS), int(round(x.size * 1.0005)))
    off = tone_offset(y, FS, stim)
    # recorded tones at (f_k + Δf)/r → Δf = 10 × 1.0005 on the stimulus clock, r = 1.0005
    assert off.clock_ratio == pytest.approx(1.0005, abs=1e-6)
    assert off.frequency_offset_hz == pytest.approx(10.005, abs=0.01)
    assert off.received.all()
