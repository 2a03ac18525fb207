"""Speed of the cutoff sweep, as ratios measured in one run.

Prints:

1. candidates scored per second by :func:`voiceband.design.sweep.sweep_cutoffs` on a 40 x 40 grid of
   high-pass and low-pass cutoffs at 5 channel SNRs (band-gain SII model, no audio), in process;
2. the whole ``voiceband sweep`` command on that grid against one ``voiceband chain`` evaluation, both as
   whole processes (start-up included), and their ratio (target: the sweep within 3x the chain command,
   i.e. start-up dominates);
3. the peer baseline: the same grid done by filtering speech audio with every candidate pair and
   analysing the output (Welch spectra, band gains, SII at the 5 SNRs, occupied bandwidth), candidates
   per second, and the ratio of 1 to 3.

Usage: python benchmarks/bench_sweep.py [--repeats N] [--peer-candidates N]
"""

from __future__ import annotations

import argparse
import shutil
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
LOW = "100:490:10"      # 40 high-pass cutoffs
HIGH = "2000:3950:50"   # 40 low-pass cutoffs
SNRS = (0.0, 5.0, 10.0, 15.0, 20.0)
CHAIN = ROOT / "corpus_synthetic" / "chains" / "board_b_ladder.toml"


def best_time(fn, repeats: int) -> float:
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def command() -> list[str]:
    exe = shutil.which("voiceband")
    return [exe] if exe else [sys.executable, "-m", "voiceband.cli.main"]


def run(args: list[str]) -> None:
    subprocess.run(command() + args, check=True, stdout=subprocess.DEVNULL, cwd=ROOT)


def peer(lows, highs, n_candidates: int) -> tuple[float, int]:
    """Seconds per candidate when each pair filters the speech audio and the output is analysed."""
    from scipy import signal

    from voiceband.chain import Filter
    from voiceband.design.compare import default_speech
    from voiceband.intelligibility import channel_sii, standard_speech_spectrum
    from voiceband.intelligibility.tables import band_procedure
    from voiceband.measurement.bandwidth import occupied_bandwidth
    from voiceband.measurement.spectrum import band_powers

    x, fs = default_speech()
    table = band_procedure("one-third-octave")
    f, px = signal.welch(x, fs, nperseg=4096)
    p_in = band_powers(px, f, table.lower_hz, table.upper_hz)
    speech = standard_speech_spectrum("normal")
    pairs = [(lo, hi) for lo in lows for hi in highs if lo < hi]
    pick = np.linspace(0, len(pairs) - 1, min(n_candidates, len(pairs))).round().astype(int)
    t0 = time.perf_counter()
    for k in pick:
        lo, hi = pairs[k]
        y = Filter(kind="highpass", order=4, cutoff_hz=lo).process(x, fs)
        y = Filter(kind="lowpass", order=4, cutoff_hz=hi).process(y, fs)
        _, py = signal.welch(y, fs, nperseg=4096)
        gains = 10 * np.log10(band_powers(py, f, table.lower_hz, table.upper_hz) / p_in)
        channel_sii(np.array(SNRS), speech_db=speech + gains)
        occupied_bandwidth(py, f, span_hz=(20.0, fs / 2))
    return (time.perf_counter() - t0) / pick.size, int(pick.size)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3, help="timing repeats (best is kept)")
    parser.add_argument("--peer-candidates", type=int, default=1600,
                        help="candidates the audio-filtering peer runs (evenly spread over the grid; default all)")
    args = parser.parse_args()

    from voiceband.design.sweep import parse_range, sweep_cutoffs

    lows, highs = parse_range(LOW, name="--low"), parse_range(HIGH, name="--high")
    n = lows.size * highs.size
    sweep_cutoffs(lows[:2], highs[:2], snrs_db=SNRS)  # warm-up
    model_s = best_time(lambda: sweep_cutoffs(lows, highs, snrs_db=SNRS, max_bandwidth_hz=2700.0), args.repeats)
    model_rate = n / model_s

    snr_args = [a for s in SNRS for a in ("--channel-snr", f"{s:g}")]
    sweep_args = ["sweep", "--low", LOW, "--high", HIGH, "--max-bandwidth", "2700", *snr_args, "--json", "-"]
    chain_args = ["chain", str(CHAIN), "--json", "-"]
    chain_s = best_time(lambda: run(chain_args), args.repeats)
    sweep_s = best_time(lambda: run(sweep_args), args.repeats)

    peer_s, peer_n = peer(lows, highs, args.peer_candidates)
    peer_rate = 1.0 / peer_s

    print(f"cutoff grid {lows.size} x {highs.size} = {n} candidates, {len(SNRS)} channel SNRs")
    print(f"  band-gain SII model, in process : {model_rate:10,.0f} candidates/s ({model_s:.3f} s for the grid)")
    print(f"  'voiceband sweep' whole process : {sweep_s:10.2f} s")
    print(f"  'voiceband chain' whole process : {chain_s:10.2f} s  ({CHAIN.name})")
    print(f"  ratio sweep / chain             : {sweep_s / chain_s:10.2f} x   (target <= 3)")
    extrapolated = "" if peer_n == n else f", timed on {peer_n} of them"
    print(f"  peer: filter audio and analyse  : {peer_rate:10,.1f} candidates/s "
          f"({peer_s * n:.1f} s for the grid{extrapolated})")
    print(f"  ratio model / peer              : {model_rate / peer_rate:10,.0f} x")


if __name__ == "__main__":
    main()
