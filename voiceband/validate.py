"""Input validators, written once: sample rate, blocks of samples, durations, finite values, ranges.

Validate once at the boundary (a public function or an accumulator's constructor/``update``)
and let inner helpers trust their callers. Each validator raises
:class:`~voiceband.errors.SignalValueError` with one sentence naming the parameter, the
constraint and the value received, in the user's units; ``name`` lets a caller use the
name the user typed (an option such as ``--rate-hz``).

The sample-rate range is one documented range for the whole project, the range of
recordings voiceband analyses and of the signals it generates: 8000–192000 Hz.

Examples
--------
>>> sample_rate_hz(48000)
48000
>>> sample_rate_hz(4000)
Traceback (most recent call last):
...
voiceband.errors.SignalValueError: sample_rate_hz must be 8000–192000 Hz; got 4000.
"""

from __future__ import annotations

import math
from typing import Optional

import numpy as np

from .errors import SignalValueError

__all__ = [
    "MIN_SAMPLE_RATE_HZ",
    "MAX_SAMPLE_RATE_HZ",
    "sample_rate_hz",
    "block",
    "finite_samples",
    "duration_samples",
    "number",
    "band_levels_db",
]

#: Lowest and highest sample rates (Hz) voiceband reads, analyses and writes.
MIN_SAMPLE_RATE_HZ = 8000
MAX_SAMPLE_RATE_HZ = 192000


def _show(value) -> str:
    # The value as the user would write it (no numpy repr such as np.float64(700.0)).
    if isinstance(value, (bool, np.bool_)):
        return str(bool(value))
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        return f"{float(value):g}"
    return repr(value)


def number(value, *, name: str, low: Optional[float] = None, high: Optional[float] = None,
           unit: str = "", low_inclusive: bool = True) -> float:
    """A finite real number, optionally in ``[low, high]`` (``(low, high]`` with ``low_inclusive=False``).

    >>> number("2.5", name="gain_db")
    2.5
    >>> number(0, name="cutoff_hz", low=0, low_inclusive=False, unit="Hz")
    Traceback (most recent call last):
    ...
    voiceband.errors.SignalValueError: cutoff_hz must be above 0 Hz; got 0.
    """
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise SignalValueError(f"{name} must be a number; got {_show(value)}.") from None
    u = f" {unit}" if unit else ""
    if not math.isfinite(v):
        raise SignalValueError(f"{name} must be a finite number; got {_show(value)}.")
    below = low is not None and ((v < low) if low_inclusive else (v <= low))
    if low is not None and high is not None and (below or v > high):
        rng = f"{_show(low)}–{_show(high)}{u}" if low_inclusive else f"above {_show(low)}{u} and at most {_show(high)}{u}"
        raise SignalValueError(f"{name} must be {rng}; got {_show(value)}.")
    if low is not None and below:
        word = "at least" if low_inclusive else "above"
        raise SignalValueError(f"{name} must be {word} {_show(low)}{u}; got {_show(value)}.")
    if high is not None and v > high:
        raise SignalValueError(f"{name} must be at most {_show(high)}{u}; got {_show(value)}.")
    return v


def sample_rate_hz(value, *, name: str = "sample_rate_hz") -> int:
    """A sample rate in :data:`MIN_SAMPLE_RATE_HZ` … :data:`MAX_SAMPLE_RATE_HZ` Hz, as an int.

    Non-integer rates are refused (no recording format stores one).
    """
    v = number(value, name=name)
    if v != round(v):
        raise SignalValueError(
            f"{name} must be a whole number of hertz ({MIN_SAMPLE_RATE_HZ}–{MAX_SAMPLE_RATE_HZ} Hz); got {_show(value)}.")
    if not MIN_SAMPLE_RATE_HZ <= v <= MAX_SAMPLE_RATE_HZ:
        raise SignalValueError(
            f"{name} must be {MIN_SAMPLE_RATE_HZ}–{MAX_SAMPLE_RATE_HZ} Hz; got {_show(value)}.")
    return int(v)


def block(samples, *, name: str = "samples") -> np.ndarray:
    """One channel of real samples as a 1-D float64 array (no copy when already float64).

    Integer arrays are refused: their full scale depends on the type, so the caller must scale
    them (``x / 32768`` for int16) and say so. Finiteness is checked by :func:`finite_samples`.
    """
    x = np.asarray(samples)
    if x.ndim != 1:
        raise SignalValueError(f"{name} must be one channel (a 1-D array); got an array of shape {x.shape}.")
    if x.dtype == np.float64:
        return x
    if np.issubdtype(x.dtype, np.floating):
        return x.astype(np.float64)
    if np.issubdtype(x.dtype, np.signedinteger):
        full = 2 ** (8 * x.dtype.itemsize - 1)
        raise SignalValueError(
            f"{name} must be floating-point samples with full scale ±1.0; got integers ({x.dtype}): "
            f"divide by {full} (the full scale of {x.dtype}) first.")
    if np.issubdtype(x.dtype, np.unsignedinteger):
        mid = 2 ** (8 * x.dtype.itemsize - 1)
        raise SignalValueError(
            f"{name} must be floating-point samples with full scale ±1.0; got unsigned integers ({x.dtype}): "
            f"subtract {mid} and divide by {mid} first.")
    if x.dtype == np.bool_:
        raise SignalValueError(f"{name} must be floating-point samples with full scale ±1.0; got booleans.")
    raise SignalValueError(f"{name} must be real numbers; got dtype {x.dtype}.")


def finite_samples(x: np.ndarray, *, name: str = "samples") -> np.ndarray:
    """``x`` unchanged if every sample is finite; otherwise one sentence saying where the first bad one is."""
    if x.size and not np.isfinite(x).all():
        i = int(np.flatnonzero(~np.isfinite(x))[0])
        raise SignalValueError(f"{name} contain NaN or infinite values (first at sample {i}).")
    return x


def duration_samples(duration_s, sample_rate_hz: int, *, name: str = "duration_s",
                     minimum_s: float = 0.0, maximum_s: Optional[float] = None) -> int:
    """A duration in seconds, as a whole number of samples at ``sample_rate_hz`` (at least one)."""
    d = number(duration_s, name=name, low=minimum_s, high=maximum_s, unit="s", low_inclusive=minimum_s > 0)
    n = int(round(d * sample_rate_hz))
    if n < 1:
        raise SignalValueError(f"{name} must be at least one sample ({1 / sample_rate_hz:.3g} s); got {_show(duration_s)}.")
    return n


def band_levels_db(values, *, name: str, n_bands: int, procedure: str, minus_inf_ok: bool = True,
                   scalar_ok: bool = False) -> np.ndarray:
    """Levels in dB with ``n_bands`` bands on the last axis (any leading batch axes), as float64.

    ``-inf`` (no power) is accepted when ``minus_inf_ok``; NaN and ``+inf`` never are. With
    ``scalar_ok`` a single number stands for the same level in every band. ``procedure`` names
    the band set in the message (e.g. ``"one-third-octave"``).

    >>> band_levels_db([1.0, -np.inf], name="speech_db", n_bands=2, procedure="test").tolist()
    [1.0, -inf]
    >>> band_levels_db([1.0], name="speech_db", n_bands=2, procedure="octave")
    Traceback (most recent call last):
    ...
    voiceband.errors.SignalValueError: speech_db must have 2 bands on its last axis for the octave procedure; got shape (1,).
    """
    try:
        arr = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError):
        raise SignalValueError(f"{name} must be numbers in dB; got {type(values).__name__}.") from None
    if arr.ndim == 0 and scalar_ok:
        arr = np.broadcast_to(arr, (n_bands,))
    if arr.ndim == 0 or arr.shape[-1] != n_bands:
        raise SignalValueError(
            f"{name} must have {n_bands} bands on its last axis for the {procedure} procedure; got shape {arr.shape}.")
    if minus_inf_ok:
        if np.any(np.isnan(arr)) or np.any(arr == np.inf):
            raise SignalValueError(f"{name} contains NaN or +inf; levels must be finite dB or -inf (no power).")
    elif not np.all(np.isfinite(arr)):
        raise SignalValueError(f"{name} must be finite dB values.")
    return arr
