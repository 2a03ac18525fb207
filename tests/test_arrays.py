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
    peak = np.abs(x).max()
    thr = peak * 10 ** (-db / 20)
    # the default geometry, and pieces of whole envelope groups after a head piece (the level meter's)
    for piece, offset in ((2048, 0), (2065, 0), (2048, 37), (2065, 58), (64, 1)):
        p = piece_peaks(x, piece=piece, offset=offset)
        mx, mn = p.maxima, p.minima
        assert mx.max() == x.max() and mn.min() == x.min()
        geo = dict(piece=piece, offset=p.offset)
        assert np.array_equal(where_beyond(x, thr, mx, **geo), np.flatnonzero(x >= thr))
        assert np.array_equal(where_beyond(x, -thr, mn, lowest=True, **geo), np.flatnonzero(x <= -thr))
        assert np.array_equal(where_beyond(x, thr, np.maximum(mx, -mn), magnitude=True, **geo),
                              np.flatnonzero(np.abs(x) >= thr))
        assert where_beyond(x, 2 * peak, mx, **geo).size == 0
        k = int(np.argmax(np.maximum(mx, -mn)))
        at, length = p.bounds(k)
        assert np.abs(x[at:at + length]).max() == peak


def test_median_is_numpy_median_bit_for_bit():
    # Reference: numpy.median (values, dtype, shape and NaN propagation must match exactly).
    from voiceband.arrays import median

    rng = np.random.default_rng(11)
    for _ in range(2000):
        shape = tuple(int(k) for k in rng.integers(1, 7, rng.integers(1, 4)))
        a = rng.standard_normal(shape) * 10 ** rng.uniform(-5, 5)
        kind = rng.integers(4)
        if kind == 1:
            a = np.round(a).astype(np.int64)
        elif kind == 2:
            a = a.astype(np.float32)
        if kind != 1 and rng.random() < 0.3:
            a.flat[rng.integers(a.size)] = np.nan
        axis = None if rng.random() < 0.4 else int(rng.integers(-a.ndim, a.ndim))
        want, got = np.median(a, axis=axis), median(a, axis=axis)
        assert type(got) is type(want) and np.shape(got) == np.shape(want)
        assert np.asarray(got).dtype == np.asarray(want).dtype
        assert np.array_equal(np.asarray(got), np.asarray(want), equal_nan=True), (a, axis)


def test_percentile_is_numpy_percentile_bit_for_bit():
    # Reference: numpy.percentile, default linear method (values, shape, type and NaN handling).
    from voiceband.arrays import percentile

    rng = np.random.default_rng(12)
    for _ in range(3000):
        shape = tuple(int(k) for k in rng.integers(1, 9, rng.integers(1, 3)))
        a = rng.standard_normal(shape) * 10 ** rng.uniform(-5, 5)
        if rng.random() < 0.3:
            a = np.round(a)
        if rng.random() < 0.15:
            a.flat[rng.integers(a.size)] = np.nan
        if rng.random() < 0.4:
            a = a.astype(np.float32)
        choice = rng.integers(5)
        q = (float(rng.uniform(0, 100)), list(rng.uniform(0, 100, 3)), [5.0, 50.0, 95.0], [0.0, 100.0], 100)[choice]
        axis = None if rng.random() < 0.4 else int(rng.integers(-a.ndim, a.ndim))
        want, got = np.percentile(a, q, axis=axis), percentile(a, q, axis=axis)
        assert type(got) is type(want) and np.shape(got) == np.shape(want)
        assert np.asarray(got).dtype == np.asarray(want).dtype
        assert np.array_equal(np.asarray(got), np.asarray(want), equal_nan=True), (a, q, axis)


def test_running_median_is_nanmedian_over_nan_padding():
    # Reference: numpy.nanmedian over sliding windows of the data padded with NaN (bit for bit).
    import warnings

    from numpy.lib.stride_tricks import sliding_window_view

    from voiceband.arrays import running_median

    rng = np.random.default_rng(13)
    for _ in range(1500):
        n, span = int(rng.integers(1, 60)), int(rng.integers(0, 12))
        a = rng.standard_normal(n) ** 2 * 10 ** rng.uniform(-8, 2)
        if rng.random() < 0.5:
            a = a.astype(np.float32)
        pad = np.full(span, np.nan, dtype=a.dtype)
        with np.errstate(all="ignore"), warnings.catch_warnings():
            warnings.simplefilter("ignore")
            want = np.nanmedian(sliding_window_view(np.concatenate((pad, a, pad)), 2 * span + 1), axis=1)
        got = running_median(a, span)
        assert got.dtype == want.dtype and np.array_equal(got, want), (n, span)


@pytest.mark.parametrize("n", [1, 100, 8191, 8192, 8193, 32768, 100_003])
def test_sum_and_squares_match_exact_sums(n):
    # Reference: math.fsum, the correctly rounded sum (Python standard library).
    import math

    from voiceband.arrays import sum_and_squares

    x = np.random.default_rng(n).standard_normal(n) * 0.3 + 0.01
    total, squares = sum_and_squares(x)
    assert total == pytest.approx(math.fsum(x), rel=1e-12, abs=1e-12)
    assert squares == pytest.approx(math.fsum(x * x), rel=1e-12)


@pytest.mark.parametrize("rows, cols", [(1, 1), (3, 64), (129, 64), (1000, 59), (257, 11), (2, 9000)])
def test_row_sums_match_numpy_sum(rows, cols):
    # Reference: numpy.sum along the rows (pairwise summation); BLAS adds in another order.
    from voiceband.arrays import row_sums

    a = np.abs(np.random.default_rng(rows * cols).standard_normal((rows, cols)))
    got = row_sums(a)
    assert got.shape == (rows,)
    np.testing.assert_allclose(got, a.sum(axis=1), rtol=1e-13)
