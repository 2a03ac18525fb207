"""``voiceband sweep``: the band-gain SII grid search, checked against brute-force audio filtering."""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy import signal
from typer.testing import CliRunner

from voiceband.chain import Emphasis, Filter
from voiceband.cli.main import app
from voiceband.design.compare import default_speech
from voiceband.design.speech import standard_speech, talker_speech
from voiceband.design.sweep import filter_power_response, occupied_bandwidth_rows, parse_range, sweep_cutoffs
from voiceband.errors import MeasurementError

runner = CliRunner()
SNRS = (0.0, 5.0, 10.0, 15.0, 20.0)


@pytest.fixture(scope="module")
def speech():
    return default_speech()


def test_ranges_are_inclusive():
    assert parse_range("100:400:25", name="--low").tolist() == list(range(100, 401, 25))
    assert parse_range("2000:3000:300", name="--high").tolist() == [2000.0, 2300.0, 2600.0, 2900.0]
    for bad in ("100:50:10", "100:400", "a:b:c", "100:400:0", "5:400:10"):
        with pytest.raises(MeasurementError, match="--low"):
            parse_range(bad, name="--low")


def test_butterworth_power_response_closed_form_matches_scipy():
    # |H|^2 = 1/(1 + (f/fc)^2n) (Butterworth magnitude) against scipy.signal.freqs of butter(analog=True)
    f = np.linspace(10.0, 20000.0, 500)
    ours = filter_power_response("highpass", [300.0], f, order=4)[0]
    b, a = signal.butter(4, 2 * np.pi * 300.0, "highpass", analog=True)
    _, h = signal.freqs(b, a, worN=2 * np.pi * f)
    assert ours == pytest.approx(np.abs(h) ** 2, rel=1e-9, abs=1e-15)
    # other families go through the chain's Filter stage (checked against scipy in test_chain_stages)
    cheb = filter_power_response("lowpass", [2700.0], f, order=4, type="chebyshev1", ripple_db=0.5)[0]
    assert cheb == pytest.approx(np.abs(Filter(kind="lowpass", type="chebyshev1", order=4, cutoff_hz=2700.0,
                                               ripple_db=0.5).response(f)) ** 2)


def test_vectorised_occupied_bandwidth_equals_the_sm328_routine():
    # row by row against voiceband.measurement.bandwidth.occupied_bandwidth (ITU-R SM.328 beta-% method)
    from voiceband.measurement.bandwidth import occupied_bandwidth

    m = standard_speech()
    rows = (filter_power_response("highpass", [100.0, 300.0, 450.0], m.freqs_hz, order=4)
            * filter_power_response("lowpass", [2200.0, 2700.0, 3600.0], m.freqs_hz, order=6)) * m.psd
    lo, hi = occupied_bandwidth_rows(rows, m.freqs_hz, (20.0, 20000.0))
    for k, row in enumerate(rows):
        ref = occupied_bandwidth(row, m.freqs_hz, span_hz=(20.0, 20000.0))
        assert lo[k] == pytest.approx(ref.low_hz, abs=1e-6)
        assert hi[k] == pytest.approx(ref.high_hz, abs=1e-6)


def test_best_pair_under_2700_hz_is_found_again_by_brute_force_audio_filtering(speech):
    # Brute force: filter speech audio with every candidate pair (4th-order Butterworth high-pass then
    # low-pass, digital), measure band gains from the Welch spectra and the occupied bandwidth of the
    # output (ITU-R SM.328, 99 %), score each with the same SII definition, pick the best within 2.7 kHz
    # (2K70J3E necessary bandwidth, ITU-R SM.1138; from memory).
    from voiceband.intelligibility import channel_sii, standard_speech_spectrum
    from voiceband.intelligibility.tables import band_procedure
    from voiceband.measurement.bandwidth import occupied_bandwidth
    from voiceband.measurement.spectrum import band_powers

    x, fs = speech
    lows = np.array([100.0, 300.0, 500.0])
    highs = np.array([2200.0, 2600.0, 3000.0, 3400.0, 3800.0])
    model = sweep_cutoffs(lows, highs, order=4, max_bandwidth_hz=2700.0, snrs_db=SNRS)
    f, px = signal.welch(x, fs, nperseg=4096)
    table = band_procedure("one-third-octave")
    p_in = band_powers(px, f, table.lower_hz, table.upper_hz)
    best, best_score = None, -1.0
    for lo in lows:
        for hi in highs:
            y = Filter(kind="highpass", order=4, cutoff_hz=lo).process(x, fs)
            y = Filter(kind="lowpass", order=4, cutoff_hz=hi).process(y, fs)
            _, py = signal.welch(y, fs, nperseg=4096)
            gains = 10 * np.log10(band_powers(py, f, table.lower_hz, table.upper_hz) / p_in)
            score = float(np.mean(channel_sii(np.array(SNRS), speech_db=standard_speech_spectrum("normal") + gains).index))
            obw = occupied_bandwidth(py, f, span_hz=(20.0, fs / 2)).width_hz
            if obw <= 2700.0 and score > best_score:
                best, best_score = (lo, hi), score
            # the model's score of each pair is within 0.02 of the audio's
            i, j = int(np.flatnonzero(lows == lo)[0]), int(np.flatnonzero(highs == hi)[0])
            assert model.sii[i, j] == pytest.approx(score, abs=0.02)
    assert (model.best.low_hz, model.best.high_hz) == best


def test_pareto_front_and_limit():
    r = sweep_cutoffs(np.arange(100.0, 501.0, 50.0), np.arange(2000.0, 4001.0, 100.0), max_bandwidth_hz=2700.0)
    obw = [c.occupied_bandwidth_hz for c in r.pareto]
    sii = [c.sii for c in r.pareto]
    assert obw == sorted(obw) and all(a < b for a, b in zip(sii, sii[1:]))
    # no grid point beats a front point on both counts
    for c in r.pareto:
        assert not np.any((r.sii > c.sii + 1e-9) & (r.occupied_bandwidth_hz < c.occupied_bandwidth_hz - 1e-9))
    # the best within the limit is the widest front point inside it
    inside = [c for c in r.pareto if c.occupied_bandwidth_hz <= 2700.0]
    assert (r.best.low_hz, r.best.high_hz) == (inside[-1].low_hz, inside[-1].high_hz)
    assert r.best.occupied_bandwidth_hz <= 2700.0
    none = sweep_cutoffs([100.0], [3000.0], max_bandwidth_hz=500.0)
    assert none.best is None


def test_talker_spectrum_from_a_recording(speech):
    # the synthetic talker is calibrated to ANSI S3.5-1997 Table 3 (normal effort) within +-3 dB per band
    # 160-8000 Hz (synth.speech docstring); its measured SII band levels, shifted to 62.35 dB SPL overall,
    # must therefore lie within 3 dB of the standard speech spectrum (Table 3)
    from voiceband.intelligibility import standard_speech_spectrum

    x, fs = speech
    m = talker_speech(x, fs)
    diff = m.speech_db - standard_speech_spectrum("normal")
    assert np.max(np.abs(diff)) < 3.0
    # a brighter voice (6 dB/octave more treble) needs a lower low-pass cutoff for the same limit
    bright = talker_speech(Emphasis(mode="pre", tau_us=200.0).process(x, fs), fs)
    lows, highs = np.arange(100.0, 401.0, 50.0), np.arange(2000.0, 4001.0, 100.0)
    plain = sweep_cutoffs(lows, highs, max_bandwidth_hz=2700.0, speech=m)
    treble = sweep_cutoffs(lows, highs, max_bandwidth_hz=2700.0, speech=bright)
    assert treble.best.high_hz < plain.best.high_hz
    assert treble.speech == "talker"


def test_cli_json_keys_plot_and_own_voice(tmp_path, speech, write_wav):
    js, png = tmp_path / "s.json", tmp_path / "s.png"
    res = runner.invoke(app, ["sweep", "--low", "100:400:100", "--high", "2400:3400:200", "--max-bandwidth", "2700",
                              "--json", str(js), "--plot", str(png)])
    assert res.exit_code == 0, res.output
    d = json.loads(js.read_text())
    assert set(d["best"]) >= {"low_hz", "high_hz", "sii", "occupied_bandwidth_hz"}
    assert isinstance(d["pareto"], list) and d["pareto"]
    assert len(d["grid"]["sii"]) == 4 and len(d["grid"]["sii"][0]) == 6
    assert png.stat().st_size > 10000
    x, fs = speech
    wav = write_wav("me.wav", x, fs)
    res = runner.invoke(app, ["sweep", "--low", "100:400:100", "--high", "2400:3400:200", "--speech", str(wav),
                              "--channel-snr", "6", "--json", "-"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.output)
    assert d["speech"] == "me.wav" and d["channel_snr_db"] == [6.0]
    res = runner.invoke(app, ["sweep", "--low", "400:100:100", "--high", "2400:3400:200"])
    assert res.exit_code == 2 and "--low must have START <= STOP" in res.output
    silent = write_wav("silent.wav", np.zeros(fs * 3), fs)
    res = runner.invoke(app, ["sweep", "--low", "100:400:100", "--high", "2400:3400:200", "--speech", str(silent)])
    assert res.exit_code == 2 and "Traceback" not in res.output
