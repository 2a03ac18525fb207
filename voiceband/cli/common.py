"""Shared CLI plumbing: error mapping, JSON output, console."""

from __future__ import annotations

import functools
import os
import signal
import sys
import threading
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


class Terminated(BaseException):
    """Raised in the main thread by SIGTERM or SIGHUP, so open outputs unwind and remove their temporaries."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum
        self.signal_name = signal.Signals(signum).name


def _raise_terminated(signum: int, _frame: Any) -> None:
    from ..outputs import remove_temporaries

    remove_temporaries()
    raise Terminated(signum)


def _catch_termination() -> None:
    # Only the main thread may set handlers (CliRunner tests call commands from it too).
    if threading.current_thread() is not threading.main_thread():
        return
    for sig in (signal.SIGTERM, getattr(signal, "SIGHUP", None)):
        if sig is not None:
            signal.signal(sig, _raise_terminated)


def guarded(fn: Callable[..., Any]) -> Callable[..., Any]:
    """Wrap a command so user errors become one stderr sentence and a non-zero exit.

    Set ``VOICEBAND_DEBUG=1`` to see the traceback of an internal error.
    """

    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        _catch_termination()
        try:
            return fn(*args, **kwargs)
        except typer.Exit:
            raise
        except VoicebandError as exc:
            raise fail(str(exc)) from None
        except KeyboardInterrupt:
            raise fail("interrupted", 130) from None
        except Terminated as exc:
            raise fail(f"stopped by signal {exc.signal_name}; nothing was left half-written", 128 + exc.signum) from None
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


def emit_json(data: Any, target: str | None, *, force: bool = False, make_folders: bool = False) -> None:
    """Write JSON to ``target``: ``-`` for stdout, else a file path (atomically)."""
    from ..report.serialize import dumps_json, write_json

    if target is None:
        return
    if target == "-":
        sys.stdout.write(dumps_json(data) + "\n")
        sys.stdout.flush()
    else:
        write_json(data, Path(target), force=force, make_folders=make_folders)
