"""Pre-emphasis and de-emphasis, 6 dB/octave from an RC time constant."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import validate
from .base import _TWO_PI, Stage, _choice, _freqs

__all__ = ["Emphasis"]


@dataclass(frozen=True)
class Emphasis(Stage):
    """Pre-emphasis ``1 + s tau`` or de-emphasis ``1 / (1 + s tau)``: 6 dB/octave above ``1/(2 pi tau)``.

    ``tau_us`` is the RC time constant in microseconds (750 µs land-mobile FM, 75 µs or 50 µs FM
    broadcast; from memory). The ideal network keeps rising; a real one levels off where its
    second resistor takes over, far above the voice band.
    """

    mode: str = "pre"
    tau_us: float = 750.0
    kind = "emphasis"

    def __post_init__(self) -> None:
        _choice(self.mode, "mode", ("pre", "de"))
        validate.number(self.tau_us, name="tau_us", low=1.0, high=10000.0, unit="µs")

    @property
    def corner_hz(self) -> float:
        """1 / (2 pi tau), Hz."""
        return 1.0 / (_TWO_PI * self.tau_us * 1e-6)

    def response(self, frequencies_hz) -> np.ndarray:
        f = _freqs(frequencies_hz)
        h = 1.0 + 1j * _TWO_PI * f * self.tau_us * 1e-6
        return h if self.mode == "pre" else 1.0 / h

    def describe(self) -> str:
        return f"{self.mode}-emphasis {self.tau_us:g} µs (corner {self.corner_hz:.0f} Hz)"
