"""The summary row of one file: fixed leading columns, then measurements under the analyze JSON's dotted names."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Mapping, Optional

__all__ = [
    "BatchSettings",
    "LEAD_COLUMNS",
    "MEASUREMENT_COLUMNS",
    "COLUMNS",
    "column_types",
    "ok_row",
    "failed_row",
    "lookup",
]


@dataclass(frozen=True)
class BatchSettings:
    """The analysis settings every file of a batch gets (the same ones ``voiceband analyze`` takes).

    Attributes
    ----------
    channel : str
        Channel analysed, a number from ``"0"`` or ``"mix"``.
    profile : str or None
        Service profile (a built-in name or a TOML file) whose verdicts are added to each row, or None.
    """

    channel: str = "0"
    profile: Optional[str] = None

    def as_dict(self) -> dict[str, Any]:
        """The settings that decide a row's content, with the voiceband version (the measurement code)."""
        from .. import __version__

        out = {"command": "analyze", "channel": self.channel, "profile": self.profile, "voiceband_version": __version__}
        if self.profile is not None:
            from .profile import profile_digest

            out["profile_sha256"] = profile_digest(self.profile)
        return out


#: Columns every row has, in this order (fixed by the batch issue).
LEAD_COLUMNS: tuple[tuple[str, str], ...] = (
    ("path", "string"),
    ("sha256", "string"),
    ("settings", "string"),
    ("status", "string"),
    ("error", "string"),
)

#: Key measurements, named by their dotted path in the analyze JSON document, with their type.
MEASUREMENT_COLUMNS: tuple[tuple[str, str], ...] = (
    ("input.sample_rate_hz", "int"),
    ("input.channels", "int"),
    ("input.channel_used", "string"),
    ("input.duration_s", "float"),
    ("input.format", "string"),
    ("input.subtype", "string"),
    ("levels.peak_dbfs", "float"),
    ("levels.true_peak_dbtp", "float"),
    ("levels.rms_dbfs", "float"),
    ("levels.active_level_dbfs", "float"),
    ("levels.activity_factor", "float"),
    ("levels.crest_factor_db", "float"),
    ("levels.dc_offset", "float"),
    ("clipping.clip_level", "float"),
    ("clipping.clipped_samples", "int"),
    ("clipping.clipped_fraction", "float"),
    ("clipping.event_count", "int"),
    ("noise.floor_dbfs", "float"),
    ("noise.snr_db", "float"),
    ("noise.speech_fraction", "float"),
    ("noise.hum.fundamental_hz", "float"),
    ("noise.hum.level_db_re_speech", "float"),
    ("spectrum.tilt_db_per_octave", "float"),
    ("spectrum.edges_hz.low", "float"),
    ("spectrum.edges_hz.high", "float"),
    ("spectrum.occupied_bandwidth.fraction", "float"),
    ("spectrum.occupied_bandwidth.low_hz", "float"),
    ("spectrum.occupied_bandwidth.high_hz", "float"),
    ("spectrum.occupied_bandwidth.width_hz", "float"),
    ("spectrum.vocal_effort_index", "float"),
    ("voice.f0_median_hz", "float"),
    ("voice.f0_p5_hz", "float"),
    ("voice.f0_p95_hz", "float"),
    ("intelligibility.sii", "float"),
    ("intelligibility.rating", "string"),
    ("findings", "string"),  # the findings' codes, "code:severity" joined by "; "
)

COLUMNS: tuple[str, ...] = tuple(n for n, _ in LEAD_COLUMNS + MEASUREMENT_COLUMNS)


def column_types(extra: tuple[tuple[str, str], ...] = ()) -> dict[str, str]:
    """Column name -> ``"string"``, ``"int"`` or ``"float"`` for the fixed columns plus ``extra``."""
    return dict(LEAD_COLUMNS + MEASUREMENT_COLUMNS + tuple(extra))


def lookup(doc: Mapping[str, Any], dotted: str) -> Any:
    """The value at a dotted path of a JSON document, or None when any step is missing or null."""
    cur: Any = doc
    for part in dotted.split("."):
        if not isinstance(cur, Mapping) or cur.get(part) is None:
            return None
        cur = cur[part]
    return cur


def _scalar(v: Any) -> Any:
    if isinstance(v, float) and not math.isfinite(v):
        return None
    if isinstance(v, (dict, list, tuple)):
        return None
    return v


def ok_row(path: str, sha256: str, settings: str, doc: Mapping[str, Any],
           extra: Optional[Mapping[str, Any]] = None) -> dict[str, Any]:
    """The row of an analysed file from its analyze JSON document (NaN/Inf never reach a row)."""
    row: dict[str, Any] = {"path": path, "sha256": sha256, "settings": settings, "status": "ok", "error": None}
    for name, _ in MEASUREMENT_COLUMNS:
        if name == "findings":
            row[name] = "; ".join(f"{f['code']}:{f['severity']}" for f in doc.get("findings", ()))
        else:
            row[name] = _scalar(lookup(doc, name))
    for k, v in (extra or {}).items():
        row[k] = _scalar(v)
    return row


def failed_row(path: str, sha256: Optional[str], settings: str, error: str,
               extra_names: tuple[str, ...] = ()) -> dict[str, Any]:
    """The row of a file that could not be analysed: its error sentence and no measurements."""
    row: dict[str, Any] = {"path": path, "sha256": sha256, "settings": settings, "status": "failed",
                           "error": " ".join(error.split())}
    for name, _ in MEASUREMENT_COLUMNS:
        row[name] = None
    for k in extra_names:
        row[k] = None
    return row
