"""Feed-forward compressor with attack and release (nonlinear)."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import validate
from .base import Stage, _audio

__all__ = ["Compressor"]


@dataclass(frozen=True)
class Compressor(Stage):
    """Feed-forward compressor: static curve and attack/release smoothing of the gain in dB.

    Level: the peak of each 1 ms frame, dB re the input's overall sample peak. Static curve: above
    ``threshold_db`` (dB re that peak, <= 0) the output level rises ``1/ratio`` dB per input dB, i.e.
    gain ``-(L - T)(1 - 1/ratio)`` dB. The gain is smoothed by a one-pole filter per frame whose time
    constant is ``attack_ms`` while the gain falls and ``release_ms`` while it recovers (the branching
    smoother of Giannoulis, Massberg & Reiss, "Digital dynamic range compressor design - a tutorial
    and analysis", JAES 60(6), 2012; from memory), then interpolated to the samples. No make-up gain.
    """

    threshold_db: float = -20.0
    ratio: float = 4.0
    attack_ms: float = 5.0
    release_ms: float = 100.0
    kind = "compressor"
    linear = False

    def __post_init__(self) -> None:
        validate.number(self.threshold_db, name="threshold_db", low=-60.0, high=0.0, unit="dB")
        validate.number(self.ratio, name="ratio", low=1.0, high=100.0)
        validate.number(self.attack_ms, name="attack_ms", low=0.1, high=1000.0, unit="ms")
        validate.number(self.release_ms, name="release_ms", low=1.0, high=10000.0, unit="ms")

    def gain_db(self, samples, sample_rate_hz: int) -> tuple[np.ndarray, np.ndarray]:
        """(frame times in s, smoothed gain in dB) for the input."""
        x, fs = _audio(samples, sample_rate_hz)
        hop = max(1, int(round(fs / 1000.0)))
        n_frames = -(-x.size // hop)
        padded = np.zeros(n_frames * hop)
        padded[:x.size] = np.abs(x)
        peak = float(np.max(padded))
        frames = padded.reshape(n_frames, hop).max(axis=1)
        with np.errstate(divide="ignore"):
            level = 20.0 * np.log10(frames / peak) if peak > 0 else np.full(n_frames, -np.inf)
        target = np.where(level > self.threshold_db, -(level - self.threshold_db) * (1.0 - 1.0 / self.ratio), 0.0)
        dt = hop / fs
        a_att = math.exp(-dt / (self.attack_ms * 1e-3))
        a_rel = math.exp(-dt / (self.release_ms * 1e-3))
        g = np.empty(n_frames)
        state = 0.0
        for i, t in enumerate(target.tolist()):
            a = a_att if t < state else a_rel
            state = a * state + (1.0 - a) * t
            g[i] = state
        times = (np.arange(n_frames) + 0.5) * dt
        return times, g

    def process(self, samples, sample_rate_hz: int) -> np.ndarray:
        x, fs = _audio(samples, sample_rate_hz)
        times, g = self.gain_db(x, fs)
        t = np.arange(x.size) / fs
        return x * 10.0 ** (np.interp(t, times, g) / 20.0)

    def describe(self) -> str:
        return (f"compressor {self.ratio:g}:1 above {self.threshold_db:g} dB re peak, "
                f"attack {self.attack_ms:g} ms, release {self.release_ms:g} ms")
