"""Plain-language findings of ``voiceband analyze`` and ``voiceband response``, in one table.

Each finding has a stable ``code`` (other tools read it), a severity
(``info`` < ``warning`` < ``problem``) and one sentence. :data:`FINDINGS` holds every
code with its severity and sentence; :data:`THRESHOLDS` the decision thresholds of the
analysis findings. The thresholds are common practice for communications speech unless a
source is named; they are collected here, once, so a reader can see and change them.

>>> finding("no_quiet_stretch").severity
'info'
>>> finding("snr_low", snr_db=12.0).message
'SNR is 12.0 dB: noise is clearly audible under the speech.'
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Optional

if TYPE_CHECKING:  # annotations only: a sweep measurement reports findings without the analysis records
    from .results import ClippingSection, LevelsSection, NoiseSection, SpectrumSection, VoiceSection

__all__ = ["SEVERITIES", "Finding", "THRESHOLDS", "FINDINGS", "finding", "findings_for"]

#: Severities of a finding, mildest first.
SEVERITIES = ("info", "warning", "problem")


@dataclass(frozen=True)
class Finding:
    """One plain-language finding: a stable ``code`` (other tools read it), a severity from
    :data:`SEVERITIES` and one sentence.  Analyze and response both report these; the
    table of codes is :data:`FINDINGS`."""

    code: str
    severity: str  # one of SEVERITIES
    message: str

#: Decision thresholds (common practice unless noted).
THRESHOLDS = {
    "true_peak_over_dbtp": 0.23,        # above 0 dBTP by more than the BS.1770 interpolator's +0.222 dB over-read
                                        # (levels.TRUE_PEAK_OVER_READ_DB, computed from the annex table), so a
                                        # full-scale sine is no over
    "true_peak_near_dbtp": -0.1,        # within 0.1 dB of full scale: no headroom left (common practice with BS.1770 true peak)
    "active_level_low_dbfs": -40.0,     # quieter than this: recording level too low to judge noise well
    "dc_offset_warn": 0.01,             # 1 % of full scale (−40 dBFS)
    "snr_problem_db": 15.0,             # below: noise clearly audible under speech
    "snr_warning_db": 25.0,
    "hum_problem_db": -25.0,            # hum level re active speech
    "hum_warning_db": -40.0,
    "edge_high_low_hz": 2500.0,         # upper edge below this loses consonant cues (ANSI S3.5-1997 Table 3 band importance, 2–4 kHz)
    "edge_low_high_hz": 400.0,          # lower edge above this makes voices thin
    "short_recording_s": 10.0,          # a long-term spectrum needs some seconds of speech
    "below_full_scale_clip": 0.98,      # clip level below this fraction of FS: clipped before the last gain stage
}

#: Every finding: code -> (severity, sentence with ``str.format`` fields).  A severity of
#: ``None`` is decided from the measurement where the finding is made (hum, intelligibility).
FINDINGS: dict[str, tuple[Optional[str], str]] = {
    # --- voiceband analyze
    "digital_silence": ("problem",
        "The recording is digital silence: every sample is zero, so levels, noise, spectrum and intelligibility are not measurable."),
    "pauses_digital_silence": ("info",
        "The pauses are digital silence (a noise gate, or generated audio), so there is no noise floor "
        "to measure and the SNR is not a finite number."),
    "sii_not_measurable": ("info", "The SII could not be computed: {error}"),
    "short_recording": ("info",
        "The recording lasts {duration_s:.1f} s; long-term spectrum and bandwidth figures are more reliable from 10 s or more of speech."),
    "narrowband_recording": ("info",
        "At {sample_rate_hz} Hz the recording holds audio only up to {nyquist_hz:.0f} Hz; nothing above it can be measured."),
    "clipping_below_full_scale": ("problem",
        "The audio was clipped at {clip_percent:.1f} % of full scale ({events} events, "
        "{clipped_percent:.2f} % of samples): it clipped in an earlier stage, such as the "
        "microphone amplifier, and was turned down afterwards."),
    "clipping": ("problem", "The audio clips at full scale: {events} events, {clipped_percent:.2f} % of samples."),
    "true_peak_over": ("warning",
        "True peak reaches {true_peak_dbtp:+.2f} dBTP, more than the +0.22 dB a BS.1770 4x meter can over-read at full "
        "scale: peaks between samples exceed full scale and can overload a converter."),
    "true_peak_near": ("info",
        "True peak reads {true_peak_dbtp:+.2f} dBTP: the signal reaches full scale and leaves no headroom; a reading up "
        "to +0.22 dBTP is within the over-read of a BS.1770 4x meter, so it need not exceed full scale."),
    "level_low": ("warning",
        "Active speech level is only {level_dbfs:.1f} dBFS; raise the recording level so noise figures reflect the transmitter, not the recorder."),
    "no_active_speech": ("warning", "No active speech was found, so the P.56 active level is not measurable."),
    "dc_offset": ("warning",
        "DC offset is {dc_percent:+.2f} % of full scale; a coupling capacitor or high-pass removes it and restores headroom."),
    "no_pauses": ("info", "No pauses between words were found, so the noise floor, SNR and hum are not measurable."),
    "snr_low": ("problem", "SNR is {snr_db:.1f} dB: noise is clearly audible under the speech."),
    "snr_marginal": ("warning", "SNR is {snr_db:.1f} dB: noise is audible in the pauses."),
    "hum": (None,
        "Mains hum at {fundamental_hz:.1f} Hz is {level_db:.1f} dB relative to the speech; "
        "look for a ground loop or poor supply filtering (with mains-powered gear, work only with it unplugged and discharged)."),
    "upper_edge_low": ("warning",
        "The audio rolls off at {high_hz:.0f} Hz; speech importance is high from 2 to 4 kHz (ANSI S3.5-1997 Table 3), so consonants suffer."),
    "lower_edge_high": ("info", "The audio starts at {low_hz:.0f} Hz; voices will sound thin."),
    "no_band_limit_found": ("info",
        "The estimated response stays within 10 dB of its passband from {low_hz:g} to "
        "{high_hz:g} Hz: no band-limiting of the audio was found in that range."),
    "edge_uncertain": ("info",
        "The {side} edge is uncertain: the estimate is {hz}, but it lies somewhere between {low_hz:.0f} and "
        "{high_hz:.0f} Hz ({reason})."),
    "ctcss_tone": ("info",
        "A CTCSS (sub-audible squelch) tone of {ctcss_hz:.1f} Hz is present at {level} relative to the speech; "
        "it is not mains hum."),
    "steady_tone": ("info",
        "A steady tone at {frequency_hz:.1f} Hz is present at {level} relative to the speech "
        "(a test tone, a tone squelch or an interfering carrier, not mains hum)."),
    "edges_unknown": ("info", "The passband edges could not be estimated from this recording's spectrum."),
    "f0_unknown": ("info", "No voiced speech was found, so the talker's fundamental frequency is not measurable."),
    "highpass_above_f0": ("info",
        "The lower edge ({low_hz:.0f} Hz) is above the talker's median fundamental ({f0_hz:.0f} Hz): "
        "the voice loses body, though intelligibility depends little on it."),
    "intelligibility": (None, "Speech Intelligibility Index {sii:.3f} ({rating})."),
    # --- voiceband response
    "sweep_without_markers": ("info",
        "The sweep has no start and stop markers, so the clock ratio was not measured (1.0 assumed); "
        "clock drift would show in the phase and group delay."),
    "offset_not_checked": ("warning", "Too little of the sweep lies in the passband to check for a carrier offset."),
    "one_marker_found": ("warning",
        "Only one of the sweep's markers was found in the recording, so the clock ratio was not "
        "measured (1.0 assumed)."),
    "carrier_offset_sweep": ("info",
        "Carrier offset of {offset_hz:+.1f} Hz detected from the sweep's frequency track and removed "
        "before deconvolution; phase is not reported (the carrier phase is unknown)."),
    "points_below_noise": ("info", "{count} of {total} frequencies lie below the noise and are left out."),
    "no_quiet_stretch": ("info", "The recording has no quiet stretch of 0.1 s, so the noise floor and SNR are unknown."),
    "tones_clock_not_measured": ("info",
        "The clock ratio was not measured (fewer than three tones spanning half an octave); 1.0 assumed."),
    "carrier_offset_tones": ("info",
        "Carrier offset of {offset_hz:+.2f} Hz detected from the tones; each tone was tracked "
        "at its shifted frequency, and phase is not reported (the carrier phase is unknown)."),
    "tones_harmonics_not_separable": ("info",
        "Harmonic distortion is not separable with several tones (their harmonics and intermodulation overlap); use a sweep."),
}


def finding(code: str, severity: Optional[str] = None, **values: Any) -> Finding:
    """The :class:`~voiceband.results.Finding` ``code`` of :data:`FINDINGS`, its sentence filled
    with ``values``; ``severity`` is given only for codes whose table severity is ``None``."""
    table_severity, template = FINDINGS[code]
    sev = table_severity if table_severity is not None else severity
    if sev is None:
        raise ValueError(f"finding '{code}' needs a severity.")
    return Finding(code, sev, template.format(**values))


def findings_for(
    *,
    duration_s: float,
    sample_rate_hz: int,
    levels: LevelsSection,
    clipping: ClippingSection,
    noise: NoiseSection,
    spectrum: SpectrumSection,
    voice: VoiceSection,
    sii: Optional[float],
    sii_rating: Optional[str],
    pauses_digital_silence: bool = False,
    sii_error: Optional[str] = None,
) -> tuple[Finding, ...]:
    """Findings for one recording, most serious first.

    ``pauses_digital_silence``: pauses were found but hold only zeros (no noise floor);
    ``sii_error``: why the SII could not be computed, if it could not.
    """
    T = THRESHOLDS
    out: list[Finding] = []

    def add(code: str, severity: Optional[str] = None, **values: Any) -> None:
        out.append(finding(code, severity, **values))

    if pauses_digital_silence:
        add("pauses_digital_silence")
    if sii_error is not None:
        add("sii_not_measurable", error=sii_error)
    if levels.peak_dbfs is None:
        add("digital_silence")
        return _sorted(out)

    if duration_s < T["short_recording_s"]:
        add("short_recording", duration_s=duration_s)
    if sample_rate_hz < 16000:
        add("narrowband_recording", sample_rate_hz=sample_rate_hz, nyquist_hz=sample_rate_hz / 2)

    if clipping.event_count > 0:
        lvl = clipping.clip_level
        clipped_percent = 100 * clipping.clipped_fraction
        if lvl is not None and lvl < T["below_full_scale_clip"]:
            add("clipping_below_full_scale", clip_percent=100 * lvl, events=clipping.event_count,
                clipped_percent=clipped_percent)
        else:
            add("clipping", events=clipping.event_count, clipped_percent=clipped_percent)
    if levels.true_peak_dbtp is not None and levels.true_peak_dbtp > T["true_peak_over_dbtp"]:
        add("true_peak_over", true_peak_dbtp=levels.true_peak_dbtp)
    elif levels.true_peak_dbtp is not None and levels.true_peak_dbtp > T["true_peak_near_dbtp"]:
        add("true_peak_near", true_peak_dbtp=levels.true_peak_dbtp)
    if levels.active_level_dbfs is not None and levels.active_level_dbfs < T["active_level_low_dbfs"]:
        add("level_low", level_dbfs=levels.active_level_dbfs)
    if levels.activity_factor is not None and levels.active_level_dbfs is None:
        add("no_active_speech")
    if levels.dc_offset is not None and abs(levels.dc_offset) > T["dc_offset_warn"]:
        add("dc_offset", dc_percent=100 * levels.dc_offset)

    if noise.floor_dbfs is None and not pauses_digital_silence:
        add("no_pauses")
    elif noise.snr_db is not None:
        if noise.snr_db < T["snr_problem_db"]:
            add("snr_low", snr_db=noise.snr_db)
        elif noise.snr_db < T["snr_warning_db"]:
            add("snr_marginal", snr_db=noise.snr_db)
    if noise.hum is not None and noise.hum.level_db_re_speech is not None:
        h = noise.hum
        if h.level_db_re_speech > T["hum_problem_db"]:
            sev = "problem"
        elif h.level_db_re_speech > T["hum_warning_db"]:
            sev = "warning"
        else:
            sev = "info"
        add("hum", sev, fundamental_hz=h.fundamental_hz, level_db=h.level_db_re_speech)

    for t in noise.tones:
        level = f"{t.level_db_re_speech:.1f} dB" if t.level_db_re_speech is not None else "an unknown level"
        if t.kind == "ctcss" and t.ctcss_hz is not None:
            add("ctcss_tone", ctcss_hz=t.ctcss_hz, level=level)
        else:
            add("steady_tone", frequency_hz=t.frequency_hz, level=level)

    e = spectrum.edges_hz
    reasons = {"noise": "the speech is hidden in noise beyond it", "talker": "near and below the talker's fundamental "
               "the talker's own spectrum, not the chain, shapes what is seen", "span": "the analysed span ends", None: "a gentle roll-off, "
               "which a talker's own spectrum can mimic"}
    for side, hz, rng, unc, lim in (("lower", e.low, e.low_range, e.low_uncertain, e.low_limited_by),
                                    ("upper", e.high, e.high_range, e.high_uncertain, e.high_limited_by)):
        if unc and rng is not None:
            add("edge_uncertain", side=side, hz=f"{hz:.0f} Hz" if hz is not None else "beyond the analysed span",
                low_hz=rng[0], high_hz=rng[1], reason=reasons.get(lim, reasons[None]))
    # A low upper edge or a high lower edge is stated only when its whole range says so.
    high_top = e.high_range[1] if (e.high_uncertain and e.high_range is not None) else e.high
    low_bottom = e.low_range[0] if (e.low_uncertain and e.low_range is not None) else e.low
    if e.high is not None and high_top is not None and high_top < T["edge_high_low_hz"]:
        add("upper_edge_low", high_hz=e.high)
    if e.low is not None and low_bottom is not None and low_bottom > T["edge_low_high_hz"]:
        add("lower_edge_high", low_hz=e.low)
    if e.low is None and e.high is None:
        if e.lowest_band_hz is not None and e.highest_band_hz is not None:
            add("no_band_limit_found", low_hz=e.lowest_band_hz, high_hz=e.highest_band_hz)
        else:
            add("edges_unknown")
    if voice.f0_median_hz is None:
        add("f0_unknown")
    elif e.low is not None and low_bottom is not None and low_bottom > voice.f0_median_hz:
        # as the two above: only when the lower edge's whole range lies above the fundamental
        add("highpass_above_f0", low_hz=e.low, f0_hz=voice.f0_median_hz)
    if sii is not None and sii_rating:
        # the rating words carry the SII thresholds (intelligibility.recording.SII_RATING_THRESHOLDS)
        add("intelligibility", {"good": "info", "fair": "warning"}.get(sii_rating, "problem"), sii=sii, rating=sii_rating)
    return _sorted(out)


def _sorted(items: list[Finding]) -> tuple[Finding, ...]:
    rank = {"problem": 0, "warning": 1, "info": 2}
    return tuple(sorted(items, key=lambda f: rank.get(f.severity, 3)))
