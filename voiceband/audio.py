"""Reading and writing audio: the only module that imports soundfile.

Audio is returned at its native sample rate and native scale (float64, full
scale = 1.0 for integer formats); it is never resampled or normalised.  Long
files are streamed in blocks so memory does not grow with file length.
"""

from __future__ import annotations

import contextlib
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable, Iterator, Union

import numpy as np

from . import validate
from .errors import AudioFormatError, AudioInputError, SignalValueError
from .outputs import atomic_output

__all__ = [
    "AudioInfo",
    "MIN_SAMPLE_RATE_HZ",
    "MAX_SAMPLE_RATE_HZ",
    "info",
    "blocks",
    "read",
    "write",
    "write_blocks",
    "check_format",
    "encode",
    "Channel",
]

#: Lowest and highest sample rates voiceband accepts (Hz): the one range of :mod:`voiceband.validate`.
MIN_SAMPLE_RATE_HZ = validate.MIN_SAMPLE_RATE_HZ
MAX_SAMPLE_RATE_HZ = validate.MAX_SAMPLE_RATE_HZ
#: Default streaming block length in frames (about 22 s at 48 kHz): long enough that the per-block
#: work of the accumulators is small against the per-sample work, short enough for flat memory.
DEFAULT_BLOCK_FRAMES = 1 << 20

Channel = Union[int, str]  # channel index, or "mix" for the mean of all channels


@dataclass(frozen=True)
class AudioInfo:
    """What the file header says, checked for sanity.

    Attributes
    ----------
    path : str
    sample_rate_hz : int
    channels : int
    frames : int
        Samples per channel.
    duration_s : float
    format : str
        Container, as libsndfile names it (``WAV``, ``FLAC``, ``OGG``, ``MP3`` ...).
    subtype : str
        Sample encoding (``PCM_16``, ``FLOAT`` ...).
    """

    path: str
    sample_rate_hz: int
    channels: int
    frames: int
    duration_s: float
    format: str
    subtype: str


def _sf():
    import soundfile

    return soundfile


def info(path: Union[str, os.PathLike]) -> AudioInfo:
    """Read and validate the header of an audio file.

    Raises
    ------
    AudioInputError
        The path does not exist, is a folder, or cannot be read.
    AudioFormatError
        The file is not audio libsndfile can decode, is empty, or its sample
        rate is outside 8–192 kHz.
    """
    p = Path(path)
    from .inputs import regular_file

    st = regular_file(p, what="an audio file", error=AudioInputError)
    if st.st_size == 0:
        raise AudioFormatError(f"'{p}' is empty (0 bytes).")
    with _open(p) as f:
        i = _Header(int(f.samplerate), int(f.channels), int(f.frames), str(f.format), str(f.subtype))
    if i.frames <= 0:
        raise AudioFormatError(f"'{p}' contains no audio samples.")
    try:
        validate.sample_rate_hz(i.samplerate)
    except SignalValueError:
        raise AudioFormatError(
            f"'{p}' has a sample rate of {i.samplerate} Hz; voiceband needs "
            f"{MIN_SAMPLE_RATE_HZ}–{MAX_SAMPLE_RATE_HZ} Hz."
        ) from None
    if i.channels < 1:
        raise AudioFormatError(f"'{p}' reports {i.channels} channels.")
    return AudioInfo(
        path=str(p),
        sample_rate_hz=int(i.samplerate),
        channels=int(i.channels),
        frames=int(i.frames),
        duration_s=float(i.frames) / float(i.samplerate),
        format=str(i.format),
        subtype=str(i.subtype),
    )


def _native(path: Union[str, os.PathLike]) -> bytes:
    """The name to hand libsndfile: absolute (so a file called ``-`` is never standard input) and in the
    file system's own bytes (so names that are not UTF-8 open too)."""
    return os.fsencode(os.path.abspath(path))


@dataclass(frozen=True)
class _Header:
    samplerate: int
    channels: int
    frames: int
    format: str
    subtype: str


@contextlib.contextmanager
def _native_stderr_silenced() -> Iterator[None]:
    """Send file descriptor 2 to the null device while the decoder runs.

    libsndfile's MP3 decoder (libmpg123) prints its own notes straight to fd 2, around
    Python's ``sys.stderr``; voiceband reports problems in its own sentence instead.
    """
    try:
        saved = os.dup(2)
    except OSError:  # no fd 2 at all: nothing to silence
        yield
        return
    null = os.open(os.devnull, os.O_WRONLY)
    try:
        os.dup2(null, 2)
        yield
    finally:
        os.dup2(saved, 2)
        os.close(saved)
        os.close(null)


@contextlib.contextmanager
def _open(p: Path) -> Iterator["object"]:
    """An open ``soundfile.SoundFile`` for ``p``; a repaired view (see :mod:`voiceband.containers`)
    when libsndfile refuses a WAV or AIFF file only for its extra chunks.

    Raises AudioFormatError with a sentence of ours (never the decoder's wording).
    """
    from .containers import describe_unreadable, repaired_view

    sf = _sf()
    f = None
    with _native_stderr_silenced():
        try:
            f = sf.SoundFile(_native(p))
        except Exception:  # libsndfile raises a generic error for every failure
            view = repaired_view(p)
            if view is not None:
                try:
                    f = sf.SoundFile(view)
                except Exception:
                    view.close()
    if f is None:
        raise AudioFormatError(describe_unreadable(p)) from None
    try:
        yield f
    finally:
        f.close()


#: Text tags libsndfile reads from a file's metadata (WAV INFO chunks, FLAC/OGG comments).
TAG_NAMES = ("title", "artist", "album", "date", "comment", "software", "copyright", "license", "genre", "tracknumber")


def tags(path: Union[str, os.PathLike]) -> dict[str, str]:
    """The file's text metadata tags that are present, e.g. ``{"title": "...", "comment": "..."}``.

    Unreadable metadata gives an empty dict (tags are informative only); call :func:`info` first to
    validate the file itself.
    """
    try:
        with _native_stderr_silenced(), _sf().SoundFile(_native(path)) as f:
            got = {name: getattr(f, name, "") for name in TAG_NAMES}
    except Exception:  # metadata is optional: never fail a report over it
        return {}
    return {k: str(v) for k, v in got.items() if v}


def _check_channel(channel: Channel, channels: int) -> Channel:
    if isinstance(channel, str):
        if channel == "mix":
            return channel
        text = channel.strip()
        if not (text.isdigit() or (text[:1] in "+-" and text[1:].isdigit())):
            raise AudioFormatError(f"channel must be {_channel_choices(channels)}; got '{channel}'.")
        channel = int(text)
    if isinstance(channel, bool) or not isinstance(channel, (int, np.integer)):
        raise AudioFormatError(f"channel must be {_channel_choices(channels)}; got {channel!r}.")
    if not 0 <= int(channel) < channels:
        raise AudioFormatError(
            f"channel {int(channel)} does not exist: the file has "
            + ("one channel, numbered 0." if channels == 1 else f"{channels} channels, numbered 0 to {channels - 1}.")
        )
    return int(channel)


def _channel_choices(channels: int) -> str:
    if channels == 1:
        return "0 or 'mix' (the file has one channel)"
    return f"a whole number from 0 to {channels - 1}, or 'mix' for the mean of all {channels}"


def _select(data: np.ndarray, channel: Channel) -> np.ndarray:
    if channel == "mix":
        return data.mean(axis=1)
    return np.ascontiguousarray(data[:, channel])


#: Integer PCM encodings read as integers and scaled here: libsndfile's own conversion to float64
#: divides by the same power of two (0x8000 for 16-bit; 0x80000000 for 24- and 32-bit, which it
#: reads left-justified in 32 bits), so the samples are bit for bit the same (a test checks), and
#: reading 2 or 4 bytes per sample and scaling in numpy costs a fraction of the library's
#: float conversion.  Other encodings (float, 8-bit, compressed) are converted by libsndfile.
_INTEGER_READS = {"PCM_16": ("int16", 2.0 ** -15), "PCM_24": ("int32", 2.0 ** -31), "PCM_32": ("int32", 2.0 ** -31)}


def is_bounded_subtype(subtype: str) -> bool:
    """Whether a file's samples are integer codes, so decoded they lie within ±1.0 (full scale).

    Integer PCM (8-32 bit) and the A-law/mu-law companded codes cannot hold a NaN, an infinity
    or a sample beyond full scale, so the per-block scale check can be left out for them.
    """
    s = str(subtype).upper()
    return s.startswith("PCM_") or s in ("ALAW", "ULAW")


def blocks(
    path: Union[str, os.PathLike],
    *,
    channel: Channel = 0,
    block_frames: int = DEFAULT_BLOCK_FRAMES,
    audio_info: AudioInfo | None = None,
) -> Iterator[np.ndarray]:
    """Stream one channel of a file as consecutive float64 blocks at native scale.

    Parameters
    ----------
    path : path-like
    channel : int or "mix"
        Channel index from 0, or ``"mix"`` for the mean of all channels.
    block_frames : int
        Samples per block (the last block may be shorter).

    Yields
    ------
    numpy.ndarray
        1-D float64 samples, full scale = ±1.0.

    Raises
    ------
    AudioFormatError
        The file is truncated or corrupt part-way through.
    """
    ai = audio_info or info(path)
    ch = _check_channel(channel, ai.channels)
    sf = _sf()
    with _open(Path(ai.path)) as f:
        dtype, scale = _INTEGER_READS.get(str(f.subtype), ("float64", None))
        # integer PCM: one buffer reused for every read (each yielded block is a new array)
        raw = None if scale is None else np.empty((min(block_frames, max(f.frames, 1)), f.channels), dtype=dtype)
        while True:
            try:
                with _native_stderr_silenced():
                    data = f.read(block_frames, dtype=dtype, always_2d=True, out=raw)
            except (RuntimeError, sf.LibsndfileError):  # pragma: no cover - depends on libsndfile
                raise AudioFormatError(
                    f"'{ai.path}' could not be decoded to the end: it is damaged or truncated after "
                    f"{f.tell() / ai.sample_rate_hz:.3f} s."
                ) from None
            if data.shape[0] == 0:
                break
            if scale is None:
                yield _select(data, ch)
            elif ch == "mix":
                yield np.multiply(data, scale).mean(axis=1)
            else:
                # a converting copy, then an in-place scale: faster than one mixed-type multiply
                # (numpy 2.4: 0.74 against 1.1 ms per 2**20 samples); the same exact values
                out = data[:, ch].astype(np.float64)
                out *= scale
                yield out


def read(
    path: Union[str, os.PathLike], *, channel: Channel = 0
) -> tuple[np.ndarray, int]:
    """Read one channel of a whole file: ``(samples float64 at native scale, sample_rate_hz)``.

    Use :func:`blocks` for long files.
    """
    ai = info(path)
    parts = list(blocks(path, channel=channel, audio_info=ai))
    x = np.concatenate(parts) if parts else np.zeros(0)
    return x, ai.sample_rate_hz


def _encoding(path: Path, samples: np.ndarray, sample_rate_hz: int, subtype: str) -> tuple[np.ndarray, str, str]:
    """Checked samples, soundfile format and subtype for writing ``path``."""
    x = np.asarray(samples, dtype=np.float64)
    if not np.all(np.isfinite(x)):
        raise SignalValueError("samples to write contain NaN or Inf.")
    try:
        validate.sample_rate_hz(sample_rate_hz)
    except SignalValueError as exc:
        raise AudioFormatError(str(exc)) from None
    fmt, subtype = check_format(path, subtype)
    return x, fmt, subtype


def check_format(path: Union[str, os.PathLike], subtype: str = "PCM_16") -> tuple[str, str]:
    """The soundfile format and subtype for writing ``path`` (format from its extension), checked
    before any work: an unknown extension or a sample format the container cannot hold is refused."""
    path = Path(path)
    fmt = {".wav": "WAV", ".flac": "FLAC", ".ogg": "OGG"}.get(path.suffix.lower())
    if fmt is None:
        raise AudioFormatError(f"cannot write '{path.name}': use a .wav, .flac or .ogg file name.")
    subtype = "VORBIS" if fmt == "OGG" else subtype
    if not _sf().check_format(fmt, subtype):
        raise AudioFormatError(f"cannot write '{path.name}': {fmt} files cannot hold {subtype} samples; "
                               f"use {'--bits 16 or 24' if fmt == 'FLAC' else 'a .wav file name'}.")
    return fmt, subtype


def write(
    path: Union[str, os.PathLike],
    samples: np.ndarray,
    sample_rate_hz: int,
    *,
    subtype: str = "PCM_16",
    force: bool = False,
    make_folders: bool = False,
) -> Path:
    """Write samples (frames, or frames × channels; full scale ±1.0) atomically.

    The format follows the file extension (``.wav``, ``.flac``, ``.ogg``).
    Refuses to overwrite an existing file unless ``force`` is true.
    """
    p = Path(path)
    x, fmt, subtype = _encoding(p, samples, sample_rate_hz, subtype)
    sf = _sf()
    with atomic_output(p, force=force, make_folders=make_folders) as tmp:
        sf.write(_native(tmp), x, int(sample_rate_hz), subtype=subtype, format=fmt)
    return p


def write_blocks(
    path: Union[str, os.PathLike],
    blocks: Iterable[np.ndarray],
    sample_rate_hz: int,
    *,
    subtype: str = "PCM_16",
    force: bool = False,
    make_folders: bool = False,
) -> Path:
    """Write one channel given as consecutive blocks (full scale ±1.0) atomically, block by block:
    memory does not grow with the length.  Format and rules as :func:`write`."""
    p = Path(path)
    _, fmt, subtype = _encoding(p, np.zeros(0), sample_rate_hz, subtype)
    sf = _sf()
    with atomic_output(p, force=force, make_folders=make_folders) as tmp:
        with sf.SoundFile(_native(tmp), "w", samplerate=int(sample_rate_hz), channels=1, subtype=subtype,
                          format=fmt) as f:
            for b in blocks:
                x = np.asarray(b, dtype=np.float64)
                if not np.all(np.isfinite(x)):
                    raise SignalValueError("samples to write contain NaN or Inf.")
                f.write(x)
    return p


def encode(name: Union[str, os.PathLike], samples: np.ndarray, sample_rate_hz: int, *, subtype: str = "PCM_16") -> bytes:
    """The bytes :func:`write` would write to a file called ``name`` (format from its extension); writes nothing."""
    import io

    x, fmt, subtype = _encoding(Path(name), samples, sample_rate_hz, subtype)
    buf = io.BytesIO()
    _sf().write(buf, x, int(sample_rate_hz), subtype=subtype, format=fmt)
    return buf.getvalue()
