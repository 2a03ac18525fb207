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
3. **Response** ``R = 10 log10(S) - reference``.  Above the talker's lowest fundamental a
   voiced talker's long-term spectrum is a comb at multiples of F0; its valleys are bridged
   by a closing in dB (running maximum then running minimum over one median F0 spacing),
   which fills valleys narrower than the window but leaves a monotone skirt where it is (an
   average over the comb would spread passband power outwards and move a low edge down).
   ``R`` is then averaged in power over 1/12 octave; the talker's tilt against the
   reference, fitted over the passband, is removed above the passband's centre (below it
   the talker's fundamental, not its source slope, shapes the spectrum).  Passband level = median of the best
   two octaves' worth of ``R`` in 250-4000 Hz.
4. **Edge** = where ``R`` first falls :data:`DROP_DB` below the passband level and stays
   below for :data:`STAY_OCTAVES`, walking out from the passband, interpolated between
   grid points.  Edges between the last one-third-octave band centre and Nyquist are found
   (the grid runs to Nyquist).
5. **Where the speech cannot be seen.**  The walk stops where the speech is hidden in
   noise (speech PSD less than a quarter of the noise PSD) or below 0.9 x the talker's
   5th-percentile F0 (no speech energy there whatever the chain).  An edge not reached by
   then is reported where the speech sinks from sight (carried on along the skirt seen
   last when that is as steep as a channel's, :data:`EXTRAPOLATE_OCTAVES` at most),
   uncertain, with its range open to the end of the analysed span (``limited_by`` "noise" or "talker"): never null while
   the true edge may lie below Nyquist.
6. **Uncertainty.** A talker departs from the reference by a few dB
   (:data:`TALKER_SPREAD_DB`, common practice: talker-to-talker spread of the LTASS), so
   the edge lies where ``R`` crosses ``-DROP_DB +/- TALKER_SPREAD_DB``; those crossings are
   the range.  A channel skirt is steeper (tens of dB per octave) than any voice's
   long-term spectrum, so a steep edge gives a narrow range however the talker departs; a
   gentle roll-off (first-order RC) gives a wide one.  A range opens to the span's end
   only when its outer crossing is not seen before the speech sinks from sight; it
   reaches in to where the speech first falls below the noise itself (there a small error
   of the noise estimate moves the response by dB).  Within :data:`F0_REGION_SPACINGS`
   median F0 of the bottom the talker's own fundamental departs from any reference by
   more than the usual spread, so a low range there reaches up to that many F0 (even past
   where the passband seems to begin) and, when its outer end lies there too, down to the
   bottom of the span ("talker").
7. **Knee.** The steepest slope of ``R`` inside the range (dB/octave) is reported; an edge
   whose range is wider than :data:`CERTAIN_RANGE_OCTAVES`, whose knee is gentler than
   :data:`STEEP_DB_PER_OCTAVE`, or that is limited by noise or the talker is marked
   uncertain.

Pure numpy; no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Optional

import numpy as np

from ..arrays import median

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
    "noise_from_quietest_frames",
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
#: The low range reaches up through this many F0 (median) when its edge lies within them.
F0_REGION_SPACINGS = 2.0
#: Where the walk finds no edge: a point counts as not seen when the speech PSD is less than
#: this factor times the noise PSD (speech frames less than 3 dB above the noise).
_WEAK_RATIO = 1.0
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
        Narrow range, a steep knee, and the whole range seen (not limited).
    limited_by : str or None
        ``"noise"`` (the spectrum is hidden in noise beyond), ``"talker"`` (below the
        talker's lowest fundamental, or near it, where the talker's own spectrum shapes what is
        seen), ``"span"`` (the analysed span ends), or ``None``.
    """

    hz: Optional[float]
    range_hz: Optional[tuple]
    knee_db_per_octave: Optional[float]
    certain: bool
    limited_by: Optional[str]


@dataclass(frozen=True)
class FineEdges:
    """Both edges, the grid they were found on and the response estimate.

    ``noise_from`` says what was subtracted as the noise: ``"pauses"`` (the pause frames'
    spectrum) or ``"quietest frames"`` (no pauses stood out of the noise; see
    :func:`noise_from_quietest_frames`).
    """

    low: Edge
    high: Edge
    drop_db: float
    reference: str
    freqs_hz: np.ndarray
    response_db: np.ndarray
    span_hz: tuple
    noise_from: str = "pauses"


def noise_from_quietest_frames(fe: FineEdges) -> FineEdges:
    """The edges of a recording whose noise could not be measured in pauses (none stood out of
    it) and was taken as the spectrum of its quietest frames, which also hold weak speech:
    the noise subtracted is then too high by an unknown amount wherever speech is weak, so
    each edge is marked uncertain and limited by noise (its estimate and range kept)."""
    def mark(e: Edge) -> Edge:
        return replace(e, certain=False, limited_by=e.limited_by or "noise")

    return replace(fe, low=mark(fe.low), high=mark(fe.high), noise_from="quietest frames")


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
        The talker's low fundamental (e.g. 5th percentile); below 0.9 x it nothing is seen,
        and the range of a low edge there opens to the span's low end.
    f0_median_hz : float or None, keyword-only
        The talker's median fundamental: the harmonic spacing bridged, and the region
        (two spacings) where a low edge's range is widened.
    drop_db : float, keyword-only
        Edge criterion, dB below the passband level.

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
        weak = clean < _WEAK_RATIO * npsd
        clean = np.maximum(clean, npsd * 10 ** (FLOOR_DB_RE_NOISE / 10))
    else:
        clean = sp
        hidden = np.zeros(grid.size, dtype=bool)
        weak = hidden
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
    # The harmonic comb's valleys bridged (the envelope through its peaks), then 1/12 octave.
    rs = _smooth_db(r, grid, f0_median_hz, below_f0)
    span = (grid >= PASSBAND_SPAN_HZ[0]) & (grid <= min(PASSBAND_SPAN_HZ[1], top)) & ~hidden
    if np.count_nonzero(span) < POINTS_PER_OCTAVE // 2:
        span = ~hidden
    vals = np.sort(rs[span])[::-1]
    pb = float(median(vals[: 2 * POINTS_PER_OCTAVE]))
    near_top = np.flatnonzero(span & (rs >= pb - 3.0))
    if TILT_CORRECTION and near_top.size >= POINTS_PER_OCTAVE:
        # The talker's own tilt against the reference, fitted over the passband, removed.
        k = np.polyfit(logf[near_top], rs[near_top], 1)[0]
        mid = float(median(logf[near_top]))
        # Only above the passband's centre: a talker's source slope shows there, while
        # below it the talker's spectrum is shaped by its fundamental, which a straight
        # line fitted over the whole passband would carry down onto the lower edge.
        rs = rs - k * np.maximum(logf - mid, 0.0)
        vals = np.sort(rs[span])[::-1]
        pb = float(median(vals[: 2 * POINTS_PER_OCTAVE]))
        near_top = np.flatnonzero(span & (rs >= pb - 3.0))

    # Where the walk out from the passband must stop: the speech is hidden in noise, or
    # lies below the talker's lowest fundamental (no speech energy whatever the chain).
    blind = hidden | below_f0

    def one(step: int, blind: np.ndarray = blind, hidden: np.ndarray = hidden) -> Edge:
        # Walk out from the outermost passband point where the speech is clearly seen (in
        # heavy noise a residue of the noise can read as passband level further out).
        top = near_top[~(blind | weak)[near_top]]
        if top.size == 0:
            top = near_top[~blind[near_top]]
        if top.size == 0:
            top = near_top
        start = int(top[-1]) if step > 0 else int(top[0])
        thr = pb - drop_db
        j = start
        while 0 <= j + step < grid.size and not blind[j + step]:
            j += step
        stop = j  # last visible point walking out
        limited = None
        if 0 <= stop + step < grid.size:
            limited = "noise" if hidden[stop + step] else "talker"
        lo_i, hi_i = (start, stop) if step > 0 else (stop, start)
        view = rs[lo_i: hi_i + 1]
        vlogf = logf[lo_i: hi_i + 1]
        s0 = 0 if step > 0 else view.size - 1
        sunk = limited is not None
        hz = _stay_crossing(vlogf, view, s0, step, thr)
        inner = _stay_crossing(vlogf, view, s0, step, thr + TALKER_SPREAD_DB)
        outer = _stay_crossing(vlogf, view, s0, step, thr - TALKER_SPREAD_DB, confirm=sunk)
        edge_hz = float(grid[stop])
        end = nyq if step > 0 else float(grid[0])
        if hz is None and limited is None and np.any(weak & ~hidden):
            # The walk reached the span's end without the response falling: in heavy noise
            # a small error of the noise estimate leaves a residue that reads as speech.
            # Walk again treating speech less than the noise itself as not seen.
            return one(step, blind | weak, hidden | weak)
        if inner is None:
            if limited is None:
                return Edge(None, None, None, False, "span")
            inner = edge_hz
        if hz is None and limited is not None:
            # Sinks into the noise (or below the talker's F0) before falling 10 dB: the best
            # that can be said is where it sinks, reported as uncertain.
            hz = edge_hz
            if EXTRAPOLATE_OCTAVES > 0:
                hz = _extrapolate(logf, rs, stop, step, thr, edge_hz)
        if outer is None:
            outer = end
        elif hz is not None:
            limited = None  # the whole range was seen before the speech sank from sight
        # Smoothing spreads passband power outwards over its half-width, which moves a
        # crossing outwards: the range reaches that much further in.
        inner = inner * 2.0 ** (-step * _half_width_octaves(inner))
        w = start
        while 0 <= w + step < grid.size and not weak[w]:
            w += step
        if weak[w] and (inner - grid[w]) * step > 0:
            # Speech less than the noise itself reads a few dB high or low from a small error
            # of the noise estimate: the range reaches in to where it first does.
            inner = float(grid[w])
        if step < 0 and f0_median_hz and F0_REGION_SPACINGS and inner < F0_REGION_SPACINGS * f0_median_hz:
            # Near the talker's fundamental the talker departs from the reference by more
            # than the usual spread (the fundamental's own peak; the reference's lowest band
            # is 160 Hz): the range reaches up to F0_REGION_SPACINGS x F0, even past where
            # the passband seems to begin: the talker's own strong low harmonics can hold the
            # response within 3 dB of the passband level on a gentle skirt whose -10 dB
            # point lies above that (a 2nd-order 500 Hz high-pass under a 170 Hz voice).
            inner = max(inner, F0_REGION_SPACINGS * float(f0_median_hz))
            # ... and down to the bottom of the span when its outer end lies there too: the
            # talker's own drop towards its fundamental reads as a skirt.
            if outer < F0_REGION_SPACINGS * f0_median_hz:
                limited = limited or "talker"
        a, b = sorted((inner, min(outer, nyq)))
        if limited is not None:
            a, b = (a, nyq) if step > 0 else (float(grid[0]), b)
        if hz is not None:
            hz = float(min(max(hz, a), b))
        sel = (grid >= a) & (grid <= b) & ~blind
        knee = None
        if np.count_nonzero(sel) >= 3:
            knee = float(np.max(np.abs(np.gradient(rs, logf)[sel])))
        width = math.log2(b / a) if a > 0 else math.inf
        certain = (limited is None and width <= CERTAIN_RANGE_OCTAVES
                   and knee is not None and knee >= STEEP_DB_PER_OCTAVE)
        return Edge(hz, (float(a), float(b)), knee, certain, limited)

    low, high = one(-1), one(+1)
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
#: Smoothing of the response (octaves, power average) after the comb closing.
RESPONSE_SMOOTH_OCTAVES = 1.0 / 12.0
#: A crossing counts only if the response stays below the level for this many octaves
#: (or to the end of the span): a talker's narrow dip is not an edge.
STAY_OCTAVES = 0.25


def _half_width_octaves(f_hz=None) -> float:
    """Half-width (octaves) of the response smoothing window."""
    return RESPONSE_SMOOTH_OCTAVES / 2


#: Bridge the valleys of a voiced talker's harmonic comb by a closing (running maximum then
#: running minimum, in dB) over this many F0 spacings, instead of averaging over them: a
#: closing fills valleys narrower than its window but leaves a monotone skirt where it is,
#: where an average spreads passband power outwards and moves a low edge down.
COMB_SPACINGS = 1.0
#: A point of the closing within this much of the response touches it (dB).
_TOUCH_DB = 0.25


def _closing_db(r: np.ndarray, grid: np.ndarray, width_hz: float) -> np.ndarray:
    lo = np.searchsorted(grid, grid - width_hz / 2.0, side="left")
    hi = np.searchsorted(grid, grid + width_hz / 2.0, side="right")
    if np.all(hi - lo <= 1):
        return r
    up = np.array([r[a:b].max() for a, b in zip(lo, hi)])
    closed = np.array([up[a:b].min() for a, b in zip(lo, hi)])
    # Beyond the grid the response is taken as continuing at its end value; a window cut
    # by the grid's end then also holds the running maximum from that end to the point
    # (what the dilation there would give), so a monotone skirt near an end is kept.
    cut_lo = grid - width_hz / 2.0 < grid[0]
    cut_hi = grid + width_hz / 2.0 > grid[-1]
    closed = np.where(cut_lo, np.minimum(closed, np.maximum.accumulate(r)), closed)
    closed = np.where(cut_hi, np.minimum(closed, np.maximum.accumulate(r[::-1])[::-1]), closed)
    # On a resolved comb the closing is a staircase through the harmonic peaks (each step
    # holds the lower neighbour's level); joining the points where it touches the response
    # (the peaks; every point of a smooth stretch) by straight lines in log f reads a skirt
    # between harmonics instead of at the next one.
    touch = np.flatnonzero(r >= closed - _TOUCH_DB)
    if touch.size >= 2:
        logf = np.log2(grid)
        closed = np.interp(logf, logf[touch], closed[touch])
    return closed


def _smooth_db(r: np.ndarray, grid: np.ndarray, f0_hz: Optional[float], below_f0=None) -> np.ndarray:
    if f0_hz:
        # Only above the talker's lowest F0: below it there is no comb to bridge.
        k = int(np.count_nonzero(below_f0)) if below_f0 is not None else 0
        if k < grid.size:
            r = np.concatenate((r[:k], _closing_db(r[k:], grid[k:], COMB_SPACINGS * float(f0_hz))))
    p = 10.0 ** (r / 10.0)
    c = np.concatenate(([0.0], np.cumsum(p)))
    logf = np.log2(grid)
    half_oct = np.full(grid.shape, _half_width_octaves())
    lo = np.searchsorted(logf, logf - half_oct, side="left")
    hi = np.searchsorted(logf, logf + half_oct, side="right")
    mean = (c[hi] - c[lo]) / np.maximum(hi - lo, 1)
    return 10.0 * np.log10(np.maximum(mean, 1e-300))


#: An edge the speech sinks from sight before reaching is carried on along the skirt seen
#: last (its slope over the last EXTRAPOLATE_FIT_OCTAVES), at most this far (octaves).
EXTRAPOLATE_OCTAVES = 0.5
EXTRAPOLATE_FIT_OCTAVES = 1.0 / 6.0


def _extrapolate(logf, rs, stop, step, level, edge_hz) -> float:
    n = max(int(round(EXTRAPOLATE_FIT_OCTAVES * POINTS_PER_OCTAVE)), 2)
    idx = np.arange(stop - step * (n - 1), stop + step, step)
    if idx.min() < 0 or idx.max() >= logf.size:
        return edge_hz
    slope = -step * np.polyfit(logf[idx], rs[idx], 1)[0]  # dB per octave falling outwards
    remaining = float(rs[stop]) - level
    if slope < STEEP_DB_PER_OCTAVE or remaining <= 0:  # only along a channel's skirt
        return edge_hz
    return float(edge_hz * 2.0 ** (step * min(remaining / slope, EXTRAPOLATE_OCTAVES)))


def _stay_crossing(logf, r, start, step, level, *, confirm: bool = False) -> Optional[float]:
    """Where ``r`` first falls below ``level`` walking from ``start`` by ``step`` and stays
    below (within 1 dB) for :data:`STAY_OCTAVES`; with ``confirm`` a crossing too near the
    end of ``r`` to be seen staying below is not taken (``r`` ends where the speech sinks
    from sight, and a talker's own drop there is no edge)."""
    n = r.size
    stay = int(round(STAY_OCTAVES * POINTS_PER_OCTAVE))
    i = start
    while 0 <= i + step < n:
        j = i + step
        if r[j] < level:
            seg = r[j: j + step * stay: step] if step > 0 else r[max(j - stay, 0): j + 1]
            if confirm and seg.size < stay:
                return None
            if np.all(seg < level + 1.0):
                d = r[i] - r[j]
                t = min(max((r[i] - level) / d, 0.0), 1.0) if d > 0 else 0.0
                return float(2.0 ** (logf[i] + t * (logf[j] - logf[i])))
        i = j
    return None
