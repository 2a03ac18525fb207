"""Filter band gains for the SII (voiceband.intelligibility.filters).

Check values computed from ANSI S3.5-1997 (one-third-octave procedure, Table 3), for the
normal-effort standard speech spectrum in quiet, one-third-octave procedure, 300-3000 Hz:
centre counting 0.698, brick-wall band fractions 0.783, 16-pole Butterworth band-pass with the mean of
|H|^2 over each band 0.891, and 0.780 with a flat receiver noise floor N' = 0 dB.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from voiceband.errors import SignalValueError
from voiceband.intelligibility import (
    band_gains_db,
    band_procedure,
    brick_wall_band_gains_db,
    sii,
    standard_speech_spectrum,
)

U = standard_speech_spectrum("normal")
GRID_HZ = np.geomspace(20.0, 20000.0, 20000)


def butterworth_300_3000(freqs_hz):
    # scipy.signal.butter(8, [300, 3000], "bandpass", analog=True): 16 poles. With analog=True the edges are
    # angular frequencies, so evaluating at w = f (same units) gives the filter with edges at 300 and 3000 Hz.
    z, p, k = signal.butter(8, [300.0, 3000.0], "bandpass", analog=True, output="zpk")
    _, h = signal.freqs_zpk(z, p, k, worN=freqs_hz)
    return h


def test_centre_counting_gives_0_698():
    # Counting a band as passed when its centre lies in 300-3000 Hz: computed from ANSI S3.5-1997, 0.698
    # (= sum of Table 3 importance from 315 to 2500 Hz).
    centres = band_procedure("one-third-octave").centres_hz
    gains = np.where((centres >= 300) & (centres <= 3000), 0.0, -np.inf)
    assert sii(U + gains).index == pytest.approx(0.698, abs=0.0005)


def test_brick_wall_fractions_give_0_783():
    # Computed from ANSI S3.5-1997: brick-wall, band gain = fraction of the band passed: 0.783. The exact value
    # is 0.7825 (printed rounded half up): centre counting's 0.6981 plus the whole 3150 Hz band (I = 0.0844,
    # Table 3), of which a quarter passes -- still enough for A = 1 in quiet; the 315 Hz band already counts.
    index = sii(U + brick_wall_band_gains_db(300, 3000)).index
    assert index == pytest.approx(0.6981 + 0.0844, abs=1e-9)
    assert round(index + 1e-9, 3) == 0.783


def test_ideal_response_on_a_grid_matches_brick_wall_fractions():
    ideal = ((GRID_HZ >= 300) & (GRID_HZ <= 3000)).astype(float)
    gains = band_gains_db(GRID_HZ, ideal)
    exact = brick_wall_band_gains_db(300, 3000)
    inside = np.isfinite(exact)
    np.testing.assert_allclose(gains[inside], exact[inside], atol=0.02)
    assert np.all(gains[~inside] < -20)  # only interpolation slivers at the edges of the grid step


def test_butterworth_power_average_gives_0_891():
    # Computed from ANSI S3.5-1997: butter(8, [300, 3000], "bandpass") analogue, mean |H|^2 per band: 0.891.
    gains = band_gains_db(GRID_HZ, butterworth_300_3000(GRID_HZ))
    assert sii(U + gains).index == pytest.approx(0.891, abs=0.0005)


def test_butterworth_with_receiver_noise_floor_gives_0_780():
    # Computed from ANSI S3.5-1997: the same filter with a flat receiver noise floor N' = 0 dB: 0.780.
    gains = band_gains_db(GRID_HZ, butterworth_300_3000(GRID_HZ))
    assert sii(U + gains, np.zeros(18)).index == pytest.approx(0.780, abs=0.0005)


def test_complex_and_magnitude_inputs_agree():
    h = butterworth_300_3000(GRID_HZ)
    np.testing.assert_allclose(band_gains_db(GRID_HZ, h), band_gains_db(GRID_HZ, np.abs(h)), atol=1e-12)


def test_flat_and_constant_responses():
    # Analytic: |H| = 1 gives 0 dB; |H| = 0.5 gives 20 log10(0.5) = -6.0206 dB in every band.
    np.testing.assert_allclose(band_gains_db(GRID_HZ, np.ones_like(GRID_HZ)), 0.0, atol=1e-12)
    np.testing.assert_allclose(band_gains_db(GRID_HZ, np.full_like(GRID_HZ, 0.5)), 20 * np.log10(0.5), atol=1e-12)


@pytest.mark.parametrize("procedure", ["critical-band", "equal-critical-band", "one-third-octave", "octave"])
def test_linear_power_ramp_is_integrated_exactly(procedure):
    # Analytic: |H|^2 = f / 1000 Hz has mean (l + h) / 2000 over a band [l, h]; piecewise-linear
    # integration is exact for it whatever the grid.
    f = np.linspace(50.0, 12000.0, 37)
    gains = band_gains_db(f, np.sqrt(f / 1000.0), procedure=procedure)
    t = band_procedure(procedure)
    np.testing.assert_allclose(gains, 10 * np.log10((t.lower_hz + t.upper_hz) / 2000.0), atol=1e-12)


def test_batch_of_responses():
    h = np.stack([np.ones_like(GRID_HZ), np.full_like(GRID_HZ, 0.1), np.abs(butterworth_300_3000(GRID_HZ))])
    gains = band_gains_db(GRID_HZ, h)
    assert gains.shape == (3, 18)
    np.testing.assert_allclose(gains[1], -20.0, atol=1e-12)
    r = sii(U + gains)
    assert r.index.shape == (3,)
    assert r.index[2] == pytest.approx(0.891, abs=0.0005)


def test_digital_filter_above_nyquist_with_outside_gain():
    # A digital filter at 8 kHz has no response above 4 kHz: bands above are -inf with outside_gain_db=-inf,
    # and the 4 kHz band (3548-4467 Hz) keeps about half its width.
    fs = 8000
    sos = signal.butter(8, [300, 3000], "bandpass", fs=fs, output="sos")
    f = np.linspace(1.0, fs / 2, 8000)
    _, h = signal.sosfreqz(sos, worN=f, fs=fs)
    gains = band_gains_db(f, h, outside_gain_db=-np.inf)
    t = band_procedure("one-third-octave")
    assert np.all(np.isneginf(gains[t.lower_hz >= fs / 2]))
    flat = band_gains_db(f, np.ones_like(f), outside_gain_db=-np.inf)
    covered = (fs / 2 - t.lower_hz[14]) / (t.upper_hz[14] - t.lower_hz[14])
    assert flat[14] == pytest.approx(10 * np.log10(covered), abs=1e-9)


def test_uncovered_band_raises_without_outside_gain():
    f = np.linspace(100.0, 4000.0, 500)
    with pytest.raises(SignalValueError, match="extend the frequencies or give outside_gain_db"):
        band_gains_db(f, np.ones_like(f))


@pytest.mark.parametrize(
    "freqs, response, match",
    [
        (np.array([100.0, 50.0, 200.0]), np.ones(3), "strictly increasing"),
        (np.array([[1.0, 2.0]]), np.ones(2), "1-D"),
        (np.linspace(10, 20000, 10), np.ones(9), "10 values"),
        (np.linspace(10, 20000, 10), -np.ones(10), "linear magnitude"),
        (np.linspace(10, 20000, 10), np.r_[np.nan, np.ones(9)], "NaN"),
    ],
)
def test_bad_input(freqs, response, match):
    with pytest.raises(SignalValueError, match=match):
        band_gains_db(freqs, response)


def test_brick_wall_bad_edges():
    with pytest.raises(SignalValueError, match="low_hz < high_hz"):
        brick_wall_band_gains_db(3000, 300)
