"""The Dask path (dask.distributed LocalCluster) gives the same rows as the local process pool."""

from __future__ import annotations

import json
import os

import pytest

from batch_files import make_folder
from voiceband.batch import BatchSettings, discover_files, run_batch
from voiceband.batch.executors import DaskPool, LocalPool
from voiceband.batch.rows import COLUMNS, column_types
from voiceband.batch.tasks import analyse_task
from voiceband.batch.writers import open_output


def raises_on_good_001(path, channel, profile=None):
    """The analysis task, except that it raises outside its own error handling for one file."""
    if os.path.basename(path) == "good_001.wav":
        raise RuntimeError("simulated fault in the task machinery")
    return analyse_task(path, channel, profile)


def _rows(path):
    return {r["path"]: r for r in map(json.loads, path.read_text().splitlines())}


def test_local_cluster_rows_equal_local_pool_rows(tmp_path):
    root = tmp_path / "rec"
    kinds = make_folder(root, good=3)
    files = discover_files([root])
    out_local, out_dask, out_fault = tmp_path / "local.jsonl", tmp_path / "dask.jsonl", tmp_path / "fault.jsonl"
    run_batch(files, BatchSettings(), open_output(out_local, COLUMNS, column_types()), LocalPool(2))
    pool = DaskPool("local", 2)
    try:
        assert pool.client.nthreads() and sum(pool.client.nthreads().values()) == 2
        s = run_batch(files, BatchSettings(), open_output(out_dask, COLUMNS, column_types()), pool,
                      close_executor=False)
        # a task that raises on one file, on the cluster, loses no other file
        run_batch(files, BatchSettings(), open_output(out_fault, COLUMNS, column_types()), pool,
                  analyse=raises_on_good_001, close_executor=False)
    finally:
        pool.close()
    a, b = _rows(out_local), _rows(out_dask)
    assert sorted(a) == sorted(b) == sorted(str(p) for p in files)
    assert a == b  # every column and the full analysis, identical
    assert s.analysed == 3 and s.copied == 1 and s.failed == len(kinds["broken"])
    c = _rows(out_fault)
    assert sorted(c) == sorted(a)
    bad = str(root / "good_001.wav")
    assert c[bad]["status"] == "failed" and "simulated fault" in c[bad]["error"]
    assert all(c[p] == a[p] for p in a if p != bad)


def test_unreachable_scheduler_is_one_sentence(tmp_path):
    from typer.testing import CliRunner

    from voiceband.cli.main import app

    root = tmp_path / "rec"
    make_folder(root, good=1)
    res = CliRunner().invoke(app, ["batch", str(root), "--out", str(tmp_path / "t.csv"), "--scheduler", "tcp://127.0.0.1:9"])
    assert res.exit_code == 2, res.output
    assert "cannot reach the Dask scheduler at 'tcp://127.0.0.1:9'" in res.output
    assert "Traceback" not in res.output
