"""Service profiles and verdicts: loading, limits with sources, and known answers on synthetic chains.

The chains are the corpus's clean talker (corpus_synthetic/speech_medium_normal.wav) through
Butterworth band-passes made with scipy.signal (a general-purpose reference library).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import soundfile as sf
from scipy import signal

from voiceband.analysis import analyze_signal, measure_recording
from voiceband.profiles import Limit, ProfileError, load_profile, profile_names
from voiceband.profiles.verdicts import CHECKS, judge, verdicts
from voiceband.recommend import importance_fraction_below, power_fraction_below, recommendations, search_cutoffs

TALKER = "corpus_synthetic/speech_medium_normal.wav"


@pytest.fixture(scope="module")
def talker():
    x, fs = sf.read(TALKER)
    return x, fs


def _chain(talker, low_hz, high_hz, order=4, gain=2.0):
    x, fs = talker
    sos = signal.butter(order, [low_hz, high_hz], btype="bandpass", fs=fs, output="sos")
    return analyze_signal(gain * signal.sosfilt(sos, x), fs)


def _psd(talker, low_hz, high_hz, order=4, gain=2.0):
    """The long-term spectrum of the same chain (the cutoff search runs on the talker's PSD)."""
    x, fs = talker
    sos = signal.butter(order, [low_hz, high_hz], btype="bandpass", fs=fs, output="sos")
    return measure_recording(gain * signal.sosfilt(sos, x), fs).spectrum


def test_builtin_profiles_load_with_a_source_beside_every_limit():
    # the six services named in the issue
    assert profile_names() == ["am-voice", "fm-voice-narrow", "fm-voice-wide", "ssb-voice", "telephone", "wideband"]
    for name in profile_names():
        p = load_profile(name)
        assert p.name == name
        assert p.passband_source and all(l.source.strip() for l in p.limits)
        assert all(l.check in CHECKS for l in p.limits)


def test_profile_passbands_match_the_trade_bands():
    # SSB 300-2700 Hz (common practice), telephone 300-3400 Hz
    # (IEC 60050 IEV 704-10-07), wideband 50-7000 Hz (G.722, from memory); TIA-603 300-3000 Hz (from memory)
    bands = {n: (load_profile(n).passband_low_hz, load_profile(n).passband_high_hz) for n in profile_names()}
    assert bands["ssb-voice"] == (300.0, 2700.0)
    assert bands["telephone"] == (300.0, 3400.0)
    assert bands["wideband"] == (50.0, 7000.0)
    assert bands["fm-voice-wide"] == (300.0, 3000.0)
    assert "preemphasis_db_per_octave" in {l.check for l in load_profile("fm-voice-wide").limits}


def test_user_profile_file(tmp_path):
    p = tmp_path / "mine.toml"
    p.write_text('name = "mine"\ntitle = "My net"\ndescription = "A local net."\n'
                 '[passband]\nlow_hz = 200.0\nhigh_hz = 2800.0\nsource = "common practice"\n'
                 '[[limit]]\ncheck = "occupied_bandwidth_hz"\npass_max = 2800.0\nsource = "97.303(h)"\n')
    prof = load_profile(p)
    assert prof.limits == (Limit("occupied_bandwidth_hz", None, 2800.0, None, 2800.0, "97.303(h)"),)


@pytest.mark.parametrize("body, match", [
    ("not toml [", "not valid TOML"),
    ('name="x"\ntitle="x"\ndescription="x"\n[passband]\nlow_hz=3\nhigh_hz=2\nsource="s"\n', "low_hz < high_hz"),
    ('name="x"\ntitle="x"\ndescription="x"\n[passband]\nlow_hz=3\nhigh_hz=20\nsource="s"\n'
     '[[limit]]\ncheck="loudness"\npass_max=1\nsource="s"\n', "unknown check"),
    ('name="x"\ntitle="x"\ndescription="x"\n[passband]\nlow_hz=3\nhigh_hz=20\nsource="s"\n'
     '[[limit]]\ncheck="sii"\npass_min=0.7\n', "'source' must be"),
])
def test_bad_profiles_are_refused_in_one_sentence(tmp_path, body, match):
    p = tmp_path / "bad.toml"
    p.write_text(body)
    with pytest.raises(ProfileError, match=match):
        load_profile(p)
    with pytest.raises(ProfileError, match="no profile"):
        load_profile("no-such-service")


def test_judge_bounds_are_inclusive():
    lim = Limit("snr_db", 25.0, None, 15.0, None, "common practice")
    assert [judge(v, lim) for v in (40.0, 25.0, 24.9, 15.0, 14.9)] == ["pass", "pass", "marginal", "marginal", "fail"]


def test_300_2700_chain_passes_ssb_voice(talker):
    # 300-2700 Hz is the usual amateur SSB audio band (common practice)
    r = _chain(talker, 300.0, 2700.0)
    vs = verdicts(r, load_profile("ssb-voice"))
    assert {v.check for v in vs} >= {"lower_edge_hz", "upper_edge_hz", "occupied_bandwidth_hz", "clip_events", "sii"}
    assert all(v.status == "pass" for v in vs), [(v.check, v.status, v.reason) for v in vs]


def test_100_5000_chain_fails_ssb_bandwidth_and_gets_a_low_pass(talker):
    # 2.8 kHz: 60 m channel width (47 CFR 97.303(h)); a 100-5000 Hz chain occupies far more
    r = _chain(talker, 100.0, 5000.0)
    prof = load_profile("ssb-voice")
    vs = {v.check: v for v in verdicts(r, prof)}
    assert vs["occupied_bandwidth_hz"].status == "fail"
    assert vs["occupied_bandwidth_hz"].value > 3000.0
    assert "wider than" in vs["occupied_bandwidth_hz"].reason
    search = search_cutoffs(r, prof, _psd(talker, 100.0, 5000.0))
    assert search.low_pass_hz <= prof.passband_high_hz
    recs = recommendations(r, prof, tuple(vs.values()), search)
    assert any(rec.code == "low_pass" and "Lower the low-pass" in rec.text for rec in recs)


def test_clipped_chain_gets_the_gain_advice(talker):
    x, fs = talker
    # 14 dB too hot into a stage clipping at -6 dBFS (the corpus's speech_high_clipped idea)
    y = np.clip(x * 10 ** (14 / 20), -0.5, 0.5)
    r = analyze_signal(y, fs)
    prof = load_profile("ssb-voice")
    vs = verdicts(r, prof)
    clip = next(v for v in vs if v.check == "clip_events")
    assert clip.status == "fail" and clip.value > 3
    recs = recommendations(r, prof, vs, search_cutoffs(r, prof, measure_recording(y, fs).spectrum))
    gain = recs[0]
    assert gain.code == "gain" and "down about" in gain.text and f"{r.clipping.event_count} clipping events" in gain.text
    # active level about -12 dBFS, clip at -6.02 dBFS, speech peaks 15 dB above the active level
    # (common practice) -> about 9 dB down
    down = int(gain.text.split("down about ")[1].split(" dB")[0])
    assert down == math.ceil(r.levels.active_level_dbfs + 15.0 - 20 * math.log10(r.clipping.clip_level))
    assert 5 <= down <= 12


def test_power_and_importance_fractions(talker):
    r = _chain(talker, 100.0, 5000.0)
    # fractions grow with frequency and stay in [0, 1]
    p = [power_fraction_below(r, f) for f in (100.0, 300.0, 1000.0, 30000.0)]
    assert p == sorted(p) and 0.0 <= p[0] and p[-1] == pytest.approx(1.0, abs=1e-9)
    # ANSI S3.5-1997 Table 3: bands up to 1 kHz carry about 38 % of the importance (computed from the table);
    # with everything audible the delivered share below 1122 Hz (upper limit of the 1 kHz band) is near it
    i = importance_fraction_below(r, 1122.0)
    assert 0.30 < i < 0.45


def _tilted(talker, slope_db_per_octave):
    """The talker through a 300-3000 Hz band-pass and an ideal slope re 1 kHz (FFT-domain, test signal)."""
    x, fs = talker
    sos = signal.butter(4, [300.0, 3000.0], btype="bandpass", fs=fs, output="sos")
    y = signal.sosfilt(sos, x)
    spec = np.fft.rfft(y)
    f = np.maximum(np.fft.rfftfreq(y.size, 1 / fs), 1.0)
    y = np.fft.irfft(spec * (f / 1000.0) ** (slope_db_per_octave / 6.0206), y.size)
    return analyze_signal(0.5 * y / np.max(np.abs(y)), fs)


def test_preemphasis_check_reads_the_chain_slope(talker):
    # TIA-603 transmit audio: 6 dB/octave pre-emphasis over 300-3000 Hz (from memory); flat audio reads about 0
    prof = load_profile("fm-voice-wide")
    emph = {v.check: v for v in verdicts(_tilted(talker, 6.0), prof)}["preemphasis_db_per_octave"]
    flat = {v.check: v for v in verdicts(_tilted(talker, 0.0), prof)}["preemphasis_db_per_octave"]
    assert emph.value == pytest.approx(6.0, abs=1.5) and emph.status == "pass"
    assert flat.value == pytest.approx(0.0, abs=1.5) and flat.status == "fail"


def test_a_failing_check_is_never_called_fine(talker):
    from voiceband.profiles.verdicts import Verdict

    r = _chain(talker, 300.0, 2700.0)
    prof = load_profile("ssb-voice")
    recs = recommendations(r, prof, (Verdict("sii", 0.3, "pass at least 0.75", "fail", "too low."),), None)
    assert [x.code for x in recs] == ["review"] and "too low" in recs[0].text
    assert recommendations(r, prof, (Verdict("sii", 0.9, "pass at least 0.75", "pass", "fine."),), None)[0].code == "none"


def test_an_uncertain_edge_that_decides_a_verdict_gets_the_sweep_advice(talker):
    # A 300-2700 Hz chain judged for SSB voice; its upper edge then made uncertain with a wide range
    # (as analyze reports a gentle roll-off) reaching into the profile's passing interval: the advice
    # is to measure the chain with a sweep, with the transmitting caution. When the verdict passes,
    # the edge is certain, or its whole range fails alike, no such advice.
    from dataclasses import replace

    from voiceband.profiles.verdicts import Verdict

    r = _chain(talker, 300.0, 2700.0)
    prof = load_profile("ssb-voice")
    e = r.spectrum.edges_hz
    unsure = replace(r, spectrum=replace(r.spectrum, edges_hz=replace(
        e, high_uncertain=True, high_range=(2400.0, 3900.0))))
    failing = (Verdict("upper_edge_hz", e.high, "pass 2700-3400 Hz", "fail", "too low."),)
    recs = recommendations(unsure, prof, failing, None)
    advice = [x for x in recs if x.code == "measure_edges"]
    assert len(advice) == 1
    assert "upper edge (2400–3900 Hz)" in advice[0].text and "voiceband response" in advice[0].text
    assert "dummy load" in advice[0].text and "licence" in advice[0].text
    passing = (Verdict("upper_edge_hz", e.high, "pass 2700-3400 Hz", "pass", "fine."),)
    assert not any(x.code == "measure_edges" for x in recommendations(unsure, prof, passing, None))
    certain = replace(r, spectrum=replace(r.spectrum, edges_hz=replace(e, high_uncertain=False)))
    assert not any(x.code == "measure_edges" for x in recommendations(certain, prof, failing, None))
    # a range wholly above the passing 2400-3600 Hz (the profile's own limits): the verdict stands either way
    beyond = replace(r, spectrum=replace(r.spectrum, edges_hz=replace(
        e, high_uncertain=True, high_range=(5000.0, 9000.0))))
    assert not any(x.code == "measure_edges" for x in recommendations(beyond, prof, failing, None))
