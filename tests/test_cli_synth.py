"""``voiceband synth`` and ``voiceband testsignal`` through typer's CliRunner."""

from __future__ import annotations

import hashlib
import json

import numpy as np
import pytest
import soundfile as sf
from typer.testing import CliRunner

from voiceband.cli.main import app

runner = CliRunner()

SPEC = """
description = "Test spec: medium voice with receiver hiss at 20 dB SNR."
output = "t.wav"
sample_rate_hz = 16000
duration_s = 2.0
seed = 3

[speech]
voice = "medium"
effort = "normal"

[[stage]]
kind = "hiss"
snr_db = 20.0
"""


def _run(*args):
    return runner.invoke(app, [str(a) for a in args])


def _one_sentence_error(res):
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output and "Traceback" not in res.stderr
    lines = [ln for ln in res.stderr.strip().splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("voiceband: ") and lines[0].endswith("."), res.stderr
    return lines[0]


@pytest.fixture
def spec(tmp_path):
    p = tmp_path / "t.toml"
    p.write_text(SPEC)
    return p


def test_synth_writes_wav_and_manifest(tmp_path, spec):
    out = tmp_path / "out"
    res = _run("synth", spec, "--out", out)
    assert res.exit_code == 0, res.output
    wav = out / "t.wav"
    data, fs = sf.read(wav)
    assert fs == 16000 and data.size == 32000 and sf.info(wav).subtype == "PCM_16"
    manifest = json.loads((out / "manifest.json").read_text())
    (entry,) = manifest["files"]
    assert entry["sha256"] == hashlib.sha256(wav.read_bytes()).hexdigest()  # the file's own bytes
    assert entry["seed"] == 3 and entry["sample_rate_hz"] == 16000 and entry["spec"] == "t.toml"
    assert manifest["generator_version"] == entry["generator_version"]


def test_synth_refuses_to_overwrite_without_force(tmp_path, spec):
    out = tmp_path / "out"
    assert _run("synth", spec, "--out", out).exit_code == 0
    before = (out / "t.wav").stat().st_mtime_ns
    msg = _one_sentence_error(_run("synth", spec, "--out", out))
    assert "already exists" in msg and "--force" in msg
    assert (out / "t.wav").stat().st_mtime_ns == before
    assert _run("synth", spec, "--out", out, "--force").exit_code == 0


def test_synth_regeneration_is_identical_and_verify_detects_changes(tmp_path, spec):
    out = tmp_path / "out"
    assert _run("synth", spec, "--out", out).exit_code == 0
    res = _run("synth", spec, "--out", out, "--verify")
    assert res.exit_code == 0 and "match" in res.output
    m = out / "manifest.json"
    data = json.loads(m.read_text())
    data["files"][0]["sha256"] = "0" * 64
    m.write_text(json.dumps(data))
    msg = _one_sentence_error(_run("synth", spec, "--out", out, "--verify"))
    assert "do not match" in msg


@pytest.mark.parametrize("folder, expected", [("c" * 300, "longer than the file system allows"),
                                              ("missing", "No manifest at")])
def test_synth_verify_against_an_unreadable_folder_says_why(tmp_path, spec, folder, expected):
    # Found by benchmarks/fuzz_all.py (seed 35): a folder name over NAME_MAX (255 bytes on ext4 and
    # tmpfs, common practice) made --verify end in an internal error.
    msg = _one_sentence_error(_run("synth", spec, "--out", tmp_path / folder, "--verify"))
    assert expected in msg


@pytest.mark.parametrize(
    "text, expected",
    [
        ("description = 'x'\noutput = 'a.wav'\nsample_rate_hz = [", "not valid TOML"),
        (SPEC.replace("seed = 3", "seed = 3\nloudness = 2"), "unknown key 'loudness'"),
        (SPEC.replace('voice = "medium"', 'voice = "tenor"'), "'voice' must be one of"),
        (SPEC.replace("sample_rate_hz = 16000\n", ""), "needs 'sample_rate_hz'"),
        (SPEC.replace("snr_db = 20.0", "snr_db = 20.0\nlevel_dbfs = -40.0"), "exactly one of"),
        (SPEC.replace('kind = "hiss"', 'kind = "thunder"'), "'kind' must be one of"),
        (SPEC.replace('output = "t.wav"', 'output = "../t.wav"'), "plain .wav"),
        (SPEC.replace("snr_db = 20.0", "snr_db = -40.0"), "beyond full scale"),
    ],
)
def test_bad_spec_gives_one_sentence_and_writes_nothing(tmp_path, text, expected):
    p = tmp_path / "bad.toml"
    p.write_text(text)
    out = tmp_path / "out"
    msg = _one_sentence_error(_run("synth", p, "--out", out))
    assert expected in msg
    assert not (out / "t.wav").exists() and not (out / "manifest.json").exists()


def test_missing_spec_file(tmp_path):
    msg = _one_sentence_error(_run("synth", tmp_path / "nope.toml", "--out", tmp_path))
    assert "No such spec file" in msg


# --------------------------------------------------------------------------- testsignal


def test_testsignal_multitone_prints_crest_factor(tmp_path):
    out = tmp_path / "m.wav"
    res = _run("testsignal", "multitone", "--out", out, "--duration-s", 1)
    assert res.exit_code == 0, res.output
    # 28 tones 300–3000 Hz, Schroeder phases: ≈ 5.5 dB (Schroeder, IEEE Trans. IT-16, 1970, from memory).
    assert "crest factor 5.50 dB" in res.output
    x, fs = sf.read(out)
    assert fs == 48000 and sf.info(out).subtype == "PCM_24"
    assert 20 * np.log10(np.max(np.abs(x))) == pytest.approx(-6.0, abs=0.01)


def test_testsignal_two_tone_frequencies_by_fft(tmp_path):
    out = tmp_path / "t.wav"
    res = _run("testsignal", "two-tone", "--out", out, "--duration-s", 1, "--rate-hz", 16000, "--bits", 32)
    assert res.exit_code == 0, res.output
    x, fs = sf.read(out)
    spec = np.abs(np.fft.rfft(x))  # 1 s: bin k is k Hz
    # 47 CFR 2.1049 SSB test pair, 400 + 1800 Hz (from memory).
    assert sorted(np.argsort(spec)[-2:].tolist()) == [400, 1800]


def test_testsignal_tone_and_steps(tmp_path):
    res = _run("testsignal", "tone", "--out", tmp_path / "r.wav", "--duration-s", 1)
    assert res.exit_code == 0 and "-20.00 dBFS" in res.output
    res = _run("testsignal", "steps", "--out", tmp_path / "s.wav", "--tone-hz", 500, "--tone-hz", 1500, "--dwell-s", 0.2)
    assert res.exit_code == 0, res.output
    x, fs = sf.read(tmp_path / "s.wav")
    assert x.size == int(0.1 * fs) + 2 * int(0.3 * fs)


def test_testsignal_sweep(tmp_path):
    out = tmp_path / "s.wav"
    res = _run("testsignal", "sweep", "--out", out, "--duration-s", 2, "--low-hz", 100, "--high-hz", 8000)
    assert res.exit_code == 0, res.output
    assert "markers at" in res.output
    x, fs = sf.read(out)
    assert 20 * np.log10(np.max(np.abs(x))) == pytest.approx(-6.0, abs=0.01)


def test_testsignal_refuses_to_overwrite(tmp_path):
    out = tmp_path / "m.wav"
    assert _run("testsignal", "tone", "--out", out, "--duration-s", 1).exit_code == 0
    msg = _one_sentence_error(_run("testsignal", "tone", "--out", out, "--duration-s", 1))
    assert "already exists" in msg
    assert _run("testsignal", "tone", "--out", out, "--duration-s", 1, "--force").exit_code == 0


@pytest.mark.parametrize(
    "args, expected",
    [
        (["multitone", "--high-hz", 30000], "Nyquist"),
        (["tone", "--peak-dbfs", 3], "--peak-dbfs"),
        (["steps", "--duration-s", 3], "--dwell-s"),
        (["two-tone", "--low-hz", 300], "--tone-hz"),
        (["tone", "--bits", 8], "--bits"),
        (["tone", "--rate-hz", 4000], "--rate-hz must be 8000–192000 Hz"),
    ],
)
def test_testsignal_bad_options(tmp_path, args, expected):
    msg = _one_sentence_error(_run("testsignal", *args, "--out", tmp_path / "x.wav"))
    assert expected in msg
    assert not (tmp_path / "x.wav").exists()
