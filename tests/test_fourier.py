"""voiceband.fourier against numpy.fft (the reference: same definitions, another implementation)."""

import numpy as np
import pytest

from voiceband import fourier


@pytest.mark.parametrize("dtype, tol", [(np.float32, 2e-6), (np.float64, 1e-13), (np.int16, 1e-13)])
@pytest.mark.parametrize("n", [None, 100, 4096, 5000])
@pytest.mark.parametrize("axis", [-1, 0])
def test_rfft_matches_numpy(dtype, tol, n, axis):
    rng = np.random.default_rng(4)
    x = rng.standard_normal((37, 4096)) if axis == -1 else rng.standard_normal((4096, 5))
    if dtype == np.int16:
        x = np.round(x * 3000).astype(np.int16)
    else:
        x = x.astype(dtype)
    got = fourier.rfft(x, n=n, axis=axis)
    want = np.fft.rfft(x.astype(np.float64), n=n, axis=axis)  # numpy.fft: reference definition
    assert got.shape == want.shape
    assert got.dtype == (np.complex64 if dtype == np.float32 else np.complex128)
    assert np.max(np.abs(got - want)) <= tol * np.max(np.abs(want))


@pytest.mark.parametrize("n", [None, 1023, 4096, 9000])
@pytest.mark.parametrize("dtype, tol", [(np.complex64, 2e-6), (np.complex128, 1e-13)])
def test_irfft_matches_numpy(n, dtype, tol):
    rng = np.random.default_rng(5)
    spec = (rng.standard_normal((6, 2049)) + 1j * rng.standard_normal((6, 2049))).astype(dtype)
    got = fourier.irfft(spec, n=n)
    want = np.fft.irfft(spec.astype(np.complex128), n=n)  # numpy.fft: reference definition
    assert got.shape == want.shape
    assert np.max(np.abs(got - want)) <= tol * np.max(np.abs(want))


def test_round_trip_and_one_dimensional():
    x = np.random.default_rng(6).standard_normal(1001)
    assert np.allclose(fourier.irfft(fourier.rfft(x), 1001), x, atol=1e-13)
    assert np.allclose(fourier.rfft(x, 2048), np.fft.rfft(x, 2048), atol=1e-11)


def test_bad_length_refused_like_numpy():
    with pytest.raises(ValueError):
        fourier.rfft(np.ones(8), n=0)
    with pytest.raises(ValueError):
        np.fft.rfft(np.ones(8), n=0)  # numpy refuses it too


@pytest.mark.parametrize("n", [None, 1000, 4096])
def test_complex_transforms_match_numpy(n):
    rng = np.random.default_rng(7)
    x = rng.standard_normal(3000) + 1j * rng.standard_normal(3000)
    # numpy.fft: reference definition of fft / ifft (unnormalised forward, 1/n inverse)
    np.testing.assert_allclose(fourier.fft(x, n), np.fft.fft(x, n), rtol=0, atol=1e-12 * 3000)
    np.testing.assert_allclose(fourier.ifft(x, n), np.fft.ifft(x, n), rtol=0, atol=1e-14 * 3000)
    real = rng.standard_normal(3000)
    np.testing.assert_allclose(fourier.fft(real, n), np.fft.fft(real, n), rtol=0, atol=1e-12 * 3000)
