"""Readable terminal summary of an analysis (rich table): values with units and a one-line note each.

Presentation only: every number comes from the :class:`~voiceband.results.AnalysisResult`.
"""

from __future__ import annotations

import math
from typing import Optional

from ..results import AnalysisResult


def _f(v: Optional[float], unit: str = "", digits: int = 1) -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "—"
    return f"{v:.{digits}f}{(' ' + unit) if unit else ''}"


def rows(r: AnalysisResult) -> list[tuple[str, str, str, str]]:
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
    add("Noise", "Noise floor", _f(nz.floor_dbfs, "dBFS"), "RMS in the pauses between words")
    add("", "SNR", _f(nz.snr_db, "dB"), "active speech level − noise floor")
    if nz.hum is None:
        add("", "Mains hum", "none", "no 50/60 Hz comb above the noise")
    else:
        add("", f"Mains hum ({nz.hum.fundamental_hz:.1f} Hz)", _f(nz.hum.level_db_re_speech, "dB"),
            "hum level re active speech level")
    edges = sp.edges_hz
    low = _f(edges.low, "", 0) if edges.low is not None else (
        f"<{edges.lowest_band_hz:g}" if edges.lowest_band_hz and edges.high is not None else "—")
    high = _f(edges.high, "", 0) if edges.high is not None else (
        f">{edges.highest_band_hz:g}" if edges.highest_band_hz and edges.low is not None else "—")
    add("Spectrum", "Passband (−10 dB)", f"{low} – {high} Hz", "chain response estimated from the speech")
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
        add("Intelligibility", "SII", _f(getattr(it, "sii", None), "", 3),
            f"ANSI S3.5-1997, {getattr(it, 'rating', '') or 'not rated'}")
        curve = {round(p.snr_db): p.sii for p in getattr(it, "sii_vs_channel_snr", ())}
        if 10 in curve and 0 in curve:
            add("", "SII, weak signal", f"{curve[10]:.2f} / {curve[0]:.2f}",
                "with white channel noise at 10 / 0 dB SNR")
    return out


def print_analysis(r: AnalysisResult) -> None:
    """Print the summary table and the findings to stdout."""
    from rich.console import Console
    from rich.table import Table

    console = Console()
    i = r.input
    console.print(
        f"[bold]{i.path}[/bold]  {i.sample_rate_hz} Hz, {i.channels} ch (using {i.channel_used}), "
        f"{i.duration_s:.1f} s, {i.format}/{i.subtype}"
    )
    t = Table(show_header=True, header_style="bold", box=None, pad_edge=False)
    t.add_column("Quantity", no_wrap=True)
    t.add_column("Value", justify="right", no_wrap=True)
    t.add_column("What it means", overflow="fold", style="dim")
    for sec, q, v, n in rows(r):
        if sec:
            t.add_row(f"[bold underline]{sec}[/bold underline]", "", "")
        t.add_row("  " + q, v, n)
    console.print(t)
    if r.findings:
        console.print("[bold]Findings[/bold]")
        marks = {"problem": "[red]✗[/red]", "warning": "[yellow]![/yellow]", "info": "·"}
        for f in r.findings:
            console.print(f" {marks.get(f.severity, '·')} {f.message} [dim]({f.code})[/dim]")
