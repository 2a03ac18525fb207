"""Test material from outside talkers: speech synthesizers the project does not own, passed
through filters whose exact response scipy knows, with noise, hum and tones added.

Used by the tests (``tests/test_outside_speech.py``) and by ``benchmarks/bench_edges.py``.

Talkers
-------
* espeak-ng (formant synthesis) voices and variants, rendered at 22.05 kHz;
* flite voices ``slt``, ``awb``, ``rms`` (16 kHz) and ``kal`` (8 kHz) / ``kal16`` (16 kHz);
* festival ``text2wave`` with the ``kal_diphone`` voice (16 kHz, diphone concatenation);
* the project's own synthetic speech (:func:`voiceband.synth.speech.synthesize_speech`);
* one human talker: the spoken channel names that Debian's ``alsa-utils`` installs for
  ``speaker-test`` (``/usr/share/sounds/alsa/*.wav``, 48 kHz, 16 bit; "Front Left" ... "Rear
  Right", about 11 s of speech in all; not bundled, read where the package put them).

Each sentence is rendered on its own and the sentences are joined with pauses of known
length, as a talker's phrases are.  A missing program raises :class:`MissingTalker`
(tests that need one fail; they never skip).  Rendered speech is cached as ``.npy`` in a
directory the caller gives (one per test session).

Truth
-----
* Edges: the -10 dB points of the *digital* filter actually applied, relative to the
  filter's largest gain, found on its exact response (``scipy.signal.sosfreqz``) refined
  by bisection.
* SNR: the clean (filtered) speech's ITU-T P.56 active level minus the RMS level of the
  noise added (both dBFS, 0 dBFS = full-scale square wave).  The P.56 level comes from
  :func:`voiceband.measurement.levels.measure_levels`, which matches an independent
  implementation within 0.01 dB on clean speech.
"""

from __future__ import annotations

import hashlib
import math
import os
import shutil
import subprocess
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Optional

import numpy as np
import soundfile as sf

#: Sentences of our own (plain running English, 5-9 words, mixed voiced and fricative sounds).
SENTENCES = (
    "The radio on the bench hums when the lights come on.",
    "Seven fresh batteries sat in a shallow cardboard box.",
    "She checked the meter twice before she keyed the set.",
    "A quiet voice carries further than a shout on the air.",
    "Thick fog rolled across the harbour late that evening.",
    "Please switch the filter off and listen to the hiss.",
)
#: Pauses placed before, between and after the sentences (s), cycled.
PAUSES_S = (0.6, 0.45, 0.8, 0.5, 0.7, 0.55, 0.9)


class MissingTalker(RuntimeError):
    """A speech synthesizer program needed for a talker is not installed."""


#: The apt line that installs every outside talker (Debian package names).
INSTALL_HINT = (
    "command -v espeak-ng >/dev/null && command -v flite >/dev/null && command -v text2wave >/dev/null "
    "&& [ -f /usr/share/sounds/alsa/Front_Left.wav ] "
    "|| (apt-get update && apt-get install -y espeak-ng flite festival festvox-kallpc16k alsa-utils)"
)


@dataclass(frozen=True)
class Talker:
    """One outside (or the project's own) talker.

    ``engine`` is ``"espeak-ng"``, ``"flite"``, ``"festival"`` or ``"synthetic"``;
    ``voice`` the engine's voice name.
    """

    engine: str
    voice: str

    @property
    def name(self) -> str:
        return f"{self.engine}:{self.voice}"


ESPEAK_TALKERS = (
    Talker("espeak-ng", "en-us"),
    Talker("espeak-ng", "en+m3"),
    Talker("espeak-ng", "en+f2"),
    Talker("espeak-ng", "en-gb-scotland+f4"),
)
FLITE_TALKERS = (
    Talker("flite", "slt"),
    Talker("flite", "awb"),
    Talker("flite", "rms"),
    Talker("flite", "kal16"),
)
FESTIVAL_TALKERS = (Talker("festival", "kal_diphone"),)
SYNTHETIC_TALKERS = (Talker("synthetic", "low"), Talker("synthetic", "high"))
HUMAN_TALKERS = (Talker("human", "alsa-utils"),)
ALL_TALKERS = ESPEAK_TALKERS + FLITE_TALKERS + FESTIVAL_TALKERS + SYNTHETIC_TALKERS + HUMAN_TALKERS

_PROGRAM = {"espeak-ng": "espeak-ng", "flite": "flite", "festival": "text2wave"}

#: The human talker's recordings (Debian package alsa-utils), in the order they are joined.
ALSA_SOUNDS_DIR = Path("/usr/share/sounds/alsa")
ALSA_WORDS = ("Front_Left", "Front_Center", "Front_Right", "Side_Left", "Side_Right",
              "Rear_Left", "Rear_Center", "Rear_Right")


def require_programs(engines=("espeak-ng", "flite", "festival", "human")) -> None:
    """Raise :class:`MissingTalker` naming the first engine whose program (or, for the human
    talker, recording) is not installed."""
    for e in engines:
        if e == "human":
            missing = [w for w in ALSA_WORDS if not (ALSA_SOUNDS_DIR / f"{w}.wav").is_file()]
            if missing:
                raise MissingTalker(f"{ALSA_SOUNDS_DIR / missing[0]}.wav is not installed (needed for the human "
                                    f"talker); install with: {INSTALL_HINT}")
            continue
        prog = _PROGRAM[e]
        if shutil.which(prog) is None:
            raise MissingTalker(f"'{prog}' is not installed (needed for the {e} talkers); install with: {INSTALL_HINT}")


def _render_sentence(talker: Talker, text: str, out: Path) -> None:
    if talker.engine == "espeak-ng":
        cmd = ["espeak-ng", "-v", talker.voice, "-s", "160", "-w", str(out), text]
        inp = None
    elif talker.engine == "flite":
        cmd = ["flite", "-voice", talker.voice, "-t", text, "-o", str(out)]
        inp = None
    elif talker.engine == "festival":
        cmd = ["text2wave", "-o", str(out), "-eval", f"(voice_{talker.voice})"]
        inp = text.encode()
    else:
        raise ValueError(f"no outside renderer for {talker.engine!r}")
    require_programs((talker.engine,))
    r = subprocess.run(cmd, input=inp, capture_output=True, timeout=60)
    if r.returncode != 0 or not out.exists() or out.stat().st_size < 100:
        raise MissingTalker(f"{talker.name} did not render ({r.returncode}): {r.stderr.decode(errors='replace')[:200]}")


def default_cache_dir() -> Path:
    d = Path(tempfile.gettempdir()) / f"voiceband-outside-{os.getuid()}"
    d.mkdir(exist_ok=True)
    return d


def render_talker(talker: Talker, *, sentences: int = 4, cache_dir: Optional[Path] = None) -> tuple[np.ndarray, int]:
    """Running speech of ``sentences`` sentences with pauses: (float64 samples, native rate).

    Peak-normalised to 0.5 of full scale (the level is set later by the case)."""
    cache_dir = Path(cache_dir) if cache_dir is not None else default_cache_dir()
    key = hashlib.sha1(f"{talker.name}|{sentences}|{SENTENCES}|{PAUSES_S}".encode()).hexdigest()[:12]
    npy = cache_dir / f"{talker.engine}-{talker.voice.replace('+', '_')}-{key}.npy"
    rate_file = npy.with_suffix(".rate")
    if npy.exists() and rate_file.exists():
        return np.load(npy), int(rate_file.read_text())
    if talker.engine == "synthetic":
        from voiceband.synth.speech import synthesize_speech

        fs = 48000
        x = synthesize_speech(3.0 * sentences, fs, voice=talker.voice, seed=sentences)
    elif talker.engine == "human":
        # Every word, whatever ``sentences`` asks: there are only about 11 s of them.
        require_programs(("human",))
        x, fs = [], None
        for i, w in enumerate(ALSA_WORDS):
            y, r = sf.read(str(ALSA_SOUNDS_DIR / f"{w}.wav"), dtype="float64", always_2d=True)
            if fs is None:
                fs = r
            elif r != fs:
                raise MissingTalker(f"{w}.wav is at {r} Hz, the others at {fs} Hz")
            x += [np.zeros(int(PAUSES_S[i % len(PAUSES_S)] * fs)), y[:, 0]]
        x.append(np.zeros(int(PAUSES_S[len(ALSA_WORDS) % len(PAUSES_S)] * fs)))
        x = np.concatenate(x)
    else:
        parts = []
        fs = None
        with tempfile.TemporaryDirectory(dir=cache_dir) as td:
            for i in range(sentences):
                wav = Path(td) / f"s{i}.wav"
                _render_sentence(talker, SENTENCES[i % len(SENTENCES)], wav)
                y, r = sf.read(str(wav), dtype="float64", always_2d=True)
                if fs is None:
                    fs = r
                elif r != fs:
                    raise MissingTalker(f"{talker.name} changed its sample rate ({fs} then {r})")
                parts.append(y[:, 0])
        x = []
        for i, y in enumerate(parts):
            x.append(np.zeros(int(PAUSES_S[i % len(PAUSES_S)] * fs)))
            x.append(y)
        x.append(np.zeros(int(PAUSES_S[len(parts) % len(PAUSES_S)] * fs)))
        x = np.concatenate(x)
    x = 0.5 * x / np.max(np.abs(x))
    np.save(npy, x)
    rate_file.write_text(str(int(fs)))
    return x, int(fs)


def resample(x: np.ndarray, from_hz: int, to_hz: int) -> np.ndarray:
    """Polyphase resampling (scipy.signal.resample_poly, Kaiser window)."""
    from scipy.signal import resample_poly

    if from_hz == to_hz:
        return np.asarray(x, dtype=float)
    g = math.gcd(int(from_hz), int(to_hz))
    return resample_poly(x, int(to_hz) // g, int(from_hz) // g)


# --------------------------------------------------------------------------------------
# Filters with exact responses
# --------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Channel:
    """A band-pass made of a high-pass and a low-pass section.

    ``kind``: ``"butter"`` (Butterworth), ``"cheby1"`` (Chebyshev type I, 0.5 dB ripple) or
    ``"rc"`` (first-order RC sections; ``order`` must be 1).  ``order`` applies to each side.
    """

    kind: str
    order: int
    low_hz: float
    high_hz: float

    @property
    def name(self) -> str:
        return f"{self.kind}{self.order} {self.low_hz:g}-{self.high_hz:g}"

    def sos(self, fs: int) -> np.ndarray:
        from scipy import signal

        secs = []
        for fc, btype in ((self.low_hz, "highpass"), (self.high_hz, "lowpass")):
            if self.kind == "butter":
                secs.append(signal.butter(self.order, fc, btype=btype, fs=fs, output="sos"))
            elif self.kind == "cheby1":
                secs.append(signal.cheby1(self.order, 0.5, fc, btype=btype, fs=fs, output="sos"))
            elif self.kind == "rc":
                # First-order RC: H(s) = s/(s + wc) or wc/(s + wc), bilinear with pre-warping at fc.
                wc = 2 * np.pi * fc
                b, a = ([1.0, 0.0], [1.0, wc]) if btype == "highpass" else ([wc], [1.0, wc])
                num, den = signal.bilinear(b, a, fs=fs * (np.pi * fc / fs) / np.tan(np.pi * fc / fs))
                secs.append(signal.tf2sos(num, den))
            else:
                raise ValueError(f"unknown filter kind {self.kind!r}")
        return np.vstack(secs)

    def response_db(self, freqs_hz: np.ndarray, fs: int) -> np.ndarray:
        """Exact magnitude response of the digital filter (dB) at ``freqs_hz``."""
        from scipy.signal import sosfreqz

        _, h = sosfreqz(self.sos(fs), worN=np.asarray(freqs_hz, dtype=float), fs=fs)
        return 20 * np.log10(np.maximum(np.abs(h), 1e-30))

    def edges_hz(self, fs: int, drop_db: float = 10.0) -> tuple[Optional[float], Optional[float]]:
        """The -``drop_db`` points relative to the largest gain (None: not below Nyquist)."""
        f = np.geomspace(5.0, fs / 2 * 0.9999, 20000)
        r = self.response_db(f, fs)
        i_max = int(np.argmax(r))
        thr = r[i_max] - drop_db

        def refine(a, b):
            ra = self.response_db(np.array([a]), fs)[0] - thr
            for _ in range(60):
                m = math.sqrt(a * b)
                rm = self.response_db(np.array([m]), fs)[0] - thr
                if (rm > 0) == (ra > 0):
                    a, ra = m, rm
                else:
                    b = m
            return math.sqrt(a * b)

        low = high = None
        below = np.flatnonzero(r[:i_max] < thr)
        if below.size:
            j = below[-1]
            low = refine(f[j], f[j + 1])
        above = np.flatnonzero(r[i_max:] < thr)
        if above.size:
            j = i_max + above[0]
            high = refine(f[j - 1], f[j])
        return low, high

    def apply(self, x: np.ndarray, fs: int) -> np.ndarray:
        from scipy.signal import sosfilt

        return sosfilt(self.sos(fs), x)


# --------------------------------------------------------------------------------------
# Cases
# --------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Case:
    """One recording to analyse, and its truth."""

    talker: str
    sample_rate_hz: int
    channel: Optional[Channel]
    snr_db: Optional[float]  # None: no noise added
    noise: str  # "white", "pink" or "none"
    extras: tuple  # ("hum50",), ("ctcss100.0",), ("tones400+1800",) ...
    samples: np.ndarray
    clean_active_level_dbfs: float
    noise_rms_dbfs: Optional[float]
    true_low_hz: Optional[float]
    true_high_hz: Optional[float]
    source_rate_hz: int

    @property
    def true_snr_db(self) -> Optional[float]:
        if self.noise_rms_dbfs is None:
            return None
        return self.clean_active_level_dbfs - self.noise_rms_dbfs


#: Pink noise starts here (Hz): recorders and sound cards block lower frequencies.
PINK_LOW_HZ = 50.0


def _pink(n: int, fs: int, rng: np.random.Generator) -> np.ndarray:
    # 1/f power from PINK_LOW_HZ to Nyquist, by shaping white noise in the frequency domain.
    spec = np.fft.rfft(rng.standard_normal(n))
    f = np.fft.rfftfreq(n, 1.0 / fs)
    gain = np.where(f >= PINK_LOW_HZ, 1.0 / np.sqrt(np.maximum(f, PINK_LOW_HZ)), 0.0)
    return np.fft.irfft(spec * gain, n)


def make_case(
    talker: Talker,
    sample_rate_hz: int,
    channel: Optional[Channel],
    *,
    snr_db: Optional[float] = None,
    noise: str = "white",
    extras: tuple = (),
    active_level_dbfs: float = -26.0,
    seed: int = 1,
    sentences: int = 4,
    cache_dir: Optional[Path] = None,
) -> Case:
    """Render, resample, filter, set level, add noise/hum/tones; return the case with its truth.

    ``extras`` items: ``"hum50"`` / ``"hum60"`` (mains comb, fundamental 30 dB below the
    speech, harmonics per :data:`voiceband.synth.noise.DEFAULT_HUM_HARMONICS_DB`),
    ``"ctcss<f>"`` (a sine at f Hz, 18 dB below the speech active level), ``"tones<a>+<b>"``
    (two sines, each 10 dB below the speech), ``"tone<f>"`` (one sine at 0 dB re speech).
    """
    from voiceband.measurement.levels import measure_levels

    x, fs0 = render_talker(talker, sentences=sentences, cache_dir=cache_dir)
    x = resample(x, fs0, sample_rate_hz)
    fs = sample_rate_hz
    if channel is not None:
        x = channel.apply(x, fs)
        low, high = channel.edges_hz(fs)
    else:
        low = high = None
    lv = measure_levels(x, fs).active_level_dbfs
    x = x * 10 ** ((active_level_dbfs - lv) / 20)
    clean_level = measure_levels(x, fs).active_level_dbfs
    rng = np.random.default_rng(seed)
    n = x.size
    y = x.copy()
    noise_rms = None
    if snr_db is not None and noise != "none":
        w = rng.standard_normal(n) if noise == "white" else _pink(n, fs, rng)
        w *= 10 ** ((clean_level - snr_db) / 20) / np.sqrt(np.mean(w * w))
        noise_rms = 10 * math.log10(np.mean(w * w))
        y = y + w
    t = np.arange(n) / fs
    for e in extras:
        if e.startswith("hum"):
            from voiceband.synth.noise import mains_hum

            y = y + mains_hum(n / fs, fs, mains_hz=float(e[3:]), level_dbfs=clean_level - 30.0, seed=seed)[:n]
        elif e.startswith("ctcss"):
            f = float(e[5:])
            y = y + math.sqrt(2) * 10 ** ((clean_level - 18.0) / 20) * np.sin(2 * np.pi * f * t)
        elif e.startswith("tones"):
            for f in e[5:].split("+"):
                y = y + math.sqrt(2) * 10 ** ((clean_level - 10.0) / 20) * np.sin(2 * np.pi * float(f) * t)
        elif e.startswith("tone"):
            y = y + math.sqrt(2) * 10 ** (clean_level / 20) * np.sin(2 * np.pi * float(e[4:]) * t)
        else:
            raise ValueError(f"unknown extra {e!r}")
    return Case(
        talker=talker.name,
        sample_rate_hz=fs,
        channel=channel,
        snr_db=snr_db,
        noise=noise if snr_db is not None else "none",
        extras=tuple(extras),
        samples=y,
        clean_active_level_dbfs=float(clean_level),
        noise_rms_dbfs=noise_rms,
        true_low_hz=low,
        true_high_hz=high,
        source_rate_hz=fs0,
    )


def edge_truth_valid(case: Case) -> tuple[bool, bool]:
    """Whether the low / high truth can be seen in this talker's speech at all.

    The high edge must lie below 0.45 x the talker's native rate (no speech above the
    synthesizer's own Nyquist) and below 0.95 x the case's Nyquist.
    """
    hi_ok = case.true_high_hz is not None and case.true_high_hz < min(
        0.45 * case.source_rate_hz, 0.95 * case.sample_rate_hz / 2
    )
    lo_ok = case.true_low_hz is not None
    return lo_ok, hi_ok
