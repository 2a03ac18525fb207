"""Measuring a chain's response from a stimulus and its recording (orchestration only).

``measure_response`` takes the two arrays at their native sample rates and returns a
frozen :class:`ResponseResult`.  The steps, each in its own module:

1. :mod:`.quality` refuses a silent or clipped recording;
2. :mod:`.stimulus` recognises the stimulus (exponential sweep with markers, or steady tones);
3. :mod:`.align` converts the recording to the stimulus's rate, finds the stimulus in it
   and measures the clock ratio;
4. :mod:`.offset` detects an SSB carrier offset and, for tones, tracks each tone;
5. :mod:`.deconvolve` turns a sweep into linear and harmonic impulse responses;
6. :mod:`.metrics` reads off passband level, edges and ripple.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..arrays import median
from .. import validate
from ..errors import MeasurementError, SignalValueError
from ..findings import Finding, finding
from ..fourier import rfft
from . import align as _align
from .deconvolve import (
    band_limit_response,
    deconvolve,
    deconvolved_noise_power,
    separate_harmonics,
    window_group_delay_s,
    window_response,
)
from .metrics import ResponseEdges, response_edges, passband_level_db, passband_ripple_db
from .offset import DEFAULT_MAX_OFFSET_HZ, shift_frequency, sweep_offset, tone_offset, tone_transfer, track_tones
from .quality import check_recording
from .stimulus import StimulusAnalysis, active_segments, analyse_stimulus
from ._framing import log_grid_hz

__all__ = [
    "HarmonicLevel",
    "ResponseResult",
    "measure_response",
    "HARMONIC_ORDERS",
    "POINTS_PER_OCTAVE",
    "MIN_ENVELOPE_MATCH",
    "SWEEP_OFFSET_RESOLUTION_HZ",
    "TONE_OFFSET_RESOLUTION_HZ",
]

#: Harmonic orders separated from a sweep.
HARMONIC_ORDERS = (2, 3, 4, 5)
#: Frequency grid of a sweep response (points per octave).
POINTS_PER_OCTAVE = 48
#: Below this band-envelope match coefficient the recording is taken not to hold the stimulus.
MIN_ENVELOPE_MATCH = 0.3
#: Smallest carrier offset a sweep reports (Hz); smaller estimates are within the
#: confusion of offset and group-delay variation (see :mod:`.offset`).
SWEEP_OFFSET_RESOLUTION_HZ = 2.0
#: Smallest carrier offset tones report (Hz).
TONE_OFFSET_RESOLUTION_HZ = 0.1
#: The impulse response's peak must exceed the RMS of the whole deconvolution this many times.
_MIN_PEAK_TO_RMS = 10.0
#: Quiet stretches used for the noise floor: at least this long (s).
_MIN_QUIET_S = 0.1
_IR_TAIL_S = 0.1
_MIN_PHASE_SNR_DB = 10.0
_GUARD_S = 0.02


#: A harmonic less than this far above the measurement's own floor is reported as below the floor:
#: there the floor makes up a quarter or more of the power read, so the figure is mostly the
#: method's (our choice; 6 dB is a power ratio of 4).
FLOOR_MARGIN_DB = 6.0


@dataclass(frozen=True)
class HarmonicLevel:
    """Level of one harmonic order relative to the fundamental, power-averaged over the
    passband; None when it was not measurable (below the noise, or outside the band).

    ``floor_db_re_fundamental`` is what the same analysis reads for a perfect chain (the
    stimulus deconvolved with itself): band-limiting, windowing and the sample format leave
    that much in the harmonic windows, so a level within :data:`FLOOR_MARGIN_DB` of it says
    only that the harmonic is at most about that low (``below_floor``).
    """

    order: int
    level_db_re_fundamental: float | None
    floor_db_re_fundamental: float | None = None

    @property
    def below_floor(self) -> bool:
        """The level lies within :data:`FLOOR_MARGIN_DB` of (or under) the measurement's own floor."""
        return (self.level_db_re_fundamental is not None and self.floor_db_re_fundamental is not None
                and self.level_db_re_fundamental < self.floor_db_re_fundamental + FLOOR_MARGIN_DB)


@dataclass(frozen=True)
class ResponseResult:
    """A chain's measured response.

    Attributes
    ----------
    stimulus_kind : str
        ``"sweep"`` or ``"tones"``.
    sample_rate_hz : int
        Analysis rate (the stimulus's).
    recording_sample_rate_hz : int
    analysis_band_hz : (float, float)
        Frequencies the stimulus covers and the recording can hold.
    frequencies_hz : numpy.ndarray
        Log-spaced (1/48 octave) for a sweep; the tone frequencies for tones.
    magnitude_db : numpy.ndarray
        Relative to ``passband_level_db`` (NaN where the signal-to-noise ratio is below 0 dB).
    phase_deg : numpy.ndarray
        Wrapped to (−180, 180], time zero at ``delay_s``; NaN where not measurable: SNR
        below 10 dB, and always after a carrier-offset correction (the carrier phase is
        unknown).
    group_delay_s : numpy.ndarray
        Relative to ``delay_s``; NaN where the SNR is below 10 dB.
    snr_db : numpy.ndarray
        Signal-to-noise ratio per frequency; NaN when the recording has no quiet stretch.
    passband_level_db : float
        Recording level re stimulus level at the passband peak (the chain's gain).
    passband_peak_hz : float
    edges_hz : ResponseEdges
    ripple_db : float or None
    delay_s : float
        Time in the recording (its own clock, from its first sample) at which the stimulus's
        first sample arrives, including the chain's latency to its impulse-response peak.
    clock_ratio : float
        Recorded duration ÷ stimulus duration after nominal rate conversion.
    clock_ratio_measured : bool
        False when the stimulus offered nothing to measure it (then 1.0).
    frequency_offset_hz : float
        SSB carrier offset; 0.0 when none larger than ``frequency_offset_resolution_hz`` was found.
    frequency_offset_corrected : bool
    frequency_offset_resolution_hz : float
    frequency_offset_spread_hz : float or None
        Range of the offset over time (tones with a corrected offset only).
    harmonics : tuple of HarmonicLevel
        Orders 2–5 summarised over the passband (sweep; a single tone gives them too).
    thd_frequencies_hz : numpy.ndarray
        Input (fundamental) frequencies of the distortion curves.
    harmonic_levels_db : numpy.ndarray
        orders × frequencies, each harmonic re fundamental (NaN where not measurable).
    thd_db : numpy.ndarray
        Total harmonic distortion (orders 2–5) re fundamental per input frequency.
    findings : tuple of Finding
        Plain-language notes about the measurement (codes in :data:`voiceband.findings.FINDINGS`).
    """

    stimulus_kind: str
    sample_rate_hz: int
    recording_sample_rate_hz: int
    analysis_band_hz: tuple[float, float]
    frequencies_hz: np.ndarray
    magnitude_db: np.ndarray
    phase_deg: np.ndarray
    group_delay_s: np.ndarray
    snr_db: np.ndarray
    passband_level_db: float
    passband_peak_hz: float
    edges_hz: ResponseEdges
    ripple_db: float | None
    delay_s: float
    clock_ratio: float
    clock_ratio_measured: bool
    frequency_offset_hz: float
    frequency_offset_corrected: bool
    frequency_offset_resolution_hz: float
    frequency_offset_spread_hz: float | None
    harmonics: tuple[HarmonicLevel, ...]
    thd_frequencies_hz: np.ndarray
    harmonic_levels_db: np.ndarray
    thd_db: np.ndarray
    findings: tuple[Finding, ...] = field(default=())


# --------------------------------------------------------------------------- helpers


def _readonly(a: np.ndarray) -> np.ndarray:
    a = np.array(a, dtype=np.float64)
    a.setflags(write=False)
    return a


def _take(x: np.ndarray, start: int, length: int) -> np.ndarray:
    """x[start:start+length], zero-padded where it runs off either end."""
    out = np.zeros(length)
    a, b = max(start, 0), min(start + length, x.size)
    if b > a:
        out[a - start:b - start] = x[a:b]
    return out


def _check_stimulus(x: np.ndarray, fs: int) -> np.ndarray:
    x = np.asarray(x, dtype=np.float64)
    if x.ndim != 1 or x.size == 0:
        raise SignalValueError("The stimulus must be a non-empty single channel of samples.")
    validate.measurable_samples(x, name="The stimulus's samples", sample_rate_hz=fs if isinstance(fs, (int, np.integer)) and fs > 0 else None)
    if not isinstance(fs, (int, np.integer)) or fs <= 0:
        raise SignalValueError(f"stimulus_rate_hz must be a positive whole number of hertz, got {fs!r}.")
    return x


def _quiet_stretch(z: np.ndarray, origin: int, ana: StimulusAnalysis, fs: int) -> np.ndarray | None:
    """Longest stretch of the recording where the stimulus is silent (≥ 0.1 s), or None."""
    guard = int(_GUARD_S * fs)
    tail = int(_IR_TAIL_S * fs)
    cands = [(0, origin + ana.span.start - guard)]
    for a, b in zip(ana.segments[:-1], ana.segments[1:]):
        cands.append((origin + a.stop + tail, origin + b.start - guard))
    cands.append((origin + ana.span.stop + tail, z.size))
    best = None
    for a, b in cands:
        a, b = max(0, a), min(z.size, b)
        if b - a >= int(_MIN_QUIET_S * fs) and (best is None or b - a > best[1] - best[0]):
            best = (a, b)
    if best is None:
        return None
    quiet = z[best[0]:best[1]].view()
    quiet.setflags(write=False)  # read-only: the noise estimate made from it may be reused
    return quiet


def _find_sweep(x: np.ndarray, y: np.ndarray, ana: StimulusAnalysis, fs: int) -> _align.Match:
    """Coarse match of the sweep; the lag returned is that of stimulus sample 0.

    The markers are left out of the match (they may be cut off in the recording), but the
    sweep itself must lie wholly inside the recording.
    """
    seg = ana.sweep.segment
    if y.size < seg.length:
        raise MeasurementError(
            f"The recording ({y.size / fs:.2f} s) is shorter than the sweep in the stimulus "
            f"({seg.length / fs:.2f} s), so it cannot contain all of it."
        )
    m = _align.envelope_match(x[seg.start:seg.stop], y, fs)
    if m.coefficient < MIN_ENVELOPE_MATCH:
        raise MeasurementError(
            f"The recording does not contain the stimulus (best envelope match {m.coefficient:.2f}, "
            f"at least {MIN_ENVELOPE_MATCH:g} needed)."
        )
    tol = 0.005 * fs  # one envelope hop
    if m.lag < -tol:
        raise MeasurementError(f"The recording misses the start of the sweep: it begins {-m.lag / fs:.2f} s too late.")
    if m.lag + seg.length > y.size + tol:
        raise MeasurementError(
            f"The recording misses the end of the sweep: it stops {(m.lag + seg.length - y.size) / fs:.2f} s too early."
        )
    return _align.Match(lag=m.lag - seg.start, coefficient=m.coefficient)


def _summarise(freqs: np.ndarray, mag_raw_db: np.ndarray) -> tuple[np.ndarray, float, float, ResponseEdges, float | None]:
    level, ipk = passband_level_db(freqs, mag_raw_db)
    if not np.isfinite(level):
        raise MeasurementError("No frequency of the response stands above the recording's noise.")
    mag = mag_raw_db - level
    edges = response_edges(freqs, mag, ipk)
    ripple = passband_ripple_db(freqs, mag, edges)
    return mag, level, float(freqs[ipk]), edges, ripple


# --------------------------------------------------------------------------- sweep


def _measure_sweep(x, fs, y1, fs_rec, ana: StimulusAnalysis, max_offset_hz: float, ir_window_s: float) -> ResponseResult:
    sw = ana.sweep
    assert sw is not None
    seg = sw.segment
    findings: list[Finding] = []
    top = min(sw.stop_hz * 2.0 ** (-1.0 / 12.0), 0.45 * min(fs, fs_rec))
    band = (sw.start_hz * 2.0 ** (1.0 / 3.0), top)
    if band[1] <= 1.2 * band[0]:
        raise MeasurementError("The sweep's band lies above what the recording's sample rate can hold.")
    anchors = ana.anchors
    if len(anchors) < 2:
        findings.append(finding("sweep_without_markers"))
    margin = int(0.02 * fs)
    xs = x[seg.start - margin if seg.start >= margin else 0: seg.stop + margin]
    xs_start = max(seg.start - margin, 0)

    shift_hz = 0.0
    ratio = 1.0
    corrected = False
    for _ in range(4):
        y2 = shift_frequency(y1, -shift_hz / ratio, fs) if corrected else y1
        coarse = _find_sweep(x, y2, ana, fs)
        al = _align.align_to_anchors(x, y2, fs, anchors=anchors, coarse=coarse)
        ratio = al.clock_ratio
        z = _align.correct_clock(y2, ratio)
        origin = int(round(al.delay_samples / ratio))
        zs = _take(z, origin + xs_start, xs.size)
        try:
            est = sweep_offset(xs, zs, fs, band_hz=band)
        except MeasurementError:
            # Too little of the sweep in the passband to read its frequency track: the
            # response can still be measured, the offset cannot.
            findings.append(finding("offset_not_checked"))
            break
        if not corrected:
            if abs(est.frequency_offset_hz) < max(SWEEP_OFFSET_RESOLUTION_HZ, 4.0 * est.stderr_hz):
                break
            if abs(est.frequency_offset_hz) > max_offset_hz:
                raise MeasurementError(
                    f"The recording does not contain the stimulus sweep: its frequency track departs from the "
                    f"stimulus's by {est.frequency_offset_hz:+.1f} Hz, more than the ±{max_offset_hz:g} Hz a carrier "
                    "offset may have."
                )
            corrected = True
        shift_hz += est.frequency_offset_hz
        if corrected and abs(est.frequency_offset_hz) < 0.05:
            break
    if len(anchors) >= 2 and al.anchors_used < 2:
        findings.append(finding("one_marker_found"))
    if corrected:
        findings.append(finding("carrier_offset_sweep", offset_hz=shift_hz))

    tail = int(round((ir_window_s + 0.05) * fs))
    ys = _take(z, origin + xs_start, xs.size + tail)
    dec = deconvolve(ys, xs, sample_rate_hz=fs, band_hz=(sw.start_hz, sw.stop_hz))
    lc = sw.rate_constant_s
    search = (-int(0.2 * lc * np.log(2.0) * fs), int(0.1 * fs))
    sep = separate_harmonics(dec, rate_constant_s=lc, peak_search_lags=search, orders=HARMONIC_ORDERS, post_s=ir_window_s)
    h = dec.impulse_response
    rms = float(np.sqrt(np.mean(h * h)))
    if rms <= 0.0 or abs(h[(sep.peak_lag + dec.band_limit_peak_lag) % h.size]) < _MIN_PEAK_TO_RMS * rms:
        raise MeasurementError(
            "The recording does not contain the stimulus sweep (no clear impulse response after deconvolution)."
        )

    freqs = log_grid_hz(band[0], band[1], points_per_octave=POINTS_PER_OCTAVE)
    limit, limit_gd = band_limit_response(dec, freqs)
    h1 = window_response(sep.linear, freqs, fs) / limit
    with np.errstate(divide="ignore"):
        mag_raw = 20.0 * np.log10(np.abs(h1))
    noise = _quiet_stretch(z, origin, ana, fs)
    if noise is not None:
        n1 = deconvolved_noise_power(dec, sep.linear, noise, freqs)
        with np.errstate(divide="ignore", invalid="ignore"):
            snr = 10.0 * np.log10(np.abs(h1) ** 2 / n1)
        low = snr < 0.0
        if np.any(low):
            findings.append(finding("points_below_noise", count=int(np.count_nonzero(low)), total=freqs.size))
        mag_raw = np.where(low, np.nan, mag_raw)
    else:
        snr = np.full(freqs.size, np.nan)
        findings.append(finding("no_quiet_stretch"))
    mag, level, peak_hz, edges, ripple = _summarise(freqs, mag_raw)
    phase = np.degrees(np.angle(h1))
    if corrected:
        phase = np.full(freqs.size, np.nan)
    # Phase and group delay only where the SNR is at least 10 dB (phase error below
    # about 18°) or unknown.
    keep = np.isfinite(mag) & ~(snr < _MIN_PHASE_SNR_DB)
    phase = np.where(keep, phase, np.nan)
    gd = np.where(keep, window_group_delay_s(sep.linear, freqs, fs) - limit_gd, np.nan)

    # Harmonic distortion per input frequency (Farina 2000: order k at output frequency k·f).
    # A point is reported where the fundamental is within 20 dB of the passband level and
    # the harmonic stands 10 dB above its expected noise power (a noise-only point passes
    # with probability e^-10); the passband summary subtracts the expected noise power and
    # needs the total to stand 3 dB above it.
    h1_pow = np.abs(h1) ** 2
    lo = edges.low_3db if edges.low_3db is not None else band[0]
    hi = edges.high_3db if edges.high_3db is not None else band[1]
    inpass = (freqs >= lo) & (freqs <= hi) & np.isfinite(mag)
    levels = np.full((len(HARMONIC_ORDERS), freqs.size), np.nan)
    # The method's own floor: the same analysis of the stimulus through a perfect chain (itself).
    ideal = deconvolve(_take(x, xs_start, xs.size + tail), xs, sample_rate_hz=fs, band_hz=(sw.start_hz, sw.stop_hz),
                       inverse=dec.inverse)
    isep = separate_harmonics(ideal, rate_constant_s=lc, peak_search_lags=search, orders=HARMONIC_ORDERS,
                              post_s=ir_window_s)
    ih1_pow = np.abs(window_response(isep.linear, freqs, fs) / band_limit_response(ideal, freqs)[0]) ** 2
    harmonics = []
    for i, win in enumerate(sep.harmonics):
        k = win.order
        # Outputs in the sweep's lowest two octaves are left out: the band-limited
        # impulse rings there long enough to reach the harmonic windows.
        ok = (k * freqs <= band[1]) & (k * freqs >= 4.0 * sw.start_hz) & np.isfinite(mag)
        summary = None
        if np.any(ok):
            pk = np.abs(window_response(win, k * freqs[ok], fs) / band_limit_response(dec, k * freqs[ok])[0]) ** 2
            nk = deconvolved_noise_power(dec, win, noise, k * freqs[ok]) if noise is not None else np.zeros(pk.size)
            with np.errstate(divide="ignore", invalid="ignore"):
                levels[i, ok] = np.where((pk >= 10.0 * nk) & (mag[ok] >= -20.0), 10.0 * np.log10(pk / h1_pow[ok]), np.nan)
            sel = inpass[ok]
            if np.any(sel) and np.sum(pk[sel]) >= 2.0 * np.sum(nk[sel]):
                mean_ratio = float(np.mean((pk[sel] - nk[sel]) / h1_pow[ok][sel]))
                summary = float(10.0 * np.log10(mean_ratio)) if mean_ratio > 0.0 else None
        floor = None
        if np.any(ok) and np.any(inpass[ok]):
            fk = k * freqs[ok][inpass[ok]]
            ipk = np.abs(window_response(isep.harmonics[i], fk, fs) / band_limit_response(ideal, fk)[0]) ** 2
            ratio_floor = float(np.mean(ipk / ih1_pow[ok][inpass[ok]]))
            floor = float(10.0 * np.log10(ratio_floor)) if ratio_floor > 0.0 else None
        harmonics.append(HarmonicLevel(k, summary, floor))
    with np.errstate(invalid="ignore"):
        thd_p = np.nansum(10.0 ** (levels / 10.0), axis=0)
    has_any = np.any(np.isfinite(levels), axis=0)
    thd = np.where(has_any & (thd_p > 0.0), 10.0 * np.log10(np.where(thd_p > 0.0, thd_p, 1.0)), np.nan)

    return ResponseResult(
        stimulus_kind="sweep",
        sample_rate_hz=fs,
        recording_sample_rate_hz=fs_rec,
        analysis_band_hz=(float(band[0]), float(band[1])),
        frequencies_hz=_readonly(freqs),
        magnitude_db=_readonly(mag),
        phase_deg=_readonly(phase),
        group_delay_s=_readonly(gd),
        snr_db=_readonly(snr),
        passband_level_db=level,
        passband_peak_hz=peak_hz,
        edges_hz=edges,
        ripple_db=ripple,
        delay_s=float((origin + sep.peak_lag) * ratio / fs),
        clock_ratio=float(ratio),
        clock_ratio_measured=al.anchors_used >= 2,
        frequency_offset_hz=float(shift_hz) if corrected else 0.0,
        frequency_offset_corrected=corrected,
        frequency_offset_resolution_hz=SWEEP_OFFSET_RESOLUTION_HZ,
        frequency_offset_spread_hz=None,
        harmonics=tuple(harmonics),
        thd_frequencies_hz=_readonly(freqs),
        harmonic_levels_db=_readonly(levels),
        thd_db=_readonly(thd),
        findings=tuple(findings),
    )


# --------------------------------------------------------------------------- tones


def _single_tone_harmonics(z: np.ndarray, fs: int, f0: float, offset_hz: float, band_hi: float) -> list[HarmonicLevel]:
    """Harmonics of a single tone from the recording's spectrum (levels re the fundamental)."""
    n = z.size
    w = np.hanning(n)
    nfft = int(2 ** np.ceil(np.log2(4 * n)))
    mag = np.abs(rfft(z * w, nfft))
    bin_hz = fs / nfft

    def peak_near(f: float, half: float) -> tuple[float, float]:
        lo = max(1, int((f - half) / bin_hz))
        hi = min(mag.size - 1, int((f + half) / bin_hz) + 1)
        j = lo + int(np.argmax(mag[lo:hi]))
        ring = np.concatenate((mag[max(1, lo - (hi - lo)):lo], mag[hi:hi + (hi - lo)]))
        return float(mag[j]), float(median(ring)) if ring.size else 0.0

    fund, _ = peak_near(f0 + offset_hz, 5.0)
    out = []
    for k in HARMONIC_ORDERS:
        fk = k * f0 + offset_hz
        if fk > band_hi:
            out.append(HarmonicLevel(k, None))
            continue
        a, floor = peak_near(fk, abs(offset_hz) * (k - 1) + 5.0)
        out.append(HarmonicLevel(k, float(20.0 * np.log10(a / fund)) if a > 3.0 * floor and fund > 0.0 else None))
    return out


def _measure_tones(x, fs, y1, fs_rec, ana: StimulusAnalysis, max_offset_hz: float) -> ResponseResult:
    tones = ana.tones
    assert tones is not None
    span = ana.span
    findings: list[Finding] = []
    found = _align.energy_match(x[span.start:span.stop], y1, fs)
    coarse = _align.Match(lag=found.lag - span.start, coefficient=found.coefficient)
    # Steady tones give no landmark inside them, so a recording that caught only part of
    # them shows as a recorded burst shorter than the stimulus.
    rec_segs = active_segments(y1, fs)
    if rec_segs and rec_segs[-1].stop - rec_segs[0].start < 0.9 * span.length:
        raise MeasurementError(
            f"The recording holds only {(rec_segs[-1].stop - rec_segs[0].start) / fs:.2f} s of signal against "
            f"{span.length / fs:.2f} s of tones in the stimulus; record the whole stimulus."
        )
    margin = int(0.1 * fs)
    excerpt = _take(y1, int(round(coarse.lag)) + span.start - margin, span.length + 2 * margin)
    off = tone_offset(excerpt, fs, tones, max_offset_hz=max_offset_hz)
    measured_ratio = off.clock_ratio is not None
    ratio = off.clock_ratio if off.clock_ratio is not None else 1.0
    if abs(ratio - 1.0) > _align.MAX_CLOCK_ERROR:
        raise MeasurementError(
            f"The recording runs {100.0 * (ratio - 1.0):+.2f} % against the stimulus clock, more than "
            f"±{100.0 * _align.MAX_CLOCK_ERROR:g} %; check that both files state their true sample rates."
        )
    if off.clock_ratio is None:
        findings.append(finding("tones_clock_not_measured"))
    resolution = max(TONE_OFFSET_RESOLUTION_HZ, 4.0 * off.stderr_hz)
    corrected = abs(off.frequency_offset_hz) >= resolution
    z = _align.correct_clock(y1, ratio)
    m = _align.energy_match(x[span.start:span.stop], z, fs)
    origin = m.lag - span.start
    if not corrected:
        fine = _align.locate(x[span.start:span.stop], z, expected_lag=m.lag, search_samples=int(0.01 * fs))
        if fine.coefficient > 0.0:
            origin = fine.lag - span.start
    origin_i = int(round(origin))
    xs = x[span.start:span.stop]
    zs = _take(z, origin_i + span.start, span.length)
    trk = track_tones(xs, zs, fs, tones, offset_hz=off.frequency_offset_hz if corrected else 0.0, max_offset_hz=max_offset_hz)
    with np.errstate(divide="ignore"):
        mag_raw = 20.0 * np.log10(trk.gain)
    low = trk.snr_db < 0.0
    mag_raw = np.where(low, np.nan, mag_raw)
    freqs = tones.frequencies_hz
    mag, level, peak_hz, edges, ripple = _summarise(freqs, mag_raw)
    if corrected:
        phase = np.full(freqs.size, np.nan)
        gd = np.full(freqs.size, np.nan)
        spread = float(np.nanmax(trk.offset_track_hz) - np.nanmin(trk.offset_track_hz)) if np.any(np.isfinite(trk.offset_track_hz)) else None
        findings.append(finding("carrier_offset_tones", offset_hz=off.frequency_offset_hz))
    else:
        hc = tone_transfer(xs, zs, fs, tones)
        phase = np.degrees(np.angle(hc))
        if freqs.size >= 2:
            gd = -np.gradient(np.unwrap(np.angle(hc)), 2.0 * np.pi * freqs)
        else:
            gd = np.full(freqs.size, np.nan)
        spread = None
    keep = np.isfinite(mag) & ~(trk.snr_db < _MIN_PHASE_SNR_DB)
    phase = np.where(keep, phase, np.nan)
    gd = np.where(keep, gd, np.nan)
    band = (float(freqs.min()), float(freqs.max()))
    if freqs.size == 1:
        harmonics = _single_tone_harmonics(zs, fs, float(freqs[0]), off.frequency_offset_hz if corrected else 0.0, 0.45 * min(fs, fs_rec))
    else:
        harmonics = [HarmonicLevel(k, None) for k in HARMONIC_ORDERS]
        findings.append(finding("tones_harmonics_not_separable"))
    return ResponseResult(
        stimulus_kind="tones",
        sample_rate_hz=fs,
        recording_sample_rate_hz=fs_rec,
        analysis_band_hz=band,
        frequencies_hz=_readonly(freqs),
        magnitude_db=_readonly(mag),
        phase_deg=_readonly(phase),
        group_delay_s=_readonly(gd),
        snr_db=_readonly(trk.snr_db),
        passband_level_db=level,
        passband_peak_hz=peak_hz,
        edges_hz=edges,
        ripple_db=ripple,
        delay_s=float(origin_i * ratio / fs),
        clock_ratio=float(ratio),
        clock_ratio_measured=bool(measured_ratio),
        frequency_offset_hz=float(off.frequency_offset_hz) if corrected else 0.0,
        frequency_offset_corrected=bool(corrected),
        frequency_offset_resolution_hz=float(resolution),
        frequency_offset_spread_hz=spread,
        harmonics=tuple(harmonics),
        thd_frequencies_hz=_readonly(np.zeros(0)),
        harmonic_levels_db=_readonly(np.zeros((len(HARMONIC_ORDERS), 0))),
        thd_db=_readonly(np.zeros(0)),
        findings=tuple(findings),
    )


# --------------------------------------------------------------------------- entry point


def measure_response(
    stimulus: np.ndarray,
    stimulus_rate_hz: int,
    recording: np.ndarray,
    recording_rate_hz: int,
    *,
    max_offset_hz: float = DEFAULT_MAX_OFFSET_HZ,
    ir_window_s: float = 0.4,
) -> ResponseResult:
    """Measure a chain's frequency response from a stimulus and its recording.

    Parameters
    ----------
    stimulus : numpy.ndarray
        1-D samples of the test signal as played: an exponential sweep (markers
        optional) or steady tones (multitone, two-tone, pilot, stepped tones).
    stimulus_rate_hz : int
    recording : numpy.ndarray
        1-D samples recorded at the chain's output, at their native rate and scale.
    recording_rate_hz : int
        May differ from ``stimulus_rate_hz``; the recording is converted inside the
        measurement.
    max_offset_hz : float
        Largest SSB carrier offset searched for.
    ir_window_s : float
        Length of the linear impulse-response window after its peak (sweeps), which sets
        the frequency resolution (1/``ir_window_s``).

    Returns
    -------
    ResponseResult

    Raises
    ------
    SignalValueError
        Empty or non-finite input.
    MeasurementError
        A silent or clipped recording, a recording shorter than the stimulus or not
        containing it, a clock more than 1 % off, or an unrecognised stimulus.
    """
    fs = int(stimulus_rate_hz)
    fs_rec = int(recording_rate_hz)
    x = _check_stimulus(stimulus, fs)
    if fs_rec <= 0:
        raise SignalValueError(f"recording_rate_hz must be a positive whole number of hertz, got {recording_rate_hz!r}.")
    if not 0.0 < float(max_offset_hz) <= 1000.0:
        raise SignalValueError(f"max_offset_hz must be above 0 and at most 1000 Hz, got {max_offset_hz}.")
    if not 0.01 <= float(ir_window_s) <= 5.0:
        raise SignalValueError(f"ir_window_s must be 0.01–5 s, got {ir_window_s}.")
    check_recording(recording, fs_rec)
    ana = analyse_stimulus(x, fs)
    y1 = _align.resample_to_rate(np.asarray(recording, dtype=np.float64), fs_rec, fs)
    if ana.kind == "sweep":
        r = _measure_sweep(x, fs, y1, fs_rec, ana, float(max_offset_hz), float(ir_window_s))
    else:
        r = _measure_tones(x, fs, y1, fs_rec, ana, float(max_offset_hz))
    _check_causal(r.delay_s, _first_active_s(x, fs))
    return r


#: Most negative delay accepted (s): a chain answers after it is driven; this much is left for the
#: alignment's own uncertainty around a zero-delay (loop-back) measurement.
CAUSAL_TOLERANCE_S = 0.001


def _first_active_s(x: np.ndarray, fs: int) -> float:
    """Time of the stimulus's first sample within 60 dB of its peak (s)."""
    a = np.abs(x)
    return float(np.argmax(a >= 1e-3 * float(a.max()))) / fs


def _check_causal(delay_s: float, stimulus_onset_s: float) -> None:
    """Refuse a response that peaks before the stimulus starts although the recording holds all of the
    stimulus: no causal chain gives one (a recording started after the playback, cutting the start of
    the stimulus, is measured: its delay is then relative to a point the recording does not hold)."""
    holds_start = stimulus_onset_s + delay_s >= 0.0
    if delay_s < -CAUSAL_TOLERANCE_S and holds_start:
        raise MeasurementError(
            f"The recording cannot be the stimulus passed through a chain: it holds the whole stimulus, yet its "
            f"response peaks {-delay_s:.4f} s before the stimulus starts, and a chain cannot answer before it is "
            "driven; check that the stimulus comes first and the recording second.")
