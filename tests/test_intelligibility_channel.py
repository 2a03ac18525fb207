"""Channel noise at a stated SNR (voiceband.intelligibility.channel).

Expected values are derived on paper from the definitions in the channel module docstring and ANSI
S3.5-1997 clause 4 (Eqs. 12-14 for the octave procedure, where Z = N'), or are computed from the
standard's equations and tables.
"""

from __future__ import annotations

import numpy as np
import pytest

from voiceband.errors import MeasurementError, SignalValueError
from voiceband.intelligibility import (
    DEFAULT_CHANNEL_SNR_DB,
    ChannelSIIPoint,
    band_gains_db,
    band_procedure,
    brick_wall_band_gains_db,
    channel_noise_spectrum,
    channel_sii,
    sii_vs_channel_snr,
    standard_speech_spectrum,
)
from voiceband.serialize import to_jsonable

T3 = band_procedure("one-third-octave")
U = standard_speech_spectrum("normal")


def speech_power(speech_db, table=T3):
    return np.sum(10 ** ((speech_db + table.bandwidth_adjustment_db) / 10))


@pytest.mark.parametrize("snr_db", [-10.0, 0.0, 12.5, 30.0])
def test_white_noise_power_in_passband_sets_the_snr(snr_db):
    # Definition: noise power in 300-3000 Hz = speech power / 10^(SNR/10); the SII bands tile the passband.
    noise = channel_noise_spectrum(U, snr_db, receive_band_hz=(300.0, 3000.0))
    width = T3.upper_hz - T3.lower_hz
    with np.errstate(divide="ignore"):
        noise_power = np.sum(10 ** (noise / 10) * width)
    assert 10 * np.log10(speech_power(U) / noise_power) == pytest.approx(snr_db, abs=1e-9)


def test_white_noise_is_flat_inside_and_absent_outside_the_passband():
    noise = channel_noise_spectrum(U, 10.0, receive_band_hz=(300.0, 3000.0))
    inside = (T3.lower_hz >= 300) & (T3.upper_hz <= 3000)
    outside = (T3.upper_hz <= 300) | (T3.lower_hz >= 3000)
    assert np.ptp(noise[inside]) == pytest.approx(0.0, abs=1e-9)
    assert np.all(np.isneginf(noise[outside]))
    # A band partly inside is lower by 10 log10(fraction covered): the 315 Hz band (282-355 Hz).
    frac = (T3.upper_hz[3] - 300) / (T3.upper_hz[3] - T3.lower_hz[3])
    assert noise[3] == pytest.approx(noise[5] + 10 * np.log10(frac), abs=1e-9)


def test_noise_shape_is_kept_and_scaled():
    shape = np.linspace(10.0, -10.0, 18)
    noise = channel_noise_spectrum(U, 5.0, receive_band_hz=None, noise_shape_db=shape)
    np.testing.assert_allclose(np.diff(noise), np.diff(shape), atol=1e-9)
    width = T3.upper_hz - T3.lower_hz
    assert 10 * np.log10(speech_power(U) / np.sum(10 ** (noise / 10) * width)) == pytest.approx(5.0, abs=1e-9)


def test_octave_white_noise_over_sii_range_matches_hand_calculation():
    # Octave procedure: Z = N' (clause 4.3.1), normal speech has L = 1, so SII = sum I clip((E - N + 15)/30)
    # with N = 10 log10(P_speech / 10^(SNR/10) / W), W = 11314 - 177 Hz (Table 4 band limits).
    t = band_procedure("octave")
    u = standard_speech_spectrum("normal", procedure="octave")
    snr = 15.0
    n = 10 * np.log10(speech_power(u, t) / 10 ** (snr / 10) / (11314.0 - 177.0))
    expected = float(np.sum(t.importance * np.clip((u - n + 15) / 30, 0, 1)))
    r = channel_sii(snr, receive_band_hz=None, procedure="octave")
    assert r.index == pytest.approx(expected, abs=1e-12)


def test_high_snr_tends_to_quiet_value():
    # ASA S3-79 reference C program output: normal speech in quiet, 0.99582517.
    assert channel_sii(120.0).index == pytest.approx(0.99582517, abs=1e-6)


def test_filter_gains_and_noise_floor_combination():
    # With a brick-wall 300-3000 Hz filter and strong channel noise the SII is far below the quiet value.
    gains = brick_wall_band_gains_db(300, 3000)
    assert channel_sii(0.0, band_gains_db=gains).index < 0.5
    assert channel_sii(60.0, band_gains_db=gains).index == pytest.approx(0.7825, abs=1e-3)


def test_extra_noise_is_power_added():
    # noise_db is power-added to the channel noise: adding the channel noise to itself is +3.01 dB.
    channel = channel_noise_spectrum(U, 10.0, receive_band_hz=None)
    both = channel_sii(10.0, receive_band_hz=None, noise_db=channel)
    np.testing.assert_allclose(both.noise_db, channel + 10 * np.log10(2), atol=1e-9)


def test_sii_vs_channel_snr_default_grid_and_monotone():
    points = sii_vs_channel_snr()
    assert [p.snr_db for p in points] == list(DEFAULT_CHANNEL_SNR_DB) == list(np.arange(-10.0, 31.0, 5.0))
    values = [p.sii for p in points]
    assert all(b >= a for a, b in zip(values, values[1:]))
    assert all(isinstance(p, ChannelSIIPoint) for p in points)
    assert to_jsonable(points)[0] == {"snr_db": -10.0, "sii": values[0]}


def test_sii_vs_channel_snr_equals_single_calls():
    gains = band_gains_db(np.geomspace(20, 20000, 4000), np.ones(4000))
    points = sii_vs_channel_snr([-5.0, 7.0, 20.0], band_gains_db=gains)
    for p in points:
        assert p.sii == pytest.approx(channel_sii(p.snr_db, band_gains_db=gains).index, abs=1e-12)


def test_batched_snr_with_batched_speech():
    speech = np.stack([U, U - 10])
    r = channel_sii(np.array([0.0, 0.0]), speech_db=speech, receive_band_hz=None)
    assert r.index.shape == (2,)
    for i in range(2):
        assert r.index[i] == pytest.approx(channel_sii(0.0, speech_db=speech[i], receive_band_hz=None).index, abs=1e-12)
    # Same SNR with everything 10 dB quieter scores slightly higher: the upward spread of masking gets
    # steeper at lower levels (Eq. 7, C grows with B), so less noise spreads into the higher bands.
    assert r.index[1] > r.index[0]


@pytest.mark.parametrize(
    "kwargs, exc, match",
    [
        ({"receive_band_hz": (3000.0, 300.0)}, MeasurementError, "low < high"),
        ({"receive_band_hz": (10000.0, 12000.0)}, MeasurementError, "outside the SII bands"),
        ({"receive_band_hz": "wide"}, MeasurementError, "pair"),
        ({"noise_shape_db": np.zeros(5)}, SignalValueError, "noise_shape_db"),
    ],
)
def test_bad_channel_options(kwargs, exc, match):
    with pytest.raises(exc, match=match):
        channel_noise_spectrum(U, 0.0, **kwargs)


def test_bad_snr_and_speech():
    with pytest.raises(SignalValueError, match="finite"):
        channel_noise_spectrum(U, np.nan)
    with pytest.raises(SignalValueError, match="no power"):
        channel_noise_spectrum(np.full(18, -np.inf), 0.0)
    with pytest.raises(SignalValueError, match="1-D"):
        sii_vs_channel_snr([[0.0]])
