"""Talker F0 range: our YIN estimator and the bounded reservoir."""

from __future__ import annotations

import functools

import numpy as np
import pytest

from voiceband.errors import MeasurementError, SignalValueError
from voiceband.analysis import measure_recording
from voiceband.synth.noise import mains_hum
from voiceband.synth.speech import synthesize_speech
from voiceband.measurement.voice import VoiceReservoir, VoiceResult, _beta_cdf, _dip_probabilities, measure_voice, yin_f0


def harmonic_complex(rng, fs, f0_hz, *, amplitude=0.1, nharm=20):
    """Harmonics k * f0(t), amplitudes 1/k, random phases; ``f0_hz`` is an array per sample."""
    phase = 2 * np.pi * np.cumsum(f0_hz) / fs
    top = float(np.max(f0_hz))
    x = sum(np.sin(k * phase + rng.uniform(0, 2 * np.pi)) / k for k in range(1, nharm + 1) if k * top < 0.45 * fs)
    return amplitude * x


def glide(fs, seconds, f_start, f_end):
    """Exponential F0 glide; its median over time is sqrt(f_start * f_end) (analytic)."""
    t = np.arange(int(seconds * fs)) / fs
    return f_start * (f_end / f_start) ** (t / seconds)


@pytest.mark.parametrize("f0", [80.0, 150.0, 220.0, 380.0])
def test_yin_on_steady_harmonic_complex(rng, f0):
    # Known F0 (analytic): YIN with parabolic interpolation within 0.5 %.
    fs = 8000
    x = harmonic_complex(rng, fs, np.full(fs * 2, f0))
    est, level, start = yin_f0(x, fs)
    assert np.isfinite(est).mean() > 0.95
    assert np.nanmedian(est) == pytest.approx(f0, rel=0.005)
    assert start[1] - start[0] == pytest.approx(0.01)
    assert np.median(level) == pytest.approx(10 * np.log10(np.mean(x**2)), abs=0.5)


def test_yin_calls_white_noise_unvoiced(rng):
    est, _, _ = yin_f0(0.1 * rng.standard_normal(8000 * 2), 8000)
    assert np.isfinite(est).mean() < 0.05


@pytest.mark.parametrize("f_start, f_end", [(90.0, 250.0), (250.0, 90.0)])
def test_f0_range_of_glide_against_pyin(rng, f_start, f_end):
    # Reference: librosa.pyin (general-purpose reference library, test-only) on the same
    # harmonic complex with an F0 glide 90-250 Hz: median within 3 %, 5th/95th percentiles
    # within 5 %; the analytic median of an exponential glide is sqrt(90 * 250) = 150 Hz.
    import librosa  # test-only reference; kept out of module start-up

    fs = 8000
    f0 = glide(fs, 3.0, f_start, f_end)
    x = harmonic_complex(rng, fs, f0)
    ours = measure_voice(x, fs)
    ref, voiced, _ = librosa.pyin(x, fmin=60, fmax=400, sr=fs, frame_length=512, hop_length=80)
    ref = ref[voiced]
    assert isinstance(ours, VoiceResult)
    assert ours.f0_median_hz == pytest.approx(np.median(ref), rel=0.03)
    assert ours.f0_p5_hz == pytest.approx(np.percentile(ref, 5), rel=0.05)
    assert ours.f0_p95_hz == pytest.approx(np.percentile(ref, 95), rel=0.05)
    assert ours.f0_median_hz == pytest.approx(np.sqrt(f_start * f_end), rel=0.02)
    assert ours.voiced_frame_count > 200 and ours.analysed_s == pytest.approx(3.0)


def test_reservoir_is_bounded_and_spread_over_the_file(rng):
    # 4 minutes: first half F0 = 100 Hz, second half 200 Hz; a 10 s reservoir must hold
    # chunks from both halves (evenly spread), so p5 ~ 100 Hz and p95 ~ 200 Hz.
    fs = 8000
    half = fs * 120
    acc = VoiceReservoir(fs, capacity_s=10.0)
    for f0 in (100.0, 200.0):
        x = harmonic_complex(rng, fs, np.full(half, f0))
        for i in range(0, half, 50000):
            acc.update(x[i : i + 50000])
    res = acc.result()
    assert res.analysed_s <= 10.0
    assert res.f0_p5_hz == pytest.approx(100.0, rel=0.01)
    assert res.f0_p95_hz == pytest.approx(200.0, rel=0.01)


def test_reservoir_block_invariance_and_level_gate(rng):
    # Loud part (-20 dBFS class) at 110 Hz, quiet part 25 dB lower at 210 Hz: with the
    # speech threshold between them only the loud part counts.
    fs = 8000
    loud = harmonic_complex(rng, fs, np.full(fs * 4, 110.0), amplitude=0.1)
    quiet = harmonic_complex(rng, fs, np.full(fs * 4, 210.0), amplitude=0.1 * 10 ** (-25 / 20))
    x = np.concatenate((loud, quiet, loud))
    whole = VoiceReservoir(fs)
    whole.update(x)
    pieces = VoiceReservoir(fs)
    for i in range(0, x.size, 777):
        pieces.update(x[i : i + 777])
    assert pieces.result() == whole.result()
    both = whole.result()
    assert both.f0_p95_hz == pytest.approx(210.0, rel=0.01)
    gate = 10 * np.log10(np.mean(loud**2)) - 12.0
    gated = whole.result(min_level_dbfs=gate)
    assert gated.f0_p95_hz == pytest.approx(110.0, rel=0.01)
    assert gated.analysed_s == pytest.approx(8.0)


def test_spectral_accumulator_reports_voice_range(rng):
    # Syllable-like bursts with F0 drawn from 100-180 Hz, in quiet noise: the F0 range
    # found through the full accumulator lies inside the synthetic range.
    fs = 8000
    n = fs * 12
    t = np.arange(n) / fs
    f0 = 140.0 + 40.0 * np.sin(2 * np.pi * 0.37 * t)
    gate = ((t % 0.6) < 0.35).astype(float)
    x = harmonic_complex(rng, fs, f0) * gate + 1e-4 * rng.standard_normal(n)
    voice = measure_recording(x, fs).voice
    assert 95.0 < voice.f0_p5_hz < voice.f0_median_hz < voice.f0_p95_hz < 185.0


def test_no_f0_when_nothing_is_voiced(rng):
    fs = 8000
    assert measure_voice(0.1 * rng.standard_normal(fs * 3), fs).f0_median_hz is None
    short = measure_voice(np.zeros(100), fs)
    assert short == VoiceResult(None, None, None, 0, 0.0)


def test_voice_bad_input():
    with pytest.raises(MeasurementError, match="fmin_hz < fmax_hz"):
        yin_f0(np.zeros(8000), 8000, fmin_hz=300.0, fmax_hz=100.0)
    with pytest.raises(SignalValueError, match="one channel"):
        yin_f0(np.zeros((10, 10)), 8000)
    with pytest.raises(MeasurementError, match="capacity_s >= chunk_s"):
        VoiceReservoir(8000, capacity_s=0.1, chunk_s=0.5)
    with pytest.raises(SignalValueError, match="one channel"):
        VoiceReservoir(8000).update(np.zeros((3, 3)))


def test_yin_reads_strided_input_as_its_samples(rng):
    # A strided view (every 2nd sample of a 16 kHz signal) must give the same result as a
    # contiguous copy of the same samples (analytic: same input, same output).  Reading it
    # as contiguous memory is what broke F0 on every decimated reservoir chunk.
    x = harmonic_complex(rng, 16000, np.full(16000 * 2, 150.0))
    view = x[::2]
    assert not view.flags["C_CONTIGUOUS"]
    a, _, _ = yin_f0(view, 8000)
    b, _, _ = yin_f0(np.ascontiguousarray(view), 8000)
    np.testing.assert_array_equal(a, b)
    assert np.nanmedian(a) == pytest.approx(150.0, rel=0.005)


def test_beta_prior_cdf_against_scipy():
    # Reference: scipy.stats.beta (general-purpose reference library, test-only); the
    # closed form is for pYIN's Beta(2, 18) threshold prior.
    from scipy.stats import beta

    x = np.linspace(0.0, 1.0, 101)
    np.testing.assert_allclose(_beta_cdf(x), beta.cdf(x, 2, 18), atol=1e-12)


def _dips_frame(heights_at_lags, length=120):
    """A CMND row that is 1 everywhere except V-shaped dips of given depth at given lags."""
    row = np.ones(length)
    for lag, h in heights_at_lags.items():
        row[lag - 3 : lag + 4] = np.minimum(row[lag - 3 : lag + 4], h + 0.1 * np.abs(np.arange(-3, 4)))
    return row[None, :]


def test_dip_probabilities_one_dip():
    # pYIN (Mauch & Dixon 2014), analytic for a single dip of height h: every threshold
    # above h picks it, and 1 % of the mass below it also goes to it (the lowest dip):
    # P = (1 - F(h)) + 0.01 F(h), F the Beta(2, 18) CDF (scipy.stats reference).
    from scipy.stats import beta

    h = 0.08
    period, prob = _dip_probabilities(_dips_frame({50: h}), 20)
    k = int(np.argmax(prob[0]))
    assert period[0, k] == pytest.approx(50.0, abs=1e-9)
    f = beta.cdf(h, 2, 18)
    assert prob[0, k] == pytest.approx((1.0 - f) + 0.01 * f, rel=1e-9)
    assert prob[0].sum() == pytest.approx(prob[0, k])


def test_dip_probabilities_two_dips_boltzmann_split():
    # Two dips of equal height h (lags 40 and 80): thresholds above h see both and split
    # by the Boltzmann prior over their order, weights 1 and exp(-c) (c = 1 here); the
    # lowest-dip share (1 % of F(h)) goes to the first.  Analytic from the pYIN definition.
    from scipy.stats import beta

    from voiceband.measurement.voice import _BOLTZMANN

    h = 0.12
    period, prob = _dip_probabilities(_dips_frame({40: h, 80: h}), 20)
    by_lag = {round(float(t)): float(p) for t, p in zip(period[0], prob[0]) if p > 0}
    f = beta.cdf(h, 2, 18)
    w = np.exp(-_BOLTZMANN)
    assert by_lag[40] == pytest.approx((1.0 - f) / (1.0 + w) + 0.01 * f, rel=1e-9)
    assert by_lag[80] == pytest.approx((1.0 - f) * w / (1.0 + w), rel=1e-9)


# --- running speech with transmit-chain impairments, against librosa.pyin -----------------

FS = 16000
SECONDS = 6.0
#: Synthetic talkers (voice, effort, seed): F0 about 100, 150, 220 Hz and a shouted voice.
TALKERS = [("low", "normal", 1), ("medium", "normal", 102), ("high", "normal", 203), ("medium", "shout", 304)]


@functools.lru_cache(maxsize=None)
def talker(voice, effort, seed):
    """Clean synthetic speech and its pyin reference (median, 5th, 95th percentile, Hz).

    Reference: librosa.pyin (general-purpose reference library, test-only) on the clean
    speech, 50-500 Hz, 64 ms frames, 10 ms hop.  Its voiced frames more than 40 dB below
    the loudest frame are left out: pyin calls the synthesizer's near-silent lead-in and
    decays voiced, which is not talker F0 (speech spans well under 40 dB; common practice).
    """
    import librosa  # test-only reference; kept out of module start-up

    x = synthesize_speech(SECONDS, FS, voice=voice, effort=effort, seed=seed)
    f0, voiced, _ = librosa.pyin(x, fmin=50, fmax=500, sr=FS, frame_length=1024, hop_length=160)
    frames = np.lib.stride_tricks.sliding_window_view(np.pad(x, 512), 1024)[::160][: f0.size]
    level_db = 10 * np.log10(np.mean(frames**2, axis=1) + 1e-30)
    ref = f0[voiced & (level_db >= level_db.max() - 40.0)]
    return x, tuple(float(v) for v in np.percentile(ref, [50.0, 5.0, 95.0]))


def band_pass(x, fs):
    """300-2700 Hz, 4th-order Butterworth, zero phase (a communications voice channel)."""
    from scipy.signal import butter, sosfiltfilt  # test-only

    return sosfiltfilt(butter(4, [300.0, 2700.0], "bandpass", fs=fs, output="sos"), x)


def impaired(x, kind, seed):
    """The clean speech (P.56 active level -26 dBFS) through one impairment.

    hum50: 50 Hz hum at -40 dBFS with harmonics 2-5 at -3/-10/-16/-20 dB (the synth's
    default pattern) plus a -100 dBFS floor; hum60: 60 Hz hum at -50 dBFS alone in the
    pauses (its weaker harmonics do not stand out beside the speech); bp_snr15: 300-2700 Hz band-pass and white
    noise 15 dB below the active level; all: hum, then band-pass, then the noise;
    clip: 12 dB of gain into a -20 dBFS clipper; hum60heavy: 60 Hz hum at -32 dBFS, only
    6 dB below the speech.
    """
    r = np.random.default_rng(seed)
    n = x.size
    noise = 10 ** (-41 / 20) * r.standard_normal(n)
    if kind == "hum50":
        return x + mains_hum(SECONDS, FS, mains_hz=50.0, level_dbfs=-40.0, seed=seed) + 1e-3 * noise
    if kind == "bp_snr15":
        return band_pass(x, FS) + noise
    if kind == "all":
        return band_pass(x + mains_hum(SECONDS, FS, mains_hz=50.0, level_dbfs=-40.0, seed=seed), FS) + noise
    if kind == "clip":
        return np.clip(4.0 * x, -0.1, 0.1)
    if kind == "hum60":
        return x + mains_hum(SECONDS, FS, mains_hz=60.0, level_dbfs=-50.0, seed=seed)
    if kind == "hum60heavy":
        return x + mains_hum(SECONDS, FS, mains_hz=60.0, level_dbfs=-32.0, seed=seed) + 0.03 * noise
    raise AssertionError(kind)


@pytest.mark.parametrize("talker_args", TALKERS, ids=["-".join(map(str, t)) for t in TALKERS])
@pytest.mark.parametrize("kind", ["hum50", "hum60", "bp_snr15", "all", "clip", "hum60heavy"])
def test_speech_f0_against_pyin_on_clean_speech(talker_args, kind):
    # The talker's F0 measured through hum, band-limiting with the fundamental removed,
    # noise and clipping agrees with librosa.pyin on the clean speech: median within 5 %,
    # 5th and 95th percentiles within 15 % (pyin's own spread between renditions of the
    # same talker is a few %).
    x, (ref50, ref5, ref95) = talker(*talker_args)
    res = measure_voice(impaired(x, kind, talker_args[2]), FS)
    assert res.f0_median_hz == pytest.approx(ref50, rel=0.05)
    assert res.f0_p5_hz == pytest.approx(ref5, rel=0.15)
    assert res.f0_p95_hz == pytest.approx(ref95, rel=0.15)
    assert res.voiced_frame_count >= 100


@pytest.mark.parametrize("talker_args", TALKERS[:3], ids=["low", "medium", "high"])
def test_analyze_path_gates_pauses_but_keeps_weak_voicing(talker_args):
    # Through the spectral accumulator the speech threshold from voiceband.measurement.activity gates
    # the frames; the median still agrees with pyin on the clean speech within 5 %.
    x, (ref50, _, _) = talker(*talker_args)
    voice = measure_recording(impaired(x, "all", talker_args[2]), FS).voice
    assert voice.f0_median_hz == pytest.approx(ref50, rel=0.05)


@pytest.mark.parametrize("mains_hz", [50.0, 60.0, 50.1])
def test_mains_hum_alone_is_not_a_voice(mains_hz):
    # Hum with harmonics (-30 dBFS fundamental) over a -60 dBFS noise floor and no speech:
    # strictly periodic, so plain YIN takes it for F0; it must not be reported as a talker
    # F0 (common practice: hum is not voice).  50.1 Hz: mains off nominal.
    fs = 48000
    x = mains_hum(10.0, fs, mains_hz=mains_hz, level_dbfs=-30.0, seed=5)
    x = x + 10 ** (-60 / 20) * np.random.default_rng(5).standard_normal(x.size)
    f0, _, _ = yin_f0(x[::6], fs / 6)
    assert np.isfinite(f0).mean() > 0.9  # the plain estimator is fooled
    res = measure_voice(x, fs)
    assert res.f0_median_hz is None


@pytest.mark.parametrize("fs", [8000, 44100, 96000])
def test_f0_does_not_depend_on_sample_rate(fs):
    # The same talker rendered at 8, 44.1 and 96 kHz: median within 5 % of pyin on the
    # 16 kHz rendition (same seed, same pitch contour), and within 2 % of ours at 16 kHz.
    _, (ref50, _, _) = talker("medium", "shout", 304)
    ours16 = measure_voice(talker("medium", "shout", 304)[0], FS).f0_median_hz
    x = synthesize_speech(SECONDS, fs, voice="medium", effort="shout", seed=304)
    res = measure_voice(x, fs)
    assert res.f0_median_hz == pytest.approx(ref50, rel=0.05)
    assert res.f0_median_hz == pytest.approx(ours16, rel=0.02)

