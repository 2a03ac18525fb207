"""The command process's allocator setting (voiceband.cli.allocator)."""

from __future__ import annotations

import platform
import subprocess
import sys

from voiceband.cli.allocator import keep_large_blocks


def test_glibc_takes_both_settings_and_others_are_left_alone():
    # glibc documents mallopt() as returning 1 on success (mallopt(3), Linux man-pages); on any
    # other C library nothing is set and the function says so.
    glibc = sys.platform.startswith("linux") and platform.libc_ver()[0] == "glibc"
    assert keep_large_blocks() is glibc


def test_a_command_still_runs_with_the_setting(tmp_path):
    # The whole command, in its own process: the setting is made before any measurement.
    import numpy as np
    import soundfile as sf

    t = np.arange(8000) / 8000
    sf.write(tmp_path / "tone.wav", 0.3 * np.sin(2 * np.pi * 440 * t), 8000, subtype="PCM_16")
    out = subprocess.run([sys.executable, "-m", "voiceband.cli.main", "analyze", str(tmp_path / "tone.wav"),
                          "--json", "-"], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert '"peak_dbfs"' in out.stdout or '"levels"' in out.stdout
