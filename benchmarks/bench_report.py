"""Speed of ``voiceband report`` against ``voiceband analyze`` on a 10-minute recording, measured in one run.

Builds a 10-minute 48 kHz mono 16-bit WAV by repeating the corpus's clean talker
(corpus_synthetic/speech_medium_normal.wav, 12 s) through a 300-2700 Hz band-pass, then runs, as
separate whole processes (import time included), alternately and ``--repeat`` times each:

1. ``voiceband analyze FILE --json -``;
2. ``voiceband report FILE --out DIR --force`` (one pass over the audio, figures from the
   accumulated statistics, HTML, JSON, Markdown and PNG files);
3. with ``--before``: the same report with ``--before`` another 10-minute file (two analyses).

Prints the best wall time of each and the ratio report / analyze (target: at most 3).

Usage: python benchmarks/bench_report.py [--repeat N] [--before] [--keep DIR]
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import soundfile as sf

ROOT = Path(__file__).resolve().parents[1]
TALKER = ROOT / "corpus_synthetic" / "speech_medium_normal.wav"
MINUTES = 10.0


def make_file(path: Path, *, low_hz: float, high_hz: float) -> None:
    from scipy import signal

    x, fs = sf.read(str(TALKER))
    reps = int(np.ceil(MINUTES * 60 * fs / x.size))
    y = np.tile(x, reps)[: int(MINUTES * 60 * fs)]
    sos = signal.butter(4, [low_hz, high_hz], btype="bandpass", fs=fs, output="sos")
    y = 2.0 * signal.sosfilt(sos, y)
    sf.write(str(path), y, fs, subtype="PCM_16")


def timed(cmd: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - t0


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--before", action="store_true", help="also time a before/after report")
    ap.add_argument("--keep", type=Path, help="folder for the test files (kept)")
    args = ap.parse_args()
    exe = [sys.executable, "-m", "voiceband.cli.main"]
    with tempfile.TemporaryDirectory() as tmp:
        d = args.keep or Path(tmp)
        d.mkdir(parents=True, exist_ok=True)
        after, before = d / "after_10min.wav", d / "before_10min.wav"
        make_file(after, low_hz=300.0, high_hz=2700.0)
        if args.before:
            make_file(before, low_hz=100.0, high_hz=5000.0)
        jobs = {"analyze": exe + ["analyze", str(after), "--json", "-"],
                "report": exe + ["report", str(after), "--out", str(d / "rep"), "--force"]}
        if args.before:
            jobs["report --before"] = exe + ["report", str(after), "--before", str(before), "--out", str(d / "rep2"),
                                             "--force"]
        best = {k: float("inf") for k in jobs}
        for _ in range(max(1, args.repeat)):
            for k, cmd in jobs.items():
                best[k] = min(best[k], timed(cmd))
    print(f"10-minute 48 kHz recording, best of {args.repeat} (whole process, seconds):")
    for k, v in best.items():
        print(f"  {k:<16} {v:6.2f} s   ratio to analyze {v / best['analyze']:.2f}")
    print(f"report / analyze = {best['report'] / best['analyze']:.2f} (target <= 3)")


if __name__ == "__main__":
    main()
