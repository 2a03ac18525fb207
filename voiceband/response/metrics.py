"""Figures read off a measured magnitude response: passband level, edges, ripple.

Conventions (decided once, used for sweeps and tones alike):

* **Passband level**: the largest value of the magnitude after averaging power over
  ±1/24 octave (so one noisy point cannot set it).  ``magnitude_db`` is reported
  relative to it, so the passband peak reads about 0 dB.
* **Edges**: walking outward from that peak, the first frequencies where the response
  falls 3 dB and 10 dB below the passband level, interpolated linearly in dB against
  log frequency.  An edge outside the measured band is None ("not measurable").
* **Ripple**: the peak-to-valley variation between the outermost response peaks (of at
  least 0.1 dB prominence) inside the −3 dB passband; 0 for a passband with a single
  peak (a maximally flat, Butterworth-like response).  For a Chebyshev type I filter
  this is its design ripple.

References
----------
−3 dB band edges relative to the passband peak, and passband ripple as the
peak-to-valley variation of an equiripple passband, are textbook filter definitions
(e.g. A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal Processing*, 3rd ed.,
section 7.2; from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["ResponseEdges", "passband_level_db", "response_edges", "passband_ripple_db", "RIPPLE_PROMINENCE_DB"]

#: Smallest peak prominence counted as ripple (dB).
RIPPLE_PROMINENCE_DB = 0.1


@dataclass(frozen=True)
class ResponseEdges:
    """Passband edges in Hz; None where the response does not fall that far inside the measured band."""

    low_3db: float | None
    high_3db: float | None
    low_10db: float | None
    high_10db: float | None


def passband_level_db(frequencies_hz: np.ndarray, magnitude_db: np.ndarray) -> tuple[float, int]:
    """(level in dB, index of the peak) of the ±1/24-octave power-smoothed magnitude.

    NaN points are ignored.
    """
    f = np.asarray(frequencies_hz, dtype=np.float64)
    m = np.asarray(magnitude_db, dtype=np.float64)
    p = np.where(np.isfinite(m), 10.0 ** (m / 10.0), 0.0)
    ok = np.isfinite(m).astype(np.float64)
    lf = np.log2(f)
    lo = np.searchsorted(lf, lf - 1.0 / 24.0, side="left")
    hi = np.searchsorted(lf, lf + 1.0 / 24.0, side="right")
    cp = np.concatenate(([0.0], np.cumsum(p)))
    co = np.concatenate(([0.0], np.cumsum(ok)))
    with np.errstate(invalid="ignore", divide="ignore"):
        smooth = (cp[hi] - cp[lo]) / (co[hi] - co[lo])
    smooth = np.where(np.isfinite(m) & (smooth > 0.0), smooth, np.nan)
    if not np.any(np.isfinite(smooth)):
        return float("nan"), 0
    i = int(np.nanargmax(smooth))
    return float(10.0 * np.log10(smooth[i])), i


def _crossing(f: np.ndarray, m: np.ndarray, start: int, step: int, level: float) -> float | None:
    i = start
    while 0 <= i + step < m.size:
        j = i + step
        if np.isfinite(m[j]) and m[j] < level:
            if not np.isfinite(m[i]):
                return float(f[j])
            u = (m[i] - level) / (m[i] - m[j])
            return float(2.0 ** (np.log2(f[i]) + u * (np.log2(f[j]) - np.log2(f[i]))))
        i = j
    return None


def response_edges(frequencies_hz: np.ndarray, magnitude_db: np.ndarray, peak_index: int) -> ResponseEdges:
    """−3 dB and −10 dB edges of a magnitude already normalised to its passband level.

    From ``peak_index`` the response is followed down and up in frequency to its first
    crossing of each level.
    """
    f = np.asarray(frequencies_hz, dtype=np.float64)
    m = np.asarray(magnitude_db, dtype=np.float64)
    return ResponseEdges(
        low_3db=_crossing(f, m, peak_index, -1, -3.0),
        high_3db=_crossing(f, m, peak_index, +1, -3.0),
        low_10db=_crossing(f, m, peak_index, -1, -10.0),
        high_10db=_crossing(f, m, peak_index, +1, -10.0),
    )


def passband_ripple_db(frequencies_hz: np.ndarray, magnitude_db: np.ndarray, edges: ResponseEdges) -> float | None:
    """Peak-to-valley ripple between the outermost peaks inside the −3 dB passband.

    The passband runs from ``edges.low_3db`` to ``edges.high_3db`` (or to the ends of the
    measured band where an edge is None).  Returns 0.0 when the passband holds fewer
    than two peaks of at least 0.1 dB prominence, None with fewer than three points.
    """
    from .signaltools import find_peaks

    f = np.asarray(frequencies_hz, dtype=np.float64)
    m = np.asarray(magnitude_db, dtype=np.float64)
    lo = edges.low_3db if edges.low_3db is not None else f[0]
    hi = edges.high_3db if edges.high_3db is not None else f[-1]
    sel = (f >= lo) & (f <= hi) & np.isfinite(m)
    mm = m[sel]
    if mm.size < 3:
        return None
    floor = float(mm.min()) - 1.0  # pad so a peak at either end of the passband counts
    peaks = find_peaks(np.concatenate(([floor], mm, [floor])), prominence=RIPPLE_PROMINENCE_DB)
    peaks = peaks - 1
    if peaks.size < 2:
        return 0.0
    inner = mm[peaks[0]:peaks[-1] + 1]
    return float(np.max(mm[peaks]) - np.min(inner))
