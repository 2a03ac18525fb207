"""The stages of a transmit audio chain, in the manner of scipy.signal: design, evaluation, application.

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
from dataclasses import dataclass, field
from typing import Callable, Optional, Union

import numpy as np

from .. import validate
from ..errors import SignalValueError

__all__ = [
    "FILTER_TYPES",
    "Stage",
    "Gain",
    "Filter",
    "RC",
    "LadderBranch",
    "Ladder",
    "Microphone",
    "Emphasis",
    "Clipper",
    "Compressor",
    "SSB",
    "Channel",
    "apply_response",
    "sideband_suppression_db",
]

#: Analog prototype families of the filter stages (scipy.signal function names beside them).
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


# --------------------------------------------------------------------------- applying a response


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


# --------------------------------------------------------------------------- gain


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


# --------------------------------------------------------------------------- filters from prototypes


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


# --------------------------------------------------------------------------- RC


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


# --------------------------------------------------------------------------- LC ladder


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


# --------------------------------------------------------------------------- microphone, emphasis


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


# --------------------------------------------------------------------------- nonlinear speech processing


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


@dataclass(frozen=True)
class Compressor(Stage):
    """Feed-forward compressor: static curve and attack/release smoothing of the gain in dB.

    Level: the peak of each 1 ms frame, dB re the input's overall sample peak. Static curve: above
    ``threshold_db`` (dB re that peak, <= 0) the output level rises ``1/ratio`` dB per input dB, i.e.
    gain ``-(L - T)(1 - 1/ratio)`` dB. The gain is smoothed by a one-pole filter per frame whose time
    constant is ``attack_ms`` while the gain falls and ``release_ms`` while it recovers (the branching
    smoother of Giannoulis, Massberg & Reiss, "Digital dynamic range compressor design - a tutorial
    and analysis", JAES 60(6), 2012; from memory), then interpolated to the samples. No make-up gain.
    """

    threshold_db: float = -20.0
    ratio: float = 4.0
    attack_ms: float = 5.0
    release_ms: float = 100.0
    kind = "compressor"
    linear = False

    def __post_init__(self) -> None:
        validate.number(self.threshold_db, name="threshold_db", low=-60.0, high=0.0, unit="dB")
        validate.number(self.ratio, name="ratio", low=1.0, high=100.0)
        validate.number(self.attack_ms, name="attack_ms", low=0.1, high=1000.0, unit="ms")
        validate.number(self.release_ms, name="release_ms", low=1.0, high=10000.0, unit="ms")

    def gain_db(self, samples, sample_rate_hz: int) -> tuple[np.ndarray, np.ndarray]:
        """(frame times in s, smoothed gain in dB) for the input."""
        x, fs = _audio(samples, sample_rate_hz)
        hop = max(1, int(round(fs / 1000.0)))
        n_frames = -(-x.size // hop)
        padded = np.zeros(n_frames * hop)
        padded[:x.size] = np.abs(x)
        peak = float(np.max(padded))
        frames = padded.reshape(n_frames, hop).max(axis=1)
        with np.errstate(divide="ignore"):
            level = 20.0 * np.log10(frames / peak) if peak > 0 else np.full(n_frames, -np.inf)
        target = np.where(level > self.threshold_db, -(level - self.threshold_db) * (1.0 - 1.0 / self.ratio), 0.0)
        dt = hop / fs
        a_att = math.exp(-dt / (self.attack_ms * 1e-3))
        a_rel = math.exp(-dt / (self.release_ms * 1e-3))
        g = np.empty(n_frames)
        state = 0.0
        for i, t in enumerate(target.tolist()):
            a = a_att if t < state else a_rel
            state = a * state + (1.0 - a) * t
            g[i] = state
        times = (np.arange(n_frames) + 0.5) * dt
        return times, g

    def process(self, samples, sample_rate_hz: int) -> np.ndarray:
        x, fs = _audio(samples, sample_rate_hz)
        times, g = self.gain_db(x, fs)
        t = np.arange(x.size) / fs
        return x * 10.0 ** (np.interp(t, times, g) / 20.0)

    def describe(self) -> str:
        return (f"compressor {self.ratio:g}:1 above {self.threshold_db:g} dB re peak, "
                f"attack {self.attack_ms:g} ms, release {self.release_ms:g} ms")


# --------------------------------------------------------------------------- SSB generation


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


# --------------------------------------------------------------------------- channel


@dataclass(frozen=True)
class Channel(Stage):
    """Additive white noise in a receive passband at a channel SNR: what a listener hears on a weak signal.

    Channel SNR = the mean power of the signal reaching this stage (all frequencies) over the noise
    power inside ``low_hz``-``high_hz`` (the definition of :mod:`voiceband.intelligibility.channel`).
    The passband applies to the noise only: to filter the speech as a receiver would, put a filter
    stage before this one. The noise is Gaussian, made reproducible by ``seed``, and band-limited by
    zeroing its spectrum outside the passband.
    """

    snr_db: float = 10.0
    low_hz: float = 300.0
    high_hz: float = 3000.0
    seed: int = 0
    kind = "channel"
    linear = False

    def __post_init__(self) -> None:
        validate.number(self.snr_db, name="snr_db", low=-30.0, high=100.0, unit="dB")
        lo = validate.number(self.low_hz, name="low_hz", low=0.0, unit="Hz")
        hi = _positive(self.high_hz, "high_hz", "Hz")
        if not lo < hi:
            raise SignalValueError(f"low_hz must be below high_hz; got {lo:g} and {hi:g} Hz.")
        if isinstance(self.seed, bool) or not isinstance(self.seed, (int, np.integer)) or self.seed < 0:
            raise SignalValueError(f"seed must be a whole number, 0 or more; got {self.seed!r}.")

    @property
    def receive_band_hz(self) -> tuple[float, float]:
        return (float(self.low_hz), float(self.high_hz))

    def noise(self, n: int, sample_rate_hz: int, power: float) -> np.ndarray:
        """``n`` samples of noise of mean power ``power`` inside the passband, none outside."""
        fs = validate.sample_rate_hz(sample_rate_hz)
        if not self.high_hz <= fs / 2.0:
            raise SignalValueError(f"the channel's high_hz ({self.high_hz:g} Hz) must not exceed the Nyquist frequency ({fs / 2:g} Hz).")
        rng = np.random.default_rng(self.seed)
        spec = np.fft.rfft(rng.standard_normal(n))
        f = np.fft.rfftfreq(n, 1.0 / fs)
        spec[(f < self.low_hz) | (f > self.high_hz)] = 0.0
        v = np.fft.irfft(spec, n)
        p = float(np.mean(v * v))
        return v if p == 0.0 else v * math.sqrt(power / p)

    def process(self, samples, sample_rate_hz: int) -> np.ndarray:
        x, fs = _audio(samples, sample_rate_hz)
        p = float(np.mean(x * x))
        if p == 0.0:
            raise SignalValueError("the signal reaching the channel stage is silent; a channel SNR needs a signal.")
        return x + self.noise(x.size, fs, p / 10.0 ** (self.snr_db / 10.0))

    def describe(self) -> str:
        return f"channel, {self.snr_db:g} dB SNR in {self.low_hz:g}–{self.high_hz:g} Hz"


Number = Union[int, float]
