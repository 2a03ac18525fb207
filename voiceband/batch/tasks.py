"""What a worker runs for one file: plain data in (paths, settings), plain data out (dicts), never an exception.

These functions are shipped to workers by reference (module and name), so a worker process or
Dask worker needs voiceband installed and the files readable at the same paths.
"""

from __future__ import annotations

import os
from typing import Any, Optional

__all__ = ["hash_task", "analyse_task", "error_sentence"]


def error_sentence(exc: BaseException) -> str:
    """One line saying why a file failed: our own sentence, or the internal error's type and text."""
    from ..errors import VoicebandError

    if isinstance(exc, VoicebandError):
        text = str(exc)
    elif isinstance(exc, MemoryError):
        text = "out of memory while analysing this file."
    else:
        text = f"internal error ({type(exc).__name__}: {exc})."
    return " ".join(text.split()) or type(exc).__name__


def hash_task(path: str) -> dict[str, Any]:
    """``{"sha256": hex or None, "error": sentence or None}`` for one file."""
    from .hashing import file_sha256

    try:
        if os.path.isdir(path):
            return {"sha256": None, "error": f"'{path}' is a folder, not an audio file."}
        return {"sha256": file_sha256(path), "error": None}
    except FileNotFoundError:
        return {"sha256": None, "error": f"No such file: '{path}'."}
    except PermissionError:
        return {"sha256": None, "error": f"'{path}' cannot be read (permission denied)."}
    except OSError as exc:
        return {"sha256": None, "error": f"'{path}' cannot be read ({exc.strerror or exc})."}


def analyse_task(path: str, channel: str, profile: Optional[str] = None) -> dict[str, Any]:
    """Analyse one file as ``voiceband analyze`` does.

    Returns
    -------
    dict
        ``{"status": "ok", "analysis": <analyze JSON document>, "extra": {verdict columns}}`` or
        ``{"status": "failed", "error": <one sentence>}``.
    """
    try:
        from ..analysis import analyze_file
        from ..serialize import to_jsonable

        result = analyze_file(path, channel=channel)
        doc = to_jsonable(result)
        extra = profile_columns(profile, result) if profile else {}
        return {"status": "ok", "analysis": doc, "extra": extra}
    except Exception as exc:  # a worker reports every failure as data (Ctrl-C and signals still stop it)
        return {"status": "failed", "error": error_sentence(exc)}


def profile_columns(profile: str, result: Any) -> dict[str, Any]:
    """Verdict columns of a service profile for one analysis result (see :mod:`voiceband.batch.profile`)."""
    from .profile import verdict_columns

    return verdict_columns(profile, result)
