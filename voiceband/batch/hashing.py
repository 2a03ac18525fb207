"""Content hash of a file and hash of the analysis settings: together they say whether a row is still valid."""

from __future__ import annotations

import hashlib
import json
import os
from typing import Any, Mapping

__all__ = ["file_sha256", "settings_hash", "CHUNK_BYTES"]

#: Bytes read per step while hashing (large steps let hashlib release the GIL and keep the disk busy).
CHUNK_BYTES = 1 << 20


def file_sha256(path: os.PathLike | str) -> str:
    """SHA-256 of the file's bytes (FIPS 180-4), as 64 lower-case hex digits. Reads in 1 MiB steps."""
    h = hashlib.sha256()
    with open(path, "rb", buffering=0) as f:
        buf = bytearray(CHUNK_BYTES)
        view = memoryview(buf)
        while True:
            n = f.readinto(buf)
            if not n:
                break
            h.update(view[:n])
    return h.hexdigest()


def settings_hash(settings: Mapping[str, Any]) -> str:
    """First 16 hex digits of the SHA-256 of the settings as canonical JSON (sorted keys, no spaces).

    Two runs with the same settings (including the voiceband version, which stands for the
    measurement code) give the same hash, so a row recorded by one is valid for the other.
    """
    text = json.dumps(dict(settings), sort_keys=True, separators=(",", ":"), allow_nan=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]
