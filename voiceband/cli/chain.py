"""``voiceband chain``: a chain file's response, edges, SII and occupied bandwidth; design against measurement."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Annotated, Any, Optional

import typer

from .common import emit_json, guarded


@guarded
def chain(
    chain_file: Annotated[Path, typer.Argument(help="Chain file (TOML: name and [[stage]] tables).", show_default=False)],
    plot: Annotated[Optional[Path], typer.Option("--plot", help="Write a Bode-style figure (PNG) to FILE.", metavar="FILE")] = None,
    json_path: Annotated[
        Optional[str], typer.Option("--json", help="Also write JSON to PATH; '-' prints only JSON on stdout.", metavar="PATH|-")
    ] = None,
    measured: Annotated[
        Optional[Path], typer.Option("--measured", help="A response JSON from 'voiceband response' to hold against the design.",
                                     metavar="RESPONSE.json")
    ] = None,
    channel_snr: Annotated[
        Optional[list[float]], typer.Option("--channel-snr", help="Channel SNR in dB for the SII (repeatable; default 0, 5, 10, 15, 20).",
                                            metavar="DB")
    ] = None,
    force: Annotated[bool, typer.Option("--force", help="Overwrite existing output files.")] = False,
) -> None:
    """Response (magnitude, phase, group delay), -3/-10 dB edges, ripple, gain, SII of standard speech in
    quiet and with channel noise, and occupied bandwidth of a chain described in a chain file."""
    from ..chain import read_chain
    from ..design.evaluate import compare_measured, evaluate_chain, load_measured
    from ..outputs import atomic_output, check_writable
    from ..design.document import chain_document

    for target in (plot, None if json_path in (None, "-") else Path(json_path)):
        if target is not None:
            check_writable(target, force=force, inputs=(chain_file,) + ((measured,) if measured is not None else ()))  # refuse before the work
    c = read_chain(chain_file)
    evaluation = evaluate_chain(c, snrs_db=channel_snr or None)
    comparison = None
    if measured is not None:
        comparison = compare_measured(c, evaluation, load_measured(measured), source=measured.name)
    if plot is not None:
        from ..report.design_plots import chain_figure

        fig = chain_figure(evaluation, comparison)
        with atomic_output(plot, force=force) as tmp:
            fig.savefig(tmp, format="png")
    if json_path != "-":
        _print_summary(c, evaluation, comparison, plot)
    emit_json(chain_document(c, evaluation, comparison), json_path, force=force)


def _hz(v: Optional[float]) -> str:
    return "—" if v is None or not math.isfinite(v) else f"{v:.0f} Hz"


def _print_summary(c: Any, e: Any, m: Any, plot: Optional[Path]) -> None:
    lines = [f"Chain            {e.name}"]
    lines += [f"  {line}" for line in c.describe()]
    if e.left_out:
        lines.append(f"Not in response  {'; '.join(e.left_out)} (run 'voiceband compare' to hear them on speech)")
    ed = e.edges_hz
    lines += [
        f"Gain             {e.gain_db:+.2f} dB (passband)",
        f"Passband −3 dB   {_hz(ed.low_3db)} – {_hz(ed.high_3db)}",
        f"Passband −10 dB  {_hz(ed.low_10db)} – {_hz(ed.high_10db)}",
        f"Ripple           {'—' if e.ripple_db is None else f'{e.ripple_db:.2f} dB'}",
        f"Occupied band    {e.occupied_bandwidth.width_hz:.0f} Hz (99 % of standard speech power, "
        f"{e.occupied_bandwidth.low_hz:.0f}–{e.occupied_bandwidth.high_hz:.0f} Hz)",
        f"SII in quiet     {e.sii_quiet:.3f}",
        f"SII with noise   " + ", ".join(f"{p.sii:.3f} at {p.snr_db:g} dB" for p in e.sii_by_channel_snr)
        + f" (channel SNR in {e.receive_band_hz[0]:g}–{e.receive_band_hz[1]:g} Hz)",
    ]
    if e.sideband_suppression_db is not None:
        import numpy as np

        f = e.frequencies_hz
        band = (f >= 300.0) & (f <= 3000.0)
        s = e.sideband_suppression_db[band]
        lines.append(f"Sideband supp.   {float(np.min(s)):.1f} dB worst over 300–3000 Hz")
    if m is not None:
        def db(v):
            return "—" if v is None else f"{v:+.2f} dB"
        lines.append(f"Measured         {m.source}: rms difference {db(m.rms_difference_db)}, worst {db(m.max_difference_db)} "
                     f"inside the design's −3 dB passband; gain difference {db(m.gain_difference_db)}")
    if plot is not None:
        lines.append(f"Plot             {plot}")
    for line in lines:
        typer.echo(line)
