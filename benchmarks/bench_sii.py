"""Speed of the batched SII engine, as ratios measured in one run.

Prints evaluations per second of:

1. our one-third-octave SII on a batch of spectra in one call (target >= 500,000 per second on a
   2-core machine);
2. the ``speech-intelligibility-index`` package (one-third-octave only) called in a loop, one spectrum
   per call, and the ratio of 1 to 2;
3. our critical-band SII, batched and called in a loop (the reference package has no critical-band
   procedure), and their ratio.

The inputs are random speech, noise and threshold spectrum levels (seeded). Before timing, the batched
result is checked against the loop results (largest absolute difference printed).

Usage: python benchmarks/bench_sii.py [--batch N] [--loop N] [--repeats N]
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from voiceband.intelligibility import band_importance, sii


def best_time(fn, repeats: int) -> float:
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def random_inputs(rng, rows: int, n_bands: int):
    speech = rng.uniform(0.0, 80.0, (rows, n_bands))
    noise = rng.uniform(-20.0, 70.0, (rows, n_bands))
    threshold = rng.uniform(0.0, 40.0, (rows, n_bands))
    return speech, noise, threshold


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--batch", type=int, default=10_000, help="spectra per batched call")
    parser.add_argument("--loop", type=int, default=2_000, help="spectra for the loop measurements")
    parser.add_argument("--repeats", type=int, default=7, help="timing repeats (best is kept)")
    args = parser.parse_args()
    rng = np.random.default_rng(3)

    # --- one-third octave -------------------------------------------------------------------------
    e, n, t = random_inputs(rng, args.batch, 18)
    sii(e, n, t)  # warm-up (engine constants are cached on first use)
    ours = args.batch / best_time(lambda: sii(e, n, t), args.repeats)

    from speech_intelligibility_index import sii as reference

    w = np.array(band_importance("average"))
    m = min(args.loop, args.batch)
    ref_values = np.array([reference.sii(e[i], n[i], t[i], w) for i in range(m)])
    diff = float(np.max(np.abs(sii(e[:m], n[:m], t[:m]).index - ref_values)))

    def ref_loop():
        for i in range(m):
            reference.sii(e[i], n[i], t[i], w)

    ref_rate = m / best_time(ref_loop, max(1, args.repeats // 3))

    print(f"one-third octave, batch of {args.batch:,} spectra")
    print(f"  voiceband batched            : {ours:12,.0f} evaluations/s   (target >= 500,000)")
    print(f"  reference package, loop      : {ref_rate:12,.0f} evaluations/s")
    print(f"  ratio batched / reference    : {ours / ref_rate:12,.1f} x")
    print(f"  largest |difference| in SII  : {diff:.2e} over {m:,} spectra")

    # --- critical band ----------------------------------------------------------------------------
    e, n, t = random_inputs(rng, args.batch, 21)
    sii(e, n, t, procedure="critical-band")
    ours_cb = args.batch / best_time(lambda: sii(e, n, t, procedure="critical-band"), args.repeats)
    loop_values = np.array([sii(e[i], n[i], t[i], procedure="critical-band").index for i in range(m)])
    diff_cb = float(np.max(np.abs(sii(e[:m], n[:m], t[:m], procedure="critical-band").index - loop_values)))

    def own_loop():
        for i in range(m):
            sii(e[i], n[i], t[i], procedure="critical-band")

    loop_rate = m / best_time(own_loop, max(1, args.repeats // 3))
    print(f"critical band, batch of {args.batch:,} spectra (reference package has no critical-band procedure)")
    print(f"  voiceband batched            : {ours_cb:12,.0f} evaluations/s")
    print(f"  voiceband, one call each     : {loop_rate:12,.0f} evaluations/s")
    print(f"  ratio batched / loop         : {ours_cb / loop_rate:12,.1f} x")
    print(f"  largest |difference| in SII  : {diff_cb:.2e} over {m:,} spectra")


if __name__ == "__main__":
    main()
