"""``voiceband analyze``: measure a recording of transmit audio and print or write the result."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated, Any, Optional

import typer

from .common import emit_json, guarded


@guarded
def analyze(
    file: Annotated[Path, typer.Argument(help="Recording of transmit audio (WAV, FLAC, OGG, MP3, ...).", show_default=False,
                                            metavar="FILE")],
    channel: Annotated[
        str, typer.Option("--channel", "-c", help="Channel to analyse: a number from 0, or 'mix' for the mean of all channels.")
    ] = "0",
    json_path: Annotated[
        Optional[str], typer.Option("--json", help="Also write JSON to PATH; '-' prints only JSON on stdout.", metavar="PATH|-")
    ] = None,
    force: Annotated[bool, typer.Option("--force", help="Overwrite an existing JSON file.")] = False,
) -> None:
    """Measure levels, clipping, noise, hum, spectrum, bandwidth and intelligibility of a recording."""
    from ..analysis import analyze_file
    from ..outputs import check_writable

    if json_path not in (None, "-"):
        check_writable(Path(json_path), force=force, inputs=(file,))  # refuse before the work, not after
    progress = _progress_printer() if json_path != "-" and sys.stderr.isatty() else None
    result = analyze_file(file, channel=channel, progress=progress)
    emit_json(result, json_path, force=force)  # files first: a reader that stops early loses no output
    if json_path != "-":
        from .render import print_analysis

        print_analysis(result)


def _progress_printer() -> Any:
    from rich.progress import Progress

    state: dict[str, Any] = {}

    def update(done: int, total: int) -> None:
        if "p" not in state:
            if total < 48000 * 120:  # short files need no progress bar
                state["p"] = None
                return
            from .render import console

            p = Progress(console=console(stderr=True), transient=True)  # on stderr: stdout carries the result
            p.start()
            state["p"] = p
            state["t"] = p.add_task("analysing", total=total)
        p = state["p"]
        if p is None:
            return
        p.update(state["t"], completed=done)
        if done >= total:
            p.stop()

    return update
