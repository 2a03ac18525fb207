"""Speed of the speech synthesiser, as realtime factors measured in one run.

Times ``synthesize_speech`` for one minute of speech at 48 kHz (target: well under 1 s, i.e.
a realtime factor well above 60):

1. the first call in a fresh process (first-touch memory; scipy.signal, which the
   generators import on first use, is imported and timed separately before it);
2. the median of further calls (different seeds), split into the raw synthesiser and the
   calibration equaliser + P.56 level alignment.

Also times the other rates and a few noise generators and test signals for reference.

Usage: python benchmarks/bench_synth.py [--repeats N] [--duration-s S]
"""

from __future__ import annotations

import argparse
import statistics
import time


def _timed(fn, *args, **kwargs) -> float:
    t = time.perf_counter()
    fn(*args, **kwargs)
    return time.perf_counter() - t


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--duration-s", type=float, default=60.0)
    args = ap.parse_args()
    dur = args.duration_s

    t_import = time.perf_counter()
    from voiceband.synth import noise, tones
    from voiceband.synth.speech import synthesize_speech, synthesize_speech_raw

    t_import = time.perf_counter() - t_import
    t_scipy = time.perf_counter()
    import scipy.signal  # noqa: F401  (imported by the generators on first use)

    t_scipy = time.perf_counter() - t_scipy
    first = _timed(synthesize_speech, dur, 48000, seed=0)
    print(f"import voiceband.synth: {t_import:.3f} s; import scipy.signal: {t_scipy:.3f} s")
    print(f"first call, {dur:g} s at 48 kHz: {first:.3f} s  (realtime factor {dur / first:.0f}x)")

    full = [_timed(synthesize_speech, dur, 48000, seed=s) for s in range(1, args.repeats + 1)]
    raw = [_timed(synthesize_speech_raw, dur, 48000, seed=s) for s in range(1, args.repeats + 1)]
    mf, mr = statistics.median(full), statistics.median(raw)
    print(f"warm, median of {args.repeats}: {mf:.3f} s  (realtime factor {dur / mf:.0f}x)"
          f"  = raw synthesiser {mr:.3f} s + equaliser and P.56 alignment {mf - mr:.3f} s")
    for voice in ("low", "high"):
        t = statistics.median(_timed(synthesize_speech, dur, 48000, voice=voice, seed=s) for s in range(3))
        print(f"  {voice} voice, 48 kHz: {t:.3f} s  (realtime factor {dur / t:.0f}x)")
    for effort in ("shout",):
        t = statistics.median(_timed(synthesize_speech, dur, 48000, effort=effort, seed=s) for s in range(3))
        print(f"  {effort} effort, 48 kHz: {t:.3f} s  (realtime factor {dur / t:.0f}x)")
    for fs in (8000, 16000, 44100):
        t = statistics.median(_timed(synthesize_speech, dur, fs, seed=s) for s in range(3))
        print(f"  medium voice, {fs} Hz: {t:.3f} s  (realtime factor {dur / t:.0f}x)")
    for name, fn in (("pink noise", noise.pink_noise), ("receiver hiss", noise.receiver_hiss),
                     ("mains hum", noise.mains_hum), ("multitone", tones.multitone)):
        t = statistics.median(_timed(fn, dur, 48000) for _ in range(3))
        print(f"  {name}, {dur:g} s at 48 kHz: {t:.3f} s  (realtime factor {dur / t:.0f}x)")


if __name__ == "__main__":
    main()
