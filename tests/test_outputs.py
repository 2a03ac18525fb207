"""The output layer: destinations checked before the work, atomic writes, nothing left behind.

What a careful Unix tool does (common practice): a file output's folder must exist (as for a shell
redirection) unless the command makes its own --out folder; an output never replaces an input;
a signal we can catch removes the temporary file; a temporary file left by a killed process is
swept the next time.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from typer.testing import CliRunner

from voiceband.cli.main import app
from voiceband.errors import OutputExistsError, OutputPathError
from voiceband.outputs import atomic_output, check_writable, sweep_stale


def _parts(folder: Path) -> list[str]:
    return [p.name for p in folder.iterdir() if ".part" in p.name]


def test_existing_file_needs_force(tmp_path):
    p = tmp_path / "a.json"
    p.write_text("{}")
    with pytest.raises(OutputExistsError, match="already exists; use --force"):
        check_writable(p)
    check_writable(p, force=True)


def test_folder_is_not_a_file_name(tmp_path):
    with pytest.raises(OutputExistsError, match="is a folder"):
        check_writable(tmp_path)


def test_missing_folder_refused_unless_the_command_makes_it(tmp_path):
    p = tmp_path / "no" / "such" / "x.json"
    with pytest.raises(OutputPathError, match="does not exist"):
        check_writable(p)
    check_writable(p, make_folders=True)
    assert not (tmp_path / "no").exists()  # checking makes nothing


def test_under_a_regular_file(tmp_path):
    f = tmp_path / "file.txt"
    f.write_text("x")
    with pytest.raises(OutputPathError, match="is a file, not a folder"):
        check_writable(f / "x.json", make_folders=True)


def test_folder_that_takes_no_files():
    # /proc accepts no new files, even for root (Linux procfs).
    with pytest.raises(OutputPathError, match="does not accept new files"):
        check_writable("/proc/x.json")


def test_name_too_long_refused_before_work(tmp_path):
    with pytest.raises(OutputPathError, match="bytes long"):
        check_writable(tmp_path / ("n" * 300 + ".json"))


def test_longest_legal_name_is_written(tmp_path):
    # 255 bytes is the NAME_MAX of Linux file systems (ext4, tmpfs); the temporary name is short.
    p = tmp_path / ("n" * 250 + ".json")
    with atomic_output(p) as tmp:
        tmp.write_text("{}")
    assert p.read_text() == "{}"
    assert _parts(tmp_path) == []


def test_output_is_never_an_input(tmp_path):
    rec = tmp_path / "rec.wav"
    sf.write(str(rec), np.zeros(8000), 8000)
    with pytest.raises(OutputPathError, match="is an input"):
        check_writable(rec, force=True, inputs=(rec,))
    res = CliRunner().invoke(app, ["analyze", str(rec), "--json", str(rec), "--force"])
    assert res.exit_code == 2
    assert "is an input of this command" in res.output
    assert sf.info(str(rec)).frames == 8000  # untouched


def test_failure_inside_removes_temporary(tmp_path):
    p = tmp_path / "x.txt"
    with pytest.raises(RuntimeError):
        with atomic_output(p) as tmp:
            tmp.write_text("half")
            raise RuntimeError("disk trouble")
    assert not p.exists()
    assert _parts(tmp_path) == []


_SLOW_WRITER = textwrap.dedent("""
    import sys, time
    from pathlib import Path
    from voiceband.cli.common import guarded
    from voiceband.outputs import atomic_output

    @guarded
    def work():
        with atomic_output(Path(sys.argv[1])) as tmp:
            tmp.write_text("partial")
            time.sleep(300)

    try:
        work()
    except SystemExit as e:
        raise
    except BaseException as e:  # typer.Exit carries the code
        sys.exit(getattr(e, "exit_code", 99))
""")


def _start_writer(tmp_path: Path) -> subprocess.Popen:
    script = tmp_path / "writer.py"
    script.write_text(_SLOW_WRITER)
    out = tmp_path / "out"
    out.mkdir()
    proc = subprocess.Popen([sys.executable, str(script), str(out / "result.txt")],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    deadline = time.time() + 180
    while not _parts(out):
        assert time.time() < deadline, "the writer never opened its temporary file"
        assert proc.poll() is None, proc.communicate()
        time.sleep(0.05)
    return proc


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGHUP])
def test_catchable_signal_leaves_nothing_behind(tmp_path, sig):
    proc = _start_writer(tmp_path)
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == 128 + sig, err
    assert "stopped by signal" in err
    assert list((tmp_path / "out").iterdir()) == []


def test_sigkill_leftover_is_swept_next_time(tmp_path):
    proc = _start_writer(tmp_path)
    proc.kill()
    proc.wait(timeout=30)
    out = tmp_path / "out"
    assert len(_parts(out)) == 1  # SIGKILL cannot be caught
    assert sweep_stale(out) == 1
    assert _parts(out) == []
