"""Shared fixtures: a seeded RNG, small audio-file writers and a random-block feeder (test audio is built here, never committed)."""

from __future__ import annotations

import numpy as np
import pytest
import soundfile as sf


@pytest.fixture
def rng():
    return np.random.default_rng(20261202)


@pytest.fixture
def write_wav(tmp_path):
    """Write samples to a WAV in tmp_path and return its path."""

    def _write(name, samples, fs, subtype="PCM_16"):
        p = tmp_path / name
        sf.write(str(p), np.asarray(samples), int(fs), subtype=subtype)
        return p

    return _write


@pytest.fixture
def feed_in_random_blocks():
    """Feed ``x`` to an accumulator in blocks of random length 1 ... ``max_len``; return its result."""

    def _feed(acc, x, rng, max_len):
        i = 0
        while i < x.size:
            k = int(rng.integers(1, max_len + 1))
            acc.update(x[i:i + k])
            i += k
        return acc.result()

    return _feed
