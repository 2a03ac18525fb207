"""A doubly terminated LC ladder from component values, solved with chain (ABCD) matrices."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from ..errors import SignalValueError
from .base import _TWO_PI, Stage, _choice, _freqs, _positive

__all__ = ["LadderBranch", "Ladder"]


@dataclass(frozen=True)
class LadderBranch:
    """One branch of a ladder: a capacitor, an inductor, or an L and C in series or in parallel.

    Parameters
    ----------
    position : {"shunt", "series"}
    l_henry, c_farad : float or None
        The parts; one or both.
    arrangement : {"single", "series", "parallel"}
        How L and C are joined when both are given.
    """

    position: str
    l_henry: Optional[float] = None
    c_farad: Optional[float] = None
    arrangement: str = "single"

    def __post_init__(self) -> None:
        _choice(self.position, "position", ("shunt", "series"))
        _choice(self.arrangement, "arrangement", ("single", "series", "parallel"))
        if self.l_henry is not None:
            _positive(self.l_henry, "l", "H")
        if self.c_farad is not None:
            _positive(self.c_farad, "c", "F")
        both = self.l_henry is not None and self.c_farad is not None
        if self.arrangement == "single" and (both or (self.l_henry is None and self.c_farad is None)):
            raise SignalValueError("a single ladder element is one capacitor or one inductor.")
        if self.arrangement != "single" and not both:
            raise SignalValueError(f"a {self.arrangement} resonator needs both l and c.")

    def impedance(self, s: np.ndarray) -> np.ndarray:
        """Branch impedance Z(s), ohms."""
        if self.arrangement == "single":
            return s * self.l_henry if self.l_henry is not None else 1.0 / (s * self.c_farad)
        zl = s * self.l_henry
        zc = 1.0 / (s * self.c_farad)
        return zl + zc if self.arrangement == "series" else zl * zc / (zl + zc)

    def describe(self) -> str:
        parts = []
        if self.l_henry is not None:
            parts.append(f"L {self.l_henry:.4g} H")
        if self.c_farad is not None:
            parts.append(f"C {self.c_farad:.4g} F")
        how = "" if self.arrangement == "single" else f" {self.arrangement}"
        return f"{self.position}{how} " + " + ".join(parts)


@dataclass(frozen=True)
class Ladder(Stage):
    """A doubly terminated LC ladder solved exactly with chain (ABCD) matrices.

    The source (EMF ``V_s`` behind ``source_ohm``) drives the branches in order into ``load_ohm``.
    A series impedance Z has the chain matrix ``[[1, Z], [0, 1]]``, a shunt admittance Y
    ``[[1, 0], [Y, 1]]``; with the product ``[[A, B], [C, D]]`` (source resistor first), the response
    is ``V_load / V_s = 1 / (A + B / R_load)``. Equal terminations therefore show the 6.02 dB flat loss
    of the matched divider in the passband (``response`` includes it).

    References
    ----------
    Chain (ABCD) parameters of cascaded two-ports: any network-analysis text, e.g. D. M. Pozar,
    *Microwave Engineering*, 4th ed., §4.4 (from memory).
    """

    source_ohm: float = 600.0
    load_ohm: float = 600.0
    branches: tuple = field(default_factory=tuple)
    kind = "ladder"

    def __post_init__(self) -> None:
        _positive(self.source_ohm, "source_ohm", "Ω")
        _positive(self.load_ohm, "load_ohm", "Ω")
        if not self.branches:
            raise SignalValueError("a ladder needs at least one element.")
        for b in self.branches:
            if not isinstance(b, LadderBranch):
                raise SignalValueError("ladder branches must be LadderBranch objects.")

    def response(self, frequencies_hz) -> np.ndarray:
        f = _freqs(frequencies_hz)
        # at exactly 0 Hz a series capacitor is an open circuit: evaluate just above it (1 nHz)
        s = 1j * _TWO_PI * np.where(f > 0.0, f, 1e-9)
        one = np.ones_like(s)
        a, b, c, d = one, np.full_like(s, self.source_ohm), 0.0 * s, one
        with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
            for br in self.branches:
                z = br.impedance(s)
                if br.position == "series":
                    a, b, c, d = a, a * z + b, c, c * z + d
                else:
                    y = 1.0 / z
                    a, b, c, d = a + b * y, b, c + d * y, d
            h = 1.0 / (a + b / self.load_ohm)
        return np.where(np.isfinite(h), h, 0.0)

    def describe(self) -> str:
        return f"LC ladder, {len(self.branches)} elements, {self.source_ohm:g} Ω / {self.load_ohm:g} Ω"
