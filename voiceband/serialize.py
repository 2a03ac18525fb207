"""JSON serialisation of results: dataclasses, numpy values, and null for non-finite numbers."""

from __future__ import annotations

import dataclasses
import enum
import json
import math
from pathlib import Path
from typing import Any

import numpy as np

__all__ = ["to_jsonable", "dumps_json", "write_json"]


def to_jsonable(obj: Any) -> Any:
    """Convert ``obj`` to plain JSON types; NaN and ±Inf become ``None`` (JSON null).

    Text is valid Unicode: the bytes of a file name that are not UTF-8 become U+FFFD
    (:func:`voiceband.outputs.name_text`), never a lone-surrogate ``\\udcxx`` escape.
    """
    if obj is None or isinstance(obj, bool):
        return obj
    if isinstance(obj, str):
        return _text(obj)
    if isinstance(obj, (int, np.integer)) and not isinstance(obj, bool):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        v = float(obj)
        return v if math.isfinite(v) else None
    if isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, np.ndarray):
        return _array(obj)
    if isinstance(obj, enum.Enum):
        return to_jsonable(obj.value)
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: to_jsonable(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
    if isinstance(obj, dict):
        return {_text(str(k)): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [to_jsonable(v) for v in obj]
    if isinstance(obj, Path):
        return _text(str(obj))
    raise TypeError(f"cannot serialise {type(obj).__name__} to JSON")


def _array(a: np.ndarray) -> list:
    """A numeric array as (nested) lists of Python numbers, non-finite values as None.

    The same as converting element by element, but numbers are converted by ``tolist`` at once
    (a sweep measurement's JSON holds several thousand).
    """
    if a.ndim == 0:
        return to_jsonable(a.item())
    if a.dtype.kind in "biu":
        return a.tolist()
    if a.dtype.kind != "f":
        return [to_jsonable(v) for v in a.tolist()]
    if a.ndim > 1:
        return [_array(row) for row in a]
    values = a.tolist()
    if not np.isfinite(a).all():
        values = [v if math.isfinite(v) else None for v in values]
    return values


def _text(s: str) -> str:
    if s.isascii():
        return s
    from .outputs import name_text

    return name_text(s)


def dumps_json(data: Any) -> str:
    """JSON text with NaN/Inf as null (never the non-standard ``NaN`` token)."""
    return json.dumps(to_jsonable(data), indent=2, allow_nan=False)


def write_json(data: Any, path: Path, *, force: bool = False, make_folders: bool = False) -> Path:
    """Write JSON atomically; refuse to overwrite without ``force``."""
    from .outputs import atomic_output

    text = dumps_json(data)
    with atomic_output(path, force=force, make_folders=make_folders) as tmp:
        tmp.write_text(text + "\n", encoding="utf-8")
    return path
