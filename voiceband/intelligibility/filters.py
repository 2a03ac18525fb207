"""Band gains of a filter for the SII: power-averaging |H|^2 over each band.

A transmit chain changes the speech reaching the listener by a gain in each SII band (the insertion gain
of ANSI S3.5-1997 clause 3.28 and Eq. 17). These functions turn a frequency response -- from a chain
model or a measured sweep -- into those band gains, so candidate filters can be scored without filtering
any audio.

Why power-averaging matters
---------------------------
How a filter enters the SII changes the answer a great deal. For the one-third-octave procedure, the
normal-effort standard speech spectrum in quiet and a 300-3000 Hz voice channel:

* counting a band as passed when its centre frequency lies in the passband gives SII 0.698;
* a brick-wall filter, band gain = fraction of the band passed, gives 0.783;
* a real filter (8th-order analogue Butterworth band-pass, 16 poles) with the band gain taken as the mean
  of |H|^2 over the band gives 0.891 -- in quiet the SII credits the residual speech on the skirts above
  the internal-noise floor; with a flat receiver noise floor N' = 0 dB it falls to 0.780.

Centre counting ignores the partial bands at both edges, and the brick-wall fraction ignores the skirts;
only the power average of |H|^2 over each band keeps the speech power the listener actually receives,
which is what the SII's band spectrum levels stand for (Eq. 17: E' = E + G with G in power terms).
Judging cutoffs therefore also needs a realistic noise floor (see :mod:`voiceband.intelligibility.channel`).
ANSI S3.5-1997 (clause 1, scope) excludes sharply filtered speech or noise bands: results for steep
filters rest on an extrapolation of the method.
"""

from __future__ import annotations

from typing import Union

import numpy as np

from ..errors import SignalValueError
from .tables import band_procedure

__all__ = ["band_gains_db", "brick_wall_band_gains_db"]


def _check_frequencies(freqs_hz) -> np.ndarray:
    try:
        f = np.asarray(freqs_hz, dtype=np.float64)
    except (TypeError, ValueError):
        raise SignalValueError("freqs_hz must be a 1-D array of frequencies in Hz.") from None
    if f.ndim != 1 or f.size < 2:
        raise SignalValueError(f"freqs_hz must be a 1-D array of at least 2 frequencies; got shape {f.shape}.")
    if not np.all(np.isfinite(f)) or np.any(f < 0):
        raise SignalValueError("freqs_hz must be finite and not negative.")
    if np.any(np.diff(f) <= 0):
        raise SignalValueError("freqs_hz must be strictly increasing.")
    return f


def band_gains_db(
    freqs_hz,
    response,
    *,
    procedure: str = "one-third-octave",
    outside_gain_db: Union[float, None] = None,
) -> np.ndarray:
    """Band gains of a frequency response: 10 log10 of the mean of |H|^2 over each SII band.

    The response is taken as piecewise linear in |H|^2 between the given frequencies and integrated
    exactly over each band's limits (linear frequency, because spectrum levels are per hertz: a flat
    speech spectrum level S in a band becomes S * mean(|H|^2) after the filter).

    Parameters
    ----------
    freqs_hz : array_like, shape (n_freqs,)
        Strictly increasing frequencies, Hz. Use a grid fine enough to resolve the response near its
        edges (for example a few thousand log-spaced points).
    response : array_like, shape (..., n_freqs)
        Complex response H, or its linear magnitude |H| (not dB). Leading dimensions are a batch of
        responses.
    procedure : str, keyword-only
        SII procedure whose band limits are used (Tables 1, 2, 4; base-10 one-third-octave limits for
        Table 3).
    outside_gain_db : float or None, keyword-only
        Gain assumed where a band extends beyond the given frequencies (for example above the Nyquist
        frequency of a digital filter: use ``-inf``). ``None`` (default) raises instead.

    Returns
    -------
    ndarray, shape (..., n_bands)
        Band gains, dB (``-inf`` where no power passes). Add them to the speech (and noise) spectrum
        levels as an insertion gain (ANSI S3.5-1997 Eqs. 17 and 18).

    Raises
    ------
    voiceband.errors.SignalValueError
        Bad frequencies or response, or a band not covered by the frequencies while
        ``outside_gain_db`` is None.

    Notes
    -----
    See the module docstring for why the power average (and not centre counting or brick-wall band
    fractions) is used: 0.698, 0.783 and 0.891 for the same 300-3000 Hz channel in quiet.
    """
    f = _check_frequencies(freqs_hz)
    h = np.asarray(response)
    if h.ndim == 0 or h.shape[-1] != f.size:
        raise SignalValueError(f"response must have {f.size} values on its last axis (one per frequency); got shape {h.shape}.")
    if np.iscomplexobj(h):
        power = np.abs(h) ** 2
    else:
        try:
            mag = h.astype(np.float64)
        except (TypeError, ValueError):
            raise SignalValueError("response must be numbers (complex H or linear magnitude |H|).") from None
        if np.any(mag < 0):
            raise SignalValueError("a real response must be the linear magnitude |H| (not negative; not dB).")
        power = mag * mag
    if not np.all(np.isfinite(power)):
        raise SignalValueError("response contains NaN or infinite values.")

    table = band_procedure(procedure)
    lo, hi = table.lower_hz, table.upper_hz
    f_min, f_max = f[0], f[-1]
    uncovered = (lo < f_min) | (hi > f_max)
    if np.any(uncovered) and outside_gain_db is None:
        first = int(np.flatnonzero(uncovered)[0])
        raise SignalValueError(
            f"freqs_hz span {f_min:g}-{f_max:g} Hz but the {table.centres_hz[first]:g} Hz band needs "
            f"{lo[first]:g}-{hi[first]:g} Hz; extend the frequencies or give outside_gain_db."
        )
    if outside_gain_db is not None and (np.isnan(outside_gain_db) or outside_gain_db == np.inf):
        raise SignalValueError("outside_gain_db must be a finite number of dB or -inf.")

    # Exact integral of the piecewise-linear |H|^2 from f[0] to any frequency g within [f[0], f[-1]].
    seg = 0.5 * (power[..., 1:] + power[..., :-1]) * np.diff(f)
    cum = np.concatenate([np.zeros(power.shape[:-1] + (1,)), np.cumsum(seg, axis=-1)], axis=-1)

    def integral_to(g: np.ndarray) -> np.ndarray:
        j = np.clip(np.searchsorted(f, g, side="right") - 1, 0, f.size - 2)
        w = (g - f[j]) / (f[j + 1] - f[j])
        p_g = power[..., j] * (1.0 - w) + power[..., j + 1] * w
        return cum[..., j] + 0.5 * (power[..., j] + p_g) * (g - f[j])

    a = np.clip(lo, f_min, f_max)
    b = np.clip(hi, f_min, f_max)
    inside = integral_to(b) - integral_to(a)
    covered_hz = b - a
    outside_power = 0.0 if outside_gain_db is None else 10.0 ** (outside_gain_db / 10.0)
    total = inside + outside_power * ((hi - lo) - covered_hz)
    mean_power = np.maximum(total, 0.0) / (hi - lo)
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(mean_power)


def brick_wall_band_gains_db(low_hz: float, high_hz: float, *, procedure: str = "one-third-octave") -> np.ndarray:
    """Band gains of an ideal brick-wall band-pass: 10 log10 of the fraction of each band passed.

    This is :func:`band_gains_db` of a response equal to 1 inside ``[low_hz, high_hz]`` and 0 outside,
    computed exactly. With the normal-effort standard speech spectrum in quiet, 300-3000 Hz gives
    SII 0.783 (one-third-octave procedure).

    Parameters
    ----------
    low_hz, high_hz : float
        Passband edges, Hz, ``0 <= low_hz < high_hz``.
    procedure : str, keyword-only
        SII procedure.

    Returns
    -------
    ndarray, shape (n_bands,)
        Gains in dB, ``-inf`` for bands entirely outside the passband.
    """
    if not (np.isfinite(low_hz) and np.isfinite(high_hz) and 0 <= low_hz < high_hz):
        raise SignalValueError(f"need 0 <= low_hz < high_hz (finite); got {low_hz!r} and {high_hz!r}.")
    table = band_procedure(procedure)
    lo, hi = table.lower_hz, table.upper_hz
    fraction = np.clip((np.minimum(hi, high_hz) - np.maximum(lo, low_hz)) / (hi - lo), 0.0, 1.0)
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(fraction)
