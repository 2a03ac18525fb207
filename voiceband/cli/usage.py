"""Command-line usage errors as one sentence in the user's words.

A wrong invocation (an unknown command or option, a missing argument, a value of the wrong
kind) is reported on one line of stderr, ``voiceband: <sentence>; see 'voiceband CMD --help'.``,
naming the option or argument as the user types it (``--rate-hz``, ``KIND``), and the command
exits with status 2.  :class:`VoicebandGroup` is the root command's class and applies this to
every command, whichever way it is invoked (console script or a test runner).
"""

from __future__ import annotations

import enum
import re
import sys
import typing
from pathlib import PurePath
from typing import Any, Optional, Sequence

import typer
from typer.core import TyperGroup

try:  # typer >= 0.20 carries its own copy of click
    from typer._click import exceptions as _exc
except ImportError:  # pragma: no cover - older typer on the click package
    from click import exceptions as _exc  # type: ignore[no-redef]

__all__ = ["VoicebandGroup", "usage_sentence", "EXIT_USAGE"]

#: Exit status of a wrong invocation (as for bad input).
EXIT_USAGE = 2


def _or_list(items: Sequence[str], word: str = "or") -> str:
    items = list(items)
    if len(items) <= 1:
        return "".join(items)
    return ", ".join(items[:-1]) + f" {word} " + items[-1]


def _display_name(param: Any) -> str:
    """The name the user types: the long option (``--rate-hz``) or the argument's metavar (``KIND``)."""
    opts = list(getattr(param, "opts", []) or [])
    if getattr(param, "param_type_name", "") == "option" or any(o.startswith("-") for o in opts):
        longs = [o for o in opts if o.startswith("--")]
        return (longs or opts or [f"--{param.name}"])[0]
    meta = getattr(param, "metavar", None)
    return (meta or param.name or "argument").upper()


def _annotation(param: Any) -> Any:
    desc = getattr(param, "type_descriptor", None)
    ann = getattr(desc, "annotation", None)
    # Optional[X] -> X, list[X] -> X
    for _ in range(3):
        args = [a for a in typing.get_args(ann) if a is not type(None)]
        if typing.get_origin(ann) in (typing.Union, list, tuple) or (
            ann is not None and type(ann).__name__ == "UnionType"
        ):
            ann = args[0] if args else None
        else:
            break
    return ann


def _choices(param: Any) -> Optional[list[str]]:
    ann = _annotation(param)
    if isinstance(ann, type) and issubclass(ann, enum.Enum):
        return [str(m.value) for m in ann]
    choices = getattr(getattr(param, "type", None), "choices", None)
    return [str(c) for c in choices] if choices else None


def _expected(param: Any) -> str:
    choices = _choices(param)
    if choices:
        return _or_list(choices)
    ann = _annotation(param)
    if ann is bool:
        return "true or false"
    if ann is int:
        return "a whole number"
    if ann is float:
        return "a number"
    if isinstance(ann, type) and issubclass(ann, PurePath):
        return "a file or folder name"
    return "a valid value"


def _bounds(param: Any) -> str:
    lo, hi = getattr(param, "min", None), getattr(param, "max", None)
    if lo is not None and hi is not None:
        return f" from {lo:g} to {hi:g}"
    if lo is not None:
        return f" of at least {lo:g}"
    if hi is not None:
        return f" of at most {hi:g}"
    return ""


def _parser_error(exc: BaseException) -> Optional[dict]:
    """The option parser's record of a refused value (what was typed, why), when it kept one."""
    errors = getattr(exc.__cause__, "errors", None)
    if callable(errors):
        try:
            first = errors()[0]
        except Exception:
            return None
        return first if isinstance(first, dict) and "input" in first else None
    return None


def _command_path(ctx: Any) -> str:
    """``voiceband`` or ``voiceband CMD`` whatever the program was called."""
    names = []
    c = ctx
    while c is not None and c.parent is not None:
        names.append(c.info_name)
        c = c.parent
    return " ".join(["voiceband", *reversed([n for n in names if n])])


def usage_sentence(exc: Any) -> str:
    """One sentence for a usage error, in the names the user typed; no trailing help hint."""
    ctx = getattr(exc, "ctx", None)
    param = getattr(exc, "param", None)
    if isinstance(exc, _exc.MissingParameter) and param is not None:
        name = _display_name(param)
        choices = _choices(param)
        what = "option" if name.startswith("-") else "argument"
        text = f"missing {what} {name}"
        if choices:
            text += f": one of {_or_list(choices)}"
        elif getattr(param, "help", None):
            h = param.help.strip().rstrip(".")
            text += f": {h[:1].lower() + h[1:]}" if not h[:2].isupper() else f": {h}"
        return text
    if isinstance(exc, _exc.BadParameter) and param is not None:
        name = _display_name(param)
        err = _parser_error(exc)
        if err is None:  # a check of the parser's own (a path, a count): its words, under the option's name
            msg = " ".join(str(getattr(exc, "message", "") or exc).split()).rstrip(".")
            return f"{name}: {msg[:1].lower() + msg[1:]}" if msg else f"{name} has a value that cannot be used"
        return f"{name} must be {_expected(param)}{_bounds(param)}; got '{err['input']}'"
    if isinstance(exc, _exc.NoSuchOption):
        text = f"no such option '{exc.option_name}'"
        if exc.possibilities:
            text += f" (did you mean {_or_list(sorted(exc.possibilities))}?)"
        return text
    if isinstance(exc, _exc.BadOptionUsage) and "requires an argument" in exc.message:
        return f"option {exc.option_name} needs a value"
    message = " ".join(str(exc.format_message()).split())
    if message.startswith("No such command"):
        cmd = message.split("'")[1] if "'" in message else ""
        known = sorted(getattr(getattr(ctx, "command", None), "commands", {}) or {})
        return f"no such command '{cmd}'" + (f"; the commands are {_or_list(known, 'and')}" if known else "")
    if message.startswith("Got unexpected extra argument"):
        m = re.search(r"\(([^()]*)\)$", message)
        extra = m.group(1) if m else ""
        return f"unexpected extra argument(s): {extra}" if extra else "unexpected extra argument(s)"
    return message[:1].lower() + message[1:].rstrip(".")


def usage_line(exc: Any) -> str:
    """The whole stderr line for a usage error."""
    ctx = getattr(exc, "ctx", None)
    hint = f"; see '{_command_path(ctx)} --help'" if ctx is not None else ""
    return f"voiceband: {usage_sentence(exc)}{hint}."


class VoicebandGroup(TyperGroup):
    """The root command: every usage error becomes one line on stderr and exit status 2."""

    def main(self, args: Any = None, prog_name: Any = None, complete_var: Any = None,
             standalone_mode: bool = True, **extra: Any) -> Any:
        try:
            rv = super().main(args=args, prog_name=prog_name, complete_var=complete_var,
                              standalone_mode=False, **extra)
        except _exc.NoArgsIsHelpError as exc:  # bare 'voiceband': show the help
            if not standalone_mode:
                raise
            exc.show()
            sys.exit(EXIT_USAGE)
        except _exc.UsageError as exc:
            if not standalone_mode:
                raise
            typer.echo(usage_line(exc), err=True)
            sys.exit(EXIT_USAGE)
        except _exc.ClickException as exc:
            if not standalone_mode:
                raise
            typer.echo(f"voiceband: {' '.join(exc.format_message().split())}", err=True)
            sys.exit(exc.exit_code)
        except typer.Abort:
            if not standalone_mode:
                raise
            typer.echo("voiceband: aborted.", err=True)
            sys.exit(1)
        if not standalone_mode:
            return rv
        sys.exit(rv if isinstance(rv, int) else 0)
