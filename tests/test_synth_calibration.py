"""Calibration of the speech synthesiser against published speech statistics.

Checks (issue 4):
* long-term one-third-octave spectrum within ±3 dB of the ANSI S3.5-1997 Table 3 standard
  speech spectrum for the chosen vocal effort, every band 160–8000 Hz, after level
  alignment (medium voice);
* intensity-envelope modulation spectrum peaking between 2 and 6 Hz (syllable rate near
  4 Hz; common practice, Houtgast & Steeneken's speech envelope spectra, from memory);
* ITU-T P.56 activity factor between 0.5 and 0.85 (the issue's range; running speech with
  phrase pauses, common practice).

The spectrum criterion is checked twice: with the project's long-term speech spectrum
(:func:`voiceband.analysis.measure_recording`, speech frames, as ``voiceband analyze``
reports it) and with a band-level estimator written here, independently of the package:
Welch PSD (1 s Hann segments, 1 Hz bins) summed over base-10 one-third-octave band limits
(IEC 61260-1: exact mid-band 1000·10^(x/10) Hz, limits ×10^(±1/20)).

Run this file as a script to print the deviation, modulation peak and activity factor of
every voice and effort.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from voiceband.measurement.levels import measure_levels
from voiceband.analysis import measure_recording
from voiceband.synth.speech import (
    CALIBRATION_DB,
    EFFORTS,
    THIRD_OCTAVE_CENTRES_HZ,
    VOICE_DEVIATION_DB,
    VOICES,
    ansi_speech_band_levels_db,
    derive_calibration_tables,
    synthesize_speech,
)

def band_levels_db(x: np.ndarray, fs: int) -> np.ndarray:
    """One-third-octave band levels (dB re full-scale power) at the ANSI Table 3 centres."""
    f, psd = signal.welch(x, fs, window="hann", nperseg=fs, noverlap=fs // 2)
    df = f[1] - f[0]
    xexp = np.round(10.0 * np.log10(THIRD_OCTAVE_CENTRES_HZ / 1000.0))
    mid = 1000.0 * 10.0 ** (xexp / 10.0)
    lo, hi = mid * 10.0 ** -0.05, mid * 10.0 ** 0.05
    out = np.empty(mid.size)
    for i in range(mid.size):
        m = (f >= lo[i]) & (f < hi[i])
        out[i] = 10.0 * np.log10(np.sum(psd[m]) * df)
    return out


def aligned_deviation_db(x: np.ndarray, fs: int, effort: str) -> np.ndarray:
    """Band level minus ANSI Table 3 band level (U + Δ), shifted to zero mean (level alignment)."""
    d = band_levels_db(x, fs) - ansi_speech_band_levels_db(effort)
    return d - d.mean()


def project_deviation_db(x: np.ndarray, fs: int, effort: str) -> np.ndarray:
    """The same with the project's speech LTAS band levels (voiceband.measurement.spectrum)."""
    sp = measure_recording(x, fs).spectrum
    keep = np.isin(sp.bands_hz, THIRD_OCTAVE_CENTRES_HZ)
    assert np.array_equal(sp.bands_hz[keep], THIRD_OCTAVE_CENTRES_HZ)
    d = sp.speech_band_db[keep] - ansi_speech_band_levels_db(effort)
    return d - d.mean()


def modulation_spectrum(x: np.ndarray, fs: int) -> tuple[np.ndarray, np.ndarray]:
    """Broadband intensity-envelope modulation spectrum in one-third-octave bands 0.5–32 Hz.

    Intensity x² averaged over 10 ms (a 100 Hz envelope), normalised by its mean; the
    power of its spectrum summed in each modulation band.
    """
    hop = fs // 100
    m = x.size // hop
    env = (x[: m * hop] ** 2).reshape(m, hop).mean(axis=1)
    env = env / env.mean() - 1.0
    power = np.abs(np.fft.rfft(env)) ** 2
    fm = np.fft.rfftfreq(m, 0.01)
    centres = 2.0 ** (np.arange(-3, 16) / 3.0)  # 0.5 … 32 Hz
    bands = np.array([power[(fm >= c * 2 ** (-1 / 6)) & (fm < c * 2 ** (1 / 6))].sum() for c in centres])
    return centres, bands


# --------------------------------------------------------------------------- tests


def test_band_estimator_on_white_noise():
    # White noise: band power ∝ bandwidth, so adjacent one-third-octave bands differ by
    # 10·log10(10^0.1) = 1.0 dB (analytic; base-10 bands).
    x = np.random.default_rng(1).standard_normal(48000 * 20)
    b = band_levels_db(x, 48000)
    assert np.allclose(np.diff(b), 1.0, atol=0.35)


def test_ansi_targets_match_reference_notes():
    # ANSI S3.5-1997 Table 3: 1000 Hz normal U = 25.01 dB/Hz, Δ = 23.65 dB; shout 8000 Hz
    # U = 20.72, Δ = 32.65 (ANSI S3.5-1997 Table 3).
    assert ansi_speech_band_levels_db("normal")[8] == pytest.approx(25.01 + 23.65)
    assert ansi_speech_band_levels_db("shout")[17] == pytest.approx(20.72 + 32.65)


@pytest.fixture(scope="module")
def medium_speech():
    # Seed and duration differ from the derivation rendition, so this checks that the
    # stored equaliser generalises to new text.
    return {e: synthesize_speech(30.0, 48000, voice="medium", effort=e, seed=7) for e in EFFORTS}


@pytest.mark.parametrize("effort", list(EFFORTS))
def test_medium_voice_spectrum_within_3_db_of_ansi_table_3(medium_speech, effort):
    # ANSI S3.5-1997 Table 3 (U + Δ), every band 160–8000 Hz, ±3 dB (issue 4).
    for dev in (project_deviation_db(medium_speech[effort], 48000, effort),
                aligned_deviation_db(medium_speech[effort], 48000, effort)):
        assert np.max(np.abs(dev)) <= 3.0, np.round(dev, 1)


@pytest.mark.parametrize("effort", list(EFFORTS))
def test_modulation_spectrum_peaks_between_2_and_6_hz(medium_speech, effort):
    # Speech envelope spectra peak near the syllable rate, about 4 Hz (common practice).
    centres, power = modulation_spectrum(medium_speech[effort], 48000)
    assert 2.0 <= centres[np.argmax(power)] <= 6.0


@pytest.mark.parametrize("effort", list(EFFORTS))
def test_p56_activity_factor_between_0_5_and_0_85(medium_speech, effort):
    # ITU-T P.56 method B activity factor (voiceband.measurement.levels), range from issue 4.
    r = measure_levels(medium_speech[effort], 48000)
    assert 0.5 <= r.activity_factor <= 0.85


@pytest.mark.parametrize("effort", list(EFFORTS))
def test_active_level_is_minus_26_dbfs(medium_speech, effort):
    # The documented output level: P.56 active level −26 dBFS (common practice).
    assert measure_levels(medium_speech[effort], 48000).active_level_dbfs == pytest.approx(-26.0, abs=0.01)


@pytest.mark.parametrize("effort", list(EFFORTS))
def test_short_recording_also_within_3_db(effort):
    # A corpus-length recording (12 s) meets the same ANSI S3.5-1997 Table 3 criterion.
    x = synthesize_speech(12.0, 48000, voice="medium", effort=effort, seed=21)
    for dev in (project_deviation_db(x, 48000, effort), aligned_deviation_db(x, 48000, effort)):
        assert np.max(np.abs(dev)) <= 3.0, np.round(dev, 1)


@pytest.mark.parametrize("voice", ["low", "high"])
def test_other_voices(voice):
    # Issue 4 asks the spectrum criterion of the medium voice only; the low and high voices
    # keep their natural long-term difference (VOICE_DEVIATION_DB, reported), which their
    # output follows within the same ±3 dB.  Modulation and activity criteria as above.
    x = synthesize_speech(30.0, 48000, voice=voice, effort="normal", seed=11)
    dev = aligned_deviation_db(x, 48000, "normal") - np.asarray(VOICE_DEVIATION_DB[voice]["normal"])
    assert np.max(np.abs(dev - dev.mean())) <= 3.0, np.round(dev, 1)
    centres, power = modulation_spectrum(x, 48000)
    assert 2.0 <= centres[np.argmax(power)] <= 6.0
    assert 0.5 <= measure_levels(x, 48000).activity_factor <= 0.85


def test_stored_tables_are_their_derivation():
    # CALIBRATION_DB and VOICE_DEVIATION_DB are reference data; their generator is
    # voiceband.synth.speech.derive_calibration_tables (deterministic).
    cal, dev = derive_calibration_tables()
    for effort in EFFORTS:
        assert np.allclose(cal[effort], CALIBRATION_DB[effort], atol=0.011), effort
        for voice in ("low", "high"):
            assert np.allclose(dev[voice][effort], VOICE_DEVIATION_DB[voice][effort], atol=0.011), (voice, effort)


def test_spectrum_does_not_depend_on_output_rate():
    # Synthesis runs at ≥ 32 kHz and is decimated, so 16 kHz output matches 48 kHz output
    # in the bands below 6.3 kHz (same seed, same text) to well within the ±3 dB target.
    a = synthesize_speech(12.0, 48000, seed=3)
    b = synthesize_speech(12.0, 16000, seed=3)
    da = band_levels_db(a, 48000)[:16]
    db = band_levels_db(b, 16000)[:16]
    assert np.max(np.abs(da - db)) < 1.0


if __name__ == "__main__":
    np.set_printoptions(linewidth=200)
    print("aligned deviation from ANSI S3.5-1997 Table 3 (dB), 60 s, 48 kHz, seed 7, bands", THIRD_OCTAVE_CENTRES_HZ.astype(int))
    for voice in VOICES:
        for effort in EFFORTS:
            x = synthesize_speech(60.0, 48000, voice=voice, effort=effort, seed=7)
            dev = project_deviation_db(x, 48000, effort)
            c, p = modulation_spectrum(x, 48000)
            r = measure_levels(x, 48000)
            print(f"{voice:6s} {effort:6s} max|dev| {np.max(np.abs(dev)):4.1f}  modulation peak {c[np.argmax(p)]:4.2f} Hz"
                  f"  activity {r.activity_factor:.3f}  dev " + " ".join(f"{v:+.1f}" for v in dev))
