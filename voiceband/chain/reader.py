"""Chain files: TOML with a ``name`` and an ordered list of ``[[stage]]`` tables.

::

    name = "Board B: 4-pole Chebyshev"
    description = "optional text"

    [[stage]]
    kind = "gain"
    rf_ohm = "22k"            # non-inverting op-amp stage, gain 1 + Rf/Rg
    rg_ohm = "1k"
    gbw_hz = "1M"

    [[stage]]
    kind = "lowpass"
    type = "chebyshev1"       # butterworth | chebyshev1 | bessel | elliptic
    order = 4
    cutoff_hz = "2.7k"
    ripple_db = 0.5

Values may be numbers or strings with SI prefixes (``"47n"``, ``"68m"`` milli, ``"2.2k"``,
``"1M"`` mega, ``"4k7"``); a unit symbol, if written, must be the parameter's (``"47nF"`` for
``c_farad``). Time constants named ``*_us`` / ``*_ms`` are numbers in that unit, or text with
the unit written out (``"750us"``). Every problem is one sentence naming the file, the stage
number and what to write instead, raised as :class:`voiceband.errors.ChainFileError`.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any, Callable, Union

from ..errors import ChainFileError, SignalValueError
from .chain import Chain
from .stages import (
    FILTER_TYPES,
    RC,
    SSB,
    Channel,
    Clipper,
    Compressor,
    Emphasis,
    Filter,
    Gain,
    Ladder,
    LadderBranch,
    Microphone,
)
from .values import parse_value

__all__ = ["STAGE_PARAMETERS", "read_chain", "chain_from_dict"]

# kind -> {parameter: unit}; unit is a parse_value quantity, or "text", "int", "bool", "list",
# or "us"/"ms" for time constants written in micro- or milliseconds.
STAGE_PARAMETERS: dict[str, dict[str, str]] = {
    "gain": {"db": "db", "rf_ohm": "ohm", "rg_ohm": "ohm", "inverting": "bool", "gbw_hz": "hz"},
    "highpass": {"type": "text", "order": "int", "cutoff_hz": "hz", "ripple_db": "db", "stop_db": "db"},
    "lowpass": {"type": "text", "order": "int", "cutoff_hz": "hz", "ripple_db": "db", "stop_db": "db"},
    "bandpass": {"type": "text", "order": "int", "low_hz": "hz", "high_hz": "hz", "ripple_db": "db", "stop_db": "db"},
    "rc": {"mode": "text", "r_ohm": "ohm", "c_farad": "farad"},
    "ladder": {"source_ohm": "ohm", "load_ohm": "ohm", "first": "text", "elements": "list"},
    "microphone": {"model": "text", "rise_db": "db", "centre_hz": "hz", "q": "none", "boost_db": "db",
                   "below_hz": "hz"},
    "emphasis": {"mode": "text", "tau_us": "us"},
    "clipper": {"mode": "text", "level_db": "db", "level_dbfs": "db"},
    "compressor": {"threshold_db": "db", "ratio": "none", "attack_ms": "ms", "release_ms": "ms"},
    "ssb": {"method": "text", "phase_error_deg": "none", "amplitude_error_db": "db", "low_hz": "hz",
            "high_hz": "hz", "type": "text", "order": "int", "ripple_db": "db", "stop_db": "db"},
    "channel": {"snr_db": "db", "low_hz": "hz", "high_hz": "hz", "seed": "int"},
}

#: Parameters a stage cannot do without (alternatives are checked by the stage itself).
_REQUIRED: dict[str, tuple[str, ...]] = {
    "highpass": ("order", "cutoff_hz"),
    "lowpass": ("order", "cutoff_hz"),
    "bandpass": ("order", "low_hz", "high_hz"),
    "rc": ("mode", "r_ohm", "c_farad"),
    "ladder": ("source_ohm", "load_ohm", "first", "elements"),
    "microphone": ("model",),
    "emphasis": ("tau_us",),
    "compressor": ("threshold_db", "ratio"),
    "channel": ("snr_db",),
}

_EXAMPLES = {"farad": '"47n"', "henry": '"51.5m"', "ohm": '"2.2k"', "hz": '"2.7k"', "db": "-3", "none": "4",
             "us": "750", "ms": "5"}
_KEY_EXAMPLES = {"first": '"shunt"', "mode": '"highpass"', "model": '"presence"', "order": "4",
                 "elements": '["54.65n", "51.5m", "176.8n"]', "seed": "1"}
_TOP_KEYS = ("name", "description", "stage")


class _Problem(Exception):
    """A problem inside one stage; the reader adds the file and stage number."""


def _toml():
    try:
        import tomllib  # Python >= 3.11
    except ModuleNotFoundError:  # pragma: no cover - depends on the interpreter
        import tomli as tomllib
    return tomllib


def read_chain(path: Union[str, os.PathLike]) -> Chain:
    """Read a chain file.

    Raises
    ------
    ChainFileError
        Missing or unreadable file, not TOML, no name or stages, an unknown stage kind or parameter, a
        value in the wrong unit or out of range: one sentence naming the file, the stage and the fix.
    """
    p = Path(path)
    if not p.is_file():
        raise ChainFileError(f"no chain file at '{p}'; give the path of a .toml chain file.")
    try:
        text = p.read_text(encoding="utf-8")
    except UnicodeDecodeError:
        raise ChainFileError(f"'{p.name}' is not a text file; a chain file is TOML text.") from None
    except OSError as exc:
        raise ChainFileError(f"'{p.name}' cannot be read ({exc.strerror}); check its permissions.") from None
    try:
        data = _toml().loads(text)
    except ValueError as exc:  # tomllib.TOMLDecodeError subclasses ValueError
        raise ChainFileError(f"'{p.name}' is not valid TOML ({exc}); fix the syntax at that place.") from None
    return chain_from_dict(data, source=p)


def chain_from_dict(data: dict, *, source: Union[str, os.PathLike, None] = None) -> Chain:
    """Build a chain from the parsed TOML (a dict); ``source`` names the file in messages."""
    label = f"'{Path(source).name}'" if source is not None else "the chain"
    if not isinstance(data, dict):
        raise ChainFileError(f"{label} must be a TOML table with name and [[stage]] entries.")
    extra = sorted(set(data) - set(_TOP_KEYS))
    if extra:
        raise ChainFileError(
            f"{label} has an unknown top-level key '{extra[0]}'; use only name, description and [[stage]] tables.")
    name = data.get("name")
    if not isinstance(name, str) or not name.strip():
        raise ChainFileError(f"{label} needs a top-level name, e.g. name = \"Board A\".")
    raw = data.get("stage")
    if not isinstance(raw, list) or not raw:
        raise ChainFileError(f"{label} has no stages; add [[stage]] tables, each with a kind.")
    stages = []
    for i, table in enumerate(raw, start=1):
        where = f"{label} stage {i}"
        if not isinstance(table, dict):
            raise ChainFileError(f"{where} must be a [[stage]] table.")
        kind = table.get("kind")
        if kind not in STAGE_PARAMETERS:
            raise ChainFileError(
                f"{where} has {'no kind' if kind is None else f'an unknown kind {kind!r}'}; "
                f"write kind = one of {', '.join(STAGE_PARAMETERS)}.")
        try:
            stages.append(_build(kind, {k: v for k, v in table.items() if k != "kind"}))
        except (_Problem, SignalValueError, ValueError, TypeError) as exc:
            msg = str(exc).strip().rstrip(".")
            raise ChainFileError(f"{where} ({kind}): {msg}.") from None
    return Chain(name=name.strip(), stages=tuple(stages), path=None if source is None else str(source))


def _value(key: str, v: Any, unit: str) -> Any:
    if unit == "text":
        if not isinstance(v, str):
            raise _Problem(f"{key} must be text in quotes; got {v!r}")
        return v
    if unit == "bool":
        if not isinstance(v, bool):
            raise _Problem(f"{key} must be true or false; got {v!r}")
        return v
    if unit == "int":
        if isinstance(v, bool) or not isinstance(v, int):
            raise _Problem(f"{key} must be a whole number such as 4; got {v!r}")
        return v
    if unit == "list":
        return v
    if unit in ("us", "ms"):
        if isinstance(v, str):
            try:
                seconds = parse_value(v, unit="second")
            except ValueError as exc:
                raise _Problem(f"{key}: {exc}; write a number of {unit} such as {_EXAMPLES[unit]}") from None
            if not v.rstrip().endswith("s"):
                raise _Problem(f"{key} as text needs its unit, e.g. \"{_EXAMPLES[unit]}{unit}\"; or write a plain number of {unit}")
            return seconds * (1e6 if unit == "us" else 1e3)
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise _Problem(f"{key} must be a number of {unit}; got {v!r}")
        return float(v)
    try:
        return parse_value(v, unit=unit)
    except ValueError as exc:
        raise _Problem(f"{key}: {exc}; write it like {_EXAMPLES[unit]}") from None


def _build(kind: str, table: dict) -> Any:
    allowed = STAGE_PARAMETERS[kind]
    extra = sorted(set(table) - set(allowed))
    if extra:
        raise _Problem(f"unknown parameter '{extra[0]}'; a {kind} stage takes {', '.join(allowed)}")
    for key in _REQUIRED.get(kind, ()):
        if key not in table:
            example = _KEY_EXAMPLES.get(key, _EXAMPLES.get(allowed[key], "..."))
            raise _Problem(f"missing '{key}'; add a line such as {key} = {example}")
    v = {k: _value(k, table[k], allowed[k]) for k in table}
    return _BUILDERS[kind](v)


def _gain(v: dict) -> Gain:
    if "db" in v:
        if "rf_ohm" in v or "rg_ohm" in v or "inverting" in v:
            raise _Problem("give either db or rf_ohm and rg_ohm, not both")
        return Gain.from_db(v["db"], gbw_hz=v.get("gbw_hz"))
    if "rf_ohm" not in v or "rg_ohm" not in v:
        raise _Problem("give db, or rf_ohm and rg_ohm for an op-amp stage")
    return Gain.from_resistors(v["rf_ohm"], v["rg_ohm"], inverting=v.get("inverting", False), gbw_hz=v.get("gbw_hz"))


def _filter(kind: str) -> Callable[[dict], Filter]:
    def build(v: dict) -> Filter:
        t = v.get("type", "butterworth")
        if t not in FILTER_TYPES:
            raise _Problem(f"type {t!r} is unknown; write type = one of {', '.join(FILTER_TYPES)}")
        return Filter(kind=kind, type=t, order=v["order"], cutoff_hz=v.get("cutoff_hz"), low_hz=v.get("low_hz"),
                      high_hz=v.get("high_hz"), ripple_db=v.get("ripple_db"), stop_db=v.get("stop_db"))
    return build


def _branch(entry: Any, position: str, index: int) -> LadderBranch:
    where = f"element {index} ({position})"
    if isinstance(entry, dict):
        extra = sorted(set(entry) - {"l", "c", "arrangement"})
        if extra:
            raise _Problem(f"{where} has an unknown key '{extra[0]}'; use l, c and arrangement")
        l_h = _value(f"{where} l", entry["l"], "henry") if "l" in entry else None
        c_f = _value(f"{where} c", entry["c"], "farad") if "c" in entry else None
        arrangement = entry.get("arrangement", "single" if (l_h is None) != (c_f is None) else None)
        if arrangement is None:
            raise _Problem(f"{where} has both l and c; add arrangement = \"series\" or \"parallel\"")
        if arrangement not in ("series", "parallel", "single"):
            raise _Problem(f"{where}: arrangement must be \"series\" or \"parallel\"; got {arrangement!r}")
        try:
            return LadderBranch(position=position, l_henry=l_h, c_farad=c_f, arrangement=arrangement)
        except SignalValueError as exc:
            raise _Problem(f"{where}: {str(exc).rstrip('.')}") from None
    # a plain value: its unit says what it is, else shunt C / series L (a low-pass ladder)
    text = entry.strip() if isinstance(entry, str) else ""
    if text.endswith("H"):
        part = "henry"
    elif text.endswith("F"):
        part = "farad"
    else:
        part = "farad" if position == "shunt" else "henry"
    value = _value(f"{where}", entry, part)
    if part == "henry":
        return LadderBranch(position=position, l_henry=_pos(value, where))
    return LadderBranch(position=position, c_farad=_pos(value, where))


def _pos(value: float, where: str) -> float:
    if not value > 0:
        raise _Problem(f"{where} must be a positive part value; got {value:g}")
    return value


def _ladder(v: dict) -> Ladder:
    first = v["first"]
    if first not in ("shunt", "series"):
        raise _Problem(f"first must be \"shunt\" or \"series\"; got {first!r}")
    elements = v["elements"]
    if not isinstance(elements, list) or not elements:
        raise _Problem("elements must be a list of part values, e.g. elements = [\"54.65n\", \"51.5m\", \"176.8n\"]")
    order = ("shunt", "series") if first == "shunt" else ("series", "shunt")
    branches = tuple(_branch(e, order[i % 2], i + 1) for i, e in enumerate(elements))
    return Ladder(source_ohm=v["source_ohm"], load_ohm=v["load_ohm"], branches=branches)


def _ssb(v: dict) -> SSB:
    kw = {k: v[k] for k in v if k != "method"}
    return SSB(method=v.get("method", "phasing"), **kw)


_BUILDERS: dict[str, Callable[[dict], Any]] = {
    "gain": _gain,
    "highpass": _filter("highpass"),
    "lowpass": _filter("lowpass"),
    "bandpass": _filter("bandpass"),
    "rc": lambda v: RC(mode=v["mode"], r_ohm=v["r_ohm"], c_farad=v["c_farad"]),
    "ladder": _ladder,
    "microphone": lambda v: Microphone(**v),
    "emphasis": lambda v: Emphasis(mode=v.get("mode", "pre"), tau_us=v["tau_us"]),
    "clipper": lambda v: Clipper(**v),
    "compressor": lambda v: Compressor(**v),
    "ssb": _ssb,
    "channel": lambda v: Channel(**v),
}
