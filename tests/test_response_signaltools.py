"""The response measurement's own analytic signal, Welch PSD and peak finder, against scipy.signal
(the general-purpose reference library whose namesakes they follow)."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.signal as ss

from voiceband.response.signaltools import analytic_signal, find_peaks, welch_psd


@pytest.mark.parametrize("size,n", [(1000, None), (1001, None), (1000, 1024), (999, 1215), (1200, 1000)])
def test_analytic_signal_matches_scipy_hilbert(rng, size, n):
    x = rng.standard_normal(size)
    ref = ss.hilbert(x, N=n)
    got = analytic_signal(x, n)
    assert got.shape == ref.shape
    np.testing.assert_allclose(got, ref, rtol=0, atol=1e-12 * np.max(np.abs(ref)))


@pytest.mark.parametrize("size,nper", [(48000, 4096), (48000, 2400), (5000, 5000), (12345, 1001), (4096, 2048)])
def test_welch_psd_matches_scipy_welch(rng, size, nper):
    x = 0.1 * rng.standard_normal(size) + 0.3 * np.sin(np.arange(size) * 0.05) + 0.02
    f_ref, p_ref = ss.welch(x, fs=48000, nperseg=nper)
    f, p = welch_psd(x, 48000, segment_length=nper)
    np.testing.assert_array_equal(f, f_ref)
    np.testing.assert_allclose(p, p_ref, rtol=1e-12, atol=0)


def _signals(rng):
    yield rng.standard_normal(500)
    yield np.round(3 * rng.standard_normal(800))  # many flat tops and equal heights
    x = np.sin(np.linspace(0, 40, 2000)) + 0.1 * rng.standard_normal(2000)
    yield x
    yield np.array([0.0, 1.0, 1.0, 1.0, 0.0, 2.0, 2.0, 3.0, 3.0, 0.0, 1.0, 1.0])  # plateaus, one at the end
    yield np.array([1.0, 2.0])
    yield np.zeros(10)


@pytest.mark.parametrize("kwargs", [{}, {"height": 0.5}, {"distance": 7}, {"distance": 2.5}, {"height": -0.2, "distance": 12},
                                    {"prominence": 0.1}, {"prominence": 1.5}])
def test_find_peaks_matches_scipy(rng, kwargs):
    for x in _signals(rng):
        ref, _ = ss.find_peaks(x, **kwargs)
        got = find_peaks(x, **kwargs)
        np.testing.assert_array_equal(got, ref)
