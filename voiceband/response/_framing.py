"""Short-time framing and spectral-peak interpolation shared by the response modules."""

from __future__ import annotations

import numpy as np


def frames(x: np.ndarray, frame_len: int, hop: int) -> tuple[np.ndarray, np.ndarray]:
    """Frames of ``x`` (n_frames × frame_len, a read-only view) and each frame's first sample.

    ``x`` shorter than one frame gives zero frames.
    """
    x = np.asarray(x, dtype=np.float64)
    if x.size < frame_len:
        return np.zeros((0, frame_len)), np.zeros(0, dtype=np.int64)
    view = np.lib.stride_tricks.sliding_window_view(x, frame_len)[::hop]
    starts = np.arange(view.shape[0], dtype=np.int64) * hop
    return view, starts


def parabolic_peak(values: np.ndarray, index: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Vertex of the parabola through ``values[..., i-1:i+2]`` at each peak ``index``.

    ``values`` is 2-D (rows × bins) and ``index`` one bin per row, or both 1-D with a
    scalar-like index per call.  Returns (fractional offset in bins, value at the vertex).
    Peaks on the first or last bin get offset 0.
    """
    v = np.atleast_2d(values)
    i = np.atleast_1d(np.asarray(index, dtype=np.int64))
    rows = np.arange(v.shape[0])
    ok = (i > 0) & (i < v.shape[1] - 1)
    ic = np.clip(i, 1, v.shape[1] - 2)
    a = v[rows, ic - 1]
    b = v[rows, ic]
    c = v[rows, ic + 1]
    den = a - 2.0 * b + c
    with np.errstate(divide="ignore", invalid="ignore"):
        delta = np.where((den < 0.0) & ok, 0.5 * (a - c) / den, 0.0)
    delta = np.clip(delta, -0.5, 0.5)
    peak = np.where(ok, b - 0.25 * (a - c) * delta, v[rows, i])
    return delta, peak


def moving_rms(x: np.ndarray, width: int) -> np.ndarray:
    """Centred moving RMS over ``width`` samples (same length as ``x``)."""
    x = np.asarray(x, dtype=np.float64)
    width = max(1, int(width))
    size = x.size
    c = np.empty(size + 1)
    c[0] = 0.0
    np.cumsum(x * x, out=c[1:])
    half = width // 2
    out = np.empty(size)
    # Where the window lies wholly inside x (sample i sums c[i - half + width] - c[i - half]),
    # by slices; near the ends, where it is cut, by clipped indices.
    inner = max(0, size - width + 1)
    if inner:
        d = c[width:] - c[:size + 1 - width]
        np.maximum(d, 0.0, out=d)
        d /= width
        out[half:half + inner] = np.sqrt(d)
    rest = np.r_[0:min(half, size), half + inner:size] if inner else np.arange(size)
    if rest.size:
        lo = np.clip(rest - half, 0, size)
        hi = np.clip(rest - half + width, 0, size)
        out[rest] = np.sqrt(np.maximum(c[hi] - c[lo], 0.0) / np.maximum(hi - lo, 1))
    return out


def log_grid_hz(low_hz: float, high_hz: float, *, points_per_octave: int) -> np.ndarray:
    """Log-spaced frequencies from ``low_hz`` to ``high_hz`` inclusive, ``points_per_octave`` per octave."""
    n = max(2, int(np.floor(np.log2(high_hz / low_hz) * points_per_octave)) + 1)
    return np.geomspace(low_hz, high_hz, n)
