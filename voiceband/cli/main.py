"""Root of the ``voiceband`` command.

Each command lives in its own module under ``voiceband.cli``; add a row to
``_COMMANDS`` to register one.  Command modules import heavy libraries inside
the command function, so start-up stays lean.
"""

from __future__ import annotations

import importlib

import typer

from .usage import VoicebandGroup

app = typer.Typer(
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


@app.callback()
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

for _name, _module, _func in _COMMANDS:
    app.command(_name, short_help=_SUMMARIES.get(_name))(getattr(importlib.import_module(_module), _func))


def main() -> None:
    """Console-script entry point."""
    app()


if __name__ == "__main__":  # pragma: no cover
    main()
