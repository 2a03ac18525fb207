"""Quantities a sweep measurement reuses between windows (voiceband.response.deconvolve)."""

from __future__ import annotations

import numpy as np

from voiceband.response import deconvolve as D


def test_a_read_only_noise_is_estimated_once_and_a_writable_one_each_time():
    # A density is proportional to the noise power: doubling the samples must give 4x (the
    # definition of a power spectral density), never the remembered value.
    rng = np.random.default_rng(0)
    fixed = rng.standard_normal(48000)
    fixed.setflags(write=False)
    assert D._noise_density(fixed, 48000) is D._noise_density(fixed, 48000)
    assert D._noise_density(fixed, 24000) is not D._noise_density(fixed, 48000)
    live = rng.standard_normal(48000)
    first = D._noise_density(live, 48000)[1].copy()
    live *= 2.0
    np.testing.assert_allclose(D._noise_density(live, 48000)[1], 4.0 * first, rtol=1e-12)


def test_the_inverse_power_sums_are_the_cumulative_sum_of_the_inverse():
    px = np.array([4.0, 0.0, 2.0, 0.5])
    px.setflags(write=False)
    got = D._inverse_power_sums(px)
    np.testing.assert_array_equal(got, [0.0, 0.25, 0.25, 0.75, 2.75])
    assert D._inverse_power_sums(px) is got
