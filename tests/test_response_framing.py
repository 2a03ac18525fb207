"""The response path's moving RMS (voiceband.response._framing.moving_rms)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from voiceband.response._framing import moving_rms


@pytest.mark.parametrize("n, width", [(0, 5), (1, 1), (7, 3), (10, 10), (10, 25), (1000, 96), (1001, 97)])
def test_moving_rms_is_the_centred_window_definition(n, width):
    # Reference: the definition written as a plain loop over the samples, summed exactly with
    # math.fsum: RMS over the samples i - width//2 ... i - width//2 + width - 1 that exist.
    x = np.random.default_rng(n + width).standard_normal(n)
    got = moving_rms(x, width)
    half = width // 2
    want = []
    for i in range(n):
        lo, hi = max(0, i - half), min(n, i - half + width)
        want.append(math.sqrt(math.fsum(v * v for v in x[lo:hi]) / max(hi - lo, 1)))
    assert got.shape == (n,)
    np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-12)
