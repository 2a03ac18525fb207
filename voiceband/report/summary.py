"""Summaries of results as plain rows and lines, for the terminal, an HTML report or a batch run.

Presentation only: every number comes from the result (:class:`~voiceband.results.AnalysisResult`,
:class:`~voiceband.response.ResponseResult`); nothing is measured here.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Optional

from ..results import AnalysisResult

if TYPE_CHECKING:  # typing only: printing an analysis need not load the response modules
    from ..response.measure import ResponseResult

__all__ = ["analysis_rows", "response_lines"]


def _f(v: Optional[float], unit: str = "", digits: int = 1) -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "—"
    return f"{v:.{digits}f}{(' ' + unit) if unit else ''}"


def analysis_rows(r: AnalysisResult) -> list[tuple[str, str, str, str]]:
    """(section, quantity, value, note) rows for the summary table."""
    lv, cl, nz, sp, vo = r.levels, r.clipping, r.noise, r.spectrum, r.voice
    out: list[tuple[str, str, str, str]] = []
    add = lambda sec, q, v, n: out.append((sec, q, v, n))  # noqa: E731
    add("Levels", "Sample peak", _f(lv.peak_dbfs, "dBFS", 2), "highest sample; 0 dBFS = full scale")
    add("", "True peak", _f(lv.true_peak_dbtp, "dBTP", 2), "between samples (BS.1770, 4× oversampled)")
    add("", "RMS", _f(lv.rms_dbfs, "dBFS"), "whole file; full-scale sine = −3.0 dBFS")
    add("", "Active speech level", _f(lv.active_level_dbfs, "dBFS"), "ITU-T P.56, while talking")
    add("", "Activity factor", _f(None if lv.activity_factor is None else 100 * lv.activity_factor, "%", 0), "share of time talking (P.56)")
    add("", "Crest factor", _f(lv.crest_factor_db, "dB"), "true peak above active level")
    add("", "DC offset", _f(None if lv.dc_offset is None else 100 * lv.dc_offset, "% FS", 3), "mean of the samples")
    if cl.event_count == 0:
        cnote = "no clipped runs found"
    elif cl.clip_level is not None:
        cnote = f"clip level {100 * cl.clip_level:.1f} % of full scale"
    else:
        cnote = "clipped runs found"
    add("Clipping", "Clip events", str(cl.event_count), cnote)
    add("", "Clipped samples", f"{cl.clipped_samples} ({100 * cl.clipped_fraction:.3f} %)", "samples on the clip level")
    add("Noise", "Noise floor", _f(nz.floor_dbfs, "dBFS"), "noise level in the pauses between words")
    add("", "SNR", _f(nz.snr_db, "dB"), "active level of the speech alone − noise floor (power subtraction)")
    if nz.hum is None:
        add("", "Mains hum", "none", "no 50/60 Hz comb above the noise")
    else:
        add("", f"Mains hum ({nz.hum.fundamental_hz:.1f} Hz)", _f(nz.hum.level_db_re_speech, "dB"),
            "hum level re active speech level")
    for t in nz.tones:
        what = f"CTCSS {t.ctcss_hz:.1f} Hz" if t.kind == "ctcss" and t.ctcss_hz is not None else f"tone {t.frequency_hz:.1f} Hz"
        add("", f"Steady {what}", _f(t.level_db_re_speech, "dB"), "level re speech; not mains hum")
    edges = sp.edges_hz
    low = _f(edges.low, "", 0) if edges.low is not None else (
        f"<{edges.lowest_band_hz:g}" if edges.lowest_band_hz and edges.high is not None else "—")
    high = _f(edges.high, "", 0) if edges.high is not None else (
        f">{edges.highest_band_hz:g}" if edges.highest_band_hz and edges.low is not None else "—")
    def _range(rng, unc):
        if rng is None:
            return ""
        return f"{'uncertain, ' if unc else ''}{rng[0]:.0f}–{rng[1]:.0f} Hz"

    ranges = "; ".join(v for v in (_range(edges.low_range, edges.low_uncertain) and f"low {_range(edges.low_range, edges.low_uncertain)}",
                                   _range(edges.high_range, edges.high_uncertain) and f"high {_range(edges.high_range, edges.high_uncertain)}") if v)
    add("Spectrum", "Passband (−10 dB)", f"{low} – {high} Hz",
        "chain response estimated from the speech" + (f" ({ranges})" if ranges else ""))
    ob = sp.occupied_bandwidth
    add("", f"Occupied bandwidth ({100 * ob.fraction:g} %)", _f(ob.width_hz, "Hz", 0),
        f"{_f(ob.low_hz, '', 0)} – {_f(ob.high_hz, 'Hz', 0)} (ITU-R SM.328)")
    if sp.vocal_effort_index is not None:
        names = ("normal", "raised", "loud", "shout")
        add("", "Vocal effort (fitted)", f"{sp.vocal_effort_index:.1f}",
            f"0 normal … 3 shout; nearest: {names[min(3, max(0, round(sp.vocal_effort_index)))]}")
    add("", "Spectral tilt", _f(sp.tilt_db_per_octave, "dB/oct"), "one-third-octave band levels vs log2 f")
    add("Voice", "Fundamental (median)", _f(vo.f0_median_hz, "Hz", 0),
        f"5–95 %: {_f(vo.f0_p5_hz, '', 0)} – {_f(vo.f0_p95_hz, 'Hz', 0)}")
    it = r.intelligibility
    if it is not None:
        add("Intelligibility", "SII", _f(it.sii, "", 3), f"ANSI S3.5-1997, {it.rating or 'not rated'}")
        curve = {round(p.snr_db): p.sii for p in it.sii_vs_channel_snr}
        if 10 in curve and 0 in curve:
            add("", "SII, weak signal", f"{curve[10]:.2f} / {curve[0]:.2f}",
                "with white channel noise at 10 / 0 dB SNR")
    return out


def response_lines(r: "ResponseResult") -> list[str]:
    """Summary lines of a response measurement (findings and output paths not included)."""
    e = r.edges_hz
    return [
        f"Stimulus         {r.stimulus_kind}, analysed {r.analysis_band_hz[0]:.0f}–{r.analysis_band_hz[1]:.0f} Hz "
        f"at {r.sample_rate_hz} Hz (recording {r.recording_sample_rate_hz} Hz)",
        f"Passband −3 dB   {_f(e.low_3db, 'Hz', 0)} – {_f(e.high_3db, 'Hz', 0)}",
        f"Passband −10 dB  {_f(e.low_10db, 'Hz', 0)} – {_f(e.high_10db, 'Hz', 0)}",
        f"Ripple           {_f(r.ripple_db, 'dB', 2)} (peak-to-valley inside the −3 dB passband)",
        f"Gain             {_f(r.passband_level_db, 'dB', 2)} at {r.passband_peak_hz:.0f} Hz (recording re stimulus)",
        f"Delay            {_f(r.delay_s, 's', 4)} (stimulus start to response peak, recording clock)",
        f"Clock ratio      {r.clock_ratio:.6f}" + ("" if r.clock_ratio_measured else " (not measured)"),
        "Carrier offset   "
        + (f"{r.frequency_offset_hz:+.2f} Hz (corrected)" if r.frequency_offset_corrected
           else f"none above {r.frequency_offset_resolution_hz:g} Hz"),
        "Harmonics        "
        + ", ".join(f"H{h.order} {_f(h.level_db_re_fundamental, 'dB')}" for h in r.harmonics)
        + " re fundamental",
    ]
