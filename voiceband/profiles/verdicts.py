"""Verdicts: each profile limit judged against one analysis, as pass, marginal or fail with a reason.

Pure functions of an :class:`~voiceband.results.AnalysisResult` and a
:class:`~voiceband.profiles.Profile`; nothing is measured here.  A quantity that could not be
measured is not judged (it is listed by :func:`not_judged` with the reason).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Optional

from ..results import AnalysisResult
from . import Limit, Profile

__all__ = ["Verdict", "Check", "CHECKS", "STATUSES", "judge", "verdicts", "not_judged",
           "response_slope_db_per_octave", "check_value"]

#: Verdict words, best first.
STATUSES = ("pass", "marginal", "fail")


@dataclass(frozen=True)
class Verdict:
    """One limit judged: the JSON keys of ``verdicts[]`` in the report's ``analysis.json``.

    Attributes
    ----------
    check : str
        The quantity (a key of :data:`CHECKS`).
    value : float
        The measured value, in the check's unit.
    limit : str
        The pass range and the marginal range in words and numbers, e.g. "pass 2000–2800 Hz, marginal 1600–3000 Hz".
    status : str
        ``pass``, ``marginal`` or ``fail``.
    reason : str
        One sentence with the value and the limit.
    """

    check: str
    value: float
    limit: str
    status: str
    reason: str


@dataclass(frozen=True)
class Check:
    """How a judged quantity is read from an analysis and put in words."""

    label: str
    unit: str
    digits: int
    value: Callable[[AnalysisResult], tuple[Optional[float], str]]  # (value, suffix such as " or higher"; or None, why not)
    ok: str  # sentence templates: {v} value with unit, {lim} the pass range
    low: str
    high: str


def _edge(r: AnalysisResult, which: str) -> tuple[Optional[float], str]:
    e = r.spectrum.edges_hz
    v = e.low if which == "low" else e.high
    if v is not None:
        return float(v), ""
    bound = e.lowest_band_hz if which == "low" else e.highest_band_hz
    other = e.high if which == "low" else e.low
    if bound is not None and (other is not None or (e.lowest_band_hz and e.highest_band_hz)):
        # the estimated response stays up to the last analysed band: the edge lies beyond it
        return float(bound), (" or lower" if which == "low" else " or higher")
    return None, "the passband edge could not be estimated from this recording's spectrum"


def _obw(r: AnalysisResult) -> tuple[Optional[float], str]:
    v = r.spectrum.occupied_bandwidth.width_hz
    return (float(v), "") if v is not None else (None, "there is no speech power to measure a bandwidth on")


def _top(r: AnalysisResult) -> tuple[Optional[float], str]:
    v = r.spectrum.occupied_bandwidth.high_hz
    return (float(v), "") if v is not None else (None, "there is no speech power to measure a bandwidth on")


def _clips(r: AnalysisResult) -> tuple[Optional[float], str]:
    return float(r.clipping.event_count), ""


def _snr(r: AnalysisResult) -> tuple[Optional[float], str]:
    v = r.noise.snr_db
    return (float(v), "") if v is not None else (None, "no pauses with a measurable noise floor were found")


def _hum(r: AnalysisResult) -> tuple[Optional[float], str]:
    if r.noise.hum is not None and r.noise.hum.level_db_re_speech is not None:
        return float(r.noise.hum.level_db_re_speech), ""
    if r.noise.hum is None and r.noise.floor_dbfs is not None:
        return -math.inf, "none found"
    return None, "hum can only be looked for in pauses, and none were measurable"


def _sii(r: AnalysisResult) -> tuple[Optional[float], str]:
    v = getattr(r.intelligibility, "sii", None)
    return (float(v), "") if v is not None else (None, "the SII could not be computed (no speech spectrum)")


def response_slope_db_per_octave(r: AnalysisResult) -> Optional[float]:
    """Slope of the chain's response over the voice band, estimated from speech (dB/octave).

    The measured speech tilt (one-third-octave band levels vs log2 f over 300–3000 Hz, clipped to
    the passband) minus the tilt of the ANSI S3.5-1997 Table 3 normal-effort speech spectrum over the
    same span (:func:`voiceband.reference_spectra.effort_band_levels_db`).  Flat audio of a normal
    talker reads about 0, 6 dB/octave pre-emphasis about +6 (TIA-603 practice, from memory); shouted
    speech is flatter and reads up to about 3 dB/octave higher (Table 3: -5.5 instead of -8.6 dB/octave
    over 500-4000 Hz), which the profiles' ranges allow for.
    """
    sp = r.spectrum
    if sp.tilt_db_per_octave is None:
        return None
    from ..measurement.spectrum import TILT_SPAN_HZ, tilt_db_per_octave
    from ..reference_spectra import effort_band_levels_db

    lo, hi = TILT_SPAN_HZ
    if sp.edges_hz.low is not None:
        lo = max(lo, sp.edges_hz.low)
    if sp.edges_hz.high is not None:
        hi = min(hi, sp.edges_hz.high)
    # normal effort, not the fitted one: the effort fit reads a rising response as louder (flatter) speech
    ref = effort_band_levels_db("normal")  # BandLevels (kind "band")
    ref_tilt = tilt_db_per_octave(ref, span_hz=(lo, hi)) if lo < hi else None
    if ref_tilt is None:
        return None
    return float(sp.tilt_db_per_octave - ref_tilt)


def _slope(r: AnalysisResult) -> tuple[Optional[float], str]:
    v = response_slope_db_per_octave(r)
    return (v, "") if v is not None else (None, "the spectral tilt could not be measured")


#: The quantities a profile can judge.
CHECKS: dict[str, Check] = {
    "lower_edge_hz": Check(
        "Lower edge (−10 dB)", "Hz", 0, lambda r: _edge(r, "low"),
        "The audio starts at {v}, inside the expected {lim}.",
        "The audio reaches down to {v}, below the expected {lim}: low frequencies take transmitter power but carry little intelligibility.",
        "The audio starts only at {v}, above the expected {lim}: voices sound thin."),
    "upper_edge_hz": Check(
        "Upper edge (−10 dB)", "Hz", 0, lambda r: _edge(r, "high"),
        "The audio reaches up to {v}, inside the expected {lim}.",
        "The audio stops at {v}, below the expected {lim}: consonants (2–4 kHz) lose clarity.",
        "The audio reaches up to {v}, beyond the expected {lim}: it widens the signal with little gain in clarity."),
    "occupied_bandwidth_hz": Check(
        "Occupied bandwidth (99 %)", "Hz", 0, _obw,
        "The occupied bandwidth is {v}, inside the expected {lim}.",
        "The occupied bandwidth is only {v}, narrower than the expected {lim}: intelligibility is being given away.",
        "The occupied bandwidth is {v}, wider than the {lim} this service expects."),
    "highest_audio_hz": Check(
        "Top of the audio (99 % power)", "Hz", 0, _top,
        "99 % of the audio power lies below {v}, inside the expected {lim}.",
        "99 % of the audio power lies below {v}, lower than the expected {lim}: the audio may sound muffled.",
        "99 % of the audio power reaches up to {v}, above the {lim}: the signal on the air is wider than the service expects."),
    "clip_events": Check(
        "Clipping events", "", 0, _clips,
        "There are {v} clipping events, few enough ({lim}).",
        "There are {v} clipping events, few enough ({lim}).",
        "There are {v} clipping events where {lim} are acceptable: the audio is distorted and will splatter."),
    "snr_db": Check(
        "Speech-to-noise ratio", "dB", 1, _snr,
        "The speech stands {v} above the noise in the pauses ({lim} expected).",
        "The speech stands only {v} above the noise in the pauses, below the expected {lim}: the noise is audible.",
        "The speech stands {v} above the noise in the pauses ({lim} expected)."),
    "hum_db_re_speech": Check(
        "Mains hum re speech", "dB", 1, _hum,
        "Mains hum is {v} relative to the speech, within the expected {lim}.",
        "Mains hum is {v} relative to the speech, within the expected {lim}.",
        "Mains hum is {v} relative to the speech, above the acceptable {lim}: listeners will hear it."),
    "sii": Check(
        "Speech Intelligibility Index", "", 2, _sii,
        "The Speech Intelligibility Index is {v} ({lim} expected).",
        "The Speech Intelligibility Index is only {v}, below the expected {lim}.",
        "The Speech Intelligibility Index is {v} ({lim} expected)."),
    "preemphasis_db_per_octave": Check(
        "Response slope (pre-emphasis)", "dB/octave", 1, _slope,
        "The response rises {v} relative to average speech, matching the expected {lim} pre-emphasis.",
        "The response rises only {v} relative to average speech, less than the expected {lim} pre-emphasis (a receiver's de-emphasised output reads about 0).",
        "The response rises {v} relative to average speech, more than the expected {lim} pre-emphasis: the audio will sound harsh and over-deviate on sibilants."),
}


def _fmt(v: float, check: Check) -> str:
    if v == -math.inf:
        return "none"
    if check.unit == "Hz" and abs(v) >= 1000:
        return f"{v / 1000:.2f} kHz"
    s = f"{v:.{check.digits}f}"
    if check.unit == "dB/octave" and v > 0:
        s = "+" + s
    return f"{s} {check.unit}".strip()


def _range(lo: Optional[float], hi: Optional[float], check: Check) -> str:
    if lo is not None and hi is not None:
        if lo == hi:
            return _fmt(lo, check)
        return f"{_fmt(lo, check).split(' ')[0]}–{_fmt(hi, check)}" if _unit_of(lo, check) == _unit_of(hi, check) \
            else f"{_fmt(lo, check)} to {_fmt(hi, check)}"
    if lo is not None:
        return f"at least {_fmt(lo, check)}"
    return f"at most {_fmt(hi, check)}"


def _unit_of(v: float, check: Check) -> str:
    return _fmt(v, check).split(" ", 1)[-1] if " " in _fmt(v, check) else ""


def limit_text(limit: Limit) -> str:
    """The pass and marginal ranges of a limit in words, e.g. 'pass 2.00–2.80 kHz; marginal 1.60–3.00 kHz'."""
    c = CHECKS[limit.check]
    p = _range(limit.pass_min, limit.pass_max, c)
    m = _range(limit.marginal_min, limit.marginal_max, c)
    return f"pass {p}" + ("" if m == p else f"; marginal {m}")


def judge(value: float, limit: Limit) -> str:
    """``pass`` inside the pass range, ``marginal`` inside the marginal range, else ``fail`` (bounds inclusive)."""
    def inside(lo: Optional[float], hi: Optional[float]) -> bool:
        return (lo is None or value >= lo) and (hi is None or value <= hi)

    if inside(limit.pass_min, limit.pass_max):
        return "pass"
    if inside(limit.marginal_min, limit.marginal_max):
        return "marginal"
    return "fail"


def check_value(result: AnalysisResult, check: str) -> tuple[Optional[float], str]:
    """The measured value of a check (``None`` when not measurable) and a qualifier or the reason why not."""
    return CHECKS[check].value(result)


def verdicts(result: AnalysisResult, profile: Profile) -> tuple[Verdict, ...]:
    """Each measurable limit of ``profile`` judged against ``result``, in the profile's order."""
    out = []
    for lim in profile.limits:
        c = CHECKS[lim.check]
        v, qual = c.value(result)
        if v is None:
            continue
        status = judge(v, lim)
        vtext = _fmt(v, c) + qual
        if v == -math.inf:
            reason = "No mains hum was found in the pauses."
        elif lim.check == "clip_events" and v == 0:
            reason = "No clipping was found."
        else:
            passr = _range(lim.pass_min, lim.pass_max, c)
            if status == "pass":
                tpl = c.ok
            elif lim.pass_min is not None and v < lim.pass_min:
                tpl = c.low
            else:
                tpl = c.high
            reason = tpl.format(v=vtext, lim=passr)
        out.append(Verdict(lim.check, float(v), limit_text(lim), status, reason))
    return tuple(out)


def not_judged(result: AnalysisResult, profile: Profile) -> tuple[tuple[str, str], ...]:
    """(check, why) for each limit of ``profile`` whose quantity could not be measured."""
    out = []
    for lim in profile.limits:
        v, why = CHECKS[lim.check].value(result)
        if v is None:
            out.append((lim.check, why))
    return tuple(out)


def worst(statuses) -> Optional[str]:
    """The worst of some statuses (``fail`` > ``marginal`` > ``pass``), ``None`` for none."""
    ranks = [STATUSES.index(s) for s in statuses]
    return STATUSES[max(ranks)] if ranks else None

