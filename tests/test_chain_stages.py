"""Every chain stage kind against something outside the project (source named beside each check)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from voiceband.chain import (
    RC,
    SSB,
    Chain,
    Channel,
    Clipper,
    Compressor,
    Emphasis,
    Filter,
    Gain,
    Microphone,
    apply_response,
    chain_from_dict,
    sideband_suppression_db,
)
from voiceband.errors import SignalValueError

FS = 48000


@pytest.fixture(scope="module")
def speech_24k():
    from voiceband.design.compare import default_speech

    return default_speech()


def _db(h):
    with np.errstate(divide="ignore"):
        return 20.0 * np.log10(np.abs(h))


# --------------------------------------------------------------------------- LC ladder


def _butterworth_g(n: int) -> np.ndarray:
    # g_k = 2 sin((2k - 1) pi / 2n): doubly terminated Butterworth prototype (qucs-s "Lowpass Prototype
    # Coefficients"; rfcafe.com Butterworth prototype table)
    k = np.arange(1, n + 1)
    return 2.0 * np.sin((2 * k - 1) * np.pi / (2 * n))


def test_butterworth_element_values_match_the_handbook_example():
    # L = g R / (2 pi fc), C = g / (2 pi fc R): n = 5, 600 ohm, 3 kHz -> C1 = 54.65 nF, L2 = 51.50 mH,
    # C3 = 176.84 nF (filter-design handbook de-normalisation; values computed)
    g = _butterworth_g(5)
    w = 2 * np.pi * 3000.0
    assert g[0] / (w * 600.0) * 1e9 == pytest.approx(54.65, abs=0.01)
    assert g[1] * 600.0 / w * 1e3 == pytest.approx(51.50, abs=0.01)
    assert g[2] / (w * 600.0) * 1e9 == pytest.approx(176.84, abs=0.01)


@pytest.fixture(scope="module")
def handbook_ladder():
    # the 5-pole ladder entered as the parts a builder has (the values computed above)
    return chain_from_dict({"name": "ladder", "stage": [{
        "kind": "ladder", "source_ohm": 600, "load_ohm": "600", "first": "shunt",
        "elements": ["54.65n", "51.50m", "176.84n", "51.50m", "54.65n"]}]})


def test_ladder_flat_loss_of_equal_terminations(handbook_ladder):
    # a matched source and load halve the EMF: 20 log10(1/2) = -6.02 dB in the passband (circuit theory)
    assert _db(handbook_ladder.response([10.0, 100.0]))[0] == pytest.approx(-6.0206, abs=0.005)


def test_ladder_minus_3db_at_cutoff_and_30db_more_loss_an_octave_up(handbook_ladder):
    # |H|^2 = 1/(1 + (f/fc)^10): -3.01 dB at fc, 30.11 dB at 2 fc (Butterworth magnitude, computed)
    h = _db(handbook_ladder.response([10.0, 3000.0, 6000.0]))
    assert h[1] - h[0] == pytest.approx(-3.01, abs=0.02)
    assert h[0] - h[2] == pytest.approx(30.1, abs=0.05)


def test_ladder_matches_the_butterworth_magnitude_everywhere(handbook_ladder):
    # the whole curve against scipy.signal.butter(5, analog) (a general-purpose reference library); the
    # 0.01 % rounding of the handbook part values allows a few hundredths of a dB
    f = np.geomspace(100.0, 20000.0, 200)
    b, a = signal.butter(5, 2 * np.pi * 3000.0, analog=True)
    _, ref = signal.freqs(b, a, worN=2 * np.pi * f)
    ladder = _db(handbook_ladder.response(f)) + 6.0206
    keep = _db(ref) > -80
    assert np.max(np.abs(ladder[keep] - _db(ref)[keep])) < 0.05


def test_ladder_series_first_and_high_pass_parts():
    # dual ladder (series L first) has the same response (network duality; Zverev, Handbook of Filter
    # Synthesis, 1967, from memory); a high-pass from a series C and shunt L is the RC-like
    # 1/(1 + (fc/f)^2) second-order Butterworth for g = sqrt(2) parts (Butterworth magnitude, n = 2)
    g = _butterworth_g(3)
    w, r = 2 * np.pi * 1000.0, 600.0
    dual = chain_from_dict({"name": "d", "stage": [{
        "kind": "ladder", "source_ohm": r, "load_ohm": r, "first": "series",
        "elements": [g[0] * r / w, g[1] / (w * r), g[2] * r / w]}]})
    h = _db(dual.response([10.0, 1000.0, 2000.0]))
    assert h[1] - h[0] == pytest.approx(-3.01, abs=0.01)
    assert h[0] - h[2] == pytest.approx(18.13, abs=0.01)  # computed: 10 log10(1 + 2^6), n = 3 at 2 fc
    # high-pass: series C = 1/(g1 w R), shunt L = R/(g2 w) (low-pass to high-pass transformation)
    g2 = _butterworth_g(2)
    hp = chain_from_dict({"name": "h", "stage": [{
        "kind": "ladder", "source_ohm": r, "load_ohm": r, "first": "series",
        "elements": [{"c": 1.0 / (g2[0] * w * r)}, {"l": f"{r / (g2[1] * w)}H"}]}]})
    h = _db(hp.response([500.0, 1000.0, 100000.0]))
    assert h[1] - h[2] == pytest.approx(-3.01, abs=0.01)
    assert h[2] - h[0] == pytest.approx(12.30, abs=0.01)  # computed: 10 log10(1 + 2^4), n = 2 an octave away


def test_ladder_resonators_make_a_notch_and_a_band_pass():
    # a series LC resonator in a shunt arm shorts the line at f0 = 1/(2 pi sqrt(LC)) (Thomson's formula);
    # in a series arm it passes only around f0 (circuit theory)
    l, c = 0.1, 1.0 / ((2 * np.pi * 1000.0) ** 2 * 0.1)
    notch = chain_from_dict({"name": "n", "stage": [{
        "kind": "ladder", "source_ohm": 600, "load_ohm": 600, "first": "shunt",
        "elements": [{"l": l, "c": c, "arrangement": "series"}]}]})
    h = _db(notch.response([100.0, 1000.0, 10000.0]))
    assert h[1] < -100 and h[0] > -6.5 and h[2] > -6.5
    band = chain_from_dict({"name": "b", "stage": [{
        "kind": "ladder", "source_ohm": 600, "load_ohm": 600, "first": "series",
        "elements": [{"l": l, "c": c, "arrangement": "series"}]}]})
    h = _db(band.response([100.0, 1000.0, 10000.0]))
    assert h[1] == pytest.approx(-6.0206, abs=1e-6) and h[0] < -20 and h[2] < -20
    # parallel LC in a series arm: a trap (infinite impedance at f0)
    trap = chain_from_dict({"name": "t", "stage": [{
        "kind": "ladder", "source_ohm": 600, "load_ohm": 600, "first": "series",
        "elements": [{"l": l, "c": c, "arrangement": "parallel"}]}]})
    assert _db(trap.response([1000.0]))[0] < -100


# --------------------------------------------------------------------------- gain


def test_non_inverting_stage_22k_1k():
    # G = 1 + Rf/Rg = 23 -> 27.23 dB (textbook op-amp formula; from memory)
    g = Gain.from_resistors(22e3, 1e3)
    assert g.gain == 23.0
    assert g.gain_db == pytest.approx(27.23, abs=0.005)
    assert np.abs(g.response([1000.0])[0]) == pytest.approx(23.0)


def test_inverting_stage_and_gbw_rolloff():
    # inverting -Rf/Rg (180 degrees); single-pole op-amp: closed-loop -3 dB at GBW / noise gain
    # (textbook single-pole model; from memory)
    inv = Gain.from_resistors(100e3, 10e3, inverting=True)
    assert inv.gain == -10.0
    assert np.degrees(np.angle(inv.response([100.0])[0])) == pytest.approx(180.0)
    g = Gain.from_resistors(22e3, 1e3, gbw_hz=1e6)
    fc = 1e6 / 23.0
    assert _db(g.response([fc]))[0] - g.gain_db == pytest.approx(-3.0103, abs=1e-3)
    flat = Gain.from_db(-6.0206)
    assert flat.process(np.array([1.0, -0.5]), FS) == pytest.approx([0.5, -0.25], abs=1e-4)


# --------------------------------------------------------------------------- prototypes vs scipy.signal.freqs


_DESIGNS = [
    ("butterworth", {}, lambda n, wn, bt: signal.butter(n, wn, bt, analog=True)),
    ("chebyshev1", {"ripple_db": 0.5}, lambda n, wn, bt: signal.cheby1(n, 0.5, wn, bt, analog=True)),
    ("bessel", {}, lambda n, wn, bt: signal.bessel(n, wn, bt, analog=True, norm="mag")),
    ("elliptic", {"ripple_db": 0.5, "stop_db": 50.0}, lambda n, wn, bt: signal.ellip(n, 0.5, 50.0, wn, bt, analog=True)),
]


@pytest.mark.parametrize("type_, extra, design", _DESIGNS, ids=[d[0] for d in _DESIGNS])
@pytest.mark.parametrize("kind", ["highpass", "lowpass", "bandpass"])
def test_prototype_responses_agree_with_scipy_freqs(type_, extra, design, kind):
    # scipy.signal.freqs on the transfer-function (b, a) design: the reference library, to 0.01 dB
    f = np.geomspace(20.0, 20000.0, 400)
    if kind == "bandpass":
        stage = Filter(kind=kind, type=type_, order=4, low_hz=300.0, high_hz=2700.0, **extra)
        b, a = design(4, [2 * np.pi * 300.0, 2 * np.pi * 2700.0], kind)
    else:
        fc = 300.0 if kind == "highpass" else 2700.0
        stage = Filter(kind=kind, type=type_, order=5, cutoff_hz=fc, **extra)
        b, a = design(5, 2 * np.pi * fc, kind)
    _, ref = signal.freqs(b, a, worN=2 * np.pi * f)
    ours, theirs = _db(stage.response(f)), _db(ref)
    keep = theirs > -100.0  # far stopband of the transfer-function form is round-off
    assert np.max(np.abs(ours[keep] - theirs[keep])) < 0.01


def test_filter_audio_follows_the_design_edges():
    # the digital filter is scipy's bilinear design with pre-warped cutoffs: -3.01 dB at the cutoff
    # (Butterworth definition; scipy.signal.butter with fs)
    stage = Filter(kind="lowpass", type="butterworth", order=4, cutoff_hz=2700.0)
    t = np.arange(FS) / FS
    x = np.sin(2 * np.pi * 2700.0 * t)
    y = stage.process(x, FS)
    gain = 20 * np.log10(np.std(y[FS // 2:]) / np.std(x[FS // 2:]))
    assert gain == pytest.approx(-3.01, abs=0.02)


# --------------------------------------------------------------------------- RC, emphasis, microphone


def test_rc_corner_frequencies():
    # f_c = 1/(2 pi R C): 10 uF into 10 kohm -> 1.6 Hz, 1 uF into 10 kohm -> 15.9 Hz (computed)
    assert RC(mode="highpass", r_ohm=10e3, c_farad=10e-6).corner_hz == pytest.approx(1.59, abs=0.01)
    rc = RC(mode="highpass", r_ohm=10e3, c_farad=1e-6)
    assert rc.corner_hz == pytest.approx(15.9, abs=0.05)
    # first-order: -3.01 dB at f_c, 6.02 dB/octave well below it (first-order RC, textbook)
    h = _db(rc.response([rc.corner_hz, 0.1, 0.2]))
    assert h[0] == pytest.approx(-3.0103, abs=1e-4)
    assert h[2] - h[1] == pytest.approx(6.02, abs=0.01)
    lp = RC(mode="lowpass", r_ohm=10e3, c_farad=1e-9)
    assert _db(lp.response([lp.corner_hz]))[0] == pytest.approx(-3.0103, abs=1e-4)


def test_pre_emphasis_750us_against_the_ideal_6db_per_octave_line():
    # 750 us pre-emphasis re 1 kHz: 300 Hz at -8.89 dB, 1.57 dB above the ideal 6 dB/octave line (-10.46);
    # computed from |1 + j 2 pi f tau|; the 750 us network is the land-mobile FM practice (from memory)
    e = Emphasis(mode="pre", tau_us=750.0)
    h = _db(e.response([300.0, 1000.0]))
    assert h[0] - h[1] == pytest.approx(-8.89, abs=0.005)
    assert (h[0] - h[1]) - 20 * np.log10(300.0 / 1000.0) == pytest.approx(1.57, abs=0.005)
    de = Emphasis(mode="de", tau_us=750.0)
    assert np.abs(e.response([1234.0]) * de.response([1234.0]))[0] == pytest.approx(1.0)
    # 75 us: corner 2122 Hz (1 / (2 pi tau), computed; 75 us is FM broadcast practice, from memory)
    assert Emphasis(tau_us=75.0).corner_hz == pytest.approx(2122.07, abs=0.01)


def test_microphone_models_closed_forms():
    # presence: analog peaking prototype, |H(j w0)| = A^2 = 10^(rise/20) at the centre, 1 far away
    # (R. Bristow-Johnson, "Cookbook formulae for audio EQ biquad filter coefficients", from memory)
    m = Microphone(model="presence", rise_db=5.0, centre_hz=3000.0, q=1.0)
    h = _db(m.response([3000.0, 10.0, 1e6]))
    assert h[0] == pytest.approx(5.0, abs=1e-9)
    assert abs(h[1]) < 0.01 and abs(h[2]) < 0.01
    # proximity: (s + wz)/(s + wz/g): DC gain g, HF gain 1, and at wz the rise is
    # 10 log10((1 + 1) / (1 + 1/g^2)) dB (derived: |j wz + wz|^2 / |j wz + wz/g|^2)
    p = Microphone(model="proximity", boost_db=9.0, below_hz=400.0)
    g = 10 ** (9.0 / 20)
    h = _db(p.response([0.0, 400.0, 1e6]))
    assert h[0] == pytest.approx(9.0, abs=1e-9)
    assert h[1] == pytest.approx(10 * np.log10(2.0 / (1.0 + 1.0 / g**2)), abs=1e-9)
    assert abs(h[2]) < 0.01
    assert np.all(Microphone().response([50.0, 5000.0]) == 1.0)


@pytest.mark.parametrize("stage", [
    RC(mode="highpass", r_ohm=22e3, c_farad=22e-9),
    Emphasis(mode="pre", tau_us=750.0),
    Microphone(model="presence", rise_db=6.0, centre_hz=2500.0),
    Gain.from_resistors(22e3, 1e3, gbw_hz=100e3),
], ids=["rc", "emphasis", "microphone", "gain-gbw"])
def test_audio_through_a_linear_stage_matches_its_response(stage):
    # a steady tone comes out with |H| and angle(H) of the analog response (definition of the frequency
    # response of an LTI system)
    t = np.arange(FS) / FS
    for f0 in (250.0, 1000.0, 3150.0):
        x = np.cos(2 * np.pi * f0 * t)
        y = stage.process(x, FS)
        seg = slice(FS // 4, 3 * FS // 4)
        ref = stage.response([f0])[0]
        z = np.sum(y[seg] * np.exp(-2j * np.pi * f0 * t[seg])) / np.sum(x[seg] * np.exp(-2j * np.pi * f0 * t[seg]))
        assert _db(z) == pytest.approx(_db(ref), abs=0.01)
        assert np.angle(z / ref) == pytest.approx(0.0, abs=0.002)


def test_apply_response_equals_scipy_lsim_for_an_rc():
    # the FFT-sampled FIR against scipy.signal.lsim of the same first-order system (reference solver)
    rc = RC(mode="lowpass", r_ohm=1e3, c_farad=100e-9)  # 1592 Hz
    rng = np.random.default_rng(3)
    x = rng.standard_normal(4800)
    t = np.arange(x.size) / FS
    tau = 1e3 * 100e-9
    _, ref, _ = signal.lsim(([1.0], [tau, 1.0]), x, t, interp=True)
    y = apply_response(x, FS, rc.response)
    # the band-limited (FIR) version differs from the continuous-time linear-interpolation one above a few kHz
    lo = signal.sosfilt(signal.butter(8, 4000, fs=FS, output="sos"), np.vstack([y, ref]), axis=1)
    assert np.max(np.abs(lo[0, 500:] - lo[1, 500:])) < 0.02 * np.max(np.abs(lo[1]))


# --------------------------------------------------------------------------- clipper, compressor


def test_hard_clipped_sine_crest_factor_closed_form():
    # A sine of amplitude 1 clipped at c = sin(theta): over a quarter period the mean square is
    #   (2/pi) [ integral_0^theta sin^2 t dt + c^2 (pi/2 - theta) ]
    #   = (2/pi) [ theta/2 - sin(2 theta)/4 + c^2 (pi/2 - theta) ].
    # For c = 1/2 (theta = pi/6): (2/pi)(pi/12 - sqrt(3)/8 + pi/12) = 0.195501, RMS 0.44215, so the crest
    # factor c / RMS is 20 log10(0.5 / 0.44215) = 1.068 dB (against 3.01 dB for the unclipped sine).
    theta = math.pi / 6
    ms = (2 / math.pi) * (theta / 2 - math.sin(2 * theta) / 4 + 0.25 * (math.pi / 2 - theta))
    expected = 20 * math.log10(0.5 / math.sqrt(ms))
    assert expected == pytest.approx(1.068, abs=0.001)
    t = np.arange(FS) / FS
    x = np.sin(2 * np.pi * 100.0 * t)  # whole periods
    y = Clipper(mode="hard", level_db=20 * math.log10(2.0)).process(x, FS)
    crest = 20 * np.log10(np.max(np.abs(y)) / np.sqrt(np.mean(y * y)))
    assert crest == pytest.approx(expected, abs=0.005)
    # and it spends 1 - (2/pi) arcsin(0.5) = 66.7 % of the time at the clip level (analytic);
    # 480 samples a period put up to 4 boundary samples (0.8 %) on either side of the count
    assert np.mean(np.abs(y) >= 0.5 - 1e-12) == pytest.approx(0.667, abs=0.008)


def test_soft_clipper_is_tanh_of_the_level():
    x = np.linspace(-1.0, 1.0, 101)
    y = Clipper(mode="soft", level_db=6.0).process(x, FS)
    c = 10 ** (-6.0 / 20)
    assert y == pytest.approx(c * np.tanh(x / c))


def test_clipping_speech_12db_raises_its_average_to_peak_ratio_by_several_db(speech_24k):
    # 24 dB of clipping gives about 12 dB more average power at the same peak (Wathen-Dunn & Lipke,
    # JASA 30(1), 1958); the gain cannot exceed the clipping depth (same source)
    x, fs = speech_24k
    y = Clipper(mode="hard", level_db=12.0).process(x, fs)

    def avg_to_peak(v):
        return 10 * np.log10(np.mean(v * v) / np.max(np.abs(v)) ** 2)

    rise = avg_to_peak(y) - avg_to_peak(x)
    assert 4.0 < rise < 12.0


def test_compressor_static_curve_and_attack_time():
    # static curve above threshold T: output level T + (L - T)/R, i.e. gain -(L - T)(1 - 1/R) dB;
    # the branching one-pole smoother reaches 1 - 1/e of a step in the attack time (Giannoulis, Massberg
    # & Reiss, JAES 60(6), 2012, from memory)
    fs = FS
    t = np.arange(2 * fs) / fs
    tone = np.sin(2 * np.pi * 1000.0 * t)
    x = np.where(t < 1.0, 10 ** (-30 / 20), 1.0) * tone  # -30 dB re peak, then 0 dB re peak
    comp = Compressor(threshold_db=-20.0, ratio=4.0, attack_ms=10.0, release_ms=200.0)
    times, g = comp.gain_db(x, fs)
    assert np.max(np.abs(g[times < 0.99])) < 1e-9  # below threshold: untouched
    steady = -(0.0 - (-20.0)) * (1 - 1 / 4.0)  # -15 dB
    assert g[np.searchsorted(times, 1.9)] == pytest.approx(steady, abs=0.01)
    after = times > 1.0
    reach = times[after][np.argmax(g[after] <= steady * (1 - math.exp(-1)))] - 1.0
    assert reach == pytest.approx(0.010, abs=0.0015)
    y = comp.process(x, fs)
    out = 20 * np.log10(np.max(np.abs(y[int(1.8 * fs):int(1.9 * fs)])))
    assert out == pytest.approx(-20.0 + 20.0 / 4.0, abs=0.1)


# --------------------------------------------------------------------------- SSB


@pytest.mark.parametrize("phase_deg, amp_db, expected", [
    (1.0, 0.0, 41.2),   # computed: 10 log10 cot^2(0.5 deg)
    (0.0, 0.5, 30.8),   # computed: 10 log10 ((1 + a)/(1 - a))^2, a = 10^(0.5/20)
    (1.0, 0.1, 39.6),   # computed from the formula below
])
def test_phasing_suppression_formula_and_measured_from_audio(phase_deg, amp_db, expected):
    # R = (1 + 2a cos(phi) + a^2) / (1 - 2a cos(phi) + a^2): image rejection of a quadrature modulator
    # with gain ratio a and phase error phi (open IQ-imbalance derivations; analytic, see SSB docstring)
    assert sideband_suppression_db(phase_deg, amp_db) == pytest.approx(expected, abs=0.05)
    stage = SSB(method="phasing", phase_error_deg=phase_deg, amplitude_error_db=amp_db)
    # measured: tones through the simulated generator, wanted (+f) over unwanted (-f) line power
    n = FS
    t = np.arange(n) / FS
    for f0 in (400.0, 1000.0, 2500.0):
        z = stage.baseband(np.cos(2 * np.pi * f0 * t), FS)
        spec = np.abs(np.fft.fft(z)) ** 2
        k = int(round(f0 * n / FS))
        measured = 10 * np.log10(spec[k] / spec[-k])
        assert measured == pytest.approx(expected, abs=0.05)
    assert stage.sideband_suppression_db([500.0, 2000.0]) == pytest.approx([expected] * 2, abs=0.05)


def test_ideal_phasing_is_single_sideband_and_passes_the_audio():
    stage = SSB(method="phasing")
    t = np.arange(FS) / FS
    x = np.cos(2 * np.pi * 1000.0 * t) + 0.5 * np.cos(2 * np.pi * 1700.0 * t)
    z = stage.baseband(x, FS)
    spec = np.abs(np.fft.fft(z)) ** 2
    assert np.sum(spec[FS // 2:]) < 1e-20 * np.sum(spec[:FS // 2])  # nothing at negative frequencies
    assert stage.process(x, FS) == pytest.approx(x, abs=1e-9)
    # envelope of an equal two-tone SSB signal: PEP = 2 x average power, 3.01 dB (analytic)
    z2 = stage.baseband(np.cos(2 * np.pi * 1000.0 * t) + np.cos(2 * np.pi * 1700.0 * t), FS)
    assert 10 * np.log10(np.max(np.abs(z2) ** 2) / np.mean(np.abs(z2) ** 2)) == pytest.approx(3.01, abs=0.01)


def test_filter_method_suppression_is_the_sideband_filter_skirt():
    # Butterworth sideband filter 300-2700 Hz = low-pass prototype of cutoff 1200 Hz centred on 1500 Hz:
    # the unwanted sideband at -f sits (f + 1500) Hz from the centre, so its loss re the wanted one is
    # 10 log10(1 + ((f + 1500)/1200)^2n) - 10 log10(1 + ((f - 1500)/1200)^2n)  (|H|^2 of Butterworth)
    stage = SSB(method="filter", low_hz=300.0, high_hz=2700.0, type="butterworth", order=8)
    f = np.array([300.0, 1000.0, 2000.0])

    def loss(d):
        return 10 * np.log10(1 + (d / 1200.0) ** 16)

    expected = loss(f + 1500.0) - loss(f - 1500.0)
    assert stage.sideband_suppression_db(f) == pytest.approx(expected, abs=1e-6)
    # and measured from the simulated audio
    t = np.arange(FS) / FS
    z = stage.baseband(np.cos(2 * np.pi * 1000.0 * t), FS)
    spec = np.abs(np.fft.fft(z)) ** 2
    assert 10 * np.log10(spec[1000] / spec[-1000]) == pytest.approx(expected[1], abs=0.05)


# --------------------------------------------------------------------------- channel


def test_channel_noise_sits_in_the_receive_passband_at_the_stated_snr(speech_24k):
    # channel SNR = speech power / noise power inside the receive passband (definition of
    # voiceband.intelligibility.channel, ANSI S3.5 clause 4 SII inputs); the SII computed from the noisy
    # audio's measured band levels agrees with the engine's model within 0.03
    from voiceband.intelligibility import channel_sii, sii
    from voiceband.intelligibility.tables import band_procedure
    from voiceband.measurement.spectrum import band_powers

    x, fs = speech_24k
    ch = Channel(snr_db=6.0, low_hz=300.0, high_hz=3000.0, seed=2)
    y = ch.process(x, fs)
    n = y - x
    assert 10 * np.log10(np.mean(x * x) / np.mean(n * n)) == pytest.approx(6.0, abs=1e-9)
    spec = np.abs(np.fft.rfft(n)) ** 2
    f = np.fft.rfftfreq(n.size, 1 / fs)
    assert np.sum(spec[(f < 299.0) | (f > 3001.0)]) < 1e-20 * np.sum(spec)
    # SII from measured band spectrum levels of speech and noise (speech shifted to the standard level)
    fw, px = signal.welch(x, fs, nperseg=4096)
    _, pn = signal.welch(n, fs, nperseg=4096)
    table = band_procedure("one-third-octave")
    width = table.upper_hz - table.lower_hz
    sx = 10 * np.log10(band_powers(px, fw, table.lower_hz, table.upper_hz) / width)
    sn = 10 * np.log10(np.maximum(band_powers(pn, fw, table.lower_hz, table.upper_hz), 1e-30) / width)
    shift = 62.35 - 10 * np.log10(np.sum(10 ** ((sx + table.bandwidth_adjustment_db) / 10)))
    from_audio = sii(sx + shift, sn + shift).index
    model = channel_sii(6.0, speech_db=sx + shift, receive_band_hz=(300.0, 3000.0)).index
    assert from_audio == pytest.approx(model, abs=0.03)


def test_chain_response_is_the_product_and_skips_nonlinear_stages():
    a = Gain.from_db(6.0)
    b = RC(mode="lowpass", r_ohm=1e3, c_farad=1e-7)
    c = Chain("c", (a, Clipper(level_db=6.0), b, Channel(snr_db=10.0)))
    f = np.array([100.0, 1000.0])
    assert c.response(f) == pytest.approx(a.response(f) * b.response(f))
    assert not c.is_linear and len(c.linear_stages) == 2 and c.channel is not None


def test_stage_parameters_are_checked():
    with pytest.raises(SignalValueError, match="order must be a whole number 1–12"):
        Filter(kind="lowpass", order=0, cutoff_hz=1000.0)
    with pytest.raises(SignalValueError, match="needs ripple_db"):
        Filter(kind="lowpass", type="chebyshev1", order=4, cutoff_hz=1000.0)
    with pytest.raises(SignalValueError, match="stop_db must exceed ripple_db"):
        Filter(kind="lowpass", type="elliptic", order=4, cutoff_hz=1000.0, ripple_db=3.0, stop_db=2.0)
    with pytest.raises(SignalValueError, match="Nyquist"):
        Filter(kind="lowpass", order=4, cutoff_hz=30000.0).process(np.zeros(100), FS)
    with pytest.raises(SignalValueError, match="exactly one of level_db"):
        Clipper()
    with pytest.raises(SignalValueError, match="silent"):
        Channel().process(np.zeros(100), FS)
    with pytest.raises(SignalValueError, match="NaN"):
        Gain.from_db(3.0).process(np.array([0.0, np.nan]), FS)
