"""voiceband.arrays.sorted_unique against numpy.unique (the reference)."""

from __future__ import annotations

import numpy as np

from voiceband.arrays import sorted_unique


def test_matches_numpy_unique():
    # Reference: numpy.unique (sorted distinct values), on integers and floats of many sizes.
    rng = np.random.default_rng(7)
    for n in (0, 1, 2, 3, 10, 257, 5000):
        for a in (rng.integers(-20, 20, n), rng.integers(0, 1 << 40, n), rng.standard_normal(n).round(1)):
            got = sorted_unique(a)
            want = np.unique(a)
            assert got.dtype == want.dtype and np.array_equal(got, want), n
