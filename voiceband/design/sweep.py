"""Grid search over high-pass and low-pass cutoffs, scored with the band-gain SII model (no audio).

Every candidate is a high-pass at ``low_hz`` followed by a low-pass at ``high_hz`` (analog prototypes of
one type and order, :class:`voiceband.chain.Filter`). The 2 x n magnitude responses are computed once per
cutoff on one linear grid and multiplied for all pairs at once; for each pair:

* band gains: the mean of ``|H|^2`` over each SII one-third-octave band
  (:func:`voiceband.intelligibility.band_gains_db`, batched);
* SII in quiet and at every channel SNR, one batched engine call
  (:func:`voiceband.intelligibility.channel_sii`);
* occupied bandwidth (99 % power, ITU-R SM.328) of the speech PSD times ``|H|^2``, from cumulative sums
  with the edges interpolated inside bins, as :func:`voiceband.measurement.bandwidth.occupied_bandwidth`.

The score of a pair is its SII averaged over the channel SNRs. The best pair is the highest score whose
occupied bandwidth is within the limit; the Pareto front lists the pairs no other pair beats on both
SII (higher) and occupied bandwidth (narrower).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional, Sequence

import numpy as np

from ..errors import MeasurementError

__all__ = ["SweepCandidate", "SweepResult", "parse_range", "sweep_cutoffs", "filter_power_response",
           "occupied_bandwidth_rows"]

#: Rows (candidate pairs) processed at once, to bound memory (rows x grid points doubles).
_CHUNK = 256
#: Range of cutoffs accepted, Hz.
_CUTOFF_RANGE_HZ = (10.0, 20000.0)


def parse_range(text: str, *, name: str) -> np.ndarray:
    """``"START:STOP:STEP"`` in Hz, inclusive of STOP when it lies on the grid."""
    parts = str(text).split(":")
    try:
        start, stop, step = (float(p) for p in parts)
    except ValueError:
        raise MeasurementError(f"{name} must be START:STOP:STEP in Hz, e.g. 100:400:25; got {text!r}.") from None
    if not all(np.isfinite(v) for v in (start, stop, step)) or step <= 0 or stop < start:
        raise MeasurementError(f"{name} must have START <= STOP and a positive STEP; got {text!r}.")
    if not (_CUTOFF_RANGE_HZ[0] <= start and stop <= _CUTOFF_RANGE_HZ[1]):
        raise MeasurementError(f"{name} cutoffs must lie within {_CUTOFF_RANGE_HZ[0]:g}-{_CUTOFF_RANGE_HZ[1]:g} Hz; got {text!r}.")
    n = int(np.floor((stop - start) / step + 1e-9)) + 1
    if n > 400:
        raise MeasurementError(f"{name} gives {n} cutoffs; use at most 400 (a larger STEP).")
    return start + step * np.arange(n)


@dataclass(frozen=True)
class SweepCandidate:
    """One cutoff pair: ``low_hz`` high-pass, ``high_hz`` low-pass, its SII score and occupied bandwidth."""

    low_hz: float
    high_hz: float
    sii: float
    sii_quiet: float
    sii_by_channel_snr: tuple
    occupied_bandwidth_hz: float
    occupied_low_hz: float
    occupied_high_hz: float


@dataclass(frozen=True)
class SweepResult:
    """The grid, its best pair within the limit and its Pareto front.

    Attributes
    ----------
    low_hz, high_hz : ndarray
        The candidate cutoffs, Hz.
    sii : ndarray, shape (n_low, n_high)
        Score (SII averaged over ``snrs_db``); NaN where ``low >= high``.
    sii_quiet : ndarray, shape (n_low, n_high)
    sii_by_snr : ndarray, shape (n_low, n_high, n_snr)
    occupied_bandwidth_hz : ndarray, shape (n_low, n_high)
    best : SweepCandidate or None
        None when no pair fits the limit.
    pareto : tuple of SweepCandidate
        Ascending occupied bandwidth.
    snrs_db, receive_band_hz, max_bandwidth_hz, order, type, speech
        The conditions.
    """

    low_hz: np.ndarray
    high_hz: np.ndarray
    sii: np.ndarray
    sii_quiet: np.ndarray
    sii_by_snr: np.ndarray
    occupied_bandwidth_hz: np.ndarray
    occupied_low_hz: np.ndarray
    occupied_high_hz: np.ndarray
    best: Optional[SweepCandidate]
    pareto: tuple
    snrs_db: tuple
    receive_band_hz: tuple
    max_bandwidth_hz: Optional[float]
    order: int
    type: str
    speech: str

    @property
    def candidates_scored(self) -> int:
        return int(np.sum(np.isfinite(self.sii)))


def filter_power_response(kind: str, cutoffs_hz, freqs_hz, *, order: int, type: str = "butterworth",
                          ripple_db=None, stop_db=None) -> np.ndarray:
    """``|H|^2`` of high-pass or low-pass filters at each cutoff, shape (n_cutoffs, n_freqs)."""
    from ..chain.stages import Filter

    f = np.asarray(freqs_hz, dtype=np.float64)
    out = np.empty((len(cutoffs_hz), f.size))
    for i, fc in enumerate(cutoffs_hz):
        if type == "butterworth":
            # |H|^2 = 1 / (1 + (f/fc)^2n) (low-pass), (fc/f)^2n for the high-pass (Butterworth magnitude)
            with np.errstate(divide="ignore", over="ignore"):
                ratio = (f / fc) if kind == "lowpass" else (fc / np.where(f > 0, f, 1e-12))
                out[i] = 1.0 / (1.0 + ratio ** (2 * order))
        else:
            h = Filter(kind=kind, type=type, order=order, cutoff_hz=float(fc), ripple_db=ripple_db,
                       stop_db=stop_db).response(f)
            out[i] = np.abs(h) ** 2
    return out


def occupied_bandwidth_rows(psd_rows: np.ndarray, freqs_hz: np.ndarray, span_hz: tuple[float, float],
                           fraction: float = 0.99) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper occupied-bandwidth edges of each row of PSDs, Hz.

    Row by row the same computation as :func:`voiceband.measurement.bandwidth.occupied_bandwidth`
    (fractional-bin cumulative power, ``(1 - fraction)/2`` below and above, edges interpolated
    inside bins), vectorised over rows.
    """
    from ..measurement.bandwidth import bin_boundaries_hz

    f = np.asarray(freqs_hz, dtype=np.float64)
    b = bin_boundaries_hz(f)
    df = f[1] - f[0]
    c = np.concatenate([np.zeros((psd_rows.shape[0], 1)), np.cumsum(psd_rows * df, axis=1)], axis=1)
    lo, hi = max(span_hz[0], b[0]), min(span_hz[1], b[-1])
    inside = np.flatnonzero((b > lo) & (b < hi))
    x = np.concatenate(([lo], b[inside], [hi]))

    def at(g: float) -> np.ndarray:
        k = int(np.clip(np.searchsorted(b, g, side="right") - 1, 0, b.size - 2))
        w = (g - b[k]) / (b[k + 1] - b[k])
        return c[:, k] + w * (c[:, k + 1] - c[:, k])

    c_lo = at(lo)
    y = np.concatenate([np.zeros((c.shape[0], 1)), c[:, inside] - c_lo[:, None], (at(hi) - c_lo)[:, None]], axis=1)
    total = y[:, -1]
    tail = (1.0 - fraction) / 2.0 * total
    rows = np.arange(y.shape[0])

    def interp(i: np.ndarray, target: np.ndarray) -> np.ndarray:
        y0, y1 = y[rows, i], y[rows, i + 1]
        dy = y1 - y0
        t = np.where(dy > 0, (target - y0) / np.where(dy > 0, dy, 1.0), 0.0)
        return x[i] + np.clip(t, 0.0, 1.0) * (x[i + 1] - x[i])

    i = np.clip(np.sum(y <= tail[:, None], axis=1) - 1, 0, x.size - 2)
    j = np.clip(np.sum(y < (total - tail)[:, None], axis=1), 1, x.size - 1)
    return interp(i, tail), interp(j - 1, total - tail)


def sweep_cutoffs(low_hz, high_hz, *, order: int = 4, type: str = "butterworth", ripple_db=None, stop_db=None,
                  max_bandwidth_hz: Optional[float] = None, snrs_db: Optional[Sequence[float]] = None,
                  receive_band_hz=None, speech=None) -> SweepResult:
    """Score every (high-pass, low-pass) cutoff pair (see the module docstring).

    Parameters
    ----------
    low_hz, high_hz : array_like
        High-pass and low-pass cutoffs, Hz.
    order, type, ripple_db, stop_db : keyword-only
        Filter family of both filters (:class:`voiceband.chain.Filter`).
    max_bandwidth_hz : float, optional
        Occupied-bandwidth limit, Hz.
    snrs_db : sequence of float, optional
        Channel SNRs (default :data:`voiceband.design.evaluate.DEFAULT_SNRS_DB`).
    receive_band_hz : (float, float), optional
        Receive passband of the channel noise (default 300-3000 Hz).
    speech : SpeechModel, optional
        Default the standard speech model; :func:`voiceband.design.speech.talker_speech` for a voice.
    """
    from ..chain.stages import Filter
    from ..intelligibility import band_gains_db, channel_sii, sii
    from .evaluate import DEFAULT_RECEIVE_BAND_HZ, DEFAULT_SNRS_DB
    from .speech import standard_speech

    lows = np.asarray(low_hz, dtype=np.float64)
    highs = np.asarray(high_hz, dtype=np.float64)
    if lows.ndim != 1 or highs.ndim != 1 or lows.size == 0 or highs.size == 0:
        raise MeasurementError("give at least one high-pass and one low-pass cutoff.")
    # one check of the family and its parameters (raises SignalValueError with the parameter's name)
    Filter(kind="lowpass", type=type, order=order, cutoff_hz=float(highs[0]), ripple_db=ripple_db, stop_db=stop_db)
    snrs = tuple(float(s) for s in (DEFAULT_SNRS_DB if snrs_db is None or len(snrs_db) == 0 else snrs_db))
    band = tuple(DEFAULT_RECEIVE_BAND_HZ if receive_band_hz is None else receive_band_hz)
    if max_bandwidth_hz is not None and not (np.isfinite(max_bandwidth_hz) and max_bandwidth_hz > 0):
        raise MeasurementError(f"--max-bandwidth must be a positive number of Hz; got {max_bandwidth_hz!r}.")
    model = standard_speech() if speech is None else speech
    f = model.freqs_hz
    hp = filter_power_response("highpass", lows, f, order=order, type=type, ripple_db=ripple_db, stop_db=stop_db)
    lp = filter_power_response("lowpass", highs, f, order=order, type=type, ripple_db=ripple_db, stop_db=stop_db)
    # every candidate is referred to its own passband peak (the listener sets the volume)
    ii, jj = np.meshgrid(np.arange(lows.size), np.arange(highs.size), indexing="ij")
    valid = lows[ii] < highs[jj]
    pairs = np.flatnonzero(valid.ravel())
    n_pairs = pairs.size
    if n_pairs == 0:
        raise MeasurementError("every high-pass cutoff is at or above every low-pass cutoff; no pair to score.")
    snr_arr = np.asarray(snrs)
    score = np.full(lows.size * highs.size, np.nan)
    quiet = np.full(lows.size * highs.size, np.nan)
    by_snr = np.full((lows.size * highs.size, len(snrs)), np.nan)
    obw = np.full(lows.size * highs.size, np.nan)
    obw_lo = np.full(lows.size * highs.size, np.nan)
    obw_hi = np.full(lows.size * highs.size, np.nan)
    for start in range(0, n_pairs, _CHUNK):
        idx = pairs[start:start + _CHUNK]
        pi, pj = ii.ravel()[idx], jj.ravel()[idx]
        power = hp[pi] * lp[pj]
        peak = np.max(power, axis=1, keepdims=True)
        gains = band_gains_db(f, np.sqrt(power / peak), outside_gain_db=-np.inf)
        speech_db = model.speech_db + gains
        quiet[idx] = sii(speech_db).index
        res = channel_sii(snr_arr, speech_db=speech_db[:, None, :], receive_band_hz=band)
        by_snr[idx] = res.index
        score[idx] = np.mean(res.index, axis=1)
        # occupied bandwidth over 20 Hz ... top of the grid (the span of voiceband chain and compare)
        lo_e, hi_e = occupied_bandwidth_rows(model.psd * power, f, (20.0, float(f[-1])))
        obw_lo[idx], obw_hi[idx], obw[idx] = lo_e, hi_e, hi_e - lo_e
    shape = (lows.size, highs.size)
    score, quiet, obw, obw_lo, obw_hi = (a.reshape(shape) for a in (score, quiet, obw, obw_lo, obw_hi))
    by_snr = by_snr.reshape(shape + (len(snrs),))

    def candidate(i: int, j: int) -> SweepCandidate:
        return SweepCandidate(float(lows[i]), float(highs[j]), float(score[i, j]), float(quiet[i, j]),
                              tuple(float(v) for v in by_snr[i, j]), float(obw[i, j]), float(obw_lo[i, j]),
                              float(obw_hi[i, j]))

    ok = np.isfinite(score)
    within = ok if max_bandwidth_hz is None else ok & (obw <= max_bandwidth_hz)
    best = None
    if np.any(within):
        # highest score; among equal scores (to 1e-9) the narrower occupied bandwidth
        masked = np.where(within, score, -np.inf)
        top = np.max(masked)
        tie = within & (masked >= top - 1e-9)
        k = np.unravel_index(np.argmin(np.where(tie, obw, np.inf)), shape)
        best = candidate(int(k[0]), int(k[1]))
    order_idx = np.argsort(np.where(ok, obw, np.inf), axis=None, kind="stable")
    front = []
    best_so_far = -np.inf
    for flat in order_idx:
        i, j = np.unravel_index(flat, shape)
        if not ok[i, j]:
            break
        if score[i, j] > best_so_far + 1e-9:
            front.append(candidate(int(i), int(j)))
            best_so_far = score[i, j]
    return SweepResult(lows, highs, score, quiet, by_snr, obw, obw_lo, obw_hi, best, tuple(front), snrs, band,
                       None if max_bandwidth_hz is None else float(max_bandwidth_hz), int(order), type, model.name)
