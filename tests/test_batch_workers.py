"""Failures inside workers: a task that raises, a worker process that dies; neither loses the other files."""

from __future__ import annotations

import os

import pytest

from batch_files import make_folder
from voiceband.batch import BatchSettings, discover_files, run_batch
from voiceband.batch.executors import LocalPool
from voiceband.batch.rows import COLUMNS, column_types
from voiceband.batch.runner import WORKER_LOST_SENTENCE
from voiceband.batch.tasks import analyse_task
from voiceband.batch.writers import open_output


def raises_on_good_001(path, channel, profile=None):
    """The analysis task, except that it raises outside its own error handling for one file."""
    if os.path.basename(path) == "good_001.wav":
        raise RuntimeError("simulated fault in the task machinery")
    return analyse_task(path, channel, profile)


def dies_on_good_002(path, channel, profile=None):
    """The analysis task, except that the worker process dies at once on one file (as if killed)."""
    if os.path.basename(path) == "good_002.wav":
        os._exit(9)
    return analyse_task(path, channel, profile)


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    root = tmp_path_factory.mktemp("rec")
    kinds = make_folder(root, good=5)
    return kinds


def _run(files, tmp_path, fn, workers=2):
    out = open_output(tmp_path / "t.jsonl", COLUMNS, column_types())
    paths = discover_files([p for p in files["good"]])
    summary = run_batch(paths, BatchSettings(), out, LocalPool(workers), analyse=fn)
    import json

    rows = [json.loads(line) for line in (tmp_path / "t.jsonl").read_text().splitlines()]
    return summary, {os.path.basename(r["path"]): r for r in rows}, rows


def test_a_task_that_raises_fails_only_its_file(files, tmp_path):
    summary, by, rows = _run(files, tmp_path, raises_on_good_001)
    assert len(rows) == len(files["good"]) == 6
    assert by["good_001.wav"]["status"] == "failed"
    assert "simulated fault" in by["good_001.wav"]["error"]
    assert all(r["status"] == "ok" for n, r in by.items() if n != "good_001.wav")
    assert summary.failed == 1 and summary.analysed == 4 and summary.copied == 1


def test_a_worker_that_dies_loses_no_other_file(files, tmp_path):
    summary, by, rows = _run(files, tmp_path, dies_on_good_002)
    assert sorted(by) == sorted(os.path.basename(p) for p in files["good"]) and len(rows) == 6
    assert by["good_002.wav"]["status"] == "failed"
    assert by["good_002.wav"]["error"] == WORKER_LOST_SENTENCE
    assert all(r["status"] == "ok" for n, r in by.items() if n != "good_002.wav")
