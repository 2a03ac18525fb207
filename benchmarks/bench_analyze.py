"""Speed and memory of ``voiceband analyze`` on long files, as ratios measured in one run.

Generates a 1-hour (and, with --long, a 3-hour) 48 kHz mono 16-bit WAV of speech-like
signal, then runs as separate processes, in the same run:

1. a minimal Python process that only decodes the file in blocks with soundfile (reference);
2. ``voiceband analyze FILE --json -`` (the whole command, import time included);
3. a straightforward whole-file peer (read everything, scipy.signal.welch, 4x true peak over
   every sample, lfilter envelope, numpy run detection) as the baseline a user would write.

Prints wall times, the ratios to the decode-only process (target for voiceband: <= 6),
and peak RSS (target <= 250 MB, and within 10 % between the 1-hour and 3-hour files).

Usage: python benchmarks/bench_analyze.py [--long] [--keep DIR] [--no-peer]
"""

from __future__ import annotations

import argparse
import os
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
for b in sf.blocks(sys.argv[1], blocksize=1 << 18, dtype="float64"):
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
    with sf.SoundFile(str(path), "w", FS, 1, "PCM_16") as f:
        for _ in range(int(round(hours * 60))):
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
            f.write(np.clip(y, -0.99, 0.99))


def run(cmd: list[str]) -> tuple[float, float, int]:
    """Run a process; return (wall seconds, peak RSS MB, exit code)."""
    t0 = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, ru = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t0
    p.returncode = os.waitstatus_to_exitcode(status)
    err = p.stderr.read().decode() if p.stderr else ""
    if p.returncode != 0:
        print(f"  command failed ({p.returncode}): {' '.join(cmd)}\n  {err.strip()[:400]}")
    return wall, ru.ru_maxrss / 1024.0, p.returncode


def voiceband_cmd() -> list[str]:
    return [sys.executable, "-m", "voiceband.cli.main", "analyze"]


def main() -> None:
    if len(sys.argv) == 4 and sys.argv[1] == "--make":
        make_file(Path(sys.argv[2]), float(sys.argv[3]))
        return
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--long", action="store_true", help="also run a 3-hour file for the memory check")
    ap.add_argument("--no-peer", action="store_true", help="skip the whole-file peer baseline")
    ap.add_argument("--keep", type=Path, help="folder to keep the generated files in")
    a = ap.parse_args()
    folder = a.keep or Path(tempfile.mkdtemp(prefix="vb_bench_"))
    folder.mkdir(parents=True, exist_ok=True)
    sizes = [1.0] + ([3.0] if a.long else [])
    rss = {}
    for hours in sizes:
        path = folder / f"speechlike_{hours:g}h.wav"
        if not path.exists():
            t0 = time.perf_counter()
            # generate in a child process so this process stays small: a forked child's peak RSS
            # starts from its parent's, which would inflate every measurement below
            subprocess.run([sys.executable, __file__, "--make", str(path), str(hours)], check=True)
            print(f"generated {path.name} ({path.stat().st_size / 1e6:.0f} MB) in {time.perf_counter() - t0:.1f} s")
        dec, dec_rss, _ = run([sys.executable, "-c", DECODE_ONLY, str(path)])
        vb, vb_rss, rc = run(voiceband_cmd() + [str(path), "--json", "-"])
        rss[hours] = vb_rss
        print(f"\n{hours:g}-hour 48 kHz mono 16-bit file")
        print(f"  decode-only process     : {dec:7.2f} s   peak RSS {dec_rss:7.1f} MB")
        print(f"  voiceband analyze --json: {vb:7.2f} s   peak RSS {vb_rss:7.1f} MB   exit {rc}")
        print(f"  ratio voiceband / decode: {vb / dec:7.2f}   (target <= 6)")
        print(f"  peak RSS target <= 250 MB: {'met' if vb_rss <= 250 else 'NOT met'}")
        if not a.no_peer and hours == 1.0:
            peer, peer_rss, _ = run([sys.executable, "-c", PEER, str(path)])
            print(f"  whole-file peer baseline: {peer:7.2f} s   peak RSS {peer_rss:7.1f} MB")
            print(f"  ratio peer / decode     : {peer / dec:7.2f}")
            print(f"  ratio peer / voiceband  : {peer / vb:7.2f}")
    if len(rss) == 2:
        growth = rss[3.0] / rss[1.0] - 1
        print(f"\npeak RSS 3-hour vs 1-hour: {100 * growth:+.1f} % (target within 10 %)")


if __name__ == "__main__":
    main()
