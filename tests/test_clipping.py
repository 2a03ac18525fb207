"""Known-answer tests for voiceband.clipping.

Expected values come from analytic results (time a clipped sine or clipped Gaussian noise
spends at the clip level: trade-facts §4 [K], scipy.stats for the Gaussian tail), from the
construction of the test signal (event times), and from direct numpy counts of samples equal
to the clip value.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.signal import butter, lfilter
from scipy.stats import norm

from voiceband.clipping import ClipEvent, ClippingAccumulator, ClippingResult, measure_clipping
from voiceband.errors import SignalValueError

Q16 = 2.0**-15  # 16-bit PCM step, full scale = 1.0


def quantise(x, step=Q16):
    return np.round(x / step) * step


def speech_like(rng, fs, seconds, *, peak=1.0):
    """Band-limited Laplacian noise in syllable-like bursts with pauses, peak-normalised (speech stand-in)."""
    n = int(fs * seconds)
    x = rng.laplace(size=n)
    b, a = butter(2, [100 / (fs / 2), min(3400, 0.45 * fs) / (fs / 2)], "band")
    x = lfilter(b, a, x)
    seg = int(0.15 * fs)
    gate = np.repeat(rng.random(n // seg + 1) < 0.6, seg)[:n].astype(float)
    x = x * lfilter([0.005], [1, -0.995], gate)
    return x * (peak / np.max(np.abs(x)))


def feed_in_random_blocks(acc, x, rng, max_len):
    i = 0
    while i < x.size:
        k = int(rng.integers(1, max_len + 1))
        acc.update(x[i:i + k])
        i += k
    return acc.result()


def clipped_sine_fraction(c):
    """Time a sine of unit amplitude spends at a clip level c (trade-facts §4 [K], analytic)."""
    return 1 - (2 / math.pi) * math.asin(c)


# ---------------------------------------------------------------- clipped sines
@pytest.mark.parametrize("c, fraction", [(0.5, 0.667), (0.7, 0.506), (0.9, 0.287)])
def test_clipped_sine_time_at_clip_level(c, fraction):
    # trade-facts §4 [K]: c = 0.5 -> 66.7 %, 0.7 -> 50.6 %, 0.9 -> 28.7 %
    assert clipped_sine_fraction(c) == pytest.approx(fraction, abs=0.0005)
    fs = 48000
    x = np.clip(np.sin(2 * np.pi * 997 * np.arange(5 * fs) / fs), -c, c)
    r = measure_clipping(x, fs)
    assert r.clip_level == pytest.approx(c, abs=1e-12)
    assert r.clip_level_positive == pytest.approx(c) and r.clip_level_negative == pytest.approx(c)
    assert r.clipped_fraction == pytest.approx(clipped_sine_fraction(c), abs=0.001)
    assert r.clipped_samples == round(r.clipped_fraction * x.size)
    assert r.event_count == 2  # one continuous episode per polarity (runs 1 ms apart, merged)


def test_clipping_below_full_scale_after_turn_down():
    # Clipped at 0.5 in an earlier stage, then turned down by 0.6: the ceiling is at 0.3 of
    # full scale (constructed) and the time on it is still 66.7 % (trade-facts §4 [K]).
    fs = 16000
    x = 0.6 * np.clip(np.sin(2 * np.pi * 331 * np.arange(3 * fs) / fs), -0.5, 0.5)
    r = measure_clipping(x, fs)
    assert r.clip_level == pytest.approx(0.3, abs=1e-12)
    assert r.clipped_fraction == pytest.approx(clipped_sine_fraction(0.5), abs=0.001)


def test_asymmetric_clipping_one_polarity():
    # An electret capsule clipping only its positive swing (trade-facts §4 [C] note):
    # positive half clipped at 0.4, then scaled by 0.8.  Time at the ceiling is the part of
    # the cycle where sin > 0.4: 1/2 - asin(0.4)/pi (analytic).
    fs = 16000
    x = 0.8 * np.minimum(np.sin(2 * np.pi * 331 * np.arange(3 * fs) / fs), 0.4)
    r = measure_clipping(x, fs)
    assert r.clip_level_positive == pytest.approx(0.32, abs=1e-12)
    assert r.clip_level_negative is None
    assert r.clip_level == pytest.approx(0.32, abs=1e-12)
    assert r.clipped_fraction == pytest.approx(0.5 - math.asin(0.4) / math.pi, abs=0.001)
    assert all(e.polarity == "+" for e in r.events)


def test_asymmetric_clip_levels_report_the_lower_one():
    fs = 16000
    x = np.clip(np.sin(2 * np.pi * 331 * np.arange(3 * fs) / fs), -0.6, 0.8)
    r = measure_clipping(x, fs)
    assert r.clip_level_positive == pytest.approx(0.8)
    assert r.clip_level_negative == pytest.approx(0.6)
    assert r.clip_level == pytest.approx(0.6)  # documented: the lower of the two
    expected = 0.5 * clipped_sine_fraction(0.8) + 0.5 * clipped_sine_fraction(0.6)  # analytic
    assert r.clipped_fraction == pytest.approx(expected, abs=0.001)


def test_gaussian_noise_clipped_at_two_sigma(rng):
    # Gaussian noise clipped at 2 sigma spends 2 Q(2) = 4.55 % of its time on the clip levels
    # (trade-facts §4 [K]; Q from scipy.stats.norm).  Tolerance: 4 binomial standard deviations.
    n = 1 << 20
    sigma = 0.25
    x = np.clip(sigma * rng.standard_normal(n), -2 * sigma, 2 * sigma)
    r = measure_clipping(x, 48000)
    p = 2 * norm.sf(2.0)
    assert p == pytest.approx(0.0455, abs=0.0001)
    assert r.clip_level == pytest.approx(0.5, abs=1e-12)
    assert r.clipped_fraction == pytest.approx(p, abs=4 * math.sqrt(p * (1 - p) / n))


# ---------------------------------------------------------------- events
def test_event_start_and_duration_on_constructed_bursts():
    # A 100 Hz sine at 0.3 everywhere, at 1.0 during [1.0, 1.5) s and [3.0, 3.2) s, clipped at
    # ±0.8.  Within a burst starting at t0 (a zero crossing) each cycle is on the positive
    # ceiling while sin >= 0.8, i.e. from asin(0.8)/(2 pi f) to (pi - asin(0.8))/(2 pi f), and
    # on the negative one half a cycle later (constructed / analytic).  Runs 6 ms apart merge
    # into one event per polarity per burst (merge gap 50 ms).
    fs, f, c = 8000, 100.0, 0.8
    t = np.arange(5 * fs) / fs
    amp = np.where(((t >= 1.0) & (t < 1.5)) | ((t >= 3.0) & (t < 3.2)), 1.0, 0.3)
    x = np.clip(amp * np.sin(2 * np.pi * f * t), -c, c)
    r = measure_clipping(x, fs)
    period = int(fs / f)
    first = math.ceil(math.asin(c) / (2 * math.pi * f) * fs)  # first clipped sample in a cycle
    last = math.floor((math.pi - math.asin(c)) / (2 * math.pi * f) * fs)  # last one
    expected = []
    for t0, cycles in ((1.0, 50), (3.0, 20)):
        s0 = round(t0 * fs)
        for pol, shift in (("+", 0), ("-", period // 2)):
            start = s0 + shift + first
            end = s0 + shift + (cycles - 1) * period + last + 1
            expected.append((pol, start / fs, (end - start) / fs))
    expected.sort(key=lambda e: e[1])
    assert r.event_count == 4
    assert [(e.polarity, e.start_s, e.duration_s) for e in r.events] == [
        (p, pytest.approx(s, abs=1e-9), pytest.approx(d, abs=1e-9)) for p, s, d in expected]
    assert all(isinstance(e, ClipEvent) and abs(e.level) == pytest.approx(c) for e in r.events)
    run_len = last - first + 1
    assert r.clipped_samples == 2 * (50 + 20) * run_len
    assert sum(e.clipped_samples for e in r.events) == r.clipped_samples
    # without merging, every half-cycle run is its own event
    r0 = measure_clipping(x, fs, merge_gap_s=0.0)
    assert r0.event_count == r0.run_count == 2 * (50 + 20)


def test_event_listing_is_capped_but_all_are_counted():
    fs = 8000
    x = np.clip(np.sin(2 * np.pi * 50 * np.arange(10 * fs) / fs), -0.5, 0.5)
    r = measure_clipping(x, fs, merge_gap_s=0.0, max_events=10)
    assert r.event_count == 2 * 50 * 10  # constructed: two runs a cycle, 500 cycles
    assert len(r.events) == 10
    starts = [e.start_s for e in r.events]
    assert starts == sorted(starts) and starts[0] < 0.02


# ---------------------------------------------------------------- quantised audio
def test_16_bit_quantised_clipped_speech(rng):
    fs = 16000
    x = speech_like(rng, fs, 8.0)
    y = quantise(2.0 * np.clip(x, -0.15, 0.15))  # clipped 16 dB below its peaks, stored as 16-bit
    level = quantise(0.3)
    r = measure_clipping(y, fs)
    assert r.clip_level == pytest.approx(level, abs=1e-15)
    on_level = np.count_nonzero(np.abs(y) == level)  # direct numpy count of samples on the ceiling
    assert r.clipped_samples == on_level
    assert r.event_count > 0


def test_quantization_step_option_for_8_bit_audio():
    fs = 8000
    x = quantise(np.clip(0.9 * np.sin(2 * np.pi * 97 * np.arange(4 * fs) / fs), -0.6, 0.6), 2.0**-7)
    r = measure_clipping(x, fs, quantization_step=2.0**-7)
    assert r.clip_level == pytest.approx(quantise(0.6, 2.0**-7))
    assert r.clipped_fraction == pytest.approx(np.mean(np.abs(x) == r.clip_level), abs=1e-12)


# ---------------------------------------------------------------- no false positives
@pytest.mark.parametrize("peak", [10 ** (-0.5 / 20), 0.5, 0.1, 0.01])
@pytest.mark.parametrize("sixteen_bit", [False, True])
def test_clean_speech_like_noise_reports_no_clipping(rng, peak, sixteen_bit):
    # Issue requirement: hot but clean speech peaking at -0.5 dBFS reports zero events;
    # also at lower levels, as floating point and as 16-bit PCM.
    fs = 16000
    x = speech_like(rng, fs, 10.0, peak=peak)
    if sixteen_bit:
        x = quantise(x)
    r = measure_clipping(x, fs)
    assert r.clip_level is None
    assert r.event_count == 0 and r.clipped_samples == 0 and r.events == ()


@pytest.mark.parametrize("freq_hz", [20.0, 50.0, 100.0, 997.0, 3000.0, 12000.0])
@pytest.mark.parametrize("sixteen_bit", [False, True])
def test_clean_sine_at_minus_half_db_reports_no_clipping(freq_hz, sixteen_bit):
    # A pure tone's histogram also peaks at its extremes (arcsine density); it must not read as
    # clipped, at any frequency, even where 16-bit rounding makes equal samples at the crest.
    fs = 48000
    x = 10 ** (-0.5 / 20) * np.sin(2 * np.pi * freq_hz * np.arange(4 * fs) / fs + 0.1)
    if sixteen_bit:
        x = quantise(x)
    r = measure_clipping(x, fs)
    assert r.clip_level is None and r.event_count == 0


def test_square_wave_is_reported_as_sitting_on_its_extremes():
    # Documented behaviour: a square wave is flat-topped at its extremes.
    x = 0.5 * np.where((np.arange(8000) // 40) % 2 == 0, 1.0, -1.0)
    r = measure_clipping(x, 8000)
    assert r.clip_level == pytest.approx(0.5)
    assert r.clipped_fraction == pytest.approx(1.0)


def test_digital_silence_has_no_clipping():
    r = measure_clipping(np.zeros(1000), 8000)
    assert r.clip_level is None and r.clipped_samples == 0 and r.clipped_fraction == 0.0


# ---------------------------------------------------------------- streaming
def test_block_size_invariance(rng):
    fs = 16000
    x = np.clip(speech_like(rng, fs, 6.0), -0.1, 0.2) * 2.0
    one = measure_clipping(x, fs)
    assert one.clip_level_positive == pytest.approx(0.4) and one.clip_level_negative == pytest.approx(0.2)
    assert one.event_count > 10
    for max_len in (5, 3000, 100000):
        assert feed_in_random_blocks(ClippingAccumulator(fs), x, rng, max_len) == one


def test_result_does_not_change_the_accumulator(rng):
    fs = 8000
    x = np.clip(speech_like(rng, fs, 4.0), -0.2, 0.2)
    acc = ClippingAccumulator(fs)
    acc.update(x[:5000])
    first = acc.result()
    assert acc.result() == first
    acc.update(x[5000:])
    assert acc.result() == measure_clipping(x, fs)


def test_result_fields():
    r = measure_clipping(np.clip(np.sin(np.arange(8000) / 5.0), -0.5, 0.5), 8000)
    assert isinstance(r, ClippingResult)
    assert r.sample_count == 8000 and r.sample_rate_hz == 8000.0
    assert r.min_run_samples == 3 and r.merge_gap_s == 0.05
    assert "Aleinik" in r.method


# ---------------------------------------------------------------- bad input
@pytest.mark.parametrize("bad", [np.nan, np.inf])
def test_non_finite_samples_raise(bad):
    x = np.zeros(50)
    x[20] = bad
    with pytest.raises(SignalValueError, match="NaN or infinite sample.*sample 20"):
        measure_clipping(x, 8000)


def test_bad_options_and_input():
    with pytest.raises(SignalValueError, match="No samples"):
        measure_clipping(np.zeros(0), 8000)
    with pytest.raises(SignalValueError, match="one-dimensional"):
        measure_clipping(np.zeros((3, 3)), 8000)
    with pytest.raises(SignalValueError, match="sample_rate_hz"):
        ClippingAccumulator(-1)
    with pytest.raises(SignalValueError, match="min_run_samples"):
        ClippingAccumulator(8000, min_run_samples=1)
    with pytest.raises(SignalValueError, match="merge_gap_s"):
        ClippingAccumulator(8000, merge_gap_s=-0.1)
    with pytest.raises(SignalValueError, match="search_db"):
        ClippingAccumulator(8000, search_db=20)
    with pytest.raises(SignalValueError, match="quantization_step"):
        ClippingAccumulator(8000, quantization_step=float("nan"))
