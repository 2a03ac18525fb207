"""The synthetic corpus: spec files (TOML), rendering, the manifest; files written through :mod:`voiceband.audio`.

A spec file describes one recording and says what it exercises::

    description = "Medium voice, normal effort, clean: the reference recording."
    output = "speech_medium_normal.wav"
    sample_rate_hz = 48000
    duration_s = 12.0
    seed = 1
    bits = 16                      # 16 or 24 (optional, default 16)

    [speech]
    voice = "medium"               # low | medium | high
    effort = "normal"              # normal | raised | loud | shout
    active_level_dbfs = -26.0      # ITU-T P.56 active level (optional, default -26)

    [[stage]]                      # applied in order after the speech is made
    kind = "hiss"                  # white | pink | hiss | hum | crashes   (added)
    snr_db = 15.0                  #   or level_dbfs = -41.0               | bandpass | highpass
    low_hz = 300.0                 #                                        | lowpass | clip | gain
    high_hz = 3000.0               #                                          (applied to the mix)

Stage keys
----------
``white``, ``pink``
    ``level_dbfs`` (RMS) or ``snr_db`` (noise RMS = the speech's P.56 active level − snr_db,
    the active-speech SNR of ITU-T test practice; from memory).
``hiss``
    As above, plus ``low_hz``, ``high_hz`` (Butterworth passband edges) and ``order``.
``hum``
    ``level_dbfs`` (RMS of the fundamental), ``mains_hz``, ``harmonics_db`` (list, dB re the
    fundamental).
``crashes``
    ``peak_dbfs``, ``rate_per_s``, ``decay_s``.
``bandpass`` / ``highpass`` / ``lowpass``
    Butterworth (causal): ``low_hz`` and ``high_hz`` / ``cutoff_hz``; ``order`` (default 4).
    These and ``clip`` and ``gain`` are the stages of :mod:`voiceband.chain`.
``clip``
    Symmetric hard clipping at ``level_dbfs`` (sample peak, e.g. −6 for clipping below full
    scale).
``gain``
    ``gain_db``.

Every noise stage gets its own seed derived from the spec's ``seed`` and the stage's
position, so a recording is reproducible from its spec alone.  The manifest
(``manifest.json`` in the output folder) records, for each file, the spec, seed, rate,
duration, sample format, generator version and the SHA-256 of the file's bytes.
"""

from __future__ import annotations

import contextlib
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Iterable, Union

import numpy as np

from .. import validate
from ..errors import ChainFileError, SignalValueError

__all__ = [
    "GENERATOR_VERSION",
    "MANIFEST_NAME",
    "CorpusSpec",
    "ManifestEntry",
    "read_spec",
    "render",
    "generate",
    "verify",
    "render_entry",
    "manifest_document",
    "default_spec_paths",
]

#: Version of the generated audio.  Change it whenever a change to the synthesiser, the
#: noise generators or the rendering changes any output sample.
GENERATOR_VERSION = "1"
#: Manifest file name, written into the output folder.
MANIFEST_NAME = "manifest.json"

_SUBTYPES = {16: "PCM_16", 24: "PCM_24"}
_NOISE_KINDS = ("white", "pink", "hiss", "hum", "crashes")
_FILTER_KINDS = ("bandpass", "highpass", "lowpass", "clip", "gain")
_TOP_KEYS = {"description", "output", "sample_rate_hz", "duration_s", "seed", "bits", "speech", "stage"}
_SPEECH_KEYS = {"voice", "effort", "active_level_dbfs"}
#: Lowest filter edge of a stage (Hz): below it a Butterworth section at these rates is numerically
#: meaningless and nothing of a voice channel is left to shape (common practice: 20 Hz audio band, with margin).
_MIN_EDGE_HZ = 10.0
#: Ranges of the other stage numbers (low, high, unit): wide enough for any plausible channel, narrow
#: enough that a typing slip (gain_db = -1e6 writing silence) is refused instead of rendered.
_STAGE_RANGES = {
    "gain_db": (-60.0, 40.0, "dB"),
    "level_dbfs": (-120.0, 0.0, "dBFS"),
    "snr_db": (-60.0, 120.0, "dB"),
    "peak_dbfs": (-120.0, 0.0, "dBFS"),
    "mains_hz": (40.0, 70.0, "Hz"),
    "rate_per_s": (0.0, 100.0, "per second"),
    "decay_s": (0.0005, 2.0, "s"),
}
#: Largest spec file read (bytes).
_MAX_SPEC_BYTES = 1 << 20
_STAGE_KEYS = {
    "white": {"level_dbfs", "snr_db"},
    "pink": {"level_dbfs", "snr_db"},
    "hiss": {"level_dbfs", "snr_db", "low_hz", "high_hz", "order"},
    "hum": {"level_dbfs", "mains_hz", "harmonics_db"},
    "crashes": {"peak_dbfs", "rate_per_s", "decay_s"},
    "bandpass": {"low_hz", "high_hz", "order"},
    "highpass": {"cutoff_hz", "order"},
    "lowpass": {"cutoff_hz", "order"},
    "clip": {"level_dbfs"},
    "gain": {"gain_db"},
}


@dataclass(frozen=True)
class CorpusSpec:
    """One recording of the synthetic corpus, as read from its spec file."""

    path: str
    description: str
    output: str
    sample_rate_hz: int
    duration_s: float
    seed: int
    bits: int
    voice: str
    effort: str
    active_level_dbfs: float
    stages: tuple = field(default_factory=tuple)


@dataclass(frozen=True)
class ManifestEntry:
    """What the manifest records for one generated file."""

    file: str
    spec: str
    description: str
    seed: int
    sample_rate_hz: int
    duration_s: float
    frames: int
    subtype: str
    generator_version: str
    sha256: str


# --------------------------------------------------------------------------- reading


def _toml():
    try:
        import tomllib  # Python ≥ 3.11
    except ModuleNotFoundError:  # pragma: no cover - depends on the interpreter
        try:
            import tomli as tomllib
        except ModuleNotFoundError:
            raise ChainFileError(
                "reading corpus spec files needs Python 3.11 or the 'tomli' package (pip install tomli)."
            ) from None
    return tomllib


def _where(path: Path, section: str = "") -> str:
    return f"'{path.name}'" + (f" [{section}]" if section else "")


def _unknown_keys(table: dict, allowed: set, where: str) -> None:
    extra = sorted(set(table) - allowed)
    if extra:
        raise ChainFileError(f"{where} has an unknown key '{extra[0]}'; allowed keys are {', '.join(sorted(allowed))}.")


def _number(table: dict, key: str, where: str, *, default: Any = None, required: bool = False) -> Any:
    if key not in table:
        if required:
            raise ChainFileError(f"{where} needs '{key}'.")
        return default
    v = table[key]
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not np.isfinite(v):
        raise ChainFileError(f"{where}: '{key}' must be a number, got {v!r}.")
    return float(v)


def _text(table: dict, key: str, where: str, *, default: Any = None, required: bool = False) -> Any:
    if key not in table:
        if required:
            raise ChainFileError(f"{where} needs '{key}'.")
        return default
    v = table[key]
    if not isinstance(v, str) or not v.strip():
        raise ChainFileError(f"{where}: '{key}' must be non-empty text, got {v!r}.")
    return v


def _whole(table: dict, key: str, where: str, *, default: Any = None, required: bool = False) -> Any:
    if key not in table:
        if required:
            raise ChainFileError(f"{where} needs '{key}'.")
        return default
    v = table[key]
    if isinstance(v, bool) or not isinstance(v, int):
        raise ChainFileError(f"{where}: '{key}' must be a whole number, got {v!r}.")
    return int(v)


def read_spec(path: Union[str, os.PathLike]) -> CorpusSpec:
    """Read and check one spec file.

    Raises
    ------
    ChainFileError
        The file is missing, is not TOML, or has a missing, unknown or bad key; the message
        names the file, the key and what was expected.
    """
    from .speech import EFFORTS, VOICES

    p = Path(path)
    from ..inputs import regular_file

    if not os.path.lexists(p):
        raise ChainFileError(f"No such spec file: '{p}'.")
    st = regular_file(p, what="a spec file", error=ChainFileError)
    if st.st_size > _MAX_SPEC_BYTES:
        raise ChainFileError(f"'{p}' is {st.st_size} bytes long; a spec file is a short TOML text (at most 1 MB).")
    try:
        data = _toml().loads(p.read_text(encoding="utf-8"))
    except OSError as exc:
        raise ChainFileError(f"cannot read the spec file '{p}': {os.strerror(exc.errno or 5).lower()}.") from None
    except UnicodeDecodeError:
        raise ChainFileError(f"'{p.name}' is not a text file.") from None
    except ValueError as exc:  # tomllib.TOMLDecodeError subclasses ValueError
        raise ChainFileError(f"'{p.name}' is not valid TOML ({exc}).") from None
    w = _where(p)
    _unknown_keys(data, _TOP_KEYS, w)
    description = _text(data, "description", w, required=True)
    output = _text(data, "output", w, required=True)
    if Path(output).name != output or Path(output).suffix.lower() not in (".wav", ".flac"):
        raise ChainFileError(f"{w}: 'output' must be a plain .wav or .flac file name, got {output!r}.")
    fs = _whole(data, "sample_rate_hz", w, required=True)
    try:
        validate.sample_rate_hz(fs)
    except SignalValueError:
        raise ChainFileError(
            f"{w}: 'sample_rate_hz' must be {validate.MIN_SAMPLE_RATE_HZ}–{validate.MAX_SAMPLE_RATE_HZ} Hz, "
            f"got {fs}.") from None
    duration = _number(data, "duration_s", w, required=True)
    if not 1.0 <= duration <= 600.0:
        raise ChainFileError(f"{w}: 'duration_s' must be 1–600 s, got {duration:g}.")
    seed = _whole(data, "seed", w, required=True)
    if seed < 0:
        raise ChainFileError(f"{w}: 'seed' must not be negative, got {seed}.")
    bits = _whole(data, "bits", w, default=16)
    if bits not in _SUBTYPES:
        raise ChainFileError(f"{w}: 'bits' must be 16 or 24, got {bits}.")
    speech = data.get("speech")
    if not isinstance(speech, dict):
        raise ChainFileError(f"{w} needs a [speech] table (voice, effort, active_level_dbfs).")
    ws = _where(p, "speech")
    _unknown_keys(speech, _SPEECH_KEYS, ws)
    voice = _text(speech, "voice", ws, default="medium")
    if voice not in VOICES:
        raise ChainFileError(f"{ws}: 'voice' must be one of {', '.join(VOICES)}, got {voice!r}.")
    effort = _text(speech, "effort", ws, default="normal")
    if effort not in EFFORTS:
        raise ChainFileError(f"{ws}: 'effort' must be one of {', '.join(EFFORTS)}, got {effort!r}.")
    level = _number(speech, "active_level_dbfs", ws, default=-26.0)
    if not -60.0 <= level <= 0.0:
        raise ChainFileError(f"{ws}: 'active_level_dbfs' must be -60 to 0 dBFS, got {level:g}.")
    raw_stages = data.get("stage", [])
    if not isinstance(raw_stages, list) or not all(isinstance(s, dict) for s in raw_stages):
        raise ChainFileError(f"{w}: stages must be written as [[stage]] tables.")
    stages = tuple(_check_stage(s, i, p, fs) for i, s in enumerate(raw_stages, start=1))
    return CorpusSpec(
        path=str(p),
        description=description.strip(),
        output=output,
        sample_rate_hz=fs,
        duration_s=duration,
        seed=seed,
        bits=bits,
        voice=voice,
        effort=effort,
        active_level_dbfs=level,
        stages=stages,
    )


def _check_stage(stage: dict, index: int, path: Path, fs: int) -> tuple:
    """Validate one [[stage]] table; returns ``(kind, options)`` with options a sorted tuple of pairs."""
    w = _where(path, f"stage {index}")
    kind = _text(stage, "kind", w, required=True)
    if kind not in _STAGE_KEYS:
        raise ChainFileError(f"{w}: 'kind' must be one of {', '.join(_NOISE_KINDS + _FILTER_KINDS)}, got {kind!r}.")
    body = {k: v for k, v in stage.items() if k != "kind"}
    _unknown_keys(body, _STAGE_KEYS[kind], w)
    opts: dict[str, Any] = {}
    for key, value in body.items():
        if key == "order":
            opts[key] = _whole(body, key, w)
            if not 1 <= opts[key] <= 10:
                raise ChainFileError(f"{w}: 'order' must be 1–10, got {opts[key]}.")
        elif key == "harmonics_db":
            if not isinstance(value, list) or not value or not all(
                isinstance(v, (int, float)) and not isinstance(v, bool) for v in value
            ):
                raise ChainFileError(f"{w}: 'harmonics_db' must be a list of numbers, got {value!r}.")
            opts[key] = tuple(float(v) for v in value)
        else:
            opts[key] = _number(body, key, w)
    if kind in ("white", "pink", "hiss") and ("level_dbfs" in opts) == ("snr_db" in opts):
        raise ChainFileError(f"{w}: give exactly one of 'level_dbfs' and 'snr_db'.")
    required = {
        "hum": ("level_dbfs",),
        "crashes": ("peak_dbfs",),
        "bandpass": ("low_hz", "high_hz"),
        "highpass": ("cutoff_hz",),
        "lowpass": ("cutoff_hz",),
        "clip": ("level_dbfs",),
        "gain": ("gain_db",),
    }.get(kind, ())
    for key in required:
        if key not in opts:
            raise ChainFileError(f"{w}: a '{kind}' stage needs '{key}'.")
    for key in ("low_hz", "high_hz", "cutoff_hz"):
        if key in opts and not _MIN_EDGE_HZ <= opts[key] < fs / 2.0:
            raise ChainFileError(
                f"{w}: '{key}' must be from {_MIN_EDGE_HZ:g} Hz up to {fs / 2:g} Hz (Nyquist), got {opts[key]:g}.")
    for key, (lo, hi, unit) in _STAGE_RANGES.items():
        if key in opts and not lo <= opts[key] <= hi and not (kind == "clip" and key == "level_dbfs"):
            raise ChainFileError(f"{w}: '{key}' must be {lo:g} to {hi:g} {unit}, got {opts[key]:g}.")
    if "harmonics_db" in opts and not all(-120.0 <= v <= 0.0 for v in opts["harmonics_db"]):
        raise ChainFileError(f"{w}: each of 'harmonics_db' must be -120 to 0 dB (re the fundamental).")
    if kind == "clip" and not -60.0 <= opts["level_dbfs"] <= 0.0:
        raise ChainFileError(f"{w}: the clip 'level_dbfs' must be -60 to 0 dBFS peak, got {opts['level_dbfs']:g}.")
    return kind, tuple(sorted(opts.items()))


# --------------------------------------------------------------------------- rendering


def _stage_seed(seed: int, index: int) -> int:
    """Independent, reproducible seed for stage ``index`` (1-based) of a spec."""
    return int(np.random.SeedSequence([seed, index]).generate_state(1)[0])


def render(spec: CorpusSpec) -> np.ndarray:
    """Samples of one spec (float64, full scale ±1.0), before quantisation.

    Raises
    ------
    ChainFileError
        A stage's values are rejected by its generator, or the result exceeds full scale
        (lower a level or add a ``clip`` stage).
    """
    from ..chain import Clipper, Filter, Gain
    from . import noise
    from .speech import synthesize_speech

    fs = spec.sample_rate_hz
    w = _where(Path(spec.path))
    try:
        x = synthesize_speech(
            spec.duration_s, fs, voice=spec.voice, effort=spec.effort, seed=spec.seed,
            active_level_dbfs=spec.active_level_dbfs,
        )
    except SignalValueError as exc:
        raise ChainFileError(f"{w}: {exc}") from None
    n = x.size
    for index, (kind, items) in enumerate(spec.stages, start=1):
        o = dict(items)
        seed = _stage_seed(spec.seed, index)
        ws = _where(Path(spec.path), f"stage {index}")
        try:
            if kind in _NOISE_KINDS:
                level = o.get("level_dbfs")
                if "snr_db" in o:
                    level = spec.active_level_dbfs - o["snr_db"]
                if kind == "white":
                    add = noise.white_noise(spec.duration_s, fs, level_dbfs=level, seed=seed)
                elif kind == "pink":
                    add = noise.pink_noise(spec.duration_s, fs, level_dbfs=level, seed=seed)
                elif kind == "hiss":
                    add = noise.receiver_hiss(
                        spec.duration_s, fs, level_dbfs=level, seed=seed,
                        low_hz=o.get("low_hz", 300.0), high_hz=o.get("high_hz", 3000.0), order=int(o.get("order", 4)),
                    )
                elif kind == "hum":
                    add = noise.mains_hum(
                        spec.duration_s, fs, level_dbfs=level, seed=seed, mains_hz=o.get("mains_hz", 50.0),
                        harmonics_db=o.get("harmonics_db", noise.DEFAULT_HUM_HARMONICS_DB),
                    )
                else:
                    add = noise.static_crashes(
                        spec.duration_s, fs, peak_dbfs=o["peak_dbfs"], seed=seed,
                        rate_per_s=o.get("rate_per_s", 0.5), decay_s=o.get("decay_s", 0.03),
                    )
                x = x + add[:n]
            elif kind in ("bandpass", "highpass", "lowpass"):
                if kind == "bandpass" and not o["low_hz"] < o["high_hz"]:
                    raise ChainFileError(f"{ws}: 'low_hz' must be below 'high_hz'.")
                x = Filter(kind=kind, order=int(o.get("order", 4)), cutoff_hz=o.get("cutoff_hz"),
                           low_hz=o.get("low_hz"), high_hz=o.get("high_hz")).process(x, fs)
            elif kind == "clip":
                x = Clipper(mode="hard", level_dbfs=o["level_dbfs"]).process(x, fs)
            else:
                x = Gain.from_db(o["gain_db"]).process(x, fs)
        except SignalValueError as exc:
            raise ChainFileError(f"{ws}: {exc}") from None
    peak = float(np.max(np.abs(x)))
    if peak > 1.0:
        raise ChainFileError(
            f"{w} produces samples beyond full scale (peak {20 * np.log10(peak):+.1f} dBFS); "
            "lower a level or add a clip stage."
        )
    return x


# --------------------------------------------------------------------------- files


def default_spec_paths(folder: Union[str, os.PathLike] = "corpus_synthetic") -> list[Path]:
    """All ``*.toml`` spec files in ``folder``, sorted by name."""
    return sorted(Path(folder).glob("*.toml"))


def render_entry(spec: CorpusSpec) -> tuple[np.ndarray, ManifestEntry]:
    """The samples of ``spec`` and its manifest entry, whose SHA-256 is that of the bytes
    :func:`voiceband.audio.write` writes for them (computed in memory; nothing is written)."""
    import hashlib

    from ..audio import encode

    x = render(spec)
    subtype = _SUBTYPES[spec.bits]
    entry = ManifestEntry(
        file=spec.output,
        spec=Path(spec.path).name,
        description=spec.description,
        seed=spec.seed,
        sample_rate_hz=spec.sample_rate_hz,
        duration_s=spec.duration_s,
        frames=int(x.size),
        subtype=subtype,
        generator_version=GENERATOR_VERSION,
        sha256=hashlib.sha256(encode(spec.output, x, spec.sample_rate_hz, subtype=subtype)).hexdigest(),
    )
    return x, entry


def manifest_document(entries: dict[str, Any]) -> dict:
    """The ``manifest.json`` document for ``entries`` (file name -> :class:`ManifestEntry`, or the
    entry as read from an earlier manifest), sorted by file name."""
    return {
        "generator": "voiceband synth",
        "generator_version": GENERATOR_VERSION,
        "files": [entries[k] for k in sorted(entries)],
    }


def _read_specs(spec_paths: Iterable[Union[str, os.PathLike]]) -> list[CorpusSpec]:
    specs = [read_spec(p) for p in spec_paths]
    if not specs:
        raise ChainFileError("no spec files given.")
    seen: dict[str, str] = {}
    for s in specs:
        if s.output in seen:
            raise ChainFileError(
                f"'{Path(s.path).name}' and '{Path(seen[s.output]).name}' both write '{s.output}'."
            )
        seen[s.output] = s.path
    return specs


def _load_manifest(path: Path) -> dict:
    import json

    if not path.is_file():
        return {}
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        return {e["file"]: e for e in data.get("files", [])}
    except (ValueError, KeyError, TypeError, AttributeError):
        raise ChainFileError(f"'{path}' is not a voiceband corpus manifest.") from None


def generate(
    spec_paths: Iterable[Union[str, os.PathLike]],
    out_dir: Union[str, os.PathLike],
    *,
    force: bool = False,
    progress: Callable[[ManifestEntry], None] | None = None,
) -> list[ManifestEntry]:
    """Render every spec into ``out_dir`` and update ``out_dir/manifest.json``.

    All specs are read and every output path is checked before anything is written, so a
    bad spec or a refused overwrite leaves the folder untouched.  Manifest entries of
    files not regenerated in this run are kept.

    Raises
    ------
    ChainFileError
        A bad spec (see :func:`read_spec`, :func:`render`).
    OutputExistsError
        A WAV or the manifest exists and ``force`` is false.
    """
    from ..audio import write
    from ..outputs import atomic_output, check_writable, sweep_stale
    from ..serialize import write_json

    specs = _read_specs(spec_paths)
    out = Path(out_dir)
    manifest_path = out / MANIFEST_NAME
    for s in specs:  # names checked for length before any stat of them
        check_writable(out / s.output, force=force, make_folders=True)
    check_writable(manifest_path, force=force, make_folders=True)
    if os.path.lexists(out) and not out.is_dir():
        raise ChainFileError(f"'{out}' is a file; --out needs a folder.")
    entries = _load_manifest(manifest_path)
    if out.is_dir():
        sweep_stale(out)
    written = []
    # Every file goes to a temporary of its own; they replace their destinations together only when
    # all specs have rendered and the manifest is ready, so a failure half-way leaves the folder as it was.
    with contextlib.ExitStack() as stack:
        for s in specs:
            x, e = render_entry(s)
            tmp = stack.enter_context(atomic_output(out / s.output, force=force, make_folders=True))
            write(tmp, x, s.sample_rate_hz, subtype=e.subtype, force=True)
            entries[e.file] = e
            written.append(e)
        tmp = stack.enter_context(atomic_output(manifest_path, force=True, make_folders=True))
        write_json(manifest_document(entries), tmp, force=True)
    if progress is not None:
        for e in written:
            progress(e)
    return written


def verify(
    spec_paths: Iterable[Union[str, os.PathLike]],
    manifest_path: Union[str, os.PathLike],
) -> list[tuple[str, str | None, str]]:
    """Regenerate each spec in memory and compare its hash with the manifest (writes nothing).

    Returns
    -------
    list of (file, manifest sha256 or None, regenerated sha256)
    """
    specs = _read_specs(spec_paths)
    mp = Path(manifest_path)
    try:
        missing = not mp.is_file()
    except OSError:  # a name too long, a loop of links...: said by the input check below
        missing = False
    if missing:
        raise ChainFileError(f"No manifest at '{mp}'.")
    from ..inputs import regular_file

    regular_file(mp, what="a corpus manifest", error=ChainFileError)
    entries = _load_manifest(mp)
    out = []
    for s in specs:
        e = render_entry(s)[1]
        recorded = entries.get(s.output)
        out.append((s.output, None if recorded is None else str(recorded.get("sha256")), e.sha256))
    return out
