"""Plain command-line values (text and file names) converted without loading pydantic.

typer converts every option value through a pydantic ``TypeAdapter``; importing pydantic
costs about 0.1-0.2 s, a quarter of ``voiceband analyze`` on a one-second file, whose
options are only a file name, two strings and a flag.  :func:`install` gives typer a
cheaper converter for exactly those kinds of parameter:

- ``str`` and ``Optional[str]``: the value as typed (bytes decoded as typer does);
- a ``pathlib.Path`` (or ``Optional[Path]``): ``Path(value)``, then typer's own path
  checks (``exists``, ``file_okay``, ``dir_okay``, ``readable`` ...), which need no pydantic
  once the value is a ``Path``;
- ``bool`` flags: a value that is already ``True`` or ``False``.  A flag given as text
  (``--flag=yes``) goes to typer's own converter, built only then.

Everything else (numbers with bounds, choices, lists, custom parsers) keeps typer's own
converter.  If typer's internals are not the ones this was written against, nothing is
changed and typer works as shipped, only slower to start.  ``tests/test_cli_coercion.py``
checks that both converters give the same values.
"""

from __future__ import annotations

import os
import sys
import typing
from pathlib import PurePath
from typing import Any, Optional

__all__ = ["install", "plain_kind"]

_installed = False


def plain_kind(annotation: Any, parameter_info: Any) -> Optional[str]:
    """``"str"``, ``"path"`` or ``"bool"`` when a parameter can take the cheap converter, else ``None``."""
    if getattr(parameter_info, "parser", None) is not None or getattr(parameter_info, "click_type", None) is not None:
        return None
    ann = annotation
    origin = typing.get_origin(ann)
    if origin is typing.Union or type(ann).__name__ == "UnionType":
        args = [a for a in typing.get_args(ann) if a is not type(None)]
        if len(args) != 1:
            return None
        ann = args[0]
    if ann is str:
        return "str"
    if ann is bool:
        return "bool"
    if isinstance(ann, type) and issubclass(ann, PurePath) and getattr(parameter_info, "path_type", None) is None:
        if getattr(parameter_info, "allow_dash", False) or getattr(parameter_info, "resolve_path", False):
            return None
        return "path"
    return None


def _decode(value: bytes) -> str:
    """Bytes from the command line as text, the way typer decodes them."""
    for enc in dict.fromkeys((sys.getfilesystemencoding(), "utf-8")):
        try:
            return value.decode(enc)
        except UnicodeError:
            continue
    return value.decode("utf-8", "replace")


def install() -> bool:
    """Give typer the cheap converter for plain parameters; ``True`` if it was installed."""
    global _installed
    if _installed:
        return True
    try:
        from dataclasses import dataclass

        from typer import core as _core
        from typer import _coercion
        from typer._param_types import coerce_cli_path

        original = _core.build_runtime_param
        base = _coercion.RuntimeParam
    except (ImportError, AttributeError):  # pragma: no cover - another typer: keep its own converter
        return False

    @dataclass(frozen=True)
    class PlainRuntimeParam(base):  # type: ignore[misc, valid-type]
        """Conversion of a text or file-name parameter (see the module docstring)."""

        kind: str = "str"
        path_type: Any = None
        descriptor: Any = None

        def _coerce_value(self, value: Any, param: Any, ctx: Any) -> Any:
            if self.kind == "bool":
                if isinstance(value, bool):
                    return value
                return original(self.descriptor)._coerce_value(value, param=param, ctx=ctx)
            if isinstance(value, bytes):
                value = _decode(value)
            if self.kind == "str":
                return value if isinstance(value, str) else str(value)
            if not isinstance(value, PurePath):
                value = self.path_type(os.fspath(value))
            return coerce_cli_path(value, self.parameter_info, path_type=self.path_type, param=param, ctx=ctx)

    def build_runtime_param(descriptor: Any) -> Any:
        ann = descriptor.annotation
        info = descriptor.parameter_info
        kind = None if getattr(descriptor, "file_annotation", None) is not None else plain_kind(ann, info)
        if kind is None:
            return original(descriptor)
        path_type = None
        if kind == "path":
            args = [a for a in typing.get_args(ann) if a is not type(None)]
            path_type = args[0] if args else ann
        return PlainRuntimeParam(parameter_info=info, annotation=ann, kind=kind, path_type=path_type,
                                 descriptor=descriptor)

    build_runtime_param.original = original  # type: ignore[attr-defined]
    _core.build_runtime_param = build_runtime_param
    _installed = True
    return True
