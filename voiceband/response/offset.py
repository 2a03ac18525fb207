"""SSB carrier-offset detection and per-tone tracking.

A single-sideband link whose receiver is tuned Δf away from the transmitter moves every
audio frequency by the same Δf (typically ±5–50 Hz): a shift, not a scaling.  A sweep
is smeared by it, so the offset is detected first:

* with steady tones (a multitone or a pilot tone), each recorded tone sits at
  (f_k + Δf)/r, r being the recording's clock ratio; a straight-line fit of recorded
  against stimulus tone frequencies gives both Δf and r.  The response is then
  measured tone by tone, following each tone's peak frame by frame ("per-tone
  tracking"), so a drifting offset does not bias the levels;
* with a sweep, the recording is demodulated by the stimulus (z_a·x_a*, analytic
  signals); the frequency of the product is Δf − f·τ/L, where τ is the remaining delay
  error plus the chain's group delay, and a straight-line fit against the sweep's
  instantaneous frequency f gives Δf.  A group delay that varies across the band biases
  this estimate (to first order a shift Δf looks like a group delay −Δf·L/f); a
  multitone or pilot measures the offset more reliably.

References
----------
An SSB link shifts every audio frequency by the carrier offset (a shift, not a scaling):
estimate it first (pilot tone), or use stepped tones / a multitone with per-tone frequency
tracking (common practice).  Single-sideband frequency shifting with the analytic signal (Hilbert
transform): A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal Processing*, 3rd
ed., section 12.4 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..arrays import median
from ..errors import MeasurementError
from ..fourier import rfft
from ._framing import frames, parabolic_peak
from .stimulus import ToneSet

__all__ = [
    "ToneOffset",
    "TrackedTones",
    "SweepOffset",
    "shift_frequency",
    "tone_offset",
    "track_tones",
    "tone_transfer",
    "sweep_offset",
    "DEFAULT_MAX_OFFSET_HZ",
]

#: Largest carrier offset searched for (Hz); ±5–50 Hz is typical of SSB links (common practice).
DEFAULT_MAX_OFFSET_HZ = 150.0
#: A tone counts as received when its peak stands this far above the local noise floor.
_TONE_SNR_DB = 20.0


@dataclass(frozen=True)
class ToneOffset:
    """Carrier offset and clock ratio measured from steady tones.

    Attributes
    ----------
    frequency_offset_hz : float
        Δf, on the stimulus's clock.
    stderr_hz : float
        Standard error of Δf from the fit residuals (0 with fewer than three tones).
    clock_ratio : float or None
        r from the fit, or None when fewer than three tones spanning half an octave were received.
    recorded_frequencies_hz : numpy.ndarray
        Where each tone was found (NaN where it was not received).
    received : numpy.ndarray of bool
        Tones standing at least 20 dB above the local noise floor.
    """

    frequency_offset_hz: float
    stderr_hz: float
    clock_ratio: float | None
    recorded_frequencies_hz: np.ndarray
    received: np.ndarray


@dataclass(frozen=True)
class TrackedTones:
    """Tone-by-tone response found by tracking each tone frame by frame.

    Attributes
    ----------
    frequencies_hz : numpy.ndarray
        Stimulus tone frequencies.
    gain : numpy.ndarray
        Recorded ÷ stimulus amplitude of each tone (energy ratio over all frames).
    snr_db : numpy.ndarray
        Each tone's level over the noise floor beside it in the recording.
    offset_track_hz : numpy.ndarray
        Offset per frame (median over received tones; NaN where none).
    frame_times_s : numpy.ndarray
        Frame centres, seconds from the start of the stimulus.
    """

    frequencies_hz: np.ndarray
    gain: np.ndarray
    snr_db: np.ndarray
    offset_track_hz: np.ndarray
    frame_times_s: np.ndarray


@dataclass(frozen=True)
class SweepOffset:
    """Carrier offset read from a recorded sweep.

    Attributes
    ----------
    frequency_offset_hz : float
    stderr_hz : float
        Standard error from the fit residuals.
    blocks_used : int
        10 ms blocks inside the passband that entered the fit.
    """

    frequency_offset_hz: float
    stderr_hz: float
    blocks_used: int


def shift_frequency(x: np.ndarray, shift_hz: float, sample_rate_hz: int) -> np.ndarray:
    """Move every frequency of ``x`` by ``shift_hz`` (single-sideband shift).

    Re{x_a(t)·e^{j2π·shift·t}} with x_a the analytic signal (:func:`.signaltools.analytic_signal`).
    """
    from ..fastlen import next_fast_len

    from .signaltools import analytic_signal

    x = np.asarray(x, dtype=np.float64)
    if shift_hz == 0.0 or x.size == 0:
        return x.copy()
    xa = analytic_signal(x, next_fast_len(x.size))[: x.size]
    t = np.arange(x.size, dtype=np.float64) / sample_rate_hz
    return np.real(xa * np.exp(2j * np.pi * float(shift_hz) * t))


def _search_width_hz(tones: ToneSet, max_offset_hz: float) -> float:
    if tones.spacing_hz is None:
        return float(max_offset_hz)
    return float(min(max_offset_hz, 0.45 * tones.spacing_hz))


def tone_offset(
    recording: np.ndarray,
    sample_rate_hz: int,
    tones: ToneSet,
    *,
    max_offset_hz: float = DEFAULT_MAX_OFFSET_HZ,
) -> ToneOffset:
    """Carrier offset (and clock ratio) from where the stimulus tones lie in a recording.

    ``recording`` should be the stretch holding the tones.  A coarse offset maximises the
    summed log power (Welch, 0.25 s segments) at f_k + δ over |δ| ≤ ``max_offset_hz``
    (and less than half the tone spacing, beyond which a comb of equal tones is
    ambiguous); each tone is then found in the Hann-windowed, 4× zero-padded spectrum
    within ±(4 bins + 0.6 % of its frequency) and refined by a parabola through the log
    magnitude.  Received tones give f_rec = (f_k + Δf)/r by weighted least squares.

    Raises
    ------
    MeasurementError
        No tone stands 20 dB above the noise: the recording does not contain the stimulus.
    """
    from .signaltools import welch_psd

    fs = int(sample_rate_hz)
    y = np.asarray(recording, dtype=np.float64)
    fk = tones.frequencies_hz
    width = _search_width_hz(tones, max_offset_hz)
    nper = int(min(y.size, 2 ** np.ceil(np.log2(0.25 * fs))))
    fw, pw = welch_psd(y, fs, segment_length=nper)
    logp = np.log(pw + pw.max() * 1e-12 + 1e-300)
    deltas = np.arange(-width, width + 1e-9, 0.25)
    score = np.array([np.sum(np.interp(fk + d, fw, logp)) for d in deltas])
    coarse = float(deltas[int(np.argmax(score))])

    n = y.size
    w = np.hanning(n)
    nfft = int(2 ** np.ceil(np.log2(4 * n)))
    mag = np.abs(rfft(y * w, nfft))
    top = float(mag.max()) if mag.size else 0.0
    if top <= 0.0:
        raise MeasurementError("The recording is silent where the stimulus tones should be.")
    logm = np.log(mag + top * 1e-12)
    bin_hz = fs / nfft
    found = np.full(fk.size, np.nan)
    snr = np.full(fk.size, -np.inf)
    for i, f in enumerate(fk):
        half = 4.0 * fs / n + 0.006 * f
        lo = max(1, int(np.floor((f + coarse - half) / bin_hz)))
        hi = min(mag.size - 2, int(np.ceil((f + coarse + half) / bin_hz)))
        if hi <= lo:
            continue
        j = lo + int(np.argmax(mag[lo:hi + 1]))
        delta, peak_log = parabolic_peak(logm, np.array([j]))
        found[i] = (j + float(delta[0])) * bin_hz
        ring_lo = max(1, j - int(6 * half / bin_hz))
        ring_hi = min(mag.size, j + int(6 * half / bin_hz) + 1)
        ring = np.concatenate((mag[ring_lo:max(ring_lo, j - int(2 * half / bin_hz))], mag[j + int(2 * half / bin_hz) + 1:ring_hi]))
        floor = float(median(ring)) if ring.size else 0.0
        snr[i] = 20.0 * np.log10(np.exp(float(peak_log[0])) / max(floor, top * 1e-12))
    received = snr >= _TONE_SNR_DB
    if not np.any(received):
        raise MeasurementError(
            "None of the stimulus tones stands out of the recording's noise, so the recording does not contain the stimulus."
        )
    f_s = fk[received]
    f_r = found[received]
    if f_s.size >= 3 and f_s.max() >= 1.41 * f_s.min():
        slope, icpt = np.polyfit(f_s, f_r, 1)
        resid = f_r - (slope * f_s + icpt)
        dof = max(1, f_s.size - 2)
        sxx = np.sum((f_s - f_s.mean()) ** 2)
        se_icpt = float(np.sqrt(np.sum(resid**2) / dof * (1.0 / f_s.size + f_s.mean() ** 2 / sxx)))
        ratio = float(1.0 / slope)
        offset = float(icpt * ratio)
        return ToneOffset(offset, se_icpt * ratio, ratio, found, received)
    offset = float(median(f_r - f_s))
    return ToneOffset(offset, 0.0, None, found, received)


def _tone_frame_len(tones: ToneSet, fs: int, span_len: int) -> int:
    need = 0.1 * fs if tones.spacing_hz is None else max(0.1 * fs, 6.0 * fs / tones.spacing_hz)
    n = int(2 ** np.ceil(np.log2(need)))
    while n > 256 and n > span_len // 2:
        n //= 2
    return n


def track_tones(
    stimulus: np.ndarray,
    recording: np.ndarray,
    sample_rate_hz: int,
    tones: ToneSet,
    *,
    offset_hz: float,
    max_offset_hz: float = DEFAULT_MAX_OFFSET_HZ,
) -> TrackedTones:
    """Per-tone response by following each tone's peak frame by frame.

    ``stimulus`` and ``recording`` cover the same stretch, the recording already on the
    stimulus's clock and delay-aligned to within a few milliseconds.  In Hann frames of at
    least 0.1 s (and six times the inverse tone spacing), each tone's recorded peak is
    searched within ±min(10 Hz, ¼ spacing) of f_k + Δf and refined by a parabola; the
    stimulus amplitude is read at f_k.  The gain of tone k is
    sqrt(Σ_frames A_rec² / Σ_frames A_stim²), which also holds for stepped tones.
    """
    fs = int(sample_rate_hz)
    n = min(stimulus.size, recording.size)
    x = np.asarray(stimulus[:n], dtype=np.float64)
    y = np.asarray(recording[:n], dtype=np.float64)
    fk = tones.frequencies_hz
    flen = _tone_frame_len(tones, fs, n)
    hop = flen // 2
    fx, starts = frames(x, flen, hop)
    fy, _ = frames(y, flen, hop)
    if fx.shape[0] == 0:
        raise MeasurementError("The stimulus tones are too short to measure (less than 256 samples).")
    win = np.hanning(flen)
    nfft = 4 * flen
    bin_hz = fs / nfft
    sx = np.abs(rfft(fx * win, nfft, axis=1))
    sy = np.abs(rfft(fy * win, nfft, axis=1))
    norm = 2.0 / win.sum()
    top = float(max(sy.max(), 1e-300))
    logy = np.log(sy + top * 1e-12)
    half = min(10.0, 0.25 * tones.spacing_hz) if tones.spacing_hz is not None else 10.0
    half = max(half, 2.0 * fs / flen)
    rows = np.arange(sx.shape[0])
    ex = np.zeros((rows.size, fk.size))
    ey = np.zeros((rows.size, fk.size))
    dev = np.full((rows.size, fk.size), np.nan)
    snr = np.zeros(fk.size)
    for i, f in enumerate(fk):
        kx = int(round(f / bin_hz))
        ex[:, i] = (sx[:, kx] * norm) ** 2
        lo = max(1, int(np.floor((f + offset_hz - half) / bin_hz)))
        hi = min(sy.shape[1] - 2, int(np.ceil((f + offset_hz + half) / bin_hz)))
        j = lo + np.argmax(sy[:, lo:hi + 1], axis=1)
        delta, peak_log = parabolic_peak(logy, j)
        amp = np.exp(peak_log) * norm
        ey[:, i] = amp**2
        dev[:, i] = (j + delta) * bin_hz - f
        band = sy[:, max(1, lo - (hi - lo)):min(sy.shape[1], hi + (hi - lo))]
        floor = median(band, axis=1) * norm
        snr[i] = 10.0 * np.log10(np.sum(ey[:, i]) / max(float(np.sum(floor**2)), 1e-300))
    with np.errstate(invalid="ignore", divide="ignore"):
        gain = np.sqrt(ey.sum(axis=0) / ex.sum(axis=0))
    present = ex >= ex.max(axis=1, keepdims=True) * 0.01
    good = present & (snr[None, :] >= _TONE_SNR_DB)
    dev = np.where(good, dev, np.nan)
    with np.errstate(all="ignore"):
        track = np.array([np.nanmedian(r) if np.any(np.isfinite(r)) else np.nan for r in dev]) + 0.0
    times = (starts + flen / 2.0) / fs
    return TrackedTones(frequencies_hz=fk.copy(), gain=gain, snr_db=snr, offset_track_hz=track, frame_times_s=times)


def tone_transfer(stimulus: np.ndarray, recording: np.ndarray, sample_rate_hz: int, tones: ToneSet) -> np.ndarray:
    """Complex ratio recorded ÷ stimulus at each tone (no offset; exactly aligned signals).

    Hann-windowed DTFT of both at the tone frequencies.  Time zero is the first sample of
    the excerpts, so the phase includes whatever delay is left between them.
    """
    n = min(stimulus.size, recording.size)
    w = np.hanning(n)
    t = np.arange(n, dtype=np.float64) / sample_rate_hz
    xs = np.asarray(stimulus[:n], dtype=np.float64) * w
    ys = np.asarray(recording[:n], dtype=np.float64) * w
    out = np.empty(tones.frequencies_hz.size, dtype=complex)
    for i, f in enumerate(tones.frequencies_hz):
        e = np.exp(-2j * np.pi * f * t)
        xk = np.dot(xs, e)
        out[i] = np.dot(ys, e) / xk if abs(xk) > 0.0 else np.nan
    return out


def sweep_offset(
    stimulus: np.ndarray,
    recording: np.ndarray,
    sample_rate_hz: int,
    *,
    band_hz: tuple[float, float],
    passband_db: float = -3.0,
) -> SweepOffset:
    """Carrier offset from a recorded sweep, by demodulating it with the stimulus.

    ``stimulus`` (the sweep) and ``recording`` are excerpts of equal length, aligned to
    within a few milliseconds and on the same clock.  The product p = z_a·x_a* is
    smoothed over 2.5 ms; in 10 ms blocks its frequency (phase step between neighbouring
    samples, pulse-pair) is Δf − f·τ/L and the stimulus's own frequency f is read the
    same way.  Blocks inside ``band_hz`` where the recording is within ``passband_db``
    of its strongest block enter a least-squares line d = Δf + b·f.  Group delay that
    varies across the passband biases Δf (a band-pass's rise in delay towards its lower
    edge mimics an offset): with a 4 s sweep over 20 Hz–20 kHz at 48 kHz, about −0.2 Hz
    for a Butterworth band-pass 200–5000 Hz made with ``scipy.signal.butter(2, …)`` and
    −1.2 Hz for one 300–3000 Hz made with ``butter(8, …)`` (measured while writing this
    module).

    Raises
    ------
    MeasurementError
        Fewer than ten blocks lie in the passband.
    """
    from ..fastlen import next_fast_len

    from .signaltools import analytic_signal

    fs = int(sample_rate_hz)
    n = min(stimulus.size, recording.size)
    nf = next_fast_len(n)
    xa = analytic_signal(np.asarray(stimulus[:n], dtype=np.float64), nf)[:n]
    za = analytic_signal(np.asarray(recording[:n], dtype=np.float64), nf)[:n]
    p = za * np.conj(xa)
    m = max(2, int(round(0.0025 * fs)))
    c = np.concatenate(([0.0], np.cumsum(p)))
    ps = (c[m:] - c[:-m]) / m
    blk = max(4, int(round(0.01 * fs)))
    nb = (ps.size - 1) // blk
    if nb < 10:
        raise MeasurementError("The recorded sweep is too short to measure a frequency offset.")
    # Per block, sum of conj(v[k]) * v[k + 1] (numpy.vecdot conjugates its first argument:
    # BLAS zdotc per block, without the block-length temporaries)
    def lag_one(v: np.ndarray) -> np.ndarray:
        return np.vecdot(v[: nb * blk].reshape(nb, blk), v[1:nb * blk + 1].reshape(nb, blk))

    d = np.angle(lag_one(ps)) * fs / (2.0 * np.pi)
    f = np.angle(lag_one(xa)) * fs / (2.0 * np.pi)
    zb = za[: nb * blk].reshape(nb, blk)
    power = np.vecdot(zb, zb).real / blk
    lo, hi = band_hz
    inband = (f >= lo) & (f <= hi)
    if not np.any(inband):
        raise MeasurementError("The recorded sweep has no energy in its band; no frequency offset can be measured.")
    strong = power >= power[inband].max() * 10.0 ** (passband_db / 10.0)
    use = inband & strong
    if np.count_nonzero(use) < 10:
        raise MeasurementError("Too little of the recorded sweep lies in the passband to measure a frequency offset.")
    A = np.stack([np.ones(np.count_nonzero(use)), f[use]], axis=1)
    coef, *_ = np.linalg.lstsq(A, d[use], rcond=None)
    resid = d[use] - A @ coef
    dof = max(1, resid.size - 2)
    cov = np.linalg.inv(A.T @ A) * float(np.sum(resid**2)) / dof
    return SweepOffset(frequency_offset_hz=float(coef[0]), stderr_hz=float(np.sqrt(cov[0, 0])), blocks_used=int(resid.size))
