"""Additive noise in a receive passband at a channel SNR."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import validate
from ..errors import SignalValueError
from .base import Stage, _audio, _positive

__all__ = ["Channel"]


@dataclass(frozen=True)
class Channel(Stage):
    """Additive white noise in a receive passband at a channel SNR: what a listener hears on a weak signal.

    Channel SNR = the mean power of the signal reaching this stage (all frequencies) over the noise
    power inside ``low_hz``-``high_hz`` (the definition of :mod:`voiceband.intelligibility.channel`).
    The passband applies to the noise only: to filter the speech as a receiver would, put a filter
    stage before this one. The noise is Gaussian, made reproducible by ``seed``, and band-limited by
    zeroing its spectrum outside the passband.
    """

    snr_db: float = 10.0
    low_hz: float = 300.0
    high_hz: float = 3000.0
    seed: int = 0
    kind = "channel"
    linear = False

    def __post_init__(self) -> None:
        validate.number(self.snr_db, name="snr_db", low=-30.0, high=100.0, unit="dB")
        lo = validate.number(self.low_hz, name="low_hz", low=0.0, unit="Hz")
        hi = _positive(self.high_hz, "high_hz", "Hz")
        if not lo < hi:
            raise SignalValueError(f"low_hz must be below high_hz; got {lo:g} and {hi:g} Hz.")
        if isinstance(self.seed, bool) or not isinstance(self.seed, (int, np.integer)) or self.seed < 0:
            raise SignalValueError(f"seed must be a whole number, 0 or more; got {self.seed!r}.")

    @property
    def receive_band_hz(self) -> tuple[float, float]:
        return (float(self.low_hz), float(self.high_hz))

    def noise(self, n: int, sample_rate_hz: int, power: float) -> np.ndarray:
        """``n`` samples of noise of mean power ``power`` inside the passband, none outside."""
        fs = validate.sample_rate_hz(sample_rate_hz)
        if not self.high_hz <= fs / 2.0:
            raise SignalValueError(f"the channel's high_hz ({self.high_hz:g} Hz) must not exceed the Nyquist frequency ({fs / 2:g} Hz).")
        rng = np.random.default_rng(self.seed)
        spec = np.fft.rfft(rng.standard_normal(n))
        f = np.fft.rfftfreq(n, 1.0 / fs)
        spec[(f < self.low_hz) | (f > self.high_hz)] = 0.0
        v = np.fft.irfft(spec, n)
        p = float(np.mean(v * v))
        return v if p == 0.0 else v * math.sqrt(power / p)

    def process(self, samples, sample_rate_hz: int) -> np.ndarray:
        x, fs = _audio(samples, sample_rate_hz)
        p = float(np.mean(x * x))
        if p == 0.0:
            raise SignalValueError("the signal reaching the channel stage is silent; a channel SNR needs a signal.")
        return x + self.noise(x.size, fs, p / 10.0 ** (self.snr_db / 10.0))

    def describe(self) -> str:
        return f"channel, {self.snr_db:g} dB SNR in {self.low_hz:g}–{self.high_hz:g} Hz"
