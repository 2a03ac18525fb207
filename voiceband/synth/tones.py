"""Steady test signals: Schroeder-phase multitone, two-tone SSB pair, reference tone, stepped tones.

Levels are **sample peak** levels in dBFS (0 dBFS peak = a sample of magnitude 1.0), so
a test signal generated at ``peak_dbfs <= 0`` never clips.  Each result also states its
RMS level in the project's dBFS convention (0 dBFS = RMS of a full-scale square wave,
so a full-scale sine is -3.01 dBFS RMS) and its crest factor.

All functions are pure: they return samples and a description, and never write files.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import validate
from ..bands import third_octave_bands
from ..errors import SignalValueError

__all__ = [
    "TestSignal",
    "SteppedTones",
    "SSB_TWO_TONE_HZ",
    "REFERENCE_TONE_HZ",
    "REFERENCE_TONE_PEAK_DBFS",
    "schroeder_phases",
    "multitone",
    "two_tone",
    "reference_tone",
    "stepped_tones",
    "third_octave_step_frequencies_hz",
]

#: Two equal tones for an SSB (A3J/J3E) transmitter with a 3.0 kHz authorised bandwidth
#: (47 CFR 2.1049).  The same section gives 500 + 2100 Hz (3.5 kHz) and
#: 500 + 2400 Hz (4.0 kHz).
SSB_TWO_TONE_HZ = (400.0, 1800.0)
#: Reference (alignment) tone frequency, common practice.
REFERENCE_TONE_HZ = 1000.0
#: Default reference tone peak level, -20 dBFS peak (common practice for a line-up tone
#: with ample headroom; from memory).
REFERENCE_TONE_PEAK_DBFS = -20.0


@dataclass(frozen=True)
class TestSignal:
    """A generated test signal.

    Attributes
    ----------
    samples : numpy.ndarray
        1-D float64, full scale = ±1.0.
    sample_rate_hz : int
    frequencies_hz : numpy.ndarray
        Frequencies of the tones the signal contains.
    peak_dbfs : float
        Sample peak level, 20·log10(max|x|).
    rms_dbfs : float
        RMS level, 10·log10(mean x²) (0 dBFS = full-scale square wave).
    crest_factor_db : float
        ``peak_dbfs - rms_dbfs`` (a sine gives 3.01 dB).
    """

    __test__ = False  # not a pytest test class

    samples: np.ndarray
    sample_rate_hz: int
    frequencies_hz: np.ndarray
    peak_dbfs: float
    rms_dbfs: float
    crest_factor_db: float


@dataclass(frozen=True)
class SteppedTones:
    """Stepped tones with their schedule.

    Attributes
    ----------
    signal : TestSignal
    starts_s, stops_s : numpy.ndarray
        Start and end time of each tone (ramps included), seconds from the first sample.
    """

    signal: TestSignal
    starts_s: np.ndarray
    stops_s: np.ndarray


# --------------------------------------------------------------------------- validation


def _check_peak(peak_dbfs: float) -> float:
    p = float(peak_dbfs)
    if not np.isfinite(p) or p > 0.0 or p < -120.0:
        raise SignalValueError(f"peak_dbfs must be from -120 to 0 dBFS, got {p:g}.")
    return p


def _check_freqs(freqs_hz, sample_rate_hz: int, name: str) -> np.ndarray:
    f = np.atleast_1d(np.asarray(freqs_hz, dtype=np.float64))
    if f.ndim != 1 or f.size == 0:
        raise SignalValueError(f"{name} must list at least one frequency.")
    nyq = sample_rate_hz / 2.0
    bad = f[~np.isfinite(f) | (f <= 0.0) | (f >= nyq)]
    if bad.size:
        raise SignalValueError(
            f"{name} must lie between 0 and the Nyquist frequency {nyq:g} Hz, got {bad[0]:g} Hz."
        )
    return f


def _finish(x: np.ndarray, sample_rate_hz: int, freqs_hz: np.ndarray, peak_dbfs: float) -> TestSignal:
    """Scale ``x`` to the requested sample peak and describe it."""
    peak = float(np.max(np.abs(x)))
    if peak == 0.0:
        raise SignalValueError("the requested test signal is silent (every sample is zero).")
    y = x * (10.0 ** (peak_dbfs / 20.0) / peak)
    rms_dbfs = 10.0 * np.log10(np.mean(y * y))
    return TestSignal(
        samples=y,
        sample_rate_hz=sample_rate_hz,
        frequencies_hz=np.array(freqs_hz, dtype=np.float64),
        peak_dbfs=float(peak_dbfs),
        rms_dbfs=float(rms_dbfs),
        crest_factor_db=float(peak_dbfs - rms_dbfs),
    )


def _ramp(n: int, ramp_len: int) -> np.ndarray:
    """Raised-cosine fade-in and fade-out envelope of length ``n``."""
    env = np.ones(n)
    r = min(ramp_len, n // 2)
    if r > 0:
        up = 0.5 - 0.5 * np.cos(np.pi * (np.arange(r) + 0.5) / r)
        env[:r] = up
        env[n - r:] = up[::-1]
    return env


# --------------------------------------------------------------------------- signals


def schroeder_phases(n_tones: int) -> np.ndarray:
    """Schroeder's low-crest-factor phases for equal-amplitude tones.

    ``φ_k = −π k² / K`` for k = 1 … K.

    References
    ----------
    M. R. Schroeder, "Synthesis of low-peak-factor signals and binary sequences with low
    autocorrelation", IEEE Trans. Inf. Theory IT-16, 1970 (from memory).
    """
    k = np.arange(1, int(n_tones) + 1, dtype=np.float64)
    return -np.pi * k * k / float(n_tones)


def multitone(
    duration_s: float,
    sample_rate_hz: int,
    *,
    low_hz: float = 300.0,
    high_hz: float = 3000.0,
    n_tones: int = 28,
    peak_dbfs: float = -6.0,
    schroeder: bool = True,
) -> TestSignal:
    """Equal-amplitude, linearly spaced multitone with Schroeder phases.

    Tones at ``low_hz + k·Δf`` (k = 0 … K−1, Δf = (high−low)/(K−1)), cosine phases from
    :func:`schroeder_phases` (or all zero when ``schroeder`` is false, the worst case,
    crest factor 10·log10(2K) dB).  The signal is periodic with period 1/gcd of the tone
    frequencies when they are whole hertz (the default grid 300, 400 … 3000 Hz repeats
    every 10 ms), so a whole number of periods can be analysed without a window.

    Parameters
    ----------
    duration_s : float
    sample_rate_hz : int
    low_hz, high_hz : float
        First and last tone; both below the Nyquist frequency.
    n_tones : int
        K ≥ 2.
    peak_dbfs : float
        Sample peak level of the result.
    schroeder : bool
        Use Schroeder phases (default) or zero phases.

    Returns
    -------
    TestSignal
        With ``crest_factor_db``: about 5.5 dB for 28 tones 300–3000 Hz (computed),
        17.5 dB (10 log10 2K) for zero phases.

    Raises
    ------
    SignalValueError
        Bad duration, rate, level, band or tone count.
    """
    fs = validate.sample_rate_hz(sample_rate_hz)
    n = validate.duration_samples(duration_s, fs, maximum_s=3600.0)
    peak = _check_peak(peak_dbfs)
    k = int(n_tones)
    if k != n_tones or k < 2 or k > 10000:
        raise SignalValueError(f"n_tones must be a whole number from 2 to 10000, got {n_tones}.")
    if not float(low_hz) < float(high_hz):
        raise SignalValueError(f"low_hz ({float(low_hz):g} Hz) must be below high_hz ({float(high_hz):g} Hz).")
    freqs = _check_freqs(np.linspace(float(low_hz), float(high_hz), k), fs, "multitone frequencies")
    phases = schroeder_phases(k) if schroeder else np.zeros(k)
    t = np.arange(n, dtype=np.float64) / fs
    x = np.zeros(n)
    # One tone at a time keeps memory at O(n); K is small (tens) for test multitones.
    for f, ph in zip(freqs, phases):
        x += np.cos(2.0 * np.pi * f * t + ph)
    return _finish(x, fs, freqs, peak)


def two_tone(
    duration_s: float,
    sample_rate_hz: int,
    *,
    tones_hz: tuple[float, float] = SSB_TWO_TONE_HZ,
    peak_dbfs: float = -6.0,
    ramp_s: float = 0.01,
) -> TestSignal:
    """Two equal-amplitude tones, the SSB linearity and bandwidth test pair.

    The two cosines start in phase, so the peak equals twice each tone's amplitude: each
    tone sits 6.02 dB below ``peak_dbfs``.  The envelope's peak-to-average power ratio is
    3.01 dB (PEP = 2 × average power; computed).

    Parameters
    ----------
    tones_hz : pair of float
        Default 400 + 1800 Hz (47 CFR 2.1049, SSB with 3.0 kHz authorised bandwidth).
    ramp_s : float
        Raised-cosine fade in and out, to avoid clicks (0 for none).

    Raises
    ------
    SignalValueError
        Bad duration, rate, level, or tone frequencies (two distinct, below Nyquist).
    """
    fs = validate.sample_rate_hz(sample_rate_hz)
    n = validate.duration_samples(duration_s, fs, maximum_s=3600.0)
    peak = _check_peak(peak_dbfs)
    f = _check_freqs(tones_hz, fs, "tones_hz")
    if f.size != 2 or f[0] == f[1]:
        raise SignalValueError(f"tones_hz must be two different frequencies, got {', '.join(f'{v:g}' for v in f)} Hz.")
    t = np.arange(n, dtype=np.float64) / fs
    x = np.cos(2.0 * np.pi * f[0] * t) + np.cos(2.0 * np.pi * f[1] * t)
    x = x * _ramp(n, _ramp_len(ramp_s, fs))
    return _finish(x, fs, f, peak)


def reference_tone(
    duration_s: float,
    sample_rate_hz: int,
    *,
    frequency_hz: float = REFERENCE_TONE_HZ,
    peak_dbfs: float = REFERENCE_TONE_PEAK_DBFS,
    ramp_s: float = 0.01,
) -> TestSignal:
    """A single sine, by default the 1 kHz reference tone at −20 dBFS peak (−23.01 dBFS RMS).

    Raises
    ------
    SignalValueError
        Bad duration, rate, level or frequency.
    """
    fs = validate.sample_rate_hz(sample_rate_hz)
    n = validate.duration_samples(duration_s, fs, maximum_s=3600.0)
    peak = _check_peak(peak_dbfs)
    f = _check_freqs(frequency_hz, fs, "frequency_hz")
    if f.size != 1:
        raise SignalValueError("frequency_hz must be one frequency.")
    t = np.arange(n, dtype=np.float64) / fs
    x = np.sin(2.0 * np.pi * f[0] * t + np.pi / 2.0)  # cosine: the first sample is the peak
    x = x * _ramp(n, _ramp_len(ramp_s, fs))
    return _finish(x, fs, f, peak)


def third_octave_step_frequencies_hz(sample_rate_hz: int, *, low_hz: float = 100.0, high_hz: float = 8000.0) -> np.ndarray:
    """Nominal one-third-octave centres (IEC 61260-1:2014 Annex E, :mod:`voiceband.bands`) in
    ``[low_hz, high_hz]`` and below 0.45 × the sample rate: a default frequency list for
    :func:`stepped_tones`.

    >>> third_octave_step_frequencies_hz(8000, low_hz=1000).tolist()
    [1000.0, 1250.0, 1600.0, 2000.0, 2500.0, 3150.0]
    """
    nominal = np.array(third_octave_bands(low_hz=low_hz, high_hz=high_hz).nominal_hz)
    return nominal[nominal < 0.45 * sample_rate_hz]


def stepped_tones(
    frequencies_hz,
    sample_rate_hz: int,
    *,
    dwell_s: float = 0.5,
    gap_s: float = 0.1,
    peak_dbfs: float = -6.0,
    ramp_s: float = 0.005,
) -> SteppedTones:
    """A sequence of sines, one per frequency, each ``dwell_s`` long, separated by ``gap_s`` of silence.

    Each tone has raised-cosine ramps of ``ramp_s`` inside its dwell; every tone has the same
    peak level.  A gap precedes the first tone and follows the last one.

    Returns
    -------
    SteppedTones
        The signal and the start/stop time of each tone.

    Raises
    ------
    SignalValueError
        No frequencies, a frequency at or above Nyquist, or a non-positive dwell.
    """
    fs = validate.sample_rate_hz(sample_rate_hz)
    peak = _check_peak(peak_dbfs)
    f = _check_freqs(frequencies_hz, fs, "frequencies_hz")
    if not np.isfinite(dwell_s) or dwell_s <= 0.0 or dwell_s > 600.0:
        raise SignalValueError(f"dwell_s must be more than 0 and at most 600 s, got {float(dwell_s):g}.")
    if not np.isfinite(gap_s) or gap_s < 0.0 or gap_s > 600.0:
        raise SignalValueError(f"gap_s must be from 0 to 600 s, got {float(gap_s):g}.")
    n_dwell = max(1, int(round(dwell_s * fs)))
    n_gap = int(round(gap_s * fs))
    if f.size * (n_dwell + n_gap) + n_gap > 3600 * fs:
        raise SignalValueError("stepped tones would last more than an hour; use fewer tones or a shorter dwell.")
    env = _ramp(n_dwell, _ramp_len(ramp_s, fs))
    t = np.arange(n_dwell, dtype=np.float64) / fs
    total = n_gap + f.size * (n_dwell + n_gap)
    x = np.zeros(total)
    starts = np.empty(f.size)
    for i, fi in enumerate(f):
        s = n_gap + i * (n_dwell + n_gap)
        x[s:s + n_dwell] = env * np.sin(2.0 * np.pi * fi * t)
        starts[i] = s / fs
    sig = _finish(x, fs, f, peak)
    return SteppedTones(signal=sig, starts_s=starts, stops_s=starts + n_dwell / fs)


def _ramp_len(ramp_s: float, fs: int) -> int:
    r = float(ramp_s)
    if not np.isfinite(r) or r < 0.0 or r > 10.0:
        raise SignalValueError(f"ramp_s must be from 0 to 10 s, got {ramp_s}.")
    return int(round(r * fs))
