"""Byte-level help for audio containers the decoder refuses: what a file looks like, and a repaired view.

libsndfile refuses some files that play elsewhere: an AIFF file with a large comment or
annotation chunk, a WAV file whose odd-sized extra chunks lack their pad byte.  For RIFF/WAVE
and FORM/AIFF(-C) files this module walks the chunks itself, keeps only the ones that describe
and hold the samples (``fmt ``/``fact``/``data``; ``COMM``/``FVER``/``SSND``) and offers a
read-only file object that presents those chunks as a minimal file, reading the samples from
the original file on demand (nothing is copied, so memory does not grow with file length).

Chunk layouts: Microsoft/IBM RIFF (WAVE) multimedia file format, 1991; Apple Audio Interchange
File Format (AIFF) 1.3, 1989, and its AIFF-C draft.  No soundfile import here.
"""

from __future__ import annotations

import io
import os
import struct
from typing import BinaryIO, Optional, Union

__all__ = ["describe_unreadable", "repaired_view", "SplicedFile"]

#: Most chunks walked in one file before giving up (bounds the work on hostile input).
MAX_CHUNKS = 100_000


def _is_fourcc(b: bytes) -> bool:
    return len(b) == 4 and all(0x20 <= c <= 0x7E for c in b)


def describe_unreadable(path: Union[str, os.PathLike]) -> str:
    """One sentence saying why a file the decoder refused is not readable audio, judged by its first bytes."""
    try:
        with open(path, "rb") as f:
            head = f.read(12)
    except OSError:
        head = b""
    p = f"'{os.fspath(path)}'"
    if head[:4] in (b"RIFF", b"RIFX", b"RF64", b"BW64") and head[8:12] == b"WAVE":
        return (f"{p} is not an audio file voiceband can read: it starts like a WAV file but has no usable "
                f"'fmt ' and 'data' chunks (a damaged, truncated or unsupported header).")
    if head[:4] == b"FORM" and head[8:12] in (b"AIFF", b"AIFC"):
        return (f"{p} is not an audio file voiceband can read: it starts like an AIFF file but has no usable "
                f"COMM and SSND chunks (a damaged, truncated or unsupported header).")
    if head[:4] == b"fLaC":
        return f"{p} is not an audio file voiceband can read: it starts like a FLAC file but its header or frames cannot be decoded."
    if head[:4] == b"OggS":
        return (f"{p} is not an audio file voiceband can read: it is an Ogg file whose stream cannot be decoded "
                f"(damaged, or a codec other than Vorbis, Opus or FLAC).")
    if head[:3] == b"ID3" or (len(head) >= 2 and head[0] == 0xFF and head[1] & 0xE0 == 0xE0):
        return f"{p} is not an audio file voiceband can read: it starts like an MP3 file but holds no decodable MPEG audio frames."
    return (f"{p} is not an audio file voiceband can read: its first bytes match no audio format it knows "
            f"(WAV, AIFF, FLAC, Ogg, MP3, ...).")


class SplicedFile(io.RawIOBase):
    """A read-only, seekable file made of literal byte strings and ranges of another file."""

    def __init__(self, path: Union[str, os.PathLike], parts: list[Union[bytes, tuple[int, int]]]):
        super().__init__()
        self._f: BinaryIO = open(path, "rb")
        self._parts: list[tuple[int, Union[bytes, tuple[int, int]]]] = []
        pos = 0
        for part in parts:
            self._parts.append((pos, part))
            pos += len(part) if isinstance(part, bytes) else part[1]
        self._size = pos
        self._pos = 0

    def readable(self) -> bool:
        return True

    def seekable(self) -> bool:
        return True

    def tell(self) -> int:
        return self._pos

    def seek(self, offset: int, whence: int = io.SEEK_SET) -> int:
        base = {io.SEEK_SET: 0, io.SEEK_CUR: self._pos, io.SEEK_END: self._size}[whence]
        self._pos = max(0, base + int(offset))
        return self._pos

    def readinto(self, buf) -> int:
        view = memoryview(buf).cast("B")
        want = min(len(view), max(0, self._size - self._pos))
        got = 0
        for start, part in self._parts:
            length = len(part) if isinstance(part, bytes) else part[1]
            if got >= want:
                break
            if self._pos + got >= start + length:
                continue
            inner = self._pos + got - start
            take = min(length - inner, want - got)
            if isinstance(part, bytes):
                view[got:got + take] = part[inner:inner + take]
                n = take
            else:
                self._f.seek(part[0] + inner)
                n = self._f.readinto(view[got:got + take]) or 0
            got += n
            if n < take:
                break
        self._pos += got
        return got

    def close(self) -> None:
        if not self.closed:
            self._f.close()
        super().close()


def _walk(f: BinaryIO, start: int, end: int, big_endian: bool):
    """Yield (fourcc, payload offset, payload size) of the chunks from ``start``; tolerates a missing pad byte."""
    fmt = ">I" if big_endian else "<I"
    pos = start
    for _ in range(MAX_CHUNKS):
        if pos + 8 > end:
            return
        f.seek(pos)
        hdr = f.read(8)
        if len(hdr) < 8 or not _is_fourcc(hdr[:4]):
            return
        size = struct.unpack(fmt, hdr[4:])[0]
        yield hdr[:4], pos + 8, size
        nxt = pos + 8 + size
        if size % 2:
            f.seek(nxt)
            after = f.read(5)
            # the pad byte is required, but some writers omit it: take whichever offset starts a chunk
            if not _is_fourcc(after[1:5]) and _is_fourcc(after[:4]):
                nxt -= 1
            nxt += 1
        pos = nxt


def repaired_view(path: Union[str, os.PathLike]) -> Optional[SplicedFile]:
    """A minimal WAV or AIFF view of ``path`` holding only its format and sample chunks, or None.

    None when the file is not RIFF/WAVE or FORM/AIFF(-C), or lacks the format or sample chunk.
    """
    try:
        end = os.path.getsize(path)
        with open(path, "rb") as f:
            head = f.read(12)
            if head[:4] == b"RIFF" and head[8:12] == b"WAVE":
                return _wave_view(path, f, end)
            if head[:4] == b"FORM" and head[8:12] in (b"AIFF", b"AIFC"):
                return _aiff_view(path, f, end, head[8:12])
    except (OSError, struct.error):
        return None
    return None


def _wave_view(path, f: BinaryIO, end: int) -> Optional[SplicedFile]:
    keep: dict[bytes, bytes] = {}
    data: Optional[tuple[int, int]] = None
    for cid, off, size in _walk(f, 12, end, big_endian=False):
        if cid in (b"fmt ", b"fact") and cid not in keep and size <= 4096:
            f.seek(off)
            keep[cid] = f.read(size)
        elif cid == b"data" and data is None:
            avail = max(0, end - off)
            data = (off, min(size, avail) if size not in (0, 0xFFFFFFFF) else avail)
            break  # the samples run to this chunk's end; what follows is not needed
    if b"fmt " not in keep or data is None or data[1] == 0:
        return None
    body = b"WAVE"
    for cid in (b"fmt ", b"fact"):
        if cid in keep:
            payload = keep[cid] + (b"\0" if len(keep[cid]) % 2 else b"")
            body += cid + struct.pack("<I", len(keep[cid])) + payload
    length = data[1]
    total = len(body) + 8 + length
    head = b"RIFF" + struct.pack("<I", min(total, 0xFFFFFFFF)) + body + b"data" + struct.pack("<I", length)
    return SplicedFile(path, [head, (data[0], length)])


def _aiff_view(path, f: BinaryIO, end: int, kind: bytes) -> Optional[SplicedFile]:
    keep: dict[bytes, bytes] = {}
    ssnd: Optional[tuple[int, int]] = None
    for cid, off, size in _walk(f, 12, end, big_endian=True):
        if cid in (b"COMM", b"FVER") and cid not in keep and size <= 4096:
            f.seek(off)
            keep[cid] = f.read(size)
        elif cid == b"SSND" and ssnd is None:
            ssnd = (off, min(size, max(0, end - off)))
        if ssnd is not None and b"COMM" in keep:
            break
    if b"COMM" not in keep or ssnd is None or ssnd[1] <= 8:
        return None
    body = kind
    for cid in (b"FVER", b"COMM"):
        if cid in keep:
            payload = keep[cid] + (b"\0" if len(keep[cid]) % 2 else b"")
            body += cid + struct.pack(">I", len(keep[cid])) + payload
    total = len(body) + 8 + ssnd[1]
    head = b"FORM" + struct.pack(">I", min(total, 0xFFFFFFFF)) + body + b"SSND" + struct.pack(">I", ssnd[1])
    return SplicedFile(path, [head, (ssnd[0], ssnd[1])])
