"""Shared ground of the chain stages: the stage interface, argument checks, and applying an analog response to audio.

Every stage is a frozen dataclass built from its parameters (the constructor checks them and raises
:class:`~voiceband.errors.SignalValueError` naming the parameter and its range). Linear stages give
their complex frequency response ``response(frequencies_hz)`` without touching audio; every stage can
``process(samples, sample_rate_hz)``.

How audio is processed
----------------------
* ``highpass`` / ``lowpass`` / ``bandpass`` (analog prototypes): scipy.signal's digital design at the
  sample rate, i.e. the bilinear transform with the cutoffs pre-warped, so the edges land where designed
  (the response departs from the analog one only close to the Nyquist frequency).
* other linear stages (gain with its op-amp roll-off, ``rc``, ``ladder``, ``microphone``, ``emphasis``,
  ``ssb``): the analog response itself, sampled on an FFT grid and applied as a long FIR
  (:func:`apply_response`), so the audio follows ``response()`` exactly below the Nyquist frequency.
* ``clipper``, ``compressor``: sample by sample (nonlinear; no ``response``).
* ``channel``: adds band-limited noise (not a filter; no ``response``).

Conventions
-----------
Frequencies in Hz, time constants in the unit their name says, gains in dB; responses are complex
(``H(j 2 pi f)``), so magnitude ``20 log10 |H|`` dB and phase ``angle(H)``. Levels of the nonlinear
stages are set relative to the peak of the signal they receive, so they do not depend on the absolute
level of the audio.

The ``microphone`` models are this project's own simple shapes (a flat capsule, a presence peak, a
first-order proximity bass rise), not measurements of any product.
"""

from __future__ import annotations

import math
from typing import Callable

import numpy as np

from .. import validate
from ..errors import SignalValueError

__all__ = ["FILTER_TYPES", "Stage", "apply_response"]

FILTER_TYPES: dict[str, str] = {
    "butterworth": "butter",
    "chebyshev1": "cheby1",
    "bessel": "bessel",
    "elliptic": "ellip",
}

_TWO_PI = 2.0 * math.pi


def _freqs(frequencies_hz) -> np.ndarray:
    f = np.asarray(frequencies_hz, dtype=np.float64)
    if f.ndim > 1 or not np.all(np.isfinite(f)) or np.any(f < 0):
        raise SignalValueError("frequencies_hz must be a 1-D array of finite frequencies, 0 Hz or above.")
    return np.atleast_1d(f)


def _audio(samples, sample_rate_hz) -> tuple[np.ndarray, int]:
    fs = validate.sample_rate_hz(sample_rate_hz)
    x = validate.finite_samples(validate.block(samples))
    if x.size == 0:
        raise SignalValueError("samples are empty; a chain needs at least one sample.")
    return x, fs


def _positive(value, name: str, unit: str = "") -> float:
    return validate.number(value, name=name, low=0.0, low_inclusive=False, unit=unit)


def _choice(value, name: str, choices) -> str:
    if value not in choices:
        raise SignalValueError(f"{name} must be one of {', '.join(choices)}; got {value!r}.")
    return value


class Stage:
    """Interface shared by all stages (documentation only; the stages are plain dataclasses).

    Attributes
    ----------
    kind : str
        The chain-file ``kind``.
    linear : bool
        True when the stage has a frequency response (``response``).
    """

    kind = "stage"
    linear = True

    def response(self, frequencies_hz) -> np.ndarray:
        """Complex frequency response at ``frequencies_hz`` (Hz), shape of the input."""
        raise TypeError(f"a {self.kind} stage is not linear and has no frequency response.")

    def process(self, samples, sample_rate_hz: int) -> np.ndarray:
        """The stage applied to one channel of samples (float64, same length)."""
        x, fs = _audio(samples, sample_rate_hz)
        return apply_response(x, fs, self.response)

    def describe(self) -> str:
        """One line for listings."""
        return self.kind


def apply_response(x: np.ndarray, sample_rate_hz: int, response: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
    """Filter ``x`` by an analog frequency response sampled on an FFT grid (a long linear-convolution FIR).

    The response is sampled at ``k fs / N`` for ``k = 0 .. N/2``; its inverse FFT is the impulse
    response, centred in an N-tap FIR (the non-causal half of a band-limited response included) and
    tapered over its outer eighths. N doubles from 8192 until those outer eighths hold less than 1e-9
    of the impulse energy (at most 2**20 taps), so time aliasing is negligible. The output is aligned
    with the input (the FIR's centring delay removed) and has its length.

    Parameters
    ----------
    x : ndarray, shape (n,)
    sample_rate_hz : int
    response : callable
        Maps frequencies (Hz, ndarray) to complex H.

    Returns
    -------
    ndarray, shape (n,)
    """
    from scipy.signal import oaconvolve

    n_fft = 8192
    while True:
        f = np.fft.rfftfreq(n_fft, 1.0 / sample_rate_hz)
        h = np.fft.irfft(np.asarray(response(f), dtype=np.complex128), n_fft)
        h = np.roll(h, n_fft // 2)
        edge = n_fft // 8
        energy = float(np.sum(h * h))
        outer = float(np.sum(h[:edge] ** 2) + np.sum(h[-edge:] ** 2))
        if energy == 0.0 or outer <= 1e-9 * energy or n_fft >= (1 << 20):
            break
        n_fft *= 2
    taper = np.ones(n_fft)
    ramp = 0.5 - 0.5 * np.cos(np.pi * np.arange(edge) / edge)
    taper[:edge] = ramp
    taper[-edge:] = ramp[::-1]
    y = oaconvolve(x, h * taper)
    start = n_fft // 2
    return y[start:start + x.size]
