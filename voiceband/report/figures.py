"""The on-air test report's figures, drawn from one or two analyses (before and after a change).

Nothing here measures: every figure draws what :func:`voiceband.analysis.analyze_file_detailed`
accumulated in its single pass (fine spectra, activity thresholds, hum lines, the timeline's level
columns, coarse spectrogram and sample histogram) and what the result holds (edges, occupied
bandwidth, SII bands and curve).  matplotlib is imported inside the functions, figures are
``matplotlib.figure.Figure`` objects (no pyplot), drawn in the style context of
:data:`voiceband.report.plots.STYLE`.

Colours are the report's own: a deep teal for the recording judged ("after") and an ochre for
the earlier one ("before"), which stay distinct for the common colour-vision deficiencies, and
every trace is also told apart by line style and a legend label.
"""

from __future__ import annotations

import io
from dataclasses import dataclass
from typing import Any, Optional, Sequence

import numpy as np

from .plots import STYLE, _hz_label

__all__ = ["Take", "FIGURES", "render_figures", "figure_png", "comparison_figure", "COLOURS", "SERIES"]

#: Trace colours: the recording judged, the earlier one, noise, the passband fill, marks.
COLOURS = {
    "now": "#0b6e75",
    "before": "#b7791f",
    "noise": "#7b8088",
    "band": "#e9efe6",
    "mark": "#5a3d7a",
    "clip": "#a23b2a",
}
_DPI = 96


@dataclass(frozen=True)
class Take:
    """One recording as the figures see it: a label, its result and the accumulated details."""

    label: str
    result: Any  # AnalysisResult
    details: Any  # AnalysisDetails
    role: str = "now"  # "now" or "before"


#: The project's style with major grid lines only (minor log-axis grids cost more to draw than the data).
REPORT_STYLE = {**STYLE, "axes.grid.which": "major"}


def _style():
    import matplotlib.style

    return matplotlib.style.context(REPORT_STYLE)


def _legend(ax: Any, **kwargs: Any) -> None:
    """A legend for the labelled lines of ``ax``, none when nothing is labelled (a take without speech)."""
    if ax.get_legend_handles_labels()[0]:
        ax.legend(**kwargs)


def _fig(w: float, h: float, rows: int = 1):
    from matplotlib.figure import Figure

    # fixed margins (in inches, so they hold for any height): a layout engine would redraw every figure
    fig = Figure(figsize=(w, h), dpi=_DPI)
    fig.subplots_adjust(left=0.75 / w, right=1.0 - 0.15 / w, bottom=0.5 / h, top=1.0 - 0.32 / h,
                        hspace=0.95 / (h / max(rows, 1)))
    axes = fig.subplots(rows, 1, squeeze=False)[:, 0]
    return fig, axes


def _logx(ax, lo: float, hi: float) -> None:
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullFormatter

    ax.set_xscale("log")
    ax.set_xlim(lo, hi)
    ticks = [t for t in (50, 100, 200, 300, 500, 1000, 2000, 3000, 5000, 10000, 20000) if lo <= t <= hi]
    ax.xaxis.set_major_locator(FixedLocator(ticks))
    ax.xaxis.set_major_formatter(FuncFormatter(_hz_label))
    ax.xaxis.set_minor_formatter(NullFormatter())
    ax.set_xlabel("Frequency (Hz)")


def _db(v: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(np.maximum(np.asarray(v, dtype=float), 1e-30))


def spectrum_figure(takes: Sequence[Take], profile: Any) -> Any:
    """Long-term speech spectrum (and the pauses'), the profile's passband, edges and occupied bandwidth."""
    with _style():
        fig, (ax,) = _fig(7.2, 3.6)
        fs2 = min(t.result.input.sample_rate_hz for t in takes) / 2.0
        lo, hi = 50.0, min(fs2, 12000.0)
        ax.axvspan(profile.passband_low_hz, profile.passband_high_hz, color=COLOURS["band"], zorder=0,
                   label=f"{profile.name} band {profile.passband_low_hz:.0f}–{profile.passband_high_hz:.0f} Hz")
        top = -200.0
        for t in takes:
            s = t.details.measurements.spectrum
            if s is None or s.speech_psd_fs2_per_hz is None:
                continue
            f = np.asarray(s.freqs_hz)
            keep = (f >= lo) & (f <= hi)
            c = COLOURS[t.role]
            ls = "-" if t.role == "now" else "--"
            y = _db(s.speech_psd_fs2_per_hz)[keep]
            top = max(top, float(np.max(y)))
            ax.plot(f[keep], y, color=c, linestyle=ls, label=f"{t.label}: speech")
            if s.noise_psd_fs2_per_hz is not None:
                ax.plot(f[keep], _db(s.noise_psd_fs2_per_hz)[keep], color=c, linestyle=":", linewidth=0.9,
                        alpha=0.8, label=f"{t.label}: pauses")
            e = t.result.spectrum.edges_hz
            for v in (e.low, e.high):
                if v is not None and lo <= v <= hi:
                    ax.axvline(v, color=c, linestyle=ls, linewidth=0.8, alpha=0.8)
        ymin = top - 80.0
        for i, t in enumerate(takes):
            ob = t.result.spectrum.occupied_bandwidth
            if ob.low_hz is None or ob.high_hz is None:
                continue
            yb = top + 4.0 + 5.0 * i
            c = COLOURS[t.role]
            ax.annotate("", xy=(max(ob.low_hz, lo), yb), xytext=(min(ob.high_hz, hi), yb),
                        arrowprops=dict(arrowstyle="<->", color=c, linewidth=1.0))
            ax.text(np.sqrt(max(ob.low_hz, lo) * min(ob.high_hz, hi)), yb + 1.0,
                    f"{t.label}: 99 % bandwidth {ob.width_hz / 1000:.2f} kHz", color=c, ha="center",
                    va="bottom", fontsize=7.5)
        ax.set_ylim(ymin, top + 8.0 + 5.0 * len(takes))
        _logx(ax, lo, hi)
        ax.set_ylabel("Spectrum level (dB re FS² per Hz)")
        ax.set_title("Where the power lies: long-term spectrum (thin vertical lines: −10 dB edges)", loc="left")
        _legend(ax, loc="lower left", ncol=2)
    return fig


def spectrogram_figure(takes: Sequence[Take]) -> Any:
    """Coarse spectrogram of each recording, 0 … min(fs/2, 8 kHz), cividis colour map."""
    with _style():
        fig, axes = _fig(7.2, 2.3 * len(takes) + 0.4, rows=len(takes))
        for ax, t in zip(axes, takes):
            tl = t.details.timeline
            spec = np.asarray(tl.spectrogram_db_per_hz)
            f = np.asarray(tl.spectrogram_freqs_hz)
            fmax = min(f[-1], 8000.0)
            keep = f <= fmax
            img = spec[:, keep].T if spec.size else np.zeros((int(keep.sum()), 1))
            finite = img[np.isfinite(img)]
            vmax = float(finite.max()) if finite.size else 0.0
            img = np.where(np.isfinite(img), img, vmax - 200.0)
            dur = spec.shape[0] * tl.spectrogram_column_s if spec.size else 1.0
            im = ax.imshow(img, origin="lower", aspect="auto", cmap="cividis", vmin=vmax - 70.0, vmax=vmax,
                           extent=(0.0, dur, 0.0, fmax / 1000.0), interpolation="nearest")
            ax.grid(False)
            ax.set_ylabel("kHz")
            ax.set_title(f"{t.label}: sound over time (brighter = more power; scale in dB re FS²/Hz)", loc="left")
            cb = fig.colorbar(im, ax=ax, pad=0.01, fraction=0.04)
            cb.ax.tick_params(labelsize=7)
        axes[-1].set_xlabel("Time (s)")
    return fig


def level_figure(takes: Sequence[Take]) -> Any:
    """RMS and peak level over time, with the noise floor, pauses and clipping events marked."""
    with _style():
        fig, axes = _fig(7.2, 2.4 * len(takes) + 0.4, rows=len(takes))
        for ax, t in zip(axes, takes):
            tl = t.details.timeline
            act = t.details.measurements.activity
            rms = np.asarray(tl.level_rms_dbfs)
            peak = np.asarray(tl.level_peak_dbfs)
            x = (np.arange(rms.size) + 0.5) * tl.level_column_s
            floor_plot = -100.0
            c = COLOURS[t.role]
            if act.pause_threshold_dbfs is not None and np.isfinite(act.pause_threshold_dbfs):
                pause = rms <= act.pause_threshold_dbfs
                ax.fill_between(x, floor_plot, 3.0, where=pause, color=COLOURS["band"], step="mid",
                                linewidth=0, label="pause")
            ax.plot(x, np.where(np.isfinite(peak), peak, floor_plot), color=c, linewidth=0.6, alpha=0.45,
                    label="peak")
            ax.plot(x, np.where(np.isfinite(rms), rms, floor_plot), color=c, linewidth=1.1, label="RMS")
            nf = t.result.noise.floor_dbfs
            if nf is not None:
                ax.axhline(nf, color=COLOURS["noise"], linestyle="--", linewidth=0.9,
                           label=f"noise floor {nf:.0f} dBFS")
            cl = t.result.clipping
            if cl.event_count:
                starts = [e.start_s for e in cl.events]
                ax.plot(starts, np.full(len(starts), 1.0), linestyle="none", marker="v", markersize=5,
                        color=COLOURS["clip"], label=f"clipping ({cl.event_count})")
            finite = rms[np.isfinite(rms)]
            low = max(floor_plot, (float(finite.min()) - 6.0) if finite.size else floor_plot)
            if nf is not None:
                low = min(low, nf - 6.0)
            ax.set_ylim(max(low, floor_plot), 3.0)
            ax.set_xlim(0.0, max(float(x[-1]) if x.size else 1.0, 1e-3))
            ax.set_ylabel("dBFS")
            ax.set_title(f"{t.label}: level over time", loc="left")
            _legend(ax, loc="lower right", bbox_to_anchor=(1.0, 1.0), ncol=5, fontsize=7, borderaxespad=0.1,
                      handlelength=1.5, columnspacing=1.0)
        axes[-1].set_xlabel("Time (s)")
    return fig


def histogram_figure(takes: Sequence[Take]) -> Any:
    """Share of samples at each amplitude (log scale): a clipped recording piles up at its clip level."""
    with _style():
        fig, (ax,) = _fig(7.2, 2.8)
        for t in takes:
            tl = t.details.timeline
            e = np.asarray(tl.histogram_edges)
            n = np.asarray(tl.histogram_counts, dtype=float)
            share = n / max(n.sum(), 1.0)
            c = COLOURS[t.role]
            ax.stairs(np.where(share > 0, share, np.nan), e, color=c, linestyle="-" if t.role == "now" else "--",
                      label=t.label)
            cl = t.result.clipping.clip_level
            if t.result.clipping.event_count and cl is not None:
                for s in (-cl, cl):
                    ax.axvline(s, color=COLOURS["clip"], linestyle=":", linewidth=0.9)
                ax.text(cl, 0.5, f" clip level {100 * cl:.0f} % FS", color=COLOURS["clip"], fontsize=7.5,
                        transform=ax.get_xaxis_transform(), rotation=90, va="center")
        from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

        ax.set_yscale("log")
        ax.yaxis.set_major_locator(LogLocator(base=10.0, numticks=6))
        ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{100 * v:g} %"))  # plain text, no mathtext
        ax.yaxis.set_minor_formatter(NullFormatter())
        ax.set_xlim(-1.02, 1.02)
        ax.set_xlabel("Sample value (full scale = ±1)")
        ax.set_ylabel("Share of samples (log)")
        ax.set_title("How the samples spread: amplitude histogram", loc="left")
        _legend(ax, loc="upper right")
    return fig


def sii_bands_figure(takes: Sequence[Take]) -> Any:
    """Per SII band: the importance (outline) and what this recording delivers of it (importance x audibility)."""
    with _style():
        fig, (ax,) = _fig(7.2, 2.9)
        ok = [t for t in takes if t.result.intelligibility is not None]
        width = 0.8 / max(len(ok), 1)
        for i, t in enumerate(ok):
            it = t.result.intelligibility
            imp = np.asarray(it.band_importance)
            aud = np.asarray(it.band_audibility)
            x = np.arange(imp.size) + (i - (len(ok) - 1) / 2.0) * width
            c = COLOURS[t.role]
            ax.bar(x, imp, width=width, facecolor="none", edgecolor=COLOURS["noise"], linewidth=0.7,
                   label="band importance" if i == 0 else None)
            ax.bar(x, imp * aud, width=width, color=c, hatch=None if t.role == "now" else "///",
                   edgecolor="white", linewidth=0.3, label=f"{t.label}: delivered (SII {it.sii:.2f})")
        if ok:
            centres = ok[0].result.intelligibility.band_centres_hz
            ax.set_xticks(np.arange(len(centres)))
            ax.set_xticklabels([_hz_label(c) for c in centres], rotation=0, fontsize=7)
        ax.set_xlabel("SII band centre (Hz)")
        ax.set_ylabel("Importance × audibility")
        ax.set_title("Where intelligibility comes from (ANSI S3.5-1997 bands)", loc="left")
        _legend(ax, loc="upper right")
    return fig


def sii_snr_figure(takes: Sequence[Take]) -> Any:
    """SII against channel SNR (white channel noise over the SII range), per recording."""
    with _style():
        fig, (ax,) = _fig(7.2, 2.8)
        for t in takes:
            it = t.result.intelligibility
            if it is None:
                continue
            s = [p.snr_db for p in it.sii_vs_channel_snr]
            v = [p.sii for p in it.sii_vs_channel_snr]
            ax.plot(s, v, color=COLOURS[t.role], marker="o" if t.role == "now" else "s", markersize=3.5,
                    linestyle="-" if t.role == "now" else "--", label=t.label)
        for y, word in ((0.75, "good"), (0.45, "fair")):
            ax.axhline(y, color=COLOURS["noise"], linewidth=0.6, linestyle=":")
            ax.text(-10.0, y + 0.01, f"{word} from {y:g}", color=COLOURS["noise"], fontsize=7)
        ax.set_ylim(0.0, 1.0)
        ax.set_xlabel("Channel SNR (dB, white noise over 141–8913 Hz)")
        ax.set_ylabel("SII")
        ax.set_title("Weak signals: intelligibility against channel noise", loc="left")
        _legend(ax, loc="lower right")
    return fig


def hum_figure(takes: Sequence[Take]) -> Optional[Any]:
    """Close-up of 0–600 Hz in the pauses with the detected mains lines; ``None`` when no take has hum."""
    hum_takes = [t for t in takes if t.details.measurements.hum is not None]
    if not hum_takes:
        return None
    with _style():
        fig, (ax,) = _fig(7.2, 2.8)
        for t in takes:
            s = t.details.measurements.spectrum
            c = COLOURS[t.role]
            if s is not None and s.noise_psd_fs2_per_hz is not None:
                f = np.asarray(s.freqs_hz)
                keep = f <= 600.0
                per_bin = _db(np.asarray(s.noise_psd_fs2_per_hz)[keep] * s.frequency_resolution_hz)
                ax.plot(f[keep], per_bin, color=c, linewidth=0.9, label=f"{t.label}: pauses (power per bin)")
            h = t.details.measurements.hum
            if h is not None:
                ax.vlines(h.harmonics_hz, -160.0, h.harmonic_levels_dbfs, color=COLOURS["mark"], linewidth=1.6)
                ax.plot(h.harmonics_hz, h.harmonic_levels_dbfs, linestyle="none", marker="D", markersize=4,
                        color=COLOURS["mark"], label=f"{t.label}: {h.fundamental_hz:.1f} Hz hum lines")
        ax.set_xlim(0.0, 600.0)
        lines = [v for t in hum_takes for v in t.details.measurements.hum.harmonic_levels_dbfs]
        ax.set_ylim(min(lines) - 50.0, max(lines) + 10.0)
        ax.set_xlabel("Frequency (Hz)")
        ax.set_ylabel("dBFS")
        ax.set_title("Mains hum close-up (pauses only)", loc="left")
        _legend(ax, loc="upper right")
    return fig


#: (file stem, caption, builder) in report order; builders take (takes, profile).
FIGURES = (
    ("spectrum", "Long-term spectrum with the service's band shaded, the −10 dB edges and the 99 % occupied bandwidth",
     lambda takes, profile: spectrum_figure(takes, profile)),
    ("spectrogram", "Spectrogram: how the sound changes over time", lambda takes, profile: spectrogram_figure(takes)),
    ("level", "Level over time, with pauses, the noise floor and clipping events", lambda takes, profile: level_figure(takes)),
    ("histogram", "Amplitude histogram", lambda takes, profile: histogram_figure(takes)),
    ("sii-bands", "SII band audibility × importance", lambda takes, profile: sii_bands_figure(takes)),
    ("sii-snr", "SII against channel SNR", lambda takes, profile: sii_snr_figure(takes)),
    ("hum", "Mains hum close-up", lambda takes, profile: hum_figure(takes)),
)


#: Colours and line styles for several recordings side by side (distinct in hue, lightness and dash).
SERIES = (("#0b6e75", "-"), ("#b7791f", "--"), ("#5a3d7a", "-."), ("#4d5358", ":"))


def comparison_figure(takes: Sequence[Take], profile: Any) -> Any:
    """Several recordings side by side: long-term speech spectra over the profile's band, and SII against channel SNR."""
    with _style():
        fig, (ax_s, ax_i) = _fig(7.2, 5.6, rows=2)
        fs2 = min(t.result.input.sample_rate_hz for t in takes) / 2.0
        lo, hi = 50.0, min(fs2, 12000.0)
        ax_s.axvspan(profile.passband_low_hz, profile.passband_high_hz, color=COLOURS["band"], zorder=0,
                     label=f"{profile.name} band")
        top = -200.0
        for k, t in enumerate(takes):
            colour, ls = SERIES[k % len(SERIES)]
            s = t.details.measurements.spectrum
            if s is not None and s.speech_psd_fs2_per_hz is not None:
                f = np.asarray(s.freqs_hz)
                keep = (f >= lo) & (f <= hi)
                y = _db(s.speech_psd_fs2_per_hz)[keep]
                top = max(top, float(np.max(y)))
                ax_s.plot(f[keep], y, color=colour, linestyle=ls, label=t.label)
            it = t.result.intelligibility
            if it is not None:
                ax_i.plot([p.snr_db for p in it.sii_vs_channel_snr], [p.sii for p in it.sii_vs_channel_snr],
                          color=colour, linestyle=ls, marker="os^D"[k % 4], markersize=3.5, label=t.label)
        ax_s.set_ylim(top - 70.0, top + 5.0)
        _logx(ax_s, lo, hi)
        ax_s.set_ylabel("dB re FS² per Hz")
        ax_s.set_title("Long-term speech spectrum of each recording", loc="left")
        _legend(ax_s, loc="lower left", fontsize=7)
        ax_i.set_ylim(0.0, 1.0)
        ax_i.set_xlabel("Channel SNR (dB, white noise over 141–8913 Hz)")
        ax_i.set_ylabel("SII")
        ax_i.set_title("Intelligibility against channel noise", loc="left")
        _legend(ax_i, loc="lower right", fontsize=7)
    return fig


def figure_png(fig: Any) -> bytes:
    """PNG bytes of a figure (Agg canvas)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=_DPI)
    return buf.getvalue()


def render_figures(takes: Sequence[Take], profile: Any) -> list[tuple[str, str, Any]]:
    """(stem, caption, Figure) for every figure that applies to these takes, in report order."""
    out = []
    for stem, caption, build in FIGURES:
        fig = build(takes, profile)
        if fig is not None:
            out.append((stem, caption, fig))
    return out
