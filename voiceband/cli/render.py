"""Prints the summary of an analysis on the terminal (rich table) and its findings.

The rows themselves come from :func:`voiceband.report.summary.analysis_rows`.
"""

from __future__ import annotations

from ..report.summary import analysis_rows
from ..results import AnalysisResult


def print_analysis(r: AnalysisResult) -> None:
    """Print the summary table and the findings to stdout."""
    from rich.console import Console
    from rich.table import Table

    console = Console()
    i = r.input
    console.print(
        f"[bold]{i.path}[/bold]  {i.sample_rate_hz} Hz, {i.channels} ch (using {i.channel_used}), "
        f"{i.duration_s:.1f} s, {i.format}/{i.subtype}"
    )
    t = Table(show_header=True, header_style="bold", box=None, pad_edge=False)
    t.add_column("Quantity", no_wrap=True)
    t.add_column("Value", justify="right", no_wrap=True)
    t.add_column("What it means", overflow="fold", style="dim")
    for sec, q, v, n in analysis_rows(r):
        if sec:
            t.add_row(f"[bold underline]{sec}[/bold underline]", "", "")
        t.add_row("  " + q, v, n)
    console.print(t)
    if r.findings:
        console.print("[bold]Findings[/bold]")
        marks = {"problem": "[red]✗[/red]", "warning": "[yellow]![/yellow]", "info": "·"}
        for f in r.findings:
            console.print(f" {marks.get(f.severity, '·')} {f.message} [dim]({f.code})[/dim]")
