"""Frozen result dataclasses of ``voiceband analyze``.

Their nesting and field names are the JSON keys of the analysis report
(``voiceband/schemas/analysis.schema.json``); units are in the names.
``None`` means "not measurable" and is explained by a finding.

Each section is built from its measurement result by one classmethod, ``of`` (the one
place a measurement's field becomes a report key); the pipeline in :mod:`voiceband.analysis`
only calls them.  A non-finite number becomes ``None``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Optional

from .findings import SEVERITIES, Finding  # the record lives with its table of codes

if TYPE_CHECKING:  # typing only: the report types do not load the measurement modules
    from .intelligibility.recording import RecordingIntelligibility
    from .measurement.activity import ActivityResult
    from .measurement.hum import HumResult
    from .measurement.bandwidth import OccupiedBandwidth, PassbandEdges
    from .measurement.clipping import ClippingResult
    from .measurement.levels import LevelsResult
    from .measurement.spectrum import SpectrumResult
    from .measurement.voice import VoiceResult
    from .measurement.speech_noise import SpeechNoisePower
    from .measurement.edges import Edge, FineEdges

__all__ = [
    "InputInfo",
    "LevelsSection",
    "ClipEventRecord",
    "ClippingSection",
    "HumRecord",
    "ToneRecord",
    "NoiseSection",
    "EdgesRecord",
    "OccupiedBandwidthRecord",
    "SpectrumSection",
    "VoiceSection",
    "Finding",
    "AnalysisResult",
    "SEVERITIES",
    "finite",
]

#: Finding severities, from least to most serious.


def finite(v: Any) -> Optional[float]:
    """``float(v)``, or ``None`` for ``None``, NaN and +-Inf ("not measurable")."""
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


@dataclass(frozen=True)
class InputInfo:
    path: str
    sample_rate_hz: int
    channels: int
    channel_used: str  # "0", "1", ... or "mix"
    duration_s: float
    format: str
    subtype: str


@dataclass(frozen=True)
class LevelsSection:
    """Levels in dBFS (0 dBFS = full-scale square-wave RMS; full-scale sine RMS = −3.01 dBFS)."""

    peak_dbfs: Optional[float]
    true_peak_dbtp: Optional[float]
    rms_dbfs: Optional[float]
    active_level_dbfs: Optional[float]
    activity_factor: Optional[float]
    crest_factor_db: Optional[float]
    dc_offset: Optional[float]

    @classmethod
    def of(cls, lv: LevelsResult) -> "LevelsSection":
        """From a :class:`~voiceband.measurement.levels.LevelsResult`; digital silence has no
        activity factor or DC offset."""
        silent = finite(lv.peak_dbfs) is None
        return cls(
            peak_dbfs=finite(lv.peak_dbfs),
            true_peak_dbtp=finite(lv.true_peak_dbtp),
            rms_dbfs=finite(lv.rms_dbfs),
            active_level_dbfs=finite(lv.active_level_dbfs),
            activity_factor=None if silent else finite(lv.activity_factor),
            crest_factor_db=finite(lv.crest_factor_db),
            dc_offset=None if silent else finite(lv.dc_offset),
        )


@dataclass(frozen=True)
class ClipEventRecord:
    start_s: float
    duration_s: float


@dataclass(frozen=True)
class ClippingSection:
    clip_level: Optional[float]
    clipped_samples: int
    clipped_fraction: float
    event_count: int
    events: tuple[ClipEventRecord, ...]
    events_listed: int = 0

    @classmethod
    def of(cls, cl: ClippingResult, *, max_events: int) -> "ClippingSection":
        """From a :class:`~voiceband.measurement.clipping.ClippingResult`, listing at most
        ``max_events`` events (all are counted)."""
        events = tuple(ClipEventRecord(float(e.start_s), float(e.duration_s)) for e in cl.events[:max_events])
        return cls(
            clip_level=finite(cl.clip_level),
            clipped_samples=int(cl.clipped_samples),
            clipped_fraction=float(cl.clipped_fraction),
            event_count=int(cl.event_count),
            events=events,
            events_listed=len(events),
        )


@dataclass(frozen=True)
class HumRecord:
    fundamental_hz: float
    level_db_re_speech: Optional[float]
    level_dbfs: Optional[float] = None
    harmonics_hz: tuple[float, ...] = ()

    @classmethod
    def of(cls, hum: HumResult) -> "HumRecord":
        """From a :class:`~voiceband.measurement.hum.HumResult`."""
        return cls(
            fundamental_hz=float(hum.fundamental_hz),
            level_db_re_speech=finite(hum.level_db_re_speech),
            level_dbfs=finite(hum.level_dbfs),
            harmonics_hz=tuple(float(h) for h in hum.harmonics_hz),
        )


@dataclass(frozen=True)
class ToneRecord:
    """A steady tone: a CTCSS tone (``kind`` "ctcss", ``ctcss_hz`` the standard tone) or another
    steady tone such as a test tone (``kind`` "tone")."""

    frequency_hz: float
    kind: str
    ctcss_hz: Optional[float]
    level_dbfs: Optional[float]
    level_db_re_speech: Optional[float]


#: What ``noise.snr_db`` means (the JSON says it beside the number).
SNR_DEFINITION = ("active-speech SNR: ITU-T P.56 active level of the speech alone minus the noise level, "
                  "both by power subtraction (speech frames' power minus the noise power measured in the pauses)")


@dataclass(frozen=True)
class NoiseSection:
    floor_dbfs: Optional[float]
    snr_db: Optional[float]
    hum: Optional[HumRecord]
    speech_fraction: Optional[float] = None
    snr_definition: str = SNR_DEFINITION
    speech_active_level_dbfs: Optional[float] = None
    speech_activity_factor: Optional[float] = None
    tones: tuple[ToneRecord, ...] = ()

    @classmethod
    def of(cls, activity: ActivityResult, hum: Optional[HumResult], *, active_level_dbfs: Optional[float], silent: bool,
           speech_noise: Optional[SpeechNoisePower] = None, tones: tuple = ()) -> "NoiseSection":
        """From an :class:`~voiceband.measurement.activity.ActivityResult`, the mains hum (only
        when a mains comb was measured, else ``None``), the power-subtraction measurement
        (:class:`~voiceband.measurement.speech_noise.SpeechNoisePower`) and the steady tones.

        The floor is the noise power of the power-subtraction measurement (the pause frames'
        RMS when it has none); the SNR is its speech-alone active level minus that floor.
        """
        from .measurement.activity import snr_db

        if silent:
            return cls(None, None, None, None)
        sn = speech_noise
        floor = finite(sn.noise_level_dbfs) if sn is not None and sn.noise_level_dbfs is not None else finite(activity.noise_floor_dbfs)
        speech_level = finite(sn.active_level_dbfs) if sn is not None else None
        if sn is not None and sn.snr_db is not None:
            snr = finite(sn.snr_db)
        else:
            snr = finite(snr_db(active_level_dbfs, floor)) if floor is not None else None
        ref = speech_level if speech_level is not None else active_level_dbfs
        tone_records = tuple(
            ToneRecord(float(t.frequency_hz), t.kind, t.ctcss_hz, finite(t.level_dbfs),
                       finite(t.level_dbfs - ref) if ref is not None else None)
            for t in tones)
        return cls(
            floor_dbfs=floor,
            snr_db=snr,
            hum=HumRecord.of(hum) if hum is not None else None,
            speech_fraction=finite(activity.speech_fraction),
            speech_active_level_dbfs=speech_level,
            speech_activity_factor=finite(sn.activity) if sn is not None else None,
            tones=tone_records,
        )


@dataclass(frozen=True)
class EdgesRecord:
    low: Optional[float]
    high: Optional[float]
    criterion_db: float = -10.0
    method: str = ""
    lowest_band_hz: Optional[float] = None
    highest_band_hz: Optional[float] = None
    #: [lower, upper] (Hz) that holds each edge given how far a talker departs from the reference.
    low_range: Optional[tuple[float, float]] = None
    high_range: Optional[tuple[float, float]] = None
    low_uncertain: Optional[bool] = None
    high_uncertain: Optional[bool] = None
    #: Why a range is open: "noise" (hidden in noise), "talker" (below the talker's lowest F0), "span".
    low_limited_by: Optional[str] = None
    high_limited_by: Optional[str] = None

    @classmethod
    def of(cls, e: Optional[PassbandEdges], fine: Optional[FineEdges] = None) -> "EdgesRecord":
        """From the fine-spectrum edges (:class:`~voiceband.measurement.edges.FineEdges`) when
        there are some, else the band estimate (:class:`~voiceband.measurement.bandwidth.PassbandEdges`),
        or ``None`` (not estimated)."""
        if e is None:
            return cls(None, None, -10.0, "not estimated (no speech spectrum with pauses found)")
        if fine is not None:
            def rng(edge: Edge):
                if edge.range_hz is None:
                    return None
                return (float(edge.range_hz[0]), float(edge.range_hz[1]))

            noise = ("noise" if fine.noise_from == "pauses" else
                     "the quietest frames' spectrum as the noise, no pauses standing out of it")
            return cls(
                low=finite(fine.low.hz),
                high=finite(fine.high.hz),
                criterion_db=-fine.drop_db,
                method=(f"fine long-term spectrum (speech minus {noise}, harmonic comb bridged, 1/12 octave) minus the "
                        f"{fine.reference} reference speech spectrum with the talker's tilt removed; "
                        f"{fine.drop_db:g} dB below the passband level; ranges from +/-8 dB of talker departure"),
                lowest_band_hz=float(fine.span_hz[0]),
                highest_band_hz=float(fine.span_hz[1]),
                low_range=rng(fine.low),
                high_range=rng(fine.high),
                low_uncertain=not fine.low.certain,
                high_uncertain=not fine.high.certain,
                low_limited_by=fine.low.limited_by,
                high_limited_by=fine.high.limited_by,
            )
        return cls(
            low=finite(e.low_hz),
            high=finite(e.high_hz),
            criterion_db=-e.drop_db,
            method=(f"measured speech spectrum minus the {e.reference} reference speech spectrum, "
                    f"{e.drop_db:g} dB below the passband level"),
            lowest_band_hz=finite(e.lowest_band_hz),
            highest_band_hz=finite(e.highest_band_hz),
        )


@dataclass(frozen=True)
class OccupiedBandwidthRecord:
    fraction: float
    low_hz: Optional[float]
    high_hz: Optional[float]
    width_hz: Optional[float]
    span_low_hz: Optional[float] = None
    span_high_hz: Optional[float] = None

    @classmethod
    def of(cls, ob: Optional[OccupiedBandwidth]) -> "OccupiedBandwidthRecord":
        """From an :class:`~voiceband.measurement.bandwidth.OccupiedBandwidth`, or ``None`` (not measurable)."""
        if ob is None:
            return cls(0.99, None, None, None)
        return cls(
            fraction=float(ob.fraction),
            low_hz=finite(ob.low_hz),
            high_hz=finite(ob.high_hz),
            width_hz=finite(ob.width_hz),
            span_low_hz=finite(ob.span_low_hz),
            span_high_hz=finite(ob.span_high_hz),
        )


@dataclass(frozen=True)
class SpectrumSection:
    bands_hz: tuple[float, ...]
    speech_band_db: tuple[Optional[float], ...]
    noise_band_db: tuple[Optional[float], ...]
    tilt_db_per_octave: Optional[float]
    tilt_basis: str
    edges_hz: EdgesRecord
    occupied_bandwidth: OccupiedBandwidthRecord
    #: Vocal effort whose ANSI S3.5-1997 Table 3 spectrum shape best fits the speech over 500–2000 Hz,
    #: on a continuous scale 0 normal, 1 raised, 2 loud, 3 shout; None when not fitted.
    vocal_effort_index: Optional[float] = None

    @classmethod
    def of(
        cls, s: Optional[SpectrumResult], edges: Optional[PassbandEdges], obw: Optional[OccupiedBandwidth], *, silent: bool,
        fine: Optional[FineEdges] = None,
    ) -> "SpectrumSection":
        """From a :class:`~voiceband.measurement.spectrum.SpectrumResult` (or ``None`` when the
        recording is shorter than one frame), the passband edges and the occupied bandwidth;
        digital silence has no band levels or tilt."""
        bands = tuple(float(b) for b in s.bands_hz) if s is not None else ()

        def band_tuple(arr: Any) -> tuple:
            if arr is None or silent:
                return tuple(None for _ in bands)
            return tuple(finite(v) for v in arr)

        span = s.tilt_span_hz if s is not None else None
        return cls(
            bands_hz=bands,
            speech_band_db=band_tuple(s.speech_band_db if s is not None else None),
            noise_band_db=band_tuple(s.noise_band_db if s is not None else None),
            tilt_db_per_octave=None if (s is None or silent) else finite(s.tilt_db_per_octave),
            tilt_basis=("slope of one-third-octave band levels vs log2 f"
                        + (f" over {span[0]:.0f}–{span[1]:.0f} Hz" if span else "")
                        + "; a PSD slope reads 3.01 dB/octave lower"),
            edges_hz=EdgesRecord.of(edges, fine),
            occupied_bandwidth=OccupiedBandwidthRecord.of(obw),
            vocal_effort_index=finite(edges.effort_index) if edges is not None else None,
        )


@dataclass(frozen=True)
class VoiceSection:
    f0_median_hz: Optional[float]
    f0_p5_hz: Optional[float]
    f0_p95_hz: Optional[float]

    @classmethod
    def of(cls, v: VoiceResult) -> "VoiceSection":
        """From a :class:`~voiceband.measurement.voice.VoiceResult`."""
        return cls(finite(v.f0_median_hz), finite(v.f0_p5_hz), finite(v.f0_p95_hz))


@dataclass(frozen=True)
class AnalysisResult:
    """Everything ``voiceband analyze`` measured on one recording."""

    input: InputInfo
    levels: LevelsSection
    clipping: ClippingSection
    noise: NoiseSection
    spectrum: SpectrumSection
    voice: VoiceSection
    intelligibility: Optional[RecordingIntelligibility]
    findings: tuple[Finding, ...] = field(default_factory=tuple)
    voiceband_version: str = ""
