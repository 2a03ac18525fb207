"""A first-order RC high-pass or low-pass from its resistor and capacitor."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .base import _TWO_PI, Stage, _choice, _freqs, _positive

__all__ = ["RC"]


@dataclass(frozen=True)
class RC(Stage):
    """First-order RC high-pass or low-pass: ``f_c = 1 / (2 pi R C)``.

    Low-pass ``1 / (1 + s R C)``, high-pass ``s R C / (1 + s R C)`` (unloaded RC divider).
    """

    mode: str = "highpass"
    r_ohm: float = 10e3
    c_farad: float = 1e-6
    kind = "rc"

    def __post_init__(self) -> None:
        _choice(self.mode, "mode", ("highpass", "lowpass"))
        _positive(self.r_ohm, "r_ohm", "Ω")
        _positive(self.c_farad, "c_farad", "F")

    @property
    def corner_hz(self) -> float:
        """1 / (2 pi R C), Hz."""
        return 1.0 / (_TWO_PI * self.r_ohm * self.c_farad)

    def response(self, frequencies_hz) -> np.ndarray:
        f = _freqs(frequencies_hz)
        sx = 1j * f / self.corner_hz
        return sx / (1.0 + sx) if self.mode == "highpass" else 1.0 / (1.0 + sx)

    def describe(self) -> str:
        return f"RC {self.mode}, {self.corner_hz:.4g} Hz"
