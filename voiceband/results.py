"""Frozen result dataclasses of ``voiceband analyze``.

Their nesting and field names are the JSON keys of the analysis report
(``voiceband/schemas/analysis.schema.json``); units are in the names.
``None`` means "not measurable" and is explained by a finding.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Optional

__all__ = [
    "InputInfo",
    "LevelsSection",
    "ClipEventRecord",
    "ClippingSection",
    "HumRecord",
    "NoiseSection",
    "EdgesRecord",
    "OccupiedBandwidthRecord",
    "SpectrumSection",
    "VoiceSection",
    "Finding",
    "AnalysisResult",
    "SEVERITIES",
]

#: Finding severities, from least to most serious.
SEVERITIES = ("info", "warning", "problem")


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


@dataclass(frozen=True)
class HumRecord:
    fundamental_hz: float
    level_db_re_speech: Optional[float]
    level_dbfs: Optional[float] = None
    harmonics_hz: tuple[float, ...] = ()


@dataclass(frozen=True)
class NoiseSection:
    floor_dbfs: Optional[float]
    snr_db: Optional[float]
    hum: Optional[HumRecord]
    speech_fraction: Optional[float] = None


@dataclass(frozen=True)
class EdgesRecord:
    low: Optional[float]
    high: Optional[float]
    criterion_db: float = -10.0
    method: str = ""
    lowest_band_hz: Optional[float] = None
    highest_band_hz: Optional[float] = None


@dataclass(frozen=True)
class OccupiedBandwidthRecord:
    fraction: float
    low_hz: Optional[float]
    high_hz: Optional[float]
    width_hz: Optional[float]
    span_low_hz: Optional[float] = None
    span_high_hz: Optional[float] = None


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


@dataclass(frozen=True)
class VoiceSection:
    f0_median_hz: Optional[float]
    f0_p5_hz: Optional[float]
    f0_p95_hz: Optional[float]


@dataclass(frozen=True)
class Finding:
    code: str
    severity: str  # one of SEVERITIES
    message: str


@dataclass(frozen=True)
class AnalysisResult:
    """Everything ``voiceband analyze`` measured on one recording."""

    input: InputInfo
    levels: LevelsSection
    clipping: ClippingSection
    noise: NoiseSection
    spectrum: SpectrumSection
    voice: VoiceSection
    intelligibility: Optional[Any]
    findings: tuple[Finding, ...] = field(default_factory=tuple)
    voiceband_version: str = ""
