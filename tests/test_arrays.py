"""voiceband.arrays against numpy (the reference): sorted_unique vs numpy.unique, the piece search vs flatnonzero."""

from __future__ import annotations

import numpy as np
import pytest

from voiceband.arrays import sorted_unique


def test_matches_numpy_unique():
    # Reference: numpy.unique (sorted distinct values), on integers and floats of many sizes.
    rng = np.random.default_rng(7)
    for n in (0, 1, 2, 3, 10, 257, 5000):
        for a in (rng.integers(-20, 20, n), rng.integers(0, 1 << 40, n), rng.standard_normal(n).round(1)):
            got = sorted_unique(a)
            want = np.unique(a)
            assert got.dtype == want.dtype and np.array_equal(got, want), n


@pytest.mark.parametrize("n", [1, 2047, 2048, 2049, 65536 + 3, 200_000])
@pytest.mark.parametrize("db", [0.5, 3.0, 20.0])
def test_where_beyond_matches_a_plain_comparison(n, db):
    # Reference: numpy.flatnonzero over every sample (what the piece search must reproduce).
    from voiceband.arrays import piece_peaks, where_beyond

    rng = np.random.default_rng(n)
    x = rng.standard_normal(n) * np.exp(rng.standard_normal(n))  # heavy-tailed, like speech
    mx, mn = piece_peaks(x)
    assert mx.max() == x.max() and mn.min() == x.min()
    peak = np.abs(x).max()
    thr = peak * 10 ** (-db / 20)
    assert np.array_equal(where_beyond(x, thr, mx), np.flatnonzero(x >= thr))
    assert np.array_equal(where_beyond(x, -thr, mn, lowest=True), np.flatnonzero(x <= -thr))
    assert np.array_equal(where_beyond(x, thr, np.maximum(mx, -mn), magnitude=True),
                          np.flatnonzero(np.abs(x) >= thr))
    assert where_beyond(x, 2 * peak, mx).size == 0
