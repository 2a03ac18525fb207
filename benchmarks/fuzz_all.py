"""Fuzz every voiceband command with generated arguments, files and destinations.

Usage::

    python benchmarks/fuzz_all.py [--cases 10000] [--seed 1] [--workers 2] [--show 5]

Each case runs one command in-process (typer's test runner, one process per worker) with
arguments drawn from pools of good and bad values: recordings (good, short, empty, text,
truncated, NaN, huge finite samples, random bytes that look like MP3, 8 kHz and 192 kHz,
stereo), special paths (a folder, ``/dev/zero``, a named pipe, a socket, a missing file, a
name over 255 bytes, a file called ``-``, a name that is not UTF-8), destinations (new, existing,
a folder, ``/proc``, under a regular file, a name over 255 bytes, a name ending in ``/``) and
numbers (typical, zero, negative, tiny, huge, NaN, infinite, not a number).

It prints how many cases ended in

* **results** (exit 0),
* **clean errors** (non-zero exit with one line on stderr starting ``voiceband:``),
* **internal errors** (exit 3, a traceback, or an exception escaping the command),
* **multi-line errors** (non-zero exit with more than one line on stderr; the argument parser's
  own usage block is counted here and shown apart),
* **left behind** (a temporary ``.vb-*.part*`` file of ours still present after the case),

per command and in total.  The target is zero internal errors, zero multi-line errors and
nothing left behind.  Exit status 1 if any internal error or leftover was found.
"""

from __future__ import annotations

import argparse
import collections
import json
import os
import random
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


def _classify(res, code: int) -> str:
    err = (res.stderr if hasattr(res, "stderr") else "") or ""
    out = res.stdout or ""
    if res.exception is not None and not isinstance(res.exception, SystemExit):
        return "internal"
    if code == 3 or "Traceback" in err or "Traceback" in out or "internal error" in err:
        return "internal"
    if code == 0:
        return "result"
    lines = [ln for ln in err.splitlines() if ln.strip()]
    if len(lines) == 1 and lines[0].startswith("voiceband: "):
        return "clean"
    return "usage" if "Usage:" in err else "multiline"


def _worker(job: tuple[int, int, int]) -> dict:
    seed, start, count = job
    os.environ.setdefault("MPLBACKEND", "Agg")
    from typer.testing import CliRunner

    from voiceband.cli.main import app

    root = Path(tempfile.mkdtemp(prefix="vbfuzz-"))
    cwd = os.getcwd()
    try:
        files = _make_files(root)
        os.chdir(root / "in")  # relative names ("-", "./-lead.wav", ".") resolve here
        runner = CliRunner()
        counts: dict = collections.defaultdict(collections.Counter)
        examples: dict = collections.defaultdict(list)
        leftovers = 0

        def alarm(_s, _f):
            raise _Timeout()

        signal.signal(signal.SIGALRM, alarm)
        for i in range(start, start + count):
            rng = random.Random(seed * 1_000_003 + i)
            out = root / f"out{i}"
            out.mkdir()
            case = _Case(rng, files, out)
            cmd = rng.choices(list(_WEIGHTS), weights=list(_WEIGHTS.values()))[0]
            args = getattr(case, cmd)()
            signal.alarm(_TIMEOUT_S)
            try:
                res = runner.invoke(app, args)
                kind = _classify(res, res.exit_code)
            except _Timeout:
                res, kind = None, "internal"
            finally:
                signal.alarm(0)
            counts[cmd][kind] += 1
            if kind in ("internal", "multiline", "usage") and len(examples[kind]) < 8:
                text = "timeout" if res is None else (res.stderr or "")[-400:] + (
                    repr(res.exception) if res.exception and not isinstance(res.exception, SystemExit) else "")
                examples[kind].append((args, text))
            for d in (out, root / "in", out / "newdir"):
                if d.is_dir():
                    left = [p.name for p in d.iterdir() if p.name.startswith(".vb-")]
                    if left:
                        leftovers += len(left)
                        counts[cmd]["left_behind"] += len(left)
                        for n in left:
                            (d / n).unlink()
            shutil.rmtree(out, ignore_errors=True)
        return {"counts": {k: dict(v) for k, v in counts.items()}, "examples": dict(examples), "leftovers": leftovers}
    finally:
        # the commands installed their SIGTERM/SIGHUP handlers in this worker; the pool ends it with SIGTERM
        signal.signal(signal.SIGTERM, signal.SIG_DFL)
        os.chdir(cwd)
        shutil.rmtree(root, ignore_errors=True)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cases", type=int, default=10000)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--show", type=int, default=3, help="examples shown per failure kind")
    a = ap.parse_args()
    per = -(-a.cases // a.workers)
    jobs = [(a.seed, w * per, min(per, a.cases - w * per)) for w in range(a.workers) if a.cases - w * per > 0]
    t0 = time.perf_counter()
    if a.workers == 1:
        results = [_worker(jobs[0])]
    else:
        import multiprocessing as mp

        with mp.get_context("spawn").Pool(a.workers) as pool:
            results = pool.map(_worker, jobs)
    total: dict = collections.defaultdict(collections.Counter)
    examples: dict = collections.defaultdict(list)
    for r in results:
        for cmd, c in r["counts"].items():
            total[cmd].update(c)
        for k, v in r["examples"].items():
            examples[k].extend(v)
    kinds = ["result", "clean", "internal", "multiline", "usage", "left_behind"]
    print(f"{'command':12s}" + "".join(f"{k:>13s}" for k in kinds) + f"{'cases':>8s}")
    grand = collections.Counter()
    for cmd in sorted(total):
        c = total[cmd]
        grand.update(c)
        n = sum(c[k] for k in kinds[:5])
        print(f"{cmd:12s}" + "".join(f"{c[k]:13d}" for k in kinds) + f"{n:8d}")
    n = sum(grand[k] for k in kinds[:5])
    print(f"{'all':12s}" + "".join(f"{grand[k]:13d}" for k in kinds) + f"{n:8d}")
    print(f"{n} cases in {time.perf_counter() - t0:.0f} s; results {grand['result']}, clean errors {grand['clean']}, "
          f"internal errors {grand['internal']}, multi-line errors {grand['multiline'] + grand['usage']} "
          f"(of which the argument parser's usage block {grand['usage']}), left behind {grand['left_behind']}")
    for k in ("internal", "multiline", "usage"):
        for args, text in examples.get(k, [])[: a.show]:
            print(f"--- {k}: voiceband {' '.join(map(str, args))}\n{text.strip()}")
    return 1 if grand["internal"] or grand["left_behind"] else 0


if __name__ == "__main__":
    sys.exit(main())
