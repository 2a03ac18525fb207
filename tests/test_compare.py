"""``voiceband compare``: chains on the same speech, average- and peak-referenced SII, talk power."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from voiceband.chain import Chain, Clipper, Filter, Gain
from voiceband.cli.main import app
from voiceband.design.compare import compare_chains, default_speech, peak_to_average_db
from voiceband.errors import MeasurementError

runner = CliRunner()
CHAINS = Path(__file__).resolve().parent.parent / "corpus_synthetic" / "chains"
FS = 48000


@pytest.fixture(scope="module")
def speech():
    return default_speech()


def test_peak_to_average_of_one_and_two_tones():
    # envelope PEP over average power: single tone 0 dB, two equal tones 3.01 dB (analytic)
    t = np.arange(FS) / FS
    assert peak_to_average_db(np.cos(2 * np.pi * 1000.0 * t)) == pytest.approx(0.0, abs=0.01)
    two = np.cos(2 * np.pi * 700.0 * t) + np.cos(2 * np.pi * 1900.0 * t)
    assert peak_to_average_db(two) == pytest.approx(3.01, abs=0.01)


@pytest.fixture(scope="module")
def compared(speech):
    x, fs = speech
    hp = Filter(kind="highpass", order=4, cutoff_hz=300.0)
    lp = Filter(kind="lowpass", order=6, type="elliptic", cutoff_hz=2700.0, ripple_db=0.5, stop_db=50.0)
    plain = Chain("plain", (Gain.from_db(0.0),))
    linear = Chain("linear", (hp, lp))
    clipped = Chain("clipped", (hp, Clipper(mode="hard", level_db=12.0), lp))
    clip_last = Chain("clip last", (hp, lp, Clipper(mode="hard", level_db=6.0)))
    return compare_chains([plain, linear, clipped, clip_last], x, fs, snrs_db=[0.0, 10.0, 20.0])


def test_rows_and_best(compared):
    rows = {r.name: r for r in compared.chains}
    assert [r.name for r in compared.chains] == ["plain", "linear", "clipped", "clip last"]
    # STOI of an unchanged signal is 1 (Taal et al. 2011: identical signals correlate perfectly)
    assert rows["plain"].stoi == pytest.approx(1.0, abs=1e-6)
    assert 0.8 < rows["linear"].stoi < 1.0
    # the Butterworth high-pass keeps its -3 dB edge near 300 Hz (the elliptic's 0.5 dB ripple moves the
    # passband reference, and with it the edge, by a few hertz)
    assert rows["linear"].edges_hz.low_3db == pytest.approx(300.0, rel=0.05)
    assert rows["linear"].occupied_bandwidth_hz < rows["plain"].occupied_bandwidth_hz
    # clipping 12 dB lowers the peak-to-average ratio (Wathen-Dunn & Lipke, JASA 30(1), 1958)
    assert rows["linear"].peak_to_average_db - rows["clipped"].peak_to_average_db > 3.0
    # so at the same peak power it gets the better SII; referred to average power it does not gain
    for a, b in zip(rows["clipped"].sii_by_channel_snr, rows["linear"].sii_by_channel_snr):
        assert a.sii_peak_ref > b.sii_peak_ref
        assert a.sii_average_ref < b.sii_average_ref + 0.02
    assert rows["clipped"].clipped_fraction > 0.001 and rows["linear"].clipped_fraction == 0.0
    # a clipper at the end leaves flat tops the clipping detector finds in the output
    assert rows["clip last"].output_clipped_fraction > 0.001 and rows["clipped"].output_clipped_fraction < 0.001
    assert sum(r.best for r in compared.chains) == 1
    best = next(r for r in compared.chains if r.best)
    assert compared.best == best.name and best.name in ("clipped", "clip last")
    assert compared.reason.startswith(best.name) and "peak power" in compared.reason


def test_peak_reference_is_the_average_reference_shifted_by_the_papr(compared):
    # SNR re peak envelope power = SNR re average power + PAPR (definitions in voiceband.design.compare)
    from voiceband.intelligibility import channel_sii, standard_speech_spectrum

    r = compared.chains[1]
    speech_db = standard_speech_spectrum("normal") + r.band_gains_db
    for p in r.sii_by_channel_snr:
        assert p.sii_peak_ref == pytest.approx(channel_sii(p.snr_db - r.peak_to_average_db, speech_db=speech_db).index)


def test_compare_refuses_bad_speech():
    with pytest.raises(MeasurementError, match="at least 1 s"):
        compare_chains([Chain("g", (Gain.from_db(1.0),))], np.zeros(100), FS)
    with pytest.raises(MeasurementError, match="silent"):
        compare_chains([Chain("g", (Gain.from_db(1.0),))], np.zeros(FS * 2), FS)


def test_cli_example_boards(tmp_path, speech, write_wav):
    x, fs = speech
    wav = write_wav("talker.wav", x, fs)
    js, png = tmp_path / "c.json", tmp_path / "c.png"
    files = [str(p) for p in sorted(CHAINS.glob("board_*.toml"))]
    res = runner.invoke(app, ["compare", *files, "--speech", str(wav), "--channel-snr", "6", "--channel-snr", "12",
                              "--json", str(js), "--plot", str(png)])
    assert res.exit_code == 0, res.output
    d = json.loads(js.read_text())
    assert len(d["chains"]) == 3 and png.stat().st_size > 10000
    for c in d["chains"]:
        assert set(c) >= {"name", "occupied_bandwidth_hz", "edges_hz", "sii_quiet", "sii_by_channel_snr", "stoi",
                          "peak_to_average_db", "clipped_fraction"}
        assert [p["snr_db"] for p in c["sii_by_channel_snr"]] == [6.0, 12.0]
        assert all(set(p) == {"snr_db", "sii_average_ref", "sii_peak_ref"} for p in c["sii_by_channel_snr"])
    # board C (compressor and clipper) wins on talk power
    assert d["best"] == "Board C: compressor, clipper, elliptic"
    assert "Best:" in res.output
    res = runner.invoke(app, ["compare", files[0], "--speech", str(tmp_path / "missing.wav")])
    assert res.exit_code == 2 and "Traceback" not in res.output


def test_a_chain_the_speech_rate_cannot_carry_is_named(tmp_path):
    p = tmp_path / "wide.toml"
    p.write_text('name = "wide"\n[[stage]]\nkind = "lowpass"\norder = 4\ncutoff_hz = "15k"\n', encoding="utf-8")
    res = runner.invoke(app, ["compare", str(p)])
    assert res.exit_code == 2
    assert "'wide.toml' cannot run on the speech at 24000 Hz" in res.output and "Nyquist" in res.output
