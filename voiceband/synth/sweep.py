"""Exponential sine sweep (Farina) with start/stop markers, and its inverse filter.

The sweep is

    x(t) = A · sin[2π f1 L (e^{t/L} − 1)],   L = T / ln(f2/f1),   0 ≤ t < T,

whose instantaneous frequency f1·e^{t/L} rises by the same number of octaves every
second.  Deconvolving a recording of it puts the k-th harmonic distortion product's
impulse response L·ln k seconds *before* the linear one, so a time window separates
them (Farina 2000).

Markers are short linear chirps inside the voice band, one before and one after the
sweep and separated from it by silence.  They survive any voice channel, and their
spacing tells the measurement the recording's clock ratio (see
:mod:`voiceband.response.align`).

Levels are **sample peak** levels in dBFS (0 dBFS peak = a sample of magnitude 1.0):
the sweep and the markers peak at ``level_dbfs``; the sweep's RMS is 3.01 dB lower.

References
----------
A. Farina, "Simultaneous measurement of impulse response and distortion with a
swept-sine technique", AES 108th Convention, preprint 5093, 2000 (formula and
inverse filter; from memory).
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from .. import validate
from ..errors import SignalValueError

__all__ = [
    "SweepSignal",
    "SweepLayout",
    "sweep_layout",
    "exponential_sweep",
    "inverse_filter",
    "sweep_rate_constant_s",
    "MARKER_BAND_HZ",
    "MARKER_DURATION_S",
    "MARKER_GAP_S",
    "LEAD_SILENCE_S",
    "MAX_STOP_FRACTION_OF_NYQUIST",
]

#: Band of the marker chirps (Hz), chosen inside every voice channel (300–3000 Hz,
#: common practice), then clipped to the sweep's own band.
MARKER_BAND_HZ = (400.0, 2800.0)
#: Length of each marker chirp (s).
MARKER_DURATION_S = 0.1
#: Silence between a marker and the sweep (s): room for the chain's impulse-response tail.
MARKER_GAP_S = 0.5
#: Silence before the first marker and after the last one (s).
LEAD_SILENCE_S = 0.25
#: The stop frequency is limited to this fraction of the Nyquist frequency.
MAX_STOP_FRACTION_OF_NYQUIST = 0.9
#: Fade-in covers the first 1/6 octave of the sweep, fade-out the last 1/24 octave
#: (raised-cosine halves; common practice to avoid clicks).
_FADE_IN_OCTAVES = 1.0 / 6.0
_FADE_OUT_OCTAVES = 1.0 / 24.0


@dataclass(frozen=True)
class SweepLayout:
    """An exponential sweep with its markers, checked but not rendered: :meth:`chunk` makes any
    stretch of :attr:`SweepSignal.samples` on demand (the same samples), so a long sweep is written
    in blocks with memory independent of its length.  Attributes as :class:`SweepSignal` (which
    adds the rendered ``samples``)."""

    sample_rate_hz: int
    frames: int
    start_hz: float
    stop_hz: float
    duration_s: float
    level_dbfs: float
    rate_constant_s: float
    sweep_start_index: int
    sweep_stop_index: int
    marker_start_indices: tuple[int, ...]
    marker_length: int
    marker_band_hz: tuple[float, float] | None

    def chunk(self, start: int, stop: int) -> np.ndarray:
        """Samples ``start`` to ``stop`` of the whole test signal, at its level (float64)."""
        a, b = int(start), int(stop)
        fs = self.sample_rate_hz
        x = np.zeros(b - a)
        s0, s1 = self.sweep_start_index, self.sweep_stop_index
        lo, hi = max(a, s0), min(b, s1)
        if lo < hi:
            n = s1 - s0
            f1, lc = self.start_hz, self.rate_constant_s
            idx = np.arange(lo - s0, hi - s0)
            t = idx.astype(np.float64) / fs
            core = np.sin(2.0 * np.pi * f1 * lc * np.expm1(t / lc))
            n_in = min(int(round(lc * np.log(2.0) * _FADE_IN_OCTAVES * fs)), n // 4)
            n_out = min(int(round(lc * np.log(2.0) * _FADE_OUT_OCTAVES * fs)), n // 4)
            head = idx < n_in
            core[head] *= _half_hann(n_in)[idx[head]]
            if n_out > 0:
                tail = idx >= n - n_out
                core[tail] *= _half_hann(n_out)[::-1][idx[tail] - (n - n_out)]
            x[lo - a:hi - a] = core
        if self.marker_start_indices:
            m = _marker(self.marker_band_hz[0], self.marker_band_hz[1], fs)
            for m0 in self.marker_start_indices:
                lo, hi = max(a, m0), min(b, m0 + m.size)
                if lo < hi:
                    x[lo - a:hi - a] = m[lo - m0:hi - m0]
        return x * (10.0 ** (self.level_dbfs / 20.0))


@dataclass(frozen=True)
class SweepSignal(SweepLayout):
    """An exponential sine sweep, optionally framed by two marker chirps, rendered.

    Attributes
    ----------
    sample_rate_hz : int
    frames : int
        Length of the whole test signal in samples (``samples.size``).
    start_hz, stop_hz : float
        f1 and f2 of the sweep (``stop_hz`` after limiting below Nyquist).
    duration_s : float
        T, the length of the sweep itself (markers and silences excluded).
    level_dbfs : float
        Sample peak level of the sweep and markers.
    rate_constant_s : float
        L = T / ln(f2/f1): the k-th harmonic's impulse response lies L·ln k before the linear one.
    sweep_start_index, sweep_stop_index : int
        The sweep occupies ``samples[sweep_start_index:sweep_stop_index]``.
    marker_start_indices : tuple of int
        First sample of each marker chirp (empty without markers).
    marker_length : int
        Samples per marker (0 without markers).
    marker_band_hz : tuple of float, or None
        Start and stop frequency of the marker chirps.
    samples : numpy.ndarray
        1-D float64 (read-only), full scale = ±1.0: the whole test signal.
    """

    samples: np.ndarray

    @property
    def sweep(self) -> np.ndarray:
        """The sweep alone, without markers or silences (a read-only view)."""
        return self.samples[self.sweep_start_index:self.sweep_stop_index]


def sweep_rate_constant_s(start_hz: float, stop_hz: float, duration_s: float) -> float:
    """L = T / ln(f2/f1) of an exponential sweep (Farina 2000, AES preprint 5093)."""
    return float(duration_s) / float(np.log(float(stop_hz) / float(start_hz)))


def _check_inputs(start_hz, stop_hz, duration_s, sample_rate_hz, level_dbfs) -> tuple[float, float, float, int, float]:
    fs = validate.sample_rate_hz(sample_rate_hz)
    f1 = float(start_hz)
    f2 = float(stop_hz)
    if not np.isfinite(f1) or f1 <= 0.0:
        raise SignalValueError(f"start_hz must be a positive frequency, got {f1:g}.")
    if not np.isfinite(f2) or f2 <= 0.0:
        raise SignalValueError(f"stop_hz must be a positive frequency, got {f2:g}.")
    f2 = min(f2, MAX_STOP_FRACTION_OF_NYQUIST * fs / 2.0)
    if f2 < 2.0 * f1:
        raise SignalValueError(
            f"the sweep must span at least one octave below {MAX_STOP_FRACTION_OF_NYQUIST:g} × Nyquist "
            f"({MAX_STOP_FRACTION_OF_NYQUIST * fs / 2.0:g} Hz at {fs} Hz): got {f1:g} to {float(stop_hz):g} Hz."
        )
    t = float(duration_s)
    if not np.isfinite(t) or t < 0.5 or t > 600.0:
        raise SignalValueError(f"duration_s must be from 0.5 to 600 s, got {t:g}.")
    lv = float(level_dbfs)
    if not np.isfinite(lv) or lv > 0.0 or lv < -60.0:
        raise SignalValueError(f"level_dbfs must be from -60 to 0 dBFS (sample peak), got {lv:g}.")
    return f1, f2, t, fs, lv


def _half_hann(n: int) -> np.ndarray:
    """Rising raised-cosine half of length n."""
    if n <= 0:
        return np.zeros(0)
    return 0.5 - 0.5 * np.cos(np.pi * (np.arange(n) + 0.5) / n)


def _marker(fa: float, fb: float, fs: int) -> np.ndarray:
    """Linear chirp fa → fb of MARKER_DURATION_S with 10 % raised-cosine edges."""
    n = int(round(MARKER_DURATION_S * fs))
    t = np.arange(n, dtype=np.float64) / fs
    d = n / fs
    x = np.sin(2.0 * np.pi * (fa * t + 0.5 * (fb - fa) / d * t * t))
    r = max(1, n // 10)
    x[:r] *= _half_hann(r)
    x[n - r:] *= _half_hann(r)[::-1]
    return x


def _marker_band(f1: float, f2: float) -> tuple[float, float]:
    lo = max(f1, MARKER_BAND_HZ[0])
    hi = min(f2, MARKER_BAND_HZ[1])
    if hi < 1.5 * lo:  # the sweep lies outside the voice band: use its own band
        lo, hi = f1, f2
    return float(lo), float(hi)


def exponential_sweep(
    *,
    start_hz: float = 20.0,
    stop_hz: float = 20000.0,
    duration_s: float = 10.0,
    sample_rate_hz: int = 48000,
    level_dbfs: float = -6.0,
    markers: bool = True,
) -> SweepSignal:
    """Generate an exponential sine sweep (Farina), optionally framed by marker chirps.

    Layout with markers: 0.25 s silence, marker, 0.5 s silence, sweep, 0.5 s silence,
    marker, 0.25 s silence.  Without markers the result is the sweep alone.

    Parameters
    ----------
    start_hz : float
        f1, the first frequency (Hz).
    stop_hz : float
        f2, the last frequency (Hz); limited to 0.9 × the Nyquist frequency.
    duration_s : float
        T, the sweep's length (0.5–600 s).
    sample_rate_hz : int
        8000–192000 Hz.
    level_dbfs : float
        Sample peak level, −60 to 0 dBFS.
    markers : bool
        Add the start and stop marker chirps (for clock-drift estimation).

    Returns
    -------
    SweepSignal

    Raises
    ------
    SignalValueError
        A bad rate, level or duration, or a band narrower than one octave.

    References
    ----------
    Farina (2000), AES preprint 5093: x(t) = sin[2π f1 L (e^{t/L} − 1)], L = T/ln(f2/f1)
    (from memory).  The half-raised-cosine fades over the first 1/6 and the last 1/24
    octave are common practice.
    """
    layout = sweep_layout(start_hz=start_hz, stop_hz=stop_hz, duration_s=duration_s, sample_rate_hz=sample_rate_hz,
                          level_dbfs=level_dbfs, markers=markers)
    x = layout.chunk(0, layout.frames)
    x.setflags(write=False)
    return SweepSignal(**{f.name: getattr(layout, f.name) for f in fields(SweepLayout)}, samples=x)


def sweep_layout(
    *,
    start_hz: float = 20.0,
    stop_hz: float = 20000.0,
    duration_s: float = 10.0,
    sample_rate_hz: int = 48000,
    level_dbfs: float = -6.0,
    markers: bool = True,
) -> SweepLayout:
    """:func:`exponential_sweep` checked and laid out, not rendered (same parameters and checks)."""
    f1, f2, t_s, fs, lv = _check_inputs(start_hz, stop_hz, duration_s, sample_rate_hz, level_dbfs)
    n = int(round(t_s * fs))
    lc = t_s / np.log(f2 / f1)
    if markers:
        band = _marker_band(f1, f2)
        m_len = int(round(MARKER_DURATION_S * fs))
        lead = int(round(LEAD_SILENCE_S * fs))
        gap = int(round(MARKER_GAP_S * fs))
        m1 = lead
        s0 = m1 + m_len + gap
        s1 = s0 + n
        m2 = s1 + gap
        total = m2 + m_len + lead
        marker_idx: tuple[int, ...] = (m1, m2)
        marker_band: tuple[float, float] | None = band
    else:
        s0, s1, total = 0, n, n
        marker_idx = ()
        m_len = 0
        marker_band = None
    return SweepLayout(fs, total, f1, f2, n / fs, lv, float(lc), int(s0), int(s1), marker_idx, int(m_len), marker_band)


def inverse_filter(sweep: SweepSignal) -> np.ndarray:
    """Farina's inverse filter: the time-reversed sweep with a −6 dB/octave envelope.

    The envelope falls from 0 dB at the start of the reversed sweep (the stop
    frequency) to −6·log2(f2/f1) dB at its end, i.e. the amplitude is proportional to
    the instantaneous frequency, undoing the sweep's pink (−3 dB/octave) spectrum.
    The filter is scaled so that ``sweep ⊛ inverse`` has unit gain at the sweep's
    geometric-centre frequency; that convolution is then a band-limited impulse at
    sample ``len(sweep.sweep) − 1``.

    Returns
    -------
    numpy.ndarray
        1-D float64 of the sweep's length (markers excluded).

    References
    ----------
    Farina (2000), AES preprint 5093: the time-reversed sweep with an envelope falling
    6 dB/octave (from memory).
    """
    s = np.asarray(sweep.sweep, dtype=np.float64)
    n = s.size
    t = np.arange(n, dtype=np.float64) / sweep.sample_rate_hz
    # Reversed time t' = t: the reversed sweep is at frequency f2·e^{−t'/L}; amplitude ∝ that frequency.
    inv = s[::-1] * np.exp(-t / sweep.rate_constant_s)
    nfft = 1 << int(np.ceil(np.log2(2 * n)))
    g = np.fft.rfft(s, nfft) * np.fft.rfft(inv, nfft)
    f = np.fft.rfftfreq(nfft, 1.0 / sweep.sample_rate_hz)
    fc = np.sqrt(sweep.start_hz * sweep.stop_hz)
    band = (f > fc / 2.0 ** 0.5) & (f < fc * 2.0 ** 0.5)
    gain = float(np.mean(np.abs(g[band])))
    return inv / gain
