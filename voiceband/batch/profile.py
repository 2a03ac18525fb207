"""Service-profile verdicts as batch columns (``--profile NAME|FILE``).

The profiles and their judging belong to :mod:`voiceband.profiles`; this module only turns a
profile's verdicts on one analysis into columns: ``verdict`` (the worst status of the file:
``pass``, ``marginal`` or ``fail``; empty when nothing could be judged) and ``verdict.<check>``
for each limit of the profile (empty when that quantity could not be measured).
"""

from __future__ import annotations

import functools
from typing import Any

__all__ = ["profile_column_types", "profile_digest", "verdict_columns"]


@functools.lru_cache(maxsize=8)
def _load(name: str):
    from ..profiles import load_profile

    return load_profile(name)


def _checks(name: str) -> tuple[str, ...]:
    return tuple(dict.fromkeys(lim.check for lim in _load(name).limits))


def profile_column_types(name: str) -> tuple[tuple[str, str], ...]:
    """The verdict columns profile ``name`` adds to each row, with their types.

    Raises
    ------
    ProfileError
        No such built-in profile and no such profile file, or the file is not a valid profile.
    """
    return (("verdict", "string"),) + tuple((f"verdict.{c}", "string") for c in _checks(name))


def profile_digest(name: str) -> str:
    """SHA-256 of the profile's file, so that rows judged under other limits are not taken as recorded."""
    from .hashing import file_sha256

    return file_sha256(_load(name).path)


def verdict_columns(name: str, result: Any) -> dict[str, Any]:
    """The verdict columns of one :class:`~voiceband.results.AnalysisResult` under profile ``name``."""
    from ..profiles.verdicts import verdicts, worst

    judged = {v.check: v.status for v in verdicts(result, _load(name))}
    out: dict[str, Any] = {"verdict": worst(judged.values())}
    for c in _checks(name):
        out[f"verdict.{c}"] = judged.get(c)
    return out
