"""Figures of the design bench: a chain's Bode plot, compared chains, the cutoff-sweep heat map.

Like :mod:`voiceband.report.plots` (whose style it uses), this module imports matplotlib inside its
functions, builds figures with ``matplotlib.figure.Figure`` (no pyplot) and computes nothing: each
function draws what a result holds.
"""

from __future__ import annotations

from typing import Any, Optional

import numpy as np

from .plots import STYLE, _edge_lines, _hz_label, _wrapped

__all__ = ["chain_figure", "compare_figure", "sweep_figure"]

_LINE = "#1f3b5c"
_MEASURED = "#c06a1f"
_COLOURS = ("#1f3b5c", "#b0413e", "#3f7f4f", "#7a5a9e", "#c06a1f", "#4a8fb0")


def _freq_axis(ax: Any) -> None:
    from matplotlib.ticker import FuncFormatter, NullFormatter

    ax.set_xscale("log")
    ax.xaxis.set_major_formatter(FuncFormatter(_hz_label))
    ax.xaxis.set_minor_formatter(NullFormatter())
    ax.set_xlim(20.0, 20000.0)


def chain_figure(evaluation: Any, measured: Optional[Any] = None) -> Any:
    """Bode-style figure of a chain: magnitude (with a measured overlay), phase, group delay.

    Parameters
    ----------
    evaluation : voiceband.design.evaluate.ChainEvaluation
    measured : voiceband.design.evaluate.MeasuredComparison, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib.style
    from matplotlib.figure import Figure

    e = evaluation
    f = e.frequencies_hz
    rel = e.magnitude_db - e.gain_db
    with matplotlib.style.context(STYLE):
        fig = Figure(figsize=(8.0, 7.5), layout="constrained")
        ax_mag, ax_ph, ax_gd = fig.subplots(3, 1, sharex=True, height_ratios=[3, 1.6, 1.4])
        ax_mag.plot(f, rel, color=_LINE, label="design")
        if measured is not None:
            ax_mag.plot(measured.frequencies_hz, measured.magnitude_db, color=_MEASURED, linewidth=1.0,
                        label=f"measured ({measured.source})")
        if e.sideband_suppression_db is not None:
            ax_mag.plot(f, -np.minimum(e.sideband_suppression_db, 120.0), color="#7a7a7a", linestyle="--",
                        linewidth=1.0, label="unwanted sideband re wanted")
        ax_mag.axhline(-3.0, color="#b0413e", linewidth=0.6, alpha=0.5)
        ax_mag.axhline(-10.0, color="#7a7a7a", linewidth=0.6, alpha=0.5)
        _edge_lines(ax_mag, e.edges_hz, label=True)
        ax_mag.set_ylim(-60.0, 6.0)
        ax_mag.set_ylabel(f"Magnitude (dB re passband, gain {e.gain_db:+.2f} dB)")
        sii_text = f"SII {e.sii_quiet:.3f} in quiet"
        ax_mag.set_title(f"{e.name}: {sii_text}, occupied bandwidth {e.occupied_bandwidth.width_hz:.0f} Hz", loc="left")
        ax_mag.legend(loc="lower center")
        ax_ph.plot(f, _wrapped(e.phase_deg), color=_LINE)
        ax_ph.set_ylim(-190.0, 190.0)
        ax_ph.set_yticks([-180, -90, 0, 90, 180])
        ax_ph.set_ylabel("Phase (°)")
        ax_gd.plot(f, e.group_delay_s * 1e3, color=_LINE)
        gd = e.group_delay_s[np.isfinite(e.group_delay_s) & (rel > -10.0)] * 1e3
        if gd.size:
            span = max(1.0, float(gd.max() - gd.min()))
            ax_gd.set_ylim(float(gd.min()) - 0.2 * span, float(gd.max()) + 0.2 * span)
        ax_gd.set_ylabel("Group delay (ms)")
        ax_gd.set_xlabel("Frequency (Hz)")
        for ax in (ax_mag, ax_ph, ax_gd):
            _freq_axis(ax)
    return fig


def compare_figure(comparison: Any, responses: list) -> Any:
    """Overlay of the compared chains' responses (linear stages, dB re passband) and their SII.

    Parameters
    ----------
    comparison : voiceband.design.compare.ChainComparison
    responses : list of (frequencies_hz, magnitude_db re passband), one per chain, in the same order
    """
    import matplotlib.style
    from matplotlib.figure import Figure

    with matplotlib.style.context(STYLE):
        fig = Figure(figsize=(8.0, 6.5), layout="constrained")
        ax, ax_sii = fig.subplots(2, 1, height_ratios=[3, 2])
        for k, (row, (f, m)) in enumerate(zip(comparison.chains, responses)):
            label = row.name + (" (best)" if row.best else "")
            ax.plot(f, m, color=_COLOURS[k % len(_COLOURS)], linewidth=2.0 if row.best else 1.2, label=label)
        ax.axhline(-3.0, color="#b0413e", linewidth=0.6, alpha=0.5)
        ax.set_ylim(-60.0, 6.0)
        ax.set_ylabel("Magnitude (dB re passband)")
        ax.set_xlabel("Frequency (Hz)")
        ax.set_title("Compared chains: linear response", loc="left")
        ax.legend(loc="lower center")
        _freq_axis(ax)
        for k, row in enumerate(comparison.chains):
            snr = [p.snr_db for p in row.sii_by_channel_snr]
            colour = _COLOURS[k % len(_COLOURS)]
            ax_sii.plot(snr, [p.sii_peak_ref for p in row.sii_by_channel_snr], color=colour, marker="o",
                        label=f"{row.name}, peak-referenced")
            ax_sii.plot(snr, [p.sii_average_ref for p in row.sii_by_channel_snr], color=colour, linestyle=":",
                        label=f"{row.name}, average-referenced")
        ax_sii.set_xlabel("Channel SNR (dB)")
        ax_sii.set_ylabel("SII")
        ax_sii.set_ylim(0.0, 1.0)
        ax_sii.legend(loc="upper left", ncol=2, fontsize=7)
    return fig


def sweep_figure(result: Any) -> Any:
    """Heat map of the sweep's SII score over the cutoff grid, the bandwidth limit drawn, best pair marked."""
    import matplotlib.style
    from matplotlib.figure import Figure

    r = result
    with matplotlib.style.context({**STYLE, "axes.grid": False}):
        fig = Figure(figsize=(8.0, 6.0), layout="constrained")
        ax = fig.subplots()
        mesh = ax.pcolormesh(r.high_hz, r.low_hz, np.ma.masked_invalid(r.sii), shading="nearest", cmap="viridis")
        fig.colorbar(mesh, ax=ax, label=f"SII (mean over {', '.join(f'{s:g}' for s in r.snrs_db)} dB channel SNR)")
        if r.max_bandwidth_hz is not None and np.any(np.isfinite(r.occupied_bandwidth_hz)):
            cs = ax.contour(r.high_hz, r.low_hz, np.ma.masked_invalid(r.occupied_bandwidth_hz),
                            levels=[r.max_bandwidth_hz], colors="white", linewidths=1.5)
            ax.clabel(cs, fmt={r.max_bandwidth_hz: f"{r.max_bandwidth_hz:.0f} Hz occupied"}, fontsize=8)
        if r.best is not None:
            ax.plot(r.best.high_hz, r.best.low_hz, marker="*", markersize=14, color="#e04040",
                    markeredgecolor="white", linestyle="none",
                    label=f"best {r.best.low_hz:.0f}–{r.best.high_hz:.0f} Hz, SII {r.best.sii:.3f}")
            ax.legend(loc="lower right", frameon=True)
        ax.set_xlabel("Low-pass cutoff (Hz)")
        ax.set_ylabel("High-pass cutoff (Hz)")
        ax.set_title(f"Cutoff sweep: {r.type} order {r.order}, speech: {r.speech}", loc="left")
    return fig
