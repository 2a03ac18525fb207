"""Test recordings for the batch tests, built here (never committed): good, broken and duplicate files."""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import soundfile as sf


def speechlike(seed: int, fs: int = 8000, seconds: float = 0.8) -> np.ndarray:
    """Noise bursts at a ~4 Hz syllable rate over a low noise floor (a test signal, not data)."""
    rng = np.random.default_rng(seed)
    n = int(fs * seconds)
    t = np.arange(n) / fs
    env = np.clip(np.sin(2 * np.pi * 4 * t), 0, None)
    return 0.1 * rng.standard_normal(n) * env + 1e-4 * rng.standard_normal(n)


def make_folder(root: Path, *, good: int = 4, fs: int = 8000, seconds: float = 0.8) -> dict[str, list[Path]]:
    """A folder of ``good`` good files, one copy of the first in a subfolder, and broken files.

    Returns the paths by kind: ``good`` (including the copy), ``broken``, ``ignored`` (not audio by name).
    """
    root.mkdir(parents=True, exist_ok=True)
    out: dict[str, list[Path]] = {"good": [], "broken": [], "ignored": []}
    for i in range(good):
        p = root / f"good_{i:03d}.wav"
        sf.write(str(p), speechlike(i, fs, seconds), fs, subtype="PCM_16")
        out["good"].append(p)
    (root / "sub").mkdir(exist_ok=True)
    copy = root / "sub" / "copy_of_good_000.wav"
    shutil.copyfile(out["good"][0], copy)
    out["good"].append(copy)
    rng = np.random.default_rng(99)
    b = root / "random_bytes.wav"
    b.write_bytes(rng.integers(0, 256, 4000, dtype=np.uint8).tobytes())
    e = root / "empty.flac"
    e.write_bytes(b"")
    t = root / "truncated.wav"
    t.write_bytes(out["good"][1].read_bytes()[:30])
    s = root / "too_short.wav"
    sf.write(str(s), speechlike(7, fs, 0.05), fs)
    nan = root / "nan.wav"
    x = speechlike(8, fs, seconds).astype(np.float32)
    x[100] = np.nan
    sf.write(str(nan), x, fs, subtype="FLOAT")
    out["broken"] += [b, e, t, s, nan]
    txt = root / "notes.txt"
    txt.write_text("not audio\n")
    out["ignored"].append(txt)
    return out
