"""The few signal-processing helpers the response measurement needs, without ``scipy.signal``.

Importing :mod:`scipy.signal` costs about a second of start-up (more than the whole sweep
measurement of a 20 s sweep), for three small functions.  These follow the published methods and
the behaviour of their :mod:`scipy.signal` namesakes, which the tests use as the reference:

- :func:`analytic_signal`: the analytic signal by the FFT (Marple, "Computing the discrete-time
  analytic signal via FFT", IEEE Trans. Signal Processing 47(9), 1999), as ``scipy.signal.hilbert``;
- :func:`welch_psd`: Welch's averaged periodogram (Welch, IEEE Trans. Audio Electroacoust.
  AU-15(2):70-73, 1967) with periodic Hann windows, 50 % overlap and the mean of each segment
  removed, one-sided density, as ``scipy.signal.welch`` with its defaults;
- :func:`find_peaks`: local maxima (the middle sample of a flat top), optionally at least a height,
  at least a distance apart (the higher peak wins) or with at least a topographic prominence, as
  ``scipy.signal.find_peaks`` with ``height``, ``distance`` and ``prominence``.
"""

from __future__ import annotations

import math
from typing import Optional

import numpy as np
from ..fourier import irfft, rfft

__all__ = ["analytic_signal", "welch_psd", "find_peaks"]


def analytic_signal(x, n: Optional[int] = None) -> np.ndarray:
    """Analytic signal ``x + j H{x}`` of a real 1-D signal, over ``n`` points (zero-padded or cut).

    The spectrum's positive-frequency bins are doubled and the negative ones zeroed (DC and,
    for even ``n``, the Nyquist bin kept), then transformed back (Marple 1999).
    """
    x = np.asarray(x, dtype=np.float64)
    n = x.size if n is None else int(n)
    # The same thing in two real transforms (each half the work of a complex one): the real
    # part is x itself, the imaginary part the Hilbert transform H{x}, whose spectrum is
    # -j X(f) on the positive bins (0 at DC and at the Nyquist bin; irfft mirrors the rest).
    half = rfft(x, n)
    half *= -1j
    half[0] = 0.0
    if n % 2 == 0:
        half[n // 2] = 0.0
    out = np.zeros(n, dtype=np.complex128)
    m = min(n, x.size)
    out.real[:m] = x[:m]
    out.imag[:] = irfft(half, n)
    return out


def _periodic_hann(n: int) -> np.ndarray:
    # 0.5 + 0.5 cos over n + 1 points from -pi to pi, the last dropped (a periodic Hann window)
    return (0.5 + 0.5 * np.cos(np.linspace(-np.pi, np.pi, n + 1)))[:n]


def welch_psd(x, sample_rate_hz: float, *, segment_length: int) -> tuple[np.ndarray, np.ndarray]:
    """One-sided power spectral density by Welch's method: ``(frequencies_hz, psd per Hz)``.

    Segments of ``segment_length`` samples every ``segment_length // 2``, each less its mean,
    periodic Hann window, ``|X|^2 / (fs * sum(w^2))``, doubled except at DC (and Nyquist for an
    even length), averaged over the segments.  ``x`` must hold at least one segment.
    """
    from numpy.fft import rfftfreq

    x = np.asarray(x, dtype=np.float64)
    n = int(segment_length)
    fs = float(sample_rate_hz)
    win = _periodic_hann(n)
    step = n - n // 2
    seg = np.lib.stride_tricks.sliding_window_view(x, n)[0::step]
    seg = seg - np.mean(seg, axis=-1, keepdims=True)
    spec = rfft(win * seg, n=n)
    p = np.conjugate(spec) * spec
    p *= 1.0 / (fs * (win * win).sum())
    if n % 2:
        p[..., 1:] *= 2
    else:
        p[..., 1:-1] *= 2
    p = p.real
    return rfftfreq(n, 1 / fs), (p.mean(axis=0) if p.shape[0] > 1 else p[0])


def _local_maxima(x: np.ndarray) -> np.ndarray:
    """Indices of local maxima; a flat top counts once, at its middle sample (rounded down)."""
    if x.size < 3:
        return np.zeros(0, dtype=np.intp)
    change = np.flatnonzero(x[1:] != x[:-1]) + 1
    starts = np.concatenate(([0], change))
    ends = np.concatenate((change, [x.size])) - 1
    v = x[starts]
    top = np.flatnonzero((v[1:-1] > v[:-2]) & (v[1:-1] > v[2:])) + 1
    return ((starts[top] + ends[top]) // 2).astype(np.intp)


def _by_distance(peaks: np.ndarray, heights: np.ndarray, distance: float) -> np.ndarray:
    """Keep peaks at least ``distance`` samples apart, the higher first."""
    d = math.ceil(distance)
    keep = np.ones(peaks.size, dtype=bool)
    order = np.argsort(heights)
    pk = peaks.tolist()
    for j in order[::-1].tolist():
        if not keep[j]:
            continue
        k = j - 1
        while k >= 0 and pk[j] - pk[k] < d:
            keep[k] = False
            k -= 1
        k = j + 1
        while k < len(pk) and pk[k] - pk[j] < d:
            keep[k] = False
            k += 1
    return keep


def _prominences(x: np.ndarray, peaks: np.ndarray) -> np.ndarray:
    """Topographic prominence of each peak: its height over the higher of the lowest points
    reached on either side before the signal rises above the peak (or ends)."""
    out = np.empty(peaks.size)
    xs = x.tolist()
    last = len(xs) - 1
    for n, p in enumerate(peaks.tolist()):
        top = xs[p]
        i, left = p, top
        while i >= 0 and xs[i] <= top:
            left = min(left, xs[i])
            i -= 1
        i, right = p, top
        while i <= last and xs[i] <= top:
            right = min(right, xs[i])
            i += 1
        out[n] = top - max(left, right)
    return out


def find_peaks(x, *, height: Optional[float] = None, distance: Optional[float] = None,
               prominence: Optional[float] = None) -> np.ndarray:
    """Indices of the peaks of a 1-D signal, filtered in this order: ``height`` (at least),
    ``distance`` (at least this many samples apart, the higher peak kept), ``prominence``
    (at least)."""
    x = np.asarray(x, dtype=np.float64)
    peaks = _local_maxima(x)
    if height is not None:
        peaks = peaks[x[peaks] >= height]
    if distance is not None and peaks.size > 1:
        peaks = peaks[_by_distance(peaks, x[peaks], distance)]
    if prominence is not None and peaks.size:
        peaks = peaks[_prominences(x, peaks) >= prominence]
    return peaks
