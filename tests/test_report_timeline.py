"""Timeline statistics for the report's figures: block invariance, bounded memory and known answers."""

from __future__ import annotations

import numpy as np
import pytest

from voiceband.measurement.timeline import HISTOGRAM_BINS, TimelineAccumulator, measure_timeline


def test_results_do_not_depend_on_block_cutting(rng, feed_in_random_blocks):
    fs = 16000
    x = 0.3 * rng.standard_normal(fs * 7) * np.repeat(rng.uniform(0.01, 1.0, 70), fs // 10)
    whole = measure_timeline(x, fs, level_columns=8, spectrogram_columns=6)
    cut = feed_in_random_blocks(TimelineAccumulator(fs, level_columns=8, spectrogram_columns=6), x, rng, 3000)
    np.testing.assert_allclose(cut.level_rms_dbfs, whole.level_rms_dbfs, rtol=0, atol=1e-9)
    np.testing.assert_allclose(cut.level_peak_dbfs, whole.level_peak_dbfs, rtol=0, atol=1e-12)
    np.testing.assert_allclose(cut.spectrogram_db_per_hz, whole.spectrogram_db_per_hz, rtol=0, atol=1e-9)
    np.testing.assert_array_equal(cut.histogram_counts, whole.histogram_counts)


def test_columns_stay_bounded_and_cover_the_recording():
    fs = 8000
    x = np.zeros(fs * 600)  # 10 minutes
    x[::97] = 0.1
    t = measure_timeline(x, fs, level_columns=100, spectrogram_columns=40)
    assert 50 <= t.level_rms_dbfs.size <= 100 and 20 <= t.spectrogram_db_per_hz.shape[0] <= 40
    # the columns tile the whole recording (the last one may be partial)
    n_chunks = x.size // round(t.chunk_s * fs)
    assert t.level_rms_dbfs.size * t.level_column_s >= n_chunks * t.chunk_s - 1e-9
    assert (t.level_rms_dbfs.size - 1) * t.level_column_s < n_chunks * t.chunk_s


def test_full_scale_sine_levels_and_spectrogram_peak():
    fs = 48000
    n = fs * 2
    f0 = 1031.25  # on a bin of the 1024-sample chunk (46.875 Hz spacing)
    x = np.sin(2 * np.pi * f0 * np.arange(n) / fs)
    t = measure_timeline(x, fs)
    # 0 dBFS = full-scale square-wave RMS, so a full-scale sine reads -3.01 dBFS (voiceband.measurement.levels)
    np.testing.assert_allclose(t.level_rms_dbfs, -3.0103, atol=0.01)
    np.testing.assert_allclose(t.level_peak_dbfs, 0.0, atol=0.01)
    peak_bin = np.argmax(t.spectrogram_db_per_hz, axis=1)
    np.testing.assert_array_equal(t.spectrogram_freqs_hz[peak_bin], f0)
    # one-sided PSD integrates to the mean square: a Hann-windowed on-bin tone of power 0.5 spreads over
    # 3 bins with weights 1/4, 1/2, 1/4 of sum(w^2)-normalised power (Welch 1967 scaling)
    row = 10.0 ** (t.spectrogram_db_per_hz[0] / 10.0)
    assert row.sum() * (fs / 1024) == pytest.approx(0.5, rel=1e-6)


def test_histogram_counts_every_sample_and_shows_the_clip_level():
    fs = 8000
    n = 80000
    # a full-scale sine clipped at c spends 1 - (2/pi) asin(c) of the time at the clip level:
    # c = 0.5 -> 66.7 % (analytic)
    x = np.clip(np.sin(2 * np.pi * 50.0 * np.arange(n) / fs + 0.1), -0.5, 0.5)
    t = measure_timeline(x, fs)
    assert t.histogram_counts.sum() == n == t.samples
    edges = t.histogram_edges
    at_clip = t.histogram_counts[(edges[:-1] <= -0.5) & (edges[1:] > -0.5)].sum() + \
        t.histogram_counts[(edges[:-1] <= 0.5) & (edges[1:] > 0.5)].sum()
    assert at_clip / n == pytest.approx(1 - 2 / np.pi * np.arcsin(0.5), abs=0.01)
    assert edges.size == HISTOGRAM_BINS + 1 and t.beyond_full_scale == 0
