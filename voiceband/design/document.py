"""JSON documents of the design bench (``voiceband chain``, ``compare``, ``sweep``), beside the design code.

The key names documented in the commands' help are fixed (other tools read them); more may be added.
Numbers stay numpy values here; :mod:`voiceband.serialize` turns NaN and infinities into null.
"""

from __future__ import annotations

from typing import Any, Optional

__all__ = ["chain_document", "compare_document", "sweep_document"]


def _edges(e: Any) -> dict:
    return {"low_3db": e.low_3db, "high_3db": e.high_3db, "low_10db": e.low_10db, "high_10db": e.high_10db}


def chain_document(chain: Any, evaluation: Any, measured: Optional[Any] = None) -> dict[str, Any]:
    """``voiceband chain`` JSON."""
    e = evaluation
    o = e.occupied_bandwidth
    doc: dict[str, Any] = {
        "name": e.name,
        "chain_file": chain.path,
        "stages": [s.describe() for s in chain.stages],
        "left_out_of_response": list(e.left_out),
        "frequencies_hz": e.frequencies_hz,
        "magnitude_db": e.magnitude_db,
        "phase_deg": e.phase_deg,
        "group_delay_s": e.group_delay_s,
        "gain_db": e.gain_db,
        "ripple_db": e.ripple_db,
        "edges_hz": _edges(e.edges_hz),
        "sii": {
            "quiet": e.sii_quiet,
            "by_channel_snr": [{"snr_db": p.snr_db, "sii": p.sii} for p in e.sii_by_channel_snr],
            "speech": "ANSI S3.5-1997 standard speech spectrum, normal effort, re the chain's passband gain",
            "receive_band_hz": list(e.receive_band_hz),
        },
        "occupied_bandwidth": {
            "low_hz": o.low_hz,
            "high_hz": o.high_hz,
            "width_hz": o.width_hz,
            "fraction": o.fraction,
            "speech": "Byrne et al. (1994) long-term average speech spectrum through the chain",
        },
    }
    if e.sideband_suppression_db is not None:
        doc["sideband_suppression_db"] = e.sideband_suppression_db
    if measured is not None:
        m = measured
        doc["measured"] = {
            "source": m.source,
            "frequencies_hz": m.frequencies_hz,
            "magnitude_db": m.magnitude_db,
            "design_db": m.design_db,
            "difference_db": m.difference_db,
            "rms_difference_db": m.rms_difference_db,
            "max_difference_db": m.max_difference_db,
            "gain_difference_db": m.gain_difference_db,
            "edges_hz": m.edges_hz,
        }
    return doc


def compare_document(comparison: Any) -> dict[str, Any]:
    """``voiceband compare`` JSON."""
    c = comparison
    return {
        "speech": c.speech,
        "sample_rate_hz": c.sample_rate_hz,
        "duration_s": c.duration_s,
        "receive_band_hz": list(c.receive_band_hz),
        "channel_snr_db": list(c.snrs_db),
        "chains": [
            {
                "name": r.name,
                "chain_file": r.path,
                "occupied_bandwidth_hz": r.occupied_bandwidth_hz,
                "occupied_band_hz": [r.occupied_low_hz, r.occupied_high_hz],
                "edges_hz": _edges(r.edges_hz),
                "sii_quiet": r.sii_quiet,
                "sii_by_channel_snr": [
                    {"snr_db": p.snr_db, "sii_average_ref": p.sii_average_ref, "sii_peak_ref": p.sii_peak_ref}
                    for p in r.sii_by_channel_snr
                ],
                "stoi": r.stoi,
                "peak_to_average_db": r.peak_to_average_db,
                "sample_peak_to_average_db": r.sample_peak_to_average_db,
                "clipped_fraction": r.clipped_fraction,
                "output_clipped_fraction": r.output_clipped_fraction,
                "delay_s": r.delay_s,
                "best": r.best,
            }
            for r in c.chains
        ],
        "best": c.best,
        "best_reason": c.reason,
        "best_criterion": "highest SII averaged over the channel SNRs, SNR referred to peak envelope power",
    }


def _candidate(c: Any) -> dict[str, Any]:
    return {
        "low_hz": c.low_hz,
        "high_hz": c.high_hz,
        "sii": c.sii,
        "sii_quiet": c.sii_quiet,
        "occupied_bandwidth_hz": c.occupied_bandwidth_hz,
        "occupied_band_hz": [c.occupied_low_hz, c.occupied_high_hz],
    }


def sweep_document(result: Any) -> dict[str, Any]:
    """``voiceband sweep`` JSON."""
    r = result
    best = None
    if r.best is not None:
        best = {**_candidate(r.best),
                "sii_by_channel_snr": [{"snr_db": s, "sii": v} for s, v in zip(r.snrs_db, r.best.sii_by_channel_snr)]}
    return {
        "filter": {"type": r.type, "order": r.order},
        "speech": r.speech,
        "channel_snr_db": list(r.snrs_db),
        "receive_band_hz": list(r.receive_band_hz),
        "max_bandwidth_hz": r.max_bandwidth_hz,
        "score": "SII averaged over the channel SNRs (ANSI S3.5-1997, band gains of the filter pair)",
        "candidates_scored": r.candidates_scored,
        "best": best,
        "pareto": [_candidate(c) for c in r.pareto],
        "grid": {
            "low_hz": r.low_hz,
            "high_hz": r.high_hz,
            "sii": r.sii,
            "sii_quiet": r.sii_quiet,
            "occupied_bandwidth_hz": r.occupied_bandwidth_hz,
        },
    }

