"""Speed and memory of ``voiceband analyze`` and ``voiceband response``, as ratios measured in one run.

Makes its test files once (kept in ``--keep DIR``, else a temporary folder):

- a 1-hour (and, with ``--long``, a 3-hour) 48 kHz mono 16-bit WAV of speech-like signal,
- a 1-second file of the same kind,
- a 20 s exponential sweep (24-bit) and its recording through a 300-3400 Hz band-pass.

Then times whole processes (start-up included), each pair A/B run in turn A B A B ... so a
machine whose speed drifts (other jobs) moves both alike, and prints the median of the
pair-by-pair ratios of wall time and of CPU time (user + system, the kernel's accounting):

1. ``voiceband analyze FILE --json -`` against a minimal process that only decodes the same
   file in blocks with soundfile (target: <= 3x, on the 1-hour and the 3-hour file);
2. ``voiceband analyze`` of the 1-second file: median wall time (target: <= 0.6 s) and its
   ratio to the decode-only process of that file;
3. ``voiceband response SWEEP RECORDING --json -`` against decoding those two files
   (target: <= 5x);
4. peak RSS of analyze (target: <= 250 MB, and flat: 3-hour within 10 % of 1-hour).

Optionally (``--peer``) a straightforward whole-file numpy/scipy pipeline on the 1-hour file,
for scale.  The load average is printed: on a busy machine trust the CPU ratios more than
the wall ratios.

Usage: python benchmarks/bench_analyze.py [--long] [--runs N] [--keep DIR] [--peer]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import soundfile as sf

FS = 48000

DECODE_ONLY = r"""
import sys, soundfile as sf
n = 0
for path in sys.argv[1:]:
    for b in sf.blocks(path, blocksize=1 << 18, dtype="float64"):
        n += b.shape[0]
print(n)
"""

PEER = r"""
import sys, numpy as np, soundfile as sf, scipy.signal as ss
x, fs = sf.read(sys.argv[1], dtype="float64")
peak = np.max(np.abs(x))
rms = np.sqrt(np.mean(x * x))
tp = np.max(np.abs(ss.resample_poly(x, 4, 1)))
f, pxx = ss.welch(x, fs, nperseg=4096)
g = np.exp(-1 / (0.03 * fs))
env = ss.lfilter([(1 - g)], [1, -g], ss.lfilter([(1 - g)], [1, -g], np.abs(x)))
act = np.mean(env > 10 ** (-50 / 20))
at_max = np.abs(x) >= peak
runs = np.count_nonzero(np.diff(at_max.astype(np.int8)) == 1)
print(peak, rms, tp, act, runs, pxx.sum())
"""


def make_file(path: Path, hours: float, seed: int = 1) -> None:
    """Speech-like test signal: noise with a ~4 Hz syllabic envelope, pauses and a -6 dB/oct tilt."""
    rng = np.random.default_rng(seed)
    minute = 60 * FS
    total = int(round(hours * 3600 * FS))
    with sf.SoundFile(str(path), "w", FS, 1, "PCM_16") as f:
        done = 0
        while done < total:
            white = rng.standard_normal(minute)
            spec = np.fft.rfft(white)
            fr = np.fft.rfftfreq(minute, 1 / FS)
            shape = 1 / np.sqrt(1 + (fr / 500.0) ** 2) * (fr > 100)
            x = np.fft.irfft(spec * shape, minute)
            t = np.arange(minute) / FS
            env = np.clip(np.sin(2 * np.pi * 4.0 * t + rng.uniform(0, 6)), 0, None) ** 2
            env *= (np.sin(2 * np.pi * 0.2 * t) > -0.4)  # phrases and pauses
            y = x * env
            y *= 10 ** (-20 / 20) / (np.sqrt(np.mean(y**2)) + 1e-12)
            y += 10 ** (-70 / 20) * rng.standard_normal(minute)
            n = min(minute, total - done)
            f.write(np.clip(y[:n], -0.99, 0.99))
            done += n


def make_sweep_pair(stimulus: Path, recording: Path, seconds: float = 20.0) -> None:
    """A 20 s exponential sweep (24-bit) and its recording through a 300-3400 Hz band-pass, delayed 0.3 s."""
    import scipy.signal as ss

    from voiceband import audio
    from voiceband.synth.sweep import exponential_sweep

    x = np.asarray(exponential_sweep(duration_s=seconds, sample_rate_hz=FS).samples)
    audio.write(stimulus, x, FS, subtype="PCM_24", force=True)
    sos = ss.butter(2, [300.0, 3400.0], "bandpass", fs=FS, output="sos")
    y = ss.sosfilt(sos, np.concatenate([np.zeros(int(0.3 * FS)), x, np.zeros(FS)]))
    y += 1e-4 * np.random.default_rng(1).standard_normal(y.size)
    audio.write(recording, y, FS, subtype="PCM_24", force=True)


def run(cmd: list[str]) -> tuple[float, float, float, int]:
    """Run a process; return (wall s, CPU s = user + system, peak RSS MB, exit code)."""
    t0 = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, ru = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t0
    code = os.waitstatus_to_exitcode(status)
    if code != 0:
        err = p.stderr.read().decode() if p.stderr else ""
        print(f"  command failed ({code}): {' '.join(cmd)}\n  {err.strip()[:400]}")
    return wall, ru.ru_utime + ru.ru_stime, ru.ru_maxrss / 1024.0, code


def paired(a: list[str], b: list[str], runs: int) -> dict:
    """Run A and B in turn (after one unmeasured warm-up each); medians and pair-by-pair ratios."""
    run(a)
    run(b)
    ra, rb = [], []
    for _ in range(runs):
        ra.append(run(a))
        rb.append(run(b))
    med = statistics.median
    return {
        "a_wall": med(r[0] for r in ra), "b_wall": med(r[0] for r in rb),
        "a_cpu": med(r[1] for r in ra), "b_cpu": med(r[1] for r in rb),
        "a_rss": max(r[2] for r in ra), "b_rss": max(r[2] for r in rb),
        "wall_ratio": med(x[0] / y[0] for x, y in zip(ra, rb)),
        "cpu_ratio": med(x[1] / y[1] for x, y in zip(ra, rb)),
        "wall_ratios": [x[0] / y[0] for x, y in zip(ra, rb)],
        "ok": all(r[3] == 0 for r in ra + rb),
    }


def verdict(value: float, target: float) -> str:
    return "met" if value <= target else "NOT met"


def show(name: str, r: dict, target: float | None, what: str) -> None:
    spread = ", ".join(f"{v:.2f}" for v in sorted(r["wall_ratios"]))
    print(f"\n{name}")
    print(f"  {what:34s} wall {r['a_wall']:7.2f} s   CPU {r['a_cpu']:7.2f} s   peak RSS {r['a_rss']:6.1f} MB")
    print(f"  {'reference':34s} wall {r['b_wall']:7.2f} s   CPU {r['b_cpu']:7.2f} s   peak RSS {r['b_rss']:6.1f} MB")
    goal = "" if target is None else (f"   (target <= {target:g}: wall {verdict(r['wall_ratio'], target)}, "
                                      f"CPU {verdict(r['cpu_ratio'], target)})")
    print(f"  ratio, median of pairs: wall {r['wall_ratio']:.2f}  CPU {r['cpu_ratio']:.2f}{goal}")
    print(f"  wall ratios of the pairs: {spread}")


def main() -> None:
    if len(sys.argv) == 4 and sys.argv[1] == "--make":
        make_file(Path(sys.argv[2]), float(sys.argv[3]))
        return
    if len(sys.argv) == 4 and sys.argv[1] == "--make-sweep":
        make_sweep_pair(Path(sys.argv[2]), Path(sys.argv[3]))
        return
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--long", action="store_true", help="also run a 3-hour file (speed and the flat-memory check)")
    ap.add_argument("--peer", action="store_true", help="also run a whole-file numpy/scipy pipeline on the 1-hour file")
    ap.add_argument("--runs", type=int, default=5, help="measured pairs per comparison (default 5)")
    ap.add_argument("--keep", type=Path, help="folder to keep the generated files in")
    a = ap.parse_args()
    folder = a.keep or Path(tempfile.mkdtemp(prefix="vb_bench_"))
    folder.mkdir(parents=True, exist_ok=True)
    py = sys.executable
    vb = [py, "-m", "voiceband.cli.main"]
    decode = [py, "-c", DECODE_ONLY]

    files = {h: folder / (f"speechlike_{h:g}h.wav" if h >= 1 else "speechlike_1s.wav")
             for h in ([1 / 3600, 1.0] + ([3.0] if a.long else []))}
    for hours, path in files.items():
        if not path.exists():
            # in a child process, so this process stays small (a child's peak RSS starts from its parent's)
            subprocess.run([py, __file__, "--make", str(path), str(hours)], check=True)
    sweep, rec = folder / "sweep_20s.wav", folder / "sweep_20s_recorded.wav"
    if not (sweep.exists() and rec.exists()):
        subprocess.run([py, __file__, "--make-sweep", str(sweep), str(rec)], check=True)

    # Byte-compile the package once, as a wheel install does: an editable checkout run with
    # PYTHONDONTWRITEBYTECODE=1 would otherwise compile every module on every run (~0.1 s).
    import voiceband

    subprocess.run([py, "-m", "compileall", "-q", str(Path(voiceband.__file__).parent)], check=True)
    print(f"load average at start: {' '.join(f'{v:.1f}' for v in os.getloadavg())} on {os.cpu_count()} cores; "
          f"{a.runs} pairs per comparison, run in turn")
    rss = {}
    for hours, path in files.items():
        r = paired(vb + ["analyze", str(path), "--json", "-"], decode + [str(path)], a.runs)
        if hours < 0.01:
            show("1-second 48 kHz mono 16-bit file", r, None, "voiceband analyze --json -")
            print(f"  analyze of a 1-second file: median wall {r['a_wall']:.2f} s "
                  f"(target <= 0.6 s: {verdict(r['a_wall'], 0.6)}), CPU {r['a_cpu']:.2f} s")
            continue
        rss[hours] = r["a_rss"]
        show(f"{hours:g}-hour 48 kHz mono 16-bit file", r, 3.0, "voiceband analyze --json -")
        print(f"  peak RSS target <= 250 MB: {verdict(r['a_rss'], 250.0)}")
        if a.peer and hours == 1.0:
            peer = paired([py, "-c", PEER, str(path)], decode + [str(path)], max(1, a.runs // 2))
            show("whole-file numpy/scipy pipeline, 1-hour file (for scale)", peer, None, "pipeline")
    r = paired(vb + ["response", str(sweep), str(rec), "--json", "-"], decode + [str(sweep), str(rec)], a.runs)
    show("20 s sweep: voiceband response --json - vs decoding its two files", r, 5.0, "voiceband response --json -")
    if len(rss) == 2:
        growth = rss[3.0] / rss[1.0] - 1
        print(f"\npeak RSS 3-hour vs 1-hour: {100 * growth:+.1f} % (target within 10 %: {verdict(abs(growth), 0.10)})")
    print(f"\nload average at end: {' '.join(f'{v:.1f}' for v in os.getloadavg())}")


if __name__ == "__main__":
    main()
