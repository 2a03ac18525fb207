"""FFTs for the analyze and response paths, on ducc0 (the library numpy's and scipy's pocketfft came from).

Why not :mod:`numpy.fft`: numpy 2.4 transforms float32 rows about 3.4x slower than its own
float64 and than ducc0 (rows of 4096 float32 samples, 2000 at a time, one thread, this
project's 2-core machine: numpy 65 ms, numpy after a float64 copy 53 ms, ducc0 19 ms,
``scipy.fft`` 18 ms).  ``scipy.fft`` is as fast but costs 0.35-0.43 s to import, most of a
short file's analysis; ducc0 imports in about 7 ms.  The analyze path spends most of its
spectrum and hum time in these transforms (``benchmarks/stages_analyze.py``).  For the long
float64 transforms of a sweep measurement ducc0 is 1.3-2.5x faster than numpy.fft, and its
complex transforms 3-8x (one to two million points; ``response`` spent a third of its time in
numpy's).

The functions follow :func:`numpy.fft.rfft`, :func:`~numpy.fft.irfft`, :func:`~numpy.fft.fft` and
:func:`~numpy.fft.ifft` (unnormalised forward transform, ``1/n`` on the inverse, zero-padding or
cropping to ``n``); single precision stays single, anything else is transformed in double.  ``tests/test_fourier.py``
compares them with numpy.fft.
"""

from __future__ import annotations

import numpy as np

__all__ = ["rfft", "irfft", "fft", "ifft"]


def _ducc_fft():
    import ducc0.fft

    return ducc0.fft


def _real_input(x) -> np.ndarray:
    x = np.asarray(x)
    if x.dtype != np.float32 and x.dtype != np.float64:
        x = x.astype(np.float64)
    return x


def _fit(x: np.ndarray, n: int, axis: int) -> np.ndarray:
    """``x`` cropped or zero-padded to ``n`` along ``axis``."""
    have = x.shape[axis]
    if n == have:
        return x
    if n < have:
        idx = [slice(None)] * x.ndim
        idx[axis] = slice(0, n)
        return x[tuple(idx)]
    shape = list(x.shape)
    shape[axis] = n
    out = np.zeros(shape, dtype=x.dtype)
    idx = [slice(None)] * x.ndim
    idx[axis] = slice(0, have)
    out[tuple(idx)] = x
    return out


def rfft(x, n: int | None = None, axis: int = -1) -> np.ndarray:
    """Discrete Fourier transform of real input, as :func:`numpy.fft.rfft` (``n // 2 + 1`` bins).

    Parameters
    ----------
    x : array_like
        Real samples (float32 stays float32; other types are taken as float64).
    n : int, optional
        Transform length: ``x`` is cropped or zero-padded to it along ``axis``.
    axis : int
        Axis to transform.
    """
    x = _real_input(x)
    axis = axis % x.ndim if x.ndim else 0
    if n is None:
        n = x.shape[axis]
    n = int(n)
    if n < 1:
        raise ValueError(f"Invalid number of FFT data points ({n}) specified.")
    x = _fit(x, n, axis)
    return _ducc_fft().r2c(x, axes=(axis,), forward=True, inorm=0, nthreads=1)


def irfft(spec, n: int | None = None, axis: int = -1) -> np.ndarray:
    """Inverse of :func:`rfft`, as :func:`numpy.fft.irfft` (real output of length ``n``, ``1/n`` scaling).

    Parameters
    ----------
    spec : array_like
        Half spectrum (complex64 stays single precision; other types are taken as complex128).
    n : int, optional
        Output length; default ``2 * (m - 1)`` for ``m`` input bins.  The input is cropped
        or zero-padded to ``n // 2 + 1`` bins.
    axis : int
        Axis to transform.
    """
    spec = np.asarray(spec)
    if spec.dtype != np.complex64 and spec.dtype != np.complex128:
        spec = spec.astype(np.complex128)
    axis = axis % spec.ndim if spec.ndim else 0
    if n is None:
        n = 2 * (spec.shape[axis] - 1)
    n = int(n)
    if n < 1:
        raise ValueError(f"Invalid number of FFT data points ({n}) specified.")
    spec = _fit(spec, n // 2 + 1, axis)
    return _ducc_fft().c2r(spec, axes=(axis,), lastsize=n, forward=False, inorm=2, nthreads=1)


def _complex_input(x) -> np.ndarray:
    x = np.asarray(x)
    if x.dtype != np.complex64 and x.dtype != np.complex128:
        x = x.astype(np.complex64 if x.dtype == np.float32 else np.complex128)
    return x


def _c2c(x, n: int | None, axis: int, forward: bool) -> np.ndarray:
    x = _complex_input(x)
    axis = axis % x.ndim if x.ndim else 0
    n = x.shape[axis] if n is None else int(n)
    if n < 1:
        raise ValueError(f"Invalid number of FFT data points ({n}) specified.")
    return _ducc_fft().c2c(_fit(x, n, axis), axes=(axis,), forward=forward, inorm=0 if forward else 2, nthreads=1)


def fft(x, n: int | None = None, axis: int = -1) -> np.ndarray:
    """Discrete Fourier transform, as :func:`numpy.fft.fft` (complex64 stays single precision)."""
    return _c2c(x, n, axis, True)


def ifft(x, n: int | None = None, axis: int = -1) -> np.ndarray:
    """Inverse discrete Fourier transform, as :func:`numpy.fft.ifft` (``1/n`` scaling)."""
    return _c2c(x, n, axis, False)
