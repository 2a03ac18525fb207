"""Public surface of voiceband.intelligibility: names import, and importing it stays light."""

from __future__ import annotations

import subprocess
import sys

import voiceband.intelligibility as vi


def test_public_names_import():
    for name in vi.__all__:
        assert getattr(vi, name) is not None, name


def test_required_entry_points_exist():
    # Names fixed by issue 3.
    for name in ("sii", "band_gains_db", "sii_vs_channel_snr", "recording_intelligibility", "stoi"):
        assert callable(getattr(vi, name))


def test_import_loads_no_matplotlib_or_scipy_signal():
    # STYLE.md habit 1: importing the engine needs numpy only; scipy.signal is imported inside stoi().
    code = (
        "import sys, voiceband.intelligibility; "
        "print(','.join(m for m in ('matplotlib', 'scipy.signal', 'librosa') if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.strip()
    assert out == ""
