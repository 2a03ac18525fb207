"""``voiceband batch``: analyse many recordings in parallel into one table, crash-safe and resumable."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated, Any, Optional

import typer

from .common import Terminated, fail, guarded

#: Exit status when the batch ran but at least one file failed (or files were left by --fail-fast).
EXIT_SOME_FAILED = 1


@guarded
def batch(
    paths: Annotated[list[Path], typer.Argument(help="Audio files and folders (folders are walked).", show_default=False)],
    glob: Annotated[
        Optional[str], typer.Option("--glob", help="Only files in the folders whose name matches PATTERN (e.g. '*.wav').", metavar="PATTERN")
    ] = None,
    out: Annotated[
        Path, typer.Option("--out", "-o", help="Table to write: .csv, .jsonl (full analysis per file) or .parquet.", metavar="FILE")
    ] = Path("batch.csv"),
    workers: Annotated[
        Optional[int], typer.Option("--workers", "-j", help="Worker processes here or in --scheduler local (default: the CPU count).",
                                      min=1, max=1024, metavar="N")
    ] = None,
    channel: Annotated[
        str, typer.Option("--channel", "-c", help="Channel to analyse in every file: a number from 0, or 'mix'.")
    ] = "0",
    profile: Annotated[
        Optional[str], typer.Option("--profile", help="Add the verdicts of service profile NAME (or a profile FILE) to each row: 'verdict' and 'verdict.<check>'.",
                     metavar="NAME|FILE")
    ] = None,
    resume: Annotated[bool, typer.Option("--resume", help="Continue an existing output: skip files already recorded with the same content and settings.")] = False,
    scheduler: Annotated[
        Optional[str], typer.Option("--scheduler", help="Run on a Dask scheduler at ADDRESS, or 'local' for a Dask LocalCluster.", metavar="ADDRESS|local")
    ] = None,
    fail_fast: Annotated[bool, typer.Option("--fail-fast", help="Stop at the first file that fails.")] = False,
    force: Annotated[bool, typer.Option("--force", help="Replace an existing output file.")] = False,
) -> None:
    """Analyse every recording in PATHS with the settings of 'voiceband analyze' and write one row per file."""
    from ..batch import BatchSettings, discover_files, run_batch
    from ..batch.executors import default_workers, open_executor
    from ..batch.rows import LEAD_COLUMNS, MEASUREMENT_COLUMNS
    from ..batch.writers import check_output, open_output

    if force and resume:
        raise fail("--force and --resume contradict each other: --force starts the output again, --resume continues it")
    if channel != "mix" and not channel.isdigit():
        raise fail(f"--channel must be a number from 0 or 'mix', not '{channel}'")
    extra_types: tuple[tuple[str, str], ...] = ()
    if profile is not None:
        from ..batch.profile import profile_column_types

        extra_types = profile_column_types(profile)
    settings = BatchSettings(channel=channel, profile=profile)
    files = discover_files(paths, pattern=glob)
    if not files:
        raise fail("no audio files found in the given paths" + (f" matching '{glob}'" if glob else ""))
    columns = tuple(n for n, _ in LEAD_COLUMNS + MEASUREMENT_COLUMNS + extra_types)
    types = dict(LEAD_COLUMNS + MEASUREMENT_COLUMNS + extra_types)
    n_workers = workers or default_workers()
    check_output(out, force=force, resume=resume, inputs=tuple(files))  # refuse before starting workers
    executor = open_executor(n_workers, scheduler)
    try:
        output = open_output(out, columns, types, force=force, resume=resume)
    except BaseException:
        executor.close(cancel=True)
        raise
    progress = _ProgressBar(len(files)) if sys.stderr.isatty() else None
    try:
        summary = run_batch(files, settings, output, executor, fail_fast=fail_fast,
                            on_progress=progress.update if progress else None,
                            extra_names=tuple(n for n, _ in extra_types))
    except (KeyboardInterrupt, Terminated) as exc:
        if progress:
            progress.stop()
        how, code = ("interrupted", 130) if isinstance(exc, KeyboardInterrupt) else (f"stopped by signal {exc.signal_name}", 128 + exc.signum)
        raise fail(f"{how}; the finished rows are in '{out}'; run the same command with --resume to finish", code) from None
    finally:
        if progress:
            progress.stop()
    parts = [f"{summary.analysed} analysed"]
    if summary.copied:
        parts.append(f"{summary.copied} copies of files already analysed")
    if summary.skipped:
        parts.append(f"{summary.skipped} already recorded"
                     + (f" ({summary.failed_earlier} of them failed)" if summary.failed_earlier else ""))
    parts.append(f"{summary.failed} failed")
    if summary.not_run:
        parts.append(f"{summary.not_run} not run (--fail-fast)")
    typer.echo(f"{summary.total} files: " + ", ".join(parts) + f"; rows in '{out}'.", err=True)
    if summary.failed or summary.failed_earlier or summary.not_run:
        raise typer.Exit(EXIT_SOME_FAILED)


class _ProgressBar:
    """Files done, failures, audio hours per minute and time remaining, on stderr (terminals only)."""

    def __init__(self, total: int):
        from rich.console import Console
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

        self._p = Progress(
            TextColumn("batch"), BarColumn(), MofNCompleteColumn(), TextColumn("files"),
            TextColumn("{task.fields[failed]} failed"), TextColumn("{task.fields[rate]} audio h/min"),
            TimeRemainingColumn(), console=Console(stderr=True), transient=True,
        )
        self._task = self._p.add_task("batch", total=total, failed=0, rate="—")
        self._p.start()

    def update(self, s: Any) -> None:
        self._p.update(self._task, completed=s.done, failed=s.failed, rate=f"{s.audio_hours_per_minute():.2f}")

    def stop(self) -> None:
        self._p.stop()
