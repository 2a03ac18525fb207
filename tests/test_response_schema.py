"""`voiceband response --json` output validates against the shipped JSON Schema, with the keys fixed by issue 4."""

from __future__ import annotations

import json
from importlib import resources

import jsonschema
import numpy as np
import soundfile as sf
from scipy.signal import butter, sosfilt
from typer.testing import CliRunner

from voiceband.cli.main import app


def test_response_json_validates(tmp_path):
    runner = CliRunner()
    stim = tmp_path / "sweep.wav"
    res = runner.invoke(app, ["testsignal", "sweep", "--out", str(stim), "--duration-s", "3", "--rate-hz", "16000"])
    assert res.exit_code == 0, res.output
    x, fs = sf.read(str(stim))
    # stand-in chain: 4th-order Butterworth band-pass 300-3000 Hz (scipy.signal) and 0.2 s delay
    y = np.concatenate([np.zeros(int(0.2 * fs)), sosfilt(butter(4, [300, 3000], "bandpass", fs=fs, output="sos"), x), np.zeros(fs // 4)])
    rec = tmp_path / "rec.wav"
    sf.write(str(rec), y, fs, subtype="PCM_24")
    res = runner.invoke(app, ["response", str(stim), str(rec), "--out", str(tmp_path / "out"), "--json", "-"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    schema = json.loads(resources.files("voiceband").joinpath("schemas/response.schema.json").read_text())
    jsonschema.validate(d, schema)
    assert abs(d["delay_s"] - 0.2) < 0.01  # the delay we inserted
