"""numpy-only low-pass design and decimation against scipy.signal (general-purpose reference library)."""

import numpy as np
import pytest
from scipy.signal import firwin, resample_poly

from voiceband.lowpass import decimate_rows, kaiser_lowpass


@pytest.mark.parametrize("numtaps,cut,fs,beta", [(161, 1000.0, 48000.0, 7.0), (64, 900.0, 16000.0, 5.0), (33, 0.2, 1.0, 8.6)])
def test_kaiser_lowpass_equals_scipy_firwin(numtaps, cut, fs, beta):
    # reference: scipy.signal.firwin with a Kaiser window (same windowed-sinc method, unity DC gain)
    assert np.allclose(kaiser_lowpass(numtaps, cut, fs, beta=beta), firwin(numtaps, cut, window=("kaiser", beta), fs=fs), atol=1e-15)


@pytest.mark.parametrize("q", [1, 2, 5, 6, 24])
def test_decimate_rows_equals_resample_poly(rng, q):
    # reference: scipy.signal.resample_poly(x, 1, q) with its default Kaiser (beta 5) filter
    x = rng.standard_normal((2, 4801))
    assert np.allclose(decimate_rows(x, q), resample_poly(x, 1, q, axis=1), atol=1e-12)


def test_bad_cutoff():
    with pytest.raises(ValueError, match="cutoff_hz"):
        kaiser_lowpass(11, 5000.0, 8000.0)
