"""Simple microphone models of this project: flat, presence peak, proximity bass rise."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from .. import validate
from ..errors import SignalValueError
from .base import _TWO_PI, Stage, _choice, _freqs, _positive

__all__ = ["Microphone"]


@dataclass(frozen=True)
class Microphone(Stage):
    """Simple microphone models of this project (not measurements of any product).

    * ``flat``: H = 1.
    * ``presence``: a second-order peak of ``rise_db`` at ``centre_hz`` with quality factor ``q``,
      ``H(s) = (s^2 + s (A/Q) w0 + w0^2) / (s^2 + s w0/(A Q) + w0^2)``, ``A = 10^(rise_db/40)``, so
      ``|H(j w0)| = A^2`` (the analog peaking prototype of R. Bristow-Johnson's "Audio EQ cookbook";
      from memory).
    * ``proximity``: a first-order bass rise starting below ``below_hz`` and levelling at ``boost_db``,
      ``H(s) = (s + w_z) / (s + w_z / g)`` with ``w_z = 2 pi below_hz`` and ``g = 10^(boost_db/20)``
      (the pressure-gradient rise of a close-talked directional microphone, 6 dB/octave; common practice).
    """

    model: str = "flat"
    rise_db: Optional[float] = None
    centre_hz: Optional[float] = None
    q: Optional[float] = None
    boost_db: Optional[float] = None
    below_hz: Optional[float] = None
    kind = "microphone"

    def __post_init__(self) -> None:
        _choice(self.model, "model", ("flat", "presence", "proximity"))
        given = {k for k in ("rise_db", "centre_hz", "q", "boost_db", "below_hz") if getattr(self, k) is not None}
        allowed = {"flat": set(), "presence": {"rise_db", "centre_hz", "q"}, "proximity": {"boost_db", "below_hz"}}[self.model]
        extra = sorted(given - allowed)
        if extra:
            raise SignalValueError(f"{extra[0]} does not apply to the {self.model} microphone model.")
        if self.model == "presence":
            for k in ("rise_db", "centre_hz"):
                if getattr(self, k) is None:
                    raise SignalValueError(f"the presence model needs {k}.")
            validate.number(self.rise_db, name="rise_db", low=-20.0, high=20.0, unit="dB")
            _positive(self.centre_hz, "centre_hz", "Hz")
            if self.q is not None:
                validate.number(self.q, name="q", low=0.1, high=20.0)
        if self.model == "proximity":
            for k in ("boost_db", "below_hz"):
                if getattr(self, k) is None:
                    raise SignalValueError(f"the proximity model needs {k}.")
            validate.number(self.boost_db, name="boost_db", low=0.0, high=30.0, unit="dB")
            _positive(self.below_hz, "below_hz", "Hz")

    def response(self, frequencies_hz) -> np.ndarray:
        f = _freqs(frequencies_hz)
        s = 1j * _TWO_PI * f
        if self.model == "flat":
            return np.ones(f.shape, dtype=np.complex128)
        if self.model == "presence":
            a = 10.0 ** (self.rise_db / 40.0)
            q = 0.7 if self.q is None else self.q
            w0 = _TWO_PI * self.centre_hz
            return (s * s + s * (a / q) * w0 + w0 * w0) / (s * s + s * w0 / (a * q) + w0 * w0)
        g = 10.0 ** (self.boost_db / 20.0)
        wz = _TWO_PI * self.below_hz
        return (s + wz) / (s + wz / g)

    def describe(self) -> str:
        if self.model == "presence":
            return f"microphone, presence {self.rise_db:+g} dB at {self.centre_hz:g} Hz"
        if self.model == "proximity":
            return f"microphone, proximity +{self.boost_db:g} dB below {self.below_hz:g} Hz"
        return "microphone, flat"
