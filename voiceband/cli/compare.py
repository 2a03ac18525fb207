"""``voiceband compare``: run chains on the same speech and tabulate bandwidth, intelligibility and talk power."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Annotated, Any, Optional

import typer

from .common import emit_json, guarded


@guarded
def compare(
    chain_files: Annotated[list[Path], typer.Argument(help="Chain files to compare (TOML).", show_default=False, metavar="CHAIN")],
    speech: Annotated[
        Optional[Path], typer.Option("--speech", help="Speech recording to run through the chains (default: synthetic speech).",
                                     metavar="FILE")
    ] = None,
    channel_snr: Annotated[
        Optional[list[float]], typer.Option("--channel-snr", help="Channel SNR in dB (repeatable; default 0, 5, 10, 15, 20).",
                                            metavar="DB")
    ] = None,
    json_path: Annotated[
        Optional[str], typer.Option("--json", help="Also write JSON to PATH; '-' prints only JSON on stdout.", metavar="PATH|-")
    ] = None,
    plot: Annotated[Optional[Path], typer.Option("--plot", help="Write an overlay figure (PNG) to FILE.", metavar="FILE")] = None,
    channel: Annotated[str, typer.Option("--channel", "-c", help="Channel of the speech file: a number from 0, or 'mix'.")] = "0",
    force: Annotated[bool, typer.Option("--force", help="Overwrite existing output files.")] = False,
) -> None:
    """Run every chain (linear and nonlinear stages) on the same speech and compare occupied bandwidth,
    edges, SII in quiet and with channel noise (average- and peak-power referenced), STOI, peak-to-average
    ratio and clipping; the best chain for the stated channel SNRs is marked with the reason."""
    from ..chain import read_chain
    from ..design.compare import compare_chains, default_speech
    from ..outputs import atomic_output, check_writable
    from ..design.document import compare_document

    for target in (plot, None if json_path in (None, "-") else Path(json_path)):
        if target is not None:
            check_writable(target, force=force, inputs=tuple(chain_files) + ((speech,) if speech is not None else ()))  # refuse before the work
    chains = [read_chain(p) for p in chain_files]
    if speech is None:
        x, fs = default_speech()
        name = "synthetic speech (medium voice, normal effort, seed 1)"
    else:
        from ..audio import read

        x, fs = read(speech, channel=channel)
        name = speech.name
    result = compare_chains(chains, x, fs, snrs_db=channel_snr or None, speech_name=name)
    if plot is not None:
        from ..design.compare import response_curves
        from ..report.design_plots import compare_figure

        fig = compare_figure(result, response_curves(chains))
        with atomic_output(plot, force=force) as tmp:
            fig.savefig(tmp, format="png")
    emit_json(compare_document(result), json_path, force=force)  # files first
    if json_path != "-":
        _print_table(result, plot)


def _f(v: Optional[float], fmt: str) -> str:
    from ..report.summary import NOT_MEASURED, number

    if v is None or not math.isfinite(v):
        return NOT_MEASURED
    digits = int(fmt.strip(".f") or 0)
    return number(v, digits)


def _print_table(r: Any, plot: Optional[Path]) -> None:
    from .render import Item, print_grid

    snrs = list(r.snrs_db)
    heading = (f"Speech: {r.speech}, {_f(r.duration_s, '.1f')} s at {r.sample_rate_hz} Hz; channel noise in "
               f"{r.receive_band_hz[0]:g}–{r.receive_band_hz[1]:g} Hz")
    headers = ["Chain", "Occupied", "−3 dB edges", "SII quiet", "STOI", "PAPR", "Clipped"]
    rows = []
    for row in r.chains:
        e = row.edges_hz
        rows.append([("* " if row.best else "") + row.name, f"{_f(row.occupied_bandwidth_hz, '.0f')} Hz",
                     f"{_f(e.low_3db, '.0f')}–{_f(e.high_3db, '.0f')} Hz", _f(row.sii_quiet, ".3f"),
                     _f(row.stoi, ".3f"), f"{_f(row.peak_to_average_db, '.1f')} dB",
                     f"{_f(100 * row.clipped_fraction, '.2f')} %"])
    print_grid(heading, headers, rows)
    print_grid("SII with channel noise, SNR referred to average power / to peak power",
               ["Chain", *[f"{s:g} dB" for s in snrs]],
               [[("* " if row.best else "") + row.name,
                 *[f"{_f(p.sii_average_ref, '.3f')} / {_f(p.sii_peak_ref, '.3f')}" for p in row.sii_by_channel_snr]]
                for row in r.chains],
               [Item("note", f"Best: {r.reason} (marked *)")] + ([Item("note", f"Plot: {plot}")] if plot is not None else []))
