"""``voiceband analyze`` end to end: JSON keys and schema, summary output, and clean failures on bad input."""

from __future__ import annotations

import json
from importlib import resources

import jsonschema
import numpy as np
import pytest
import soundfile as sf
from typer.testing import CliRunner

from voiceband.cli.main import app

runner = CliRunner()


def _schema():
    return json.loads(resources.files("voiceband").joinpath("schemas/analysis.schema.json").read_text())


def _speechlike(rng, fs=16000, seconds=6.0, level_dbfs=-26.0):
    """Noise bursts at a ~4 Hz syllable rate with phrase pauses, tilted like speech (test signal, not data)."""
    n = int(fs * seconds)
    t = np.arange(n) / fs
    spec = np.fft.rfft(rng.standard_normal(n))
    f = np.fft.rfftfreq(n, 1 / fs)
    x = np.fft.irfft(spec / np.sqrt(1 + (f / 500) ** 2) * ((f > 150) & (f < 3500)), n)
    env = np.clip(np.sin(2 * np.pi * 4 * t), 0, None) * (np.sin(2 * np.pi * 0.25 * t) > -0.3)
    y = x * env
    y *= 10 ** (level_dbfs / 20) / np.sqrt(np.mean(y[env > 0.1] ** 2))
    return y + 10 ** (-75 / 20) * rng.standard_normal(n)


def _run(*args):
    return runner.invoke(app, list(map(str, args)))


def test_json_has_the_fixed_keys_and_validates(tmp_path, rng):
    p = tmp_path / "s.wav"
    sf.write(str(p), _speechlike(rng), 16000, subtype="PCM_16")
    res = _run("analyze", p, "--json", "-")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    jsonschema.validate(d, _schema())
    # keys fixed by the analyze issue (other tools read them)
    assert set(d["input"]) >= {"path", "sample_rate_hz", "channels", "channel_used", "duration_s", "format", "subtype"}
    assert set(d["levels"]) >= {"peak_dbfs", "true_peak_dbtp", "rms_dbfs", "active_level_dbfs", "activity_factor", "crest_factor_db", "dc_offset"}
    assert set(d["clipping"]) >= {"clip_level", "clipped_samples", "clipped_fraction", "event_count", "events"}
    assert set(d["noise"]) >= {"floor_dbfs", "snr_db", "hum"}
    assert set(d["spectrum"]) >= {"bands_hz", "speech_band_db", "noise_band_db", "tilt_db_per_octave", "edges_hz", "occupied_bandwidth"}
    assert set(d["spectrum"]["edges_hz"]) >= {"low", "high"}
    assert set(d["spectrum"]["occupied_bandwidth"]) >= {"fraction", "low_hz", "high_hz", "width_hz"}
    assert set(d["voice"]) >= {"f0_median_hz", "f0_p5_hz", "f0_p95_hz"}
    assert set(d["intelligibility"]) >= {"sii", "procedure", "presentation_level_db_spl", "band_audibility", "band_importance", "sii_vs_channel_snr"}
    assert all(set(x) == {"code", "severity", "message"} for x in d["findings"])
    assert "NaN" not in res.stdout and "Infinity" not in res.stdout
    assert d["clipping"]["event_count"] == 0


def test_summary_table_and_json_file(tmp_path, rng):
    p = tmp_path / "s.wav"
    sf.write(str(p), _speechlike(rng), 16000, subtype="PCM_16")
    out = tmp_path / "r.json"
    res = _run("analyze", p, "--json", out)
    assert res.exit_code == 0, res.output
    assert "Active speech level" in res.stdout and "Occupied bandwidth" in res.stdout
    jsonschema.validate(json.loads(out.read_text()), _schema())
    before = out.read_text()
    res2 = _run("analyze", p, "--json", out)
    assert res2.exit_code != 0 and "--force" in res2.stderr
    assert out.read_text() == before
    assert _run("analyze", p, "--json", out, "--force").exit_code == 0


def test_digital_silence_is_reported_not_crashed(tmp_path):
    p = tmp_path / "z.wav"
    sf.write(str(p), np.zeros(16000 * 2), 16000, subtype="PCM_16")
    res = _run("analyze", p, "--json", "-")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    jsonschema.validate(d, _schema())
    assert d["levels"]["peak_dbfs"] is None and d["levels"]["rms_dbfs"] is None
    assert any(f["code"] == "digital_silence" for f in d["findings"])


def test_channel_selection(tmp_path, rng):
    x = _speechlike(rng)
    st = np.stack([x, 0.5 * x], axis=1)
    p = tmp_path / "st.wav"
    sf.write(str(p), st, 16000, subtype="FLOAT")
    d0 = json.loads(_run("analyze", p, "--json", "-").stdout)
    d1 = json.loads(_run("analyze", p, "--channel", "1", "--json", "-").stdout)
    dm = json.loads(_run("analyze", p, "--channel", "mix", "--json", "-").stdout)
    # halving the amplitude lowers every level by 20·log10(2) = 6.02 dB (definition of the decibel)
    assert d0["levels"]["rms_dbfs"] - d1["levels"]["rms_dbfs"] == pytest.approx(6.02, abs=0.01)
    assert d0["levels"]["rms_dbfs"] - dm["levels"]["rms_dbfs"] == pytest.approx(20 * np.log10(1 / 0.75), abs=0.01)
    assert d1["input"]["channel_used"] == "1" and dm["input"]["channel_used"] == "mix"


def _bad(tmp_path, name):
    p = tmp_path / name
    if name == "empty.wav":
        p.write_bytes(b"")
    elif name == "text.wav":
        p.write_text("not audio at all\n" * 40)
    elif name == "truncated.wav":
        q = tmp_path / "full.wav"
        sf.write(str(q), np.zeros(1000), 8000)
        p.write_bytes(q.read_bytes()[:30])
    elif name == "nan.wav":
        sf.write(str(p), np.full(8000, np.nan), 8000, subtype="FLOAT")
    elif name == "inf.wav":
        x = np.zeros(8000)
        x[100] = np.inf
        sf.write(str(p), x, 8000, subtype="FLOAT")
    elif name == "one.wav":
        sf.write(str(p), np.array([0.1]), 8000)
    elif name == "slow.wav":
        sf.write(str(p), np.zeros(2000), 1000)
    elif name == "folder":
        p.mkdir()
    return p


@pytest.mark.parametrize("name,phrase", [
    ("empty.wav", "empty"),
    ("text.wav", "not an audio file"),
    ("truncated.wav", ""),
    ("nan.wav", "NaN"),
    ("inf.wav", "an infinite value"),
    ("one.wav", "too short"),
    ("slow.wav", "1000 Hz"),
    ("folder", "folder"),
    ("missing.wav", "No such file"),
])
def test_bad_input_one_sentence_nonzero_no_traceback(tmp_path, name, phrase):
    p = _bad(tmp_path, name)
    out = tmp_path / "never.json"
    res = _run("analyze", p, "--json", out)
    assert res.exit_code == 2
    assert "Traceback" not in res.output and "Traceback" not in res.stderr
    lines = [ln for ln in res.stderr.strip().splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("voiceband: ")
    assert phrase in lines[0]
    assert not out.exists()


def test_bad_channel(tmp_path, rng):
    p = tmp_path / "s.wav"
    sf.write(str(p), _speechlike(rng, seconds=1.0), 16000)
    res = _run("analyze", p, "--channel", "4")
    assert res.exit_code == 2 and "channel 4 does not exist" in res.stderr


def test_dc_offset_is_not_counted_as_noise(tmp_path, rng):
    # A DC offset is reported as dc_offset; the pause noise floor is the AC power of the pauses
    # (common practice: noise is measured on the band-limited, DC-free signal).
    x = _speechlike(rng)
    p0, p1 = tmp_path / "a.wav", tmp_path / "b.wav"
    sf.write(str(p0), x, 16000, subtype="FLOAT")
    sf.write(str(p1), x + 0.03, 16000, subtype="FLOAT")
    d0 = json.loads(_run("analyze", p0, "--json", "-").stdout)
    d1 = json.loads(_run("analyze", p1, "--json", "-").stdout)
    assert d1["levels"]["dc_offset"] == pytest.approx(0.03 + d0["levels"]["dc_offset"], abs=1e-6)
    assert d1["noise"]["floor_dbfs"] == pytest.approx(d0["noise"]["floor_dbfs"], abs=0.5)
    assert any(f["code"] == "dc_offset" for f in d1["findings"])


def test_refused_block_leaves_activity_state_unchanged(rng):
    # a block with NaN is refused with one sentence and does not change what was measured before it
    from voiceband.measurement.activity import ActivityAccumulator
    from voiceband.errors import SignalValueError

    x = _speechlike(rng, seconds=2.0)
    a, b = ActivityAccumulator(16000), ActivityAccumulator(16000)
    a.update(x[:20000])
    b.update(x[:20000])
    bad = x[20000:21000].copy()
    bad[-1] = np.nan
    with pytest.raises(SignalValueError, match="NaN"):
        a.update(bad)
    a.update(x[20000:])
    b.update(x[20000:])
    assert a.result() == b.result()
