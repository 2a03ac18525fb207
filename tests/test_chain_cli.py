"""``voiceband chain``: response figures, SII, occupied bandwidth, JSON keys, design against measurement."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from scipy import integrate, signal
from typer.testing import CliRunner

from voiceband.chain import read_chain
from voiceband.cli.main import app
from voiceband.design.evaluate import evaluate_chain
from voiceband.design.speech import standard_speech

runner = CliRunner()
CHAINS = Path(__file__).resolve().parent.parent / "corpus_synthetic" / "chains"


def _run(*args):
    return runner.invoke(app, [str(a) for a in args])


def _chain_file(tmp_path, stages: str, name="c.toml") -> Path:
    p = tmp_path / name
    p.write_text(f'name = "{name}"\n' + stages, encoding="utf-8")
    return p


BANDPASS = '[[stage]]\nkind = "bandpass"\ntype = "butterworth"\norder = 4\nlow_hz = 300\nhigh_hz = "2.7k"\n'


def test_json_keys_and_butterworth_edges(tmp_path):
    p = _chain_file(tmp_path, BANDPASS)
    res = _run("chain", p, "--json", "-")
    assert res.exit_code == 0, res.output
    d = json.loads(res.output)
    for key in ("frequencies_hz", "magnitude_db", "phase_deg", "group_delay_s", "gain_db", "ripple_db", "edges_hz",
                "sii", "occupied_bandwidth"):
        assert key in d
    assert set(d["edges_hz"]) >= {"low_3db", "high_3db", "low_10db", "high_10db"}
    assert set(d["sii"]) >= {"quiet", "by_channel_snr"}
    assert [p["snr_db"] for p in d["sii"]["by_channel_snr"]] == [0, 5, 10, 15, 20]
    assert set(d["occupied_bandwidth"]) >= {"low_hz", "high_hz", "width_hz"}
    f = np.array(d["frequencies_hz"])
    assert f[0] == pytest.approx(20.0) and f[-1] == pytest.approx(20000.0)
    # scipy.signal.butter band-pass: -3 dB at the design edges, unity gain, maximally flat (no ripple)
    assert d["edges_hz"]["low_3db"] == pytest.approx(300.0, rel=0.005)
    assert d["edges_hz"]["high_3db"] == pytest.approx(2700.0, rel=0.005)
    assert d["gain_db"] == pytest.approx(0.0, abs=0.01)
    assert d["ripple_db"] == 0.0
    assert "sideband_suppression_db" not in d


def test_chebyshev_ripple_and_group_delay(tmp_path):
    # Chebyshev type I passband ripple equals its design ripple (definition; scipy.signal.cheby1)
    p = _chain_file(tmp_path, '[[stage]]\nkind = "lowpass"\ntype = "chebyshev1"\norder = 5\ncutoff_hz = 3000\nripple_db = 0.5\n')
    e = evaluate_chain(read_chain(p))
    assert e.ripple_db == pytest.approx(0.5, abs=0.02)
    # group delay against scipy.signal.group_delay of the bilinear-free analog design evaluated directly:
    # -d(phase)/d(omega) of scipy.signal.freqs, by central differences on a fine grid
    b, a = signal.cheby1(5, 0.5, 2 * np.pi * 3000.0, analog=True)
    f0 = np.array([500.0, 1500.0])
    w = 2 * np.pi * f0
    _, h1 = signal.freqs(b, a, worN=w * (1 - 1e-5))
    _, h2 = signal.freqs(b, a, worN=w * (1 + 1e-5))
    ref = -np.angle(h2 / h1) / (w * 2e-5)
    assert np.interp(f0, e.frequencies_hz, e.group_delay_s) == pytest.approx(ref, rel=0.01)


def test_sii_in_quiet_matches_the_reference_package_with_independent_band_gains(tmp_path):
    # band gains by numerical integration of |H|^2 from scipy.signal.freqs over the ANSI S3.5-1997
    # one-third-octave band limits, then the SII of the `speech-intelligibility-index` package
    from speech_intelligibility_index import sii as reference

    from voiceband.intelligibility import band_importance, standard_speech_spectrum
    from voiceband.intelligibility.tables import band_procedure

    p = _chain_file(tmp_path, BANDPASS)
    e = evaluate_chain(read_chain(p))
    b, a = signal.butter(4, [2 * np.pi * 300.0, 2 * np.pi * 2700.0], "bandpass", analog=True)
    table = band_procedure("one-third-octave")
    gains = []
    for lo, hi in zip(table.lower_hz, table.upper_hz):
        val, _ = integrate.quad(lambda f: abs(signal.freqs(b, a, worN=[2 * np.pi * f])[1][0]) ** 2, lo, hi, limit=200)
        gains.append(10 * np.log10(val / (hi - lo)))
    speech = standard_speech_spectrum("normal") + np.array(gains)
    ref = reference.sii(ssl=speech, nsl=np.full(18, -50.0), hearing_threshold=np.zeros(18),
                        band_importance_function=band_importance("average"))
    assert e.sii_quiet == pytest.approx(ref, abs=0.002)
    # more channel noise, less intelligibility (ANSI S3.5-1997 clause 4: K falls as D rises)
    s = [p.sii for p in e.sii_by_channel_snr]
    assert all(x < y for x, y in zip(s, s[1:]))


def test_speech_model_power_below_1khz():
    # Byrne et al. (1994) LTASS: bands centred at or below 1 kHz hold about 93 % of the speech power,
    # at or below 500 Hz about 75 % (computed from the paper's one-third-octave table)
    m = standard_speech()
    total = np.sum(m.psd)
    assert np.sum(m.psd[m.freqs_hz <= 1122.0]) / total == pytest.approx(0.93, abs=0.01)
    assert np.sum(m.psd[m.freqs_hz <= 562.0]) / total == pytest.approx(0.75, abs=0.015)


def test_ssb_chain_reports_suppression_on_the_grid(tmp_path):
    # phasing with 1 degree of quadrature error: 41.2 dB at every frequency (computed from the image-rejection formula, see test_chain_stages)
    p = _chain_file(tmp_path, BANDPASS + '[[stage]]\nkind = "ssb"\nphase_error_deg = 1\n')
    d = json.loads(_run("chain", p, "--json", "-").output)
    s = np.array(d["sideband_suppression_db"])
    assert s.size == len(d["frequencies_hz"])
    assert s == pytest.approx(41.18, abs=0.01)


def test_example_boards_evaluate(tmp_path):
    for path in sorted(CHAINS.glob("*.toml")):
        res = _run("chain", path, "--plot", tmp_path / f"{path.stem}.png")
        assert res.exit_code == 0, res.output
        assert (tmp_path / f"{path.stem}.png").stat().st_size > 10000
    # a refused overwrite is one sentence and exit 2
    res = _run("chain", CHAINS / "board_a_active.toml", "--plot", tmp_path / "board_a_active.png")
    assert res.exit_code == 2 and "already exists; use --force" in res.output


def test_design_against_a_measured_response(tmp_path):
    # build the design as "hardware" (the chain's own audio processing), measure it with the response
    # command from a Farina sweep, and hold the measurement against the design: they agree in the passband
    from voiceband.synth.sweep import exponential_sweep

    p = _chain_file(tmp_path, BANDPASS + '[[stage]]\nkind = "gain"\ndb = -3\n')
    c = read_chain(p)
    s = exponential_sweep(duration_s=3.0, sample_rate_hz=48000)
    sf.write(str(tmp_path / "sweep.wav"), s.samples, 48000, subtype="PCM_24")
    y = c.process(np.concatenate([np.zeros(4800), s.samples, np.zeros(48000)]), 48000)
    sf.write(str(tmp_path / "rec.wav"), y, 48000, subtype="PCM_24")
    res = _run("response", tmp_path / "sweep.wav", tmp_path / "rec.wav", "--json", tmp_path / "r.json")
    assert res.exit_code == 0, res.output
    res = _run("chain", p, "--measured", tmp_path / "r.json", "--json", tmp_path / "c.json", "--plot", tmp_path / "c.png")
    assert res.exit_code == 0, res.output
    m = json.loads((tmp_path / "c.json").read_text())["measured"]
    assert m["rms_difference_db"] < 0.2
    assert m["gain_difference_db"] == pytest.approx(0.0, abs=0.2)
    assert len(m["difference_db"]) == len(m["frequencies_hz"])
    assert "rms difference" in res.output.lower()
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    res = _run("chain", p, "--measured", bad)
    assert res.exit_code == 2 and "is not JSON" in res.output
