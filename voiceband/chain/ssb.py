"""Single-sideband generation (phasing or filter method) and its unwanted-sideband suppression."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from .. import validate
from ..errors import SignalValueError
from .base import Stage, _audio, _choice, _freqs, _positive, apply_response
from .filters import Filter

__all__ = ["sideband_suppression_db", "SSB"]


def sideband_suppression_db(phase_error_deg: float, amplitude_error_db: float) -> float:
    """Unwanted-sideband suppression of a phasing generator, dB.

    ``R = (1 + 2a cos(phi) + a^2) / (1 - 2a cos(phi) + a^2)`` with ``a`` the amplitude ratio of the
    two paths and ``phi`` the quadrature error; suppression ``10 log10 R`` (the image-rejection ratio of
    quadrature imbalance, as derived in open IQ-imbalance texts; the two-tone analysis of the phasing
    generator gives the same expression).
    """
    a = 10.0 ** (amplitude_error_db / 20.0)
    c = math.cos(math.radians(phase_error_deg))
    den = 1.0 - 2.0 * a * c + a * a
    return math.inf if den <= 0.0 else 10.0 * math.log10((1.0 + 2.0 * a * c + a * a) / den)


@dataclass(frozen=True)
class SSB(Stage):
    """Single-sideband generation, upper sideband, at complex baseband (carrier at 0 Hz).

    ``method = "phasing"``: ``z = x + j a [cos(phi) H{x} + sin(phi) x]``, the audio ``x`` and its
    Hilbert transform ``H{x}`` from an audio phase-difference network with quadrature error ``phi``
    (``phase_error_deg``) and gain ratio ``a`` (``amplitude_error_db``). The wanted sideband carries
    ``(1 + a e^{j phi}) / 2`` of the audio, the unwanted ``(1 - a e^{-j phi}) / 2``: suppression as
    :func:`sideband_suppression_db`, the same at every frequency.

    ``method = "filter"``: the double-sideband signal through a sideband filter passing ``low_hz`` to
    ``high_hz`` above the carrier (a low-pass prototype of the given type and order, half the
    bandwidth wide, shifted to the passband centre). The unwanted sideband at ``-f`` meets the filter's
    skirt there, so the suppression grows with audio frequency.

    ``response`` is the audio a receiver on the wanted sideband recovers, ``process`` returns it, and
    :meth:`baseband` gives the complex SSB signal itself (to measure the unwanted sideband).
    """

    method: str = "phasing"
    phase_error_deg: float = 0.0
    amplitude_error_db: float = 0.0
    low_hz: Optional[float] = None
    high_hz: Optional[float] = None
    type: str = "butterworth"
    order: int = 8
    ripple_db: Optional[float] = None
    stop_db: Optional[float] = None
    kind = "ssb"

    def __post_init__(self) -> None:
        _choice(self.method, "method", ("phasing", "filter"))
        if self.method == "phasing":
            validate.number(self.phase_error_deg, name="phase_error_deg", low=-45.0, high=45.0, unit="°")
            validate.number(self.amplitude_error_db, name="amplitude_error_db", low=-6.0, high=6.0, unit="dB")
            if self.low_hz is not None or self.high_hz is not None:
                raise SignalValueError("low_hz and high_hz describe the sideband filter of method = \"filter\".")
        else:
            if self.phase_error_deg or self.amplitude_error_db:
                raise SignalValueError("phase_error_deg and amplitude_error_db apply to method = \"phasing\".")
            self._prototype()  # checks the filter parameters

    def _prototype(self) -> Filter:
        if self.low_hz is None or self.high_hz is None:
            raise SignalValueError("the filter method needs the sideband filter's low_hz and high_hz.")
        lo = _positive(self.low_hz, "low_hz", "Hz")
        hi = _positive(self.high_hz, "high_hz", "Hz")
        if not lo < hi:
            raise SignalValueError(f"low_hz must be below high_hz; got {lo:g} and {hi:g} Hz.")
        return Filter(kind="lowpass", type=self.type, order=self.order, cutoff_hz=(hi - lo) / 2.0,
                      ripple_db=self.ripple_db, stop_db=self.stop_db)

    def _sideband_gains(self, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(wanted gain at +f, unwanted gain at -f), complex, per audio frequency f >= 0."""
        if self.method == "phasing":
            a = 10.0 ** (self.amplitude_error_db / 20.0)
            phi = math.radians(self.phase_error_deg)
            wanted = np.full(f.shape, (1.0 + a * np.exp(1j * phi)) / 2.0)
            unwanted = np.full(f.shape, (1.0 - a * np.exp(-1j * phi)) / 2.0)
            return wanted, unwanted
        proto = self._prototype()
        centre = (self.low_hz + self.high_hz) / 2.0
        # the low-pass prototype of a real filter: H(-x) = conj(H(x)), so evaluate at |x| and conjugate
        def lp(x):
            h = proto.response(np.abs(x))
            return np.where(x >= 0, h, np.conj(h))
        return lp(f - centre), lp(-f - centre)

    def response(self, frequencies_hz) -> np.ndarray:
        f = _freqs(frequencies_hz)
        return self._sideband_gains(f)[0]

    def sideband_suppression_db(self, frequencies_hz) -> np.ndarray:
        """Wanted over unwanted sideband power at each audio frequency, dB."""
        f = _freqs(frequencies_hz)
        w, u = self._sideband_gains(f)
        with np.errstate(divide="ignore"):
            return 20.0 * np.log10(np.abs(w)) - 20.0 * np.log10(np.abs(u))

    def baseband(self, samples, sample_rate_hz: int) -> np.ndarray:
        """The complex SSB signal at baseband: wanted sideband at +f, unwanted at -f (same length).

        Phasing: ``x + j a (cos(phi) H{x} + sin(phi) x)`` with H the Hilbert transform (FFT);
        filter: the spectrum of ``2x`` times the shifted sideband filter.
        """
        x, fs = _audio(samples, sample_rate_hz)
        n = x.size
        spec = np.fft.fft(x)
        f = np.fft.fftfreq(n, 1.0 / fs)
        if self.method == "phasing":
            a = 10.0 ** (self.amplitude_error_db / 20.0)
            phi = math.radians(self.phase_error_deg)
            hilbert = np.real(np.fft.ifft(spec * (-1j * np.sign(f))))
            return x + 1j * a * (math.cos(phi) * hilbert + math.sin(phi) * x)
        w, u = self._sideband_gains(np.abs(f))
        gain = np.where(f >= 0, w, u)
        return np.fft.ifft(2.0 * spec * gain)

    def process(self, samples, sample_rate_hz: int) -> np.ndarray:
        """Audio recovered on the wanted sideband: the real part of the positive-frequency half."""
        x, fs = _audio(samples, sample_rate_hz)
        return apply_response(x, fs, self.response)

    def describe(self) -> str:
        if self.method == "phasing":
            return (f"SSB phasing, {self.phase_error_deg:g}° / {self.amplitude_error_db:g} dB error, "
                    f"suppression {sideband_suppression_db(self.phase_error_deg, self.amplitude_error_db):.1f} dB")
        return f"SSB filter method, {self.type} order {self.order}, {self.low_hz:g}–{self.high_hz:g} Hz"
