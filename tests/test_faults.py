"""Faults: odd inputs, failing destinations, signals and full disks give one sentence and leave nothing behind.

Signals and full disks run the real command in a child process: SIGTERM and SIGKILL at random
points while ``voiceband testsignal`` writes; a full disk as a small tmpfs when this process may
mount one (root), else as a file-size limit (``RLIMIT_FSIZE``, so writes fail with EFBIG, as on a
full disk); standard output closed (``>&-``) and full (``/dev/full``).
"""

from __future__ import annotations

import json
import os
import random
import resource
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from typer.testing import CliRunner

from voiceband.cli.main import app

runner = CliRunner()
FS = 8000


def _run(*args):
    return runner.invoke(app, [str(a) for a in args])


def _one_sentence(res, code=2) -> str:
    assert res.exit_code == code, (res.exit_code, res.stdout, res.stderr)
    lines = [ln for ln in res.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("voiceband: "), res.stderr
    assert "Traceback" not in res.stderr + res.stdout
    return lines[0]


def _cli(*args, cwd=None, timeout=60, **kw) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "voiceband.cli.main", *map(str, args)], cwd=cwd,
                          capture_output=kw.pop("capture_output", True), timeout=timeout, **kw)


def _ours(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.startswith(".vb-"))


@pytest.fixture
def sine(tmp_path):
    p = tmp_path / "sine.wav"
    t = np.arange(2 * FS) / FS
    sf.write(str(p), 0.5 * np.sin(2 * np.pi * 440 * t), FS, subtype="PCM_16")
    return p


# --------------------------------------------------------------------------- samples


@pytest.mark.parametrize("value", [1e16, 3e38, 1e100, 1e300])
def test_huge_finite_samples_are_reported_as_such(tmp_path, value):
    p = tmp_path / "huge.wav"
    x = np.zeros(FS)
    x[10] = value
    sf.write(str(p), x, FS, subtype="DOUBLE")
    msg = _one_sentence(_run("analyze", p))
    # 20 log10(value) dB above full scale (analytic), never "NaN or infinite"
    assert f"{20 * np.log10(value):+.1f} dBFS" in msg and "scale is wrong" in msg
    assert "NaN" not in msg and "infinite" not in msg


def test_samples_up_to_the_limit_are_measured(tmp_path):
    p = tmp_path / "loud.wav"
    t = np.arange(FS) / FS
    sf.write(str(p), 1e5 * np.sin(2 * np.pi * 440 * t), FS, subtype="DOUBLE")
    res = _run("analyze", p, "--json", "-")
    assert res.exit_code == 0, res.stderr
    # a sine of peak 1e5 peaks at 20 log10(1e5) = +100 dBFS (analytic)
    assert json.loads(res.stdout)["levels"]["peak_dbfs"] == pytest.approx(100.0, abs=0.01)


def test_clean_float_sine_has_no_mains_hum():
    from voiceband.measurement.hum import detect_hum

    t = np.arange(20 * FS) / FS
    x = np.sin(2 * np.pi * 1000 * t).astype(np.float32).astype(np.float64)  # a FLOAT file's samples
    assert detect_hum(x, FS) is None
    # hum 60 dB under the same sine is still found (a line 60 dB down is far above float32 rounding)
    hum = detect_hum(x + 1e-3 * np.sin(2 * np.pi * 50 * t), FS)
    assert hum is not None and hum.fundamental_hz == pytest.approx(50.0, abs=0.1)


def test_true_peak_over_read_tolerance_is_the_annex_filters_largest_gain():
    from voiceband.measurement.levels import BS1770_TRUE_PEAK_PHASES, TRUE_PEAK_OVER_READ_DB

    # computed from the ITU-R BS.1770-4 Annex 2 coefficient table: each phase's gain for a sine
    # from 0 to 0.45 fs; the largest is the meter's over-read of a full-scale sine
    f = np.linspace(0.0, 0.45, 9001)
    j = np.arange(BS1770_TRUE_PEAK_PHASES.shape[1])
    h = np.abs(BS1770_TRUE_PEAK_PHASES @ np.exp(-2j * np.pi * np.outer(j, f)))
    assert 20 * np.log10(h.max()) == pytest.approx(TRUE_PEAK_OVER_READ_DB, abs=0.001)


@pytest.mark.parametrize("freq", [997.0, 1000.0, 3000.0, 12000.0])
def test_full_scale_sine_is_no_true_peak_over(freq):
    from voiceband.analysis import analyze_signal

    fs = 48000
    t = np.arange(fs) / fs
    r = analyze_signal(np.sin(2 * np.pi * freq * t + 0.3), fs)
    codes = [f.code for f in r.findings]
    assert "true_peak_over" not in codes and "true_peak_near" in codes
    # an inter-sample over of 3 dB (a full-scale sine at fs/4 sampled 45 degrees off its peak; analytic) is one
    r = analyze_signal(np.sqrt(2) * np.sin(2 * np.pi * fs / 4 * t + np.pi / 4), fs)
    assert "true_peak_over" in [f.code for f in r.findings]


# --------------------------------------------------------------------------- inputs


def test_special_files_are_said_for_what_they_are(tmp_path):
    fifo = tmp_path / "fifo"
    os.mkfifo(fifo)
    sock = socket.socket(socket.AF_UNIX)
    sock.bind(str(tmp_path / "sock"))
    try:
        assert "named pipe" in _one_sentence(_run("analyze", fifo))
        assert "socket" in _one_sentence(_run("analyze", tmp_path / "sock"))
    finally:
        sock.close()
    assert "a device" in _one_sentence(_run("analyze", "/dev/zero"))
    assert "is a folder" in _one_sentence(_run("analyze", tmp_path))
    assert "is a folder" in _one_sentence(_run("synth", "--out", tmp_path / "o", tmp_path))
    assert "is a folder" in _one_sentence(_run("chain", tmp_path))
    assert "longer than the file system allows" in _one_sentence(_run("analyze", tmp_path / ("a" * 300 + ".wav")))
    assert "longer than the file system allows" in _one_sentence(_run("analyze", tmp_path / ("a" * 300) / "x.wav"))


def test_dash_and_non_utf8_names_are_files(tmp_path, sine, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "-").write_bytes(sine.read_bytes())
    weird = os.fsdecode(bytes(tmp_path) + b"/n\xff\xfe.wav")
    Path(weird).write_bytes(sine.read_bytes())
    for name in ("-", "./-", weird):
        res = _run("analyze", name, "--json", "-")
        assert res.exit_code == 0, res.stderr
        assert json.loads(res.stdout)["levels"]["peak_dbfs"] == pytest.approx(-6.02, abs=0.01)  # 0.5 peak, analytic


def test_name_starting_with_dash_gets_our_sentence(tmp_path, sine):
    (tmp_path / "-x.wav").write_bytes(sine.read_bytes())
    p = _cli("analyze", "-x.wav", cwd=tmp_path)
    assert p.returncode == 2
    err = p.stderr.decode().strip().splitlines()
    assert err == ["voiceband: '-x.wav' was read as an option; to name a file starting with '-', "
                   "write './-x.wav' or put '--' before it."]


def _as_other_user(fn) -> int:
    """Run ``fn`` in a child process as an unprivileged user (root's permission checks always pass)."""
    pid = os.fork()
    if pid == 0:
        code = 1
        try:
            if os.getuid() == 0:
                os.setgid(65534)
                os.setuid(65534)
            code = fn()
        finally:
            os._exit(code)
    return os.waitstatus_to_exitcode(os.waitpid(pid, 0)[1])


def test_folder_without_search_permission_and_unreadable_file(sine):
    import shutil
    import tempfile

    # A folder of its own under /tmp: pytest's own folders are closed to other users.
    base = Path(tempfile.mkdtemp(prefix="vb-perm-"))
    shut = base / "shut"
    shut.mkdir()
    (shut / "x.wav").write_bytes(sine.read_bytes())
    unreadable = base / "u.wav"
    unreadable.write_bytes(sine.read_bytes())
    readable = base / "r.wav"
    readable.write_bytes(sine.read_bytes())
    unreadable.chmod(0)
    shut.chmod(0o666)  # readable listing, but no search (x) permission
    base.chmod(0o777)

    def check() -> int:
        problems = []
        r = _run("analyze", shut / "x.wav")
        if not (r.exit_code == 2 and "no permission to enter" in r.stderr):
            problems.append(r.stderr)
        r = _run("analyze", readable, "--json", shut / "o.json")
        if not (r.exit_code == 2 and "no permission to enter the folder" in r.stderr and r.stderr.count("\n") == 1):
            problems.append(r.stderr)
        r = _run("analyze", unreadable)
        if not (r.exit_code == 2 and "cannot be read (permission denied)" in r.stderr):
            problems.append(r.stderr)
        sys.stderr.write("".join(problems))
        return 1 if problems else 0

    try:
        assert _as_other_user(check) == 0
    finally:
        shut.chmod(0o755)
        shutil.rmtree(base, ignore_errors=True)


# --------------------------------------------------------------------------- outputs


def test_stdout_closed_or_full(sine):
    cmd = [sys.executable, "-m", "voiceband.cli.main", "analyze", str(sine)]
    closed = subprocess.Popen(cmd, preexec_fn=lambda: os.close(1), stderr=subprocess.PIPE)
    with open("/dev/full", "w") as full:
        to_full = subprocess.Popen(cmd + ["--json", "-"], stdout=full, stderr=subprocess.PIPE)
    err = closed.communicate(timeout=120)[1].decode().strip()
    assert closed.returncode == 2
    assert err == "voiceband: standard output is closed; redirect it to a file or /dev/null instead."
    err = to_full.communicate(timeout=120)[1].decode().strip()
    assert to_full.returncode == 2
    assert err == "voiceband: cannot write to standard output: no space left on device."


def test_outputs_checked_before_the_work(tmp_path, sine):
    (tmp_path / "f").write_text("x")
    for dest, phrase in [
        ("/proc/x.json", "does not accept new files"),
        (tmp_path / "f" / "x.json", "is a file, not a folder"),
        (tmp_path / ("c" * 300 + ".json"), "this file system allows"),
        (str(tmp_path) + "/", "names a folder"),
        ("/dev/full", "not a regular file"),
    ]:
        assert phrase in _one_sentence(_run("analyze", sine, "--json", dest, "--force"))


def test_response_refuses_a_bad_json_before_writing_the_figure(tmp_path):
    from voiceband.synth.testsignals import make_test_signal

    x = make_test_signal("sweep", sample_rate_hz=FS, duration_s=1.0).samples
    stim, rec = tmp_path / "stim.wav", tmp_path / "rec.wav"
    sf.write(str(stim), x, FS, subtype="FLOAT")
    sf.write(str(rec), np.r_[np.zeros(80), 0.5 * x], FS, subtype="FLOAT")
    out = tmp_path / "plots"
    for bad in ("/proc/x.json", str(out) + "/", str(out), str(out / "rec_response.png")):
        _one_sentence(_run("response", stim, rec, "--out", out, "--json", bad))
        assert not out.exists()
    # swapped: the "recording" answers before the "stimulus" starts, though it holds all of it
    msg = _one_sentence(_run("response", rec, stim))
    assert "cannot answer before it is driven" in msg


def test_synth_validates_every_spec_before_writing(tmp_path):
    spec = ('description = "t"\noutput = "{o}"\nsample_rate_hz = 8000\nduration_s = 1.0\nseed = 1\n'
            '[speech]\nvoice = "medium"\n{stage}')
    good = tmp_path / "good.toml"
    good.write_text(spec.format(o="good.wav", stage=""))
    out = tmp_path / "out"
    for stage, phrase in [
        ('[[stage]]\nkind = "gain"\ngain_db = -1e6\n', "'gain_db' must be -60 to 40 dB"),
        ('[[stage]]\nkind = "lowpass"\ncutoff_hz = 1e-9\n', "'cutoff_hz' must be from 10 Hz"),
        ('[[stage]]\nkind = "gain"\ngain_db = 40\n', "beyond full scale"),  # fails only when rendered
    ]:
        bad = tmp_path / "bad.toml"
        bad.write_text(spec.format(o="bad.wav", stage=stage))
        assert phrase in _one_sentence(_run("synth", "--out", out, good, bad))
        assert not out.exists()  # not even the empty folder it would have made


def test_testsignal_checks_every_parameter_first(tmp_path):
    out = tmp_path / "t.wav"
    t0 = time.perf_counter()
    assert "--rate-hz must be 8000–192000 Hz" in _one_sentence(_run("testsignal", "tone", "--out", out, "--rate-hz", 768000,
                                                                       "--duration-s", 3600))
    assert time.perf_counter() - t0 < 5.0  # refused before synthesising an hour at 768 kHz
    assert "from 10 Hz" in _one_sentence(_run("testsignal", "tone", "--out", out, "--tone-hz", 1e-9))
    assert not out.exists()


def test_streamed_test_signals_do_not_depend_on_the_block_length():
    from voiceband.synth.testsignals import stream_test_signal

    for kind in ("sweep", "multitone", "two-tone", "tone", "steps"):
        dur = None if kind == "steps" else 1.0
        a = np.concatenate(list(stream_test_signal(kind, sample_rate_hz=FS, duration_s=dur).blocks(1000)))
        b = np.concatenate(list(stream_test_signal(kind, sample_rate_hz=FS, duration_s=dur).blocks(7777)))
        assert np.array_equal(a, b)
    # the tone against its formula: a -20 dBFS-peak cosine at 1 kHz with 10 ms raised-cosine ramps
    x = np.concatenate(list(stream_test_signal("tone", sample_rate_hz=FS, duration_s=1.0).blocks(333)))
    t = np.arange(FS) / FS
    assert np.allclose(x[100:-100], 0.1 * np.cos(2 * np.pi * 1000 * t[100:-100]), atol=1e-12)


# --------------------------------------------------------------------------- signals and disks


def _long_testsignal(out: Path) -> list:
    return ["testsignal", "tone", "--out", out, "--duration-s", 600, "--rate-hz", 48000, "--bits", 32]


def test_sigterm_and_sighup_leave_nothing_behind(tmp_path):
    runs = {}
    for sig in (signal.SIGTERM, signal.SIGHUP):  # both at once: start-up dominates the time
        folder = tmp_path / signal.Signals(sig).name
        folder.mkdir()
        out = folder / "t.wav"
        runs[sig] = (folder, out, subprocess.Popen([sys.executable, "-m", "voiceband.cli.main",
                                                    *map(str, _long_testsignal(out))],
                                                   stdout=subprocess.PIPE, stderr=subprocess.PIPE))
    for sig, (folder, out, p) in runs.items():
        deadline = time.time() + 60
        while not _ours(folder) and time.time() < deadline:  # wait until it is writing
            time.sleep(0.05)
        p.send_signal(sig)
    for sig, (folder, out, p) in runs.items():
        _, err = p.communicate(timeout=60)
        assert p.returncode == 128 + sig
        assert err.decode().strip() == f"voiceband: stopped by signal {signal.Signals(sig).name}; nothing was left half-written."
        assert not out.exists() and _ours(folder) == []


def test_sigkill_at_random_points_leaves_no_output_and_the_next_run_sweeps(tmp_path):
    rnd = random.Random(14)
    killed = 0
    for i in range(3):
        out = tmp_path / f"k{i}.wav"
        p = subprocess.Popen([sys.executable, "-m", "voiceband.cli.main", *map(str, _long_testsignal(out))],
                             stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        # The 10-minute file takes about 3 s to write here: killed well before it is done.
        time.sleep(rnd.uniform(0.2, 1.5))
        finished = p.poll() is not None
        p.kill()
        p.wait(timeout=30)
        if finished:  # a machine fast enough to be done first: then the output is whole
            assert sf.info(str(out)).frames == 600 * 48000
        else:
            killed += 1
            assert not out.exists()  # never a partial output under the real name
    assert killed >= 1
    # whatever temporaries the killed runs left are swept by the next write into the folder
    res = _run("testsignal", "tone", "--out", tmp_path / "next.wav", "--duration-s", 0.5)
    assert res.exit_code == 0
    assert _ours(tmp_path) == []


def _small_disk(tmp_path: Path) -> tuple[Path, object]:
    """A 256 kB tmpfs when this process may mount one; else None (the caller limits the file size)."""
    mnt = tmp_path / "disk"
    mnt.mkdir()
    if os.geteuid() == 0:
        r = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=256k", "tmpfs", str(mnt)], capture_output=True)
        if r.returncode == 0:
            return mnt, lambda: subprocess.run(["umount", str(mnt)], capture_output=True)
    return mnt, None


def test_full_disk_says_so_and_leaves_nothing(tmp_path):
    disk, undo = _small_disk(tmp_path)
    spec = tmp_path / "s.toml"
    spec.write_text('description = "t"\noutput = "s.wav"\nsample_rate_hz = 16000\nduration_s = 1.0\nseed = 1\n'
                    '[speech]\nvoice = "medium"\n')  # 1 s of 16-bit samples at 16 kHz: 32 kB
    limit = None if undo else (lambda: resource.setrlimit(resource.RLIMIT_FSIZE, (20_000, 20_000)))
    try:
        if undo:
            (disk / "filler").write_bytes(bytes(240_000))  # about 16 kB left
        runs = [subprocess.Popen([sys.executable, "-m", "voiceband.cli.main", *map(str, args)], preexec_fn=limit,
                                 stdout=subprocess.PIPE, stderr=subprocess.PIPE)
                for args in (["testsignal", "tone", "--out", disk / "t.wav", "--duration-s", 10],
                             ["synth", "--out", disk / "corpus", spec])]
        for p in runs:
            err = p.communicate(timeout=120)[1].decode().strip()
            assert p.returncode == 2, err
            assert err.startswith("voiceband: cannot write '") and err.endswith("nothing was written."), err
            assert "space" in err or "too large" in err
        left = [q for q in disk.rglob("*") if q.is_file() and q.name != "filler"]
        assert left == []
    finally:
        if undo:
            undo()


def test_a_failed_output_removes_the_folders_it_made_and_only_those(tmp_path):
    from voiceband.outputs import atomic_output

    (tmp_path / "kept").mkdir()
    dest = tmp_path / "kept" / "new" / "deeper" / "x.txt"
    with pytest.raises(RuntimeError):
        with atomic_output(dest, make_folders=True) as tmp:
            tmp.write_text("half")
            raise RuntimeError("the work failed")
    assert sorted(os.listdir(tmp_path)) == ["kept"] and os.listdir(tmp_path / "kept") == []
    with atomic_output(dest, make_folders=True) as tmp:  # on success the folders stay
        tmp.write_text("whole")
    assert dest.read_text() == "whole"


def test_a_made_folder_that_is_no_longer_empty_is_kept(tmp_path):
    from voiceband.outputs import atomic_output

    dest = tmp_path / "new" / "x.txt"
    with pytest.raises(RuntimeError):
        with atomic_output(dest, make_folders=True):
            (tmp_path / "new" / "someone-else.txt").write_text("theirs")
            raise RuntimeError("the work failed")
    assert os.listdir(tmp_path / "new") == ["someone-else.txt"]


def _not_utf8(folder: Path, sine: Path) -> Path:
    p = Path(os.fsdecode(bytes(folder) + b"/take\xff\xfe.wav"))
    p.write_bytes(sine.read_bytes())
    return p


def test_names_that_are_not_utf8_are_written_as_valid_utf8(tmp_path, sine):
    from voiceband.outputs import name_text

    assert name_text(os.fsdecode(b"a\xffb.wav")) == "a\ufffdb.wav"
    assert name_text(b"caf\xc3\xa9.wav") == "caf\u00e9.wav"  # UTF-8 names stay as they are
    weird = _not_utf8(tmp_path, sine)
    res = _run("analyze", weird, "--json", "-")
    assert res.exit_code == 0, res.stderr
    assert "\\udc" not in res.stdout  # no lone-surrogate escapes
    assert json.loads(res.stdout)["input"]["path"].endswith("/take\ufffd\ufffd.wav")
    for suffix in (".csv", ".jsonl"):
        out = tmp_path / f"t{suffix}"
        res = _run("batch", weird, "--out", out, "--workers", 1)
        assert res.exit_code == 0, res.stderr
        raw = out.read_bytes()
        text = raw.decode("utf-8")  # strict: the table is valid UTF-8
        assert "\\udc" not in text
        path = (json.loads(text)["path"] if suffix == ".jsonl" else text.splitlines()[1].split(",")[0])
        assert path.endswith("/take\ufffd\ufffd.wav")
        # resuming recognises the row written with U+FFFD as this file's
        res = _run("batch", weird, "--out", out, "--resume", "--workers", 1)
        assert res.exit_code == 0 and "1 already recorded" in res.stderr, res.stderr
        assert out.read_bytes() == raw


def test_names_that_are_not_utf8_show_as_replacement_marks_on_the_terminal(tmp_path, sine):
    missing = os.fsencode(tmp_path) + b"/gone\xff.wav"
    p = subprocess.run([sys.executable, "-m", "voiceband.cli.main", "analyze", missing], capture_output=True, timeout=60,
                       env={**os.environ, "PYTHONIOENCODING": "utf-8"})
    assert p.returncode == 2
    assert p.stderr.decode("utf-8").strip() == f"voiceband: No such file: '{tmp_path}/gone\ufffd.wav'."


def test_batch_refuses_a_name_too_long_in_a_sentence(tmp_path):
    msg = _one_sentence(_run("batch", tmp_path / ("b" * 300) / "x.wav", "--out", tmp_path / "t.csv"))
    assert "longer than the file system allows" in msg
    assert not (tmp_path / "t.csv").exists()


def test_batch_workers_that_cannot_start_are_said_so(tmp_path, sine, monkeypatch):
    # As when the fork server cannot run Python: starting a worker ends in a broken pipe, which is
    # not standard output closing (exit 141 with no word) but a sentence.
    from voiceband.batch import executors

    class _NoStart:
        def submit(self, *a):
            raise BrokenPipeError(32, "Broken pipe")

        def shutdown(self, **kw):
            pass

    monkeypatch.setattr(executors.LocalPool, "_ensure", lambda self: _NoStart())
    msg = _one_sentence(_run("batch", sine, "--out", tmp_path / "t.csv", "--workers", 2))
    assert msg == "voiceband: cannot start the batch's worker processes (broken pipe)."


def test_report_pages_name_a_file_that_is_not_utf8_with_replacement_marks(tmp_path, sine):
    weird = _not_utf8(tmp_path, sine)
    out = tmp_path / "rep"
    res = _run("report", weird, "--out", out)
    assert res.exit_code == 0, res.stderr
    for name in ("index.html", "summary.md", "analysis.json"):
        text = (out / name).read_bytes().decode("utf-8")  # strict: valid UTF-8
        assert "take\ufffd\ufffd.wav" in text or "take\\ufffd\\ufffd.wav" in text, name


def test_report_of_a_take_without_speech_prints_no_library_warnings(tmp_path, sine):
    # A plain tone has no speech, so its intelligibility figures have nothing labelled: no legend, and no
    # matplotlib warning on stderr even with VOICEBAND_DEBUG=1 (which lets library warnings through).
    p = _cli("report", sine, "--out", tmp_path / "rep", env={**os.environ, "VOICEBAND_DEBUG": "1", "MPLBACKEND": "Agg"})
    assert p.returncode == 0, p.stderr
    assert p.stderr.decode() == ""
