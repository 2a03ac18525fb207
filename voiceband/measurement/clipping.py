"""Clipping: the clip level (also below full scale), clipped samples and clip events.

A clipped waveform sits on a flat ceiling: runs of consecutive samples at the
signal's extreme value, and an amplitude histogram whose tail ends in a spike
at that value instead of thinning out smoothly.  Both cues are used, separately
for the positive and the negative extreme, so clipping is found whether it
happened at full scale, in an earlier stage whose output was then turned down
(clip level below full scale), or on one polarity only (an electret capsule or
preamplifier clipping asymmetrically).  The ceiling may be exactly flat
(clipping in the digital domain, or in the last analogue stage before the
converter) or flat only to within noise added after the clipping stage (a
microphone amplifier or speech processor clipping, then later amplifier stages
and the recorder's converter adding their noise).

Method
------
For each polarity, over the whole recording:

1. **Extreme and search region.**  ``L`` is the largest sample magnitude of
   that polarity; clip levels are searched within ``search_db`` (default 1 dB)
   below ``L``.
2. **Equal-value runs.**  Runs of at least ``min_run_samples`` (default 3)
   consecutive samples with exactly the same value are collected, keyed by
   level.  Digital clipping, and any later gain change or re-quantisation,
   leaves clipped samples exactly equal; a smooth peak gives three equal
   samples only when quantisation is coarse against its curvature.  Two equal
   samples are not enough: a smooth peak sampled symmetrically gives them.
3. **Tail spike.**  Following the amplitude-histogram idea of Aleinik &
   Matveev (a clipped tail starts with a spike, an unclipped one rises
   smoothly), the count ``P`` of samples at a candidate level ``v`` (histogram
   bin of relative width 2e-5) is compared with the count ``B`` in the band
   ``[v (1 - w), v)`` just below it.  Near a smooth maximum a waveform spends
   time ∝ sqrt(depth) within a given depth of its peak, so an unclipped tail
   has ``P / B`` of about ``sqrt(eps / w)``, where ``eps`` is the relative
   resolution of the values: the bin width, or the quantisation step re ``v``.
   The step is ``quantization_step`` when given, else detected: 2**-7, 2**-15 or
   2**-23 when every examined sample (those within ``search_db`` + 2 dB of the
   running extreme) lies on that 8-, 16- or 24-bit PCM grid, otherwise 0
   (floating-point values).  A level is a clip level when
   ``P / (B + 1) > 4 sqrt(eps / w)``, it carries at least two runs, and
   ``P >= 4``, with ``w = max(1 %, 10 eps)``; when that band does not fit in the
   histogram (which reaches ``search_db`` + 2 dB below ``L``) the level is not
   decidable and is not reported, which happens for audio only a few dozen
   quantisation steps above zero.  The original per-frame coefficient of
   Aleinik & Matveev is not used: a pure tone's arcsine-shaped histogram also
   peaks at its tails and would read as clipped.
4. The highest level passing the test is the polarity's clip level.  Every
   sample in its histogram bin counts as clipped; its runs, merged when closer
   than ``merge_gap_s``, are the clip events.
5. **Noisy ceilings.**  Noise added after the clipping stage spreads the
   ceiling into a bump of the histogram as wide as the noise.  The test of
   step 3 is repeated with a window of half-width ``h`` bins in place of the
   single bin, for ``h`` from 4 bins to 2 % of the level in steps of sqrt(2)
   (windows at least two quantisation steps wide and holding at least 8
   distinct occupied bins), at every position within the search region.
   ``P`` is the window's count; ``B`` is the largest count of a window of the
   same width anywhere in the band four window-widths deep just below it
   (half-overlapping windows).  By the sqrt law the top window of a smooth
   maximum holds ``1 / (sqrt(2) - 1) = 2.4`` times the window below it; a
   sine's arcsine peak, the worst case, reaches that.  Taking the largest
   window of the band rather than the adjacent one keeps the comparison fair
   for a periodic signal locked to the sample rate, which repeats a few
   values, each a bump of its own.  A window passes when
   ``P / (B + 1) > 4``, ``P >= 20``, and at most ``P / 4`` samples lie above
   it (a ceiling is the top of its distribution: of a periodic signal's
   bumps only the top one has nothing above it).  The passing window with the
   largest ratio gives the ceiling: its level ``c`` is the median of the
   samples in the window, and the noise's standard deviation ``s`` is read
   from the ceiling's upper side, where only the noise spreads the samples
   (the 68.3rd percentile of ``x - c`` over the samples at or above ``c``:
   half-normal).  A sample counts as clipped when it lies at or beyond
   ``c - 3 s`` (a three-sigma tolerance, common practice; at least one
   quantisation step); at most a tenth as many may lie beyond ``c + 5 s``; a
   clip run is a run of at least ``min_run_samples`` consecutive clipped
   samples, at least two are required (a periodic signal's top value recurs
   as isolated samples), and runs merged across gaps shorter than
   ``merge_gap_s`` are the clip events.  The noisy ceiling is the answer when
   step 4 finds no level, or finds one inside the ceiling's tolerance holding
   less than 1/1.1 of the ceiling's samples (noise of about one quantisation
   step leaves many clipped samples exactly equal and spreads the rest over
   the neighbouring values).  Noise up to about 0.6 % RMS of the clip level
   (45 dB below it) is handled with a margin; from about 1 % (40 dB) the
   ceiling is lost in the signal below it.

Streaming: per polarity the fine histogram of the top ``search_db`` + 2 dB is
kept, and for step 5 the morphological opening of the samples by a
``min_run_samples``-sample window (the highest bin at or above which the
sample lies in a run of ``min_run_samples`` samples), followed down to 95 % of
the search region's bottom.  Run starts and event starts are accumulated as
difference histograms over that bin, so that the run and event counts are
exact for a threshold decided at the end; the samples of candidate runs are
kept only until the first ``max_events`` events at every threshold still
possible are complete (and at most 2**19 of them per polarity, beyond which
fewer events of a noisy ceiling may be listed; counts stay exact).

A square wave or a constant signal sits on its extreme values and is reported
as clipped.  Soft (analogue) clipping, or clipping followed by filtering or
lossy coding, leaves no flat top and is not detected by this method: a
first-order high-pass after the clipper makes each plateau decay with the time
constant 1/(2 pi f_c), by 6 % in a millisecond at 10 Hz and 47 % at 100 Hz, far
more than the noise spreads it.  Quantised audio re-scaled in floating point (off every PCM
grid) is taken as continuous; at very low levels its quantisation steps could
then pass for a flat top (give ``quantization_step`` to avoid that).

References
----------
A. Aleinik, Y. Matveev, "Detection of clipped fragments in speech signals",
Int. J. Electrical, Computer, Energetic, Electronic and Communication
Engineering 8(2), 2014 (amplitude-histogram tail spikes).
J. Serra, *Image Analysis and Mathematical Morphology*, Academic Press, 1982
(opening by a flat structuring element; from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..arrays import PiecePeaks, piece_peaks, sorted_unique, where_beyond
from ..errors import SignalValueError
from .. import validate

__all__ = [
    "ClipEvent",
    "ClippingResult",
    "ClippingAccumulator",
    "measure_clipping",
]

# Relative width of the fine amplitude-histogram bins and bins per octave.
_BIN_REL = 2e-5
_BINS_PER_OCTAVE = 1.0 / math.log2(1.0 + _BIN_REL)
# Decision constants of step 3 (see the module docstring).
_SPIKE_FACTOR = 4.0
_BAND_MIN_REL = 0.01
_BAND_PER_EPS = 10.0
# PCM grids tried, coarsest first: 8-, 16- and 24-bit steps are 2**-7, 2**-15, 2**-23.
_PCM_GRID_BITS = (7, 15, 23)
# The histogram reaches this far below the search region, for the comparison band (dB).
_BAND_ROOM_DB = 2.0
_MIN_RUNS = 2
_MIN_CLIPPED = 4
# Samples per inner chunk of a block (256 KiB of float64: stays in L2 cache).
# Candidate levels kept per polarity (the highest ones).
_MAX_LEVELS = 16
# Step 5 (noisy ceilings): window half-widths in bins (4 bins to 2 %, steps of sqrt 2), the
# depth of the band below in window widths, the least window in quantisation steps, the
# least count in the window, and the tolerance in noise standard deviations.
_NOISY_HALF_BINS = tuple(sorted({int(round(4 * 2 ** (j / 2))) for j in range(17)}))
_NOISY_BAND_WINDOWS = 4
_NOISY_MIN_STEPS = 2.0
_NOISY_MIN_CLIPPED = 20
# Least number of distinct occupied bins in the window: the sqrt law needs a continuum of
# values, not the few values a periodic signal locked to the sample rate repeats.
_NOISY_MIN_VALUES = 8
_TOL_SIGMAS = 3.0
# A noisy ceiling replaces an exactly equal level it contains when it holds this many times
# the samples of that level's bin.
_SPREAD_SHARE = 1.1
# A ceiling is the top of its polarity's distribution: samples above the window may be at most
# this share of the window's count, and samples above c + 5 s this share of the clipped ones
# (a periodic signal repeats each of its values; with noise, every one is a bump of the
# histogram, but only the top one has nothing above it).
_NOISY_ABOVE_SHARE = 0.25
_CEILING_SIGMAS = 5.0
_NOISY_ABOVE_SHARE_FINAL = 0.1
# Fraction of a half-normal distribution within one standard deviation (Q(1) = 0.1587).
_HALF_NORMAL_1SIGMA = 0.6827
# Run levels are followed down to this fraction of the search region's bottom (room for the
# tolerance below a ceiling at the bottom of the region).
_RUN_ROOM = 0.95
# Samples of candidate runs kept per polarity for listing noisy events.
_STORE_MAX = 1 << 19
_NONE = np.iinfo(np.int64).min // 4  # "below every bin"
_EMPTY = np.zeros(0, dtype=np.int64)


@dataclass(frozen=True)
class ClipEvent:
    """One clip event: runs of clipped samples on one polarity, merged across short gaps.

    Attributes
    ----------
    start_s : float
        Time of the first clipped sample, s from the start of the recording.
    duration_s : float
        From the first clipped sample to the end of the last one, s.
    polarity : str
        ``"+"`` (positive ceiling) or ``"-"`` (negative floor).
    level : float
        The clip level, signed, as a fraction of full scale.
    clipped_samples : int
        Samples in the event's runs.
    """

    start_s: float
    duration_s: float
    polarity: str
    level: float
    clipped_samples: int


@dataclass(frozen=True)
class ClippingResult:
    """Clipping found in one recording.

    Attributes
    ----------
    clip_level : float or None
        Magnitude of the clip level as a fraction of full scale (1.0 = full
        scale); when both polarities clip at different levels, the lower one
        (the headroom actually available).  None when no clipping is found.
    clip_level_positive, clip_level_negative : float or None
        Per polarity, magnitudes; None where that side does not clip.
    clipped_samples : int
        Samples sitting on a clip level (either polarity).
    clipped_fraction : float
        ``clipped_samples / sample_count``.
    event_count : int
        Clip events, counted per polarity (a waveform clipped on both sides
        gives events on each side).
    events : tuple of ClipEvent
        The first ``max_events`` events in time order (positive events first
        where listing is cut short, then negative).
    run_count : int
        Runs of at least ``min_run_samples`` equal samples at the clip levels.
    sample_count : int
    sample_rate_hz : float
    min_run_samples : int
    merge_gap_s : float
    method : str
        One-line description of the detection method.
    """

    clip_level: Optional[float]
    clip_level_positive: Optional[float]
    clip_level_negative: Optional[float]
    clipped_samples: int
    clipped_fraction: float
    event_count: int
    events: tuple[ClipEvent, ...]
    run_count: int
    sample_count: int
    sample_rate_hz: float
    min_run_samples: int
    merge_gap_s: float
    method: str


_METHOD = ("runs of >= {runs} samples at a level within {db:g} dB of each polarity's extreme (exactly equal, "
           "or within 3 noise standard deviations of a noisy ceiling), confirmed by a spike at that level "
           "in the amplitude histogram's tail (after Aleinik & Matveev)")


def _bin_of(v: np.ndarray) -> np.ndarray:
    return np.floor(np.log2(v) * _BINS_PER_OCTAVE).astype(np.int64)


class _LevelRuns:
    """Runs and events at one candidate level (one histogram bin)."""

    __slots__ = ("value", "runs", "run_samples", "ep_start", "ep_end", "ep_samples", "closed",
                 "listed")

    def __init__(self, value: float) -> None:
        self.value = value
        self.runs = 0
        self.run_samples = 0
        self.ep_start = -1  # open episode: first sample, one past last sample, samples
        self.ep_end = -1
        self.ep_samples = 0
        self.closed = 0
        self.listed: list[tuple[int, int, int]] = []

    def copy(self) -> "_LevelRuns":
        c = _LevelRuns(self.value)
        c.runs, c.run_samples = self.runs, self.run_samples
        c.ep_start, c.ep_end, c.ep_samples = self.ep_start, self.ep_end, self.ep_samples
        c.closed = self.closed
        c.listed = list(self.listed)
        return c

    def add(self, starts: np.ndarray, lengths: np.ndarray, gap: int, max_events: int) -> None:
        """Add runs (sorted by start, global sample indices) and merge them into episodes."""
        self.runs += int(starts.size)
        self.run_samples += int(lengths.sum())
        ends = starts + lengths
        if self.ep_start >= 0:
            starts = np.concatenate(([self.ep_start], starts))
            ends = np.concatenate(([self.ep_end], ends))
            lengths = np.concatenate(([self.ep_samples], lengths))
        new_ep = np.ones(starts.size, dtype=bool)
        new_ep[1:] = (starts[1:] - ends[:-1]) > gap
        first = np.flatnonzero(new_ep)
        samples = np.add.reduceat(lengths, first)
        ep_end = np.maximum.reduceat(ends, first)
        n_closed = first.size - 1
        room = max_events - len(self.listed)
        if room > 0 and n_closed > 0:
            k = min(room, n_closed)
            self.listed.extend(zip(starts[first[:k]].tolist(), ep_end[:k].tolist(), samples[:k].tolist()))
        self.closed += n_closed
        self.ep_start = int(starts[first[-1]])
        self.ep_end = int(ep_end[-1])
        self.ep_samples = int(samples[-1])

    def close(self, max_events: int) -> None:
        if self.ep_start >= 0:
            if len(self.listed) < max_events:
                self.listed.append((self.ep_start, self.ep_end, self.ep_samples))
            self.closed += 1
            self.ep_start = self.ep_end = -1
            self.ep_samples = 0


def _opening(s: np.ndarray, a: np.ndarray, m: int) -> np.ndarray:
    """Opening of the values ``a`` (histogram bins) at sorted sample indices ``s`` by an ``m``-sample window.

    Entry k is the largest minimum over the windows of ``m`` consecutive sample indices, all
    present in ``s``, that contain ``s[k]`` (``_NONE`` when there is none): the highest bin at
    or above which sample ``s[k]`` lies in a run of at least ``m`` samples.
    """
    n = s.size
    r = np.full(n, _NONE, dtype=np.int64)
    if n < m:
        return r
    w = a[: n - m + 1].copy()
    for j in range(1, m):
        np.minimum(w, a[j: n - m + 1 + j], out=w)
    w[s[m - 1:] - s[: n - m + 1] != m - 1] = _NONE  # the window has a gap
    for j in range(m):
        np.maximum(r[j: n - m + 1 + j], w, out=r[j: n - m + 1 + j])
    return r


def _add_steps(d: np.ndarray, lower: np.ndarray, upper: np.ndarray, base: int) -> None:
    """Count +1 for every threshold bin b with ``lower < b <= upper`` in the difference histogram ``d``."""
    lo = np.maximum(lower + 1 - base, 0)
    hi = upper + 1 - base
    if lo.size > 256:
        d += np.bincount(lo, minlength=d.size)[: d.size]
        d -= np.bincount(hi, minlength=d.size)[: d.size]
    else:
        np.add.at(d, lo, 1)
        np.add.at(d, hi, -1)


def _range_max(a: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """``max(a[lo[i]:hi[i]])`` for every i (``_NONE`` where the range is empty)."""
    out = np.full(lo.size, _NONE, dtype=np.int64)
    has = lo < hi
    if has.any():
        idx = np.empty(2 * int(has.sum()), dtype=np.int64)
        idx[0::2], idx[1::2] = lo[has], hi[has]
        out[has] = np.maximum.reduceat(a, idx)[0::2]
    return out


def _window_max(pos: np.ndarray, val: np.ndarray, first: int, span: int) -> np.ndarray:
    """For entries k >= ``first``: the largest ``val[j]`` with ``pos[k] - span <= pos[j] < pos[k]``.

    ``pos`` is sorted.  The answer is exact where it is below ``val[k]``; elsewhere it is only
    some value at least ``val[k]``; ``_NONE`` where no entry lies in the span.  Most entries are
    settled by a lower bound (the entry before, when consecutive, and the maximum of the
    previous run of consecutive positions, when all of it lies in the span); the rest by range
    maxima over the part of a run where the span starts, the whole runs after it, and the own
    run's earlier entries.
    """
    n = pos.size
    if n - first <= 64:  # few entries: all pairs at once
        inside = (pos[None, :] >= pos[first:, None] - span) & (np.arange(n)[None, :] < np.arange(first, n)[:, None])
        return np.where(inside, val[None, :], _NONE).max(axis=1, initial=_NONE)
    brk = np.ones(n, dtype=bool)
    brk[1:] = pos[1:] - pos[:-1] != 1
    starts = np.flatnonzero(brk)
    ends = np.append(starts[1:], n)
    seg = np.repeat(np.arange(starts.size), ends - starts)
    seg_max = np.maximum.reduceat(val, starts)
    vk = val[first:]
    before = np.empty(vk.size, dtype=np.int64)
    before[0] = val[first - 1] if first > 0 else _NONE
    before[1:] = val[first:n - 1]
    bound = np.where(brk[first:], _NONE, before)
    cand = np.flatnonzero(bound < vk)
    if cand.size == 0:
        return bound
    kc = cand + first
    pr = np.maximum(seg[kc] - 1, 0)
    inside = (seg[kc] > 0) & (pos[starts[pr]] >= pos[kc] - span)
    bound[cand[inside]] = np.maximum(bound[cand[inside]], seg_max[pr[inside]])
    todo = cand[bound[cand] < vk[cand]]
    if todo.size:
        kt = todo + first
        lo = np.searchsorted(pos, pos[kt] - span, side="left")
        sl, sk = seg[lo], seg[kt]
        one = sl == sk
        exact = np.where(one, _range_max(val, lo, kt), _NONE)
        two = ~one
        if two.any():
            l2, k2, a2, b2 = lo[two], kt[two], sl[two], sk[two]
            part = np.maximum(_range_max(val, l2, ends[a2]), _range_max(val, starts[b2], k2))
            exact[two] = np.maximum(part, _range_max(seg_max, a2 + 1, b2))
        bound[todo] = exact
    return bound


class _Side:
    """Streaming state of one polarity."""

    def __init__(self, n_bins: int) -> None:
        self.n_bins = n_bins
        self.extreme = 0.0
        self.base = 0  # bin index of hist[0]
        self.hist = np.zeros(n_bins, dtype=np.int64)
        self.levels: dict[int, _LevelRuns] = {}
        # open run at the end of the previous block: (value, global start, length)
        self.open: Optional[tuple[float, int, int]] = None
        # index into _PCM_GRID_BITS of the coarsest grid all examined values lie on
        # (len(_PCM_GRID_BITS) when they lie on none: continuous values)
        self.grid = 0
        # Step 5: difference histograms over the opening's bin of run starts and event starts
        # (index n_bins takes the ends above the top bin), the last sample given an opening
        # level (global index, bin), the samples of the last merge gap with theirs, and the
        # samples kept for listing events.
        self.d_run = np.zeros(n_bins + 1, dtype=np.int64)
        self.d_event = np.zeros(n_bins + 1, dtype=np.int64)
        self.last = (-2, 0)
        self.gap_pos = np.zeros(0, dtype=np.int64)
        self.gap_bin = np.zeros(0, dtype=np.int64)
        self.kept_pos: list[np.ndarray] = []
        self.kept_bin: list[np.ndarray] = []
        self.kept = 0
        self.kept_end = -1  # first sample not kept once the store is full
        # (extreme, lowest bin followed by the opening) and the lowest threshold bin whose
        # first max_events events may not be complete (None: to be recomputed)
        self.floor = (0.0, 0)
        self.open_bin: Optional[int] = None

    def grid_step(self) -> float:
        """Quantisation step of the examined values: 2**-bits of a PCM grid they lie on, else 0."""
        if self.grid < len(_PCM_GRID_BITS):
            return 2.0 ** -_PCM_GRID_BITS[self.grid]
        return 0.0

    def check_grid(self, v: np.ndarray) -> None:
        while self.grid < len(_PCM_GRID_BITS):
            scaled = v * 2.0 ** _PCM_GRID_BITS[self.grid]
            if np.array_equal(scaled, np.round(scaled)):
                return
            self.grid += 1

    def copy(self) -> "_Side":
        c = _Side.__new__(_Side)
        c.n_bins = self.n_bins
        c.extreme, c.base, c.grid = self.extreme, self.base, self.grid
        c.hist = self.hist.copy()
        c.levels = {b: lv.copy() for b, lv in self.levels.items()}
        c.open = self.open
        c.d_run, c.d_event = self.d_run.copy(), self.d_event.copy()
        c.floor, c.open_bin = self.floor, self.open_bin
        c.last, c.gap_pos, c.gap_bin = self.last, self.gap_pos, self.gap_bin
        c.kept_pos, c.kept_bin, c.kept = list(self.kept_pos), list(self.kept_bin), self.kept
        c.kept_end = self.kept_end
        return c

    def raise_extreme(self, extreme: float) -> None:
        top = int(_bin_of(np.array([extreme]))[0])
        base = top - self.n_bins + 1
        if self.extreme == 0.0:
            self.hist[:] = 0
        elif base > self.base:
            shift = base - self.base
            if shift >= self.n_bins:
                self.hist[:] = 0
            else:
                self.hist[:-shift] = self.hist[shift:]
                self.hist[-shift:] = 0
            for d in (self.d_run, self.d_event):
                # A count at a threshold is a cumulative sum: fold the dropped bins into the new first.
                if shift >= self.n_bins:
                    d[:] = 0
                else:
                    folded = int(d[: shift + 1].sum())
                    d[:-shift] = d[shift:]
                    d[-shift:] = 0
                    d[0] = folded
            for b in [b for b in self.levels if b < base]:
                del self.levels[b]
        self.base = max(base, self.base) if self.extreme else base
        self.extreme = extreme


@dataclass(frozen=True)
class _Found:
    """What one polarity's decision found (internal)."""

    level: float
    clipped: int
    runs: int
    events: int
    listed: list  # (first sample, one past the last sample, clipped samples)
    tol: float = 0.0  # tolerance below the level (noisy ceilings)


class ClippingAccumulator:
    """Streaming clipping detector (see the module docstring for the method).

    Parameters
    ----------
    sample_rate_hz : float
        Sample rate of the blocks, Hz.
    search_db : float, optional
        Clip levels are searched within this many dB below each polarity's
        extreme sample (default 1.0).
    min_run_samples : int, optional
        Shortest run of clipped samples counted as a clip run (default 3, at least 2).
    merge_gap_s : float, optional
        Runs of one polarity closer than this are one event (default 0.05 s:
        the runs on successive pitch periods of a clipped vowel make one event).
    max_events : int, optional
        Events listed in the result (all are counted; default 1000).
    quantization_step : float or None, optional
        Step between sample values (e.g. ``2**-15`` for 16-bit PCM), or None to
        estimate the value resolution from the signal.

    Notes
    -----
    Feed consecutive 1-D blocks with :meth:`update`; :meth:`result` does not
    change the accumulator.  Results do not depend on how the signal is cut into
    blocks; memory is bounded (16 candidate levels per polarity, ``max_events``
    listed events each, and at most 2**19 kept samples of candidate noisy runs).
    """

    def __init__(self, sample_rate_hz: float, *, search_db: float = 1.0, min_run_samples: int = 3,
                 merge_gap_s: float = 0.05, max_events: int = 1000,
                 quantization_step: Optional[float] = None) -> None:
        fs = validate.sample_rate_hz(sample_rate_hz)
        if not (0.1 <= float(search_db) <= 6.0):
            raise SignalValueError(f"search_db must be between 0.1 and 6 dB, got {search_db!r}.")
        if int(min_run_samples) != min_run_samples or min_run_samples < 2:
            raise SignalValueError(f"min_run_samples must be an integer of at least 2, got {min_run_samples!r}.")
        if not (math.isfinite(float(merge_gap_s)) and merge_gap_s >= 0.0):
            raise SignalValueError(f"merge_gap_s must be zero or more seconds, got {merge_gap_s!r}.")
        if int(max_events) != max_events or max_events < 0:
            raise SignalValueError(f"max_events must be a whole number of at least 0, got {max_events!r}.")
        if quantization_step is not None and not (math.isfinite(quantization_step) and quantization_step >= 0.0):
            raise SignalValueError(f"quantization_step must be a non-negative step or None, got {quantization_step!r}.")
        self._fs = fs
        self._search_db = float(search_db)
        self._region = 10.0 ** (-self._search_db / 20.0)  # bottom of the region re the extreme
        self._run_region = self._region * _RUN_ROOM  # noisy run levels are followed down to here
        self._min_run = int(min_run_samples)
        self._merge_gap_s = float(merge_gap_s)
        self._gap = int(round(self._merge_gap_s * fs))
        self._max_events = int(max_events)
        self._q = quantization_step
        self._hist_region = 10.0 ** (-(self._search_db + _BAND_ROOM_DB) / 20.0)
        n_bins = int(math.ceil(-math.log2(self._hist_region) * _BINS_PER_OCTAVE)) + 4
        self._sides = (_Side(n_bins), _Side(n_bins))
        self._n = 0
        # the last samples of the stream: the opening of the last min_run - 1 ones waits for more
        self._tail = np.zeros(0)
        self._tail_len = 2 * self._min_run - 2

    def update(self, block, *, peaks: Optional[PiecePeaks] = None) -> None:
        """Add the next block of samples (1-D, full scale = ±1.0).

        ``peaks`` may hand over the block's :class:`voiceband.arrays.PiecePeaks` when the caller
        has them already (the level meter finds them on its pass).

        Raises
        ------
        SignalValueError
            If the block is not 1-D real numbers or holds NaN or infinite values.
        """
        x = validate.block(block)
        n = x.size
        if n == 0:
            return
        # Maxima and minima of short pieces (arrays.PiecePeaks); then each side's candidates,
        # the samples at or beyond its final threshold (its extreme raised by this block), from
        # only the pieces that reach it.
        peaks = piece_peaks(x) if peaks is None else peaks
        pmx, pmn = peaks.maxima, peaks.minima
        hi = float(pmx.max())
        lo = float(pmn.min())
        if not (math.isfinite(hi) and math.isfinite(lo)):
            bad = int(np.flatnonzero(~np.isfinite(x))[0]) + self._n
            raise SignalValueError(
                f"The signal holds a NaN or infinite sample (first at sample {bad}, "
                f"{bad / self._fs:.3f} s), so clipping cannot be measured."
            )
        region = self._hist_region
        cand = [_EMPTY, _EMPTY]
        for k, (extreme, pieces, lowest) in enumerate(((max(self._sides[0].extreme, hi), pmx, False),
                                                        (max(self._sides[1].extreme, -lo), pmn, True))):
            if extreme > 0.0:
                thr = -extreme * region if lowest else extreme * region
                cand[k] = where_beyond(x, thr, pieces, lowest=lowest, piece=peaks.piece, offset=peaks.offset)
        self._side_update(self._sides[0], x, hi, cand[0], +1)
        self._side_update(self._sides[1], x, -lo, cand[1], -1)
        self._n += n
        self._tail = np.concatenate((self._tail, x[-self._tail_len:]))[-self._tail_len:]

    def _side_update(self, side: _Side, x: np.ndarray, block_extreme: float, candidates: np.ndarray,
                     sign: int) -> None:
        g0 = self._n
        n = x.size
        if block_extreme > side.extreme:
            side.raise_extreme(block_extreme)
        if side.extreme <= 0.0:
            side.open = None
            return
        thr = side.extreme * self._hist_region
        if block_extreme < thr:
            self._flush_open(side)
            self._noisy_update(side, _EMPTY, _EMPTY, sign, g0 + n - self._min_run)
            return
        xv = x[candidates]
        idx = candidates[xv >= thr] if sign > 0 else candidates[xv <= -thr]
        v = x[idx]
        if sign < 0:
            v = -v
        if self._q is None:
            side.check_grid(v)
        bins = _bin_of(v)
        if bins.size > 4096:
            side.hist += np.bincount(bins - side.base, minlength=side.n_bins)[:side.n_bins]
        else:
            np.add.at(side.hist, bins - side.base, 1)
        self._noisy_update(side, idx + g0, bins, sign, g0 + n - self._min_run)

        # Runs of exactly equal, consecutive samples.
        brk = np.ones(idx.size + 1, dtype=bool)
        brk[1:-1] = (np.diff(idx) != 1) | (v[1:] != v[:-1])
        starts = np.flatnonzero(brk[:-1])
        lengths = np.diff(np.append(starts, idx.size))
        run_idx = idx[starts] + g0  # global start
        run_val = v[starts]
        run_bin = bins[starts]
        # Join the run left open at the end of the previous block.
        if side.open is not None:
            val, st, ln = side.open
            if run_idx.size and run_idx[0] == g0 and run_val[0] == val and st + ln == g0:
                run_idx[0] = st
                lengths[0] += ln
            else:
                self._finish(side, np.array([st]), np.array([ln]), np.array([val]),
                             _bin_of(np.array([val])))
            side.open = None
        # The last run stays open if it reaches the end of the block.
        if run_idx.size and idx[-1] == n - 1:
            side.open = (float(run_val[-1]), int(run_idx[-1]), int(lengths[-1]))
            run_idx, lengths, run_val, run_bin = run_idx[:-1], lengths[:-1], run_val[:-1], run_bin[:-1]
        self._finish(side, run_idx, lengths, run_val, run_bin)

    def _noisy_update(self, side: _Side, pos: np.ndarray, bins: np.ndarray, sign: int, last: int) -> None:
        """Step 5 bookkeeping for the samples ``pos`` (global, this block) in histogram bins ``bins``.

        The opening is final for samples up to global index ``last``; it is computed here for
        those after the previous call's ``last`` (the stream's last samples wait in the tail).
        """
        first = self._n - self._min_run + 1  # first sample not final after the previous call
        if last < max(first, 0):
            return
        if side.floor[0] != side.extreme:
            side.floor = (side.extreme, int(_bin_of(np.array([side.extreme * self._run_region]))[0]))
            side.open_bin = None
        floor = side.floor[1]
        m = self._tail.size
        tv = self._tail if sign > 0 else -self._tail
        tsel = np.flatnonzero(tv >= side.extreme * self._run_region * (1.0 - 4.0 * _BIN_REL))
        tb = _bin_of(tv[tsel])
        tkeep = tb >= floor
        keep = bins >= floor
        if not tkeep.any():
            if not keep.any():
                return
            s, a = pos[keep], bins[keep]
        else:
            s = np.concatenate((tsel[tkeep] + (self._n - m), pos[keep]))
            a = np.concatenate((tb[tkeep], bins[keep]))
        r = _opening(s, a, self._min_run)
        sel = (s >= first) & (s <= last) & (r >= floor)
        if not sel.any():
            return
        p = s[sel]
        rb = r[sel]
        # Run starts: sample p starts a run at every threshold in (opening of p - 1, opening of p].
        prev = np.empty(p.size, dtype=np.int64)
        prev[0] = side.last[1] if side.last[0] == p[0] - 1 else _NONE
        prev[1:] = np.where(p[1:] - p[:-1] == 1, rb[:-1], _NONE)
        up = prev < rb
        _add_steps(side.d_run, prev[up], rb[up], side.base)
        side.last = (int(p[-1]), int(rb[-1]))
        # Event starts: thresholds above the highest opening within the merge gap before p.
        gp = np.concatenate((side.gap_pos, p))
        gb = np.concatenate((side.gap_bin, rb))
        w = _window_max(gp, gb, side.gap_pos.size, self._gap + 1)
        new = w < rb
        # Keep samples for listing at every threshold whose first max_events events may not
        # be complete yet (counts before this block's events).
        if self._max_events > 0 and side.kept < _STORE_MAX:
            if side.open_bin is None:
                counts = np.cumsum(side.d_event[:side.n_bins])[floor - side.base:]
                open_ = np.flatnonzero(counts <= self._max_events)
                side.open_bin = floor + int(open_[0]) if open_.size else side.base + side.n_bins
            k = np.flatnonzero(rb >= side.open_bin)
            if k.size > _STORE_MAX - side.kept:
                side.kept_end = int(p[k[_STORE_MAX - side.kept]])
                k = k[: _STORE_MAX - side.kept]
            if k.size:
                side.kept_pos.append(p[k])
                side.kept_bin.append(rb[k].astype(np.int32))
                side.kept += k.size
        if new.any():
            _add_steps(side.d_event, w[new], rb[new], side.base)
            side.open_bin = None
        tail = gp >= last - self._gap
        side.gap_pos, side.gap_bin = gp[tail], gb[tail]

    def _flush_open(self, side: _Side) -> None:
        if side.open is not None:
            val, st, ln = side.open
            self._finish(side, np.array([st]), np.array([ln]), np.array([val]), _bin_of(np.array([val])))
            side.open = None

    def _finish(self, side: _Side, starts: np.ndarray, lengths: np.ndarray, values: np.ndarray,
                bins: np.ndarray) -> None:
        """Record complete runs (global starts) of at least min_run samples."""
        keep = (lengths >= self._min_run) & (bins >= side.base)
        if not keep.any():
            return
        starts, lengths, values, bins = starts[keep], lengths[keep], values[keep], bins[keep]
        for b in sorted_unique(bins):
            sel = bins == b
            b = int(b)
            lv = side.levels.get(b)
            if lv is None:
                if len(side.levels) >= _MAX_LEVELS:
                    lowest = min(side.levels)
                    if b < lowest:
                        continue
                    del side.levels[lowest]
                lv = side.levels[b] = _LevelRuns(float(values[sel].max()))
            else:
                lv.value = max(lv.value, float(values[sel].max()))
            lv.add(starts[sel], lengths[sel], self._gap, self._max_events)

    # ------------------------------------------------------------------ result
    def result(self) -> ClippingResult:
        """Clipping in everything fed so far (the accumulator is not changed).

        Raises
        ------
        SignalValueError
            If no samples have been given.
        """
        n = self._n
        if n == 0:
            raise SignalValueError("No samples were given, so clipping cannot be measured.")
        found = []
        for side, sign in zip(self._sides, (1, -1)):
            s = side.copy()
            self._flush_open(s)
            if s.extreme > 0.0:
                self._noisy_update(s, _EMPTY, _EMPTY, sign, n - 1)
            found.append(self._decide(s))
        events = []
        clipped = 0
        event_count = 0
        run_count = 0
        levels = []
        for sign, f in zip((1, -1), found):
            if f is None:
                levels.append(None)
                continue
            levels.append(f.level)
            clipped += f.clipped
            event_count += f.events
            run_count += f.runs
            for st, en, k in f.listed:
                events.append(ClipEvent(start_s=st / self._fs, duration_s=(en - st) / self._fs,
                                        polarity="+" if sign > 0 else "-", level=sign * f.level,
                                        clipped_samples=int(k)))
        listed = sorted(events, key=lambda e: e.start_s)[: self._max_events]
        present = [v for v in levels if v is not None]
        return ClippingResult(
            clip_level=min(present) if present else None,
            clip_level_positive=levels[0],
            clip_level_negative=levels[1],
            clipped_samples=int(clipped),
            clipped_fraction=clipped / n,
            event_count=int(event_count),
            events=tuple(listed),
            run_count=int(run_count),
            sample_count=n,
            sample_rate_hz=self._fs,
            min_run_samples=self._min_run,
            merge_gap_s=self._merge_gap_s,
            method=_METHOD.format(runs=self._min_run, db=self._search_db),
        )

    def _decide(self, side: _Side) -> Optional[_Found]:
        """The polarity's clip level: exactly equal runs (steps 2-4), else a noisy ceiling (step 5)."""
        exact = self._decide_exact(side)
        noisy = self._decide_noisy(side)
        if exact is not None:
            p, lv = exact
            # Noise of about one quantisation step leaves many clipped samples exactly equal but
            # spreads the rest over the neighbouring values: then the noisy ceiling is the answer.
            if noisy is None or abs(noisy.level - lv.value) > noisy.tol or noisy.clipped < _SPREAD_SHARE * p:
                lv.close(self._max_events)
                return _Found(level=lv.value, clipped=p, runs=lv.runs, events=lv.closed, listed=lv.listed)
        return noisy

    def _step(self, side: _Side) -> float:
        return self._q if self._q is not None else side.grid_step()

    def _decide_exact(self, side: _Side) -> Optional[tuple[int, _LevelRuns]]:
        """The highest candidate level passing the tail-spike test, with its bin count."""
        if side.extreme <= 0.0 or not side.levels:
            return None
        hist = side.hist
        lowest = int(_bin_of(np.array([side.extreme * self._region]))[0]) - side.base
        floor = int(_bin_of(np.array([side.extreme * self._hist_region]))[0]) - side.base
        for b in sorted(side.levels, reverse=True):
            lv = side.levels[b]
            k = b - side.base
            if k < lowest or k <= floor or lv.runs < _MIN_RUNS:
                continue
            p = int(hist[k])
            if p < _MIN_CLIPPED:
                continue
            # Relative value resolution: the quantisation step, given or detected.
            eps = max(_BIN_REL, self._step(side) / lv.value)
            w = max(_BAND_MIN_REL, _BAND_PER_EPS * eps)
            j = int(math.ceil(-math.log2(1.0 - w) * _BINS_PER_OCTAVE)) if w < 1.0 else k + 1
            if j > k - floor:
                continue  # the band below does not fit in the histogram: not decidable
            band = int(hist[k - j:k].sum())
            if p / (band + 1.0) > _SPIKE_FACTOR * math.sqrt(eps / w):
                return p, lv
        return None

    def _decide_noisy(self, side: _Side) -> Optional[_Found]:
        """Step 5: the strongest windowed tail spike, its noise spread, and runs within tolerance."""
        if side.extreme <= 0.0:
            return None
        hist = side.hist
        nb = side.n_bins
        top = int(_bin_of(np.array([side.extreme]))[0]) - side.base
        lowest = int(_bin_of(np.array([side.extreme * self._region]))[0]) - side.base
        step = self._step(side)
        step_bins = step / (side.extreme * self._region) / _BIN_REL
        cum = np.concatenate(([0], np.cumsum(hist)))
        occ = np.concatenate(([0], np.cumsum(hist > 0)))
        best = (1.0, -1, 0)
        for h in _NOISY_HALF_BINS:
            width = 2 * h + 1
            if width < _NOISY_MIN_STEPS * step_bins:
                continue
            # Window counts centred on every bin; the band below is tiled by half-overlapping
            # windows reaching _NOISY_BAND_WINDOWS window-widths down.
            n_sub = 2 * _NOISY_BAND_WINDOWS - 1
            k = np.arange(max(lowest, width + (n_sub - 1) * (width // 2) + h), top + 1)
            if k.size == 0:
                continue
            centres = np.arange(nb)
            count = cum[np.minimum(centres + h + 1, nb)] - cum[np.maximum(centres - h, 0)]
            p = count[k]
            b = count[k - width]
            for i in range(1, n_sub):
                np.maximum(b, count[k - width - i * (width // 2)], out=b)
            ratio = p / ((b + 1.0) * _SPIKE_FACTOR)
            hi_k = np.minimum(k + h + 1, nb)
            above = cum[nb] - cum[hi_k]
            ratio[(p < _NOISY_MIN_CLIPPED) | (occ[hi_k] - occ[k - h] < _NOISY_MIN_VALUES)
                  | (above > _NOISY_ABOVE_SHARE * p)] = 0.0
            i = int(np.argmax(ratio))
            if ratio[i] > best[0]:
                best = (float(ratio[i]), int(k[i]), h)
        if best[1] < 0:
            return None
        _, k, h = best
        # Ceiling level: median of the window; noise spread from the samples above it.
        lo_k, hi_k = k - h, min(k + h + 1, nb)
        c_bin = lo_k + int(np.searchsorted(np.cumsum(hist[lo_k:hi_k]), 0.5 * cum[hi_k] - 0.5 * cum[lo_k]))
        level = float(2.0 ** ((side.base + c_bin + 0.5) / _BINS_PER_OCTAVE))
        above = np.cumsum(hist[c_bin:])
        s_bin = c_bin + int(np.searchsorted(above, _HALF_NORMAL_1SIGMA * above[-1]))
        sigma = float(2.0 ** ((side.base + s_bin + 0.5) / _BINS_PER_OCTAVE)) - level
        tol = max(_TOL_SIGMAS * sigma, step, 2.0 * _BIN_REL * level)
        thr = max(level - tol, side.extreme * self._run_region)
        t_bin = int(_bin_of(np.array([thr]))[0])
        j = t_bin - side.base
        runs = int(side.d_run[: j + 1].sum())
        clipped = int(hist[j:].sum())
        u = int(_bin_of(np.array([level + max(_CEILING_SIGMAS * sigma, tol)]))[0]) - side.base
        above = int(hist[u + 1:].sum()) if u + 1 < nb else 0
        if runs < _MIN_RUNS or above > _NOISY_ABOVE_SHARE_FINAL * clipped:
            return None
        events = int(side.d_event[: j + 1].sum())
        listed = []
        if side.kept:
            pos = np.concatenate(side.kept_pos)
            q = pos[np.concatenate(side.kept_bin) >= t_bin]
            if q.size:
                new = np.ones(q.size, dtype=bool)
                new[1:] = q[1:] - q[:-1] - 1 > self._gap
                first = np.flatnonzero(new)
                last = np.append(first[1:], q.size) - 1
                if side.kept_end >= 0 and q[-1] + self._gap + 1 >= side.kept_end:
                    first, last = first[:-1], last[:-1]  # the last event may go on past the store
                first, last = first[: self._max_events], last[: self._max_events]
                listed = list(zip(q[first].tolist(), (q[last] + 1).tolist(), (last - first + 1).tolist()))
        return _Found(level=level, clipped=clipped, runs=runs, events=events, listed=listed, tol=level - thr)


def measure_clipping(x, sample_rate_hz: float, **options) -> ClippingResult:
    """Clipping of a whole signal in one call.

    Parameters
    ----------
    x : array_like, shape (n,)
        Samples, full scale = ±1.0.
    sample_rate_hz : float
        Sample rate, Hz.
    **options
        Keyword options of :class:`ClippingAccumulator`.

    Returns
    -------
    ClippingResult

    Raises
    ------
    SignalValueError
        If ``x`` is empty, not 1-D, holds NaN or infinite values, or an option is out of range.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(48000) / 48000
    >>> r = measure_clipping(np.clip(np.sin(2 * np.pi * 997 * t), -0.5, 0.5), 48000)
    >>> round(r.clip_level, 3), round(r.clipped_fraction, 3)
    (0.5, 0.667)
    """
    acc = ClippingAccumulator(sample_rate_hz, **options)
    acc.update(x)
    return acc.result()
