"""A chain: an ordered tuple of stages with one response and one way to process audio."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..errors import SignalValueError
from .base import _audio, _freqs
from .channel import Channel
from .ssb import SSB

__all__ = ["Chain"]


@dataclass(frozen=True)
class Chain:
    """A transmit audio chain.

    Attributes
    ----------
    name : str
    stages : tuple of Stage
        In signal order.
    path : str or None
        The chain file it was read from.
    """

    name: str
    stages: tuple
    path: Optional[str] = None

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not self.name.strip():
            raise SignalValueError("a chain needs a name.")
        if not self.stages:
            raise SignalValueError("a chain needs at least one stage.")

    @property
    def linear_stages(self) -> tuple:
        """The stages with a frequency response (nonlinear stages and the channel left out)."""
        return tuple(s for s in self.stages if s.linear)

    @property
    def is_linear(self) -> bool:
        """True when every stage is linear (a channel stage, which adds noise, counts as not)."""
        return all(s.linear for s in self.stages)

    @property
    def ssb(self) -> Optional[SSB]:
        """The first SSB stage, if any."""
        return next((s for s in self.stages if isinstance(s, SSB)), None)

    @property
    def channel(self) -> Optional[Channel]:
        """The first channel stage, if any."""
        return next((s for s in self.stages if isinstance(s, Channel)), None)

    def response(self, frequencies_hz) -> np.ndarray:
        """Product of the linear stages' responses (complex); 1 where the chain has none."""
        f = _freqs(frequencies_hz)
        h = np.ones(f.shape, dtype=np.complex128)
        for s in self.linear_stages:
            h = h * s.response(f)
        return h

    def process(self, samples, sample_rate_hz: int, *, until: Optional[type] = None) -> np.ndarray:
        """Every stage applied in order (``until``: stop before the first stage of that class)."""
        x, fs = _audio(samples, sample_rate_hz)
        for s in self.stages:
            if until is not None and isinstance(s, until):
                break
            x = s.process(x, fs)
        return x

    def describe(self) -> list[str]:
        """One line per stage."""
        return [f"{i}. {s.describe()}" for i, s in enumerate(self.stages, start=1)]

