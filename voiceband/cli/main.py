"""Root of the ``voiceband`` command.

Each command lives in its own module under ``voiceband.cli``; add a row to
``_COMMANDS`` to register one.  Command modules import heavy libraries inside
the command function, so start-up stays lean.  :func:`main` registers only the
command named on the command line (building every command's options costs about
50 ms); ``app`` (for tests and embedding) has them all.
"""

from __future__ import annotations

import importlib

import typer

from .coercion import install as _install_plain_coercion
from .usage import VoicebandGroup

_install_plain_coercion()  # text and file-name options without loading pydantic (start-up)

_root_app = typer.Typer(
    name="voiceband",
    cls=VoicebandGroup,
    help="Measure and model the transmit audio of voice radio: levels, clipping, hum, "
    "noise, bandwidth and speech intelligibility.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
)

# (command name, module, function)
_COMMANDS = [
    ("analyze", "voiceband.cli.analyze", "analyze"),
    ("batch", "voiceband.cli.batch", "batch"),
    ("report", "voiceband.cli.report", "report"),
    ("demo", "voiceband.cli.demo", "demo"),
    ("response", "voiceband.cli.response", "response"),
    ("synth", "voiceband.cli.synth", "synth"),
    ("testsignal", "voiceband.cli.testsignal", "testsignal"),
    ("chain", "voiceband.cli.chain", "chain"),
    ("compare", "voiceband.cli.compare", "compare"),
    ("sweep", "voiceband.cli.sweep", "sweep"),
]

def _version(value: bool) -> None:
    if value:
        from .. import __version__

        typer.echo(f"voiceband {__version__}")
        raise typer.Exit()


@_root_app.callback()
def _root(
    version: bool = typer.Option(False, "--version", callback=_version, is_eager=True, help="Print the version and exit."),
) -> None:
    """Measure and model the transmit audio of voice radio."""


# One line each in 'voiceband --help' (a command missing here shows its docstring's start).
_SUMMARIES = {
    "analyze": "Measure a recording of transmit audio.",
    "report": "Write an on-air test report judging a recording for a service.",
    "demo": "Write a worked example on synthetic speech.",
    "response": "Measure a chain's response from a recorded test signal.",
    "synth": "Regenerate the synthetic speech corpus from its spec files.",
    "testsignal": "Write a test signal: sweep, multitone, two-tone, tone or steps.",
    "chain": "Response, edges and SII of a chain file.",
    "compare": "Run chains on the same speech and compare them.",
    "sweep": "Find the best filter cutoffs for a bandwidth limit.",
    "batch": "Analyse many recordings into one table (CSV, JSON lines or Parquet).",
}

_registered: set = set()


def _with_commands(names=None) -> typer.Typer:
    """The root app with the commands ``names`` (all when None) registered, once each, in table order."""
    for name, module, func in _COMMANDS:
        if name in _registered or (names is not None and name not in names):
            continue
        _root_app.command(name, short_help=_SUMMARIES.get(name))(getattr(importlib.import_module(module), func))
        _registered.add(name)
    return _root_app


def _named_command(args: list) -> "list | None":
    """``[CMD]`` when the first argument names a command, else None (help, --version, a typo: all)."""
    known = {row[0] for row in _COMMANDS}
    return [args[0]] if args and args[0] in known else None


def __getattr__(name: str):
    if name == "app":  # every command, as 'voiceband --help' lists them
        return _with_commands()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def main() -> None:
    """Console-script entry point.

    Refuses to start with standard output closed (``>&-``), and ends with one sentence and a
    non-zero exit if standard output cannot take what was printed (``> /dev/full``).
    """
    import sys

    from .common import EXIT_BAD_INPUT, is_stream_error, stdout_closed, stdout_failed

    if stdout_closed():
        sys.stderr.write("voiceband: standard output is closed; redirect it to a file or /dev/null instead.\n")
        sys.exit(EXIT_BAD_INPUT)
    from .allocator import keep_large_blocks

    keep_large_blocks()
    hint = _leading_dash_file(sys.argv[1:])
    app = _with_commands(_named_command(sys.argv[1:]))
    try:
        code: object = 0
        if hint is None:
            app()
        else:  # parse ourselves, so a usage error about that name gets our sentence instead
            rv = app(standalone_mode=False)
            code = rv if isinstance(rv, int) else 0
    except SystemExit as exc:
        code = exc.code
    except OSError as exc:  # printing help or a usage message to a full stream
        if not is_stream_error(exc):
            raise
        code = _exit_code(stdout_failed(exc))
    except Exception as exc:  # the parser's usage error (standalone_mode=False re-raises it)
        if hint is None or getattr(exc, "exit_code", None) != 2 or not hasattr(exc, "show"):
            raise
        sys.stderr.write(f"voiceband: '{hint}' was read as an option; to name a file starting with '-', "
                         f"write './{hint}' or put '--' before it.\n")
        code = 2
    try:
        if sys.stdout is not None:
            sys.stdout.flush()
    except OSError as exc:
        if not is_stream_error(exc):
            raise
        failed = _exit_code(stdout_failed(exc))
        code = code if code not in (0, None) else failed
    sys.exit(code)


def _exit_code(exit_exc: BaseException) -> int:
    return int(getattr(exit_exc, "exit_code", 2))


def _leading_dash_file(args: list) -> "str | None":
    """The first argument before ``--`` that starts with '-' and names an existing file (a usage error
    about it then gets a sentence saying how to name such a file)."""
    import os

    for a in args:
        if a == "--":
            return None
        if a.startswith("-") and a != "-" and not a.startswith("--") and os.path.lexists(a):
            return a
    return None


if __name__ == "__main__":  # pragma: no cover
    main()
