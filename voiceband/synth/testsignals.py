"""The test signals of ``voiceband testsignal``: their defaults, and one signal with its description.

The command line parses and writes; this module decides what each kind of test signal is
when an option is left out, renders it (:mod:`.sweep`, :mod:`.tones`) and describes it in a
few lines.  The defaults: a 20 Hz-20 kHz sweep, a 300-3000 Hz multitone and stepped tones at
the one-third-octave centres 100 Hz-8 kHz (common practice for a speech channel), the
400 + 1800 Hz SSB two-tone pair (47 CFR 2.1049, for a 3.0 kHz authorised bandwidth) and a
1 kHz reference tone at -20 dBFS peak (common practice; see :mod:`.tones`).

>>> sig = make_test_signal("tone", sample_rate_hz=8000, duration_s=1.0)
>>> sig.samples.size, sig.lines[0]
(8000, 'tone 1000 Hz')
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional, Sequence

import numpy as np

from . import tones as _tones

__all__ = [
    "KINDS",
    "DEFAULT_DURATION_S",
    "DEFAULT_PEAK_DBFS",
    "MULTITONE_BAND_HZ",
    "RenderedTestSignal",
    "default_peak_dbfs",
    "make_test_signal",
    "SUBTYPE_OF_BITS",
    "file_subtype",
]

#: Sample format of each ``--bits``: integer PCM, or 32-bit float.
SUBTYPE_OF_BITS = {16: "PCM_16", 24: "PCM_24", 32: "FLOAT"}


def file_subtype(name: str, bits: int) -> str:
    """The sample format to write a test signal to a file called ``name`` with ``bits`` bits.

    A test signal must reach the chain as generated, so only lossless formats are written:
    WAV (16- or 24-bit integer, 32-bit float) and FLAC (16 or 24 bits; the FLAC format holds
    integer samples of at most 24 bits in libsndfile, and no floating-point samples).

    >>> file_subtype("sweep.flac", 24)
    'PCM_24'
    >>> file_subtype("sweep.ogg", 24)
    Traceback (most recent call last):
    ...
    voiceband.errors.AudioFormatError: cannot write 'sweep.ogg': .ogg is lossy (Ogg Vorbis), and a test signal must reach the chain sample for sample; use a .wav or .flac file name.
    """
    from pathlib import PurePath

    from ..errors import AudioFormatError, SignalValueError

    if bits not in SUBTYPE_OF_BITS:
        raise SignalValueError(f"bits must be 16, 24 or 32; got {bits}.")
    ext = PurePath(name).suffix.lower()
    lossy = {".ogg": "Ogg Vorbis", ".oga": "Ogg Vorbis", ".opus": "Opus", ".mp3": "MP3", ".m4a": "AAC", ".aac": "AAC"}
    if ext in lossy:
        raise AudioFormatError(
            f"cannot write '{PurePath(name).name}': {ext} is lossy ({lossy[ext]}), and a test signal must reach "
            "the chain sample for sample; use a .wav or .flac file name.")
    if ext not in (".wav", ".flac"):
        raise AudioFormatError(f"cannot write '{PurePath(name).name}': use a .wav or .flac file name.")
    if ext == ".flac" and bits == 32:
        raise AudioFormatError(
            f"cannot write '{PurePath(name).name}' with 32 bits: FLAC holds integer samples of at most 24 bits; "
            "use 16 or 24 bits, or a .wav file for 32-bit float.")
    return SUBTYPE_OF_BITS[bits]

#: The kinds of test signal, as the command line names them.
KINDS = ("sweep", "multitone", "two-tone", "tone", "steps")
#: Length when none is given (s); for a sweep, of the sweep itself (markers excluded).
DEFAULT_DURATION_S = 10.0
#: Sample peak when none is given (dBFS), except the reference tone
#: (:data:`voiceband.synth.tones.REFERENCE_TONE_PEAK_DBFS`).
DEFAULT_PEAK_DBFS = -6.0
#: First and last tone of the multitone when not given (Hz).
MULTITONE_BAND_HZ = (300.0, 3000.0)


@dataclass(frozen=True)
class RenderedTestSignal:
    """A test signal ready to write: samples (full scale = 1.0), rate (Hz) and description lines."""

    samples: np.ndarray
    sample_rate_hz: int
    lines: tuple[str, ...]


def default_peak_dbfs(kind: str) -> float:
    """Sample peak (dBFS) of ``kind`` when none is given."""
    return _tones.REFERENCE_TONE_PEAK_DBFS if kind == "tone" else DEFAULT_PEAK_DBFS


def make_test_signal(
    kind: str,
    *,
    sample_rate_hz: int,
    peak_dbfs: Optional[float] = None,
    duration_s: Optional[float] = None,
    low_hz: Optional[float] = None,
    high_hz: Optional[float] = None,
    tones: int = 28,
    tone_hz: Optional[Sequence[float]] = None,
    dwell_s: float = 0.5,
    gap_s: float = 0.1,
    markers: bool = True,
) -> RenderedTestSignal:
    """Render one test signal of ``kind`` (one of :data:`KINDS`), options left ``None`` taking their defaults.

    ``low_hz``/``high_hz`` apply to sweep and multitone, ``tone_hz`` to two-tone, tone and
    steps, ``tones`` to multitone, ``dwell_s``/``gap_s`` to steps (whose length follows from
    them), ``markers`` to sweep.  Each generator checks its own values.
    """
    peak = default_peak_dbfs(kind) if peak_dbfs is None else peak_dbfs
    dur = DEFAULT_DURATION_S if duration_s is None else duration_s
    lines: list[str] = []
    if kind == "sweep":
        from .sweep import exponential_sweep

        kw = {}
        if low_hz is not None:
            kw["start_hz"] = low_hz
        if high_hz is not None:
            kw["stop_hz"] = high_hz
        sw = exponential_sweep(duration_s=dur, sample_rate_hz=sample_rate_hz, level_dbfs=peak, markers=markers, **kw)
        fs = sw.sample_rate_hz
        lines.append(f"exponential sweep {sw.start_hz:g}–{sw.stop_hz:g} Hz, {sw.duration_s:g} s, peak {sw.level_dbfs:g} dBFS")
        if markers:
            starts = ", ".join(f"{i / fs:.3f} s" for i in sw.marker_start_indices)
            lines.append(f"markers at {starts}; sweep from {sw.sweep_start_index / fs:.3f} s to {sw.sweep_stop_index / fs:.3f} s")
        return RenderedTestSignal(sw.samples, fs, tuple(lines))
    if kind == "multitone":
        sig = _tones.multitone(dur, sample_rate_hz, low_hz=MULTITONE_BAND_HZ[0] if low_hz is None else low_hz,
                               high_hz=MULTITONE_BAND_HZ[1] if high_hz is None else high_hz, n_tones=tones, peak_dbfs=peak)
        f = sig.frequencies_hz
        lines.append(f"Schroeder-phase multitone: {f.size} tones {f[0]:g}–{f[-1]:g} Hz, spacing {f[1] - f[0]:g} Hz")
        lines.append(f"crest factor {sig.crest_factor_db:.2f} dB")
    elif kind == "two-tone":
        pair = tuple(tone_hz) if tone_hz else _tones.SSB_TWO_TONE_HZ
        sig = _tones.two_tone(dur, sample_rate_hz, tones_hz=pair, peak_dbfs=peak)
        lines.append("two-tone pair " + " + ".join(f"{v:g}" for v in sig.frequencies_hz) + " Hz, equal levels, "
                     f"each {peak - 6.02:.2f} dBFS peak")
    elif kind == "tone":
        sig = _tones.reference_tone(dur, sample_rate_hz, frequency_hz=tone_hz[0] if tone_hz else _tones.REFERENCE_TONE_HZ,
                                    peak_dbfs=peak)
        lines.append(f"tone {sig.frequencies_hz[0]:g} Hz")
    elif kind == "steps":
        freqs = list(tone_hz) if tone_hz else _tones.third_octave_step_frequencies_hz(sample_rate_hz)
        st = _tones.stepped_tones(freqs, sample_rate_hz, dwell_s=dwell_s, gap_s=gap_s, peak_dbfs=peak)
        sig = st.signal
        lines.append(f"{sig.frequencies_hz.size} stepped tones {sig.frequencies_hz[0]:g}–{sig.frequencies_hz[-1]:g} Hz, "
                     f"{dwell_s:g} s each, {gap_s:g} s gaps; first starts at {st.starts_s[0]:.3f} s")
    else:
        raise ValueError(f"kind must be one of {', '.join(KINDS)}; got {kind!r}.")
    lines.append(f"peak {sig.peak_dbfs:.2f} dBFS, RMS {sig.rms_dbfs:.2f} dBFS")
    return RenderedTestSignal(sig.samples, sig.sample_rate_hz, tuple(lines))
