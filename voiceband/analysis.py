"""Orchestration only: one recording file -> :class:`~voiceband.results.AnalysisResult`.

The file is read once, in blocks (:func:`voiceband.audio.blocks`); each block goes to the
streaming accumulators (levels, clipping, spectral/activity); their results are combined
into the report sections. No measurement is computed here.
"""

from __future__ import annotations

import math
import os
from typing import Callable, Optional, Union

import numpy as np

from . import audio
from .errors import SignalValueError
from .results import (
    AnalysisResult,
    ClipEventRecord,
    ClippingSection,
    EdgesRecord,
    Finding,
    HumRecord,
    InputInfo,
    LevelsSection,
    NoiseSection,
    OccupiedBandwidthRecord,
    SpectrumSection,
    VoiceSection,
)

__all__ = ["analyze_file", "analyze_signal", "MIN_DURATION_S", "MAX_LISTED_CLIP_EVENTS"]

#: Shortest recording analysed (s): one long-term-spectrum frame needs about 0.1 s.
MIN_DURATION_S = 0.25
#: Clip events listed one by one in the result (all are counted).
MAX_LISTED_CLIP_EVENTS = 1000

ProgressFn = Callable[[int, int], None]


def _finite(v: Optional[float]) -> Optional[float]:
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


class _Pipeline:
    """The accumulators one analysis feeds, block by block."""

    def __init__(self, sample_rate_hz: int):
        from .measurement.clipping import ClippingAccumulator
        from .measurement.levels import LevelsAccumulator
        from .measurement.spectrum import SpectralAccumulator

        self.fs = sample_rate_hz
        self.levels = LevelsAccumulator(sample_rate_hz)
        self.clipping = ClippingAccumulator(sample_rate_hz)
        self.spectral = SpectralAccumulator(sample_rate_hz)
        self.samples = 0

    def update(self, block: np.ndarray) -> None:
        self.levels.update(block)  # raises SignalValueError on NaN/Inf before anything else sees the block
        self.clipping.update(block)
        self.spectral.update(block)
        self.samples += block.size


def analyze_file(
    path: Union[str, os.PathLike],
    *,
    channel: audio.Channel = 0,
    progress: Optional[ProgressFn] = None,
    block_frames: int = audio.DEFAULT_BLOCK_FRAMES,
) -> AnalysisResult:
    """Measure one channel of a recording of transmit audio.

    Parameters
    ----------
    path : path-like
        Any file libsndfile reads (WAV/RF64/W64, FLAC, OGG, MP3, ...), 8–192 kHz.
    channel : int or "mix", keyword-only
    progress : callable(done_frames, total_frames), optional

    Raises
    ------
    AudioInputError, AudioFormatError
        The file cannot be opened or decoded (see :mod:`voiceband.audio`).
    SignalValueError
        The samples contain NaN/Inf, or the recording is shorter than :data:`MIN_DURATION_S`.
    """
    ai = audio.info(path)
    if ai.frames < int(MIN_DURATION_S * ai.sample_rate_hz):
        raise SignalValueError(
            f"'{ai.path}' is too short to analyse ({ai.frames} samples, {ai.duration_s:.3f} s); "
            f"voiceband needs at least {MIN_DURATION_S} s."
        )
    pipe = _Pipeline(ai.sample_rate_hz)
    for block in audio.blocks(ai.path, channel=channel, block_frames=block_frames, audio_info=ai):
        pipe.update(block)
        if progress is not None:
            progress(pipe.samples, ai.frames)
    if pipe.samples < int(MIN_DURATION_S * ai.sample_rate_hz):
        raise SignalValueError(f"'{ai.path}' holds fewer samples than its header says; it may be truncated.")
    ch = "mix" if str(channel) == "mix" else str(int(channel))
    info = InputInfo(
        path=ai.path,
        sample_rate_hz=ai.sample_rate_hz,
        channels=ai.channels,
        channel_used=ch,
        duration_s=pipe.samples / ai.sample_rate_hz,
        format=ai.format,
        subtype=ai.subtype,
    )
    return _combine(info, pipe)


def analyze_signal(samples: np.ndarray, sample_rate_hz: int, *, name: str = "<signal>") -> AnalysisResult:
    """Measure a signal already in memory (native scale, full scale = ±1.0) as :func:`analyze_file` would."""
    x = np.asarray(samples, dtype=np.float64)
    if x.ndim != 1:
        raise SignalValueError(f"samples must be one channel (1-D); got shape {x.shape}.")
    fs = int(sample_rate_hz)
    if not audio.MIN_SAMPLE_RATE_HZ <= fs <= audio.MAX_SAMPLE_RATE_HZ:
        raise SignalValueError(f"sample_rate_hz must be 8000–192000 Hz; got {sample_rate_hz}.")
    if x.size < int(MIN_DURATION_S * fs):
        raise SignalValueError(f"the signal is too short to analyse ({x.size} samples); voiceband needs at least {MIN_DURATION_S} s.")
    pipe = _Pipeline(fs)
    step = audio.DEFAULT_BLOCK_FRAMES
    for i in range(0, x.size, step):
        pipe.update(x[i:i + step])
    info = InputInfo(name, fs, 1, "0", x.size / fs, "memory", "FLOAT64")
    return _combine(info, pipe)


def _combine(info: InputInfo, pipe: _Pipeline) -> AnalysisResult:
    from . import __version__
    from .measurement.activity import snr_db

    lv = pipe.levels.result()
    cl = pipe.clipping.result()
    silent = not math.isfinite(lv.peak_dbfs)
    active = _finite(lv.active_level_dbfs)
    sp = pipe.spectral.result(active_level_dbfs=active)

    levels = LevelsSection(
        peak_dbfs=_finite(lv.peak_dbfs),
        true_peak_dbtp=_finite(lv.true_peak_dbtp),
        rms_dbfs=_finite(lv.rms_dbfs),
        active_level_dbfs=active,
        activity_factor=None if silent else _finite(lv.activity_factor),
        crest_factor_db=_finite(lv.crest_factor_db),
        dc_offset=None if silent else _finite(lv.dc_offset),
    )
    events = tuple(ClipEventRecord(float(e.start_s), float(e.duration_s)) for e in cl.events[:MAX_LISTED_CLIP_EVENTS])
    clipping = ClippingSection(
        clip_level=_finite(cl.clip_level),
        clipped_samples=int(cl.clipped_samples),
        clipped_fraction=float(cl.clipped_fraction),
        event_count=int(cl.event_count),
        events=events,
        events_listed=len(events),
    )

    act = sp.activity
    floor = None if silent else _finite(act.noise_floor_dbfs)
    hum = None
    if sp.hum is not None and not silent:
        hum = HumRecord(
            fundamental_hz=float(sp.hum.fundamental_hz),
            level_db_re_speech=_finite(sp.hum.level_db_re_speech),
            level_dbfs=_finite(sp.hum.level_dbfs),
            harmonics_hz=tuple(float(h) for h in sp.hum.harmonics_hz),
        )
    noise = NoiseSection(
        floor_dbfs=floor,
        snr_db=_finite(snr_db(active, floor)) if floor is not None else None,
        hum=hum,
        speech_fraction=None if silent else _finite(act.speech_fraction),
    )

    s = sp.spectrum
    bands = tuple(float(b) for b in s.bands_hz) if s is not None else ()

    def band_tuple(arr) -> tuple:
        if arr is None or silent:
            return tuple(None for _ in bands)
        return tuple(_finite(v) for v in arr)

    e = sp.edges
    edges = EdgesRecord(
        low=_finite(e.low_hz) if e is not None else None,
        high=_finite(e.high_hz) if e is not None else None,
        criterion_db=-(e.drop_db if e is not None else 10.0),
        method=(f"measured speech spectrum minus the {e.reference} reference speech spectrum, "
                f"{e.drop_db:g} dB below the passband level" if e is not None else
                "not estimated (no speech spectrum with pauses found)"),
        lowest_band_hz=_finite(e.lowest_band_hz) if e is not None else None,
        highest_band_hz=_finite(e.highest_band_hz) if e is not None else None,
    )
    ob = sp.occupied_bandwidth
    obw = OccupiedBandwidthRecord(
        fraction=float(ob.fraction) if ob is not None else 0.99,
        low_hz=_finite(ob.low_hz) if ob is not None else None,
        high_hz=_finite(ob.high_hz) if ob is not None else None,
        width_hz=_finite(ob.width_hz) if ob is not None else None,
        span_low_hz=_finite(ob.span_low_hz) if ob is not None else None,
        span_high_hz=_finite(ob.span_high_hz) if ob is not None else None,
    )
    tilt = None if (s is None or silent) else _finite(s.tilt_db_per_octave)
    span = s.tilt_span_hz if s is not None else None
    tilt_basis = ("slope of one-third-octave band levels vs log2 f"
                  + (f" over {span[0]:.0f}–{span[1]:.0f} Hz" if span else "")
                  + "; a PSD slope reads 3.01 dB/octave lower")
    spectrum = SpectrumSection(
        bands_hz=bands,
        speech_band_db=band_tuple(s.speech_band_db if s is not None else None),
        noise_band_db=band_tuple(s.noise_band_db if s is not None else None),
        tilt_db_per_octave=tilt,
        tilt_basis=tilt_basis,
        edges_hz=edges,
        occupied_bandwidth=obw,
        vocal_effort_index=_finite(getattr(e, "effort_index", None)) if e is not None else None,
    )
    v = sp.voice
    voice = VoiceSection(_finite(v.f0_median_hz), _finite(v.f0_p5_hz), _finite(v.f0_p95_hz))

    intel = None
    extra: list[Finding] = []
    if not silent and act.pause_frame_count > 0 and act.noise_floor_dbfs is not None and act.noise_floor_dbfs == -math.inf:
        extra.append(Finding(
            "pauses_digital_silence", "info",
            "The pauses are digital silence (a noise gate, or generated audio), so there is no noise floor "
            "to measure and the SNR is not a finite number."))
    if s is not None and s.speech_band_db is not None and not silent:
        from .intelligibility import recording_intelligibility

        try:
            from .bands import BandLevels, bands_for_nominal

            b = bands_for_nominal(s.bands_hz)
            intel = recording_intelligibility(
                BandLevels(b, s.speech_band_db), None if s.noise_band_db is None else BandLevels(b, s.noise_band_db)
            )
        except ValueError as exc:
            extra.append(Finding("sii_not_measurable", "info", f"The SII could not be computed: {exc}"))

    from .findings import findings_for

    findings = findings_for(
        duration_s=info.duration_s,
        sample_rate_hz=info.sample_rate_hz,
        levels=levels,
        clipping=clipping,
        noise=noise,
        spectrum=spectrum,
        voice=voice,
        sii=getattr(intel, "sii", None),
        sii_rating=getattr(intel, "rating", None),
        extra=tuple(extra),
    )
    return AnalysisResult(
        input=info,
        levels=levels,
        clipping=clipping,
        noise=noise,
        spectrum=spectrum,
        voice=voice,
        intelligibility=intel,
        findings=findings,
        voiceband_version=__version__,
    )
