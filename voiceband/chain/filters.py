"""High-pass, low-pass and band-pass filters from analog prototypes (scipy.signal designs)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from .. import validate
from ..errors import SignalValueError
from .base import _TWO_PI, FILTER_TYPES, Stage, _audio, _choice, _freqs, _positive

__all__ = ["Filter"]


@dataclass(frozen=True)
class Filter(Stage):
    """High-pass, low-pass or band-pass filter from an analog prototype (scipy.signal design).

    ``order`` is the order of the low-pass prototype, as in scipy.signal: a band-pass of order N has
    2N poles. Cutoffs follow scipy.signal's conventions: the -3 dB frequency for Butterworth and
    Bessel (``norm="mag"``), the edge of the ripple band for Chebyshev type I and elliptic filters.

    Parameters
    ----------
    kind : {"highpass", "lowpass", "bandpass"}
    type : {"butterworth", "chebyshev1", "bessel", "elliptic"}
    order : int
        1-12.
    cutoff_hz : float or None
        High-pass and low-pass cutoff, Hz.
    low_hz, high_hz : float or None
        Band-pass edges, Hz.
    ripple_db : float or None
        Passband ripple (Chebyshev type I, elliptic), dB.
    stop_db : float or None
        Stopband attenuation (elliptic), dB.
    """

    kind: str = "lowpass"
    type: str = "butterworth"
    order: int = 4
    cutoff_hz: Optional[float] = None
    low_hz: Optional[float] = None
    high_hz: Optional[float] = None
    ripple_db: Optional[float] = None
    stop_db: Optional[float] = None

    def __post_init__(self) -> None:
        _choice(self.kind, "kind", ("highpass", "lowpass", "bandpass"))
        _choice(self.type, "type", tuple(FILTER_TYPES))
        if isinstance(self.order, bool) or not isinstance(self.order, (int, np.integer)) or not 1 <= self.order <= 12:
            raise SignalValueError(f"order must be a whole number 1–12; got {self.order!r}.")
        if self.kind == "bandpass":
            if self.low_hz is None or self.high_hz is None:
                raise SignalValueError("a bandpass needs low_hz and high_hz.")
            lo = _positive(self.low_hz, "low_hz", "Hz")
            hi = _positive(self.high_hz, "high_hz", "Hz")
            if not lo < hi:
                raise SignalValueError(f"low_hz must be below high_hz; got {lo:g} and {hi:g} Hz.")
            if self.cutoff_hz is not None:
                raise SignalValueError("a bandpass takes low_hz and high_hz, not cutoff_hz.")
        else:
            if self.cutoff_hz is None:
                raise SignalValueError(f"a {self.kind} needs cutoff_hz.")
            _positive(self.cutoff_hz, "cutoff_hz", "Hz")
            if self.low_hz is not None or self.high_hz is not None:
                raise SignalValueError(f"a {self.kind} takes cutoff_hz, not low_hz/high_hz.")
        needs_ripple = self.type in ("chebyshev1", "elliptic")
        if needs_ripple:
            if self.ripple_db is None:
                raise SignalValueError(f"a {self.type} filter needs ripple_db.")
            validate.number(self.ripple_db, name="ripple_db", low=0.0, high=6.0, unit="dB", low_inclusive=False)
        elif self.ripple_db is not None:
            raise SignalValueError(f"ripple_db applies to chebyshev1 and elliptic filters, not {self.type}.")
        if self.type == "elliptic":
            if self.stop_db is None:
                raise SignalValueError("an elliptic filter needs stop_db.")
            s = validate.number(self.stop_db, name="stop_db", low=0.0, high=150.0, unit="dB", low_inclusive=False)
            if not s > self.ripple_db:
                raise SignalValueError(f"stop_db must exceed ripple_db; got {s:g} and {self.ripple_db:g} dB.")
        elif self.stop_db is not None:
            raise SignalValueError(f"stop_db applies to elliptic filters, not {self.type}.")

    @property
    def edges_hz(self) -> tuple[float, ...]:
        """The design frequencies: (cutoff,) or (low, high), Hz."""
        if self.kind == "bandpass":
            return (float(self.low_hz), float(self.high_hz))
        return (float(self.cutoff_hz),)

    def _design(self, wn, **kw):
        from scipy import signal

        fn = getattr(signal, FILTER_TYPES[self.type])
        btype = self.kind
        order = int(self.order)
        if self.type == "butterworth":
            return fn(order, wn, btype=btype, **kw)
        if self.type == "bessel":
            return fn(order, wn, btype=btype, norm="mag", **kw)
        if self.type == "chebyshev1":
            return fn(order, self.ripple_db, wn, btype=btype, **kw)
        return fn(order, self.ripple_db, self.stop_db, wn, btype=btype, **kw)

    def zpk(self) -> tuple[np.ndarray, np.ndarray, float]:
        """Analog zeros, poles (rad/s) and gain of the prototype (scipy.signal, ``analog=True``)."""
        wn = [_TWO_PI * e for e in self.edges_hz]
        return self._design(wn if len(wn) == 2 else wn[0], analog=True, output="zpk")

    def response(self, frequencies_hz) -> np.ndarray:
        from scipy.signal import freqs_zpk

        f = _freqs(frequencies_hz)
        z, p, k = self.zpk()
        _, h = freqs_zpk(z, p, k, worN=_TWO_PI * f)
        return h

    def sos(self, sample_rate_hz: int) -> np.ndarray:
        """Digital second-order sections at ``sample_rate_hz`` (bilinear, cutoffs pre-warped)."""
        fs = validate.sample_rate_hz(sample_rate_hz)
        for e in self.edges_hz:
            if not e < fs / 2.0:
                raise SignalValueError(
                    f"the {self.kind} edge {e:g} Hz must lie below the Nyquist frequency ({fs / 2:g} Hz) of the audio.")
        wn = list(self.edges_hz)
        return self._design(wn if len(wn) == 2 else wn[0], fs=fs, output="sos")

    def process(self, samples, sample_rate_hz: int) -> np.ndarray:
        from scipy.signal import sosfilt

        x, fs = _audio(samples, sample_rate_hz)
        return sosfilt(self.sos(fs), x)

    def describe(self) -> str:
        edges = "–".join(f"{e:g}" for e in self.edges_hz)
        return f"{self.kind} {self.type} order {self.order}, {edges} Hz"
