"""Speed of the sweep measurement, as times and realtime factors measured in one run.

Makes a 20 s exponential sweep (20 Hz – 20 kHz, with markers) at 48 kHz, passes it through a
300–3400 Hz Butterworth band-pass with 0.3 s of leading silence and a little noise, then times

1. ``deconvolve`` alone (regularised spectral division of the recorded sweep; target: well
   under 1 s, i.e. a realtime factor well above 20);
2. ``deconvolve`` + ``separate_harmonics`` + the linear and harmonic spectra;
3. the whole ``measure_response`` (stimulus recognition, alignment, offset check,
   deconvolution, harmonics, metrics) on the same arrays.

Realtime factor = sweep duration ÷ processing time.  Each step is run ``--repeat`` times
and the best time is printed.

Usage: python benchmarks/bench_response.py [--repeat N] [--seconds S]
"""

from __future__ import annotations

import argparse
import time

import numpy as np
import scipy.signal as ss

from voiceband.response import measure_response
from voiceband.response.deconvolve import band_limit_response, deconvolve, separate_harmonics, window_response
from voiceband.response.stimulus import analyse_stimulus
from voiceband.synth.sweep import exponential_sweep

FS = 48000


def best_of(n: int, fn) -> float:
    best = float("inf")
    for _ in range(n):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--seconds", type=float, default=20.0)
    args = ap.parse_args()

    s = exponential_sweep(duration_s=args.seconds, sample_rate_hz=FS)
    x = np.asarray(s.samples)
    sos = ss.butter(2, [300.0, 3400.0], "bandpass", fs=FS, output="sos")
    lead = int(0.3 * FS)
    y = ss.sosfilt(sos, np.concatenate([np.zeros(lead), x, np.zeros(FS)]))
    y += 1e-4 * np.random.default_rng(1).standard_normal(y.size)

    # The excerpt the measurement deconvolves: the sweep with 20 ms margins, the recording
    # from the same point with 0.45 s of tail.
    ana = analyse_stimulus(x, FS)
    seg = ana.sweep.segment
    m = int(0.02 * FS)
    xs = x[seg.start - m: seg.stop + m]
    ys = y[lead + seg.start - m: lead + seg.stop + m + int(0.45 * FS)]
    band = (ana.sweep.start_hz, ana.sweep.stop_hz)
    freqs = np.geomspace(25.0, 20000.0, 480)

    def deconv_only():
        deconvolve(ys, xs, sample_rate_hz=FS, band_hz=band)

    def deconv_and_harmonics():
        dec = deconvolve(ys, xs, sample_rate_hz=FS, band_hz=band)
        sep = separate_harmonics(dec, rate_constant_s=ana.sweep.rate_constant_s, peak_search_lags=(-2000, 4800))
        for w in (sep.linear, *sep.harmonics):
            window_response(w, freqs, FS) / band_limit_response(dec, freqs)[0]

    def whole():
        measure_response(x, FS, y, FS)

    dur = seg.length / FS
    print(f"sweep: {dur:.1f} s at {FS} Hz ({xs.size} samples deconvolved against {ys.size})")
    for name, fn in (
        ("deconvolve", deconv_only),
        ("deconvolve + harmonic separation + spectra", deconv_and_harmonics),
        ("measure_response (whole measurement)", whole),
    ):
        t = best_of(args.repeat, fn)
        print(f"{name:45s} {t * 1000:8.1f} ms   realtime factor {dur / t:7.1f}×")


if __name__ == "__main__":
    main()
