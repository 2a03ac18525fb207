"""``voiceband sweep``: find the best high-pass and low-pass cutoffs for a bandwidth limit (and a voice)."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from .common import emit_json, guarded


@guarded
def sweep(
    low: Annotated[str, typer.Option("--low", help="High-pass cutoffs START:STOP:STEP in Hz (inclusive).", metavar="RANGE")],
    high: Annotated[str, typer.Option("--high", help="Low-pass cutoffs START:STOP:STEP in Hz (inclusive).", metavar="RANGE")],
    order: Annotated[int, typer.Option("--order", help="Order of both filters (1–12).", metavar="N")] = 4,
    type_: Annotated[str, typer.Option("--type", help="butterworth, chebyshev1, bessel or elliptic.", metavar="TYPE")] = "butterworth",
    ripple_db: Annotated[Optional[float], typer.Option("--ripple-db", help="Passband ripple (chebyshev1, elliptic), dB.", metavar="DB")] = None,
    stop_db: Annotated[Optional[float], typer.Option("--stop-db", help="Stopband attenuation (elliptic), dB.", metavar="DB")] = None,
    max_bandwidth: Annotated[
        Optional[float], typer.Option("--max-bandwidth", help="Occupied-bandwidth limit (99 % power), Hz.", metavar="HZ")
    ] = None,
    channel_snr: Annotated[
        Optional[list[float]], typer.Option("--channel-snr", help="Channel SNR in dB (repeatable; default 0, 5, 10, 15, 20).",
                                            metavar="DB")
    ] = None,
    speech: Annotated[
        Optional[Path], typer.Option("--speech", help="A recording of your own voice: score against its long-term spectrum.",
                                     metavar="FILE")
    ] = None,
    json_path: Annotated[
        Optional[str], typer.Option("--json", help="Also write JSON to PATH; '-' prints only JSON on stdout.", metavar="PATH|-")
    ] = None,
    plot: Annotated[Optional[Path], typer.Option("--plot", help="Write the heat map (PNG) to FILE.", metavar="FILE")] = None,
    force: Annotated[bool, typer.Option("--force", help="Overwrite existing output files.")] = False,
) -> None:
    """Grid search over high-pass and low-pass cutoffs scored with the band-gain SII model: the best pair
    within the bandwidth limit, the Pareto front of SII against occupied bandwidth, and a heat map."""
    from ..design.sweep import parse_range, sweep_cutoffs
    from ..outputs import atomic_output, check_writable
    from ..design.document import sweep_document

    for target in (plot, None if json_path in (None, "-") else Path(json_path)):
        if target is not None:
            check_writable(target, force=force, inputs=(speech,) if speech is not None else ())  # refuse before the work
    lows = parse_range(low, name="--low")
    highs = parse_range(high, name="--high")
    model = None
    if speech is not None:
        from ..audio import read
        from ..design.speech import talker_speech

        x, fs = read(speech)
        model = talker_speech(x, fs, name=speech.name)
    result = sweep_cutoffs(lows, highs, order=order, type=type_, ripple_db=ripple_db, stop_db=stop_db,
                           max_bandwidth_hz=max_bandwidth, snrs_db=channel_snr or None, speech=model)
    if plot is not None:
        from ..report.design_plots import sweep_figure

        fig = sweep_figure(result)
        with atomic_output(plot, force=force) as tmp:
            fig.savefig(tmp, format="png")
    emit_json(sweep_document(result), json_path, force=force)  # files first
    if json_path != "-":
        _print_summary(result, plot)


def _print_summary(r, plot: Optional[Path]) -> None:
    from ..report.summary import number
    from .render import print_report

    snrs = ", ".join(f"{s:g}" for s in r.snrs_db)
    limit = "no limit" if r.max_bandwidth_hz is None else f"occupied bandwidth at most {r.max_bandwidth_hz:g} Hz"
    rows: list[tuple[str, str, str, str]] = [
        ("Search", "Swept", f"{r.low_hz.size} × {r.high_hz.size}",
         f"cutoffs, {r.type} order {r.order}, {r.candidates_scored} pairs scored"),
        ("", "Speech", "", str(r.speech)),
        ("", "Score", "", f"SII averaged over {snrs} dB channel SNR (noise in {r.receive_band_hz[0]:g}–{r.receive_band_hz[1]:g} Hz)"),
        ("", "Limit", "", limit),
    ]
    if r.best is None:
        rows.append(("Best", "Pair", "none", "none within the limit; widen the ranges or raise --max-bandwidth"))
    else:
        b = r.best
        rows += [
            ("Best", "High-pass", f"{b.low_hz:g} Hz", ""),
            ("", "Low-pass", f"{b.high_hz:g} Hz", ""),
            ("", "SII", f"{b.sii:.3f}", f"quiet {b.sii_quiet:.3f}"),
            ("", "Occupied bandwidth", f"{number(b.occupied_bandwidth_hz, 0)} Hz", "99 % of the speech power"),
        ]
    step = max(1, len(r.pareto) // 8)
    rows.append(("Pareto front", "Pairs", str(len(r.pareto)), "SII against occupied bandwidth; every "
                 + ("pair" if step == 1 else f"{step}th pair") + " shown"))
    for c in list(r.pareto)[::step]:
        rows.append(("", f"{c.low_hz:g}–{c.high_hz:g} Hz", f"SII {c.sii:.3f}", f"occupied {number(c.occupied_bandwidth_hz, 0)} Hz"))
    if plot is not None:
        rows.append(("Output", "Plot", "", str(plot)))
    print_report(None, rows)
