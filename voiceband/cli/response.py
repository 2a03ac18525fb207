"""``voiceband response``: measure a chain's frequency response from a recorded test signal."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any, Optional

import typer

from ..cautions import TRANSMITTER_CAUTION
from .common import emit_json, guarded


@guarded
def response(
    stimulus: Annotated[Path, typer.Argument(help="The test signal as played (a sweep or multitone file).", show_default=False,
                                                    metavar="STIMULUS")],
    recording: Annotated[Path, typer.Argument(help="What the chain delivered when the test signal was played into it.",
                                                     show_default=False, metavar="RECORDING")],
    out: Annotated[
        Optional[Path], typer.Option("--out", help="Folder for the Bode plot (PNG).", metavar="DIR")
    ] = None,
    json_path: Annotated[
        Optional[str], typer.Option("--json", help="Also write JSON to PATH; '-' prints only JSON on stdout.", metavar="PATH|-")
    ] = None,
    channel: Annotated[
        str, typer.Option("--channel", "-c", help="Channel of the recording: a number from 0, or 'mix'.")
    ] = "0",
    force: Annotated[bool, typer.Option("--force", help="Overwrite existing output files.")] = False,
) -> None:
    """Measure magnitude and phase response, passband edges, ripple, distortion and
    carrier offset of a chain from a recording of a sweep or multitone.

    Playing the test signal into a transmitter keys it at 100 % duty: use a dummy load where
    possible, stay within your licence and the transmitter's duty cycle; local regulations and
    licensed practice come first."""
    from ..audio import read
    from ..errors import OutputExistsError
    from ..outputs import atomic_output, check_writable
    from ..response import measure_response, response_document

    png = None
    if out is not None:
        if out.exists() and not out.is_dir():
            raise OutputExistsError(f"'{out}' is a file; --out needs a folder.")
        png = out / f"{recording.stem}_response.png"
        check_writable(png, force=force, make_folders=True, inputs=(stimulus, recording))  # refuse before the work
    # A missing folder is made only when it is the --out folder (as the README's example writes the JSON there).
    json_in_out = out is not None and json_path not in (None, "-") and Path(json_path).resolve().parent == out.resolve()
    if json_path not in (None, "-"):
        check_writable(Path(json_path), force=force, make_folders=json_in_out, inputs=(stimulus, recording))
    x, fs_x = read(stimulus)
    y, fs_y = read(recording, channel=channel)
    result = measure_response(x, fs_x, y, fs_y)
    doc = response_document(result, stimulus=stimulus, recording=recording)
    if png is not None:
        from ..report.plots import bode_figure

        fig = bode_figure(result)
        with atomic_output(png, force=force, make_folders=True) as tmp:
            fig.savefig(tmp, format="png")
    emit_json(doc, json_path, force=force, make_folders=json_in_out)  # files first: a reader that stops early loses no output
    if json_path != "-":
        _print_summary(result, png)


def _print_summary(r: Any, png: Optional[Path]) -> None:
    from ..report.summary import response_rows
    from .render import Item, print_report

    rows = response_rows(r)
    if png is not None:
        rows.append(("Output", "Plot", "", str(png)))
    items = [Item(f.severity, f.message) for f in r.findings]
    items.append(Item("caution", TRANSMITTER_CAUTION))
    print_report(None, rows, items, items_title="Notes")
