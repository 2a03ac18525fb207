"""Fuzz every voiceband command with generated arguments, files and destinations.

Usage::

    python benchmarks/fuzz_all.py [--cases 10000] [--seed 1] [--workers 2] [--timeout 120]
        [--progress 60] [--show 3] [--findings FILE]

Each case runs one command in-process (typer's test runner, one process per worker) with
arguments drawn from pools of good and bad values: recordings (good, short, empty, text,
truncated, NaN, huge finite samples, random bytes that look like MP3, 8 kHz and 192 kHz,
stereo), special paths (a folder, ``/dev/zero``, a named pipe, a socket, a missing file, a
name over 255 bytes, a file called ``-``, a name that is not UTF-8), destinations (new, existing,
a folder, ``/proc``, under a regular file, a name over 255 bytes, a name ending in ``/``) and
numbers (typical, zero, negative, tiny, huge, NaN, infinite, not a number).

It prints how many cases ended in

* **results** (exit 0),
* **clean errors** (non-zero exit with one line on stderr starting ``voiceband:``; for batch also
  its one closing line with exit 1, when it ran but some files failed, as documented),
* **internal errors** (exit 3, a traceback, or an exception escaping the command),
* **multi-line errors** (non-zero exit with more than one line on stderr, or a result with a
  library's warning on stderr; the argument parser's own usage block is counted here and shown apart),
* **timeouts** (a case still running after ``--timeout`` seconds: ended, and shown as a finding),
* **left behind** (a temporary ``.vb-*.part*`` file of ours still present after the case, or
  anything at all a failed case created: a refused or failed command writes nothing),

per command and in total, with a progress line every ``--progress`` seconds and each finding
as it happens (``--findings FILE`` keeps them all).  Each case runs in a worker process the
parent supervises: past ``--timeout`` the worker's alarm ends the case, and a worker stuck
beyond that (in C code) is killed and replaced, so a hang is a finding, never a stalled run.
Stopped with Ctrl-C or SIGTERM, it prints the counts of the cases finished so far.

The target is zero internal errors, zero multi-line errors, no timeouts and nothing left
behind.  Exit status 1 if any was found.
"""

from __future__ import annotations

import argparse
import collections
import json
import os
import random
import re
import shutil
import signal
import socket
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

_TIMEOUT_S = 120


class _Timeout(BaseException):
    pass


def _make_files(root: Path) -> dict[str, list[str]]:
    """The pools of input files and destinations (created once per worker)."""
    import soundfile as sf

    r = np.random.default_rng(0)
    inp = root / "in"
    inp.mkdir()
    fs = 16000
    t = np.arange(int(0.6 * fs)) / fs
    speechy = 0.3 * np.sin(2 * np.pi * 220 * t) * (1 + np.sin(2 * np.pi * 3 * t)) / 2
    files: dict[str, str] = {}

    def wav(name, x, rate=fs, subtype="PCM_16"):
        p = inp / name
        sf.write(str(p), x, rate, subtype=subtype)
        files[name] = str(p)

    wav("good.wav", speechy + 1e-3 * r.standard_normal(t.size))
    wav("tone8k.wav", 0.5 * np.sin(2 * np.pi * 1000 * np.arange(4000) / 8000), 8000)
    wav("hi192k.wav", 0.5 * np.sin(2 * np.pi * 1000 * np.arange(48000) / 192000), 192000)
    wav("stereo.wav", np.c_[speechy, -speechy])
    wav("float_sine.wav", np.sin(2 * np.pi * 1000 * t), subtype="FLOAT")
    wav("short.wav", speechy[:100])
    wav("silent.wav", np.zeros(t.size))
    wav("clipped.wav", np.clip(3 * speechy, -0.5, 0.5))
    for v in (1e6, 1e16, 3e38, 1e100):
        wav(f"huge_{v:g}.wav", v * speechy, subtype="DOUBLE")
    x = speechy.copy()
    x[100] = np.nan
    wav("nan.wav", x, subtype="FLOAT")
    x = speechy.copy()
    x[200] = np.inf
    wav("inf.wav", x, subtype="DOUBLE")
    # Test signals of our own, so response gets real stimuli.
    from voiceband.synth.testsignals import make_test_signal

    sw = make_test_signal("sweep", sample_rate_hz=fs, duration_s=1.0, high_hz=7000)
    wav("sweep.wav", sw.samples, subtype="FLOAT")
    from scipy import signal as ss

    sos = ss.butter(2, [300, 3000], "bandpass", fs=fs, output="sos")
    wav("sweep_rec.wav", np.r_[np.zeros(160), 0.5 * ss.sosfilt(sos, sw.samples)], subtype="FLOAT")
    mt = make_test_signal("multitone", sample_rate_hz=fs, duration_s=1.0)
    wav("multitone.wav", mt.samples, subtype="FLOAT")
    raw = {
        "empty.wav": b"",
        "text.wav": b"hello, this is not audio\n" * 10,
        "random.mp3": b"\xff\xfb\x90d" + r.bytes(3000),
        "random.bin": r.bytes(5000),
    }
    good_bytes = Path(files["good.wav"]).read_bytes()
    raw["truncated.wav"] = good_bytes[: len(good_bytes) // 3]
    raw["header_only.wav"] = good_bytes[:44]
    for name, data in raw.items():
        (inp / name).write_bytes(data)
        files[name] = str(inp / name)
    (inp / "-").write_bytes(good_bytes)
    files["dash"] = "./-"
    files["dash_bare"] = "-"
    weird = os.fsdecode(bytes(inp) + b"/n\xff\xfe.wav")
    Path(weird).write_bytes(good_bytes)
    files["non_utf8"] = weird
    (inp / "-lead.wav").write_bytes(good_bytes)
    files["dash_lead"] = "-lead.wav"
    files["dash_lead_dot"] = "./-lead.wav"
    os.mkfifo(inp / "fifo")
    files["fifo"] = str(inp / "fifo")
    s = socket.socket(socket.AF_UNIX)
    s.bind(str(inp / "sock"))
    files["socket"] = str(inp / "sock")
    files["folder"] = str(inp)
    files["dot"] = "."
    files["dev_zero"] = "/dev/zero"
    files["dev_null"] = "/dev/null"
    files["missing"] = str(inp / "missing.wav")
    files["long"] = str(inp / ("a" * 300 + ".wav"))
    files["long_part"] = str(inp / ("b" * 300) / "x.wav")
    files["under_file"] = files["good.wav"] + "/x.wav"
    # Chain and spec files.
    repo = Path(__file__).resolve().parents[1]
    chains = sorted((repo / "corpus_synthetic" / "chains").glob("*.toml"))
    files["chain"] = str(chains[0]) if chains else files["missing"]
    files["chain2"] = str(chains[-1]) if chains else files["missing"]
    (inp / "bad_chain.toml").write_text('name = "x"\n[[stage]]\nkind = "gain"\ngain_db = -1e6\n')
    files["bad_chain"] = str(inp / "bad_chain.toml")
    (inp / "notoml.toml").write_text("this = = not toml\n")
    files["notoml"] = str(inp / "notoml.toml")
    spec = ('description = "fuzz"\noutput = "{out}"\nsample_rate_hz = 8000\nduration_s = 1.0\nseed = {seed}\n'
            '[speech]\nvoice = "medium"\n{stage}')
    stages = ["", '[[stage]]\nkind = "gain"\ngain_db = -1e6\n', '[[stage]]\nkind = "lowpass"\ncutoff_hz = 1e-9\n',
              '[[stage]]\nkind = "gain"\ngain_db = 40\n', '[[stage]]\nkind = "hum"\nlevel_dbfs = -50\n',
              '[[stage]]\nkind = "white"\nsnr_db = 30\n']
    for i, st in enumerate(stages):
        (inp / f"spec{i}.toml").write_text(spec.format(out=f"s{i}.wav", seed=i, stage=st))
        files[f"spec{i}"] = str(inp / f"spec{i}.toml")
    (inp / "spec_dup.toml").write_text(spec.format(out="s0.wav", seed=9, stage=""))
    files["spec_dup"] = str(inp / "spec_dup.toml")
    resp = root / "resp.json"
    files["response_json"] = str(resp)
    return files


def _numbers(rng: random.Random, typical: list) -> str:
    pool = typical + [0, -1, 1e-9, -1e-9, 1e9, 1e308, "nan", "inf", "-inf", "abc", "", "1e-400", "0x10", " 5"]
    return str(rng.choice(pool))


class _Case:
    def __init__(self, rng: random.Random, files: dict[str, str], out: Path):
        self.rng = rng
        self.f = files
        self.out = out

    def audio(self) -> str:
        names = [k for k in self.f if k.endswith((".wav", ".mp3", ".bin")) or k in (
            "dash", "dash_bare", "non_utf8", "dash_lead", "dash_lead_dot", "fifo", "socket", "folder", "dot",
            "dev_zero", "dev_null", "missing", "long", "long_part", "under_file")]
        good = ["good.wav", "tone8k.wav", "float_sine.wav", "sweep.wav", "sweep_rec.wav", "multitone.wav"]
        return self.f[self.rng.choice(good if self.rng.random() < 0.4 else names)]

    def dest(self, suffix: str) -> str:
        r = self.rng.random()
        if r < 0.55:
            return str(self.out / f"o{self.rng.randrange(10**9)}{suffix}")
        return self.rng.choice([
            self.f["good.wav"] if suffix == ".wav" else self.f["response_json"],
            str(self.out),
            str(self.out) + "/",
            "/proc/x" + suffix,
            self.f["good.wav"] + "/x" + suffix,
            str(self.out / ("c" * 300 + suffix)),
            str(self.out / ("d" * 250 + suffix)),
            str(self.out / "newdir" / f"x{suffix}"),
            "/dev/full",
            "-" if suffix == ".json" else str(self.out / "y.txt"),
        ])

    def opt(self, args: list, name: str, value: str, p: float = 0.5) -> None:
        if self.rng.random() < p:
            args += [name, value]

    def analyze(self) -> list:
        a = ["analyze", self.audio()]
        self.opt(a, "--channel", self.rng.choice(["0", "1", "mix", "-1", "abc", "99"]), 0.2)
        self.opt(a, "--json", self.dest(".json"), 0.5)
        if self.rng.random() < 0.2:
            a.append("--force")
        return a

    def response(self) -> list:
        pairs = [("sweep.wav", "sweep_rec.wav"), ("sweep_rec.wav", "sweep.wav"), ("multitone.wav", "multitone.wav"),
                 ("sweep.wav", "sweep.wav")]
        if self.rng.random() < 0.5:
            s, r = self.rng.choice(pairs)
            a = ["response", self.f[s], self.f[r]]
        else:
            a = ["response", self.audio(), self.audio()]
        self.opt(a, "--out", self.dest(""), 0.3)
        self.opt(a, "--json", self.dest(".json"), 0.4)
        self.opt(a, "--channel", self.rng.choice(["0", "mix", "3"]), 0.1)
        if self.rng.random() < 0.2:
            a.append("--force")
        return a

    def testsignal(self) -> list:
        kind = self.rng.choice(["sweep", "multitone", "two-tone", "tone", "steps", "noise", ""])
        a = ["testsignal", kind, "--out", self.dest(self.rng.choice([".wav", ".wav", ".flac", ".mp3", ""]))]
        self.opt(a, "--rate-hz", _numbers(self.rng, [8000, 16000, 44100, 192000, 768000, 7999]), 0.5)
        self.opt(a, "--duration-s", _numbers(self.rng, [0.5, 1, 2]), 0.6)
        self.opt(a, "--peak-dbfs", _numbers(self.rng, [-6, -20, 0, 3]), 0.3)
        self.opt(a, "--tone-hz", _numbers(self.rng, [1000, 400, 1800, 5000]), 0.3)
        self.opt(a, "--tone-hz", _numbers(self.rng, [1800, 2500]), 0.15)
        self.opt(a, "--low-hz", _numbers(self.rng, [20, 300, 100]), 0.2)
        self.opt(a, "--high-hz", _numbers(self.rng, [3000, 7000, 20000]), 0.2)
        self.opt(a, "--tones", _numbers(self.rng, [2, 28, 100]), 0.15)
        self.opt(a, "--dwell-s", _numbers(self.rng, [0.1, 0.5]), 0.15)
        self.opt(a, "--gap-s", _numbers(self.rng, [0.0, 0.1]), 0.15)
        self.opt(a, "--bits", self.rng.choice(["16", "24", "32", "8", "x"]), 0.3)
        if self.rng.random() < 0.1:
            a.append("--no-markers")
        if self.rng.random() < 0.2:
            a.append("--force")
        return a

    def synth(self) -> list:
        specs = [k for k in self.f if k.startswith("spec")] + ["dot", "missing", "fifo", "long", "good.wav"]
        a = ["synth", "--out", self.dest("") if self.rng.random() < 0.4 else str(self.out / f"c{self.rng.randrange(10**9)}")]
        for _ in range(self.rng.choice([1, 1, 2, 3])):
            a.append(self.f[self.rng.choice(specs)])
        if self.rng.random() < 0.2:
            a.append("--force")
        if self.rng.random() < 0.1:
            a.append("--verify")
        return a

    def chain(self) -> list:
        c = self.rng.choice(["chain", "chain2", "bad_chain", "notoml", "dot", "missing", "fifo", "long", "good.wav", "dev_zero"])
        a = ["chain", self.f[c]]
        self.opt(a, "--plot", self.dest(self.rng.choice([".png", ".png", ".pdf"])), 0.15)
        self.opt(a, "--json", self.dest(".json"), 0.3)
        self.opt(a, "--channel-snr", _numbers(self.rng, [0, 10, 20]), 0.3)
        self.opt(a, "--measured", self.rng.choice([self.f["response_json"], self.f["good.wav"], self.f["missing"]]), 0.1)
        return a

    def compare(self) -> list:
        cs = ["chain", "chain2", "bad_chain", "notoml", "dot", "missing"]
        a = ["compare"] + [self.f[self.rng.choice(cs)] for _ in range(self.rng.choice([1, 2]))]
        # A valid comparison runs speech through every chain (seconds); most cases stop earlier.
        self.opt(a, "--speech", self.audio() if self.rng.random() < 0.7 else self.f["tone8k.wav"], 0.9)
        self.opt(a, "--channel-snr", _numbers(self.rng, [0, 10, 20]), 0.3)
        self.opt(a, "--json", self.dest(".json"), 0.3)
        self.opt(a, "--plot", self.dest(".png"), 0.1)
        self.opt(a, "--channel", self.rng.choice(["0", "mix", "5"]), 0.1)
        return a

    def sweep(self) -> list:
        def rng_spec():
            return self.rng.choice(["100:300:100", "200:200:1", "300:100:50", "0:100:10", "a:b:c", "100:300:0",
                                    "100:300:-5", "1e9:2e9:1e8", "nan:1:1", "200", "100:400:100"])

        a = ["sweep", "--low", rng_spec(), "--high", self.rng.choice(["2500:3000:500", "3000:3000:1", "100:50:10",
                                                                        "1:1e9:1", "x", "2000:4000:1000"])]
        self.opt(a, "--order", _numbers(self.rng, [2, 4, 12, 13]), 0.3)
        self.opt(a, "--type", self.rng.choice(["butterworth", "chebyshev1", "bessel", "elliptic", "box"]), 0.3)
        self.opt(a, "--ripple-db", _numbers(self.rng, [0.5, 1]), 0.15)
        self.opt(a, "--stop-db", _numbers(self.rng, [40, 60]), 0.15)
        self.opt(a, "--max-bandwidth", _numbers(self.rng, [3000, 2800]), 0.2)
        self.opt(a, "--speech", self.audio(), 0.3)
        self.opt(a, "--json", self.dest(".json"), 0.3)
        return a


    def report(self) -> list:
        a = ["report", self.audio()]
        self.opt(a, "--out", self.dest("") if self.rng.random() < 0.5 else str(self.out / "rep"), 0.9)
        self.opt(a, "--profile", self.rng.choice(["ssb-voice", "fm-voice-narrow", "telephone", "nope",
                                                  self.f["notoml"], self.f["good.wav"]]), 0.4)
        self.opt(a, "--before", self.audio(), 0.15)
        self.opt(a, "--channel", self.rng.choice(["0", "mix", "2"]), 0.1)
        if self.rng.random() < 0.2:
            a.append("--force")
        return a

    def demo(self) -> list:
        # A whole demo builds several reports (tens of seconds); the fuzz gives it the destinations
        # that must be refused before that work, and a folder that already holds a demo.
        return ["demo", "--out", self.rng.choice(["/proc/x", self.f["good.wav"], str(self.out / ("e" * 300)),
                                                  self.f["good.wav"] + "/d", "/dev/full"])]


def _batch(self) -> list:
    a = ["batch"] + [self.audio() for _ in range(self.rng.choice([1, 2, 3]))]
    self.opt(a, "--out", self.dest(self.rng.choice([".csv", ".jsonl", ".txt", ".csv"])), 0.8)
    self.opt(a, "--workers", _numbers(self.rng, [1, 2]), 0.2)
    self.opt(a, "--glob", self.rng.choice(["*.wav", "[", "*"]), 0.1)
    self.opt(a, "--channel", self.rng.choice(["0", "mix", "7"]), 0.1)
    self.opt(a, "--profile", self.rng.choice(["ssb-voice", "nope"]), 0.1)
    for flag in ("--resume", "--fail-fast", "--force"):
        if self.rng.random() < 0.1:
            a.append(flag)
    return a


_Case.batch = _batch

_WEIGHTS = {"analyze": 3, "response": 2, "testsignal": 3, "synth": 1.5, "chain": 1.5, "compare": 0.6, "sweep": 1.0,
            "report": 0.8, "demo": 0.2, "batch": 1.0}


#: batch's closing line when it ran but some files failed (exit 1, documented): a result, not an error
_BATCH_SUMMARY = re.compile(r"^\d+ files: .*; rows in '.*'\.$")


def _classify(res, code: int, cmd: str = "") -> str:
    err = (res.stderr if hasattr(res, "stderr") else "") or ""
    out = res.stdout or ""
    if res.exception is not None and not isinstance(res.exception, SystemExit):
        return "internal"
    if code == 3 or "Traceback" in err or "Traceback" in out or "internal error" in err:
        return "internal"
    if code == 0:
        # a result with a library's warning (or any traceback-like text) on stderr is noise a user should not see
        return "multiline" if re.search(r"\b\w*Warning: |^\s+File \"", err, re.M) else "result"
    lines = [ln for ln in err.splitlines() if ln.strip()]
    if len(lines) == 1 and lines[0].startswith("voiceband: "):
        return "clean"
    if cmd == "batch" and code == 1 and len(lines) == 1 and _BATCH_SUMMARY.match(lines[0]):
        return "clean"
    return "usage" if "Usage:" in err else "multiline"


def _leftovers(out: Path, inp: Path, before_in: set[str], failed: bool) -> list[str]:
    """What a case left behind: temporaries of ours anywhere it could write; after a failure, any new
    file or folder at all (a refused or failed command writes nothing, not even an empty folder)."""
    left = []
    for d in (out, inp, out / "newdir"):
        if d.is_dir():
            left += [str(p) for p in d.iterdir() if p.name.startswith(".vb-")]
    if failed:
        if out.is_dir():
            left += [str(p) for p in out.iterdir() if not p.name.startswith(".vb-")]
        left += [str(inp / n) for n in set(os.listdir(inp)) - before_in if not n.startswith(".vb-")]
    return left


class _ProcessResult:
    def __init__(self, code: int, stdout: bytes, stderr: bytes):
        self.exit_code = code
        self.stdout = stdout.decode("utf-8", "backslashreplace")
        self.stderr = stderr.decode("utf-8", "backslashreplace")
        self.exception = None


def _run_process(args: list, timeout_s: float):
    """The case as a user runs it: its own process, real stderr (worker processes' too), the interpreter's exit."""
    import subprocess

    p = subprocess.Popen([sys.executable, "-m", "voiceband.cli.main", *map(str, args)], stdin=subprocess.DEVNULL,
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, start_new_session=True)
    try:
        out, err = p.communicate(timeout=timeout_s)
    except subprocess.TimeoutExpired:
        os.killpg(p.pid, signal.SIGKILL)
        p.communicate()
        return None
    return _ProcessResult(p.returncode, out, err)


def _run_one(runner, app, files: dict, root: Path, seed: int, i: int, timeout_s: float, conn,
             real_share: float = 0.0) -> dict:
    rng = random.Random(seed * 1_000_003 + i)
    out = root / f"out{i}"
    out.mkdir()
    inp = root / "in"
    before_in = set(os.listdir(inp))
    case = _Case(rng, files, out)
    cmd = rng.choices(list(_WEIGHTS), weights=list(_WEIGHTS.values()))[0]
    args = getattr(case, cmd)()
    conn.send(("start", i, cmd, [os.fsencode(str(a)).decode("utf-8", "backslashreplace") for a in args]))
    t0 = time.perf_counter()
    real = random.Random(seed * 7_919 + i).random() < real_share
    signal.alarm(max(1, int(timeout_s)) + (5 if real else 0))
    try:
        res = _run_process(args, timeout_s) if real else runner.invoke(app, args)
        kind = "timeout" if res is None else _classify(res, res.exit_code, cmd)
        code = None if res is None else res.exit_code
    except _Timeout:
        res, kind, code = None, "timeout", None
    finally:
        signal.alarm(0)
    failed = kind != "result"
    if cmd == "batch" and code == 1:
        failed = False  # some files failed, the table of the others was written (documented)
    left = _leftovers(out, inp, before_in, failed)
    if res is None:
        text = f"no end after {timeout_s:.0f} s"
    elif kind in ("internal", "multiline", "usage"):
        text = (res.stderr or "")[-600:] + (
            repr(res.exception) if res.exception and not isinstance(res.exception, SystemExit) else "")
    else:
        text = ""
    if left:
        text += "\nleft behind: " + ", ".join(os.path.relpath(x, root) for x in left[:5])
    for x in left:
        (shutil.rmtree if os.path.isdir(x) and not os.path.islink(x) else os.unlink)(x)
    shutil.rmtree(out, ignore_errors=True)
    return {"i": i, "cmd": cmd, "kind": kind, "left": len(left), "text": ("[own process] " if real else "") + text.strip(),
            "code": code, "seconds": time.perf_counter() - t0, "real": real}


def _worker_main(conn, seed: int, timeout_s: float, real_share: float) -> None:
    """One worker process: its own process group (so the parent can end it and any pool it started),
    its own files; runs the case numbers the parent sends, one at a time."""
    os.setpgrp()
    os.environ.setdefault("MPLBACKEND", "Agg")
    from typer.testing import CliRunner

    from voiceband.cli.main import app

    def alarm(_s, _f):
        raise _Timeout()

    root = Path(tempfile.mkdtemp(prefix="vbfuzz-"))
    try:
        files = _make_files(root)
        os.chdir(root / "in")  # relative names ("-", "./-lead.wav", ".") resolve here
        runner = CliRunner()
        conn.send(("ready", str(root)))
        while True:
            i = conn.recv()
            if i is None:
                break
            signal.signal(signal.SIGALRM, alarm)
            r = _run_one(runner, app, files, root, seed, i, timeout_s, conn, real_share)
            # the commands install SIGTERM/SIGHUP handlers in this process; the parent ends it with SIGKILL
            conn.send(("done", r))
    finally:
        os.chdir("/")
        shutil.rmtree(root, ignore_errors=True)


class _Slot:
    """A worker process seen from the parent: the case it runs and since when."""

    def __init__(self, ctx, seed: int, timeout_s: float, real_share: float):
        self.conn, child = ctx.Pipe()
        # not a daemon: a batch case starts a process pool of its own
        self.proc = ctx.Process(target=_worker_main, args=(child, seed, timeout_s, real_share))
        self.proc.start()
        child.close()
        self.case = None  # (i, cmd, args)
        self.since = time.monotonic()
        self.root = ""

    def kill(self) -> None:
        try:
            os.killpg(self.proc.pid, signal.SIGKILL)
        except (ProcessLookupError, PermissionError):
            pass
        self.proc.join(5)
        try:
            self.conn.close()
        except OSError:
            pass
        if self.root:  # a killed worker cannot remove its own files
            shutil.rmtree(self.root, ignore_errors=True)


class _Tally:
    KINDS = ["result", "clean", "internal", "multiline", "usage", "timeout", "left_behind"]

    def __init__(self, show: int, findings: Path | None):
        self.counts: dict = collections.defaultdict(collections.Counter)
        self.shown: collections.Counter = collections.Counter()
        self.show = show
        self.findings = open(findings, "a", encoding="utf-8") if findings else None
        self.seconds: dict = collections.defaultdict(float)
        self.real = 0

    def add(self, cmd: str, kind: str, left: int, args: list, text: str, seconds: float) -> None:
        self.counts[cmd][kind] += 1
        self.counts[cmd]["left_behind"] += left
        self.seconds[cmd] += seconds
        bad = kind in ("internal", "multiline", "usage", "timeout") or left
        if not bad:
            return
        tag = kind if kind not in ("result", "clean") else "left_behind"
        rec = {"kind": tag, "command": cmd, "args": args, "text": text}
        if self.findings:
            self.findings.write(json.dumps(rec) + "\n")
            self.findings.flush()
        if self.shown[tag] < self.show:
            self.shown[tag] += 1
            print(f"--- {tag}: voiceband {' '.join(args)}\n{text}", flush=True)

    def done(self) -> int:
        return sum(c[k] for c in self.counts.values() for k in self.KINDS[:6])

    def grand(self) -> collections.Counter:
        g = collections.Counter()
        for c in self.counts.values():
            g.update(c)
        return g

    def table(self, wall_s: float) -> None:
        kinds = self.KINDS
        print(f"{'command':12s}" + "".join(f"{k:>12s}" for k in kinds) + f"{'cases':>8s}{'s/case':>8s}")
        for cmd in sorted(self.counts):
            c = self.counts[cmd]
            n = sum(c[k] for k in kinds[:6])
            print(f"{cmd:12s}" + "".join(f"{c[k]:12d}" for k in kinds) + f"{n:8d}{self.seconds[cmd] / max(n, 1):8.2f}")
        g = self.grand()
        n = self.done()
        print(f"{'all':12s}" + "".join(f"{g[k]:12d}" for k in kinds) + f"{n:8d}{sum(self.seconds.values()) / max(n, 1):8.2f}")
        print(f"{n} cases in {wall_s:.0f} s ({n / max(wall_s, 1e-9) * 60:.1f} cases/min); results {g['result']}, "
              f"clean errors {g['clean']}, internal errors {g['internal']}, multi-line errors "
              f"{g['multiline'] + g['usage']} (of which the argument parser's usage block {g['usage']}), "
              f"timeouts {g['timeout']}, left behind {g['left_behind']}; {self.real} of the cases ran as their own "
              f"process", flush=True)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cases", type=int, default=10000)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--start", type=int, default=0, help="first case number (to rerun a part of a run)")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--timeout", type=float, default=_TIMEOUT_S, help="seconds one case may take (then a finding)")
    ap.add_argument("--progress", type=float, default=60.0, help="seconds between progress lines")
    ap.add_argument("--show", type=int, default=3, help="findings printed per kind as they happen")
    ap.add_argument("--findings", type=Path, help="append every finding to this JSON Lines file")
    ap.add_argument("--real", type=float, default=0.03,
                    help="share of cases run as their own process (real stderr of the command and its workers)")
    a = ap.parse_args()
    import multiprocessing as mp
    from multiprocessing.connection import wait

    ctx = mp.get_context("spawn")
    tally = _Tally(a.show, a.findings)
    todo = collections.deque(range(a.start, a.start + a.cases))
    slots = [_Slot(ctx, a.seed, a.timeout, a.real) for _ in range(min(a.workers, a.cases))]
    t0 = time.monotonic()
    next_progress = t0 + a.progress
    hard_s = a.timeout + 30.0  # the worker's own alarm should fire first; this ends a case stuck in C code

    def stop(_s, _f):
        raise KeyboardInterrupt

    signal.signal(signal.SIGTERM, stop)
    stopped = False
    restarts = 0
    try:
        while slots:
            now = time.monotonic()
            for k, s in enumerate(list(slots)):
                if s.case is not None and now - s.since > hard_s:
                    i, cmd, args = s.case
                    tally.add(cmd, "timeout", 0, args, f"killed after {now - s.since:.0f} s (stuck past the alarm)", now - s.since)
                    s.kill()
                    slots[slots.index(s)] = _Slot(ctx, a.seed, a.timeout, a.real)
                elif not s.proc.is_alive() and s.case is not None:
                    i, cmd, args = s.case
                    tally.add(cmd, "internal", 0, args, f"worker died (exit {s.proc.exitcode})", now - s.since)
                    s.kill()
                    slots[slots.index(s)] = _Slot(ctx, a.seed, a.timeout, a.real)
            for s in wait([s.conn for s in slots] + [s.proc.sentinel for s in slots], timeout=5.0):
                slot = next((x for x in slots if x.conn is s), None)
                if slot is None:
                    continue
                try:
                    msg = slot.conn.recv()
                except (EOFError, OSError):
                    continue  # died: handled above on the next turn
                if msg[0] == "ready":
                    slot.root = msg[1]
                if msg[0] == "start":
                    slot.case = (msg[1], msg[2], msg[3])
                    slot.since = time.monotonic()
                    continue
                if msg[0] == "done":
                    r = msg[1]
                    tally.add(r["cmd"], r["kind"], r["left"], slot.case[2], r["text"], r["seconds"])
                    tally.real += r["real"]
                    slot.case = None
                if todo:
                    slot.conn.send(todo.popleft())
                    slot.since = time.monotonic()
                else:
                    slot.conn.send(None)
                    slot.proc.join(30)
                    slots.remove(slot)
            for s in list(slots):
                if not s.proc.is_alive() and s.case is None:
                    restarts += 1
                    if restarts > 50:
                        raise RuntimeError("workers keep dying before any case; run with --workers 1 to see why")
                    # died between cases or while starting: start again (its case, if any, was counted)
                    s.kill()
                    slots[slots.index(s)] = _Slot(ctx, a.seed, a.timeout, a.real)
            if time.monotonic() >= next_progress:
                next_progress += a.progress
                g = tally.grand()
                n = tally.done()
                el = time.monotonic() - t0
                print(f"[{el:6.0f} s] {n}/{a.cases} cases ({n / max(el, 1e-9) * 60:.1f}/min): internal {g['internal']}, "
                      f"multi-line {g['multiline'] + g['usage']}, timeouts {g['timeout']}, left behind {g['left_behind']}",
                      flush=True)
    except KeyboardInterrupt:
        stopped = True
        print("stopped: counts of the cases finished so far", flush=True)
        for s in slots:
            s.kill()
    tally.table(time.monotonic() - t0)
    g = tally.grand()
    if stopped:
        return 130
    return 1 if g["internal"] or g["left_behind"] or g["timeout"] or g["multiline"] or g["usage"] else 0


if __name__ == "__main__":
    sys.exit(main())
