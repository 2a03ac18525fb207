"""Shared fixtures: a seeded RNG and small audio-file writers (test audio is built here, never committed)."""

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
