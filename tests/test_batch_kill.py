"""A batch killed with SIGKILL mid-run, then resumed: every file recorded exactly once, none lost."""

from __future__ import annotations

import csv
import os
import signal
import subprocess
import sys
import time

import pytest

from batch_files import speechlike


@pytest.mark.parametrize("suffix", [".csv", ".jsonl"])
def test_sigkill_then_resume_records_every_file_once(tmp_path, suffix):
    import soundfile as sf

    rec = tmp_path / "rec"
    rec.mkdir()
    n_files = 16
    for i in range(n_files):
        sf.write(str(rec / f"f{i:03d}.wav"), speechlike(i, 16000, 0.8), 16000)
    out = tmp_path / f"table{suffix}"
    cmd = [sys.executable, "-m", "voiceband.cli.main", "batch", str(rec), "--out", str(out), "--workers", "1"]
    # a new session, so the kill reaches the worker processes as well
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True)
    deadline = time.monotonic() + 120
    try:
        while time.monotonic() < deadline:
            if out.exists() and out.read_text().count("\n") >= 3:
                break
            if proc.poll() is not None:
                break
            time.sleep(0.02)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
        proc.wait()
    assert proc.returncode == -signal.SIGKILL, "the batch finished before it could be killed; give it more files"

    def recorded():
        text = out.read_text()
        complete = text[: text.rfind("\n") + 1]  # a row being written at the kill is not recorded
        if suffix == ".csv":
            return [r["path"] for r in csv.DictReader(complete.splitlines())]
        import json

        return [json.loads(line)["path"] for line in complete.splitlines()]

    before = recorded()
    assert 0 < len(before) < n_files  # killed mid-run, with rows already on disk
    res = subprocess.run(cmd + ["--resume"], capture_output=True, text=True, timeout=300)
    assert res.returncode == 0, res.stderr
    after = recorded()
    assert sorted(after) == sorted(str(rec / f"f{i:03d}.wav") for i in range(n_files))  # each exactly once
    assert after[: len(before)] == before  # the rows of the killed run were kept as they were
    assert "Traceback" not in res.stderr
