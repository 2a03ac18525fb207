"""A gain stage: a fixed gain, or an op-amp stage from its resistors and gain-bandwidth product."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from .. import validate
from ..errors import SignalValueError
from .base import Stage, _audio, _freqs, _positive, apply_response

__all__ = ["Gain"]


@dataclass(frozen=True)
class Gain(Stage):
    """A gain stage: a fixed gain in dB, or an op-amp stage from its resistors.

    Non-inverting: G = 1 + Rf/Rg; inverting: G = -Rf/Rg (textbook op-amp formulas; from memory).
    With ``gbw_hz`` the op-amp is a single-pole amplifier of that gain-bandwidth product, so the
    closed-loop response is ``G / (1 + j f / f_3dB)`` with ``f_3dB = GBW / noise gain`` and noise gain
    ``1 + Rf/Rg`` for either connection (``max(1, |G|)`` for a gain given in dB).

    Parameters
    ----------
    gain : float
        Linear voltage gain (negative for an inverting stage).
    noise_gain : float
        1 + Rf/Rg (>= 1).
    gbw_hz : float or None
        Gain-bandwidth product, Hz; None for an ideal (flat) stage.
    """

    gain: float = 1.0
    noise_gain: float = 1.0
    gbw_hz: Optional[float] = None
    kind = "gain"

    def __post_init__(self) -> None:
        g = validate.number(self.gain, name="gain")
        if g == 0.0:
            raise SignalValueError("gain must not be zero.")
        validate.number(self.noise_gain, name="noise_gain", low=1.0)
        if self.gbw_hz is not None:
            _positive(self.gbw_hz, "gbw_hz", "Hz")

    @classmethod
    def from_db(cls, db: float, *, gbw_hz: Optional[float] = None) -> "Gain":
        """A gain of ``db`` decibels (positive, non-inverting)."""
        d = validate.number(db, name="db", low=-120.0, high=120.0, unit="dB")
        g = 10.0 ** (d / 20.0)
        return cls(gain=g, noise_gain=max(1.0, g), gbw_hz=gbw_hz)

    @classmethod
    def from_resistors(cls, rf_ohm: float, rg_ohm: float, *, inverting: bool = False,
                       gbw_hz: Optional[float] = None) -> "Gain":
        """An op-amp stage: ``1 + rf/rg`` (non-inverting) or ``-rf/rg`` (inverting)."""
        rf = _positive(rf_ohm, "rf_ohm", "Ω")
        rg = _positive(rg_ohm, "rg_ohm", "Ω")
        g = -rf / rg if inverting else 1.0 + rf / rg
        return cls(gain=g, noise_gain=1.0 + rf / rg, gbw_hz=gbw_hz)

    @property
    def gain_db(self) -> float:
        """20 log10 |G|, dB."""
        return 20.0 * math.log10(abs(self.gain))

    @property
    def corner_hz(self) -> Optional[float]:
        """Closed-loop -3 dB frequency GBW / noise gain, Hz (None without ``gbw_hz``)."""
        return None if self.gbw_hz is None else self.gbw_hz / self.noise_gain

    def response(self, frequencies_hz) -> np.ndarray:
        f = _freqs(frequencies_hz)
        h = np.full(f.shape, complex(self.gain))
        if self.gbw_hz is not None:
            h = h / (1.0 + 1j * f / self.corner_hz)
        return h

    def process(self, samples, sample_rate_hz: int) -> np.ndarray:
        x, fs = _audio(samples, sample_rate_hz)
        if self.gbw_hz is None:
            return x * self.gain
        return apply_response(x, fs, self.response)

    def describe(self) -> str:
        extra = f", -3 dB at {self.corner_hz:.0f} Hz" if self.gbw_hz is not None else ""
        return f"gain {self.gain:+.4g} ({self.gain_db:+.2f} dB{extra})"
