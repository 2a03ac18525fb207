"""``voiceband response`` end to end: stimulus file → filter → recording file → JSON and PNG;
clean one-sentence failures; the Bode figure."""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest
import scipy.signal as ss
import soundfile as sf
from typer.testing import CliRunner

from voiceband.cli.main import app
from voiceband.response import measure_response
from voiceband.synth.sweep import exponential_sweep

runner = CliRunner()
REQUIRED = {"frequencies_hz", "magnitude_db", "phase_deg", "edges_hz", "ripple_db", "delay_s", "frequency_offset_hz", "harmonics"}


def _run(*args):
    return runner.invoke(app, [str(a) for a in args])


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """A 48 kHz sweep file and its recording through a 300–3400 Hz band-pass, made at 44.1 kHz."""
    d = tmp_path_factory.mktemp("resp")
    s = exponential_sweep(duration_s=3.0, sample_rate_hz=48000)
    sf.write(str(d / "sweep.wav"), s.samples, 48000, subtype="PCM_16")
    sos = ss.butter(2, [300.0, 3400.0], "bandpass", fs=48000, output="sos")
    y = ss.sosfilt(sos, np.concatenate([np.zeros(int(0.37 * 48000)), s.samples, np.zeros(48000)]))
    y = ss.resample_poly(y, 147, 160)  # recorded at 44.1 kHz
    y = 1.4 * y + 3e-4 * np.random.default_rng(7).standard_normal(y.size)
    sf.write(str(d / "rec.wav"), y, 44100, subtype="PCM_16")
    return d


def test_end_to_end_json_and_png(files, tmp_path):
    out = tmp_path / "plots"
    js = tmp_path / "r.json"
    res = _run("response", files / "sweep.wav", files / "rec.wav", "--out", out, "--json", js)
    assert res.exit_code == 0, res.output
    d = json.loads(js.read_text())
    assert REQUIRED <= set(d)
    assert set(d["edges_hz"]) == {"low_3db", "high_3db", "low_10db", "high_10db"}
    # Butterworth design edges (scipy.signal.butter: Wn at −3 dB) within 2 %
    assert d["edges_hz"]["low_3db"] == pytest.approx(300.0, rel=0.02)
    assert d["edges_hz"]["high_3db"] == pytest.approx(3400.0, rel=0.02)
    assert d["delay_s"] == pytest.approx(0.37, abs=0.002)
    assert d["passband_level_db"] == pytest.approx(20 * np.log10(1.4), abs=0.1)
    assert d["recording_sample_rate_hz"] == 44100 and d["sample_rate_hz"] == 48000
    assert [h["order"] for h in d["harmonics"]] == [2, 3, 4, 5]
    assert all(set(h) == {"order", "level_db_re_fundamental"} for h in d["harmonics"])
    assert len(d["frequencies_hz"]) == len(d["magnitude_db"]) == len(d["phase_deg"])
    text = js.read_text()
    assert "NaN" not in text and "Infinity" not in text
    png = out / "rec_response.png"
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "Passband −3 dB" in res.stdout


def test_json_to_stdout_only(files):
    res = _run("response", files / "sweep.wav", files / "rec.wav", "--json", "-")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert REQUIRED <= set(d)


def test_refuses_to_overwrite_without_force(files, tmp_path):
    js = tmp_path / "r.json"
    js.write_text("{}")
    res = _run("response", files / "sweep.wav", files / "rec.wav", "--json", js)
    assert res.exit_code == 2 and "already exists" in res.stderr and js.read_text() == "{}"
    out = tmp_path / "o"
    out.mkdir()
    (out / "rec_response.png").write_bytes(b"x")
    res = _run("response", files / "sweep.wav", files / "rec.wav", "--out", out)
    assert res.exit_code == 2 and "--force" in res.stderr
    res = _run("response", files / "sweep.wav", files / "rec.wav", "--out", out, "--json", js, "--force")
    assert res.exit_code == 0, res.output
    assert (out / "rec_response.png").read_bytes()[:4] == b"\x89PNG" and json.loads(js.read_text())["delay_s"] > 0


def test_multitone_with_carrier_offset_end_to_end(tmp_path):
    from voiceband.synth.tones import multitone

    fs = 16000
    m = multitone(3.0, fs).samples
    stim = np.concatenate([np.zeros(fs // 4), m, np.zeros(fs // 4)])
    sos = ss.butter(2, [300.0, 3400.0], "bandpass", fs=fs, output="sos")
    y = ss.sosfilt(sos, np.concatenate([np.zeros(fs // 2), stim, np.zeros(fs)]))
    t = np.arange(y.size) / fs
    y = np.real(ss.hilbert(y) * np.exp(2j * np.pi * 23.0 * t))  # SSB shift by +23 Hz (Hilbert)
    sf.write(str(tmp_path / "mt.wav"), stim, fs, subtype="FLOAT")
    sf.write(str(tmp_path / "mt_rec.wav"), y, fs, subtype="FLOAT")
    res = _run("response", tmp_path / "mt.wav", tmp_path / "mt_rec.wav", "--json", "-")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["stimulus_kind"] == "tones"
    assert d["frequency_offset_hz"] == pytest.approx(23.0, abs=1.0)
    assert all(p is None for p in d["phase_deg"])
    assert d["edges_hz"]["high_3db"] is None  # the tones stop at 3000 Hz, below the 3400 Hz edge


def _sentence(res):
    err = res.stderr.strip()
    return res.exit_code != 0 and err.startswith("voiceband: ") and "\n" not in err and "Traceback" not in res.output


def test_bad_inputs_exit_non_zero_with_one_sentence(files, tmp_path):
    fs = 44100
    sf.write(str(tmp_path / "silent.wav"), np.zeros(5 * fs), fs, subtype="PCM_16")
    rng = np.random.default_rng(3)
    sf.write(str(tmp_path / "noise.wav"), 0.1 * rng.standard_normal(6 * fs), fs, subtype="PCM_16")
    rec, _ = sf.read(str(files / "rec.wav"))
    sf.write(str(tmp_path / "clipped.wav"), np.clip(4 * rec, -1, 1), fs, subtype="PCM_16")
    sf.write(str(tmp_path / "short.wav"), rec[: fs], fs, subtype="PCM_16")
    (tmp_path / "notaudio.wav").write_text("hello")
    cases = {
        "silent.wav": "silent",
        "noise.wav": "does not contain the stimulus",
        "clipped.wav": "clipped",
        "short.wav": "shorter than the sweep",
        "notaudio.wav": "not an audio file",
        "missing.wav": "No such file",
    }
    for name, words in cases.items():
        res = _run("response", files / "sweep.wav", tmp_path / name)
        assert _sentence(res), (name, res.output)
        assert words in res.stderr, (name, res.stderr)
    res = _run("response", files / "sweep.wav", files / "rec.wav", "--channel", "3")
    assert _sentence(res) and "channel" in res.stderr


# --------------------------------------------------------------------------- figure and imports


def test_bode_figure_draws_magnitude_and_phase(files):
    from matplotlib.figure import Figure

    from voiceband.report.plots import bode_figure

    x, fs = sf.read(str(files / "sweep.wav"))
    y, fr = sf.read(str(files / "rec.wav"))
    r = measure_response(x, fs, y, fr)
    import matplotlib

    before = dict(matplotlib.rcParams)
    fig = bode_figure(r)
    assert dict(matplotlib.rcParams) == before  # a style context, no global rcParams changes
    assert isinstance(fig, Figure) and len(fig.axes) == 2
    mag_ax, ph_ax = fig.axes
    assert mag_ax.get_xscale() == "log" and ph_ax.get_xscale() == "log"
    edges = {round(line.get_xdata()[0]) for line in mag_ax.lines if len(set(line.get_xdata())) == 1}
    assert {round(r.edges_hz.low_3db), round(r.edges_hz.high_3db)} <= edges
    # drawing into caller's axes returns their figure
    fig2 = Figure()
    a, b = fig2.subplots(2, 1)
    assert bode_figure(r, ax=(a, b)) is fig2
    single = Figure().subplots()
    assert bode_figure(r, ax=single) is single.figure


def test_measurement_modules_do_not_load_matplotlib():
    code = (
        "import sys, voiceband.response, voiceband.cli.response, voiceband.synth.sweep; "
        "print('matplotlib' in sys.modules, 'scipy.signal' in sys.modules)"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()
    assert out == ["False", "False"]
