"""Source–filter speech synthesiser calibrated to the ANSI S3.5-1997 standard speech spectrum.

The synthesiser speaks a seeded pseudo-language: phrases of syllables built from vowels,
nasals, approximants, fricatives and plosives, separated by pauses.

Source
    A Rosenberg glottal pulse (flow derivative, so lip radiation is included) driven by a
    pitch contour with phrase declination, accent peaks and a final fall, per-period jitter
    and shimmer, plus breath noise gated to the open phase, and a one-pole spectral-tilt
    low-pass whose corner rises with vocal effort (the LF model's return phase).
Filter
    A cascade of ten second-order formant resonators (Klatt's digital resonator, unity
    gain at DC) whose frequencies and bandwidths move between phoneme targets; the
    coefficients are updated every 10 ms and the filter state carries across updates.
Frication and bursts
    Seeded white noise through a Butterworth band-pass per consonant, added in parallel.
Calibration
    A final linear-phase FIR equaliser through one-third-octave gains.  The long-term
    gains per vocal effort are a stored, derived table (:data:`CALIBRATION_DB`, what the
    raw medium voice needs to sit on ANSI S3.5-1997 Table 3); each rendition then refines
    them, deterministically at run time, from its own measured long-term spectrum (within
    ±8 dB of the table), because a recording of a few seconds holds too few vowels for its
    spectrum to be the long-term one.  The medium voice lands on Table 3 (after level
    alignment) within a fraction of a dB in every band 160–8000 Hz; the low and high
    voices keep their natural long-term difference, :data:`VOICE_DEVIATION_DB`.
Level
    The result is scaled to an ITU-T P.56 (method B) active speech level, by default
    −26 dBFS (common practice for narrowband test material, ITU-T G.191 / P.800-series; from memory).

Synthesis runs at the output rate when it is at least 32 kHz, otherwise at the smallest
integer multiple of it that is, followed by decimation, so the spectrum below 8 kHz does
not depend on the output rate.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import validate
from ..errors import SignalValueError
from ..intelligibility.tables import band_procedure

__all__ = [
    "VOICES",
    "EFFORTS",
    "DEFAULT_ACTIVE_LEVEL_DBFS",
    "THIRD_OCTAVE_CENTRES_HZ",
    "CALIBRATION_DB",
    "VOICE_DEVIATION_DB",
    "MAX_RENDITION_CORRECTION_DB",
    "calibration_fir",
    "derive_calibration_tables",
    "Voice",
    "Effort",
    "ansi_speech_band_levels_db",
    "synthesize_speech",
    "synthesize_speech_raw",
]

#: P.56 active speech level of the output, dBFS (0 dBFS = full-scale square wave RMS).
#: −26 dBov is the usual level for narrowband test material (ITU-T G.191 practice, from memory).
DEFAULT_ACTIVE_LEVEL_DBFS = -26.0

#: One-third-octave band centres of ANSI S3.5-1997 Table 3, Hz (the calibration bands).
THIRD_OCTAVE_CENTRES_HZ = band_procedure("one-third-octave").centres_hz

#: Long-term calibration gains, dB, at the Table 3 band centres, per vocal effort: the
#: equaliser that brings the raw **medium** voice's long-term one-third-octave spectrum onto
#: ANSI S3.5-1997 Table 3 (U + Δ) after level alignment (rows have zero mean).  Derived by
#: :func:`derive_calibration_tables` (medium voice, 48 kHz, 90 s, seed 20240601); the test
#: ``test_stored_tables_are_their_derivation`` re-derives them.  Each rendition's own
#: equaliser is computed at run time around these gains (see :func:`synthesize_speech`).
CALIBRATION_DB = {
    "normal": (-1.14, -0.39, 4.50, -1.69, -2.49, -0.67, -3.78, -3.94, 3.51, -1.23, 5.74, -1.90, -2.21, -2.50, -4.46, 5.66, 3.49, 3.49),
    "raised": (-0.73, -6.16, 2.98, 0.71, -3.11, -1.73, -1.64, -4.68, -0.14, 2.46, 4.90, -2.09, -0.72, -1.36, -3.23, 6.89, 4.33, 3.32),
    "loud": (2.75, -4.07, -1.80, 3.57, -2.81, -3.69, -3.72, -3.20, -0.84, 0.69, 2.92, -3.20, -2.64, -1.19, -1.45, 7.93, 5.53, 5.22),
    "shout": (4.22, -6.26, -3.60, -2.81, -1.03, -3.74, -6.90, -0.98, -3.27, 3.18, 3.35, -3.48, -3.70, -3.94, -1.60, 12.27, 9.11, 9.18),
}

#: Long-term deviation, dB, of the low and high voices from ANSI S3.5-1997 Table 3 after the
#: medium voice's calibration gains (aligned, zero mean): their natural spectral difference
#: (F0 and formant scaling), kept in the output.  The medium voice's deviation is zero by
#: definition.  Derived with :data:`CALIBRATION_DB` by :func:`derive_calibration_tables`.
VOICE_DEVIATION_DB = {
    "low": {
        "normal": (-0.44, -0.30, 5.30, 1.13, -2.01, 0.75, -1.61, -4.16, -1.65, -5.40, 1.52, -0.46, -0.38, 0.67, -3.30, 2.54, 3.81, 4.00),
        "raised": (2.78, -1.06, 3.11, 4.30, -1.64, 0.26, 0.87, -2.56, -2.74, -5.26, -0.23, -1.45, -0.64, 0.49, -3.89, 1.32, 3.00, 3.34),
        "loud": (8.11, 0.38, 0.38, 4.83, 2.45, -1.11, -1.21, -0.05, -2.51, -4.48, -1.24, -3.31, -3.08, 0.04, -4.41, 0.26, 2.25, 2.70),
        "shout": (17.04, 5.67, -1.51, 1.33, 3.49, 0.05, -1.29, 0.54, -4.00, -2.83, -0.51, -2.33, -3.93, -4.46, -8.46, -1.51, 1.00, 1.70),
    },
    "high": {
        "normal": (-13.67, -3.52, 1.96, 1.02, -3.42, 1.25, 2.54, 1.49, 3.91, 0.67, 1.39, 0.24, -0.48, 1.42, 3.71, 4.86, -0.65, -2.74),
        "raised": (-20.01, -7.22, -0.18, 2.60, -2.87, -0.55, 5.10, 0.30, 1.21, 4.24, 3.24, 2.30, 2.29, 2.33, 3.53, 5.02, 0.14, -1.46),
        "loud": (-22.49, -14.11, -3.36, 2.34, 0.82, -2.78, 0.97, 4.07, 3.59, 2.62, 2.01, 3.73, 2.93, 5.48, 5.75, 6.91, 1.69, -0.15),
        "shout": (-11.25, -21.72, -10.16, -1.87, 2.23, -0.29, -1.08, 5.51, 3.78, 3.07, 0.40, 3.10, 1.92, 4.40, 8.69, 9.38, 3.21, 0.69),
    },
}

#: Largest departure of a rendition's equaliser from :data:`CALIBRATION_DB`, dB.  Long
#: renditions need a few dB; the limit only matters for recordings of a few seconds whose
#: phoneme mix is far from the average.
MAX_RENDITION_CORRECTION_DB = 8.0

#: Reference rendition for :func:`derive_calibration_tables`.
DERIVATION_RATE_HZ = 48000
DERIVATION_DURATION_S = 90.0
DERIVATION_SEED = 20240601


def ansi_speech_band_levels_db(effort: str = "normal") -> np.ndarray:
    """One-third-octave *band* levels of the ANSI S3.5-1997 standard speech spectrum.

    Band level = standard speech spectrum level U + bandwidth adjustment Δ (ANSI S3.5-1997
    Table 3, via :func:`voiceband.intelligibility.tables.band_procedure`), dB SPL at 1 m,
    for the 18 bands of :data:`THIRD_OCTAVE_CENTRES_HZ`.
    """
    _check_choice(effort, EFFORTS, "effort")
    table = band_procedure("one-third-octave")
    return np.asarray(table.speech_spectrum_db[effort]) + np.asarray(table.bandwidth_adjustment_db)


# --------------------------------------------------------------------------- talkers


@dataclass(frozen=True)
class Voice:
    """A talker: mean fundamental frequency and formant scale (1.0 = adult male formants)."""

    f0_hz: float
    formant_scale: float


@dataclass(frozen=True)
class Effort:
    """Vocal-effort settings of the source and tract.

    Attributes
    ----------
    f0_factor : float
        Multiplies the voice's F0 (F0 rises with effort; from memory, Traunmüller &
        Eriksson 2000).
    open_phase, closing_phase : float
        Rosenberg pulse opening and closing durations as fractions of the period; a shorter
        closing phase gives a stronger excitation at closure and a flatter spectrum.
    tilt_corner_hz : float
        Corner of the source's one-pole spectral-tilt low-pass.
    f1_factor : float
        F1 rises with effort (wider jaw opening; from memory).
    consonant_db : float
        Level of frication and bursts relative to normal effort (the consonant-to-vowel
        ratio falls as effort rises).
    """

    f0_factor: float
    open_phase: float
    closing_phase: float
    tilt_corner_hz: float
    f1_factor: float
    consonant_db: float


#: Low, medium and high voices (F0 about 100, 150, 220 Hz; formant scales for adult male,
#: between, and adult female formants, Peterson & Barney 1952 ratios, from memory).
VOICES = {
    "low": Voice(f0_hz=100.0, formant_scale=1.0),
    "medium": Voice(f0_hz=150.0, formant_scale=1.08),
    "high": Voice(f0_hz=220.0, formant_scale=1.17),
}

#: Vocal efforts.  The source settings were chosen so the raw spectrum flattens with effort
#: towards the ANSI S3.5-1997 Table 3 raised/loud/shout spectra (the calibration
#: equaliser does the rest); the F0 and F1 factors are from memory (see :class:`Effort`).
EFFORTS = {
    "normal": Effort(f0_factor=1.0, open_phase=0.42, closing_phase=0.16, tilt_corner_hz=2500.0, f1_factor=1.0, consonant_db=0.0),
    "raised": Effort(f0_factor=1.12, open_phase=0.40, closing_phase=0.13, tilt_corner_hz=3500.0, f1_factor=1.05, consonant_db=-1.0),
    "loud": Effort(f0_factor=1.3, open_phase=0.38, closing_phase=0.10, tilt_corner_hz=5000.0, f1_factor=1.10, consonant_db=-2.0),
    "shout": Effort(f0_factor=1.55, open_phase=0.36, closing_phase=0.08, tilt_corner_hz=8000.0, f1_factor=1.15, consonant_db=-3.0),
}


def _check_choice(value: str, table: dict, name: str) -> None:
    if value not in table:
        raise SignalValueError(f"{name} must be one of {', '.join(table)}; got {value!r}.")


# --------------------------------------------------------------------------- phonemes

# Per phone: formant targets F1–F6 and bandwidths B1–B5 (Hz) for an adult male tract
# (F7–F10 and B6–B10 are shared, below).  Vowel F1–F3 are the Peterson & Barney (1952) male
# means (from memory); F4–F6 and the bandwidths are typical cascade-synthesiser values
# (common practice).
_B_VOWEL = (70.0, 90.0, 140.0, 200.0, 260.0)
# Every phone shares F4–F6 = 3300, 3850, 4900 Hz (before voice scaling).  A cascade of
# all-pole resonators falls by 12 dB/octave per pole above its last pole, whereas a real
# tract keeps resonating about every 1 kHz; four more fixed poles F7–F10 (about 5.9–8.9 kHz,
# the odd quarter-wave resonances of a 17.5 cm tube, with wide bandwidths) stand in for
# Klatt's "higher-pole correction" up to the top ANSI band.
_HIGH_POLES_HZ = (5900.0, 6900.0, 7900.0, 8900.0)
_B_HIGH_HZ = (800.0, 1000.0, 1000.0, 1000.0, 1000.0)  # B6 … B10
_N_FORMANTS = 10
_VOWELS = {
    "i": (270, 2290, 3010), "I": (390, 1990, 2550), "E": (530, 1840, 2480), "ae": (660, 1720, 2410),
    "a": (730, 1090, 2440), "O": (570, 840, 2410), "U": (440, 1020, 2240), "u": (300, 870, 2240),
    "V": (640, 1190, 2390), "@": (500, 1500, 2500),
}
# Consonant loci (F1, F2, F3) by place of articulation (common practice, approximate).
_LOCUS = {
    "labial": (250, 900, 2200), "dental": (300, 1400, 2600), "alveolar": (300, 1700, 2600),
    "postalveolar": (300, 2000, 2500), "velar": (300, 1900, 2100), "glottal": (500, 1500, 2500),
}


@dataclass(frozen=True)
class _Phone:
    kind: str               # vowel, nasal, approximant, fricative, plosive, aspirate
    formants: tuple         # F1..F6 (Hz, adult male)
    bandwidths: tuple       # B1..B5 (Hz; B6..B10 are shared)
    voicing: float          # voicing amplitude target (linear, vowel = 1)
    noise_band_hz: tuple = ()   # frication / burst band-pass edges (Hz, adult male)
    noise_db: float = 0.0       # frication / burst level (dB re /s/)
    duration_s: tuple = (0.06, 0.09)


def _f(f123, f456=(3300.0, 3850.0, 4900.0)) -> tuple:
    return tuple(float(v) for v in f123) + f456


def _build_phones() -> dict:
    p = {}
    for name, f in _VOWELS.items():
        p[name] = _Phone("vowel", _f(f), _B_VOWEL, 1.0, duration_s=(0.07, 0.12))
    nasal_b = (100.0, 300.0, 400.0, 400.0, 500.0)
    p["m"] = _Phone("nasal", _f((250, 1000, 2200)), nasal_b, 0.45)
    p["n"] = _Phone("nasal", _f((250, 1500, 2500)), nasal_b, 0.45)
    p["l"] = _Phone("approximant", _f((360, 1300, 2800)), (80, 120, 200, 250, 300), 0.65, duration_s=(0.04, 0.07))
    p["r"] = _Phone("approximant", _f((350, 1150, 1500)), (80, 120, 150, 250, 300), 0.65, duration_s=(0.04, 0.07))
    p["w"] = _Phone("approximant", _f((300, 700, 2200)), (80, 120, 150, 250, 300), 0.6, duration_s=(0.04, 0.07))
    p["j"] = _Phone("approximant", _f((280, 2200, 3000)), (80, 120, 150, 250, 300), 0.6, duration_s=(0.04, 0.07))
    fb = (200.0, 200.0, 250.0, 300.0, 350.0)
    p["s"] = _Phone("fricative", _f(_LOCUS["alveolar"]), fb, 0.0, (3800.0, 9500.0), 0.0, (0.08, 0.13))
    p["S"] = _Phone("fricative", _f(_LOCUS["postalveolar"]), fb, 0.0, (1900.0, 6500.0), -1.0, (0.08, 0.13))
    p["f"] = _Phone("fricative", _f(_LOCUS["labial"]), fb, 0.0, (1200.0, 10000.0), -12.0, (0.08, 0.12))
    p["T"] = _Phone("fricative", _f(_LOCUS["dental"]), fb, 0.0, (1500.0, 10000.0), -14.0, (0.07, 0.11))
    p["z"] = _Phone("fricative", _f(_LOCUS["alveolar"]), fb, 0.3, (3800.0, 9500.0), -6.0, (0.06, 0.10))
    p["v"] = _Phone("fricative", _f(_LOCUS["labial"]), fb, 0.3, (1200.0, 10000.0), -16.0, (0.05, 0.09))
    p["h"] = _Phone("aspirate", _f(_LOCUS["glottal"]), (150, 180, 250, 300, 350), 0.0, duration_s=(0.05, 0.08))
    # Plosives: noise band and level of the release burst; voicing = voice bar in the closure.
    p["p"] = _Phone("plosive", _f(_LOCUS["labial"]), fb, 0.0, (500.0, 4000.0), -8.0)
    p["t"] = _Phone("plosive", _f(_LOCUS["alveolar"]), fb, 0.0, (2500.0, 8000.0), 0.0)
    p["k"] = _Phone("plosive", _f(_LOCUS["velar"]), fb, 0.0, (1200.0, 3800.0), -3.0)
    p["b"] = _Phone("plosive", _f(_LOCUS["labial"]), fb, 0.12, (500.0, 4000.0), -14.0)
    p["d"] = _Phone("plosive", _f(_LOCUS["alveolar"]), fb, 0.12, (2500.0, 8000.0), -6.0)
    p["g"] = _Phone("plosive", _f(_LOCUS["velar"]), fb, 0.12, (1200.0, 3800.0), -9.0)
    return p


_PHONES = _build_phones()
_VOWEL_NAMES = tuple(_VOWELS)
# Vowel weights: reduced and close vowels are the most frequent in running speech
# (common practice, approximate).
_VOWEL_W = (3, 4, 4, 2, 1, 1, 1, 2, 1, 6)
# Onset and coda inventories with rough frequency weights (common practice for a neutral
# pseudo-language: plosives, nasals, /s/ and liquids are frequent).
_ONSETS = ("p", "t", "k", "b", "d", "g", "m", "n", "s", "S", "f", "T", "z", "v", "h", "l", "r", "w", "j")
_ONSET_W = (5, 8, 6, 4, 5, 3, 5, 5, 7, 2, 3, 2, 2, 2, 3, 4, 4, 3, 2)
_CODAS = ("n", "m", "s", "t", "d", "k", "l", "r", "z", "f", "p")
_CODA_W = (8, 4, 6, 7, 4, 3, 4, 4, 3, 2, 2)
_CLUSTER_AFTER_S = ("p", "t", "k")
_LIQUIDS = ("l", "r")


# --------------------------------------------------------------------------- timeline


@dataclass
class _Seg:
    phone: str
    part: str          # "main", "closure", "burst", "aspiration", "pause"
    start: float
    end: float
    stressed: bool = False
    amp: float = 1.0   # per-syllable intensity factor
    next_vowel: str = "@"


class _Bag:
    """Draws names in fixed proportions: every round of ``sum(weights)`` draws holds each
    name exactly ``weight`` times, in seeded random order.  This keeps the phoneme mix,
    and so the long-term spectrum, steady over short recordings."""

    def __init__(self, names: tuple, weights: tuple, rng: np.random.Generator):
        self.names = names
        self.pool = np.repeat(np.arange(len(names)), weights)
        self.rng = rng
        self.queue: list[int] = []

    def draw(self) -> str:
        if not self.queue:
            self.queue = self.rng.permutation(self.pool).tolist()
        return self.names[self.queue.pop()]


def _timeline(duration_s: float, rng: np.random.Generator) -> tuple[list, list]:
    """Segments and accent times (s) for a recording of ``duration_s``.

    Phrases of 4–11 syllables (about 4 syllables per second) alternate with pauses of
    0.5–1.4 s; the recording starts with 0.25–0.5 s and ends with at least 0.3 s of silence
    (at most a tenth of the duration each, for recordings shorter than 3 s).
    """
    segs: list[_Seg] = []
    accents: list[tuple[float, float]] = []  # (time, size)
    bags = {
        "vowel": _Bag(_VOWEL_NAMES, _VOWEL_W, rng),
        "stressed": _Bag(_VOWEL_NAMES, _VOWEL_W, rng),
        "onset": _Bag(_ONSETS, _ONSET_W, rng),
        "coda": _Bag(_CODAS, _CODA_W, rng),
    }
    # leading and trailing silence, shortened for very short recordings
    t = min(float(rng.uniform(0.25, 0.5)), 0.1 * duration_s)
    end_margin = min(0.3, 0.1 * duration_s)
    while True:
        n_syll = int(rng.integers(4, 12))
        while n_syll > 0:
            phrase, acc, t_end = _phrase(t, n_syll, rng, bags)
            if t_end + end_margin <= duration_s:
                break
            n_syll -= 1
        if n_syll == 0:
            break
        segs.extend(phrase)
        accents.extend(acc)
        t = t_end + float(rng.uniform(0.5, 1.4))
        if t + end_margin >= duration_s:
            break
    return segs, accents


def _phrase(t0: float, n_syll: int, rng: np.random.Generator, bags: dict) -> tuple[list, list, float]:
    segs: list[_Seg] = []
    accents = []
    n_acc = max(1, int(round(n_syll / 3.0)))
    stressed = set(rng.choice(n_syll, size=n_acc, replace=False).tolist())
    t = t0
    for i in range(n_syll):
        st = i in stressed
        final = i == n_syll - 1
        # intensity declines through the phrase, with random syllable-to-syllable variation
        amp = (1.0 - 0.3 * i / max(1, n_syll - 1)) * 10.0 ** (rng.normal(0.0, 2.0) / 20.0) * (1.3 if st else 0.85)
        vowel = bags["stressed" if st else "vowel"].draw()
        onset: list[str] = []
        u = rng.random()
        if u < 0.8:
            onset = [bags["onset"].draw()]
        elif u < 0.9:
            if rng.random() < 0.5:
                onset = ["s", _CLUSTER_AFTER_S[int(rng.integers(3))]]
            else:
                onset = [("p", "t", "k", "b", "d", "g")[int(rng.integers(6))], _LIQUIDS[int(rng.integers(2))]]
        coda = [bags["coda"].draw()] if rng.random() < 0.4 else []
        for k, c in enumerate(onset):
            t = _consonant(segs, c, t, rng, amp, vowel, onset=True, before_vowel=(k == len(onset) - 1))
        lo, hi = (0.13, 0.20) if st else _PHONES[vowel].duration_s
        dur = float(rng.uniform(lo, hi)) * (1.3 if final else 1.0)
        segs.append(_Seg(vowel, "main", t, t + dur, st, amp, vowel))
        if st:
            accents.append((t + 0.5 * dur, float(rng.uniform(0.15, 0.40))))
        t += dur
        for c in coda:
            t = _consonant(segs, c, t, rng, amp, vowel, onset=False, before_vowel=False)
    return segs, accents, t


def _consonant(segs, c, t, rng, amp, vowel, *, onset: bool, before_vowel: bool) -> float:
    ph = _PHONES[c]
    if ph.kind == "plosive":
        closure = float(rng.uniform(0.05, 0.08))
        segs.append(_Seg(c, "closure", t, t + closure, amp=amp, next_vowel=vowel))
        t += closure
        burst = float(rng.uniform(0.008, 0.015))
        segs.append(_Seg(c, "burst", t, t + burst, amp=amp, next_vowel=vowel))
        t += burst
        if onset and before_vowel and ph.voicing == 0.0:
            asp = float(rng.uniform(0.035, 0.06))
            segs.append(_Seg(c, "aspiration", t, t + asp, amp=amp, next_vowel=vowel))
            t += asp
        return t
    lo, hi = ph.duration_s
    dur = float(rng.uniform(lo, hi))
    segs.append(_Seg(c, "main", t, t + dur, amp=amp, next_vowel=vowel))
    return t + dur


# --------------------------------------------------------------------------- synthesis


def _internal_rate(sample_rate_hz: int) -> tuple[int, int]:
    factor = 1 if sample_rate_hz >= 32000 else int(np.ceil(32000.0 / sample_rate_hz))
    return sample_rate_hz * factor, factor


def _segment_formants(seg: _Seg, voice: Voice, effort: Effort) -> np.ndarray:
    """Formant frequencies F1–F10 and bandwidths B1–B10 (20 values) for one segment."""
    if seg.part == "pause":
        ph = _PHONES["@"]
    elif seg.part == "aspiration" or _PHONES[seg.phone].kind == "aspirate":
        ph = _PHONES[seg.next_vowel]  # aspiration is shaped by the following vowel
    else:
        ph = _PHONES[seg.phone]
    f = np.asarray(ph.formants) * voice.formant_scale
    f[0] *= effort.f1_factor
    b = np.asarray(ph.bandwidths, dtype=np.float64)
    if seg.part == "aspiration" or _PHONES[seg.phone].kind == "aspirate":
        b = np.maximum(b, (150.0, 180.0, 250.0, 300.0, 350.0))
    f = np.concatenate([f, np.asarray(_HIGH_POLES_HZ) * voice.formant_scale])
    return np.concatenate([f, b, _B_HIGH_HZ])


def _tracks(segs: list, n: int, fs: int, voice: Voice, effort: Effort):
    """Per-sample voicing and aspiration amplitudes, and formant breakpoints.

    Each segment contributes amplitude breakpoints a ramp ``r`` inside its edges; linear
    interpolation between neighbours gives the transitions.  Phrase edges fall to zero.
    """
    av_t, av_v, ah_t, ah_v = [0.0], [0.0], [0.0], [0.0]
    fm_t: list[float] = []
    fm_v: list[np.ndarray] = []
    for i, s in enumerate(segs):
        ph = _PHONES[s.phone]
        d = s.end - s.start
        r = min(0.012, 0.3 * d)
        joined_before = i > 0 and abs(segs[i - 1].end - s.start) < 1e-9
        joined_after = i + 1 < len(segs) and abs(segs[i + 1].start - s.end) < 1e-9
        if s.part == "main" and ph.kind == "vowel":
            pts = [(s.start + r, 0.75 * s.amp), (s.start + 0.45 * d, s.amp), (s.end - r, 0.7 * s.amp)]
        elif s.part in ("main", "closure") and ph.voicing > 0.0:
            v = s.amp * ph.voicing
            pts = [(s.start + r, v), (s.end - r, v)]
        elif s.part == "burst" and ph.voicing > 0.0:
            pts = [(s.start + r, 0.3 * s.amp), (s.end - r, 0.3 * s.amp)]
        else:
            pts = [(s.start + r, 0.0), (s.end - r, 0.0)]
        if not joined_before:
            pts.insert(0, (s.start, 0.0))
        if not joined_after:
            pts.append((s.end, 0.0))
        for tt, vv in pts:
            av_t.append(tt)
            av_v.append(vv)
        if s.part == "aspiration" or (s.part == "main" and ph.kind == "aspirate"):
            v = 0.35 * s.amp
            for tt, vv in ((s.start, 0.0), (s.start + r, v), (s.end - r, 0.6 * v), (s.end, 0.0)):
                ah_t.append(tt)
                ah_v.append(vv)
        fmt = _segment_formants(s, voice, effort)
        frac = 0.25 if ph.kind == "vowel" else 0.15
        fm_t += [s.start + frac * d, s.end - frac * d]
        fm_v += [fmt, fmt]
    t_end = n / fs
    av_t.append(t_end)
    av_v.append(0.0)
    ah_t.append(t_end)
    ah_v.append(0.0)
    ts = np.arange(n) / fs
    av = np.interp(ts, _monotone(av_t), av_v)
    ah = np.interp(ts, _monotone(ah_t), ah_v)
    return av, ah, np.asarray(fm_t), np.asarray(fm_v)


def _monotone(t: list) -> np.ndarray:
    """Make breakpoint times non-decreasing (adjacent segments share boundary times)."""
    return np.maximum.accumulate(np.asarray(t, dtype=np.float64))


def _pitch(n: int, fs: int, segs: list, accents: list, f0_hz: float, rng: np.random.Generator) -> np.ndarray:
    """Per-sample F0 (Hz): phrase declination, accent peaks, final fall and slow drift."""
    grid_dt = 0.005
    tg = np.arange(0.0, n / fs + grid_dt, grid_dt)
    rel = np.zeros_like(tg)
    starts, ends = _phrases(segs)
    # phrase-to-phrase key changes, drawn from a fixed set in shuffled rounds so every
    # recording has nearly the same F0 distribution
    key_steps = np.array([-0.10, -0.05, 0.0, 0.05, 0.10])
    rounds = -(-max(1, len(starts)) // key_steps.size)
    offsets = np.concatenate([rng.permutation(key_steps) for _ in range(rounds)])[: len(starts)]
    for a, b, off in zip(starts, ends, offsets):
        m = (tg >= a) & (tg <= b)
        pos = (tg[m] - a) / max(b - a, 1e-3)
        # declination +4 % → −18 %, final fall 10 %; with the accents the mean is ≈ 0
        rel[m] += off + 0.04 - 0.22 * pos - 0.10 * np.clip((tg[m] - (b - 0.3)) / 0.3, 0.0, 1.0)
    for ta, size in accents:
        rel += size * np.exp(-0.5 * ((tg - ta) / 0.09) ** 2)
    # random drift (σ = 5 %, new value every 0.12 s, linearly interpolated)
    knots = np.arange(0.0, tg[-1] + 0.12, 0.12)
    rel += np.interp(tg, knots, rng.normal(0.0, 0.05, knots.size))
    return f0_hz * np.exp(np.interp(np.arange(n) / fs, tg, rel))


def _phrases(segs: list) -> tuple[list, list]:
    starts, ends = [], []
    for s in segs:
        if ends and s.start - ends[-1] < 0.2:
            ends[-1] = s.end
        else:
            starts.append(s.start)
            ends.append(s.end)
    return starts, ends


def _glottal_source(f0: np.ndarray, fs: int, effort: Effort, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Rosenberg flow-derivative pulses with jitter and shimmer, and the open-phase gate.

    Returns the source (peak excitation about −1 per pulse) and a 0/1 open-phase mask.
    """
    # Written with few full-length temporaries (in-place steps), which matters for speed.
    phase = np.cumsum(f0)
    phase /= fs
    n_periods = int(phase[-1]) + 2
    jitter = rng.normal(0.0, 0.008, n_periods)           # 0.8 % period-to-period (normal voice)
    shimmer = 10.0 ** (rng.normal(0.0, 0.35, n_periods) / 20.0)  # 0.35 dB
    idx = phase.astype(np.int64)                          # period number before jitter
    f0j = jitter[idx]
    f0j += 1.0
    f0j *= f0
    np.cumsum(f0j, out=phase)
    phase /= fs
    np.copyto(idx, phase, casting="unsafe")               # k, the period number
    phase -= idx                                          # θ, the fraction of the period
    amp = shimmer[np.minimum(idx, n_periods - 1, out=idx)]
    gate = phase < (effort.open_phase + effort.closing_phase)
    table = _pulse_table(effort.open_phase, effort.closing_phase)
    phase *= table.size - 1
    np.copyto(idx, phase, casting="unsafe")
    src = table[idx]
    f0j *= 1.0 / 150.0
    src *= f0j
    src *= amp
    return src, gate


def _pulse_table(tp: float, tn: float, size: int = 8192) -> np.ndarray:
    """One period of the Rosenberg flow derivative, sampled at θ = k/(size−1), as a lookup table.

    Flow: 0.5·(1 − cos(πθ/Tp)) while opening, cos(π(θ−Tp)/(2Tn)) while closing, 0 when
    closed (Rosenberg 1971, from memory).  Scaled so the closing peak is −1.  The closure is
    abrupt (a step in the derivative), which gives the source its −6 dB/octave envelope.
    """
    th = np.arange(size) / (size - 1.0)
    d = np.zeros(size)
    op = th < tp
    cl = (~op) & (th <= tp + tn)
    d[op] = (np.pi / (2.0 * tp)) * np.sin(np.pi * th[op] / tp)
    d[cl] = -(np.pi / (2.0 * tn)) * np.sin(np.pi * (th[cl] - tp) / (2.0 * tn))
    return d * (2.0 * tn / np.pi)


def _resonator_sos(freqs: np.ndarray, bws: np.ndarray, fs: int) -> np.ndarray:
    """Klatt (1980) digital resonators, unity gain at DC, as second-order sections.

    ``freqs`` and ``bws`` have shape (frames, formants); returns (frames, formants, 6).
    """
    r = np.exp(-np.pi * bws / fs)
    c = -(r * r)
    b = 2.0 * r * np.cos(2.0 * np.pi * freqs / fs)
    a0 = 1.0 - b - c
    sos = np.zeros(freqs.shape + (6,))
    sos[..., 0] = a0
    sos[..., 3] = 1.0
    sos[..., 4] = -b
    sos[..., 5] = -c
    return sos


def _vocal_tract(x: np.ndarray, fs: int, fm_t: np.ndarray, fm_v: np.ndarray) -> np.ndarray:
    """Cascade formant filter with coefficients updated every 10 ms; state carries across updates.

    Consecutive frames whose formant frequencies and bandwidths agree within 1 % share one
    filter call, and the filter is not run over silence once its ringing has died away
    (60 ms after the excitation stops), which leaves the output unchanged to within
    rounding but makes the filter cost scale with the number of transitions.
    """
    from scipy import signal

    hop = int(round(0.01 * fs))
    n = x.size
    n_frames = -(-n // hop)
    centres = (np.arange(n_frames) + 0.5) * hop / fs
    nf = _N_FORMANTS
    params = np.empty((n_frames, 2 * nf))
    for j in range(2 * nf):
        params[:, j] = np.interp(centres, fm_t, fm_v[:, j])
    params[:, :nf] = np.minimum(params[:, :nf], 0.45 * fs)
    params[:, nf:] = np.minimum(params[:, nf:], 0.1 * fs)
    sos_all = _resonator_sos(params[:, :nf], params[:, nf:], fs)
    q = np.round(np.log(params) / np.log(1.01)).astype(np.int64)
    same_as_prev = np.zeros(n_frames, dtype=bool)
    same_as_prev[1:] = np.all(q[1:] == q[:-1], axis=1)
    padded = np.zeros(n_frames * hop)
    padded[:n] = x
    active = np.any(padded.reshape(n_frames, hop) != 0.0, axis=1)
    ring_frames = 6
    since_active = np.empty(n_frames, dtype=np.int64)
    last = -10**9
    for i in range(n_frames):
        if active[i]:
            last = i
        since_active[i] = i - last
    quiet = since_active > ring_frames
    y = np.zeros(n)
    zi = np.zeros((nf, 2))
    i = 0
    while i < n_frames:
        j = i + 1
        if quiet[i]:
            while j < n_frames and quiet[j]:
                j += 1
            zi = np.zeros((nf, 2))
        else:
            while j < n_frames and same_as_prev[j] and not quiet[j]:
                j += 1
            a, b = i * hop, min(n, j * hop)
            y[a:b], zi = signal.sosfilt(sos_all[i], x[a:b], zi=zi)
        i = j
    return y


def _frication(segs: list, n: int, fs: int, voice: Voice, effort: Effort, rng: np.random.Generator) -> np.ndarray:
    """Fricative noise and plosive bursts, each through its own band-pass, added in parallel."""
    from scipy import signal

    out = np.zeros(n)
    # white noise with a rate-independent power spectral density
    sigma = 0.18 * np.sqrt(fs / 48000.0) * 10.0 ** (effort.consonant_db / 20.0)
    cache: dict = {}
    lead = int(0.005 * fs)
    for s in segs:
        ph = _PHONES[s.phone]
        if not ph.noise_band_hz or s.part not in ("main", "burst"):
            continue
        lo, hi = (v * voice.formant_scale for v in ph.noise_band_hz)
        hi = min(hi, 0.45 * fs)
        key = (lo, hi)
        if key not in cache:
            cache[key] = signal.butter(2, [lo, hi], btype="bandpass", fs=fs, output="sos")
        a = int(round(s.start * fs))
        b = min(n, int(round(s.end * fs)))
        if b <= a:
            continue
        m = b - a
        noise = signal.sosfilt(cache[key], rng.standard_normal(m + lead))[lead:]
        if s.part == "burst":
            env = np.exp(-np.arange(m) / (0.35 * m))
            level = 10.0 ** ((ph.noise_db + 6.0) / 20.0)
        else:
            r = min(int(0.02 * fs), m // 2)
            env = np.ones(m)
            if r > 0:
                up = 0.5 - 0.5 * np.cos(np.pi * np.arange(r) / r)
                env[:r] = up
                env[m - r:] = up[::-1]
            level = 10.0 ** (ph.noise_db / 20.0)
        out[a:b] += sigma * level * s.amp * env * noise
    return out


def synthesize_speech_raw(
    duration_s: float,
    sample_rate_hz: int,
    *,
    voice: str = "medium",
    effort: str = "normal",
    seed: int = 0,
) -> np.ndarray:
    """The synthesiser's output before the calibration equaliser and level alignment.

    Same arguments as :func:`synthesize_speech`; the level is arbitrary.  Used to derive
    :data:`CALIBRATION_DB` and to report what the equaliser corrects.
    """
    fs_out = validate.sample_rate_hz(sample_rate_hz)
    n_out = validate.duration_samples(duration_s, fs_out, minimum_s=1.0, maximum_s=3600.0)
    _check_choice(voice, VOICES, "voice")
    _check_choice(effort, EFFORTS, "effort")
    if not isinstance(seed, (int, np.integer)) or isinstance(seed, bool) or seed < 0:
        raise SignalValueError(f"seed must be a non-negative whole number, got {seed!r}.")
    v, e = VOICES[voice], EFFORTS[effort]
    fs, factor = _internal_rate(fs_out)
    n = n_out * factor
    rng = np.random.default_rng(np.random.SeedSequence([int(seed), 0x5EEC]))
    segs, accents = _timeline(n_out / fs_out, rng)
    if not segs:
        raise SignalValueError(
            f"duration_s = {duration_s} s is too short for the first syllable of seed {seed}; give a longer duration."
        )
    av, ah, fm_t, fm_v = _tracks(segs, n, fs, v, e)
    f0 = _pitch(n, fs, segs, accents, v.f0_hz * e.f0_factor, rng)
    pulses, open_gate = _glottal_source(f0, fs, e, rng)
    from scipy import signal

    # spectral tilt of the source (one-pole low-pass, impulse-invariant)
    g = np.exp(-2.0 * np.pi * e.tilt_corner_hz / fs)
    pulses = signal.lfilter([1.0 - g], [1.0, -g], pulses)
    noise_sigma = np.sqrt(fs / 48000.0)
    breath = noise_sigma * rng.standard_normal(n)
    # excitation = av·(pulses + 0.02·gated breath) + 0.02·ah·breath, in place
    excitation = np.where(open_gate, breath, 0.0)
    excitation *= 0.02
    excitation += pulses
    excitation *= av
    ah *= 0.02
    ah *= breath
    excitation += ah
    y = _vocal_tract(excitation, fs, fm_t, fm_v)
    y += _frication(segs, n, fs, v, e, rng)
    if factor > 1:
        y = signal.resample_poly(y, 1, factor)[:n_out]
    return y


def calibration_fir(gains_db, sample_rate_hz: int) -> np.ndarray:
    """Linear-phase FIR equaliser through one-third-octave gains.

    The gain curve passes through ``gains_db`` at :data:`THIRD_OCTAVE_CENTRES_HZ`, is
    interpolated linearly in dB against log frequency, and is held constant below 160 Hz
    and above 8 kHz (bands at or above the Nyquist frequency are ignored).  Designed by
    frequency sampling with a Hann window (``scipy.signal.firwin2``), odd length about
    ``sample_rate_hz / 16`` taps (a resolution of about 64 Hz, enough for the 160 Hz band).

    Parameters
    ----------
    gains_db : sequence of 18 float
    sample_rate_hz : int

    Returns
    -------
    numpy.ndarray
        Symmetric FIR taps; apply with ``scipy.signal.oaconvolve(x, h, mode="same")`` for
        zero delay.
    """
    from scipy import signal

    g = np.asarray(gains_db, dtype=np.float64)
    if g.shape != THIRD_OCTAVE_CENTRES_HZ.shape or not np.all(np.isfinite(g)):
        raise SignalValueError("gains_db must hold 18 finite gains, one per ANSI S3.5 Table 3 band.")
    nyq = sample_rate_hz / 2.0
    keep = THIRD_OCTAVE_CENTRES_HZ < nyq
    fc, gk = THIRD_OCTAVE_CENTRES_HZ[keep], g[keep]
    numtaps = int(sample_rate_hz // 16) | 1
    freqs = np.concatenate([[0.0], np.geomspace(20.0, nyq, 512)])
    freqs[-1] = nyq
    gain_db = np.interp(np.log2(np.maximum(freqs, 20.0)), np.log2(fc), gk)
    return signal.firwin2(numtaps, freqs, 10.0 ** (gain_db / 20.0), fs=sample_rate_hz, window="hann")


def synthesize_speech(
    duration_s: float,
    sample_rate_hz: int,
    *,
    voice: str = "medium",
    effort: str = "normal",
    seed: int = 0,
    active_level_dbfs: float = DEFAULT_ACTIVE_LEVEL_DBFS,
) -> np.ndarray:
    """Synthetic running speech, calibrated in spectrum and level.

    Parameters
    ----------
    duration_s : float
        1–3600 s.  The recording starts and ends with silence.
    sample_rate_hz : int
        8000–192000 Hz.
    voice : {"low", "medium", "high"}
        F0 about 100, 150 or 220 Hz with matching formant scaling (:data:`VOICES`).
    effort : {"normal", "raised", "loud", "shout"}
        Vocal effort: higher F0, flatter spectrum, and the matching ANSI S3.5-1997 Table 3
        spectrum as calibration target.
    seed : int
        Everything (text, timing, pitch, jitter, noise) follows from it; equal arguments
        give identical samples.
    active_level_dbfs : float
        ITU-T P.56 method B active level of the result (default −26 dBFS).

    Returns
    -------
    numpy.ndarray
        1-D float64, ``round(duration_s * sample_rate_hz)`` samples.  Samples can exceed
        ±1.0 if ``active_level_dbfs`` is set high (speech peaks lie about 15–20 dB above
        the active level).

    Notes
    -----
    Properties checked by the tests (medium voice): long-term one-third-octave band levels
    within ±3 dB of ANSI S3.5-1997 Table 3 (U + Δ, after level alignment) in every band
    160–8000 Hz; broadband intensity-envelope modulation spectrum peaking between 2 and
    6 Hz; P.56 activity factor between 0.5 and 0.85.

    Raises
    ------
    SignalValueError
        Unknown voice or effort, a bad duration, rate, seed or level.

    References
    ----------
    ANSI S3.5-1997, Table 3 (standard speech spectrum); ITU-T P.56 (2011) method B;
    D. H. Klatt, "Software for a cascade/parallel formant synthesizer", JASA 67(3), 1980
    (digital resonator; from memory); A. E. Rosenberg, "Effect of glottal pulse shape on
    the quality of natural vowels", JASA 49, 1971 (from memory).
    """
    from scipy import signal

    from ..measurement.levels import measure_levels

    lvl = float(active_level_dbfs)
    if not np.isfinite(lvl) or not -100.0 <= lvl <= 0.0:
        raise SignalValueError(f"active_level_dbfs must be from -100 to 0 dBFS, got {active_level_dbfs}.")
    raw = synthesize_speech_raw(duration_s, sample_rate_hz, voice=voice, effort=effort, seed=seed)
    fs = int(sample_rate_hz)
    target = ansi_speech_band_levels_db(effort)
    if voice != "medium":
        target = target + np.asarray(VOICE_DEVIATION_DB[voice][effort])
    gains = _equaliser_gains(raw, fs, target, centre_db=np.asarray(CALIBRATION_DB[effort]),
                             limit_db=MAX_RENDITION_CORRECTION_DB)
    y = signal.oaconvolve(raw, calibration_fir(gains, fs), mode="same")
    active = measure_levels(y, fs).active_level_dbfs
    if active is None or not np.isfinite(active):  # pragma: no cover - the timeline always has speech
        raise SignalValueError("the synthesised signal has no measurable active speech level.")
    y *= 10.0 ** ((lvl - active) / 20.0)
    return y


def _band_limits_hz() -> tuple[np.ndarray, np.ndarray]:
    """Base-10 one-third-octave band limits of the Table 3 bands (IEC 61260-1)."""
    table = band_procedure("one-third-octave")
    return np.asarray(table.lower_hz), np.asarray(table.upper_hz)


def _band_levels_from_psd(psd: np.ndarray, df_hz: float) -> np.ndarray:
    """Band levels (dB) from a one-sided PSD on bins k·df: the sum of the bins in each band."""
    lo, hi = _band_limits_hz()
    k_lo = np.minimum(np.ceil(lo / df_hz).astype(np.int64), psd.size)
    k_hi = np.minimum(np.ceil(hi / df_hz).astype(np.int64), psd.size)
    csum = np.concatenate([[0.0], np.cumsum(psd)])
    power = (csum[np.maximum(k_hi, k_lo)] - csum[k_lo]) * df_hz
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(power)


def _power_per_hz(x: np.ndarray, fs: int) -> np.ndarray:
    """Long-term power spectrum on 1 Hz bins 0 … fs/2 (relative scale).

    The periodogram of the whole signal (one FFT, rectangular window: the recording starts
    and ends in silence, so there is no edge leakage), summed into 1 Hz bins.  Band sums of
    it are the band powers by Parseval's theorem.
    """
    spec = np.fft.rfft(x)
    power = spec.real**2 + spec.imag**2
    k = (np.arange(power.size) * (fs / x.size)).astype(np.int64)
    return np.bincount(k, weights=power, minlength=fs // 2 + 1)[: fs // 2 + 1]


def _equaliser_gains(
    x: np.ndarray,
    fs: int,
    target_band_db: np.ndarray,
    *,
    centre_db: np.ndarray,
    limit_db: float,
    iterations: int = 3,
) -> np.ndarray:
    """One-third-octave gains whose :func:`calibration_fir` puts ``x`` on ``target_band_db``.

    The long-term spectrum of ``x`` is measured once (:func:`_power_per_hz`); the
    equalised band levels are predicted from it and the FIR's own response, and the gains
    refined ``iterations`` times, so the FIR's smoothing between band centres is allowed
    for.  Bands reaching the Nyquist frequency are left at ``centre_db``; gains
    stay within ``limit_db`` of ``centre_db``.  Levels are compared after alignment (zero
    mean over the usable bands).
    """
    psd = _power_per_hz(x, fs)
    _, hi = _band_limits_hz()
    usable = hi < 0.5 * fs
    gains = np.array(centre_db, dtype=np.float64)
    for _ in range(iterations):
        h = calibration_fir(gains, fs)
        resp = np.abs(np.fft.rfft(h, n=fs)) ** 2  # on the same 1 Hz grid
        levels = _band_levels_from_psd(psd * resp[: psd.size], 1.0)
        dev = levels - target_band_db
        ok = usable & np.isfinite(dev)
        if not ok.any():
            break
        dev = dev - dev[ok].mean()
        gains[ok] -= dev[ok]
        gains = np.clip(gains, centre_db - limit_db, centre_db + limit_db)
    return gains


def derive_calibration_tables(
    *,
    duration_s: float = DERIVATION_DURATION_S,
    sample_rate_hz: int = DERIVATION_RATE_HZ,
    seed: int = DERIVATION_SEED,
) -> tuple[dict, dict]:
    """Re-derive :data:`CALIBRATION_DB` and :data:`VOICE_DEVIATION_DB` (maintenance tool).

    For each effort the raw medium voice's equaliser gains onto ANSI S3.5-1997 Table 3 are
    found as in :func:`synthesize_speech` (without a limit); the low and high voices' raw
    renditions are then measured through that equaliser and their aligned deviation from
    Table 3 recorded.  Deterministic; takes several seconds.

    Returns
    -------
    (calibration_db, voice_deviation_db)
        Dicts shaped like the two tables, values rounded to 0.01 dB.
    """
    from scipy import signal

    fs = int(sample_rate_hz)
    _, hi = _band_limits_hz()
    usable = hi < 0.5 * fs
    cal: dict = {}
    dev: dict = {"low": {}, "high": {}}
    for effort in EFFORTS:
        target = ansi_speech_band_levels_db(effort)
        raw = synthesize_speech_raw(duration_s, fs, voice="medium", effort=effort, seed=seed)
        g = _equaliser_gains(raw, fs, target, centre_db=np.zeros(target.size), limit_db=60.0, iterations=5)
        g = g - g.mean()
        cal[effort] = tuple(round(float(v), 2) for v in g)
        h = calibration_fir(cal[effort], fs)
        for voice in ("low", "high"):
            raw_v = synthesize_speech_raw(duration_s, fs, voice=voice, effort=effort, seed=seed)
            y = signal.oaconvolve(raw_v, h, mode="same")
            d = _band_levels_from_psd(_power_per_hz(y, fs), 1.0) - target
            d = np.where(usable, d - d[usable].mean(), 0.0)
            dev[voice][effort] = tuple(round(float(v), 2) for v in d)
    return cal, dev
