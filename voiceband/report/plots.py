"""Figures: the only module that imports matplotlib.

matplotlib is imported inside the functions, figures are built with
``matplotlib.figure.Figure`` (no pyplot, so no GUI backend is touched and nothing
global changes), and every figure is drawn inside a style context rather than by
setting global rcParams.  Nothing here computes a measurement: each function takes a
result and draws what it holds.
"""

from __future__ import annotations

from typing import Any

import numpy as np

__all__ = ["bode_figure", "STYLE"]

#: The project's neutral look, applied with ``matplotlib.style.context``.
STYLE: dict[str, Any] = {
    "figure.facecolor": "white",
    "axes.facecolor": "white",
    "axes.edgecolor": "#4a4a4a",
    "axes.linewidth": 0.8,
    "axes.grid": True,
    "axes.grid.which": "both",
    "grid.color": "#e2e2e2",
    "grid.linewidth": 0.6,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.titlesize": 10,
    "axes.titleweight": "bold",
    "axes.labelsize": 9,
    "axes.labelcolor": "#303030",
    "xtick.labelsize": 8,
    "ytick.labelsize": 8,
    "xtick.color": "#4a4a4a",
    "ytick.color": "#4a4a4a",
    "font.size": 9,
    "lines.linewidth": 1.4,
    "legend.fontsize": 8,
    "legend.frameon": False,
    "savefig.dpi": 150,
    "savefig.facecolor": "white",
}
_LINE = "#1f3b5c"
_EDGE_3 = "#b0413e"
_EDGE_10 = "#7a7a7a"


def _hz_label(v: float, _pos: Any = None) -> str:
    if v >= 1000.0:
        k = v / 1000.0
        return f"{k:g}k"
    return f"{v:g}"


def _edge_lines(ax: Any, edges: Any, *, label: bool) -> None:
    for name, colour, style, text in (
        ("low_3db", _EDGE_3, "-", "−3 dB"),
        ("high_3db", _EDGE_3, "-", None),
        ("low_10db", _EDGE_10, ":", "−10 dB"),
        ("high_10db", _EDGE_10, ":", None),
    ):
        v = getattr(edges, name)
        if v is None:
            continue
        ax.axvline(v, color=colour, linestyle=style, linewidth=0.9, label=(f"{text} edges" if label and text else None))


def _log_ticks(ax: Any, fmt: Any, minor_fmt: Any, narrow: bool) -> None:
    from matplotlib.ticker import LogLocator

    ax.xaxis.set_major_formatter(fmt)
    if narrow:
        ax.xaxis.set_minor_locator(LogLocator(base=10.0, subs=(2.0, 3.0, 5.0)))
    ax.xaxis.set_minor_formatter(minor_fmt)


def _wrapped(phase_deg: np.ndarray) -> np.ndarray:
    """Phase with NaN inserted at wraps so the line does not jump across the axis."""
    p = np.asarray(phase_deg, dtype=np.float64).copy()
    jumps = np.flatnonzero(np.abs(np.diff(p)) > 180.0)
    p[jumps + 1] = np.nan
    return p


def bode_figure(result: Any, ax: Any = None) -> Any:
    """Magnitude and phase of a measured response against log frequency, edges marked.

    Parameters
    ----------
    result : voiceband.response.ResponseResult
    ax : matplotlib Axes, or a pair of them, optional
        A pair (magnitude, phase) to draw into; a single Axes gets the magnitude only.
        By default a new two-panel figure is made.

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib.style
    from matplotlib.figure import Figure
    from matplotlib.ticker import FuncFormatter, NullFormatter

    f = np.asarray(result.frequencies_hz, dtype=np.float64)
    mag = np.asarray(result.magnitude_db, dtype=np.float64)
    phase = np.asarray(result.phase_deg, dtype=np.float64)
    tones = result.stimulus_kind == "tones"
    with matplotlib.style.context(STYLE):
        if ax is None:
            fig = Figure(figsize=(8.0, 6.0), layout="constrained")
            ax_mag, ax_ph = fig.subplots(2, 1, sharex=True, height_ratios=[3, 2])
        elif isinstance(ax, (tuple, list)):
            ax_mag, ax_ph = ax
            fig = ax_mag.figure
        else:
            ax_mag, ax_ph = ax, None
            fig = ax.figure
        fmt = FuncFormatter(_hz_label)
        narrow = f.size > 0 and f.max() / f.min() < 30.0  # under 1.5 decades: label 2, 3, 5 × 10^k too
        minor_fmt = fmt if narrow else NullFormatter()
        lim = (f.min() / 1.05, f.max() * 1.05) if f.size else (10.0, 10000.0)
        style = dict(color=_LINE, marker="o" if tones else None, markersize=3.5)
        ax_mag.semilogx(f, mag, **style)
        ax_mag.axhline(-3.0, color=_EDGE_3, linewidth=0.6, alpha=0.5)
        ax_mag.axhline(-10.0, color=_EDGE_10, linewidth=0.6, alpha=0.5)
        _edge_lines(ax_mag, result.edges_hz, label=True)
        finite = mag[np.isfinite(mag)]
        lo = max(-60.0, float(finite.min()) - 3.0) if finite.size else -40.0
        ax_mag.set_ylim(min(lo, -13.0), 3.0 + (float(finite.max()) if finite.size else 0.0))
        ax_mag.set_ylabel(f"Magnitude (dB re passband, {result.passband_level_db:+.1f} dB gain)")
        e = result.edges_hz
        span3 = f"−3 dB: {f'{e.low_3db:.0f}' if e.low_3db else '—'}–{f'{e.high_3db:.0f}' if e.high_3db else '—'} Hz"
        offset = (
            f", carrier offset {result.frequency_offset_hz:+.1f} Hz" if result.frequency_offset_corrected else ""
        )
        ax_mag.set_title(f"Frequency response ({'tones' if tones else 'sweep'}; {span3}{offset})", loc="left")
        _log_ticks(ax_mag, fmt, minor_fmt, narrow)
        ax_mag.set_xlim(*lim)
        if any(getattr(e, n) is not None for n in ("low_3db", "high_3db", "low_10db", "high_10db")):
            ax_mag.legend(loc="lower center")
        if ax_ph is not None:
            if np.any(np.isfinite(phase)):
                ax_ph.semilogx(f, _wrapped(phase), **style)
                ax_ph.set_ylim(-190.0, 190.0)
                ax_ph.set_yticks([-180, -90, 0, 90, 180])
            else:
                ax_ph.set_xscale("log")
                ax_ph.set_yticks([])
                ax_ph.text(0.5, 0.5, "phase not measurable (carrier offset: the carrier phase is unknown)",
                           transform=ax_ph.transAxes, ha="center", va="center", color="#606060")
            _edge_lines(ax_ph, result.edges_hz, label=False)
            ax_ph.set_ylabel(f"Phase (°, time zero {result.delay_s:.4f} s)")
            ax_ph.set_xlabel("Frequency (Hz)")
            _log_ticks(ax_ph, fmt, minor_fmt, narrow)
            ax_ph.set_xlim(*lim)
        else:
            ax_mag.set_xlabel("Frequency (Hz)")
    return fig
