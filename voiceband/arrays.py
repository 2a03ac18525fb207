"""Small array helpers shared by the measurements.

:func:`sorted_unique` stands in for ``numpy.unique`` in the per-block paths of the
measurements: numpy 2's ``unique`` takes hundreds of microseconds for a few hundred integers
(its hash-table path, measured with numpy 2.4), where a sort takes a few.

:func:`piece_extremes` and :func:`where_beyond` find the few samples near a signal's peak
without comparing every sample: the maxima (or minima) of 2048-sample pieces cost about one
plain ``max`` pass, and only the pieces that reach the threshold are compared (speech has a
crest factor of 15-20 dB, so few pieces come within a few dB of its peak).  On a 1-hour speech
file this took the true-peak and clipping candidate searches from about 0.46 s to well under
0.1 s (``benchmarks/stages_analyze.py``).

:func:`median` and :func:`percentile` are ``numpy.median`` and ``numpy.percentile`` (linear
method) without the masked-array checks inside them (``numpy.unique`` is one), which import
``numpy.ma`` (about 19 ms, 3 % of a short file's whole analysis); they return the same values bit
for bit (``tests/test_arrays.py``).

:func:`sum_and_squares` and :func:`row_sums` add with BLAS (``dot``, ``gemv``) in calls of at most
:data:`BLAS_ONE_THREAD` elements.  On rows held in cache BLAS adds about twice as fast as
``numpy.einsum`` or ``numpy.add.reduce``; calls that small stay on the calling thread, where a
larger one may hand half its work to a BLAS thread and wait for it when the other cores are busy.
In a pass like the level meter's this took 3.3-3.4 ms per million samples to 2.6-2.9; with the
meter's longer chunks as well, its stage went from 0.76 to 0.61 s of CPU per hour
(``benchmarks/stages_analyze.py``, the two versions run in turn).
"""

from __future__ import annotations

import functools

from dataclasses import dataclass

import numpy as np

__all__ = ["sorted_unique", "median", "percentile", "running_median", "piece_extremes", "piece_peaks", "PiecePeaks", "where_beyond", "PIECE",
           "sum_and_squares", "row_sums", "BLAS_ONE_THREAD"]

#: Samples per piece of :func:`piece_extremes` (short enough that few pieces reach a peak threshold).
PIECE = 2048

#: Elements per BLAS call in :func:`sum_and_squares` and :func:`row_sums`: below OpenBLAS's sizes
#: for splitting one call over threads (10000 elements for ``dot``, 9216 for ``gemv``; from
#: memory of its interface sources, and checked here by CPU time equal to wall time).
BLAS_ONE_THREAD = 8192


@functools.lru_cache(maxsize=16)
def _ones(n: int) -> np.ndarray:
    v = np.ones(n)
    v.setflags(write=False)
    return v


def sum_and_squares(a: np.ndarray) -> tuple[float, float]:
    """``(sum(a), sum(a * a))`` of 1-D contiguous float64 ``a``, added in float64 by BLAS ``dot``.

    Partial sums of :data:`BLAS_ONE_THREAD` elements (the rounding differs from ``numpy.sum``'s
    pairwise order by a few units in the last place).

    >>> sum_and_squares(np.array([1.0, -2.0, 3.0]))
    (2.0, 14.0)
    """
    k = a.size - a.size % BLAS_ONE_THREAD
    total = squares = 0.0
    if k:
        rows = a[:k].reshape(-1, BLAS_ONE_THREAD)
        total = float(np.vecdot(rows, _ones(BLAS_ONE_THREAD)).sum())
        squares = float(np.vecdot(rows, rows).sum())
    if k < a.size:
        rest = a[k:]
        total += float(rest @ _ones(BLAS_ONE_THREAD)[:rest.size])
        squares += float(rest @ rest)
    return total, squares


def row_sums(a: np.ndarray) -> np.ndarray:
    """Sums of the rows of 2-D C-contiguous float64 ``a`` (float64), by BLAS ``gemv`` on stacks of rows.

    >>> row_sums(np.arange(6.0).reshape(3, 2)).tolist()
    [1.0, 5.0, 9.0]
    """
    n, d = a.shape
    if d == 0 or d > BLAS_ONE_THREAD:
        return np.einsum("ij->i", a)
    g = BLAS_ONE_THREAD // d  # rows per stack
    k = n - n % g
    out = np.empty(n)
    if k:
        out[:k] = (a[:k].reshape(-1, g, d) @ _ones(d)).ravel()
    if k < n:
        out[k:] = a[k:] @ _ones(d)
    return out


def sorted_unique(a) -> np.ndarray:
    """The distinct values of a 1-D array, ascending (as ``numpy.unique(a)`` for real numbers).

    >>> sorted_unique(np.array([3, 1, 3, 2])).tolist()
    [1, 2, 3]
    """
    s = np.sort(np.asarray(a).ravel())
    if s.size < 2:
        return s
    keep = np.empty(s.size, dtype=bool)
    keep[0] = True
    np.not_equal(s[1:], s[:-1], out=keep[1:])
    return s[keep]


def piece_extremes(a: np.ndarray, *, lowest: bool = False, piece: int = PIECE) -> np.ndarray:
    """Maxima (``lowest=False``) or minima of consecutive ``piece``-sample pieces of 1-D ``a``.

    The last piece may be shorter.  ``a`` must not be empty.

    >>> piece_extremes(np.array([1.0, 5.0, 2.0, -3.0, 4.0]), piece=2).tolist()
    [5.0, 2.0, 4.0]
    """
    full = a.size - a.size % piece
    reduce = np.minimum if lowest else np.maximum
    parts = []
    if full:
        parts.append(reduce.reduce(a[:full].reshape(-1, piece), axis=1))
    if full < a.size:
        parts.append(np.array([reduce.reduce(a[full:])]))
    return parts[0] if len(parts) == 1 else np.concatenate(parts)


@dataclass(frozen=True)
class PiecePeaks:
    """Maxima and minima of the pieces of one block.

    The pieces are ``[0, offset)`` when ``offset > 0``, then ``piece`` samples each from
    ``offset`` on (the last may be shorter): one entry each in ``maxima`` and ``minima``.
    """

    maxima: np.ndarray
    minima: np.ndarray
    piece: int = PIECE
    offset: int = 0

    def bounds(self, k: int) -> tuple[int, int]:
        """First sample and length of piece ``k`` (the length before the block's end cuts it)."""
        if self.offset:
            if k == 0:
                return 0, self.offset
            k -= 1
        return self.offset + k * self.piece, self.piece


def piece_peaks(x: np.ndarray, *, chunk: int = 1 << 15, piece: int = PIECE, offset: int = 0) -> PiecePeaks:
    """:class:`PiecePeaks` of 1-D ``x`` (not empty).

    Both passes run over one cache-sized ``chunk`` (rounded to whole pieces) at a time.  NaN in
    a piece makes its maximum and minimum NaN.  (The level meter finds the same on its own pass.)

    >>> p = piece_peaks(np.r_[np.zeros(2048), 0.5, -0.25])
    >>> p.maxima.tolist(), p.minima.tolist()
    ([0.0, 0.5], [0.0, -0.25])
    """
    offset = min(int(offset), x.size)
    maxima, minima = [], []
    if offset:
        maxima.append(np.array([x[:offset].max()]))
        minima.append(np.array([x[:offset].min()]))
    step = piece * max(1, chunk // piece)
    for j in range(offset, x.size, step):
        xc = x[j:j + step]
        maxima.append(piece_extremes(xc, piece=piece))
        minima.append(piece_extremes(xc, lowest=True, piece=piece))
    if len(maxima) == 1:
        return PiecePeaks(maxima[0], minima[0], piece, offset)
    return PiecePeaks(np.concatenate(maxima), np.concatenate(minima), piece, offset)


def where_beyond(a: np.ndarray, thr: float, extremes: np.ndarray, *, lowest: bool = False,
                 magnitude: bool = False, piece: int = PIECE, offset: int = 0) -> np.ndarray:
    """Indices ``i`` (int64, ascending) with ``a[i] >= thr``, ``a[i] <= thr`` (``lowest``) or ``|a[i]| >= thr``.

    ``extremes`` are the maxima (minima with ``lowest``; maxima of ``|a|`` with ``magnitude``)
    of the pieces ``a[k*piece:(k+1)*piece]`` (the last may be shorter), as
    :func:`piece_extremes` gives them, or of the pieces of a :class:`PiecePeaks` with this
    ``piece`` and ``offset``; only the pieces whose extreme reaches ``thr`` are compared,
    gathered as whole rows.

    >>> a = np.array([0.1, 0.9, 0.2, 0.3, -0.95, 0.0, 0.99])
    >>> where_beyond(a, 0.9, piece_extremes(np.abs(a), piece=2), magnitude=True, piece=2).tolist()
    [1, 4, 6]
    """
    if offset:
        first = float(extremes[0])
        rest = where_beyond(a[offset:], thr, extremes[1:], lowest=lowest, magnitude=magnitude, piece=piece)
        if (first <= thr) if lowest else (first >= thr):
            head = np.abs(a[:offset]) if magnitude else a[:offset]
            found = np.flatnonzero(head <= thr if lowest else head >= thr).astype(np.int64)
            return np.concatenate((found, rest + offset))
        return rest + offset
    hit = np.flatnonzero(extremes <= thr) if lowest else np.flatnonzero(extremes >= thr)
    if hit.size == 0:
        return np.zeros(0, dtype=np.int64)
    full = a.size - a.size % piece
    n_full = full // piece
    out = []
    whole = hit[hit < n_full] if hit[-1] >= n_full else hit
    if whole.size:
        rows = a[:full].reshape(-1, piece)[whole]  # a copy of the pieces that reach thr
        if magnitude:
            np.abs(rows, out=rows)
        f = np.flatnonzero(rows <= thr if lowest else rows >= thr)
        out.append(whole[f // piece] * piece + f % piece)
    if full < a.size and hit[-1] == n_full:
        tail = np.abs(a[full:]) if magnitude else a[full:]
        out.append(np.flatnonzero(tail <= thr if lowest else tail >= thr) + full)
    if not out:
        return np.zeros(0, dtype=np.int64)
    return (out[0] if len(out) == 1 else np.concatenate(out)).astype(np.int64, copy=False)


def median(a, axis: int | None = None) -> np.ndarray | float:
    """Median along ``axis`` (all values when None), as ``numpy.median`` computes it, bit for bit.

    The middle value, or the mean of the two middle values; NaN where a NaN is present.

    >>> float(median(np.array([3.0, 1.0, 4.0, 1.0])))
    2.0
    """
    a = np.asarray(a)
    if axis is None:
        a = a.ravel()
        axis = 0
    axis = axis % a.ndim
    n = a.shape[axis]
    if n == 0:
        return np.median(a, axis=axis)  # numpy's own warning and NaN for an empty slice
    half = n // 2
    kth = [half - 1, half] if n % 2 == 0 else [half]
    inexact = np.issubdtype(a.dtype, np.inexact)
    if inexact and n > 1:
        kth.append(n - 1)  # NaN sorts last: the last place says whether the slice holds one
    part = np.partition(a, kth, axis=axis)
    take = np.take(part, kth[:2] if n % 2 == 0 else kth[:1], axis=axis)
    out = np.mean(take, axis=axis)
    if inexact:
        last = np.take(part, -1, axis=axis)
        out = np.where(np.isnan(last), last, out) if np.ndim(out) else (last if np.isnan(last) else out)
    return out[()] if isinstance(out, np.ndarray) and out.ndim == 0 else out


def percentile(a, q, axis: int | None = None):
    """``numpy.percentile(a, q, axis)`` with the default linear method, bit for bit.

    ``q`` in percent (scalar or 1-D); the percentiles' axis comes first in the result, as in
    numpy.  Float64 data, or float32 data with ``q`` a Python number (the result stays float32,
    as numpy keeps it); other data types are handed to numpy itself.

    >>> percentile(np.array([1.0, 2.0, 3.0, 4.0]), [25, 50]).tolist()
    [1.75, 2.5]
    """
    a = np.asarray(a)
    weak_q = isinstance(q, (int, float)) and not isinstance(q, bool)  # a Python number: numpy keeps a's precision
    if not (a.dtype == np.float64 or (a.dtype == np.float32 and weak_q)) or a.size == 0:
        return np.percentile(a, q, axis=axis)
    if axis is None:
        a = a.ravel()
        axis = 0
    qv = np.true_divide(np.asarray(q, dtype=np.float64), 100)
    s = np.sort(np.moveaxis(a, axis, 0), axis=0)  # the same order statistics as numpy's partition
    n = s.shape[0]
    virtual = (n - 1) * qv
    prev = np.floor(virtual)
    nxt = prev + 1
    above = virtual >= n - 1
    prev = np.where(above, -1, prev)
    nxt = np.where(above, -1, nxt)
    below = virtual < 0
    prev = np.where(below, 0, prev).astype(np.intp)
    nxt = np.where(below, 0, nxt).astype(np.intp)
    gamma = np.asarray(virtual - prev, dtype=np.float64).reshape(np.shape(virtual) + (1,) * (s.ndim - 1))
    lo, hi = s[prev], s[nxt]
    diff = hi - lo
    if weak_q:
        gamma = float(gamma.reshape(-1)[0])
        out = np.empty(lo.shape, dtype=a.dtype)
        np.add(lo, diff * gamma, out=out)
        if gamma >= 0.5:
            np.subtract(hi, diff * (1 - gamma), out=out)
    else:
        out = np.empty(np.broadcast_shapes(lo.shape, gamma.shape))
        np.add(lo, diff * gamma, out=out)
        np.subtract(hi, diff * (1 - gamma), out=out, where=np.broadcast_to(gamma >= 0.5, out.shape))
    has_nan = np.isnan(s[-1])
    if np.any(has_nan):
        out[..., has_nan] = np.nan
    return out[()] if out.ndim == 0 else out


def running_median(a: np.ndarray, span: int) -> np.ndarray:
    """Median of ``a[i - span : i + span + 1]`` for every ``i`` of 1-D ``a``, the window cut at the ends.

    Bit for bit what ``numpy.nanmedian`` gives over ``a`` padded with ``span`` NaNs at each end
    (which imports ``numpy.ma``); the result has ``a``'s dtype.

    >>> running_median(np.array([5.0, 1.0, 3.0, 2.0]), 1).tolist()
    [3.0, 3.0, 2.0, 2.5]
    """
    a = np.asarray(a)
    n = a.size
    out = np.empty(n, dtype=a.dtype)
    width = 2 * span + 1
    if n >= width:
        from numpy.lib.stride_tricks import sliding_window_view

        out[span:n - span] = median(sliding_window_view(a, width), axis=1)
    for i in list(range(min(span, n))) + list(range(max(n - span, min(span, n)), n)):
        out[i] = median(a[max(0, i - span):i + span + 1])
    return out
