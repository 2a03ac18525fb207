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
    if json_path != "-":
        _print_summary(result, plot)
    emit_json(sweep_document(result), json_path, force=force)


def _print_summary(r, plot: Optional[Path]) -> None:
    snrs = ", ".join(f"{s:g}" for s in r.snrs_db)
    typer.echo(f"Swept            {r.low_hz.size} × {r.high_hz.size} cutoffs, {r.type} order {r.order}, "
               f"{r.candidates_scored} pairs scored; speech: {r.speech}")
    typer.echo(f"Score            SII averaged over {snrs} dB channel SNR "
               f"(noise in {r.receive_band_hz[0]:g}–{r.receive_band_hz[1]:g} Hz)")
    limit = "no limit" if r.max_bandwidth_hz is None else f"occupied bandwidth ≤ {r.max_bandwidth_hz:g} Hz"
    if r.best is None:
        typer.echo(f"Best             none within {limit}; widen the ranges or raise --max-bandwidth")
    else:
        b = r.best
        typer.echo(f"Best ({limit})  high-pass {b.low_hz:g} Hz, low-pass {b.high_hz:g} Hz: SII {b.sii:.3f} "
                   f"(quiet {b.sii_quiet:.3f}), occupied {b.occupied_bandwidth_hz:.0f} Hz")
    typer.echo(f"Pareto front     {len(r.pareto)} pairs (SII against occupied bandwidth):")
    step = max(1, len(r.pareto) // 8)
    for c in list(r.pareto)[::step]:
        typer.echo(f"  {c.low_hz:>6g}–{c.high_hz:<6g} Hz  occupied {c.occupied_bandwidth_hz:5.0f} Hz  SII {c.sii:.3f}")
    if plot is not None:
        typer.echo(f"Plot             {plot}")
