"""Seeded noise generators: white, pink, receiver hiss, mains hum, impulsive static crashes.

Levels are RMS levels in dBFS in the project convention (0 dBFS = RMS of a full-scale
square wave, i.e. 10·log10(mean x²)), except :func:`static_crashes`, whose level is the
sample peak of the loudest crash.  Every generator is deterministic from ``seed``.
"""

from __future__ import annotations

import numpy as np

from .. import validate
from ..errors import SignalValueError

__all__ = [
    "DEFAULT_HUM_HARMONICS_DB",
    "white_noise",
    "pink_noise",
    "receiver_hiss",
    "mains_hum",
    "static_crashes",
]

#: Default hum harmonic levels, dB re the fundamental, for harmonics 1, 2, 3, 4, 5.
#: An illustrative pattern (common practice): a strong 2nd harmonic from full-wave rectifier
#: ripple and odd harmonics from transformer magnetisation; not a
#: measured or standardised spectrum.
DEFAULT_HUM_HARMONICS_DB = (0.0, -3.0, -10.0, -16.0, -20.0)


def _check(duration_s: float, sample_rate_hz: int) -> int:
    fs = validate.sample_rate_hz(sample_rate_hz)
    n = validate.duration_samples(duration_s, fs, maximum_s=3600.0)
    if n < 2:
        raise SignalValueError(f"duration_s = {duration_s} s gives fewer than two samples.")
    return n


def _check_level(level_dbfs: float, name: str = "level_dbfs") -> float:
    v = float(level_dbfs)
    if not np.isfinite(v) or v > 20.0 or v < -200.0:
        raise SignalValueError(f"{name} must be from -200 to +20 dBFS, got {level_dbfs}.")
    return v


def _to_rms(x: np.ndarray, level_dbfs: float) -> np.ndarray:
    ms = float(np.mean(x * x))
    if ms == 0.0:
        return x
    return x * np.sqrt(10.0 ** (level_dbfs / 10.0) / ms)


def white_noise(duration_s: float, sample_rate_hz: int, *, level_dbfs: float = -20.0, seed: int = 0) -> np.ndarray:
    """Gaussian white noise scaled to exactly ``level_dbfs`` RMS.

    Returns
    -------
    numpy.ndarray
        1-D float64.  Its band levels rise 3.01 dB per octave in constant-percentage bands
        (flat power spectral density).
    """
    n = _check(duration_s, sample_rate_hz)
    lvl = _check_level(level_dbfs)
    rng = np.random.default_rng(seed)
    return _to_rms(rng.standard_normal(n), lvl)


def pink_noise(
    duration_s: float,
    sample_rate_hz: int,
    *,
    level_dbfs: float = -20.0,
    seed: int = 0,
    low_hz: float = 10.0,
) -> np.ndarray:
    """Pink noise: power spectral density ∝ 1/f, exactly −3.01 dB per octave.

    White Gaussian noise is shaped in one FFT over the whole signal by a gain 1/√f, so the
    expected slope is exact (not an IIR approximation).  Below ``low_hz`` the gain is held at
    its ``low_hz`` value and DC is removed, so the RMS is not dominated by sub-audio noise.

    Returns
    -------
    numpy.ndarray
        1-D float64 at ``level_dbfs`` RMS; one-third-octave band levels are flat on average.
    """
    n = _check(duration_s, sample_rate_hz)
    lvl = _check_level(level_dbfs)
    if not np.isfinite(low_hz) or low_hz <= 0.0:
        raise SignalValueError(f"low_hz must be positive, got {low_hz}.")
    rng = np.random.default_rng(seed)
    spec = np.fft.rfft(rng.standard_normal(n))
    f = np.fft.rfftfreq(n, 1.0 / sample_rate_hz)
    gain = 1.0 / np.sqrt(np.maximum(f, float(low_hz)))
    gain[0] = 0.0
    x = np.fft.irfft(spec * gain, n)
    return _to_rms(x, lvl)


def receiver_hiss(
    duration_s: float,
    sample_rate_hz: int,
    *,
    low_hz: float = 300.0,
    high_hz: float = 3000.0,
    order: int = 4,
    level_dbfs: float = -40.0,
    seed: int = 0,
) -> np.ndarray:
    """Receiver hiss: white noise through a Butterworth band-pass (the receiver's passband).

    Parameters
    ----------
    low_hz, high_hz : float
        −3 dB edges of the passband; ``high_hz`` below the Nyquist frequency.
    order : int
        Butterworth prototype order (the band-pass has twice as many poles), 1–10.
    level_dbfs : float
        RMS level of the result.

    Raises
    ------
    SignalValueError
        Edges out of order or beyond Nyquist, or a bad order.
    """
    from scipy import signal

    n = _check(duration_s, sample_rate_hz)
    lvl = _check_level(level_dbfs)
    nyq = sample_rate_hz / 2.0
    if not (0.0 < float(low_hz) < float(high_hz) < nyq):
        raise SignalValueError(
            f"the hiss passband must satisfy 0 < low_hz < high_hz < {nyq:g} Hz, got {low_hz}–{high_hz} Hz."
        )
    if int(order) != order or not 1 <= int(order) <= 10:
        raise SignalValueError(f"order must be a whole number from 1 to 10, got {order}.")
    sos = signal.butter(int(order), [float(low_hz), float(high_hz)], btype="bandpass", fs=sample_rate_hz, output="sos")
    rng = np.random.default_rng(seed)
    # Run-in of 0.2 s so the filter's start-up transient is not part of the output.
    lead = min(int(0.2 * sample_rate_hz), 4 * n)
    x = signal.sosfilt(sos, rng.standard_normal(n + lead))[lead:]
    return _to_rms(x, lvl)


def mains_hum(
    duration_s: float,
    sample_rate_hz: int,
    *,
    mains_hz: float = 50.0,
    harmonics_db=DEFAULT_HUM_HARMONICS_DB,
    level_dbfs: float = -50.0,
    seed: int = 0,
) -> np.ndarray:
    """Mains hum: a fundamental and its harmonics at given levels, random (seeded) phases.

    Parameters
    ----------
    mains_hz : float
        Mains frequency, 40–70 Hz (50 or 60 Hz in practice, IEC 60038:2009).
    harmonics_db : sequence of float
        Level of harmonic 1, 2, 3 … in dB re the fundamental (the first entry is the
        fundamental itself and is normally 0).  Harmonics at or above Nyquist are left out.
    level_dbfs : float
        RMS level of the **fundamental** alone (a sine of amplitude a reads
        20·log10(a) − 3.01 dBFS).

    Returns
    -------
    numpy.ndarray
        Harmonic k has amplitude √2·10^((level_dbfs + harmonics_db[k−1])/20).

    Raises
    ------
    SignalValueError
        Mains frequency outside 40–70 Hz or an empty harmonic list.
    """
    n = _check(duration_s, sample_rate_hz)
    lvl = _check_level(level_dbfs)
    if not np.isfinite(mains_hz) or not 40.0 <= float(mains_hz) <= 70.0:
        raise SignalValueError(f"mains_hz must be 40–70 Hz, got {mains_hz}.")
    h = np.asarray(harmonics_db, dtype=np.float64).ravel()
    if h.size == 0 or not np.all(np.isfinite(h)):
        raise SignalValueError("harmonics_db must list at least one finite level (the fundamental).")
    rng = np.random.default_rng(seed)
    phases = rng.uniform(0.0, 2.0 * np.pi, h.size)
    t = np.arange(n, dtype=np.float64) / sample_rate_hz
    x = np.zeros(n)
    for k, (rel_db, ph) in enumerate(zip(h, phases), start=1):
        f = k * float(mains_hz)
        if f >= sample_rate_hz / 2.0:
            break
        amp = np.sqrt(2.0) * 10.0 ** ((lvl + rel_db) / 20.0)
        x += amp * np.sin(2.0 * np.pi * f * t + ph)
    return x


def static_crashes(
    duration_s: float,
    sample_rate_hz: int,
    *,
    rate_per_s: float = 0.5,
    peak_dbfs: float = -6.0,
    decay_s: float = 0.03,
    level_spread_db: float = 12.0,
    seed: int = 0,
) -> np.ndarray:
    """Impulsive static crashes: random impulses, each followed by a decaying noise burst.

    Crash times form a Poisson process of ``rate_per_s`` per second.  Each crash is a
    one-sample impulse followed by white noise with an exponential envelope (time constant
    drawn uniformly from 0.5–1.5 × ``decay_s``); crash levels are spread uniformly over
    ``level_spread_db`` below the loudest, which is scaled to ``peak_dbfs`` sample peak.
    This is a qualitative model of atmospheric static, not a standardised one.

    Returns
    -------
    numpy.ndarray
        1-D float64, zero between crashes (all zeros if no crash falls in the duration).

    Raises
    ------
    SignalValueError
        Negative rate or decay, or a bad level.
    """
    n = _check(duration_s, sample_rate_hz)
    peak = _check_level(peak_dbfs, "peak_dbfs")
    if not np.isfinite(rate_per_s) or not 0.0 <= rate_per_s <= 100.0:
        raise SignalValueError(f"rate_per_s must be from 0 to 100 crashes per second, got {rate_per_s}.")
    if not np.isfinite(decay_s) or not 0.0005 <= decay_s <= 2.0:
        raise SignalValueError(f"decay_s must be from 0.0005 to 2 s, got {decay_s}.")
    if not np.isfinite(level_spread_db) or not 0.0 <= level_spread_db <= 60.0:
        raise SignalValueError(f"level_spread_db must be from 0 to 60 dB, got {level_spread_db}.")
    rng = np.random.default_rng(seed)
    fs = sample_rate_hz
    count = rng.poisson(rate_per_s * n / fs)
    x = np.zeros(n)
    if count == 0:
        return x
    starts = np.sort(rng.integers(0, n, count))
    taus = decay_s * rng.uniform(0.5, 1.5, count)
    gains = 10.0 ** (-rng.uniform(0.0, level_spread_db, count) / 20.0)
    gains[rng.integers(0, count)] = 1.0  # the loudest crash sets the peak
    for s, tau, g in zip(starts, taus, gains):
        m = min(n - s, int(np.ceil(8.0 * tau * fs)) + 1)  # 8 time constants: -69 dB
        env = np.exp(-np.arange(m) / (tau * fs))
        burst = 0.35 * rng.standard_normal(m) * env
        burst[0] = 1.0 if rng.random() < 0.5 else -1.0
        x[s:s + m] += g * burst
    return x * (10.0 ** (peak / 20.0) / np.max(np.abs(x)))
