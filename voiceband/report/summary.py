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

__all__ = ["NOT_MEASURED", "number", "analysis_heading", "analysis_rows", "response_rows", "response_lines"]

#: How a missing value (``None``, NaN) reads, in every command's output.
NOT_MEASURED = "not measured"


def number(v: float, digits: int = 1, *, sign: bool = False) -> str:
    """``v`` with ``digits`` decimals, never a negative zero ("-0.0" reads "0.0"); ``sign`` adds "+"."""
    text = f"{v:+.{digits}f}" if sign else f"{v:.{digits}f}"
    if text.lstrip("+-").strip("0.") == "":  # rounds to zero: no sign
        text = text.lstrip("+-")
    return text


def _f(v: Optional[float], unit: str = "", digits: int = 1) -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return NOT_MEASURED
    return f"{number(v, digits)}{(' ' + unit) if unit else ''}"


def _range(lo: Optional[float], hi: Optional[float], unit: str = "Hz", digits: int = 0) -> str:
    """``lo – hi unit``, or what is missing said in words."""
    if lo is None and hi is None:
        return NOT_MEASURED
    return f"{_f(lo, '', digits) if lo is not None else NOT_MEASURED} – {_f(hi, unit, digits) if hi is not None else NOT_MEASURED}"


def analysis_heading(r: AnalysisResult) -> str:
    """One line naming the recording and how it was read."""
    i = r.input
    return (f"{i.path}  {i.sample_rate_hz} Hz, {i.channels} ch (using {i.channel_used}), "
            f"{number(i.duration_s, 1)} s, {i.format}/{i.subtype}")


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
    # An edge is None where the estimate stays within 10 dB of the passband down to (up to) the
    # lowest (highest) band that holds speech: it lies beyond that band.
    low = _f(edges.low, "", 0) if edges.low is not None else (
        f"below {edges.lowest_band_hz:g}" if edges.lowest_band_hz else NOT_MEASURED)
    high = _f(edges.high, "", 0) if edges.high is not None else (
        f"above {edges.highest_band_hz:g}" if edges.highest_band_hz else NOT_MEASURED)

    def _edge_range(rng, unc):
        if rng is None:
            return ""
        return f"{'uncertain, ' if unc else ''}{rng[0]:.0f}–{rng[1]:.0f} Hz"

    ranges = "; ".join(f"{side} {_edge_range(rng, unc)}" for side, rng, unc in
                       (("low", edges.low_range, edges.low_uncertain), ("high", edges.high_range, edges.high_uncertain))
                       if rng is not None)
    add("Spectrum", "Passband (−10 dB)", NOT_MEASURED if low == high == NOT_MEASURED else f"{low} – {high} Hz",
        "chain response estimated from the speech" + (f" ({ranges})" if ranges else ""))
    ob = sp.occupied_bandwidth
    add("", f"Occupied bandwidth ({100 * ob.fraction:g} %)", _f(ob.width_hz, "Hz", 0),
        f"{_range(ob.low_hz, ob.high_hz)} (ITU-R SM.328)")
    if sp.vocal_effort_index is not None:
        names = ("normal", "raised", "loud", "shout")
        add("", "Vocal effort (fitted)", f"{sp.vocal_effort_index:.1f}",
            f"0 normal … 3 shout; nearest: {names[min(3, max(0, round(sp.vocal_effort_index)))]}")
    add("", "Spectral tilt", _f(sp.tilt_db_per_octave, "dB/oct"), "one-third-octave band levels vs log2 f")
    add("Voice", "Fundamental (median)", _f(vo.f0_median_hz, "Hz", 0),
        f"5–95 %: {_range(vo.f0_p5_hz, vo.f0_p95_hz)}")
    it = r.intelligibility
    if it is not None:
        add("Intelligibility", "SII", _f(it.sii, "", 3), f"ANSI S3.5-1997, {it.rating or 'not rated'}")
        curve = {round(p.snr_db): p.sii for p in it.sii_vs_channel_snr}
        if 10 in curve and 0 in curve:
            add("", "SII, weak signal", f"{curve[10]:.2f} / {curve[0]:.2f}",
                "with white channel noise at 10 / 0 dB SNR")
    return out


def _edges(lo: Optional[float], hi: Optional[float], band: tuple[float, float]) -> str:
    # An edge is None where the response does not fall that far inside the measured band.
    a = _f(lo, "", 0) if lo is not None else f"below {band[0]:.0f}"
    b = _f(hi, "Hz", 0) if hi is not None else f"above {band[1]:.0f} Hz"
    return f"{a} – {b}"


def response_rows(r: "ResponseResult") -> list[tuple[str, str, str, str]]:
    """(section, quantity, value, note) rows of a response measurement, as :func:`analysis_rows`."""
    e = r.edges_hz
    band = r.analysis_band_hz
    out: list[tuple[str, str, str, str]] = []
    add = lambda sec, q, v, n: out.append((sec, q, v, n))  # noqa: E731
    add("Stimulus", "Kind", r.stimulus_kind,
        f"analysed {band[0]:.0f}–{band[1]:.0f} Hz at {r.sample_rate_hz} Hz (recording {r.recording_sample_rate_hz} Hz)")
    add("Response", "Passband −3 dB", _edges(e.low_3db, e.high_3db, band), "")
    add("", "Passband −10 dB", _edges(e.low_10db, e.high_10db, band), "")
    add("", "Ripple", _f(r.ripple_db, "dB", 2), "peak-to-valley inside the −3 dB passband")
    add("", "Gain", _f(r.passband_level_db, "dB", 2), f"at {r.passband_peak_hz:.0f} Hz, recording re stimulus")
    add("", "Delay", _f(r.delay_s, "s", 4), "stimulus start to response peak, recording clock")
    add("", "Clock ratio", f"{r.clock_ratio:.6f}",
        "recording clock re stimulus clock" + ("" if r.clock_ratio_measured else " (not measured: assumed)"))
    add("", "Carrier offset",
        f"{number(r.frequency_offset_hz, 2, sign=True)} Hz" if r.frequency_offset_corrected else "none",
        "corrected" if r.frequency_offset_corrected else f"none above {r.frequency_offset_resolution_hz:g} Hz")
    for i, h in enumerate(r.harmonics):
        floor = getattr(h, "floor_db_re_fundamental", None)
        if h.level_db_re_fundamental is None:
            value, note = NOT_MEASURED, "below the noise or outside the band"
        elif getattr(h, "below_floor", False):
            value = f"below {_f(floor, 'dB')}" if floor is not None else "below floor"
            note = f"the measurement's own floor; read {_f(h.level_db_re_fundamental, 'dB')}"
        else:
            value = _f(h.level_db_re_fundamental, "dB")
            note = "re fundamental" + (f"; measurement floor {_f(floor, 'dB')}" if floor is not None else "")
        add("Harmonics" if i == 0 else "", f"H{h.order}", value, note)
    return out


def response_lines(r: "ResponseResult") -> list[str]:
    """Summary lines of a response measurement, one per row of :func:`response_rows` (findings not included)."""
    lines = []
    for _sec, q, v, n in response_rows(r):
        lines.append(f"{q:<16} {v}" + (f" ({n})" if n else ""))
    return lines
