"""Public surface: every name in voiceband.__all__ imports, and `import voiceband` stays lean."""

from __future__ import annotations

import subprocess
from pathlib import Path
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


def test_analyze_path_does_not_import_scipy(tmp_path):
    # Issue 13: a short file must not pay for start-up it does not use; importing scipy.fft
    # alone costs about 0.6 s here (its array-API layer walks numpy's namespace).
    import numpy as np
    import soundfile as sf

    path = tmp_path / "tone.wav"
    t = np.arange(48000) / 48000.0
    sf.write(str(path), 0.3 * np.sin(2 * np.pi * 440.0 * t), 48000, subtype="PCM_16")
    speech = Path(__file__).resolve().parents[1] / "corpus_synthetic" / "speech_low_hum50.wav"
    # numpy.ma too: numpy.median loads it (about 19 ms), so the analyze path uses arrays.median.
    code = (
        "import sys; from voiceband.analysis import analyze_file\n"
        "for p in sys.argv[1:]: analyze_file(p)\n"
        "print(','.join(sorted(m for m in sys.modules if m in ('scipy', 'numpy.ma') or m.startswith('scipy.'))))"
    )
    out = subprocess.run([sys.executable, "-c", code, str(path), str(speech)], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == ""



def test_response_path_does_not_import_scipy(tmp_path):
    # Issue 13: `response` spent about 0.6 s of a 2-3 s run importing scipy.fft; its
    # transforms are numpy's (voiceband.fastlen gives the lengths).
    sweep = tmp_path / "s.wav"
    subprocess.run([sys.executable, "-m", "voiceband.cli.main", "testsignal", "sweep", "--out", str(sweep),
                    "--duration-s", "2"], check=True, capture_output=True)
    code = (
        "import sys\n"
        "from voiceband.cli.main import main\n"
        "sys.argv = ['voiceband', 'response', sys.argv[1], sys.argv[1], '--json', sys.argv[2]]\n"
        "try:\n    main()\nexcept SystemExit:\n    pass\n"
        "print('SCIPY:' + ','.join(sorted(m for m in sys.modules if m == 'scipy' or m.startswith('scipy.'))))\n"
    )
    out = subprocess.run([sys.executable, "-c", code, str(sweep), str(tmp_path / "r.json")],
                         capture_output=True, text=True)
    assert (tmp_path / "r.json").exists(), out.stderr
    assert out.stdout.strip().splitlines()[-1] == "SCIPY:", out.stdout[-300:]


def test_a_command_loads_only_its_own_command_module(tmp_path):
    # Issue 13 (start-up): main() builds only the command named on the command line.
    code = (
        "import sys\n"
        "from voiceband.cli.main import main\n"
        "sys.argv = ['voiceband', 'analyze', '--help']\n"
        "try:\n    main()\nexcept SystemExit:\n    pass\n"
        "print('MODS:' + ','.join(sorted(m for m in sys.modules if m.startswith('voiceband.cli.') and m not in "
        "('voiceband.cli.main', 'voiceband.cli.usage', 'voiceband.cli.coercion', 'voiceband.cli.common', "
        "'voiceband.cli.allocator'))))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.stdout.strip().splitlines()[-1] == "MODS:voiceband.cli.analyze", out.stdout[-400:]
