"""Recommendations in plain words, with their numbers, from one analysis and a service profile.

Pure functions: they read an :class:`~voiceband.results.AnalysisResult`, a
:class:`~voiceband.profiles.Profile` and its verdicts, and return frozen
:class:`Recommendation` records.  The cutoffs come from :func:`search_cutoffs`, which runs the design
bench's cutoff sweep (:func:`voiceband.design.sweep.sweep_cutoffs`, the SII band-gain model) on this
talker's own long-term speech spectrum with white channel noise at a stated channel SNR in the
service's receive passband: a weak-signal contact, where a transmitter's limited power is better
spent in the bands that carry intelligibility.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Optional, Sequence

import numpy as np

from .cautions import TRANSMITTER_CAUTION
from .profiles import Profile
from .profiles.verdicts import Verdict
from .results import AnalysisResult

__all__ = [
    "Recommendation",
    "CutoffSearch",
    "recommendations",
    "search_cutoffs",
    "talker_sii_spectrum_db",
    "sii_at_channel_snr",
    "power_fraction_below",
    "importance_fraction_below",
    "SEARCH_CHANNEL_SNR_DB",
    "FILTER_ORDER",
    "SPEECH_PEAK_FACTOR_DB",
]

#: Channel SNR of the cutoff search (dB): a weak but workable contact (common practice).
SEARCH_CHANNEL_SNR_DB = 6.0
#: Order of the Butterworth high-pass and low-pass the search models (a common 4-pole filter board).
FILTER_ORDER = 4
#: Peak of running speech above its P.56 active level, dB: about 12 dB in ~125 ms windows
#: (Sivian & White; Cox et al. 1988) and 15-20 dB sample by sample (common practice); the lower
#: sample figure sets how far below the clip level the active level should sit.
SPEECH_PEAK_FACTOR_DB = 15.0


@dataclass(frozen=True)
class Recommendation:
    """One thing to change, in plain words with its numbers.

    Attributes
    ----------
    code : str
        Stable identifier (``high_pass``, ``low_pass``, ``gain``, ``hum``, ``noise``, ``level``,
        ``pre_emphasis``, ``review`` for any other check that does not pass, ``none``).
    text : str
        One or two sentences for the operator.
    """

    code: str
    text: str


@dataclass(frozen=True)
class CutoffSearch:
    """Result of :func:`search_cutoffs`.

    Attributes
    ----------
    high_pass_hz, low_pass_hz : float
        The best corner frequencies found (Hz).
    sii_best : float
        SII at the search's channel SNR with the best filter added.
    sii_widest : float
        SII at the same channel SNR of the widest candidate (the lowest high-pass and the service's
        upper limit): what the service's band alone gives.
    channel_snr_db : float
    receive_band_hz : tuple of float
    method : str
        What was searched, in words.
    """

    high_pass_hz: float
    low_pass_hz: float
    sii_best: float
    sii_widest: float
    channel_snr_db: float
    receive_band_hz: tuple[float, float]
    method: str


def talker_sii_spectrum_db(result: AnalysisResult) -> tuple[np.ndarray, Optional[np.ndarray]]:
    """The recording's speech and pause spectra in the 18 SII bands, dB SPL per Hz.

    The mapping of :func:`voiceband.intelligibility.recording_intelligibility`: the overall speech
    level set to 62.35 dB SPL (ANSI S3.5-1997 clause 3.40, normal effort at 1 m), the noise with
    the same offset, band levels to spectrum levels with the Table 3 bandwidth adjustments.
    """
    from .intelligibility.tables import OVERALL_SPEECH_LEVEL_DB_SPL, band_procedure

    sp = result.spectrum
    bands = np.asarray(sp.bands_hz, dtype=float)
    speech = np.array([-np.inf if v is None else v for v in sp.speech_band_db], dtype=float)
    noise = None
    if sp.noise_band_db and any(v is not None for v in sp.noise_band_db):
        noise = np.array([-np.inf if v is None else v for v in sp.noise_band_db], dtype=float)
    table = band_procedure("one-third-octave")
    with np.errstate(divide="ignore"):
        total = 10.0 * np.log10(np.sum(10.0 ** (speech / 10.0)))
    offset = OVERALL_SPEECH_LEVEL_DB_SPL["normal"] - total

    def pick(levels: np.ndarray) -> np.ndarray:
        out = np.full(table.centres_hz.size, -np.inf)
        for i, c in enumerate(table.centres_hz):
            hit = np.flatnonzero(np.isclose(bands, c, rtol=0.02))
            if hit.size:
                out[i] = levels[hit[0]]
        return out + offset - table.bandwidth_adjustment_db

    return pick(speech), (None if noise is None else pick(noise))


def sii_at_channel_snr(result: AnalysisResult, snr_db: float = SEARCH_CHANNEL_SNR_DB,
                       *, receive_band_hz: Optional[tuple[float, float]] = None) -> Optional[float]:
    """SII of the recording with white channel noise at ``snr_db`` (its own noise kept).

    ``receive_band_hz=None`` spreads the channel noise over the whole SII range, as the analysis's
    ``sii_vs_channel_snr`` curve does.  ``None`` when the SII is not measurable.
    """
    if result.intelligibility is None:
        return None
    from .intelligibility import sii_vs_channel_snr

    speech, noise = talker_sii_spectrum_db(result)
    if not np.any(np.isfinite(speech)):
        return None
    return float(sii_vs_channel_snr((float(snr_db),), speech_db=speech, noise_db=noise,
                                    receive_band_hz=receive_band_hz)[0].sii)


def search_cutoffs(result: AnalysisResult, profile: Profile, spectrum: Any, *,
                   channel_snr_db: float = SEARCH_CHANNEL_SNR_DB,
                   high_pass_candidates_hz: Optional[Sequence[float]] = None,
                   low_pass_candidates_hz: Optional[Sequence[float]] = None) -> Optional[CutoffSearch]:
    """Best high-pass and low-pass corners for this talker and service: the design bench's cutoff sweep
    (:func:`voiceband.design.sweep.sweep_cutoffs`) run on this talker's own long-term speech spectrum.

    The talker's speech PSD (``spectrum``, the analysis's
    :class:`~voiceband.measurement.spectrum.SpectrumResult`) becomes the sweep's speech model
    (:func:`voiceband.design.speech.speech_from_psd`); every candidate is a ``FILTER_ORDER``-pole
    Butterworth high-pass and low-pass, scored by its SII (ANSI S3.5-1997) with white channel noise at
    ``channel_snr_db`` in the profile's passband (the receiver), within the profile's occupied-bandwidth
    limit when it has one.  High-pass corners run from 50 Hz to 1.5 times the profile's lower limit
    (higher ones would thin the voice more than the service's band implies), low-pass corners up to the
    profile's upper limit.  ``sii_widest`` is the score of the widest candidate (the lowest high-pass and
    the service's upper limit): what a filter adds over the service's band alone.

    Returns ``None`` when there is no speech spectrum, it stops below 4 kHz, or no pair fits.
    """
    from .design.speech import speech_from_psd
    from .design.sweep import sweep_cutoffs
    from .errors import MeasurementError

    if spectrum is None or spectrum.speech_psd_fs2_per_hz is None:
        return None
    try:
        model = speech_from_psd(Path(result.input.path).name, spectrum.freqs_hz, spectrum.speech_psd_fs2_per_hz)
    except MeasurementError:
        return None
    lo_band, hi_band = profile.passband_low_hz, profile.passband_high_hz
    fs2 = result.input.sample_rate_hz / 2.0
    hp_c = np.asarray(high_pass_candidates_hz if high_pass_candidates_hz is not None
                      else np.union1d(np.arange(50.0, max(1.5 * lo_band, 150.0) + 1.0, 25.0), [lo_band]),
                      dtype=float)
    top = min(hi_band, 0.95 * fs2)
    lp_c = np.asarray(low_pass_candidates_hz if low_pass_candidates_hz is not None
                      else np.union1d(np.arange(1800.0, top + 1.0, 100.0), [top]), dtype=float)
    hp_c = hp_c[hp_c < lp_c.max() / 2.0]
    limit = _upper_pass(profile, "occupied_bandwidth_hz")
    rb = (float(lo_band), float(hi_band))
    try:
        sweep = sweep_cutoffs(hp_c, lp_c, order=FILTER_ORDER, max_bandwidth_hz=limit if math.isfinite(limit) else None,
                              snrs_db=(float(channel_snr_db),), receive_band_hz=rb, speech=model)
    except MeasurementError:
        return None
    if sweep.best is None:
        return None
    widest = float(sweep.sii[int(np.argmin(sweep.low_hz)), int(np.argmax(sweep.high_hz))])
    return CutoffSearch(
        high_pass_hz=sweep.best.low_hz, low_pass_hz=sweep.best.high_hz, sii_best=sweep.best.sii, sii_widest=widest,
        channel_snr_db=float(channel_snr_db), receive_band_hz=rb,
        method=(f"the design bench's cutoff sweep on this talker's own spectrum: {FILTER_ORDER}-pole Butterworth "
                f"high-pass {hp_c.min():.0f}–{hp_c.max():.0f} Hz and low-pass {lp_c.min():.0f}–{lp_c.max():.0f} Hz, "
                f"SII (ANSI S3.5-1997) with white channel noise at {channel_snr_db:g} dB SNR in "
                f"{rb[0]:.0f}–{rb[1]:.0f} Hz" + (f", occupied bandwidth at most {limit:.0f} Hz" if math.isfinite(limit) else "")),
    )


def power_fraction_below(result: AnalysisResult, freq_hz: float) -> float:
    """Fraction of the speech power below ``freq_hz``, from the one-third-octave band levels.

    A band straddling ``freq_hz`` counts in proportion to the part of its width (in log frequency) below it.
    """
    from .bands import band_limits_hz

    sp = result.spectrum
    p = np.array([0.0 if v is None else 10.0 ** (v / 10.0) for v in sp.speech_band_db])
    lo, hi = band_limits_hz(np.asarray(sp.bands_hz, dtype=float))
    w = np.clip(np.log(freq_hz / lo) / np.log(hi / lo), 0.0, 1.0)
    total = float(p.sum())
    return float((p * w).sum() / total) if total > 0 else 0.0


def importance_fraction_below(result: AnalysisResult, freq_hz: float) -> Optional[float]:
    """Share of this recording's SII (in quiet) that comes from below ``freq_hz``.

    Sum of band importance x band audibility (ANSI S3.5-1997 Eq. 14 terms) below ``freq_hz``, over
    their total; a straddling band counts by the log-frequency part of its width below.
    """
    it = result.intelligibility
    if it is None:
        return None
    from .intelligibility.tables import band_procedure

    t = band_procedure("one-third-octave")
    terms = np.asarray(it.band_importance) * np.asarray(it.band_audibility)
    w = np.clip(np.log(freq_hz / t.lower_hz) / np.log(t.upper_hz / t.lower_hz), 0.0, 1.0)
    total = float(terms.sum())
    return float((terms * w).sum() / total) if total > 0 else None


def _status(vs: Sequence[Verdict], check: str) -> Optional[Verdict]:
    for v in vs:
        if v.check == check:
            return v
    return None


def _round_hz(v: float) -> int:
    step = 50 if v >= 1000 else 10
    return int(step * round(v / step))


def recommendations(result: AnalysisResult, profile: Profile, verdicts: Sequence[Verdict],
                    search: Optional[CutoffSearch]) -> tuple[Recommendation, ...]:
    """What to change, most important first; a single ``none`` item when nothing needs changing."""
    out: list[Recommendation] = []
    add = lambda code, text: out.append(Recommendation(code, text))  # noqa: E731
    cl = result.clipping
    lv = result.levels
    if cl.event_count > 0:
        clip_db = 20.0 * math.log10(cl.clip_level) if cl.clip_level else 0.0
        if lv.active_level_dbfs is not None:
            down = max(2, math.ceil(lv.active_level_dbfs + SPEECH_PEAK_FACTOR_DB - clip_db))
            amount = f"about {down} dB"
        else:
            amount = "until the clipping stops"
        where = ("the microphone amplifier (it clips at "
                 f"{100 * cl.clip_level:.0f} % of full scale, so an earlier stage overloads)"
                 if cl.clip_level is not None and cl.clip_level < 0.98 else "the microphone gain")
        add("gain", f"Turn {where} down {amount}: {cl.event_count} clipping events "
            f"({100 * cl.clipped_fraction:.2f} % of the samples).")
    v_low = _status(verdicts, "lower_edge_hz")
    v_obw = _status(verdicts, "occupied_bandwidth_hz") or _status(verdicts, "highest_audio_hz")
    v_high = _status(verdicts, "upper_edge_hz")
    e = result.spectrum.edges_hz
    if search is not None:
        hp = search.high_pass_hz
        now_low = e.low if e.low is not None else (e.lowest_band_hz or 0.0)
        gain = search.sii_best - search.sii_widest
        if hp > 1.25 * max(now_low, 1.0) and (gain >= 0.02 or (v_low is not None and v_low.status != "pass")):
            p = power_fraction_below(result, hp)
            i = importance_fraction_below(result, hp) or 0.0
            add("high_pass", f"Raise the high-pass to about {_round_hz(hp)} Hz: {100 * p:.0f} % of your power "
                f"lies below it but only {100 * i:.0f} % of the intelligibility "
                f"(SII at {search.channel_snr_db:g} dB channel SNR {search.sii_widest:.2f} with the service's band alone, "
                f"{search.sii_best:.2f} with the suggested filter).")
        wide = (v_obw is not None and v_obw.status != "pass" and v_obw.value > _upper_pass(profile, v_obw.check)) or (
            v_high is not None and v_high.status != "pass" and v_high.value > _upper_pass(profile, "upper_edge_hz"))
        if wide:
            what = (f"the occupied bandwidth is {v_obw.value / 1000:.2f} kHz" if v_obw is not None and v_obw.status != "pass"
                    else f"the audio reaches {v_high.value / 1000:.2f} kHz")
            add("low_pass", f"Lower the low-pass to about {_round_hz(search.low_pass_hz)} Hz: {what}, more than "
                f"{profile.title} needs; within {profile.passband_low_hz:.0f}–{profile.passband_high_hz:.0f} Hz this "
                f"talker reaches SII {search.sii_best:.2f} at {search.channel_snr_db:g} dB channel SNR.")
        narrow = v_high is not None and v_high.status != "pass" and v_high.value < _lower_pass(profile, "upper_edge_hz")
        if narrow:
            add("low_pass", f"Raise the low-pass towards {profile.passband_high_hz:.0f} Hz: the audio stops at "
                f"{v_high.value:.0f} Hz and the 2–4 kHz bands carry much of the intelligibility "
                "(ANSI S3.5-1997 Table 3 band importance).")
    # An edge read from speech alone can be uncertain (a gentle roll-off, noise, the talker's own
    # spectrum): where the verdict fails but the edge's range reaches into the passing interval, the
    # verdict itself is in doubt, and a sweep through the chain measures the edge.
    unsure = [(side, rng) for side, v, unc, rng, check in (
                  ("lower", v_low, e.low_uncertain, e.low_range, "lower_edge_hz"),
                  ("upper", v_high, e.high_uncertain, e.high_range, "upper_edge_hz"))
              if v is not None and v.status != "pass" and unc and rng is not None
              and rng[0] <= _upper_pass(profile, check) and rng[1] >= _lower_pass(profile, check)]
    if unsure:
        which = " and ".join(f"the {side} edge ({rng[0]:.0f}–{rng[1]:.0f} Hz)" for side, rng in unsure)
        add("measure_edges", f"Measure the chain's passband before changing its filters: from speech alone "
            f"{which} can only be bounded. Play a sweep (voiceband testsignal sweep) through the chain, record "
            f"its output and run voiceband response on the two files. {TRANSMITTER_CAUTION}")
    v_snr = _status(verdicts, "snr_db")
    if v_snr is not None and v_snr.status != "pass":
        add("noise", f"Track down the noise: the speech is only {v_snr.value:.0f} dB above the noise in the pauses. "
            "Check microphone cable screening, the preamp's supply and the recording path.")
    v_hum = _status(verdicts, "hum_db_re_speech")
    if v_hum is not None and v_hum.status != "pass" and result.noise.hum is not None:
        add("hum", f"Remove the {result.noise.hum.fundamental_hz:.0f} Hz hum ({v_hum.value:.0f} dB relative to the "
            "speech): look for a ground loop, an unscreened microphone lead or poor supply filtering. "
            "With mains-powered gear, work on it only unplugged and with its capacitors discharged.")
    v_pre = _status(verdicts, "preemphasis_db_per_octave")
    if v_pre is not None and v_pre.status != "pass":
        add("pre_emphasis", f"Check the pre-emphasis: the response slopes {v_pre.value:+.1f} dB/octave against "
            "average speech where about +6 dB/octave is expected (if you recorded a receiver's de-emphasised "
            "output, 0 is normal and this check does not apply).")
    if lv.active_level_dbfs is not None and lv.active_level_dbfs < -40.0:
        add("level", f"Record at a higher level: the speech sits at {lv.active_level_dbfs:.0f} dBFS, so the "
            "recorder's own noise may be what is measured.")
    covered = {"gain": {"clip_events"}, "high_pass": {"lower_edge_hz"},
               "low_pass": {"occupied_bandwidth_hz", "upper_edge_hz", "highest_audio_hz"}, "noise": {"snr_db"},
               "hum": {"hum_db_re_speech"}, "pre_emphasis": {"preemphasis_db_per_octave"}}
    done = set().union(*(covered.get(r.code, set()) for r in out))
    from .profiles.verdicts import CHECKS

    for v in verdicts:  # anything else that does not pass: say so with its reason
        if v.status != "pass" and v.check not in done:
            add("review", f"{CHECKS[v.check].label}: {v.reason}")
    if not out:
        add("none", f"Nothing needs changing for {profile.title}: every judged quantity passes.")
    return tuple(out)


def _upper_pass(profile: Profile, check: str) -> float:
    for lim in profile.limits:
        if lim.check == check and lim.pass_max is not None:
            return lim.pass_max
    return math.inf


def _lower_pass(profile: Profile, check: str) -> float:
    for lim in profile.limits:
        if lim.check == check and lim.pass_min is not None:
            return lim.pass_min
    return -math.inf
