"""Generated audio inputs for robustness checks: valid files of every container and subtype, odd signals,
damaged and truncated files, random bytes.  Used by the property tests and benchmarks/fuzz_inputs.py.

A case is a plain dict (so hypothesis can draw it and a failure prints it); :func:`write_case`
turns it into a file and returns False when libsndfile cannot write that combination (a
limitation of the generator, not a finding about voiceband).
"""

from __future__ import annotations

import struct
from pathlib import Path

import numpy as np
import soundfile as sf

#: Containers written, with the file-name ending used.
FORMATS = {
    "WAV": ".wav", "WAVEX": ".wav", "RF64": ".rf64", "W64": ".w64", "AIFF": ".aiff", "AU": ".au",
    "CAF": ".caf", "FLAC": ".flac", "OGG": ".ogg", "MP3": ".mp3", "NIST": ".nist", "IRCAM": ".sf",
    "VOC": ".voc", "AVR": ".avr", "SVX": ".svx", "PAF": ".paf", "MAT5": ".mat", "SD2": ".sd2", "W64_": ".w64",
}
FORMATS.pop("W64_")
SUBTYPES = {f: sorted(sf.available_subtypes(f)) for f in FORMATS}
SIGNALS = ("noise", "silence", "dc", "square", "sine", "nan", "inf", "huge", "clipped_noise")
RATES = (8000, 11025, 16000, 22050, 32000, 44100, 48000, 96000, 192000)
ODD_RATES = (1000, 7999, 192001, 400000)
DURATIONS_S = (0.0, 0.1, 0.3, 0.6)  # 0.0 means one sample
MAGICS = (b"", b"RIFF\x24\x00\x00\x00WAVEfmt ", b"FORM\x00\x00\x10\x00AIFFCOMM", b"fLaC\x00\x00\x00\x22",
          b"OggS\x00\x02", b"ID3\x03\x00\x00\x00\x00\x00\x00", b"\xff\xfb\x90\x64", b"\xff\xf3\x48\xc4", b".snd")


def signal(kind: str, n: int, channels: int, fs: int, seed: int) -> np.ndarray:
    """``n`` × ``channels`` samples of one kind (full scale ±1)."""
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    if kind == "noise":
        x = 0.2 * rng.standard_normal((n, channels))
    elif kind == "silence":
        x = np.zeros((n, channels))
    elif kind == "dc":
        x = np.full((n, channels), float(rng.uniform(-1, 1)))
    elif kind == "square":
        x = np.repeat(np.sign(np.sin(2 * np.pi * 997 * t + 0.1))[:, None], channels, axis=1)
    elif kind == "sine":
        x = np.repeat(np.sin(2 * np.pi * float(rng.uniform(50, fs / 2.1)) * t)[:, None], channels, axis=1)
    elif kind in ("nan", "inf"):
        x = 0.2 * rng.standard_normal((n, channels))
        x[rng.integers(0, n), rng.integers(0, channels)] = np.nan if kind == "nan" else np.inf
    elif kind == "huge":
        x = 1e6 * rng.standard_normal((n, channels))
    else:  # clipped_noise
        x = np.clip(0.8 * rng.standard_normal((n, channels)), -0.5, 0.5)
    return x


def write_case(path: Path, case: dict) -> Path | None:
    """Write the file a case describes; return its path, or None when libsndfile cannot write it."""
    kind = case["kind"]
    rng = np.random.default_rng(case.get("seed", 0))
    if kind == "random_bytes":
        p = path.with_suffix(case.get("suffix", ".wav"))
        body = rng.integers(0, 256, int(case["size"]), dtype=np.uint8).tobytes()
        p.write_bytes(case.get("magic", b"") + body)
        return p
    fmt, subtype = case["format"], case["subtype"]
    p = path.with_suffix(FORMATS[fmt])
    fs, ch = int(case["rate"]), int(case["channels"])
    n = max(1, int(round(case["duration_s"] * fs)))
    if fmt == "OGG" and fs > 192000:
        return None  # libvorbis's encoder crashes the writing process at such rates
    x = signal(case["signal"], n, ch, max(fs, 1000), case.get("seed", 0))
    if subtype not in ("FLOAT", "DOUBLE"):
        # libsndfile's integer encoders expect ±1 and finite samples (out-of-range input can crash
        # its A-law encoder while writing); a reader sees clipped full-scale samples instead
        x = np.clip(np.nan_to_num(x, nan=0.0, posinf=1.0, neginf=-1.0), -1.0, 1.0)
    try:
        sf.write(str(p), x, fs, subtype=subtype, format=fmt)
    except Exception:
        p.unlink(missing_ok=True)
        return None
    data = p.read_bytes()
    if kind == "truncated":
        cut = int(case["keep_fraction"] * len(data))
        p.write_bytes(data[:cut])
    elif kind == "extra_chunks" and fmt in ("WAV", "AIFF") and data[:4] in (b"RIFF", b"FORM"):
        p.write_bytes(_with_extra_chunks(data, int(case["chunks"]), int(case["chunk_size"])))
    elif kind == "flipped_bytes":
        b = bytearray(data)
        for i in rng.integers(0, len(b), int(case["flips"])):
            b[i] ^= 0xFF
        p.write_bytes(bytes(b))
    return p


def _with_extra_chunks(data: bytes, count: int, size: int) -> bytes:
    """Insert ``count`` extra chunks of ``size`` bytes before the sample chunk (odd sizes without the pad
    byte in WAV, as some writers do; a large annotation in AIFF)."""
    if data[:4] == b"RIFF":
        i = data.find(b"data", 12)
        extra = b"".join(b"x%03d" % (k % 1000) + struct.pack("<I", size) + b"z" * size for k in range(count))
        body = data[8:i] + extra + data[i:]
        return b"RIFF" + struct.pack("<I", len(body)) + body
    payload = b"a" * size + (b"\0" if size % 2 else b"")
    extra = b"".join(b"ANNO" + struct.pack(">I", size) + payload for _ in range(count))
    body = data[8:12] + extra + data[12:]
    return b"FORM" + struct.pack(">I", len(body)) + body


def random_case(rng: np.random.Generator) -> dict:
    """One case drawn with numpy (the fuzz script); the property tests draw theirs with hypothesis."""
    seed = int(rng.integers(0, 2**31))
    r = rng.random()
    if r < 0.15:
        return {"kind": "random_bytes", "seed": seed, "size": int(rng.integers(0, 5000)),
                "magic": MAGICS[rng.integers(len(MAGICS))], "suffix": [".wav", ".mp3", ".flac", ".aiff", ".bin"][rng.integers(5)]}
    fmt = list(FORMATS)[rng.integers(len(FORMATS))]
    case = {
        "kind": "valid", "seed": seed, "format": fmt, "subtype": SUBTYPES[fmt][rng.integers(len(SUBTYPES[fmt]))],
        "rate": int(RATES[rng.integers(len(RATES))] if rng.random() < 0.9 else ODD_RATES[rng.integers(len(ODD_RATES))]),
        "channels": int(rng.integers(1, 17)) if rng.random() < 0.3 else int(rng.integers(1, 3)),
        "duration_s": float(DURATIONS_S[rng.integers(len(DURATIONS_S))]),
        "signal": SIGNALS[rng.integers(len(SIGNALS))],
    }
    if r < 0.35:
        case.update(kind="truncated", keep_fraction=float(rng.random()))
    elif r < 0.45:
        case.update(kind="extra_chunks", format=["WAV", "AIFF"][rng.integers(2)], subtype="PCM_16",
                    chunks=int(rng.integers(1, 300)), chunk_size=int(rng.choice([1, 3, 5, 4, 1000, 70001, 300000])))
    elif r < 0.55:
        case.update(kind="flipped_bytes", flips=int(rng.integers(1, 40)))
    return case
