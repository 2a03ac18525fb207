"""Fuzz run of the command line over generated inputs: counts of results, clean errors and crashes.

Draws N inputs (default 10,000) with ``tests/fuzz_audio.py`` (valid files of every container and
subtype libsndfile writes, 1–16 channels, 8–192 kHz and out-of-range rates, NaN/Inf, DC,
full-scale squares, one sample, truncated and byte-flipped files, WAV/AIFF with extra chunks,
random bytes with and without audio magic numbers) plus one two-hour silent recording (streamed),
and runs ``voiceband analyze FILE --json -`` on each in-process (typer's CliRunner), every 25th
also as the recording of ``voiceband response``, and at the end ``voiceband batch`` over a folder
of 200 of them.

An outcome is
- a **result**: exit 0 and JSON that parses without NaN/Infinity;
- a **clean error**: exit 2 and exactly one line ``voiceband: <sentence>`` with no decoder wording;
- a **crash**: anything else (exit 3 = internal error, an exception, a traceback, several lines,
  NaN in JSON, bytes written to file descriptor 2 by a library, a worker process that died).

Inputs are run in child processes of ``--chunk`` inputs each, so a crash that kills the process
(a segmentation fault in a decoder) is counted, and the run goes on.  Target: 0 crashes.

Usage: python benchmarks/fuzz_inputs.py [--count N] [--seed S] [--jobs J] [--chunk K]
"""

from __future__ import annotations

import argparse
import collections
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))

DECODER_WORDING = ("SF_INFO", "Unspecified internal error", "libsndfile", "Error opening", "Error in WAV", "(possibly a pipe?)")


def _no_constant(name):
    raise ValueError(f"non-standard JSON token {name}")


def judge(res, leaked: str) -> tuple[str, str]:
    """(outcome, detail) of one CliRunner result and whatever reached fd 2."""
    if leaked.strip():
        return "crash", "stderr leak: " + leaked.strip().splitlines()[0][:160]
    if res.exception is not None and not isinstance(res.exception, SystemExit):
        return "crash", f"exception {type(res.exception).__name__}: {res.exception}"[:200]
    if res.exit_code == 0:
        try:
            json.loads(res.stdout, parse_constant=_no_constant)
        except ValueError as exc:
            return "crash", f"bad JSON: {exc}"[:200]
        return "result", ""
    lines = res.output.strip().splitlines()
    if res.exit_code != 2:
        return "crash", f"exit {res.exit_code}: {res.output.strip()[:200]}"
    if len(lines) != 1 or not lines[0].startswith("voiceband: ") or "Traceback" in res.output:
        return "crash", "not one sentence: " + res.output.strip()[:200]
    if any(w in lines[0] for w in DECODER_WORDING):
        return "crash", "decoder wording: " + lines[0][:200]
    import re

    return "error", re.sub(r"'[^']*'", "FILE", lines[0][11:])[:70]


class _Fd2Capture:
    """Collects what native code writes to file descriptor 2 during a call."""

    def __init__(self, tmpdir: Path):
        self.path = tmpdir / "fd2.txt"

    def __enter__(self):
        self.saved = os.dup(2)
        self.f = open(self.path, "w+b")
        os.dup2(self.f.fileno(), 2)
        return self

    def __exit__(self, *exc):
        os.dup2(self.saved, 2)
        os.close(self.saved)
        self.f.seek(0)
        self.text = self.f.read().decode("utf-8", "replace")
        self.f.close()
        return False


def child(start: int, stop: int, seed: int, workdir: Path) -> None:
    """Run inputs [start, stop) and print one JSON line per input."""
    import numpy as np
    from typer.testing import CliRunner

    from fuzz_audio import random_case, write_case
    from voiceband.cli.main import app

    runner = CliRunner()
    stim = workdir / "stimulus.wav"
    for i in range(start, stop):
        rng = np.random.default_rng([seed, i])
        d = workdir / f"c{i}"
        d.mkdir(exist_ok=True)
        print(json.dumps({"i": i, "stage": "write"}), flush=True)  # a death now is the generator's, not voiceband's
        while True:  # redraw until libsndfile can write the case
            case = random_case(rng)
            path = write_case(d / "input", case)
            if path is not None:
                break
        print(json.dumps({"i": i, "stage": "run"}), flush=True)
        out = {"i": i, "kind": case["kind"], "format": case.get("format", "bytes")}
        with _Fd2Capture(d) as cap:
            res = runner.invoke(app, ["analyze", str(path), "--json", "-"])
        out["outcome"], out["detail"] = judge(res, cap.text)
        if i % 25 == 0 and out["outcome"] != "crash" and stim.exists():
            with _Fd2Capture(d) as cap:
                res = runner.invoke(app, ["response", str(stim), str(path), "--json", "-"])
            out["response"], out["response_detail"] = judge(res, cap.text)
        keep = workdir / "batch_inputs"
        # (SD2 keeps its header in a companion resource file, which a move would leave behind)
        if len(list(keep.glob("*"))) < 200 and case.get("format") != "SD2":
            os.replace(path, keep / f"{i}_{path.name}")
        else:
            path.unlink(missing_ok=True)
        for f in d.iterdir():
            f.unlink()
        d.rmdir()
        print(json.dumps(out), flush=True)


def run_chunk(start: int, stop: int, seed: int, workdir: Path) -> list[dict]:
    """Run a chunk in a child; if it dies, record a crash for the input it was on and go on after it."""
    results: list[dict] = []
    while start < stop:
        proc = subprocess.run([sys.executable, __file__, "--child", str(start), str(stop), "--seed", str(seed),
                               "--workdir", str(workdir)], capture_output=True, text=True)
        lines = [json.loads(line) for line in proc.stdout.splitlines() if line.startswith("{")]
        got = [r for r in lines if "outcome" in r]
        results += got
        start = (got[-1]["i"] + 1) if got else start
        if proc.returncode != 0 and start < stop:
            stage = lines[-1].get("stage") if lines else "write"
            outcome = "generator_died" if stage == "write" else "crash"
            results.append({"i": start, "kind": "?", "format": "?", "outcome": outcome,
                            "detail": f"process died (exit {proc.returncode}) while {'writing' if stage == 'write' else 'analysing'} "
                                      f"the input: {proc.stderr.strip()[-200:]}"})
            start += 1
        elif proc.returncode == 0:
            break
    return results


def long_silence(workdir: Path) -> dict:
    """Two hours of 8 kHz digital silence (a sparse file), analysed in a child; its peak memory."""
    import struct

    p = workdir / "two_hours_silence.wav"
    fs, n = 8000, 8000 * 7200
    hdr = (b"RIFF" + struct.pack("<I", 36 + 2 * n) + b"WAVEfmt " + struct.pack("<IHHIIHH", 16, 1, 1, fs, 2 * fs, 2, 16)
           + b"data" + struct.pack("<I", 2 * n))
    with open(p, "wb") as f:
        f.write(hdr)
        f.truncate(len(hdr) + 2 * n)
    code = ("import resource,sys,json;from typer.testing import CliRunner;from voiceband.cli.main import app;"
            f"r=CliRunner().invoke(app,['analyze',{str(p)!r},'--json','-']);"
            "print(json.dumps({'exit':r.exit_code,'out':r.output[-300:] if r.exit_code else '',"
            "'rss_mb':resource.getrusage(resource.RUSAGE_SELF).ru_maxrss/1024}))")
    t = time.perf_counter()
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    elapsed = time.perf_counter() - t
    p.unlink()
    try:
        info = json.loads(proc.stdout.strip().splitlines()[-1])
    except (ValueError, IndexError):
        return {"outcome": "crash", "detail": proc.stderr[-300:]}
    outcome = "result" if info["exit"] == 0 and not proc.stderr.strip() else "crash"
    return {"outcome": outcome, "detail": f"{elapsed:.1f} s, peak RSS {info['rss_mb']:.0f} MB", **info}


def batch_over(folder: Path, workdir: Path) -> dict:
    """``voiceband batch`` over the kept inputs: every file must get exactly one row."""
    import csv

    files = sorted(p for p in folder.iterdir())
    out = workdir / "batch.csv"
    proc = subprocess.run([sys.executable, "-m", "voiceband.cli.main", "batch", *map(str, files), "--out", str(out),
                           "--workers", "2"], capture_output=True, text=True)
    with open(out, newline="") as f:
        rows = list(csv.DictReader(f))
    paths = [r["path"] for r in rows]
    ok = sorted(paths) == sorted(map(str, files)) and proc.returncode in (0, 1) and "Traceback" not in proc.stderr
    return {"files": len(files), "rows": len(rows), "ok_rows": sum(r["status"] == "ok" for r in rows),
            "exit": proc.returncode, "outcome": "result" if ok else "crash", "stderr": proc.stderr.strip()[-300:]}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--count", type=int, default=10_000)
    ap.add_argument("--seed", type=int, default=20261203)
    ap.add_argument("--jobs", type=int, default=2, help="child processes at once")
    ap.add_argument("--chunk", type=int, default=250)
    ap.add_argument("--child", nargs=2, type=int, help=argparse.SUPPRESS)
    ap.add_argument("--workdir", type=Path, help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        child(args.child[0], args.child[1], args.seed, args.workdir)
        return

    from concurrent.futures import ThreadPoolExecutor

    t0 = time.perf_counter()
    with tempfile.TemporaryDirectory(prefix="voiceband-fuzz-") as tmp:
        work = Path(tmp)
        (work / "batch_inputs").mkdir()
        subprocess.run([sys.executable, "-m", "voiceband.cli.main", "testsignal", "sweep", "--out",
                        str(work / "stimulus.wav"), "--duration-s", "2"], capture_output=True, check=True)
        chunks = [(s, min(s + args.chunk, args.count)) for s in range(0, args.count, args.chunk)]
        results: list[dict] = []
        with ThreadPoolExecutor(args.jobs) as ex:
            for part in ex.map(lambda c: run_chunk(c[0], c[1], args.seed, work), chunks):
                results += part
        silence = long_silence(work)
        batch = batch_over(work / "batch_inputs", work)
    elapsed = time.perf_counter() - t0

    counts = collections.Counter(r["outcome"] for r in results)
    resp = collections.Counter(r["response"] for r in results if "response" in r)
    by_kind = collections.defaultdict(collections.Counter)
    for r in results:
        by_kind[r["kind"]][r["outcome"]] += 1
    print(f"fuzz_inputs: {len(results)} generated inputs, seed {args.seed}, {elapsed:.0f} s")
    print(f"  analyze : {counts['result']} results, {counts['error']} clean errors, {counts['crash']} crashes"
          + (f" ({counts['generator_died']} inputs lost because the generator's encoder died writing them)"
             if counts["generator_died"] else ""))
    print(f"  response: {resp['result']} results, {resp['error']} clean errors, {resp['crash']} crashes "
          f"(every 25th input as the recording)")
    print(f"  two hours of silence, streamed: {silence['outcome']} ({silence['detail']})")
    print(f"  batch over {batch['files']} of the inputs: {batch['rows']} rows ({batch['ok_rows']} ok), exit {batch['exit']}, "
          f"{'each file once' if batch['outcome'] == 'result' else 'WRONG'}")
    print("  by kind: " + "; ".join(f"{k} {dict(v)}" for k, v in sorted(by_kind.items())))
    import re

    errors = collections.Counter(re.sub(r"\b\d+(\.\d+)?\b", "N", r["detail"]) for r in results if r["outcome"] == "error")
    print("  most common clean errors:")
    for e, n in errors.most_common(6):
        print(f"    {n:5d} × {e}")
    crashes = [r for r in results if r["outcome"] == "crash"] + [
        {"i": r["i"], "detail": "response: " + r["response_detail"]} for r in results if r.get("response") == "crash"]
    for r in crashes[:20]:
        print(f"  CRASH input {r['i']}: {r['detail']}")
    total_crashes = counts["crash"] + resp["crash"] + (silence["outcome"] == "crash") + (batch["outcome"] == "crash")
    print(f"crashes: {total_crashes} (target 0)")
    sys.exit(1 if total_crashes else 0)


if __name__ == "__main__":
    main()
