"""``voiceband demo``: a worked example on synthetic speech -- three filter boards, one report each, a before/after and a comparison."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from .common import guarded


@guarded
def demo(
    out: Annotated[Path, typer.Option("--out", "-o", help="Folder for the demo reports.", metavar="DIR")] = Path("reports/demo"),
    force: Annotated[bool, typer.Option("--force", help="Overwrite an earlier demo in the folder.")] = False,
) -> None:
    """Build a scenario from the synthetic corpus and write its reports: the quickest way to see what voiceband does."""
    from ..demo import run_demo

    index = run_demo(out, force=force, progress=lambda text: typer.echo(text, err=True))
    from .render import print_report

    print_report(f"Demo written. Open {index} in a web browser.", [])
