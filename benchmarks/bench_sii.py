"""Speed of the batched SII engine, as ratios measured in one run.

Prints evaluations per second of:

1. our one-third-octave SII on a batch of spectra in one call, index only (``sii_index``: the chain
   runs on row chunks in one reused scratch block) and with every band array kept (``sii``);
2. the ``speech-intelligibility-index`` package (one-third-octave only) called in a loop, one spectrum
   per call, and the ratio of 1 to 2, in 5 consecutive rounds with their spread (target: >= 75x in
   every round).

Why the figure used to vary (65x to 209x between runs): ``sii`` materialises all twelve clause-4
band arrays for the whole batch (1.7 kB per spectrum, 173 MB at 100,000), past the allocator's
reuse threshold, so every call page-faulted fresh memory and the arithmetic became memory-bound;
how much depended on batch size and on what the process had allocated before. ``sii_index`` keeps
memory constant and cache-sized, so the rate no longer depends on the batch size.
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

from voiceband.intelligibility import band_importance, sii, sii_index


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
    sii_index(e, n, t)  # warm-up (engine constants are cached on first use)

    from speech_intelligibility_index import sii as reference

    w = np.array(band_importance("average"))
    m = min(args.loop, args.batch)
    ref_values = np.array([reference.sii(e[i], n[i], t[i], w) for i in range(m)])
    diff = float(np.max(np.abs(sii_index(e[:m], n[:m], t[:m]) - ref_values)))

    def ref_loop():
        for i in range(m):
            reference.sii(e[i], n[i], t[i], w)

    full = args.batch / best_time(lambda: sii(e, n, t), args.repeats)
    print(f"one-third octave, batch of {args.batch:,} spectra; 5 rounds, each a batched and a loop timing")
    ratios = []
    for r in range(5):
        ours = args.batch / best_time(lambda: sii_index(e, n, t), args.repeats)
        ref_rate = m / best_time(ref_loop, max(1, args.repeats // 3))
        ratios.append(ours / ref_rate)
        print(f"  round {r + 1}: sii_index {ours:12,.0f}/s   reference loop {ref_rate:9,.0f}/s   ratio {ours / ref_rate:7.1f} x")
    lo, med, hi = min(ratios), float(np.median(ratios)), max(ratios)
    print(f"  ratio sii_index / reference  : min {lo:.1f} x, median {med:.1f} x, max {hi:.1f} x "
          f"(spread {100 * (hi - lo) / med:.0f} %); target >= 75 x in every round: {'met' if lo >= 75 else 'NOT met'}")
    print(f"  sii with all band arrays     : {full:12,.0f} evaluations/s")
    for rows in (1_000, 100_000):
        ee, nn, tt = random_inputs(rng, rows, 18)
        rate = rows / best_time(lambda: sii_index(ee, nn, tt), args.repeats)
        print(f"  sii_index, batch of {rows:>7,}  : {rate:12,.0f} evaluations/s")
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
