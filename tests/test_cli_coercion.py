"""The cheap converter for plain options gives what typer's own (pydantic) converter gives.

Reference: typer's shipped conversion (``typer._coercion.build_runtime_param``, which converts
through pydantic ``TypeAdapter``s), applied to the same parameters of every voiceband command.
"""

from __future__ import annotations

import subprocess
import sys

import pytest
import typer

from voiceband.cli import coercion
from voiceband.cli.main import app

_VALUES = ("take.wav", "", "ü-umlaut.flac", "./-", "-", "a b", "/", "/proc", "/no/such/file.wav")


def _params():
    root = typer.main.get_command(app)
    for name, cmd in sorted(root.commands.items()):
        for p in cmd.params:
            desc = getattr(p, "type_descriptor", None)
            if desc is None:
                continue
            kind = coercion.plain_kind(desc.annotation, desc.parameter_info)
            if kind is not None:
                yield name, cmd, p, kind


def _convert(build, cmd, p, value):
    from typer import _click

    ctx = _click.Context(cmd, info_name=cmd.name)
    try:
        return ("ok", build(p.type_descriptor)._coerce_value(value, param=p, ctx=ctx))
    except Exception as exc:  # the same refusal, in the same words
        return (type(exc).__name__, str(getattr(exc, "message", exc)))


def test_installed_and_used():
    from typer import core

    assert coercion.install()
    assert core.build_runtime_param is not getattr(core.build_runtime_param, "original", None)


def test_every_plain_parameter_converts_as_typer_does():
    from typer import core

    ours = core.build_runtime_param
    theirs = ours.original
    seen = {"str": 0, "path": 0, "bool": 0}
    for name, cmd, p, kind in _params():
        values = (True, False) if kind == "bool" else _VALUES
        for v in values:
            assert _convert(ours, cmd, p, v) == _convert(theirs, cmd, p, v), (name, p.name, v)
        seen[kind] += 1
    # the commands have parameters of all three kinds (analyze alone has one of each)
    assert all(n > 0 for n in seen.values()), seen


@pytest.mark.parametrize("text", ["yes", "no", "true", "0"])
def test_a_flag_given_as_text_falls_back_to_typer(text):
    from typer import core

    ours, theirs = core.build_runtime_param, core.build_runtime_param.original
    for name, cmd, p, kind in _params():
        if kind == "bool":
            assert _convert(ours, cmd, p, text) == _convert(theirs, cmd, p, text)
            return
    pytest.fail("no flag found")


def test_analyze_does_not_load_pydantic(tmp_path):
    # Issue 13: the one-second case; pydantic costs about 0.1-0.2 s of start-up.
    import numpy as np
    import soundfile as sf

    path = tmp_path / "t.wav"
    sf.write(str(path), 0.1 * np.sin(np.arange(16000) / 3.0), 16000, subtype="PCM_16")
    code = ("import sys; from voiceband.cli.main import main; sys.argv = ['voiceband', 'analyze', sys.argv[1], "
            "'--json', '-']\ntry:\n    main()\nexcept SystemExit:\n    pass\n"
            "print('PYD' if any(m.startswith('pydantic') for m in sys.modules) else 'NONE', file=sys.stderr)")
    out = subprocess.run([sys.executable, "-c", code, str(path)], capture_output=True, text=True)
    assert out.stderr.strip().splitlines()[-1] == "NONE", out.stderr
    assert out.stdout.lstrip().startswith("{")
