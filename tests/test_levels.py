"""Known-answer tests for voiceband.measurement.levels (peak, true peak, RMS, P.56, crest factor, DC).

Sources are named beside each expected value: analytic results, ITU-R BS.1770-4 Annex 2
(coefficient table), ITU-T P.56 (12/2011) method B, the worst-case true-peak
under-read -20 log10 cos(pi f / fs) (computed), and independent slow
reference implementations written here (full-rate polyphase filtering, full-rate
P.56 envelope).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from scipy.ndimage import maximum_filter1d
from scipy.optimize import brentq
from scipy.signal import butter, lfilter

from voiceband.errors import SignalValueError
from voiceband.measurement.levels import (
    BS1770_TRUE_PEAK_PHASES,
    P56_HANGOVER_S,
    P56_MARGIN_DB,
    P56_TIME_CONSTANT_S,
    LevelsAccumulator,
    LevelsResult,
    measure_levels,
)

SINE_RMS_DB = 10 * math.log10(0.5)  # analytic: mean(sin^2) = 1/2 -> -3.0103 dB


# ---------------------------------------------------------------- helpers
def speech_like(rng, fs, seconds, *, peak=0.5):
    """Band-limited Laplacian noise gated into syllable-like bursts with pauses, peak-normalised."""
    n = int(fs * seconds)
    x = rng.laplace(size=n)
    b, a = butter(2, [100 / (fs / 2), min(3400, 0.45 * fs) / (fs / 2)], "band")
    x = lfilter(b, a, x)
    seg = int(0.15 * fs)
    gate = np.repeat(rng.random(n // seg + 1) < 0.6, seg)[:n].astype(float)
    gate = lfilter([0.005], [1, -0.995], gate)
    x = x * gate * rng.uniform(0.3, 1.0, size=n // seg + 1).repeat(seg)[:n]
    return x * (peak / np.max(np.abs(x)))


def dense_true_peak(x):
    """Reference: zero-stuff by 4 and convolve with the whole 48-tap BS.1770 prototype, every output.

    Outputs are kept only where the 12-tap window lies inside the recording (the module's
    convention), and the result is never below the sample peak.
    """
    h = BS1770_TRUE_PEAK_PHASES.T.ravel()  # h[4 j + q] = phase q, tap j
    u = np.zeros(4 * x.size)
    u[::4] = x
    y = np.abs(np.convolve(u, h))
    # output 4 m + q uses x[m - 11] ... x[m]: keep 11 <= m <= n - 1
    y = y[4 * 11: 4 * (x.size - 1) + 4]
    return max(float(y.max()), float(np.max(np.abs(x))))


def tapered(x, ramp=480):
    """x with raised-cosine fade-in and fade-out, so the recording's edges add no overshoot."""
    w = np.ones(x.size)
    r = 0.5 - 0.5 * np.cos(np.pi * np.arange(ramp) / ramp)
    w[:ramp], w[-ramp:] = r, r[::-1]
    return x * w


def assert_results_close(one, other):
    for f in dataclasses.fields(LevelsResult):
        a, b = getattr(one, f.name), getattr(other, f.name)
        if isinstance(a, float):
            assert b == pytest.approx(a, rel=1e-9, abs=1e-12), f.name
        else:
            assert a == b, f.name


def bs1770_ripple_db(max_freq_ratio):
    """Largest |gain| deviation (dB) of the four BS.1770 phases from unity up to f/fs = max_freq_ratio."""
    taps = np.arange(BS1770_TRUE_PEAK_PHASES.shape[1])
    worst = 0.0
    for r in np.linspace(0, max_freq_ratio, 200):
        resp = np.abs(BS1770_TRUE_PEAK_PHASES @ np.exp(-2j * np.pi * r * taps))
        worst = max(worst, float(np.max(np.abs(20 * np.log10(resp)))))
    return worst


# ---------------------------------------------------------------- BS.1770 table
def test_bs1770_table_shape_symmetry_and_grid():
    # BS.1770-4 Annex 2: order-48 prototype in 4 phases of 12 taps; the prototype is
    # symmetric, so phase 3 is phase 0 reversed and phase 2 is phase 1 reversed; every
    # coefficient is a multiple of 2**-13 (source: the annex table's 13 decimal places).
    p = BS1770_TRUE_PEAK_PHASES
    assert p.shape == (4, 12)
    np.testing.assert_array_equal(p[3], p[0][::-1])
    np.testing.assert_array_equal(p[2], p[1][::-1])
    np.testing.assert_array_equal(p * 8192, np.round(p * 8192))
    assert p[0, 0] == 0.0017089843750  # first entry of the annex table
    assert not p.flags.writeable


# ---------------------------------------------------------------- dBFS convention
def test_full_scale_sine_reads_0_dbfs_peak_and_minus_3_01_rms():
    fs = 48000
    n = np.arange(10 * fs)
    x = np.sin(2 * np.pi * 1000 * n / fs + np.pi / 2)  # 48 samples a cycle, a sample on each crest
    r = measure_levels(x, fs)
    assert r.peak_dbfs == pytest.approx(0.0, abs=1e-9)  # analytic: max|x| = 1
    assert r.rms_dbfs == pytest.approx(SINE_RMS_DB, abs=1e-6)  # analytic: -3.0103 dB
    assert r.rms_dbfs == pytest.approx(-3.01, abs=0.005)  # DEVELOPERS.md convention
    # Analytic: a sine's crest factor is 3.01 dB (true peak re active level);
    # P.56 counts the 23 ms envelope rise as inactive (+0.01 dB in 10 s), and the BS.1770
    # interpolator reads about +0.01 dB at this frequency.
    assert r.crest_factor_db == pytest.approx(3.01, abs=0.05)
    assert r.crest_factor_db == pytest.approx(r.true_peak_dbtp - r.active_level_dbfs, abs=1e-12)


def test_full_scale_square_wave_reads_0_dbfs_rms():
    # Convention (STYLE.md / DEVELOPERS.md): 0 dBFS is the RMS of a full-scale square wave.
    fs = 8000
    x = np.where((np.arange(fs) // 20) % 2 == 0, 1.0, -1.0)
    r = measure_levels(x, fs)
    assert r.rms_dbfs == pytest.approx(0.0, abs=1e-12)
    assert r.peak_dbfs == pytest.approx(0.0, abs=1e-12)
    assert r.dc_offset == pytest.approx(0.0, abs=1e-12)


@pytest.mark.parametrize("amp", [1.0, 0.5, 0.01])
def test_sine_rms_scales_with_amplitude(amp):
    fs = 16000
    x = amp * np.sin(2 * np.pi * 250 * np.arange(2 * fs) / fs)  # whole number of cycles
    r = measure_levels(x, fs)
    assert r.rms_dbfs == pytest.approx(20 * math.log10(amp) + SINE_RMS_DB, abs=1e-6)  # analytic


# ---------------------------------------------------------------- true peak
def test_true_peak_of_fs4_sine_45_degrees_off_its_crest():
    # A sine at fs/4 sampled 45° off its crests: every sample is ±cos(45°), so the sample peak
    # is 3.01 dB below the waveform's peak (analytic).  BS.1770 4x over-sampling recovers it:
    # worst-case under-read for N = 4 at fs/4 is -20 log10 cos(pi/16) = 0.17 dB (computed),
    # plus the annex interpolator's own gain ripple (computed from its table).
    fs = 48000
    n = np.arange(fs)
    x = tapered(np.sin(2 * np.pi * n / 4 + np.pi / 4))
    r = measure_levels(x, fs)
    assert r.peak_dbfs == pytest.approx(20 * math.log10(math.cos(math.pi / 4)), abs=1e-9)
    ripple = bs1770_ripple_db(0.25)
    assert -0.17 - ripple <= r.true_peak_dbtp <= ripple
    assert r.true_peak_dbtp - r.peak_dbfs == pytest.approx(3.01, abs=0.17 + ripple)
    # the windowed search equals a dense 4x polyphase over every sample (reference here)
    assert r.true_peak_dbtp == pytest.approx(20 * math.log10(dense_true_peak(x)), abs=1e-9)


@pytest.mark.parametrize(
    "freq_hz, sample_under_read_db, tp_under_read_db",
    [
        (1000.0, 0.019, 0.0012),  # computed: 1 kHz @ 48 kHz, N = 1: 0.019 dB
        (12000.0, 3.01, 0.17),  # 12 kHz @ 48 kHz: N = 1: 3.01 dB; N = 4: 0.17 dB
    ],
)
def test_worst_case_sample_peak_under_read_table(freq_hz, sample_under_read_db, tp_under_read_db):
    # A sine whose crest falls exactly midway between two samples: the sample peak reads
    # -20 log10 cos(pi f / fs) low (analytic); the 4x true peak reads at
    # most -20 log10 cos(pi f / (4 fs)) low, up to the interpolator's ripple.  At these two
    # frequencies every crest falls midway (48 and 4 samples a cycle).
    fs = 48000
    n = np.arange(9600)
    x = tapered(np.cos(2 * np.pi * freq_hz * (n - 2400.5) / fs))
    r = measure_levels(x, fs)
    formula = -20 * math.log10(math.cos(math.pi * freq_hz / fs))
    assert formula == pytest.approx(sample_under_read_db, abs=0.005)
    assert -r.peak_dbfs == pytest.approx(formula, abs=1e-9)
    assert -20 * math.log10(math.cos(math.pi * freq_hz / (4 * fs))) <= tp_under_read_db + 0.005
    ripple = bs1770_ripple_db(freq_hz / fs)
    assert -r.true_peak_dbtp <= tp_under_read_db + ripple
    assert r.true_peak_dbtp <= ripple
    assert r.true_peak_dbtp == pytest.approx(20 * math.log10(dense_true_peak(x)), abs=1e-9)


def test_true_peak_matches_dense_reference_on_band_limited_noise(rng, feed_in_random_blocks):
    fs = 48000
    for hi_hz in (3000.0, 12000.0, 21000.0):
        b, a = butter(4, hi_hz / (fs / 2))
        x = lfilter(b, a, rng.standard_normal(fs))
        x *= 0.9 / np.max(np.abs(x))
        res_one = measure_levels(x, fs)
        expected = 20 * math.log10(dense_true_peak(x))  # slow reference above
        assert res_one.true_peak_dbtp == pytest.approx(expected, abs=1e-9)
        res_blocks = feed_in_random_blocks(LevelsAccumulator(fs), x, rng, 3000)
        assert res_blocks.true_peak_dbtp == pytest.approx(expected, abs=1e-9)
        assert res_one.true_peak_dbtp >= res_one.peak_dbfs


def test_intersample_over_reads_above_full_scale():
    # Full-scale samples at fs/4, 45° off the crest: the waveform peaks at sqrt(2), +3.01 dBTP
    # (analytic), which a sample-peak meter cannot see.
    fs = 48000
    x = tapered(np.sqrt(2) * np.sin(2 * np.pi * np.arange(4800) / 4 + np.pi / 4))
    r = measure_levels(x, fs)
    assert r.peak_dbfs == pytest.approx(0.0, abs=1e-9)
    assert r.true_peak_dbtp == pytest.approx(3.01, abs=0.17 + bs1770_ripple_db(0.25))


def test_peak_times():
    fs = 8000
    x = np.zeros(fs)
    x[1234] = -0.8
    x[5000] = 0.5
    r = measure_levels(x, fs)
    assert r.peak_time_s == pytest.approx(1234 / fs)  # constructed
    assert r.peak_dbfs == pytest.approx(20 * math.log10(0.8))
    assert abs(r.true_peak_time_s - 1234 / fs) <= 1 / fs


# ---------------------------------------------------------------- P.56 method B
def _p56_tone_bursts_expected(amp, fs, on_s, n_bursts, total_samples):
    """Active level and activity of tone bursts, derived from the P.56 method B definition.

    Envelope: two cascaded one-pole smoothers (time constant T) of |x|.  For a tone of
    amplitude amp, |x| averages E = 2 amp / pi.  After switch-on the envelope is
    E (1 - (1 + t/T) e^(-t/T)); after switch-off E (1 + t/T) e^(-t/T).  A sample is active at
    threshold c while the envelope is >= c or was within the last H = 0.2 s.  So each burst is
    active from t_r (rise to c) after its start until t_d (decay to c) + H after its end:
    on_s - t_r + t_d + H seconds.  The threshold c sits M = 15.9 dB below the active level A,
    and A = 10 log10(sum x^2 / active samples); solved by fixed-point iteration.
    """
    T, H, M = P56_TIME_CONSTANT_S, P56_HANGOVER_S, P56_MARGIN_DB
    env = 2 * amp / math.pi
    sumsq = n_bursts * on_s * fs * amp**2 / 2
    level = 10 * math.log10(sumsq / (n_bursts * on_s * fs))
    for _ in range(20):
        ratio = 10 ** ((level - M) / 20) / env
        t_r = T * brentq(lambda u: 1 - (1 + u) * math.exp(-u) - ratio, 0.0, 50.0)
        t_d = T * brentq(lambda u: (1 + u) * math.exp(-u) - ratio, 0.0, 50.0)
        active_s = on_s - t_r + t_d + H if n_bursts > 1 or on_s * fs < total_samples else on_s - t_r
        level = 10 * math.log10(sumsq / (n_bursts * active_s * fs))
    activity = (sumsq / total_samples) / 10 ** (level / 10)
    return level, activity


def test_p56_steady_tone_active_level_equals_rms_and_activity_near_one():
    # P.56 on a steady tone: every sample is active except the envelope's rise to the
    # threshold at the start (about 23 ms), so activity ~ 1 and active level ~ RMS.
    fs, seconds, amp = 16000, 10.0, 0.5
    n = int(fs * seconds)
    x = amp * np.sin(2 * np.pi * 1000 * np.arange(n) / fs)
    r = measure_levels(x, fs)
    level, activity = _p56_tone_bursts_expected(amp, fs, seconds, 1, n)  # derivation above
    assert r.activity_factor == pytest.approx(activity, abs=0.001)
    assert r.activity_factor == pytest.approx(1.0, abs=0.005)
    assert r.active_level_dbfs == pytest.approx(level, abs=0.01)
    assert r.active_level_dbfs == pytest.approx(r.rms_dbfs, abs=0.02)
    assert r.active_threshold_dbfs == pytest.approx(r.active_level_dbfs - 15.9, abs=1e-9)


def test_p56_gated_tone_bursts():
    # Tone on 3 s, off 3 s (gaps > 0.4 s): activity = 0.5 plus the hangover share,
    # (3 - t_r + t_d + 0.2) / 6 ~ 0.545 (derived in _p56_tone_bursts_expected), and the
    # active level is within 0.5 dB of the tone's RMS (0.37 dB below it).
    fs, on_s, amp, bursts = 8000, 3.0, 0.3, 4
    on = int(on_s * fs)
    tone = amp * np.sin(2 * np.pi * 500 * np.arange(on) / fs)  # whole cycles: starts and ends at 0
    x = np.concatenate([np.concatenate((tone, np.zeros(on))) for _ in range(bursts)])
    r = measure_levels(x, fs)
    level, activity = _p56_tone_bursts_expected(amp, fs, on_s, bursts, x.size)
    tone_rms_db = 20 * math.log10(amp) + SINE_RMS_DB
    assert r.activity_factor == pytest.approx(activity, abs=0.002)
    assert r.activity_factor == pytest.approx(0.5 + (0.2 + 0.0716) / 6, abs=0.003)
    assert r.active_level_dbfs == pytest.approx(level, abs=0.02)
    assert abs(r.active_level_dbfs - tone_rms_db) < 0.5


def _p56_full_rate_reference(x, fs, thresholds):
    """Slow reference: P.56 method B sample by sample (ITU-T P.56 (12/2011) method B).

    ``thresholds`` are amplitudes c_j in ascending order; interpolation is linear between
    the two thresholds around the first where A_j - C_j <= M.
    """
    g = math.exp(-1 / (P56_TIME_CONSTANT_S * fs))
    p = lfilter([1 - g], [1, -g], np.abs(x))
    q = lfilter([1 - g], [1, -g], p)
    hang = int(round(P56_HANGOVER_S * fs))
    size = hang + 1
    held = maximum_filter1d(q, size, origin=(size - 1) // 2, mode="constant", cval=0.0)
    held_sorted = np.sort(held)
    active = held.size - np.searchsorted(held_sorted, thresholds, side="left")
    sumsq = float(np.dot(x, x))
    with np.errstate(divide="ignore"):
        a_db = 10 * np.log10(sumsq / active)
    diff = a_db - 20 * np.log10(thresholds) - P56_MARGIN_DB
    k = int(np.flatnonzero((active > 0) & (diff <= 0))[0])
    f = diff[k - 1] / (diff[k - 1] - diff[k])
    return a_db[k - 1] + f * (a_db[k] - a_db[k - 1])


@pytest.mark.parametrize("fs", [8000, 16000, 44100, 48000])
def test_p56_decimated_envelope_error_is_negligible(rng, fs):
    # The module runs the envelope at ~750 Hz; against the sample-by-sample reference with the
    # same 1/16-octave ladder the active level differs by < 0.05 dB (the documented bound).
    x = speech_like(rng, fs, 12.0, peak=0.3) + 1e-4 * rng.standard_normal(int(fs * 12.0))
    fine = 2.0 ** (np.arange(-40 * 16, 2 * 16 + 1) / 16)
    r = measure_levels(x, fs)
    ref = _p56_full_rate_reference(x, fs, fine)
    assert r.active_level_dbfs == pytest.approx(ref, abs=0.05)
    # G.191's ladder: 15 thresholds a factor 2 apart, 2**-15 ... 2**-1 of full scale
    # (ITU-T P.56 method B); G.191 resolves the crossing to 0.5 dB, our finer ladder agrees well within.
    coarse = 2.0 ** (np.arange(15) - 15.0)
    assert r.active_level_dbfs == pytest.approx(_p56_full_rate_reference(x, fs, coarse), abs=0.1)
    assert r.activity_factor == pytest.approx(
        (np.dot(x, x) / x.size) / 10 ** (r.active_level_dbfs / 10), rel=1e-12)  # P.56 definition


# ---------------------------------------------------------------- DC, silence, invariance
def test_dc_offset_and_rms_include_dc():
    fs = 8000
    x = 0.4 * np.sin(2 * np.pi * 200 * np.arange(fs) / fs) + 0.1
    r = measure_levels(x, fs)
    assert r.dc_offset == pytest.approx(0.1, abs=1e-12)  # analytic: mean of sine over whole cycles is 0
    assert r.rms_dbfs == pytest.approx(10 * math.log10(0.4**2 / 2 + 0.1**2), abs=1e-9)  # analytic
    assert r.peak_dbfs == pytest.approx(20 * math.log10(0.5), abs=1e-9)


def test_digital_silence_gives_minus_inf_levels():
    r = measure_levels(np.zeros(4000), 8000)
    assert r.peak_dbfs == -math.inf and r.true_peak_dbtp == -math.inf and r.rms_dbfs == -math.inf
    assert r.active_level_dbfs == -math.inf
    assert r.activity_factor == 0.0
    assert r.crest_factor_db is None
    assert r.peak_time_s is None and r.true_peak_time_s is None
    assert r.dc_offset == 0.0


def test_block_size_invariance(rng, feed_in_random_blocks):
    fs = 8000
    x = speech_like(rng, fs, 4.0, peak=0.7) + 0.01
    one = measure_levels(x, fs)
    for max_len in (7, 1000, 70000):
        assert_results_close(one, feed_in_random_blocks(LevelsAccumulator(fs), x, rng, max_len))


def test_result_does_not_change_the_accumulator(rng):
    fs = 8000
    x = speech_like(rng, fs, 3.0)
    acc = LevelsAccumulator(fs)
    acc.update(x[:10000])
    first = acc.result()
    assert acc.result() == first
    acc.update(x[10000:])
    assert_results_close(measure_levels(x, fs), acc.result())


# ---------------------------------------------------------------- bad input
@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf])
def test_non_finite_samples_raise_one_sentence(bad):
    x = np.zeros(100)
    x[37] = bad
    with pytest.raises(SignalValueError, match="NaN or infinite sample.*sample 37"):
        measure_levels(x, 8000)


def test_failed_update_leaves_accumulator_unchanged(rng):
    fs = 8000
    x = speech_like(rng, fs, 2.0)
    acc = LevelsAccumulator(fs)
    acc.update(x)
    before = acc.result()
    with pytest.raises(SignalValueError):
        acc.update(np.array([0.1, np.nan]))
    assert acc.result() == before


def test_other_bad_input():
    with pytest.raises(SignalValueError, match="No samples"):
        measure_levels(np.zeros(0), 8000)
    with pytest.raises(SignalValueError, match="one channel"):
        measure_levels(np.zeros((10, 2)), 8000)
    with pytest.raises(SignalValueError, match="sample_rate_hz"):
        LevelsAccumulator(0)
    with pytest.raises(SignalValueError, match="real numbers"):
        measure_levels(np.array(["a", "b"]), 8000)


def test_true_peak_does_not_depend_on_candidate_thinning(monkeypatch):
    # The thinning of true-peak candidates to local maxima is only a memory saving: the BS.1770
    # interpolation applies the same test, so thinning always, or never, gives the same reading.
    import voiceband.measurement.levels as lm

    rng = np.random.default_rng(3)
    x = np.clip(rng.standard_normal(200_000) * 0.3, -0.9, 0.9)  # many samples near the peak
    readings = []
    for limit in (0, 10**9):
        monkeypatch.setattr(lm, "_PREFILTER_CANDIDATES", limit)
        acc = lm.LevelsAccumulator(48000)
        for i in range(0, x.size, 30_000):
            acc.update(x[i:i + 30_000])
        r = acc.result()
        readings.append((r.true_peak_dbtp, r.true_peak_time_s))
    assert readings[0] == readings[1]
