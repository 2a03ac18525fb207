"""Peak memory of ``voiceband testsignal`` against the length it writes (192 kHz, 16-bit).

Usage::

    python benchmarks/bench_testsignal_memory.py [--long]

Runs the command for 10 s and 300 s of each kind (``--long``: also an hour of tone, 1.4 GB of
output) in child processes and prints each one's peak resident memory (``wait4``), the seconds
it took, and the ratio of peak memory, longest to shortest.  Written in blocks, the peak must
not grow with the length (ratio near 1; an in-memory signal would need 8 bytes per sample,
2.8 GB for 300 s at 192 kHz before any copy).
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
import time


def _run(args: list[str]) -> tuple[float, float]:
    t0 = time.perf_counter()
    pid = os.fork()
    if pid == 0:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, 1)
        os.execv(sys.executable, [sys.executable, "-m", "voiceband.cli.main", *args])
    _, status, usage = os.wait4(pid, 0)
    if os.waitstatus_to_exitcode(status) != 0:
        raise SystemExit(f"voiceband {' '.join(args)} failed")
    return usage.ru_maxrss / 1024.0, time.perf_counter() - t0  # ru_maxrss is in KiB on Linux


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--long", action="store_true", help="also an hour of tone at 192 kHz")
    a = ap.parse_args()
    folder = tempfile.mkdtemp(prefix="vb-bench-ts-")
    try:
        for kind in ("tone", "multitone", "sweep"):
            lengths = [10, 300] + ([3600] if a.long and kind == "tone" else [])
            peaks = []
            for dur in lengths:
                if kind == "sweep" and dur > 600:
                    continue
                out = os.path.join(folder, f"{kind}{dur}.wav")
                mb, s = _run(["testsignal", kind, "--out", out, "--duration-s", str(dur), "--rate-hz", "192000", "--bits", "16"])
                size = os.path.getsize(out) / 1e6
                os.unlink(out)
                peaks.append(mb)
                print(f"{kind:10s} {dur:5d} s at 192 kHz: peak RSS {mb:7.1f} MB, {s:6.1f} s, file {size:7.1f} MB")
            print(f"{kind:10s} peak RSS ratio, {lengths[-1]} s / {lengths[0]} s: {peaks[-1] / peaks[0]:.2f}")
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
