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
    add("Levels", "Sample peak", _f(lv.peak_dbfs, "dBFS", 2), "highest sample; 0 dBFS is digital full scale")
    add("", "True peak", _f(lv.true_peak_dbtp, "dBTP", 2), "peak between samples (BS.1770, 4× oversampled); above 0 overloads a converter")
    add("", "RMS", _f(lv.rms_dbfs, "dBFS"), "whole-file average power; a full-scale sine reads −3.0 dBFS")
    add("", "Active speech level", _f(lv.active_level_dbfs, "dBFS"), "ITU-T P.56 level while talking; −26 dBFS is a common reference")
    add("", "Activity factor", _f(None if lv.activity_factor is None else 100 * lv.activity_factor, "%", 0), "share of time counted as speech by P.56")
    add("", "Crest factor", _f(lv.crest_factor_db, "dB"), "true peak above active level; unprocessed speech is often 15–20 dB")
    add("", "DC offset", _f(None if lv.dc_offset is None else 100 * lv.dc_offset, "% FS", 3), "mean of the samples; should be near 0")
    cnote = "no clipped runs found" if cl.event_count == 0 else (
        f"clipped at {100 * cl.clip_level:.1f} % of full scale" if cl.clip_level is not None else "clipped runs found")
    add("Clipping", "Clip events", str(cl.event_count), cnote)
    add("", "Clipped samples", f"{cl.clipped_samples} ({100 * cl.clipped_fraction:.3f} %)", "samples sitting on the clip level")
    add("Noise", "Noise floor", _f(nz.floor_dbfs, "dBFS"), "RMS level in the pauses between words")
    add("", "SNR", _f(nz.snr_db, "dB"), "active speech level minus noise floor")
    if nz.hum is None:
        add("", "Mains hum", "none found", "no 50/60 Hz comb stands out of the pause noise")
    else:
        add("", "Mains hum", f"{nz.hum.fundamental_hz:.1f} Hz, {_f(nz.hum.level_db_re_speech, 'dB')} re speech",
            "hum comb level relative to the active speech level")
    edges = sp.edges_hz
    add("Spectrum", "Passband edges (−10 dB)", f"{_f(edges.low, 'Hz', 0)} – {_f(edges.high, 'Hz', 0)}",
        "where the estimated chain response falls 10 dB below its passband")
    ob = sp.occupied_bandwidth
    add("", f"Occupied bandwidth ({100 * ob.fraction:g} %)", _f(ob.width_hz, "Hz", 0),
        f"{_f(ob.low_hz, 'Hz', 0)} – {_f(ob.high_hz, 'Hz', 0)}; ITU-R SM.328 β = {100 * (1 - ob.fraction):g} % method")
    add("", "Spectral tilt", _f(sp.tilt_db_per_octave, "dB/oct"), sp.tilt_basis or "one-third-octave band levels vs log2 f")
    add("Voice", "Fundamental (median)", _f(vo.f0_median_hz, "Hz", 0),
        f"5–95 %: {_f(vo.f0_p5_hz, 'Hz', 0)} – {_f(vo.f0_p95_hz, 'Hz', 0)}; a high-pass well below this keeps the voice full")
    it = r.intelligibility
    if it is not None:
        add("Intelligibility", "SII (ANSI S3.5-1997)", _f(getattr(it, "sii", None), "", 3),
            f"{getattr(it, 'rating', '') or ''} — one-third-octave procedure at {getattr(it, 'presentation_level_db_spl', 0):.1f} dB SPL".strip(" —"))
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
    t.add_column("")
    t.add_column("Quantity")
    t.add_column("Value", justify="right")
    t.add_column("What it means", overflow="fold")
    for sec, q, v, n in rows(r):
        t.add_row(f"[bold]{sec}[/bold]" if sec else "", q, v, n)
    console.print(t)
    if r.findings:
        console.print("[bold]Findings[/bold]")
        marks = {"problem": "[red]✗[/red]", "warning": "[yellow]![/yellow]", "info": "·"}
        for f in r.findings:
            console.print(f" {marks.get(f.severity, '·')} {f.message} [dim]({f.code})[/dim]")
