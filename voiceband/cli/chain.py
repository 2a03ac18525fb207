"""``voiceband chain``: a chain file's response, edges, SII and occupied bandwidth; design against measurement."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Annotated, Any, Optional

import typer

from .common import emit_json, guarded


@guarded
def chain(
    chain_file: Annotated[Path, typer.Argument(help="Chain file (TOML: name and [[stage]] tables).", show_default=False, metavar="CHAIN")],
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
    emit_json(chain_document(c, evaluation, comparison), json_path, force=force)  # files first
    if json_path != "-":
        _print_summary(c, evaluation, comparison, plot)


def _hz(v: Optional[float]) -> str:
    from ..report.summary import NOT_MEASURED

    return NOT_MEASURED if v is None or not math.isfinite(v) else f"{v:.0f} Hz"


def _db(v: Optional[float], digits: int = 2, sign: bool = False) -> str:
    from ..report.summary import NOT_MEASURED, number

    return NOT_MEASURED if v is None or not math.isfinite(v) else f"{number(v, digits, sign=sign)} dB"


def _print_summary(c: Any, e: Any, m: Any, plot: Optional[Path]) -> None:
    from .render import print_report

    rows: list[tuple[str, str, str, str]] = [("Chain", "Name", "", e.name)]
    rows += [("", "Stages" if i == 0 else "", "", line) for i, line in enumerate(c.describe())]
    if e.left_out:
        rows.append(("", "Not in response", "", f"{'; '.join(e.left_out)} (run 'voiceband compare' to hear them on speech)"))
    ed = e.edges_hz
    ob = e.occupied_bandwidth
    rows += [
        ("Response", "Gain", _db(e.gain_db, sign=True), "passband"),
        ("", "Passband −3 dB", f"{_hz(ed.low_3db)} – {_hz(ed.high_3db)}", ""),
        ("", "Passband −10 dB", f"{_hz(ed.low_10db)} – {_hz(ed.high_10db)}", ""),
        ("", "Ripple", _db(e.ripple_db), "inside the −3 dB passband"),
        ("", "Occupied bandwidth", _hz(ob.width_hz), f"99 % of standard speech power, {_hz(ob.low_hz)} – {_hz(ob.high_hz)}"),
        ("Intelligibility", "SII in quiet", f"{e.sii_quiet:.3f}", "standard speech (ANSI S3.5-1997)"),
    ]
    for p in e.sii_by_channel_snr:
        rows.append(("", f"SII at {p.snr_db:g} dB SNR", f"{p.sii:.3f}",
                     f"channel noise in {e.receive_band_hz[0]:g}–{e.receive_band_hz[1]:g} Hz"))
    if e.sideband_suppression_db is not None:
        import numpy as np

        f = e.frequencies_hz
        band = (f >= 300.0) & (f <= 3000.0)
        rows.append(("", "Sideband suppression", _db(float(np.min(e.sideband_suppression_db[band])), 1),
                     "worst over 300–3000 Hz"))
    if m is not None:
        rows += [
            ("Measured", "Response", "", m.source),
            ("", "RMS difference", _db(m.rms_difference_db, sign=True), "inside the design's −3 dB passband"),
            ("", "Worst difference", _db(m.max_difference_db, sign=True), "inside the design's −3 dB passband"),
            ("", "Gain difference", _db(m.gain_difference_db, sign=True), ""),
        ]
    if plot is not None:
        rows.append(("Output", "Plot", "", str(plot)))
    print_report(None, rows)
