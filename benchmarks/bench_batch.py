"""Throughput and memory of ``voiceband batch`` on the local process pool, measured in one run.

Generates (speech-like test signals, different content in every file):

- 200 short files (20 s, 16 kHz, 16-bit mono);
- 4 one-hour files (48 kHz, 16-bit mono, 345 MB each);

then analyses each set with 1 and with 2 worker processes and prints files per second, audio
hours per minute of wall time, the scaling ratio (2 workers / 1 worker) and the peak resident
memory of each worker process (target: within the single-file analysis budget of 250 MB that
``bench_analyze.py`` checks) and of the coordinating process.  The machine's load average is
printed too: the ratio means little when other jobs hold the cores.

Each run writes a CSV through the same code as the command (``run_batch``); its workers run the
command's analysis task and note their peak RSS after each file.

Usage: python benchmarks/bench_batch.py [--keep DIR] [--short N] [--long N] [--skip-long]
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
if str(HERE) not in sys.path:
    sys.path.insert(0, str(HERE))

#: Single-file analysis memory budget (MB), the target bench_analyze.py checks.
RSS_BUDGET_MB = 250.0


def analyse_noting_rss(path, channel, profile=None):
    """The command's analysis task, then this worker's peak RSS written to ``$VB_BENCH_RSS_DIR/<pid>``."""
    from voiceband.batch.tasks import analyse_task

    res = analyse_task(path, channel, profile)
    folder = os.environ.get("VB_BENCH_RSS_DIR")
    if folder:
        Path(folder, str(os.getpid())).write_text(str(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0))
    return res


def _speechlike_minute(fs: int, seed: int):
    import numpy as np

    rng = np.random.default_rng(seed)
    n = 60 * fs
    spec = np.fft.rfft(rng.standard_normal(n))
    fr = np.fft.rfftfreq(n, 1 / fs)
    x = np.fft.irfft(spec / np.sqrt(1 + (fr / 500.0) ** 2) * (fr > 100), n)
    t = np.arange(n) / fs
    env = np.clip(np.sin(2 * np.pi * 4.0 * t + rng.uniform(0, 6)), 0, None) ** 2 * (np.sin(2 * np.pi * 0.2 * t) > -0.4)
    y = x * env
    return y / (np.sqrt(np.mean(y**2)) + 1e-12)


def make_files(folder: Path, n_short: int, n_long: int) -> tuple[list[Path], list[Path]]:
    import numpy as np
    import soundfile as sf

    short_dir, long_dir = folder / "short", folder / "long"
    short_dir.mkdir(parents=True, exist_ok=True)
    long_dir.mkdir(parents=True, exist_ok=True)
    base16 = _speechlike_minute(16000, 1)
    shorts = []
    for i in range(n_short):
        p = short_dir / f"s{i:04d}.wav"
        if not p.exists():
            rng = np.random.default_rng(1000 + i)
            start = int(rng.integers(0, 40 * 16000))
            y = base16[start:start + 20 * 16000] * 10 ** (rng.uniform(-30, -12) / 20)
            y = y + 10 ** (rng.uniform(-75, -50) / 20) * rng.standard_normal(y.size)
            sf.write(str(p), np.clip(y, -0.99, 0.99), 16000, subtype="PCM_16")
        shorts.append(p)
    base48 = _speechlike_minute(48000, 2)
    longs = []
    for i in range(n_long):
        p = long_dir / f"hour{i}.wav"
        if not p.exists():
            rng = np.random.default_rng(2000 + i)
            with sf.SoundFile(str(p), "w", 48000, 1, "PCM_16") as f:
                for _ in range(60):
                    y = np.roll(base48, int(rng.integers(0, base48.size))) * 10 ** (rng.uniform(-26, -14) / 20)
                    f.write(np.clip(y + 10 ** (-70 / 20) * rng.standard_normal(y.size), -0.99, 0.99))
        longs.append(p)
    return shorts, longs


def run(files: list[Path], workers: int, out: Path, rss_dir: Path) -> dict:
    from voiceband.batch import BatchSettings, run_batch
    from voiceband.batch.executors import LocalPool
    from voiceband.batch.rows import COLUMNS, column_types
    from voiceband.batch.writers import open_output

    shutil.rmtree(rss_dir, ignore_errors=True)
    rss_dir.mkdir()
    output = open_output(out, COLUMNS, column_types(), force=True)
    t0 = time.perf_counter()
    s = run_batch(files, BatchSettings(), output, LocalPool(workers), analyse=analyse_noting_rss)
    wall = time.perf_counter() - t0
    rss = [float(p.read_text()) for p in rss_dir.iterdir()]
    return {"wall": wall, "files": s.analysed + s.copied, "failed": s.failed, "audio_h": s.audio_s / 3600.0,
            "worker_rss": max(rss) if rss else float("nan"), "workers_seen": len(rss)}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--keep", type=Path, help="folder for the generated files (kept for the next run)")
    ap.add_argument("--short", type=int, default=200)
    ap.add_argument("--long", type=int, default=4)
    ap.add_argument("--skip-long", action="store_true")
    ap.add_argument("--make", action="store_true", help=argparse.SUPPRESS)
    a = ap.parse_args()
    if a.make:
        make_files(a.keep, a.short, 0 if a.skip_long else a.long)
        return
    folder = a.keep or Path(tempfile.mkdtemp(prefix="vb_bench_batch_"))
    rss_dir = folder / "rss"
    os.environ["VB_BENCH_RSS_DIR"] = str(rss_dir)
    t0 = time.perf_counter()
    # generate in a child process, so this process's peak RSS is the coordinator's own
    import subprocess

    subprocess.run([sys.executable, __file__, "--make", "--keep", str(folder), "--short", str(a.short), "--long", str(a.long)]
                   + (["--skip-long"] if a.skip_long else []), check=True)
    shorts = sorted((folder / "short").glob("s*.wav"))[: a.short]
    longs = [] if a.skip_long else sorted((folder / "long").glob("hour*.wav"))[: a.long]
    # start the pool's fork server (it imports and warms up the analysis once) outside the timed runs
    from voiceband.batch.executors import LocalPool

    t1 = time.perf_counter()
    pool = LocalPool(1)
    pool.submit(os.getpid).result()
    pool.close()
    startup = time.perf_counter() - t1
    print(f"generated {len(shorts)} short and {len(longs)} one-hour files in {time.perf_counter() - t0:.0f} s "
          f"(load average before runs: {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs); "
          f"worker fork server start-up {startup:.1f} s, once per command")
    sets = [("200 short files (20 s, 16 kHz)" if a.short == 200 else f"{a.short} short files", shorts)]
    if longs:
        sets.append((f"{len(longs)} one-hour files (48 kHz)", longs))
    try:
        for name, files in sets:
            res = {}
            for w in (1, 2):
                r = run(files, w, folder / f"out_{w}.csv", rss_dir)
                res[w] = r
                print(f"{name}, {w} worker{'s' if w > 1 else ' '}: {r['wall']:7.1f} s  {r['files'] / r['wall']:6.2f} files/s  "
                      f"{r['audio_h'] / (r['wall'] / 60):6.2f} audio h/min  peak RSS per worker {r['worker_rss']:.0f} MB "
                      f"({'within' if r['worker_rss'] <= RSS_BUDGET_MB else 'OVER'} the {RSS_BUDGET_MB:.0f} MB budget)  "
                      f"load {os.getloadavg()[0]:.1f}")
            print(f"{name}: scaling 2 workers / 1 worker = {res[1]['wall'] / res[2]['wall']:.2f}x (ideal 2.00x on 2 free cores)")
    finally:
        if a.keep is None:
            shutil.rmtree(folder, ignore_errors=True)
    print(f"coordinating process peak RSS: {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB")


if __name__ == "__main__":
    main()
