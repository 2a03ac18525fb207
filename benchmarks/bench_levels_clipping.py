"""Speed of the levels and clipping accumulators on one hour of 48 kHz audio.

Feeds 659 blocks of 2**18 samples (one hour at 48 kHz, as ``voiceband analyze`` streams
them) to :class:`voiceband.measurement.levels.LevelsAccumulator` and
:class:`voiceband.measurement.clipping.ClippingAccumulator`, and prints for three signals the
seconds per hour of audio and, measured in the same run, the ratio to one plain
``numpy.max`` pass over the same blocks (a machine-independent yardstick).  Blocks are
cut from a 60-second pool of synthetic audio, so synthesis is not timed.

Budget (issue 2): the whole analysis of that hour should take about 2 s; these two
modules are meant to stay well under 0.6 s per hour together on speech, the clipping
detector under about 0.3 s per hour.  Clipped audio costs more (every sample on a ceiling
is examined for runs, exactly equal and within noise), and a steady full-scale sine is the
slow case for both (true peak is interpolated at every crest; a third of its samples lie
within the clipping detector's search region).

Run: ``python benchmarks/bench_levels_clipping.py``
"""

from __future__ import annotations

import time

import numpy as np
from scipy.signal import butter, lfilter

from voiceband.measurement.clipping import ClippingAccumulator
from voiceband.measurement.levels import BS1770_TRUE_PEAK_PHASES, LevelsAccumulator

FS = 48000
BLOCK = 1 << 18
HOUR_BLOCKS = int(np.ceil(3600 * FS / BLOCK))  # 660 blocks >= 172.8 M samples
POOL_S = 60


def speech_pool(rng: np.random.Generator) -> np.ndarray:
    """60 s of speech-like audio: phrases of syllable bursts at varying loudness, pauses, 16-bit."""
    n = POOL_S * FS
    x = rng.laplace(size=n)
    b, a = butter(2, [100 / (FS / 2), 3400 / (FS / 2)], "band")
    x = lfilter(b, a, x)
    syl = int(0.18 * FS)
    gate = np.repeat(rng.random(n // syl + 1) < 0.65, syl)[:n].astype(float)
    phrase = np.repeat(rng.uniform(0.2, 1.0, n // (3 * FS) + 1), 3 * FS)[:n]
    x = x * lfilter([0.004], [1, -0.996], gate) * phrase
    x += 3e-4 * rng.standard_normal(n)  # noise floor about -70 dBFS
    x *= 10 ** (-1 / 20) / np.max(np.abs(x))
    return np.round(x * 32768) / 32768


def blocks(pool: np.ndarray):
    offsets = np.arange(HOUR_BLOCKS) * 7919 % (pool.size - BLOCK)
    for off in offsets:
        yield pool[off:off + BLOCK]


def time_feed(make, pool, repeats=2):
    best = float("inf")
    for _ in range(repeats):
        acc = make()
        t0 = time.perf_counter()
        for b in blocks(pool):
            acc.update(b)
        acc.result()
        best = min(best, time.perf_counter() - t0)
    return best


def time_plain_pass(pool, repeats=2):
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        for b in blocks(pool):
            b.max()
        best = min(best, time.perf_counter() - t0)
    return best


def dense_true_peak_seconds_per_hour(pool):
    """Reference point: 4x polyphase over every sample (what the level module avoids)."""
    x = pool[: 10 * FS]
    t0 = time.perf_counter()
    peak = 0.0
    for q in range(4):
        peak = max(peak, float(np.max(np.abs(np.convolve(x, BS1770_TRUE_PEAK_PHASES[q], "valid")))))
    return (time.perf_counter() - t0) * 360.0


def main() -> None:
    rng = np.random.default_rng(1)
    speech = speech_pool(rng)
    signals = {
        "speech, 16-bit, peak -1 dBFS": speech,
        "speech clipped 6 dB": np.clip(speech, -0.45, 0.45),
        "clipped 6 dB, noise -60 dBFS": np.round((np.clip(speech, -0.45, 0.45)
                                                  + 1e-3 * rng.standard_normal(speech.size)) * 32768) / 32768,
        "sine 1 kHz at -0.5 dBFS": 10 ** (-0.5 / 20) * np.sin(2 * np.pi * 1000.3 * np.arange(POOL_S * FS) / FS),
    }
    hours = HOUR_BLOCKS * BLOCK / (3600 * FS)
    print(f"{HOUR_BLOCKS} blocks of {BLOCK} samples = {hours:.3f} h of 48 kHz audio per run\n")
    print(f"{'signal':32s} {'levels s/h':>11s} {'clipping s/h':>13s} {'both s/h':>9s} {'both / max-pass':>16s}")
    for name, pool in signals.items():
        t_plain = time_plain_pass(pool) / hours
        t_lev = time_feed(lambda: LevelsAccumulator(FS), pool) / hours
        t_clip = time_feed(lambda: ClippingAccumulator(FS), pool) / hours
        both = t_lev + t_clip
        print(f"{name:32s} {t_lev:11.3f} {t_clip:13.3f} {both:9.3f} {both / t_plain:16.1f}")
    print(f"\none numpy max() pass over the hour: {time_plain_pass(speech) / hours:.3f} s")
    print(f"dense 4x true peak over every sample (reference): {dense_true_peak_seconds_per_hour(speech):.1f} s/h")


if __name__ == "__main__":
    main()
