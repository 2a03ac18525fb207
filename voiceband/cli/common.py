"""Shared CLI plumbing: error mapping, JSON output, console."""

from __future__ import annotations

import functools
import os
import sys
from pathlib import Path
from typing import Any, Callable

import typer

from ..errors import VoicebandError

#: Exit codes: 0 ok, 2 bad input or refused output, 3 internal error.
EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 3


def fail(message: str, code: int = EXIT_BAD_INPUT) -> "typer.Exit":
    """Print one sentence to stderr and return the Exit to raise."""
    msg = message.strip()
    if msg and msg[-1] not in ".!?":
        msg += "."
    typer.echo(f"voiceband: {msg}", err=True)
    return typer.Exit(code)


def guarded(fn: Callable[..., Any]) -> Callable[..., Any]:
    """Wrap a command so user errors become one stderr sentence and a non-zero exit.

    Set ``VOICEBAND_DEBUG=1`` to see the traceback of an internal error.
    """

    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return fn(*args, **kwargs)
        except typer.Exit:
            raise
        except VoicebandError as exc:
            raise fail(str(exc)) from None
        except KeyboardInterrupt:
            raise fail("interrupted", 130) from None
        except MemoryError:
            raise fail("out of memory", EXIT_INTERNAL) from None
        except Exception as exc:  # never show a traceback to a user
            if os.environ.get("VOICEBAND_DEBUG"):
                raise
            raise fail(
                f"internal error ({type(exc).__name__}: {exc}); set VOICEBAND_DEBUG=1 for details",
                EXIT_INTERNAL,
            ) from None

    return wrapper


def emit_json(data: Any, target: str | None, *, force: bool = False) -> None:
    """Write JSON to ``target``: ``-`` for stdout, else a file path (atomically)."""
    from ..report.serialize import dumps_json, write_json

    if target is None:
        return
    if target == "-":
        sys.stdout.write(dumps_json(data) + "\n")
        sys.stdout.flush()
    else:
        write_json(data, Path(target), force=force)
