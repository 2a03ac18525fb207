"""Public surface of voiceband.synth: every exported name imports, and importing stays light."""

from __future__ import annotations

import subprocess
import sys

import voiceband.synth


def test_public_names_import():
    for name in voiceband.synth.__all__:
        assert getattr(voiceband.synth, name) is not None, name


def test_import_loads_neither_scipy_nor_matplotlib():
    # STYLE.md: heavy imports inside functions, so CLI start-up stays lean.
    code = "import sys, voiceband.synth; print(','.join(m for m in ('scipy', 'matplotlib', 'librosa') if m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.strip()
    assert out == ""
