"""Every command of ``voiceband``: its help fits the terminal, and wrong invocations get one line in the user's words.

The commands and their options are read from the root command itself, so a command added later
is covered without editing this file.  Wrong invocations: an unknown option, an extra argument,
no arguments at all, a word where a number is expected, and an option without its value.  Each
must print exactly one line on stderr, ``voiceband: ...``, exit with status 2, and name no
internal parameter (``peak_dbfs``), numpy repr (``np.float64(...)``) or parser wording
("Value error", "Input should be").
"""

from __future__ import annotations

import re
import typing
from typing import Annotated, Optional

import pytest
import typer
from typer.main import get_command
from typer.testing import CliRunner

from voiceband.cli.main import _COMMANDS, app

runner = CliRunner()
ROOT = get_command(app)
COMMANDS = [name for name, _m, _f in _COMMANDS]
_PARSER_WORDS = ("Value error", "Input should", "Invalid value for", "Usage:", "Try '", "Traceback", "Error:")


def _params(cmd):
    return [p for p in ROOT.commands[cmd].params if p.name != "help"]


def _internal_names(cmd) -> set[str]:
    # The command's parameter names as Python knows them, where they differ from what the user types.
    return {p.name for p in _params(cmd) if "_" in p.name}


def _annotation(p):
    ann = getattr(getattr(p, "type_descriptor", None), "annotation", None)
    for _ in range(3):
        args = [a for a in typing.get_args(ann) if a is not type(None)]
        if args and typing.get_origin(ann) in (typing.Union, list, tuple) or type(ann).__name__ == "UnionType":
            ann = args[0]
    return ann


def _one_line(res, cmd=None) -> str:
    assert res.exit_code == 2, (res.exit_code, res.output)
    lines = [ln for ln in res.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, res.stderr
    line = lines[0]
    assert line.startswith("voiceband: ") and line.endswith("."), line
    assert not any(w in line for w in _PARSER_WORDS), line
    assert not re.search(r"\bnp\.\w+\(", line), line
    if cmd is not None:
        for name in _internal_names(cmd):
            assert not re.search(rf"(?<![\w-]){name}(?![\w-])", line, re.I), (name, line)
    return line


@pytest.mark.parametrize("columns", [80, 120])
@pytest.mark.parametrize("cmd", [None, *COMMANDS])
def test_help_fits_the_terminal(cmd, columns):
    res = runner.invoke(app, ([cmd] if cmd else []) + ["--help"], env={"COLUMNS": str(columns)})
    assert res.exit_code == 0, res.output
    assert "Usage: voiceband" in res.stdout
    for ln in res.stdout.splitlines():
        assert len(ln) <= columns, ln
        assert ln == ln.rstrip(), repr(ln)
    if cmd:  # the help names every option the user can type, and no internal name
        for p in _params(cmd):
            for opt in getattr(p, "opts", []):
                if opt.startswith("--"):
                    assert opt in res.stdout, opt


@pytest.mark.parametrize("cmd", COMMANDS)
def test_unknown_option(cmd):
    line = _one_line(runner.invoke(app, [cmd, "--no-such-option"]), cmd)
    assert "'--no-such-option'" in line and f"voiceband {cmd} --help" in line


# A command that needs nothing (demo) runs when called bare; it is not run here.
_NEEDING_SOMETHING = [c for c in COMMANDS if any(p.required for p in _params(c))]


@pytest.mark.parametrize("cmd", _NEEDING_SOMETHING)
def test_no_arguments(cmd):
    line = _one_line(runner.invoke(app, [cmd]), cmd)
    assert "missing" in line


def _required_filler(cmd, tmp_path):
    """Arguments that satisfy every required parameter (files that do not exist are fine: parsing comes first)."""
    args = []
    for p in _params(cmd):
        if not p.required:
            continue
        ann = _annotation(p)
        value = "1" if ann in (int, float) else (getattr(ann, "__members__", None) and list(ann)[0].value) or str(tmp_path / "x.wav")
        if p.param_type_name == "option":
            args += [p.opts[0], value]
        else:
            args.append(value)
    return args


# A command taking any number of files has no "extra" argument.
_FIXED_ARGUMENTS = [c for c in COMMANDS if not any(p.param_type_name == "argument" and p.nargs == -1 for p in _params(c))]


def test_fixed_argument_commands_are_found():
    assert {"analyze", "response", "testsignal"} <= set(_FIXED_ARGUMENTS)
    assert {"analyze", "response", "testsignal", "synth"} <= set(_NEEDING_SOMETHING)


@pytest.mark.parametrize("cmd", _FIXED_ARGUMENTS)
def test_extra_argument(cmd, tmp_path):
    line = _one_line(runner.invoke(app, [cmd, *_required_filler(cmd, tmp_path), "surplus-argument"]), cmd)
    assert "surplus-argument" in line


@pytest.mark.parametrize("cmd", COMMANDS)
def test_words_where_numbers_belong(cmd, tmp_path):
    numeric = [p for p in _params(cmd) if p.param_type_name == "option" and _annotation(p) in (int, float)]
    if cmd == "testsignal":  # the option parser's view of the annotations is what this test relies on
        assert {"--rate-hz", "--tones", "--bits", "--peak-dbfs", "--tone-hz"} <= {p.opts[0] for p in numeric}
    for p in numeric:
        opt = [o for o in p.opts if o.startswith("--")][0]
        line = _one_line(runner.invoke(app, [cmd, *_required_filler(cmd, tmp_path), opt, "lots"]), cmd)
        assert opt in line and "'lots'" in line, line
        assert ("whole number" in line) == (_annotation(p) is int), line


@pytest.mark.parametrize("cmd", COMMANDS)
def test_option_without_its_value(cmd, tmp_path):
    valued = [p for p in _params(cmd) if p.param_type_name == "option" and _annotation(p) is not bool]
    for p in valued:
        opt = [o for o in p.opts if o.startswith("--")][0]
        line = _one_line(runner.invoke(app, [cmd, *_required_filler(cmd, tmp_path), opt]), cmd)
        assert opt in line and "needs a value" in line, line


def test_unknown_command_lists_the_commands():
    line = _one_line(runner.invoke(app, ["analyse-this"]))
    assert "'analyse-this'" in line
    for cmd in COMMANDS:
        assert cmd in line


def test_every_command_has_a_one_line_summary_in_the_root_help():
    res = runner.invoke(app, ["--help"], env={"COLUMNS": "120"})
    for cmd in COMMANDS:
        m = re.search(rf"^\s+{re.escape(cmd)}\s+(\S.*)$", res.stdout, re.M)
        assert m, cmd
        assert not m.group(1).endswith("..."), m.group(0)  # a whole summary, not a cut-off sentence


def test_bare_voiceband_shows_the_help_and_fails():
    res = runner.invoke(app, [], env={"COLUMNS": "80"})
    assert res.exit_code == 2
    assert "Usage: voiceband" in res.output and "Traceback" not in res.output


def test_a_number_outside_the_parsers_range_names_the_range():
    # A stand-in command with ranged options, so the check runs whether or not a command of ours has one.
    from voiceband.cli.usage import VoicebandGroup

    demo_app = typer.Typer(cls=VoicebandGroup)

    @demo_app.command()
    def first(workers: Annotated[Optional[int], typer.Option("--workers", min=1, max=1024)] = None,
              level: Annotated[float, typer.Option("--level", min=0.5)] = 1.0) -> None:
        """A command."""

    @demo_app.command()
    def second() -> None:
        """Another."""

    for args, expected in [(["first", "--workers", "0"], "--workers must be a whole number from 1 to 1024; got '0'"),
                           (["first", "--level", "0.1"], "--level must be a number of at least 0.5; got '0.1'")]:
        line = _one_line(runner.invoke(demo_app, args))
        assert line.startswith(f"voiceband: {expected}"), line


@pytest.mark.parametrize("cmd", COMMANDS)
def test_ranged_options_name_their_range(cmd, tmp_path):
    for p in _params(cmd):
        if p.param_type_name == "option" and _annotation(p) in (int, float) and getattr(p, "min", None) is not None:
            opt = [o for o in p.opts if o.startswith("--")][0]
            line = _one_line(runner.invoke(app, [cmd, *_required_filler(cmd, tmp_path), opt, str(p.min - 1)]), cmd)
            assert opt in line and f"{p.min:g}" in line, line
