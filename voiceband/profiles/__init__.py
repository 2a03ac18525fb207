"""Service profiles: what a voice service expects of transmit audio, as data files with their sources.

A profile is a TOML file (the built-in ones live in ``voiceband/profiles/data/``)::

    name = "ssb-voice"
    title = "SSB voice (J3E)"
    description = "One sentence about the service."

    [passband]                       # drawn on the spectrum figure; the cutoff search works inside it
    low_hz = 300.0
    high_hz = 2700.0
    source = "where the numbers come from, or 'common practice'"

    [[limit]]                        # one per judged quantity
    check = "occupied_bandwidth_hz"  # one of CHECKS (voiceband.profiles.verdicts)
    pass_min = 2000.0                # optional bounds: pass inside [pass_min, pass_max],
    pass_max = 2800.0                #   marginal inside [marginal_min, marginal_max], else fail
    marginal_max = 3000.0
    source = "a source, or 'common practice'"

Every limit must name its source; a missing marginal bound falls back to the pass bound.
:func:`load_profile` takes a built-in name or a path to a user's own file.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Optional, Union

from ..errors import VoicebandError

__all__ = ["Limit", "Profile", "ProfileError", "load_profile", "profile_names", "BUILTIN_DIR"]

#: Folder of the built-in profile files.
BUILTIN_DIR = Path(__file__).parent / "data"

_BOUNDS = ("pass_min", "pass_max", "marginal_min", "marginal_max")


class ProfileError(VoicebandError, ValueError):
    """A service profile cannot be found, read or is inconsistent."""


@dataclass(frozen=True)
class Limit:
    """One judged quantity of a profile: pass and marginal bounds (``None`` = unbounded) and a source."""

    check: str
    pass_min: Optional[float]
    pass_max: Optional[float]
    marginal_min: Optional[float]
    marginal_max: Optional[float]
    source: str


@dataclass(frozen=True)
class Profile:
    """A service profile (see the module docstring for the file format)."""

    name: str
    title: str
    description: str
    passband_low_hz: float
    passband_high_hz: float
    passband_source: str
    limits: tuple[Limit, ...]
    path: str


def profile_names() -> list[str]:
    """Names of the built-in profiles."""
    return sorted(p.stem for p in BUILTIN_DIR.glob("*.toml"))


def _toml():
    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib
    return tomllib


def _number(table: dict, key: str, where: str) -> Optional[float]:
    if key not in table:
        return None
    v = table[key]
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(float(v)):
        raise ProfileError(f"{where}: '{key}' must be a finite number; got {v!r}.")
    return float(v)


def _text(table: dict, key: str, where: str) -> str:
    v = table.get(key)
    if not isinstance(v, str) or not v.strip():
        raise ProfileError(f"{where}: '{key}' must be a non-empty text.")
    return v.strip()


def load_profile(name_or_path: Union[str, os.PathLike]) -> Profile:
    """A built-in profile by name (``ssb-voice``, ``telephone``, ...) or a user's TOML profile file.

    Raises
    ------
    ProfileError
        No such profile, the file is not TOML, or a value is missing or inconsistent.
    """
    from .verdicts import CHECKS

    text = str(name_or_path)
    builtin = BUILTIN_DIR / f"{text}.toml"
    if os.sep not in text and "/" not in text and not text.endswith(".toml") and builtin.is_file():
        path = builtin
    else:
        path = Path(text)
        if not path.is_file():
            raise ProfileError(
                f"no profile '{text}': give one of {', '.join(profile_names())} or the path of a TOML profile file.")
    where = f"profile '{path}'"
    try:
        data = _toml().loads(path.read_text(encoding="utf-8"))
    except UnicodeDecodeError:
        raise ProfileError(f"{where} is not a text file.") from None
    except OSError as exc:
        raise ProfileError(f"{where} cannot be read ({exc.strerror or exc}).") from None
    except Exception as exc:  # tomllib.TOMLDecodeError
        raise ProfileError(f"{where} is not valid TOML ({exc}).") from None
    band = data.get("passband")
    if not isinstance(band, dict):
        raise ProfileError(f"{where} needs a [passband] table with low_hz, high_hz and source.")
    lo, hi = _number(band, "low_hz", f"{where} [passband]"), _number(band, "high_hz", f"{where} [passband]")
    if lo is None or hi is None or not 0.0 <= lo < hi:
        raise ProfileError(f"{where} [passband]: need 0 <= low_hz < high_hz; got {lo!r} and {hi!r}.")
    limits = []
    raw = data.get("limit", [])
    if not isinstance(raw, list) or not raw:
        raise ProfileError(f"{where} needs at least one [[limit]] table.")
    seen = set()
    for i, item in enumerate(raw, start=1):
        w = f"{where} limit {i}"
        if not isinstance(item, dict):
            raise ProfileError(f"{w} must be a table.")
        unknown = set(item) - {"check", "source", *_BOUNDS}
        if unknown:
            raise ProfileError(f"{w}: unknown key(s) {', '.join(sorted(unknown))}.")
        check = _text(item, "check", w)
        if check not in CHECKS:
            raise ProfileError(f"{w}: unknown check '{check}'; known checks are {', '.join(CHECKS)}.")
        if check in seen:
            raise ProfileError(f"{w}: check '{check}' appears twice.")
        seen.add(check)
        b = {k: _number(item, k, w) for k in _BOUNDS}
        if b["pass_min"] is None and b["pass_max"] is None:
            raise ProfileError(f"{w}: give pass_min, pass_max or both.")
        if b["pass_min"] is not None and b["pass_max"] is not None and b["pass_min"] > b["pass_max"]:
            raise ProfileError(f"{w}: pass_min must not exceed pass_max.")
        mmin = b["marginal_min"] if b["marginal_min"] is not None else b["pass_min"]
        mmax = b["marginal_max"] if b["marginal_max"] is not None else b["pass_max"]
        if (mmin is not None and b["pass_min"] is not None and mmin > b["pass_min"]) or (
                mmax is not None and b["pass_max"] is not None and mmax < b["pass_max"]):
            raise ProfileError(f"{w}: the marginal range must contain the pass range.")
        limits.append(Limit(check, b["pass_min"], b["pass_max"], mmin, mmax, _text(item, "source", w)))
    return Profile(
        name=_text(data, "name", where),
        title=_text(data, "title", where),
        description=_text(data, "description", where),
        passband_low_hz=lo,
        passband_high_hz=hi,
        passband_source=_text(band, "source", f"{where} [passband]"),
        limits=tuple(limits),
        path=str(path),
    )
