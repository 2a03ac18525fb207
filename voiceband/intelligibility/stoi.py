"""Short-time objective intelligibility (STOI) of a processed signal against its clean reference.

Our implementation of Taal, Hendriks, Heusdens and Jensen, "An algorithm for intelligibility prediction
of time-frequency weighted noisy speech", IEEE Trans. Audio, Speech, Lang. Process. 19(7):2125-2136,
2011. STOI sees distortions the SII cannot (clipping, compression, non-linear processing) because it
compares short-time temporal envelopes of the clean and processed speech.

Method (section II of the paper):

1. Both signals are resampled to 10 kHz (polyphase, Kaiser-window anti-aliasing filter).
2. Silent frames are removed: 256-sample Hann-windowed frames with 50 % overlap whose clean-signal
   energy is more than 40 dB below the loudest clean frame are dropped from both signals, and the
   remaining frames are overlap-added.
3. Short-time spectra: the same frames, zero-padded to 512 points.
4. 15 one-third-octave bands, the lowest centred on 150 Hz, each the FFT bins between the bins nearest
   its band edges; the band envelope is the square root of the summed power (Eq. 1).
5. Envelope segments of N = 30 frames (384 ms). Each processed segment is scaled to the clean segment's
   energy and clipped at (1 + 10^(-beta/20)) times the clean envelope, beta = -15 dB (signal-to-distortion
   lower bound, Eq. 3).
6. The intermediate intelligibility is the correlation coefficient of clean and clipped processed
   segment (Eq. 4); STOI is its mean over bands and segments (Eq. 5).

scipy.signal is imported inside the function (resampling) to keep ``import voiceband`` light.
"""

from __future__ import annotations

from functools import lru_cache
from math import gcd

import numpy as np

from .. import validate
from ..errors import MeasurementError, SignalValueError

__all__ = ["stoi"]

_FS_HZ = 10_000  # analysis rate (section II)
_FRAME = 256  # samples per frame, 25.6 ms
_HOP = _FRAME // 2  # 50 % overlap
_NFFT = 512  # zero-padded FFT size
_N_BANDS = 15  # one-third-octave bands
_LOWEST_CENTRE_HZ = 150.0
_SEGMENT_FRAMES = 30  # N: 384 ms of envelope
_BETA_DB = -15.0  # lower signal-to-distortion bound
_DYNAMIC_RANGE_DB = 40.0  # silent-frame threshold below the loudest frame
_EPS = np.finfo(np.float64).eps


def _window() -> np.ndarray:
    """Hann window of 256 points without its zero end points (sin^2 over 258 points, ends removed)."""
    return np.hanning(_FRAME + 2)[1:-1]


@lru_cache(maxsize=1)
def _band_matrix() -> np.ndarray:
    """0/1 matrix (15, 257) summing FFT-bin powers into one-third-octave bands (Eq. 1)."""
    bins_hz = np.arange(_NFFT // 2 + 1) * _FS_HZ / _NFFT
    k = np.arange(_N_BANDS)
    low_hz = _LOWEST_CENTRE_HZ * 2.0 ** ((2 * k - 1) / 6.0)
    high_hz = _LOWEST_CENTRE_HZ * 2.0 ** ((2 * k + 1) / 6.0)
    matrix = np.zeros((_N_BANDS, bins_hz.size))
    for band in range(_N_BANDS):
        first = int(np.argmin(np.abs(bins_hz - low_hz[band])))
        stop = int(np.argmin(np.abs(bins_hz - high_hz[band])))
        matrix[band, first:stop] = 1.0
    matrix.setflags(write=False)
    return matrix


def _frames(x: np.ndarray) -> np.ndarray:
    """Windowed frames starting at 0, 128, ... while a full frame fits strictly before the end."""
    starts = np.arange(0, x.size - _FRAME, _HOP)
    if starts.size == 0:
        return np.zeros((0, _FRAME))
    view = np.lib.stride_tricks.sliding_window_view(x, _FRAME)[starts]
    return view * _window()


def _overlap_add(frames: np.ndarray) -> np.ndarray:
    out = np.zeros((frames.shape[0] - 1) * _HOP + _FRAME) if frames.shape[0] else np.zeros(0)
    for i, frame in enumerate(frames):
        out[i * _HOP : i * _HOP + _FRAME] += frame
    return out


_RESAMPLE_REJECTION_DB = 60.0  # stop-band rejection of the anti-aliasing filter
_RESAMPLE_TRANSITION = 0.1  # transition width as a fraction of the cut-off frequency


@lru_cache(maxsize=8)
def _resampling_filter(up: int, down: int) -> np.ndarray:
    """Anti-aliasing low-pass for rational resampling by up/down, by the Kaiser window method.

    Cut-off at half the lower of the two Nyquist frequencies, transition width a tenth of the cut-off,
    60 dB rejection; Kaiser's formulas for the window parameter beta = 0.1102 (A - 8.7) and the
    half-length L = (A - 8) / (2.285 * 2 pi * 2 * transition) (J. F. Kaiser, 1974; Oppenheim & Schafer,
    *Discrete-Time Signal Processing*, section 7.6). Normalised to unit DC gain.
    """
    cutoff = 1.0 / (2.0 * max(up, down))  # cycles per sample at the up-sampled rate
    width = cutoff * _RESAMPLE_TRANSITION
    a = _RESAMPLE_REJECTION_DB
    half = int(np.ceil((a - 8.0) / (2.285 * 2.0 * np.pi * 2.0 * width)))
    beta = 0.1102 * (a - 8.7)
    n = np.arange(-half, half + 1)
    h = np.kaiser(2 * half + 1, beta) * 2.0 * cutoff * np.sinc(2.0 * cutoff * n)
    h /= h.sum()
    h.setflags(write=False)
    return h


def _resample(x: np.ndarray, sample_rate_hz: int) -> np.ndarray:
    if sample_rate_hz == _FS_HZ:
        return x
    from scipy.signal import resample_poly

    g = gcd(_FS_HZ, sample_rate_hz)
    up, down = _FS_HZ // g, sample_rate_hz // g
    return resample_poly(x, up, down, window=np.array(_resampling_filter(up, down)))


def _envelopes(x: np.ndarray) -> np.ndarray:
    spectrum = np.fft.rfft(_frames(x), n=_NFFT, axis=-1)  # (frames, 257)
    return np.sqrt(_band_matrix() @ (np.abs(spectrum) ** 2).T)  # (15, frames)


def stoi(clean, processed, sample_rate_hz: int) -> float:
    """Short-time objective intelligibility (Taal et al. 2011) of ``processed`` against ``clean``.

    Parameters
    ----------
    clean : array_like, shape (n_samples,)
        Clean reference speech.
    processed : array_like, shape (n_samples,)
        Degraded or processed speech, time-aligned with ``clean``, same length and rate.
    sample_rate_hz : int
        Sample rate of both signals, Hz (resampled to 10 kHz internally).

    Returns
    -------
    float
        STOI, nominally within [0, 1] (a correlation mean; 1 for identical signals). Higher means more
        intelligible; the mapping to word scores depends on the test material (section IV of the paper).

    Raises
    ------
    voiceband.errors.SignalValueError
        Signals not 1-D, different lengths, NaN/Inf, or a bad sample rate.
    voiceband.errors.MeasurementError
        Fewer than 30 frames (384 ms) of non-silent clean speech remain after silent-frame removal.

    References
    ----------
    C. H. Taal, R. C. Hendriks, R. Heusdens, J. Jensen, "An algorithm for intelligibility prediction of
    time-frequency weighted noisy speech", IEEE Trans. Audio, Speech, Lang. Process. 19(7), 2011,
    Eqs. 1-5.
    """
    x = validate.finite_samples(validate.block(clean, name="clean"), name="clean")
    y = validate.finite_samples(validate.block(processed, name="processed"), name="processed")
    if x.shape != y.shape:
        raise SignalValueError(
            f"clean and processed must have the same length; got {x.size} and {y.size} samples."
        )
    sample_rate_hz = validate.sample_rate_hz(sample_rate_hz)
    rate = int(sample_rate_hz)

    x = _resample(x, rate)
    y = _resample(y, rate)

    # Silent-frame removal on the clean signal's frame energies (section II, first step).
    x_frames = _frames(x)
    y_frames = _frames(y)
    if x_frames.shape[0] == 0:
        raise MeasurementError("the signals are too short for STOI: it needs at least 384 ms of speech.")
    energy_db = 20.0 * np.log10(np.linalg.norm(x_frames, axis=1) + _EPS)
    keep = energy_db > np.max(energy_db) - _DYNAMIC_RANGE_DB
    x = _overlap_add(x_frames[keep])
    y = _overlap_add(y_frames[keep])

    x_env = _envelopes(x)
    y_env = _envelopes(y)
    n_frames = x_env.shape[1]
    if n_frames < _SEGMENT_FRAMES:
        raise MeasurementError(
            f"only {n_frames} non-silent frames remain; STOI needs at least {_SEGMENT_FRAMES} (384 ms of speech)."
        )

    # Segments m = N..M of N frames each: (segments, bands, N).
    xs = np.lib.stride_tricks.sliding_window_view(x_env, _SEGMENT_FRAMES, axis=1).transpose(1, 0, 2)
    ys = np.lib.stride_tricks.sliding_window_view(y_env, _SEGMENT_FRAMES, axis=1).transpose(1, 0, 2)

    # Eq. 3: scale the processed segment to the clean energy, then clip at the SDR bound.
    scale = np.linalg.norm(xs, axis=2, keepdims=True) / (np.linalg.norm(ys, axis=2, keepdims=True) + _EPS)
    clip_factor = 1.0 + 10.0 ** (-_BETA_DB / 20.0)
    yp = np.minimum(ys * scale, xs * clip_factor)

    # Eq. 4: correlation coefficient of each band segment; Eq. 5: mean over bands and segments.
    xc = xs - xs.mean(axis=2, keepdims=True)
    yc = yp - yp.mean(axis=2, keepdims=True)
    xc = xc / (np.linalg.norm(xc, axis=2, keepdims=True) + _EPS)
    yc = yc / (np.linalg.norm(yc, axis=2, keepdims=True) + _EPS)
    return float(np.mean(np.sum(xc * yc, axis=2)))
