"""Sweep deconvolution, impulse-response windowing and harmonic separation.

The recording y of an exponential sweep x through a weakly nonlinear chain is
deconvolved by regularised spectral division,

    h = IFFT[ Y·X* / (|X|² + ε(f)) ],

with both signals zero-padded to at least len(x) + len(y) so the result is a linear (not
circular) deconvolution; negative lags wrap to the end of ``h``.  Inside the sweep's band
ε is 80 dB below the stimulus's median in-band power, so the division is exact there; outside
it ε rises to the in-band level, so nothing is amplified where the sweep put no energy.
Dividing by the sweep's own spectrum is what Farina's inverse filter (a time-reversed
sweep with a −6 dB/octave envelope, :func:`voiceband.synth.sweep.inverse_filter`) does
approximately; the division also cancels the sweep's fades exactly.

Because an exponential sweep spends the same time in every octave, the k-th harmonic of
the chain's output appears as an impulse response L·ln k *before* the linear one
(L = T/ln(f2/f1)).  Time windows cut the linear response and each harmonic's response;
the spectrum of the k-th window at output frequency k·f is the k-th harmonic's amplitude
for an input at f, relative to the input amplitude.

References
----------
A. Farina, AES 108th Convention, preprint 5093, 2000 (harmonic responses at −L·ln k).
S. Müller and P. Massarani, "Transfer-function measurement with sweeps", JAES 49(6), 2001
(spectral division, regularisation outside the band).  The regularisation levels are this
module's choice.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..arrays import median
from ..errors import MeasurementError
from ..fourier import irfft, rfft

__all__ = [
    "Deconvolution",
    "IRWindow",
    "SeparatedResponses",
    "deconvolve",
    "separate_harmonics",
    "window_response",
    "window_group_delay_s",
    "band_limit_response",
    "deconvolved_noise_power",
    "IN_BAND_REGULARISATION_DB",
]

#: ε inside the sweep band, relative to the stimulus's median in-band power.
IN_BAND_REGULARISATION_DB = -80.0
#: Longest pre-peak part of the linear window (s).
MAX_PRE_S = 0.1


@dataclass(frozen=True)
class Deconvolution:
    """A deconvolved impulse response and what is needed to judge its noise.

    Attributes
    ----------
    impulse_response : numpy.ndarray
        Length ``n_fft``; lag m ≥ 0 at index m, negative lags at the end.
    sample_rate_hz : int
    n_fft : int
    stimulus_power : numpy.ndarray
        |X(f)|² on the ``numpy.fft.rfftfreq(n_fft)`` grid.
    band_limit_hz : numpy.ndarray
        Frequency grid of ``band_limit`` (2^15 + 1 points from 0 to fs/2).
    band_limit : numpy.ndarray
        The minimum-phase band limit built into ``impulse_response`` (complex); see
        :func:`band_limit_response`.
    band_limit_peak_lag : int
        Lag of the band limit's own impulse-response peak (0 or a few samples); the
        chain's response peak is found this much later.
    recording_length : int
        Samples of the recording excerpt that was deconvolved.
    inverse : StimulusInverse or None
        The stimulus's inverse used, for deconvolving another recording of the same stimulus.
    """

    impulse_response: np.ndarray
    sample_rate_hz: int
    n_fft: int
    stimulus_power: np.ndarray
    band_limit_hz: np.ndarray
    band_limit: np.ndarray
    band_limit_peak_lag: int
    recording_length: int
    inverse: Optional["StimulusInverse"] = None


@dataclass(frozen=True)
class IRWindow:
    """One windowed impulse response cut from a :class:`Deconvolution`.

    Attributes
    ----------
    order : int
        1 for the linear response, k for the k-th harmonic.
    origin_lag : int
        Lag (in the full response) taken as time 0 for this window's phase.
    start_lag : int
        Lag of ``samples[0]`` (may be negative).
    samples : numpy.ndarray
        The impulse response times ``taper``.
    taper : numpy.ndarray
        The window itself (for noise scaling).
    """

    order: int
    origin_lag: int
    start_lag: int
    samples: np.ndarray
    taper: np.ndarray


@dataclass(frozen=True)
class SeparatedResponses:
    """The linear impulse response and the harmonic ones.

    Attributes
    ----------
    peak_lag : int
        Lag of the linear response's largest sample, less the band limit's peak lag.
    linear : IRWindow
    harmonics : tuple of IRWindow
        Orders 2, 3, … in ascending order.
    """

    peak_lag: int
    linear: IRWindow
    harmonics: tuple[IRWindow, ...]


def _next_fast(n: int) -> int:
    from ..fastlen import next_fast_len

    return next_fast_len(int(n), real=True)


@dataclass(frozen=True)
class StimulusInverse:
    """The regularised inverse of one stimulus sweep on one FFT grid (see :func:`deconvolve`).

    Everything in a deconvolution that depends on the stimulus alone: a recording and the
    stimulus itself (the method's own floor) are deconvolved with the same inverse, so it is
    built once.

    Attributes
    ----------
    n_fft : int
    stimulus_length : int
    sample_rate_hz : int
    band_hz : (float, float)
    spectrum : numpy.ndarray
        ``X``, the stimulus's rfft on the grid.
    inverse : numpy.ndarray
        ``conj(X)·L / (|X|² + ε)`` on the rfft grid, ``L`` the minimum-phase band limit's phase.
    stimulus_power, band_limit_hz, band_limit, band_limit_peak_lag
        As in :class:`Deconvolution`.
    """

    n_fft: int
    stimulus_length: int
    sample_rate_hz: int
    band_hz: tuple[float, float]
    spectrum: np.ndarray
    inverse: np.ndarray
    stimulus_power: np.ndarray
    band_limit_hz: np.ndarray
    band_limit: np.ndarray
    band_limit_peak_lag: int


def stimulus_inverse(stimulus: np.ndarray, *, n_fft: int, sample_rate_hz: int,
                     band_hz: tuple[float, float]) -> StimulusInverse:
    """The regularised inverse of ``stimulus`` on an ``n_fft``-point grid (see :func:`deconvolve`).

    Raises
    ------
    MeasurementError
        The stimulus has no energy in ``band_hz``.
    """
    fs = int(sample_rate_hz)
    x = np.asarray(stimulus, dtype=np.float64)
    n = int(n_fft)
    X = rfft(x, n)
    px = X.real**2 + X.imag**2
    f = np.arange(px.size) * fs / n
    lo, hi = float(band_hz[0]), float(band_hz[1])
    inband = (f >= lo) & (f <= hi)
    ref = float(median(px[inband])) if np.any(inband) else 0.0
    if ref <= 0.0:
        raise MeasurementError("The stimulus sweep has no energy in its own band; it cannot be deconvolved.")
    # Distance outside the band in octaves, scaled so ε reaches the in-band level one
    # octave below f1 (a gentle low edge keeps the band-limited impulse short there) and
    # 1/12 octave above f2 (where harmonics and out-of-band noise must not be amplified).
    # (in the band the ramp is 0: only the bins outside it are computed)
    outside = np.flatnonzero(~inband)
    with np.errstate(divide="ignore"):
        lf = np.log2(np.maximum(f[outside], 1e-9))
    ramp = np.clip(np.maximum((np.log2(lo) - lf) / 1.0, (lf - np.log2(hi)) * 12.0), 0.0, 1.0)
    eps_in = ref * 10.0 ** (IN_BAND_REGULARISATION_DB / 10.0)
    eps = np.full(px.size, eps_in)
    out = ramp > 0.0
    eps[outside[out]] = eps_in * (ref / eps_in) ** ramp[out]
    # The regularisation limits the band by |X|²/(|X|² + ε), a zero-phase filter whose
    # ringing at f1 and f2 would run *before* the response peak, into the harmonic
    # windows and past the short pre-peak window.  Giving it minimum phase moves all its
    # ringing after the peak, inside the linear window; it is divided out afterwards.
    # The limit is smooth, so its phase is built on a coarse grid and interpolated.
    gain = px / (px + eps)
    grid_hz, limit = _coarse_minimum_phase(gain, fs)
    phase = np.interp(f, grid_hz, np.unwrap(np.angle(limit)))
    # conj(X) / (|X|² + ε) · e^{jφ}, in real arithmetic: a third of the cost of the complex
    # division and exponential over a million bins, equal to rounding
    scale = 1.0 / (px + eps)
    c = np.cos(phase)
    c *= scale
    s = np.sin(phase)
    s *= scale
    inverse = np.empty_like(X)
    inverse.real = X.real * c + X.imag * s
    inverse.imag = X.real * s - X.imag * c
    for a in (X, inverse, px, limit, grid_hz):
        a.setflags(write=False)
    limit_ir = irfft(limit, 2 * (limit.size - 1))
    return StimulusInverse(
        n_fft=n,
        stimulus_length=int(x.size),
        sample_rate_hz=fs,
        band_hz=(lo, hi),
        spectrum=X,
        inverse=inverse,
        stimulus_power=px,
        band_limit_hz=grid_hz,
        band_limit=limit,
        band_limit_peak_lag=int(np.argmax(np.abs(limit_ir[: limit.size // 2]))),
    )


def deconvolve(
    recording: np.ndarray,
    stimulus: np.ndarray,
    *,
    sample_rate_hz: int,
    band_hz: tuple[float, float],
    inverse: Optional[StimulusInverse] = None,
) -> Deconvolution:
    """Deconvolve a recorded sweep by the stimulus sweep (regularised spectral division).

    Parameters
    ----------
    recording : numpy.ndarray
        1-D, on the stimulus's clock and sample rate.
    stimulus : numpy.ndarray
        1-D, the sweep (fades included, markers excluded).
    sample_rate_hz : int
    band_hz : (float, float)
        The sweep's band; outside it ε rises to the in-band median stimulus power, over
        one octave below it and 1/12 octave above it.
    inverse : StimulusInverse, optional
        The stimulus's inverse from an earlier call (``Deconvolution.inverse``); used when it
        was built for the same stimulus length, grid, rate and band, else built again.

    Returns
    -------
    Deconvolution

    Raises
    ------
    MeasurementError
        The stimulus has no energy in ``band_hz``.
    """
    fs = int(sample_rate_hz)
    y = np.asarray(recording, dtype=np.float64)
    x = np.asarray(stimulus, dtype=np.float64)
    n = _next_fast(y.size + x.size)
    band = (float(band_hz[0]), float(band_hz[1]))
    if inverse is None or (inverse.n_fft, inverse.stimulus_length, inverse.sample_rate_hz, inverse.band_hz) != (
            n, x.size, fs, band):
        inverse = stimulus_inverse(x, n_fft=n, sample_rate_hz=fs, band_hz=band)
    if y.size >= x.size and np.array_equal(y[:x.size], x) and not np.any(y[x.size:]):
        Y = inverse.spectrum  # the stimulus itself, zero-padded: the same transform, already made
    else:
        Y = rfft(y, n)
    h = irfft(Y * inverse.inverse, n)
    h.setflags(write=False)
    return Deconvolution(
        impulse_response=h,
        sample_rate_hz=fs,
        n_fft=n,
        stimulus_power=inverse.stimulus_power,
        band_limit_hz=inverse.band_limit_hz,
        band_limit=inverse.band_limit,
        band_limit_peak_lag=inverse.band_limit_peak_lag,
        recording_length=int(y.size),
        inverse=inverse,
    )


_COARSE_N = 1 << 16


def _coarse_minimum_phase(gain: np.ndarray, fs: int) -> tuple[np.ndarray, np.ndarray]:
    """Minimum-phase version of a smooth band-limiting gain, on a 2^16-point grid.

    ``gain`` (an rfft grid over 0…fs/2) is averaged in log over blocks onto the coarse
    grid; the minimum phase comes from the folded real cepstrum.  Returns (grid in Hz,
    complex minimum-phase response).

    References
    ----------
    A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal Processing*, 3rd ed., section 13.8
    (homomorphic minimum-phase construction; from memory).
    """
    m = _COARSE_N // 2 + 1
    lg = np.log(np.maximum(gain, 1e-9))
    edges = np.linspace(0, gain.size, m + 1).round().astype(np.int64)  # non-decreasing
    sums = np.add.reduceat(lg, np.minimum(edges[:-1], gain.size - 1))
    counts = np.maximum(np.diff(edges), 1)
    coarse = np.where(np.diff(edges) > 0, sums / counts, lg[np.minimum(edges[:-1], gain.size - 1)])
    c = irfft(coarse, _COARSE_N)
    fold = np.zeros(_COARSE_N)
    fold[0] = c[0]
    fold[1:_COARSE_N // 2] = 2.0 * c[1:_COARSE_N // 2]
    fold[_COARSE_N // 2] = c[_COARSE_N // 2]
    grid = np.linspace(0.0, fs / 2.0, m)
    return grid, np.exp(rfft(fold, _COARSE_N))


def band_limit_response(deconvolution: Deconvolution, frequencies_hz: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(complex gain, group delay in s) of the deconvolution's own band limit at ``frequencies_hz``.

    Divide a window's response by the gain (and subtract the group delay) to remove it.
    """
    grid = deconvolution.band_limit_hz
    f = np.asarray(frequencies_hz, dtype=np.float64)
    mag_grid, ph, gd = _band_limit_curves(deconvolution.band_limit, grid)
    mag = np.interp(f, grid, mag_grid)
    return mag * np.exp(1j * np.interp(f, grid, ph)), np.interp(f, grid, gd)


def _band_limit_curves(lim: np.ndarray, grid: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """|limit|, unwrapped phase (rad) and group delay (s) on the coarse grid.

    A measurement asks for them about ten times (each window, the stimulus's own analysis too)
    with the same read-only arrays: the curves of the last such pair are kept.
    """
    def curves():
        ph = np.unwrap(np.angle(lim))
        return np.abs(lim), ph, -np.gradient(ph, 2.0 * np.pi * grid)

    return _LAST_LIMIT.get((lim, grid), curves)


def _taper(n_pre: int, n_post: int) -> np.ndarray:
    """Flat window with half-Hann edges: rises over the first half of the pre-part and
    falls over the last fifth of the post-part."""
    w = np.ones(n_pre + n_post)
    r = max(1, n_pre // 2)
    if n_pre > 0:
        w[:r] = 0.5 - 0.5 * np.cos(np.pi * (np.arange(r) + 0.5) / r)
    q = max(1, n_post // 5)
    w[n_pre + n_post - q:] = (0.5 - 0.5 * np.cos(np.pi * (np.arange(q) + 0.5) / q))[::-1]
    return w


def _cut(h: np.ndarray, order: int, origin: int, n_pre: int, n_post: int) -> IRWindow:
    lags = np.arange(origin - n_pre, origin + n_post)
    taper = _taper(n_pre, n_post)
    seg = h[np.mod(lags, h.size)] * taper
    seg.setflags(write=False)
    taper.setflags(write=False)
    return IRWindow(order=order, origin_lag=int(origin), start_lag=int(origin - n_pre), samples=seg, taper=taper)


def separate_harmonics(
    deconvolution: Deconvolution,
    *,
    rate_constant_s: float,
    peak_search_lags: tuple[int, int],
    orders: tuple[int, ...] = (2, 3, 4, 5),
    post_s: float = 0.4,
) -> SeparatedResponses:
    """Cut the linear and harmonic impulse responses out of a deconvolved sweep.

    The linear response's peak is searched in ``peak_search_lags`` (and moved back by the
    band limit's own peak lag).  The k-th harmonic's
    response starts L·ln k before it (Farina 2000).  The boundary between orders k and
    k−1 lies a quarter of the way from the k−1 response back to the k response, so each
    window holds the quarter before its response and three quarters after, never more
    than ``post_s`` after nor 0.1 s before.

    Raises
    ------
    MeasurementError
        The search range holds no response (all zero).
    """
    h = deconvolution.impulse_response
    fs = deconvolution.sample_rate_hz
    lc = float(rate_constant_s)
    lo, hi = int(peak_search_lags[0]), int(peak_search_lags[1])
    lags = np.arange(lo, hi + 1)
    region = np.abs(h[np.mod(lags, h.size)])
    if region.size == 0 or float(region.max()) <= 0.0:
        raise MeasurementError("The deconvolved recording holds no impulse response; the recording does not contain the stimulus.")
    peak = int(lags[int(np.argmax(region))]) - deconvolution.band_limit_peak_lag
    n_post = max(16, int(round(post_s * fs)))
    n_pre = max(8, int(round(min(0.25 * lc * np.log(2.0), MAX_PRE_S) * fs)))
    linear = _cut(h, 1, peak, n_pre, n_post)
    harmonics = []
    for k in sorted(orders):
        centre = peak - int(round(lc * np.log(k) * fs))
        a = max(4, int(round(min(0.25 * lc * np.log((k + 1) / k), MAX_PRE_S) * fs)))
        b = max(8, int(round(min(0.75 * lc * np.log(k / (k - 1)), post_s) * fs)))
        harmonics.append(_cut(h, k, centre, a, b))
    return SeparatedResponses(peak_lag=peak, linear=linear, harmonics=tuple(harmonics))


def window_response(window: IRWindow, frequencies_hz: np.ndarray, sample_rate_hz: int) -> np.ndarray:
    """Complex frequency response of a windowed impulse response at ``frequencies_hz``,
    with the window's ``origin_lag`` as time zero.

    The window is zero-padded to at least 8× its length (a power of two) and the FFT
    interpolated linearly; the error is far below the measurement's own.
    """
    n_pre = window.origin_lag - window.start_lag
    seg = window.samples
    nfft = int(2 ** np.ceil(np.log2(max(8 * seg.size, 1 << 14))))
    buf = np.zeros(nfft)
    buf[: seg.size - n_pre] = seg[n_pre:]
    if n_pre > 0:
        buf[nfft - n_pre:] = seg[:n_pre]
    spec = rfft(buf)
    grid = np.arange(spec.size) * sample_rate_hz / nfft
    f = np.asarray(frequencies_hz, dtype=np.float64)
    return np.interp(f, grid, spec.real) + 1j * np.interp(f, grid, spec.imag)


def window_group_delay_s(window: IRWindow, frequencies_hz: np.ndarray, sample_rate_hz: int) -> np.ndarray:
    """Group delay (s) of a windowed impulse response, relative to its ``origin_lag``.

    τ(f) = Re{DFT[n·h] / DFT[h]} / fs, which needs no phase unwrapping (the same
    formula as ``scipy.signal.group_delay``).
    """
    n_pre = window.origin_lag - window.start_lag
    t = np.arange(window.samples.size) - n_pre
    ramped = IRWindow(window.order, window.origin_lag, window.start_lag, window.samples * t, window.taper)
    h = window_response(window, frequencies_hz, sample_rate_hz)
    nh = window_response(ramped, frequencies_hz, sample_rate_hz)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.real(nh / h) / sample_rate_hz


def deconvolved_noise_power(
    deconvolution: Deconvolution,
    window: IRWindow,
    noise: np.ndarray,
    frequencies_hz: np.ndarray,
) -> np.ndarray:
    """Expected |spectrum|² of recording noise after deconvolution and windowing.

    With the noise's two-sided power spectral density per sample S(f) (Welch estimate
    from a quiet stretch of the recording), the deconvolved noise near frequency f has
    density S(f)/|X(f)|² per sample (1/|X|² averaged over the window's resolution
    bandwidth): the part of the inverse at f meets every noise sample once, so at that
    frequency the noise fills len(y) lags.  A window w collects Σw² times that.
    Divide a response's |H(f)|² by this to get its signal-to-noise ratio.
    """
    fs = deconvolution.sample_rate_hz
    f_w, s_two_sided = _noise_density(noise, fs)
    f = np.asarray(frequencies_hz, dtype=np.float64)
    s = np.interp(f, f_w, s_two_sided)
    # Mean of 1/|X|² over the window's resolution bandwidth (N / window length bins).
    px = deconvolution.stimulus_power
    width = max(1, int(round(deconvolution.n_fft / window.taper.size)))
    csum = _inverse_power_sums(px)
    centre = np.clip(np.round(f * deconvolution.n_fft / fs).astype(np.int64), 0, px.size - 1)
    a = np.clip(centre - width // 2, 0, px.size)
    b = np.clip(a + width, 0, px.size)
    mean_inv = (csum[b] - csum[a]) / np.maximum(b - a, 1)
    energy = float(np.sum(window.taper**2))
    return energy * s * mean_inv


class _LastOf:
    """The value last computed from some read-only arrays, held while those arrays live.

    One measurement asks for the same quantity once per window (the linear response and each
    harmonic) with the same arrays; the arrays are referred to weakly, so nothing outlives its
    owner, and only read-only ones are remembered, so their values cannot have changed.
    """

    def __init__(self) -> None:
        self._refs: tuple = ()
        self._key: object = None
        self._value: object = None

    def get(self, arrays: tuple, compute, key: object = None):
        if (self._refs and key == self._key and len(self._refs) == len(arrays)
                and all(r() is a for r, a in zip(self._refs, arrays))):
            return self._value
        value = compute()
        if all(isinstance(a, np.ndarray) and not a.flags.writeable for a in arrays):
            import weakref

            self._refs, self._key, self._value = tuple(weakref.ref(a) for a in arrays), key, value
        return value


_LAST_LIMIT = _LastOf()
_LAST_NOISE = _LastOf()
_LAST_INVERSE = _LastOf()


def _noise_density(noise: np.ndarray, fs: int) -> tuple[np.ndarray, np.ndarray]:
    """Welch estimate of ``noise`` as a two-sided density per sample, on its frequency grid (Hz)."""
    def density():
        from .signaltools import welch_psd

        nper = int(min(noise.size, 2 ** np.ceil(np.log2(0.05 * fs))))
        f_w, p1 = welch_psd(np.asarray(noise, dtype=np.float64), fs, segment_length=nper)
        return f_w, p1 * fs / 2.0  # one-sided density (units²/Hz) → two-sided per-sample

    return _LAST_NOISE.get((noise,), density, key=fs)


def _inverse_power_sums(px: np.ndarray) -> np.ndarray:
    """Cumulative sums of 1/|X|² (0 where |X|² is 0), with a leading 0."""
    def sums():
        with np.errstate(divide="ignore"):
            inv = np.where(px > 0.0, 1.0 / np.maximum(px, 1e-300), 0.0)
        got = np.concatenate(([0.0], np.cumsum(inv)))
        got.setflags(write=False)
        return got

    return _LAST_INVERSE.get((px,), sums)
