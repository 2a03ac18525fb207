"""Shared CLI plumbing: error mapping, JSON output, console."""

from __future__ import annotations

import errno
import functools
import io
import inspect
import os
import re
import signal
import sys
import threading
import warnings
import typing
from pathlib import Path
from typing import Any, Callable, Mapping, Optional

import typer

from ..errors import VoicebandError

#: Exit codes: 0 ok, 2 bad input or refused output, 3 internal error; 128 + N stopped by signal N
#: (141 when the reader of standard output went away, as a process killed by SIGPIPE).
EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 3
EXIT_BROKEN_PIPE = 128 + 13

# A numpy scalar's repr (np.float64(700.0)) shown as its value.
_NUMPY_REPR = re.compile(r"\bnp\.(?:float|int|uint|complex|bool_?|str_)\w*\(([^()]*)\)")


def fail(message: str, code: int = EXIT_BAD_INPUT) -> "typer.Exit":
    """Print one sentence to stderr and return the Exit to raise."""
    msg = _NUMPY_REPR.sub(r"\1", " ".join(message.split()))
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


def _option_names(fn: Callable[..., Any]) -> dict[str, str]:
    """Parameter name -> the option the user types (``peak_dbfs`` -> ``--peak-dbfs``), from the typer annotations."""
    names: dict[str, str] = {}
    try:
        hints = typing.get_type_hints(fn, include_extras=True)
    except Exception:  # pragma: no cover - unresolvable annotations: keep the message as it is
        return names
    for pname in inspect.signature(fn).parameters:
        for meta in getattr(hints.get(pname), "__metadata__", ()):
            # In Annotated[..., typer.Option("--name")] the first declaration may sit in ``default``.
            given = [getattr(meta, "default", None), *(getattr(meta, "param_decls", None) or ())]
            decls = [d for d in given if isinstance(d, str) and d.startswith("--")]
            if decls:
                names[pname] = decls[0].split("/")[0]
                if pname.endswith("_"):  # type_ (a Python keyword's stand-in) is 'type' to the library
                    names[pname.rstrip("_")] = names[pname]
    return names


def in_user_words(message: str, names: Mapping[str, str]) -> str:
    """``message`` with each internal parameter name replaced by the option the user typed."""
    for internal in sorted(names, key=len, reverse=True):
        if internal == names[internal]:
            continue
        # A snake_case name is internal wherever it appears; a plain word (``channel``) only where
        # it opens the sentence as its subject, so ordinary prose keeps its words.
        pattern = rf"(?<![\w-]){re.escape(internal)}(?![\w-])" if "_" in internal else rf"^{re.escape(internal)}\b"
        message = re.sub(pattern, names[internal], message)
    return message


def _quiet_stdout() -> None:
    # The reader went away: send whatever is still buffered, and the interpreter's last flush, nowhere.
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError, io.UnsupportedOperation):
        pass


#: Errors of writing to a stream that has no room or no longer exists (standard output on a full
#: disk, /dev/full, a closed descriptor); a broken pipe is the reader leaving, handled apart.
_STREAM_ERRNOS = {errno.ENOSPC, errno.EDQUOT, errno.EFBIG, errno.EIO, errno.EBADF}


def stdout_closed() -> bool:
    """Whether standard output is closed (``>&-``): nothing could be printed, and the first file
    opened would silently take descriptor 1."""
    if sys.stdout is None:
        return True
    try:
        os.fstat(1)
    except OSError:
        return True
    return False


def is_stream_error(exc: BaseException) -> bool:
    """An OSError from writing to a standard stream (no file name attached, no room or no descriptor)."""
    return isinstance(exc, OSError) and exc.errno in _STREAM_ERRNOS and exc.filename is None


def stdout_failed(exc: OSError) -> "typer.Exit":
    """One sentence for output that could not be written to standard output, and the Exit to raise."""
    _quiet_stdout()
    return fail(f"cannot write to standard output: {os.strerror(exc.errno or errno.EIO).lower()}")


def _name_bytes_as_marks(exc: UnicodeError) -> tuple[bytes, int]:
    # The bytes of a name that are not UTF-8 (lone surrogates in Python) shown as U+FFFD, as in
    # every output (voiceband.outputs.name_text); '?' where the stream's encoding has no U+FFFD.
    # (Bytes, not text: the UTF-8 encoder takes only ASCII text from an error handler.)
    if not isinstance(exc, UnicodeEncodeError):
        raise exc
    try:
        mark = "\ufffd".encode(exc.encoding)
    except (UnicodeError, LookupError):
        mark = b"?"
    return mark * (exc.end - exc.start), exc.end


def _names_as_marks() -> None:
    # A message naming a file that is not UTF-8 is printed, never an encoding error instead.
    import codecs

    codecs.register_error("voiceband.names", _name_bytes_as_marks)
    for stream in (sys.stdout, sys.stderr):
        reconfigure = getattr(stream, "reconfigure", None)
        if reconfigure is not None and getattr(stream, "errors", "") in ("strict", "surrogateescape", "backslashreplace"):
            try:
                reconfigure(errors="voiceband.names")
            except (ValueError, OSError, TypeError, LookupError):
                pass


def guarded(fn: Optional[Callable[..., Any]] = None, *, options: Optional[Mapping[str, str]] = None) -> Any:
    """Wrap a command so user errors become one stderr sentence and a non-zero exit.

    Messages name the options the user typed: the command's own parameters are renamed from its
    typer annotations (``peak_dbfs`` -> ``--peak-dbfs``) and ``options`` adds the library's names
    for them (``@guarded(options={"frequency_hz": "--tone-hz"})``).  A closed pipe on standard
    output (``voiceband ... | head``) ends the command quietly with status 141, as for any
    command-line tool.  Set ``VOICEBAND_DEBUG=1`` to see the traceback of an internal error.
    """
    if fn is None:
        return lambda f: guarded(f, options=options)
    names = {**_option_names(fn), **dict(options or {})}

    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        _catch_termination()
        _names_as_marks()
        try:
            with warnings.catch_warnings():
                if not os.environ.get("VOICEBAND_DEBUG"):
                    # the libraries' notes (numpy's overflow, matplotlib's) are not for users: the result
                    # or our sentence says what matters, in one line
                    warnings.simplefilter("ignore")
                rv = fn(*args, **kwargs)
            sys.stdout.flush()  # a closed pipe shows here, not at the interpreter's last flush
            return rv
        except typer.Exit:
            raise
        except BrokenPipeError:
            _quiet_stdout()
            raise typer.Exit(EXIT_BROKEN_PIPE) from None
        except OSError as exc:
            if is_stream_error(exc):
                raise stdout_failed(exc) from None
            if isinstance(exc, VoicebandError):
                raise fail(in_user_words(str(exc), names)) from None
            if os.environ.get("VOICEBAND_DEBUG"):
                raise
            raise fail(f"internal error ({type(exc).__name__}: {exc}); set VOICEBAND_DEBUG=1 for details",
                       EXIT_INTERNAL) from None
        except VoicebandError as exc:
            raise fail(in_user_words(str(exc), names)) from None
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
    from ..serialize import dumps_json, write_json

    if target is None:
        return
    if target == "-":
        sys.stdout.write(dumps_json(data) + "\n")
        sys.stdout.flush()
    else:
        write_json(data, Path(target), force=force, make_folders=make_folders)
