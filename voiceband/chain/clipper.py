"""Audio clipper, hard or soft, at a level below the input's peak (nonlinear)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from .. import validate
from ..errors import SignalValueError
from .base import Stage, _audio, _choice

__all__ = ["Clipper"]


@dataclass(frozen=True)
class Clipper(Stage):
    """Audio clipper: hard (``clip``) or soft (``c tanh(x / c)``) at a level below the input's peak.

    ``level_db`` is how far below the input's sample peak the clip level lies (12 means 12 dB of
    clipping). ``level_dbfs``, if given instead, is an absolute clip level (dBFS sample peak) for a
    clipper set at a fixed voltage. No make-up gain is applied.
    """

    mode: str = "hard"
    level_db: Optional[float] = None
    level_dbfs: Optional[float] = None
    kind = "clipper"
    linear = False

    def __post_init__(self) -> None:
        _choice(self.mode, "mode", ("hard", "soft"))
        if (self.level_db is None) == (self.level_dbfs is None):
            raise SignalValueError("a clipper needs exactly one of level_db (below the peak) and level_dbfs.")
        if self.level_db is not None:
            validate.number(self.level_db, name="level_db", low=0.0, high=60.0, unit="dB")
        else:
            validate.number(self.level_dbfs, name="level_dbfs", low=-60.0, high=0.0, unit="dBFS")

    def clip_level(self, x: np.ndarray) -> float:
        """Clip level for the input ``x`` (fraction of full scale)."""
        if self.level_dbfs is not None:
            return 10.0 ** (self.level_dbfs / 20.0)
        return float(np.max(np.abs(x))) * 10.0 ** (-self.level_db / 20.0)

    def process(self, samples, sample_rate_hz: int) -> np.ndarray:
        x, _ = _audio(samples, sample_rate_hz)
        c = self.clip_level(x)
        if c == 0.0:
            return x.copy()
        if self.mode == "hard":
            return np.clip(x, -c, c)
        return c * np.tanh(x / c)

    def describe(self) -> str:
        where = f"{self.level_db:g} dB below peak" if self.level_db is not None else f"{self.level_dbfs:g} dBFS"
        return f"{self.mode} clipper at {where}"
