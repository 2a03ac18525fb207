"""Every command on bad paths, unreadable or malformed files, wrong units and absurd parameters: a clear
message and exit 2, never a traceback (the reliability promise of the batch issue, across the CLI)."""

from __future__ import annotations

import numpy as np
import pytest
import soundfile as sf
from typer.testing import CliRunner

from voiceband.cli.main import app

runner = CliRunner()


@pytest.fixture
def files(tmp_path):
    good = tmp_path / "good.wav"
    sf.write(str(good), 0.1 * np.random.default_rng(3).standard_normal(8000), 8000)
    junk = tmp_path / "junk.wav"
    junk.write_bytes(b"RIFF\x00\x00\x00\x00WAVEnot really")
    folder = tmp_path / "folder"
    folder.mkdir()
    return {"good": good, "junk": junk, "folder": folder, "missing": tmp_path / "missing.wav",
            "out": tmp_path / "out.wav", "tmp": tmp_path}


CASES = [
    ("analyze", ["{missing}"], "No such file"),
    ("analyze", ["{folder}"], "is a folder"),
    ("analyze", ["{junk}"], "starts like a WAV file"),
    ("analyze", ["{good}", "--channel", "7"], "channel 7 does not exist"),
    ("analyze", ["{good}", "--channel", "left"], "'mix'"),
    ("analyze", ["{good}", "--json", "{folder}"], "is a folder"),
    ("analyze", ["{good}", "--json", "{good}"], "is an input of this command"),
    ("response", ["{missing}", "{good}"], "No such file"),
    ("response", ["{junk}", "{good}"], "starts like a WAV file"),
    ("response", ["{good}", "{junk}"], "starts like a WAV file"),
    ("testsignal", ["sweep", "--out", "{out}", "--duration-s", "-5"], "--duration-s"),
    ("testsignal", ["sweep", "--out", "{out}", "--duration-s", "nan"], "--duration-s"),
    ("testsignal", ["tone", "--out", "{out}", "--peak-dbfs", "40"], "dBFS"),
    ("testsignal", ["sweep", "--out", "{tmp}/x.mp4"], ".wav"),
    ("synth", ["{missing}", "--out", "{tmp}/corpus"], "No such spec file"),
    ("batch", ["{missing}", "--out", "{tmp}/t.csv"], "No such file or folder"),
    ("batch", ["{good}", "--out", "{good}"], "--out must end in"),
    ("batch", ["{good}", "--out", "{tmp}/nofolder/t.csv"], "does not exist"),
    ("batch", ["{good}", "--out", "{tmp}/t.csv", "--scheduler", "not an address"], "not a Dask scheduler address"),
]


@pytest.mark.parametrize("command, args, words", CASES, ids=[f"{c}-{i}" for i, (c, _, _) in enumerate(CASES)])
def test_bad_input_is_one_sentence_and_exit_2(files, command, args, words):
    argv = [command] + [a.format(**files) for a in args]
    res = runner.invoke(app, argv)
    assert res.exit_code == 2, res.output
    assert res.exception is None or isinstance(res.exception, SystemExit)
    lines = res.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("voiceband: "), res.output
    assert words in lines[0]
    assert "Traceback" not in res.output


def test_device_and_pipe_are_refused_not_read_forever(tmp_path):
    # /dev/zero never ends (Linux character device); a FIFO inside a folder is skipped (common practice:
    # batch tools take regular files only).
    import os as _os

    from voiceband.batch.discover import discover_files
    from voiceband.errors import AudioInputError

    with pytest.raises(AudioInputError, match="not a regular file"):
        discover_files(["/dev/zero"])
    d = tmp_path / "in"
    d.mkdir()
    _os.mkfifo(d / "pipe.wav")
    (d / "real.wav").write_bytes(b"RIFF")
    assert [p.name for p in discover_files([d])] == ["real.wav"]
