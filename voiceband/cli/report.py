"""``voiceband report``: an on-air test report for a service -- verdicts, what to change, figures."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from .common import guarded


@guarded
def report(
    file: Annotated[Path, typer.Argument(help="Recording of the transmitted audio (after the change, if --before is given).",
                                         show_default=False)],
    profile: Annotated[str, typer.Option("--profile", "-p", help="Service profile: ssb-voice, am-voice, fm-voice-narrow, "
                                         "fm-voice-wide, telephone, wideband, or the path of your own TOML profile.",
                                         metavar="NAME|FILE")] = "ssb-voice",
    before: Annotated[Optional[Path], typer.Option("--before", help="A recording made before a change, shown side by side.",
                                                   metavar="FILE")] = None,
    out: Annotated[Optional[Path], typer.Option("--out", "-o", help="Folder for the report (default: <FILE name>-report).",
                                                metavar="DIR")] = None,
    title: Annotated[Optional[str], typer.Option("--title", help="Title of the report.")] = None,
    notes: Annotated[str, typer.Option("--notes", help="Notes printed under the title (station, rig, conditions).")] = "",
    channel: Annotated[str, typer.Option("--channel", "-c", help="Channel to analyse: a number from 0, or 'mix'.")] = "0",
    pdf: Annotated[bool, typer.Option("--pdf", help="Also write report.pdf.")] = False,
    force: Annotated[bool, typer.Option("--force", help="Overwrite an existing report in the folder.")] = False,
) -> None:
    """Write a one-page report (index.html, analysis.json, summary.md, figures) judging the audio for a service."""
    from ..profiles import load_profile
    from ..report.onair import build_report, check_outputs, write_report

    folder = out if out is not None else Path(f"{file.stem}-report")
    prof = load_profile(profile)  # a bad profile is refused before the work
    check_outputs(folder, pdf=pdf, before=before is not None, force=force,
                  inputs=[file] + ([before] if before is not None else []))
    rep = build_report(file, profile=prof, before=before, channel=channel, title=title, notes=notes)
    index = write_report(rep, folder, force=force, pdf=pdf)
    from .render import print_report

    print_report(f"Report written: {index}  (open it in a web browser)", [])
