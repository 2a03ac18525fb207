"""Public surface: every name in voiceband.__all__ imports, and `import voiceband` stays lean."""

from __future__ import annotations

import subprocess
import sys

import voiceband


def test_public_names_import():
    for name in voiceband.__all__:
        assert getattr(voiceband, name) is not None, name


def test_import_loads_no_plotting_or_heavy_audio_libraries():
    # STYLE.md habit 1 (scipy/signal/__init__.py, pyfar tests/test_imports.py): importing the package
    # must not pull in matplotlib; librosa is likewise kept out of start-up.
    code = "import sys, voiceband; print(','.join(m for m in ('matplotlib', 'librosa') if m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.strip()
    assert out == ""


def test_cli_help_runs():
    out = subprocess.run([sys.executable, "-m", "voiceband.cli.main", "--help"], capture_output=True, text=True)
    assert out.returncode == 0 and "analyze" in out.stdout


def test_cli_version():
    out = subprocess.run([sys.executable, "-m", "voiceband.cli.main", "--version"], capture_output=True, text=True)
    assert out.returncode == 0 and out.stdout.strip() == f"voiceband {voiceband.__version__}"
