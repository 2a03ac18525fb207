"""The JSON document of ``voiceband response`` (keys fixed by ``voiceband/schemas/response.schema.json``).

Built here, beside the measurement, so the command line, an HTML report and a batch run
write the same document; NaN becomes null when it is written (:mod:`voiceband.serialize`).
"""

from __future__ import annotations

import os
from typing import Any, Union

from .measure import ResponseResult

__all__ = ["response_document"]


def response_document(
    result: ResponseResult, *, stimulus: Union[str, os.PathLike], recording: Union[str, os.PathLike]
) -> dict[str, Any]:
    """The JSON document for a :class:`~voiceband.response.ResponseResult`.

    ``stimulus`` and ``recording`` are the file names as given; findings appear as their
    sentences (the schema's ``findings`` is a list of strings).
    """
    return {
        "stimulus": str(stimulus),
        "recording": str(recording),
        "stimulus_kind": result.stimulus_kind,
        "sample_rate_hz": result.sample_rate_hz,
        "recording_sample_rate_hz": result.recording_sample_rate_hz,
        "analysis_band_hz": list(result.analysis_band_hz),
        "frequencies_hz": result.frequencies_hz,
        "magnitude_db": result.magnitude_db,
        "phase_deg": result.phase_deg,
        "group_delay_s": result.group_delay_s,
        "snr_db": result.snr_db,
        "passband_level_db": result.passband_level_db,
        "passband_peak_hz": result.passband_peak_hz,
        "edges_hz": result.edges_hz,
        "ripple_db": result.ripple_db,
        "delay_s": result.delay_s,
        "clock_ratio": result.clock_ratio,
        "clock_ratio_measured": result.clock_ratio_measured,
        "frequency_offset_hz": result.frequency_offset_hz,
        "frequency_offset_corrected": result.frequency_offset_corrected,
        "frequency_offset_resolution_hz": result.frequency_offset_resolution_hz,
        "frequency_offset_spread_hz": result.frequency_offset_spread_hz,
        "harmonics": [
            {"order": h.order, "level_db_re_fundamental": h.level_db_re_fundamental} for h in result.harmonics
        ],
        "thd_vs_frequency": {
            "frequencies_hz": result.thd_frequencies_hz,
            "thd_db": result.thd_db,
            "orders": [
                {"order": k, "level_db_re_fundamental": result.harmonic_levels_db[i]}
                for i, k in enumerate(h.order for h in result.harmonics)
            ]
            if result.harmonic_levels_db.shape[1]
            else [],
        },
        "findings": [f.message for f in result.findings],
    }
