"""Clipping: the clip level (also below full scale), clipped samples and clip events.

A clipped waveform sits on a flat ceiling: runs of consecutive, exactly equal
samples at the signal's extreme value, and an amplitude histogram whose tail
ends in a spike at that value instead of thinning out smoothly.  Both cues are
used, separately for the positive and the negative extreme, so clipping is found
whether it happened at full scale, in an earlier stage whose output was then
turned down (clip level below full scale), or on one polarity only (an electret
capsule or preamplifier clipping asymmetrically).

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

A square wave or a constant signal sits on its extreme values and is reported
as clipped.  Soft (analogue) clipping, or clipping followed by filtering or
lossy coding, leaves no flat top and is not detected by this method.  Quantised
audio re-scaled in floating point (off every PCM grid) is taken as continuous;
at very low levels its quantisation steps could then pass for a flat top
(give ``quantization_step`` to avoid that).

References
----------
A. Aleinik, Y. Matveev, "Detection of clipped fragments in speech signals",
Int. J. Electrical, Computer, Energetic, Electronic and Communication
Engineering 8(2), 2014 (amplitude-histogram tail spikes).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from .errors import SignalValueError

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
_CHUNK = 1 << 15
# Candidate levels kept per polarity (the highest ones).
_MAX_LEVELS = 16


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


_METHOD = ("runs of >= {runs} equal samples at a level within {db:g} dB of each polarity's extreme, "
           "confirmed by a spike at that level in the amplitude histogram's tail (after Aleinik & Matveev)")


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
        c = _Side(self.n_bins)
        c.extreme, c.base, c.grid = self.extreme, self.base, self.grid
        c.hist = self.hist.copy()
        c.levels = {b: lv.copy() for b, lv in self.levels.items()}
        c.open = self.open
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
            for b in [b for b in self.levels if b < base]:
                del self.levels[b]
        self.base = max(base, self.base) if self.extreme else base
        self.extreme = extreme


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
        Shortest run of equal samples counted as a clip run (default 3, at least 2).
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
    listed events each).
    """

    def __init__(self, sample_rate_hz: float, *, search_db: float = 1.0, min_run_samples: int = 3,
                 merge_gap_s: float = 0.05, max_events: int = 1000,
                 quantization_step: Optional[float] = None) -> None:
        fs = float(sample_rate_hz)
        if not math.isfinite(fs) or fs <= 0.0:
            raise SignalValueError(f"sample_rate_hz must be a positive number of hertz, got {sample_rate_hz!r}.")
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
        self._min_run = int(min_run_samples)
        self._merge_gap_s = float(merge_gap_s)
        self._gap = int(round(self._merge_gap_s * fs))
        self._max_events = int(max_events)
        self._q = quantization_step
        self._hist_region = 10.0 ** (-(self._search_db + _BAND_ROOM_DB) / 20.0)
        n_bins = int(math.ceil(-math.log2(self._hist_region) * _BINS_PER_OCTAVE)) + 4
        self._sides = (_Side(n_bins), _Side(n_bins))
        self._n = 0

    def update(self, block) -> None:
        """Add the next block of samples (1-D, full scale = ±1.0).

        Raises
        ------
        SignalValueError
            If the block is not 1-D real numbers or holds NaN or infinite values.
        """
        x = np.asarray(block)
        if x.ndim != 1:
            raise SignalValueError(f"A block of samples must be one-dimensional, got an array of shape {x.shape}.")
        if x.dtype != np.float64:
            if not (np.issubdtype(x.dtype, np.floating) or np.issubdtype(x.dtype, np.integer)):
                raise SignalValueError(f"Samples must be real numbers, got dtype {x.dtype}.")
            x = x.astype(np.float64)
        n = x.size
        if n == 0:
            return
        # Extremes per cache-sized chunk (the second pass over a chunk reads L2).
        starts = np.arange(0, n, _CHUNK)
        hi_c = np.empty(starts.size)
        lo_c = np.empty(starts.size)
        for i, j in enumerate(starts):
            xc = x[j:j + _CHUNK]
            hi_c[i] = xc.max()
            lo_c[i] = xc.min()
        hi = float(hi_c.max())
        lo = float(lo_c.min())
        if not (math.isfinite(hi) and math.isfinite(lo)):
            bad = int(np.flatnonzero(~np.isfinite(x))[0]) + self._n
            raise SignalValueError(
                f"The signal holds a NaN or infinite sample (first at sample {bad}, "
                f"{bad / self._fs:.3f} s), so clipping cannot be measured."
            )
        self._side_update(self._sides[0], x, hi, hi_c, +1)
        self._side_update(self._sides[1], x, -lo, -lo_c, -1)
        self._n += n

    def _side_update(self, side: _Side, x: np.ndarray, block_extreme: float, chunk_extremes: np.ndarray,
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
            return
        parts = []
        for i in np.flatnonzero(chunk_extremes >= thr):
            j = i * _CHUNK
            xc = x[j:j + _CHUNK]
            parts.append((np.flatnonzero(xc >= thr) if sign > 0 else np.flatnonzero(xc <= -thr)) + j)
        idx = np.concatenate(parts) if len(parts) > 1 else parts[0]
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
        for b in np.unique(bins):
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
        for side in self._sides:
            s = side.copy()
            self._flush_open(s)
            found.append(self._decide(s))
        events = []
        clipped = 0
        event_count = 0
        run_count = 0
        levels = []
        for sign, lv in zip((1, -1), found):
            if lv is None:
                levels.append(None)
                continue
            bin_count, level = lv
            levels.append(level.value)
            clipped += bin_count
            level.close(self._max_events)
            event_count += level.closed
            run_count += level.runs
            for st, en, k in level.listed:
                events.append(ClipEvent(start_s=st / self._fs, duration_s=(en - st) / self._fs,
                                        polarity="+" if sign > 0 else "-", level=sign * level.value,
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

    def _decide(self, side: _Side) -> Optional[tuple[int, _LevelRuns]]:
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
            step = self._q if self._q is not None else side.grid_step()
            eps = max(_BIN_REL, step / lv.value)
            w = max(_BAND_MIN_REL, _BAND_PER_EPS * eps)
            j = int(math.ceil(-math.log2(1.0 - w) * _BINS_PER_OCTAVE)) if w < 1.0 else k + 1
            if j > k - floor:
                continue  # the band below does not fit in the histogram: not decidable
            band = int(hist[k - j:k].sum())
            if p / (band + 1.0) > _SPIKE_FACTOR * math.sqrt(eps / w):
                return p, lv
        return None


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
