"""Bad inputs give one clear sentence, never a wrong curve; clipping detection; passband metrics."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.signal as ss

from voiceband.errors import MeasurementError, SignalValueError
from voiceband.response import measure_response
from voiceband.response.metrics import response_edges, passband_level_db, passband_ripple_db
from voiceband.response.quality import check_recording
from voiceband.response.stimulus import analyse_stimulus
from voiceband.synth.sweep import exponential_sweep

FS = 16000
BANDPASS = ss.butter(2, [300.0, 3400.0], "bandpass", fs=FS, output="sos")


@pytest.fixture(scope="module")
def sweep():
    return np.asarray(exponential_sweep(duration_s=3.0, sample_rate_hz=FS).samples)


@pytest.fixture(scope="module")
def good(sweep):
    return ss.sosfilt(BANDPASS, np.concatenate([np.zeros(3000), sweep, np.zeros(FS)]))


def _one_sentence(msg: str) -> bool:
    return msg.count(". ") == 0 and msg.endswith(".") and "\n" not in msg


@pytest.mark.parametrize(
    "make, match",
    [
        (lambda s, g, rng: np.zeros(g.size), "silent"),
        (lambda s, g, rng: 1e-6 * rng.standard_normal(g.size), "silent"),
        (lambda s, g, rng: 0.1 * rng.standard_normal(g.size), "does not contain the stimulus"),
        (lambda s, g, rng: ss.sosfilt(BANDPASS, rng.standard_normal(g.size)) * (1 + np.sin(2 * np.pi * 4 * np.arange(g.size) / FS)),
         "does not contain the stimulus"),
        (lambda s, g, rng: g[::-1].copy(), "does not contain the stimulus"),
        (lambda s, g, rng: ss.sosfilt(BANDPASS, np.concatenate(
            [np.zeros(2000), np.asarray(exponential_sweep(duration_s=2.0, start_hz=100.0, stop_hz=5000.0, sample_rate_hz=FS).samples), np.zeros(3 * FS)])),
         "does not contain the stimulus"),
        (lambda s, g, rng: np.clip(3.0 * g, -0.9, 0.9), "clipped"),
        (lambda s, g, rng: np.clip(3.0 * g, -1.0, 1.0), "clipped"),
        (lambda s, g, rng: g[:FS], "shorter than the sweep"),
        (lambda s, g, rng: g[: g.size - 2 * FS], "misses the end of the sweep"),
        (lambda s, g, rng: np.r_[g[int(2.0 * FS):], np.zeros(2 * FS)], "misses the start of the sweep"),
        (lambda s, g, rng: ss.resample(g, int(g.size * 1.02)), "against the stimulus clock"),
    ],
    ids=["zeros", "below -90 dBFS", "noise", "speech-like noise", "reversed", "another sweep", "clipped below full scale",
         "clipped at full scale", "too short", "ends early", "starts late", "2 % clock"],
)
def test_bad_recordings_raise_one_sentence(make, match, sweep, good, rng):
    with pytest.raises(MeasurementError, match=match) as err:
        measure_response(sweep, FS, make(sweep, good, rng), FS)
    assert _one_sentence(str(err.value)), str(err.value)


def test_markers_may_be_cut_off_but_the_sweep_must_be_whole(sweep, good):
    # the recording starts after the start marker: measured, with a note that the clock was not
    r = measure_response(sweep, FS, good[3000 + int(0.5 * FS):], FS)
    assert not r.clock_ratio_measured and any("marker" in f.message for f in r.findings)
    assert r.edges_hz.low_3db == pytest.approx(300.0, rel=0.02)  # scipy.signal.butter design edge


def test_tone_recording_that_holds_only_part_of_the_tones(rng):
    t = np.arange(3 * FS) / FS
    tones = np.r_[np.zeros(FS // 4), 0.2 * (np.sin(2 * np.pi * 500 * t) + np.sin(2 * np.pi * 1500 * t)), np.zeros(FS // 4)]
    with pytest.raises(MeasurementError, match="holds only"):
        measure_response(tones, FS, np.r_[tones[FS:], np.zeros(2 * FS)], FS)


def test_tone_stimulus_with_a_recording_of_something_else(rng):
    t = np.arange(2 * FS) / FS
    tones = 0.2 * (np.sin(2 * np.pi * 500 * t) + np.sin(2 * np.pi * 1500 * t))
    with pytest.raises(MeasurementError, match="does not contain the stimulus"):
        measure_response(tones, FS, 0.1 * rng.standard_normal(3 * FS), FS)


def test_unrecognised_stimulus_and_bad_arrays(rng, sweep, good):
    with pytest.raises(MeasurementError, match="neither a rising exponential sweep nor"):
        measure_response(0.1 * rng.standard_normal(2 * FS), FS, good, FS)
    with pytest.raises(MeasurementError, match="stimulus is silent"):
        measure_response(np.zeros(FS), FS, good, FS)
    with pytest.raises(SignalValueError, match="NaN"):
        measure_response(sweep, FS, np.r_[good, np.nan], FS)
    with pytest.raises(SignalValueError, match="non-empty"):
        measure_response(np.zeros(0), FS, good, FS)
    with pytest.raises(SignalValueError, match="max_offset_hz"):
        measure_response(sweep, FS, good, FS, max_offset_hz=-1.0)


def test_clean_recordings_are_not_taken_for_clipped():
    # A 20 Hz sine at 48 kHz quantised to 16 bits repeats samples at its peaks, yet it is not
    # clipped; nor is a full-scale sweep.
    t = np.arange(48000) / 48000
    check_recording(np.round(0.999 * np.sin(2 * np.pi * 20 * t) * 32767) / 32767, 48000)
    s = np.asarray(exponential_sweep(duration_s=2.0, sample_rate_hz=48000, level_dbfs=0.0).samples)
    check_recording(np.round(s * 32767) / 32767, 48000)
    with pytest.raises(MeasurementError, match=r"clipped \(\d+ flat tops at -6.0 dBFS\)"):
        check_recording(np.clip(s, -0.5, 0.5), 48000)  # clipped below full scale, at 0.5 = −6.0 dBFS


def test_stimulus_recognition_reads_back_the_sweep():
    s = exponential_sweep(duration_s=3.0, sample_rate_hz=FS, start_hz=50.0, stop_hz=5000.0)
    a = analyse_stimulus(np.asarray(s.samples), FS)
    assert a.kind == "sweep" and len(a.anchors) == 2
    assert a.sweep.rate_constant_s == pytest.approx(s.rate_constant_s, rel=0.01)
    assert a.sweep.start_hz == pytest.approx(50.0, rel=0.05) and a.sweep.stop_hz == pytest.approx(5000.0, rel=0.05)
    assert abs(a.sweep.segment.start - s.sweep_start_index) < 0.01 * FS


# --------------------------------------------------------------------------- metrics on analytic curves


def _grid():
    return np.geomspace(20.0, 7000.0, 900)


def test_metrics_on_a_butterworth_curve():
    f = _grid()
    _, h = ss.sosfreqz(BANDPASS, worN=f, fs=FS)
    m = 20 * np.log10(np.abs(h))
    level, i = passband_level_db(f, m)
    assert level == pytest.approx(0.0, abs=0.01)
    e = response_edges(f, m - level, i)
    assert e.low_3db == pytest.approx(300.0, rel=0.002) and e.high_3db == pytest.approx(3400.0, rel=0.002)  # scipy.signal.butter: Wn at −3 dB
    assert e.low_10db < e.low_3db < e.high_3db < e.high_10db
    assert passband_ripple_db(f, m - level, e) == 0.0  # maximally flat


def test_metrics_on_a_chebyshev_curve_and_edges_outside_the_band():
    f = _grid()
    sos = ss.cheby1(6, 1.0, 3000.0, "lowpass", fs=FS, output="sos")
    _, h = ss.sosfreqz(sos, worN=f, fs=FS)
    m = 20 * np.log10(np.abs(h))
    level, i = passband_level_db(f, m)
    e = response_edges(f, m - level, i)
    assert e.low_3db is None and e.low_10db is None  # a low-pass has no lower edge in the band
    assert passband_ripple_db(f, m - level, e) == pytest.approx(1.0, abs=0.05)  # design ripple rp = 1 dB
