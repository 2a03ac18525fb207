"""FFT lengths: voiceband.fastlen against scipy.fft.next_fast_len (the reference rule)."""

from __future__ import annotations

import scipy.fft

from voiceband.fastlen import next_fast_len


def test_matches_scipy_real_and_complex():
    # Reference: scipy.fft.next_fast_len(n, real=True) (2-3-5-smooth) and real=False
    # (2-3-5-7-11-smooth), the lengths pocketfft handles fastest.
    for n in list(range(1, 6000)) + [65537, 100001, 960001, 1323001, 1 << 20, (1 << 20) + 1, (1 << 24) + 1]:
        assert next_fast_len(n, real=True) == scipy.fft.next_fast_len(n, real=True), n
        assert next_fast_len(n) == scipy.fft.next_fast_len(n), n
