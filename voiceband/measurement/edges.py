"""Passband edges of a transmit chain from a fine long-term speech spectrum, with uncertainty.

The chain's response is not observable in a speech recording; it is estimated as the
speech spectrum (noise removed by power subtraction) minus a reference long-term speech
spectrum fitted to the talker (common practice when no test signal is available; trade
notes section 7).  One-third-octave bands are too coarse for this: a band is wider than
the distance from a steep filter's -3 to its -20 dB point.  Here:

1. **Fine spectrum.** The speech PSD (Welch, a few Hz resolution) minus the noise PSD
   (power subtraction, floored at :data:`FLOOR_DB_RE_NOISE` below the noise: a bin where
   speech is not above the noise is "hidden"), averaged in power over 1/12-octave windows
   (never fewer than 3 bins) on a grid of 48 points per octave from 20 Hz to Nyquist.
2. **Reference.** The ANSI S3.5-1997 Table 3 spectrum at the vocal effort fitted to the
   recording (:func:`voiceband.measurement.bandwidth.fit_vocal_effort` via
   ``passband_edges(reference="auto")``), as spectrum level interpolated in log frequency.
3. **Response** ``R = 10 log10(S) - reference``; passband level = median of the best two
   octaves' worth of ``R`` in 250-4000 Hz.
4. **Edge** = where ``R`` first falls :data:`DROP_DB` below the passband level, walking
   out from the passband maximum, interpolated between grid points.  Edges between the
   last one-third-octave band centre and Nyquist are found (the grid runs to Nyquist).
5. **Uncertainty.** A talker departs from the reference by a few dB
   (:data:`TALKER_SPREAD_DB`, common practice: talker-to-talker spread of the LTASS), so
   the edge lies where ``R`` crosses ``-DROP_DB +/- TALKER_SPREAD_DB``; those crossings are
   the range.  A channel skirt is steeper (tens of dB per octave) than any voice's
   long-term spectrum, so a steep edge gives a narrow range however the talker departs; a
   gentle roll-off (first-order RC) gives a wide one.  Where the spectrum is hidden in
   noise, or lies below the talker's lowest fundamental (no speech energy there whatever
   the chain), the range opens to the end of the analysed span.
6. **Knee.** The steepest slope of ``R`` inside the range (dB/octave) is reported; an edge
   whose range is wider than :data:`CERTAIN_RANGE_OCTAVES` or whose knee is gentler than
   :data:`STEEP_DB_PER_OCTAVE` is marked uncertain.

Pure numpy; no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

__all__ = [
    "DROP_DB",
    "TALKER_SPREAD_DB",
    "STEEP_DB_PER_OCTAVE",
    "CERTAIN_RANGE_OCTAVES",
    "FLOOR_DB_RE_NOISE",
    "Edge",
    "FineEdges",
    "smooth_log_spectrum",
    "fine_edges",
]

#: Edge criterion: dB below the passband level.
DROP_DB = 10.0
#: Allowed departure of a talker's long-term spectrum from the fitted reference at an edge (dB).
TALKER_SPREAD_DB = 8.0
#: Knee steeper than this (dB/octave) marks a channel edge rather than a talker's roll-off.
STEEP_DB_PER_OCTAVE = 18.0
#: A range wider than this (octaves) marks the edge uncertain.
CERTAIN_RANGE_OCTAVES = 0.5
#: Power-subtracted speech is floored this far below the noise PSD (dB).
FLOOR_DB_RE_NOISE = -20.0
#: Grid density (points per octave) and smoothing width (octaves).
POINTS_PER_OCTAVE = 48
SMOOTH_OCTAVES = 1.0 / 12.0
#: Lowest frequency analysed (Hz).
LOW_LIMIT_HZ = 20.0
#: Span in which the passband level is taken (Hz).
PASSBAND_SPAN_HZ = (250.0, 4000.0)
#: A point counts as hidden when the speech PSD is less than this factor above the noise PSD.
_HIDDEN_RATIO = 0.25
#: Below this fraction of the talker's 5th-percentile F0 there is no speech to see.
_F0_FRACTION = 0.9


@dataclass(frozen=True)
class Edge:
    """One passband edge.

    Attributes
    ----------
    hz : float or None
        Best estimate of the -10 dB point (Hz); ``None`` when the response does not fall
        that far inside the analysed span.
    range_hz : (float, float) or None
        Interval that holds the edge given the talker's possible departure from the
        reference (Hz).
    knee_db_per_octave : float or None
        Steepest slope magnitude of the estimated response inside the range.
    certain : bool
        Narrow range and a steep knee.
    limited_by : str or None
        ``"noise"`` (the spectrum is hidden in noise beyond), ``"talker"`` (below the
        talker's lowest fundamental), ``"span"`` (the analysed span ends), or ``None``.
    """

    hz: Optional[float]
    range_hz: Optional[tuple]
    knee_db_per_octave: Optional[float]
    certain: bool
    limited_by: Optional[str]


@dataclass(frozen=True)
class FineEdges:
    """Both edges, the grid they were found on and the response estimate."""

    low: Edge
    high: Edge
    drop_db: float
    reference: str
    freqs_hz: np.ndarray
    response_db: np.ndarray
    span_hz: tuple


def smooth_log_spectrum(psd, freqs_hz, grid_hz, *, octaves: float = SMOOTH_OCTAVES) -> np.ndarray:
    """Mean PSD over windows ``grid * 2**(+/-octaves/2)`` (at least 3 bins wide), by
    fractional-bin integration of the cumulative power."""
    f = np.asarray(freqs_hz, dtype=float)
    p = np.asarray(psd, dtype=float)
    df = f[1] - f[0]
    b = np.concatenate(([max(f[0] - df / 2, 0.0)], f + df / 2))
    c = np.concatenate(([0.0], np.cumsum(p * df)))
    g = np.asarray(grid_hz, dtype=float)
    half = np.maximum(g * (2.0 ** (octaves / 2) - 2.0 ** (-octaves / 2)) / 2.0, 1.5 * df)
    lo = np.clip(g - half, b[0], b[-1])
    hi = np.clip(g + half, b[0], b[-1])
    width = np.maximum(hi - lo, 1e-12)
    return (np.interp(hi, b, c) - np.interp(lo, b, c)) / width


def _reference_db(grid_hz: np.ndarray, effort_index: Optional[float]) -> tuple[np.ndarray, str]:
    from ..reference_spectra import effort_band_levels_db, reference_band_levels_db

    if effort_index is None:
        levels = reference_band_levels_db("byrne1994")
        label = "byrne1994"
    else:
        levels = effort_band_levels_db(float(effort_index))
        label = f"ansi_s3.5 effort {float(effort_index):.2f} (fitted)"
    sp = levels.as_spectrum()
    centre = np.asarray(sp.bands.centre_hz, dtype=float)
    spectrum = np.asarray(sp.levels_db, dtype=float)
    return np.interp(np.log2(grid_hz), np.log2(centre), spectrum), label


def _crossing(logf: np.ndarray, r: np.ndarray, start: int, step: int, level: float) -> Optional[float]:
    # Walk from `start` in direction `step` until r falls below `level`; interpolate in log f.
    i = start
    n = r.size
    while 0 <= i + step < n:
        j = i + step
        if r[j] < level:
            t = (r[i] - level) / (r[i] - r[j])
            return float(2.0 ** (logf[i] + t * (logf[j] - logf[i])))
        i = j
    return None


def fine_edges(
    freqs_hz,
    speech_psd,
    noise_psd=None,
    *,
    effort_index: Optional[float] = None,
    f0_low_hz: Optional[float] = None,
    f0_median_hz: Optional[float] = None,
    drop_db: float = DROP_DB,
) -> Optional[FineEdges]:
    """Estimate both passband edges from a fine speech PSD (method in the module docstring).

    Parameters
    ----------
    freqs_hz : array_like, shape (n,)
        Uniform bin frequencies 0 ... fs/2 (Hz).
    speech_psd : array_like, shape (n,)
        Long-term PSD of the speech (full-scale units squared per Hz), noise included.
    noise_psd : array_like, shape (n,) or None
        PSD of the noise, subtracted in power.
    effort_index : float or None, keyword-only
        Fitted vocal effort 0-3 (ANSI S3.5-1997 Table 3 scale); ``None`` uses Byrne (1994).
    f0_low_hz : float or None, keyword-only
        The talker's low fundamental (e.g. 5th percentile); below it the range of a low
        edge opens to the span's low end.
    drop_db : float, keyword-only

    Returns
    -------
    FineEdges or None
        ``None`` without speech power above the noise.
    """
    f = np.asarray(freqs_hz, dtype=float)
    s = np.asarray(speech_psd, dtype=float)
    nyq = float(f[-1])
    top = nyq * 0.98
    if top <= LOW_LIMIT_HZ * 4:
        return None
    grid = LOW_LIMIT_HZ * 2.0 ** (np.arange(int(math.log2(top / LOW_LIMIT_HZ) * POINTS_PER_OCTAVE) + 1) / POINTS_PER_OCTAVE)
    sp = smooth_log_spectrum(s, f, grid)
    if noise_psd is not None:
        npsd = smooth_log_spectrum(np.asarray(noise_psd, dtype=float), f, grid)
        clean = sp - npsd
        hidden = clean < _HIDDEN_RATIO * npsd
        clean = np.maximum(clean, npsd * 10 ** (FLOOR_DB_RE_NOISE / 10))
    else:
        clean = sp
        hidden = np.zeros(grid.size, dtype=bool)
    positive = clean > 0
    if not np.any(positive & ~hidden):
        return None
    tiny = float(np.max(clean)) * 1e-12
    level = 10.0 * np.log10(np.maximum(clean, tiny))
    ref, label = _reference_db(grid, effort_index)
    r = level - ref
    logf = np.log2(grid)
    # Points where nothing can be said: hidden in noise, below the talker's lowest F0.
    below_f0 = grid < (_F0_FRACTION * f0_low_hz) if f0_low_hz else np.zeros(grid.size, dtype=bool)
    # Smooth the response over a window that always spans a harmonic spacing (a voiced
    # talker's long-term spectrum is a comb at multiples of F0) and at least 1/6 octave.
    rs = _smooth_db(r, grid, f0_median_hz)
    span = (grid >= PASSBAND_SPAN_HZ[0]) & (grid <= min(PASSBAND_SPAN_HZ[1], top)) & ~hidden
    if np.count_nonzero(span) < POINTS_PER_OCTAVE // 2:
        span = ~hidden
    vals = np.sort(rs[span])[::-1]
    pb = float(np.median(vals[: 2 * POINTS_PER_OCTAVE]))
    near_top = np.flatnonzero(span & (rs >= pb - 3.0))
    if TILT_CORRECTION and near_top.size >= POINTS_PER_OCTAVE:
        # The talker's own tilt against the reference, fitted over the passband, removed.
        k = np.polyfit(logf[near_top], rs[near_top], 1)[0]
        mid = float(np.median(logf[near_top]))
        rs = rs - k * (logf - mid)
        vals = np.sort(rs[span])[::-1]
        pb = float(np.median(vals[: 2 * POINTS_PER_OCTAVE]))
        near_top = np.flatnonzero(span & (rs >= pb - 3.0))
    i_mid = int(near_top[near_top.size // 2]) if near_top.size else int(np.flatnonzero(span)[0])
    i_lo, i_hi = int(near_top[0]), int(near_top[-1])

    def one(step: int) -> Edge:
        start = i_hi if step > 0 else i_lo
        thr = pb - drop_db
        hz = _stay_crossing(logf, rs, start, step, thr)
        inner = _stay_crossing(logf, rs, start, step, thr + TALKER_SPREAD_DB)
        outer = _stay_crossing(logf, rs, start, step, thr - TALKER_SPREAD_DB)
        if inner is None:
            return Edge(None, None, None, False, "span")
        if outer is None:
            outer = nyq if step > 0 else float(grid[0])
        # Smoothing spreads passband power outwards over its half-width, which moves a
        # crossing outwards: the range reaches that much further in.
        inner = inner * 2.0 ** (-step * _half_width_octaves(inner, f0_median_hz))
        a, b = sorted((inner, outer))
        sel = (grid >= a) & (grid <= b)
        knee = None
        if np.count_nonzero(sel) >= 3:
            knee = float(np.max(np.abs(np.gradient(rs, logf)[sel])))
        return Edge(hz, (float(a), float(b)), knee, False, None)

    low = _limit(one(-1), -1, grid, hidden, below_f0, nyq)
    high = _limit(one(+1), +1, grid, hidden, below_f0, nyq)
    return FineEdges(
        low=low,
        high=high,
        drop_db=float(drop_db),
        reference=label,
        freqs_hz=grid,
        response_db=rs - pb,
        span_hz=(float(grid[0]), nyq),
    )


#: Remove the talker's tilt against the reference over the passband.
TILT_CORRECTION = True
#: Smoothing window at least this many F0 spacings wide.
F0_WINDOW = 0.5
#: Smoothing of the response: at least this many octaves, and at least one F0 spacing.
RESPONSE_SMOOTH_OCTAVES = 1.0 / 12.0
#: A crossing counts only if the response stays below the level for this many octaves
#: (or to the end of the span): a talker's narrow dip is not an edge.
STAY_OCTAVES = 0.25


def _half_width_octaves(f_hz, f0_hz: Optional[float]):
    """Half-width (octaves) of the response smoothing window at ``f_hz``."""
    hw = RESPONSE_SMOOTH_OCTAVES / 2
    if f0_hz:
        hw = np.maximum(hw, np.log2(1.0 + F0_WINDOW * 0.5 * f0_hz / np.asarray(f_hz, dtype=float)))
    return hw


def _smooth_db(r: np.ndarray, grid: np.ndarray, f0_hz: Optional[float]) -> np.ndarray:
    p = 10.0 ** (r / 10.0)
    c = np.concatenate(([0.0], np.cumsum(p)))
    logf = np.log2(grid)
    half_oct = np.broadcast_to(_half_width_octaves(grid, f0_hz), grid.shape)
    lo = np.searchsorted(logf, logf - half_oct, side="left")
    hi = np.searchsorted(logf, logf + half_oct, side="right")
    mean = (c[hi] - c[lo]) / np.maximum(hi - lo, 1)
    return 10.0 * np.log10(np.maximum(mean, 1e-300))


def _stay_crossing(logf, r, start, step, level) -> Optional[float]:
    n = r.size
    stay = int(round(STAY_OCTAVES * POINTS_PER_OCTAVE))
    i = start
    while 0 <= i + step < n:
        j = i + step
        if r[j] < level:
            seg = r[j: j + step * stay: step] if step > 0 else r[max(j - stay, 0): j + 1]
            if np.all(seg < level + 1.0):
                t = (r[i] - level) / (r[i] - r[j])
                return float(2.0 ** (logf[i] + t * (logf[j] - logf[i])))
        i = j
    return None


#: Skirt orders tried (a Butterworth-like skirt -10 log10(1 + (f/fc)**(2 n)); n = 1 is a first-order RC).
_ORDERS = (0.5, 0.75, 1.0, 1.5, 2.0, 3.0, 4.0, 5.0, 6.0, 8.0, 10.0)
#: Fit cost within this factor of the best marks the candidates that span the range.
RANGE_COST_FACTOR = 1.25


def _skirt_db(logf: np.ndarray, log_fc: np.ndarray, n: np.ndarray, high: bool) -> np.ndarray:
    # -10 log10(1 + (f/fc)^(2n)) (high) or (fc/f)^(2n) (low), shape (candidates, points).
    d = (logf[None, :] - log_fc[:, None]) if high else (log_fc[:, None] - logf[None, :])
    e = np.minimum(2.0 * n[:, None] * d * math.log10(2.0), 30.0)
    return -10.0 * np.log10(1.0 + 10.0 ** e)


def _edge_of(logf_fine: np.ndarray, low_db: np.ndarray, high_db: np.ndarray, drop: float):
    total = low_db + high_db
    k = int(np.argmax(total))
    thr = total[k] - drop
    lo = hi = None
    below = np.flatnonzero(total[:k] < thr)
    if below.size:
        j = below[-1]
        t = (total[j + 1] - thr) / (total[j + 1] - total[j])
        lo = 2.0 ** (logf_fine[j + 1] + t * (logf_fine[j] - logf_fine[j + 1]))
    above = np.flatnonzero(total[k:] < thr)
    if above.size:
        j = k + above[0]
        t = (total[j - 1] - thr) / (total[j - 1] - total[j])
        hi = 2.0 ** (logf_fine[j - 1] + t * (logf_fine[j] - logf_fine[j - 1]))
    return lo, hi


def _fit_skirts(logf, r, use, hidden, hidden_bound, nyq):
    """Least-squares fit of level + tilt + low skirt + high skirt to the response r (dB)."""
    if np.count_nonzero(use) < POINTS_PER_OCTAVE:
        return None
    x = logf - math.log2(1000.0)
    lf_min, lf_max = math.log2(LOW_LIMIT_HZ), math.log2(nyq * 1.5)
    step = 1.0 / POINTS_PER_OCTAVE
    fcs_low = np.arange(lf_min, math.log2(2500.0), step)
    fcs_high = np.arange(math.log2(400.0), lf_max, step)
    orders = np.array(_ORDERS)

    def candidates(fcs):
        return np.repeat(fcs, orders.size), np.tile(orders, fcs.size)

    cand_low = candidates(fcs_low)
    cand_high = candidates(fcs_high)
    xu, ru = x[use], r[use]
    A = np.vstack([np.ones(xu.size), xu]).T
    pinv = np.linalg.pinv(A)

    def costs(fixed_db, cand, high):
        m = fixed_db[None, :] + _skirt_db(logf, cand[0], cand[1], high)  # (c, points)
        res_target = ru[None, :] - m[:, use]
        coef = res_target @ pinv.T  # (c, 2)
        resid = res_target - coef @ A.T
        cost = np.sum(resid * resid, axis=1)
        if hidden_bound is not None and np.any(hidden):
            full = m[:, hidden] + coef[:, :1] + coef[:, 1:2] * x[hidden][None, :]
            excess = np.maximum(full - hidden_bound[hidden][None, :], 0.0)
            cost = cost + np.sum(excess * excess, axis=1)
        return cost, m

    low_db = np.zeros(logf.size)
    high_db = np.zeros(logf.size)
    best_low = best_high = None
    for _ in range(3):
        c_h, m_h = costs(low_db, cand_high, True)
        ih = int(np.argmin(c_h))
        high_db = _skirt_db(logf, cand_high[0][ih:ih + 1], cand_high[1][ih:ih + 1], True)[0]
        c_l, m_l = costs(high_db, cand_low, False)
        il = int(np.argmin(c_l))
        low_db = _skirt_db(logf, cand_low[0][il:il + 1], cand_low[1][il:il + 1], False)[0]
        best_low, best_high = (c_l, il), (c_h, ih)
    # Edges of the best model, and of every candidate whose cost is near the best (the range).
    fine = np.arange(lf_min, lf_max, 1.0 / 480.0)

    def side(cand, costs_, ib, high):
        keep = np.flatnonzero(costs_ <= costs_[ib] * RANGE_COST_FACTOR)
        other = (_skirt_db(fine, cand_low[0][best_low[1]:best_low[1] + 1], cand_low[1][best_low[1]:best_low[1] + 1], False)[0]
                 if high else
                 _skirt_db(fine, cand_high[0][best_high[1]:best_high[1] + 1], cand_high[1][best_high[1]:best_high[1] + 1], True)[0])
        own = _skirt_db(fine, cand[0][keep], cand[1][keep], high)
        edges = []
        for row in own:
            lo, hi = _edge_of(fine, row if not high else other, other if not high else row, DROP_DB)
            edges.append(hi if high else lo)
        best = edges[int(np.flatnonzero(keep == ib)[0])]
        vals = [e for e in edges if e is not None]
        order = float(cand[1][ib])
        rng_ = (min(vals), max(vals)) if vals else None
        if vals and len(vals) < len(edges):
            rng_ = (rng_[0], nyq) if high else (LOW_LIMIT_HZ, rng_[1])
        return best, rng_, order

    lo_hz, lo_range, lo_n = side(cand_low, best_low[0], best_low[1], False)
    hi_hz, hi_range, hi_n = side(cand_high, best_high[0], best_high[1], True)
    if hi_hz is not None and hi_hz >= nyq:
        hi_hz = None
    model = low_db + high_db
    model = model - model.max()
    low = Edge(lo_hz, lo_range, 6.02 * lo_n, False, None)
    high = Edge(hi_hz, hi_range, 6.02 * hi_n, False, None)
    return low, high, model


def _limit(e: Edge, step: int, grid, hidden, below_f0, nyq) -> Edge:
    """Open the range where the spectrum beyond the edge cannot be seen; decide certainty."""
    limited = None
    rng_ = e.range_hz
    if rng_ is not None:
        a, b = rng_
        outer = b if step > 0 else a
        k = int(np.clip(np.searchsorted(grid, outer), 0, grid.size - 1))
        if hidden[k]:
            limited = "noise"
        elif step < 0 and below_f0[k]:
            limited = "talker"
        if limited is not None:
            rng_ = (a, nyq) if step > 0 else (float(grid[0]), b)
        if b > nyq:
            rng_ = (rng_[0], nyq)
    hz = e.hz
    if hz is None and limited == "noise" and rng_ is not None:
        # The speech sinks into the noise before falling 10 dB: the best that can be said is
        # where it sinks (the range's inner end), reported as uncertain.
        hz = rng_[0] if step > 0 else rng_[1]
    e = Edge(hz, e.range_hz, e.knee_db_per_octave, e.certain, e.limited_by)
    width = math.log2(rng_[1] / rng_[0]) if rng_ is not None and rng_[0] > 0 else math.inf
    knee = e.knee_db_per_octave
    certain = (e.hz is not None and limited is None and width <= CERTAIN_RANGE_OCTAVES
               and knee is not None and knee >= STEEP_DB_PER_OCTAVE)
    return Edge(e.hz, rng_, knee, certain, limited)
