"""The batch loop: hash each file on a worker, analyse each new content once, record every file once.

For every file, in order:

1. a worker hashes it (SHA-256);
2. if this path with this content and these settings is already in the output, it is skipped;
   if the same content and settings are recorded under another path (a copy), its row is
   copied for this path without analysing again; if the same content is being analysed right
   now, this path waits for that result;
3. otherwise a worker analyses it, and its row (ok, or failed with the error) is appended to
   the output at once.

A worker process that dies takes the tasks it held with it: those files are run again one at a
time, so a file that kills its worker alone is recorded as failed and the others are not lost.
"""

from __future__ import annotations

import time
from collections import deque
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Optional

from .rows import BatchSettings, failed_row, ok_row
from .tasks import analyse_task, hash_task

__all__ = ["BatchSummary", "run_batch", "WORKER_LOST_SENTENCE"]

#: Error recorded for a file whose analysis killed its worker process even when run alone.
WORKER_LOST_SENTENCE = "the worker process analysing this file stopped (killed, or out of memory)."


@dataclass
class BatchSummary:
    """Counts of one batch run (files, not rows).

    ``analysed`` + ``copied`` + ``skipped`` + ``failed`` + ``not_run`` = ``total``.
    """

    total: int = 0
    analysed: int = 0
    failed: int = 0
    copied: int = 0
    skipped: int = 0
    not_run: int = 0
    #: Files skipped because already recorded, whose recorded row says failed.
    failed_earlier: int = 0
    audio_s: float = 0.0
    started: float = field(default_factory=time.monotonic)
    stopped_early: bool = False

    @property
    def done(self) -> int:
        return self.analysed + self.failed + self.copied + self.skipped

    def audio_hours_per_minute(self) -> float:
        elapsed = max(time.monotonic() - self.started, 1e-9)
        return self.audio_s / 3600.0 / (elapsed / 60.0)


def run_batch(
    files: list[Path],
    settings: BatchSettings,
    output: Any,
    executor: Any,
    *,
    fail_fast: bool = False,
    on_progress: Optional[Callable[[BatchSummary], None]] = None,
    analyse: Callable[..., dict] = analyse_task,
    extra_names: tuple[str, ...] = (),
    close_executor: bool = True,
) -> BatchSummary:
    """Analyse ``files`` on ``executor`` and append one row per file to ``output``.

    Parameters
    ----------
    files : list of Path
    settings : BatchSettings
    output : BatchOutput
        From :func:`voiceband.batch.writers.open_output`; its recorded rows are skipped.
    executor : LocalPool or DaskPool
    fail_fast : bool
        Stop handing out files after the first failure.
    on_progress : callable(BatchSummary), optional
        Called after each file is recorded.
    analyse : callable(path, channel, profile) -> dict
        The worker's analysis task (a module-level function; tests pass their own).
    extra_names : tuple of str
        Verdict columns of the profile, empty in failed rows.
    close_executor : bool
        Close the executor at the end (tasks still queued are cancelled); the output is always closed.

    Returns
    -------
    BatchSummary
    """
    from .hashing import settings_hash
    from .writers import path_key

    shash = settings_hash(settings.as_dict())
    summary = BatchSummary(total=len(files))
    to_hash: deque[str] = deque(str(p) for p in files)
    to_analyse: deque[tuple[str, str]] = deque()
    suspects: deque[tuple[str, str, Optional[str]]] = deque()  # (kind, path, sha) lost with a dead worker
    inflight: dict[Any, tuple[str, str, Optional[str]]] = {}
    in_analysis: dict[str, str] = {}  # sha -> path being analysed
    waiting: dict[str, list[str]] = {}  # sha -> paths with the same content
    stop = False

    def tick() -> None:
        if on_progress is not None:
            on_progress(summary)

    def record(row: dict, analysis: Optional[dict]) -> None:
        nonlocal stop
        output.write(row, analysis)
        if row["status"] == "ok":
            summary.analysed += 1
            summary.audio_s += float((analysis or {}).get("input", {}).get("duration_s") or 0.0)
        else:
            summary.failed += 1
            if fail_fast:
                stop = True
        tick()

    def copy_for(path: str, sha: str) -> None:
        nonlocal stop
        row = output.copy_row((sha, shash), path)
        if row["status"] == "ok":
            summary.copied += 1
        else:
            summary.failed += 1
            if fail_fast:
                stop = True
        tick()

    def hashed(path: str, res: dict) -> None:
        sha = res.get("sha256")
        if sha is None:
            if output.recorded_paths.get((path_key(path), shash), "") is None:
                summary.skipped += 1  # recorded as unreadable before
                summary.failed_earlier += 1
                tick()
            else:
                record(failed_row(path, None, shash, res.get("error") or "cannot be read.", extra_names), None)
            return
        if output.recorded_paths.get((path_key(path), shash)) == sha:
            summary.skipped += 1
            if output.recorded[(sha, shash)][0] != "ok":
                summary.failed_earlier += 1
            tick()
        elif (sha, shash) in output.recorded:
            copy_for(path, sha)
        elif sha in in_analysis:
            waiting.setdefault(sha, []).append(path)
        else:
            in_analysis[sha] = path
            to_analyse.append((path, sha))

    def analysed(path: str, sha: str, res: dict) -> None:
        if res.get("status") == "ok":
            doc = res["analysis"]
            record(ok_row(path, sha, shash, doc, res.get("extra")), doc)
        else:
            record(failed_row(path, sha, shash, res.get("error") or "failed.", extra_names), None)
        in_analysis.pop(sha, None)
        for other in waiting.pop(sha, []):
            copy_for(other, sha)

    def submit(kind: str, path: str, sha: Optional[str]) -> None:
        if kind == "hash":
            fut = executor.submit(hash_task, path)
        else:
            fut = executor.submit(analyse, path, settings.channel, settings.profile)
        inflight[fut] = (kind, path, sha)

    try:
        while True:
            # hand out work: lost tasks one at a time, alone; otherwise analyses before new hashes
            if suspects:
                if not inflight and not stop:
                    submit(*suspects.popleft())
            else:
                while not stop and len(inflight) < executor.window and (to_analyse or to_hash):
                    if to_analyse:
                        path, sha = to_analyse.popleft()
                        submit("analyse", path, sha)
                    else:
                        submit("hash", to_hash.popleft(), None)
            if not inflight:
                break
            done, _ = executor.wait_any(inflight)
            isolated = len(inflight) == 1
            for fut in done:
                kind, path, sha = inflight.pop(fut)
                try:
                    res = fut.result()
                except Exception as exc:  # infrastructure failure: the task itself never raises
                    if executor.worker_lost(exc):
                        if isolated:
                            res = {"status": "failed", "error": WORKER_LOST_SENTENCE} if kind == "analyse" \
                                else {"sha256": None, "error": WORKER_LOST_SENTENCE}
                        else:
                            suspects.append((kind, path, sha))
                            continue
                    else:
                        from .tasks import error_sentence

                        msg = "the batch could not run this file's task: " + error_sentence(exc)
                        res = {"status": "failed", "error": msg} if kind == "analyse" else {"sha256": None, "error": msg}
                if kind == "hash":
                    hashed(path, res)
                else:
                    analysed(path, sha, res)
    finally:
        summary.not_run = summary.total - summary.done
        summary.stopped_early = summary.not_run > 0
        if close_executor:
            executor.close(cancel=True)
        else:
            for fut in inflight:
                fut.cancel()
        output.close()
    return summary
