"""Property tests of the SII engine (hypothesis), derived from the structure of ANSI S3.5-1997 clause 4.

* The index lies in [0, 1]: A = L K with L, K in [0, 1] (Eqs. 11-13) and the importance functions sum to
  at most 1 (Tables 1-4, Annex B).
* Raising noise never raises the SII: N' enters B = max(N', V), Z (Eqs. 8-9, increasing in every B_k and
  N'_i) and D = max(Z, X'), and K falls as D rises (Eq. 12).
* Lowering speech never raises the SII *where the speech does not mask itself* (N' >= E' - 24 dB, so
  B = N') and *below the level-distortion knee* (E' <= U + 10 dB, so L = 1): then only K changes, and it
  falls. Outside that region it is not a property of the standard: lowering very loud speech raises L
  (Eq. 11) and lowering self-masking speech lowers Z faster than E' (slope C grows with B, Eq. 6/7).
* Lowering the hearing threshold never lowers the SII (X' = X + T', D = max(Z, X')).
* A batch gives the same numbers as a loop over its rows.
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from voiceband.intelligibility import band_procedure, sii

PROCEDURES = ["critical-band", "equal-critical-band", "one-third-octave", "octave"]
N_BANDS = {"critical-band": 21, "equal-critical-band": 17, "one-third-octave": 18, "octave": 6}
SETTINGS = settings(max_examples=60, deadline=None)
TOL = 1e-12


def levels(n, lo, hi):
    return arrays(np.float64, n, elements=st.floats(lo, hi, allow_nan=False, allow_infinity=False))


@st.composite
def case(draw, lo_speech=-40.0, hi_speech=200.0):
    procedure = draw(st.sampled_from(PROCEDURES))
    n = N_BANDS[procedure]
    speech = draw(levels(n, lo_speech, hi_speech))
    noise = draw(levels(n, -60.0, 150.0))
    threshold = draw(levels(n, -10.0, 90.0))
    names = ["average"] + list(band_procedure(procedure).annex_b_importance)
    importance = draw(st.sampled_from(names))
    return procedure, speech, noise, threshold, importance


@SETTINGS
@given(case())
def test_index_within_unit_interval(c):
    procedure, speech, noise, threshold, importance = c
    r = sii(speech, noise, threshold, procedure=procedure, importance=importance)
    assert 0.0 <= r.index <= 1.0
    assert np.all((r.A >= 0) & (r.A <= 1))


@SETTINGS
@given(case(), st.data())
def test_more_noise_never_raises_sii(c, data):
    procedure, speech, noise, threshold, importance = c
    rise = data.draw(levels(N_BANDS[procedure], 0.0, 60.0))
    before = sii(speech, noise, threshold, procedure=procedure, importance=importance).index
    after = sii(speech, noise + rise, threshold, procedure=procedure, importance=importance).index
    assert after <= before + TOL


@SETTINGS
@given(st.sampled_from(PROCEDURES), st.data())
def test_less_speech_never_raises_sii_without_self_masking_or_level_distortion(procedure, data):
    n = N_BANDS[procedure]
    u = band_procedure(procedure).speech_spectrum_db["normal"]
    speech = np.minimum(data.draw(levels(n, -40.0, 80.0)), u + 10.0)  # L = 1 (Eq. 11)
    noise = np.maximum(data.draw(levels(n, -60.0, 90.0)), speech - 24.0)  # B = N' (4.3.2.2)
    threshold = data.draw(levels(n, -10.0, 60.0))
    fall = data.draw(levels(n, 0.0, 60.0))
    before = sii(speech, noise, threshold, procedure=procedure).index
    after = sii(speech - fall, noise, threshold, procedure=procedure).index
    assert after <= before + TOL


@SETTINGS
@given(case(), st.data())
def test_lower_threshold_never_lowers_sii(c, data):
    procedure, speech, noise, threshold, importance = c
    drop = data.draw(levels(N_BANDS[procedure], 0.0, 40.0))
    worse = sii(speech, noise, threshold, procedure=procedure, importance=importance).index
    better = sii(speech, noise, threshold - drop, procedure=procedure, importance=importance).index
    assert better >= worse - TOL


@settings(max_examples=25, deadline=None)
@given(st.sampled_from(PROCEDURES), st.integers(1, 40), st.data())
def test_batch_equals_loop(procedure, rows, data):
    n = N_BANDS[procedure]
    speech = data.draw(arrays(np.float64, (rows, n), elements=st.floats(-40, 150)))
    noise = data.draw(arrays(np.float64, (rows, n), elements=st.floats(-60, 120)))
    threshold = data.draw(arrays(np.float64, (rows, n), elements=st.floats(-10, 60)))
    batch = sii(speech, noise, threshold, procedure=procedure)
    for i in range(rows):
        one = sii(speech[i], noise[i], threshold[i], procedure=procedure)
        np.testing.assert_allclose(batch.index[i], one.index, rtol=0, atol=1e-12)
        np.testing.assert_allclose(batch.Z[i], one.Z, rtol=1e-12, atol=1e-9)
        np.testing.assert_allclose(batch.A[i], one.A, rtol=0, atol=1e-12)


def test_batch_larger_than_one_chunk_equals_loop(rng):
    # The engine works on row chunks; a batch spanning several chunks must agree with single rows.
    speech = rng.uniform(-10, 120, (5000, 18))
    noise = rng.uniform(-30, 100, (5000, 18))
    batch = sii(speech, noise).index
    picks = rng.choice(5000, 40, replace=False)
    for i in picks:
        assert abs(batch[i] - sii(speech[i], noise[i]).index) <= 1e-12


def test_lowering_loud_speech_can_raise_sii():
    # Why the speech-falls property needs L = 1: Eq. 11 penalises levels far above normal effort, so
    # 20 dB less of very loud speech in quiet scores higher.
    u = band_procedure("one-third-octave").speech_spectrum_db["normal"]
    assert sii(u + 80).index < sii(u + 60).index
