"""Plain-language findings drawn from the measurements of one recording.

Each finding has a stable ``code`` (other tools read it), a severity
(``info`` < ``warning`` < ``problem``) and one sentence. The thresholds are
common practice for communications speech unless a source is named; they are
collected here, once, so a reader can see and change them.
"""

from __future__ import annotations

from typing import Optional

from .results import (
    ClippingSection,
    Finding,
    LevelsSection,
    NoiseSection,
    SpectrumSection,
    VoiceSection,
)

__all__ = ["THRESHOLDS", "findings_for"]

#: Decision thresholds (common practice unless noted).
THRESHOLDS = {
    "true_peak_over_dbtp": -0.1,        # inter-sample overs above this risk converter overload (BS.1770 practice)
    "active_level_low_dbfs": -40.0,     # quieter than this: recording level too low to judge noise well
    "dc_offset_warn": 0.01,             # 1 % of full scale (−40 dBFS)
    "snr_problem_db": 15.0,             # below: noise clearly audible under speech
    "snr_warning_db": 25.0,
    "hum_problem_db": -25.0,            # hum level re active speech
    "hum_warning_db": -40.0,
    "edge_high_low_hz": 2500.0,         # upper edge below this loses consonant cues (ANSI S3.5 band importance, 2–4 kHz)
    "edge_low_high_hz": 400.0,          # lower edge above this makes voices thin
    "short_recording_s": 10.0,          # a long-term spectrum needs some seconds of speech
    "below_full_scale_clip": 0.98,      # clip level below this fraction of FS: clipped before the last gain stage
}


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
    extra: tuple[Finding, ...] = (),
) -> tuple[Finding, ...]:
    """Findings for one recording, most serious first."""
    T = THRESHOLDS
    out: list[Finding] = list(extra)
    add = lambda code, sev, msg: out.append(Finding(code, sev, msg))  # noqa: E731

    if levels.peak_dbfs is None:
        add("digital_silence", "problem",
            "The recording is digital silence: every sample is zero, so levels, noise, spectrum and intelligibility are not measurable.")
        return _sorted(out)

    if duration_s < T["short_recording_s"]:
        add("short_recording", "info",
            f"The recording lasts {duration_s:.1f} s; long-term spectrum and bandwidth figures are more reliable from 10 s or more of speech.")
    if sample_rate_hz < 16000:
        add("narrowband_recording", "info",
            f"At {sample_rate_hz} Hz the recording holds audio only up to {sample_rate_hz / 2:.0f} Hz; nothing above it can be measured.")

    if clipping.event_count > 0:
        lvl = clipping.clip_level
        if lvl is not None and lvl < T["below_full_scale_clip"]:
            add("clipping_below_full_scale", "problem",
                f"The audio was clipped at {100 * lvl:.1f} % of full scale ({clipping.event_count} events, "
                f"{100 * clipping.clipped_fraction:.2f} % of samples): it clipped in an earlier stage, such as the "
                "microphone amplifier, and was turned down afterwards.")
        else:
            add("clipping", "problem",
                f"The audio clips at full scale: {clipping.event_count} events, {100 * clipping.clipped_fraction:.2f} % of samples.")
    if levels.true_peak_dbtp is not None and levels.true_peak_dbtp > T["true_peak_over_dbtp"]:
        add("true_peak_over", "warning",
            f"True peak reaches {levels.true_peak_dbtp:+.2f} dBTP: peaks between samples exceed full scale and can overload a converter.")
    if levels.active_level_dbfs is not None and levels.active_level_dbfs < T["active_level_low_dbfs"]:
        add("level_low", "warning",
            f"Active speech level is only {levels.active_level_dbfs:.1f} dBFS; raise the recording level so noise figures reflect the transmitter, not the recorder.")
    if levels.activity_factor is not None and levels.active_level_dbfs is None:
        add("no_active_speech", "warning", "No active speech was found, so the P.56 active level is not measurable.")
    if levels.dc_offset is not None and abs(levels.dc_offset) > T["dc_offset_warn"]:
        add("dc_offset", "warning",
            f"DC offset is {100 * levels.dc_offset:+.2f} % of full scale; a coupling capacitor or high-pass removes it and restores headroom.")

    if noise.floor_dbfs is None and not any(f.code == "pauses_digital_silence" for f in out):
        add("no_pauses", "info", "No pauses between words were found, so the noise floor, SNR and hum are not measurable.")
    elif noise.snr_db is not None:
        if noise.snr_db < T["snr_problem_db"]:
            add("snr_low", "problem", f"SNR is {noise.snr_db:.1f} dB: noise is clearly audible under the speech.")
        elif noise.snr_db < T["snr_warning_db"]:
            add("snr_marginal", "warning", f"SNR is {noise.snr_db:.1f} dB: noise is audible in the pauses.")
    if noise.hum is not None and noise.hum.level_db_re_speech is not None:
        h = noise.hum
        if h.level_db_re_speech > T["hum_problem_db"]:
            sev = "problem"
        elif h.level_db_re_speech > T["hum_warning_db"]:
            sev = "warning"
        else:
            sev = "info"
        add("hum", sev, f"Mains hum at {h.fundamental_hz:.1f} Hz is {h.level_db_re_speech:.1f} dB relative to the speech; "
            "look for a ground loop or poor supply filtering (with mains-powered gear, work only with it unplugged and discharged).")

    e = spectrum.edges_hz
    if e.high is not None and e.high < T["edge_high_low_hz"]:
        add("upper_edge_low", "warning",
            f"The audio rolls off at {e.high:.0f} Hz; speech importance is high from 2 to 4 kHz (ANSI S3.5-1997 Table 3), so consonants suffer.")
    if e.low is not None and e.low > T["edge_low_high_hz"]:
        add("lower_edge_high", "info", f"The audio starts at {e.low:.0f} Hz; voices will sound thin.")
    if e.low is None and e.high is None:
        if e.lowest_band_hz is not None and e.highest_band_hz is not None:
            add("no_band_limit_found", "info",
                f"The estimated response stays within 10 dB of its passband from {e.lowest_band_hz:g} to "
                f"{e.highest_band_hz:g} Hz: no band-limiting of the audio was found in that range.")
        else:
            add("edges_unknown", "info", "The passband edges could not be estimated from this recording's spectrum.")
    if voice.f0_median_hz is None:
        add("f0_unknown", "info", "No voiced speech was found, so the talker's fundamental frequency is not measurable.")
    elif e.low is not None and voice.f0_median_hz is not None and e.low > voice.f0_median_hz:
        add("highpass_above_f0", "info",
            f"The lower edge ({e.low:.0f} Hz) is above the talker's median fundamental ({voice.f0_median_hz:.0f} Hz): "
            "the voice loses body, though intelligibility depends little on it.")
    if sii is not None and sii_rating:
        # the rating words carry the SII thresholds (intelligibility.recording.SII_RATING_THRESHOLDS)
        sev = {"good": "info", "fair": "warning"}.get(sii_rating, "problem")
        add("intelligibility", sev, f"Speech Intelligibility Index {sii:.3f} ({sii_rating}).")
    return _sorted(out)


def _sorted(items: list[Finding]) -> tuple[Finding, ...]:
    rank = {"problem": 0, "warning": 1, "info": 2}
    return tuple(sorted(items, key=lambda f: rank.get(f.severity, 3)))
