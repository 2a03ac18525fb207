"""Orchestration: one recording -> :class:`~voiceband.results.AnalysisResult`.

This is the one place that fans the blocks of a recording out to the streaming
accumulators and combines their results:

- :class:`~voiceband.measurement.levels.LevelsAccumulator` (levels) and
  :class:`~voiceband.measurement.clipping.ClippingAccumulator` (clipping) see every block;
- :class:`~voiceband.measurement.activity.ActivityAccumulator` frames it and sorts the frames
  by level; its frames go to :class:`~voiceband.measurement.spectrum.LongTermSpectrumAccumulator`
  and its float32 copy of the block to the hum accumulator and the F0 reservoir
  (:mod:`voiceband.measurement.voice`);
- at the end the speech/pause split decides the spectra, from which the occupied bandwidth
  and passband edges (:mod:`voiceband.measurement.bandwidth`) and the SII
  (:mod:`voiceband.intelligibility`) follow.

:class:`RecordingAccumulator` keeps the streaming contract of DEVELOPERS.md (any block
lengths, the same result; memory independent of the length) and returns the measurement
results as :class:`Measurements`; :func:`analyze_file` and :func:`analyze_signal` turn them
into the report sections (each section's ``of``) and findings (:mod:`voiceband.findings`).
No measurement is computed here.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass
from typing import TYPE_CHECKING, Callable, Optional, Union

import numpy as np

from . import audio, validate
from .errors import MeasurementError, SignalValueError
from .results import (
    AnalysisResult,
    ClippingSection,
    InputInfo,
    LevelsSection,
    NoiseSection,
    SpectrumSection,
    VoiceSection,
    finite,
)

__all__ = [
    "analyze_file",
    "analyze_signal",
    "measure_recording",
    "Measurements",
    "analyze_file_detailed",
    "AnalysisDetails",
    "RecordingAccumulator",
    "MIN_DURATION_S",
    "MAX_LISTED_CLIP_EVENTS",
    "OBW_SPAN_LOW_HZ",
]

#: Shortest recording analysed (s): one long-term-spectrum frame needs about 0.1 s.
MIN_DURATION_S = 0.25
#: Clip events listed one by one in the result (all are counted).
MAX_LISTED_CLIP_EVENTS = 1000
#: Steady tones more than this far below the recording's RMS level are not reported (dB).
TONE_FLOOR_DB = 50.0
#: Low end of the span the occupied bandwidth is taken over (Hz); the high end is fs/2.
OBW_SPAN_LOW_HZ = 20.0
#: Speech in noise so strong that no pauses stand out of it (``classify_level_bins`` finds no
#: noise mode): for the passband edges only, the noise is taken as the spectrum of the
#: quietest frames, this fraction of them (a floor read from the quietest part of the level
#: distribution, common practice where no pauses can be told apart) ...
QUIET_FRAME_FRACTION = 0.1
#: ... when a voice was found and the frame levels still move as speech does: the 90th
#: percentile of the frame levels at least this far (dB) above the 10th (a steady tone or
#: noise moves by a fraction of a dB).
SPEECH_LEVEL_SPREAD_DB = 3.0

if TYPE_CHECKING:  # typing only: the accumulators are imported when a pipeline is made
    from .measurement.activity import ActivityResult
    from .measurement.hum import HumResult
    from .measurement.timeline import TimelineResult
    from .measurement.bandwidth import OccupiedBandwidth, PassbandEdges
    from .measurement.clipping import ClippingResult
    from .measurement.levels import LevelsResult
    from .measurement.spectrum import SpectrumResult
    from .measurement.voice import VoiceResult
    from .measurement.speech_noise import SpeechNoisePower
    from .measurement.edges import FineEdges
    from .bands import BandLevels

ProgressFn = Callable[[int, int], None]


@dataclass(frozen=True)
class Measurements:
    """The measurement results of one recording, before they become report sections.

    Attributes
    ----------
    levels : LevelsResult
    clipping : ClippingResult
    activity : ActivityResult
        Speech/pause classification and noise floor.
    spectrum : SpectrumResult or None
        ``None`` when the recording is shorter than one analysis frame.
    occupied_bandwidth : OccupiedBandwidth or None
        Of the speech PSD over 20 Hz ... fs/2; ``None`` without speech power.
    edges : PassbandEdges or None
        Estimated passband edges; ``None`` without a speech spectrum, or for a steady
        signal (no pauses found: noise, tones), which is not speech, so comparing it with
        a reference speech spectrum would say nothing about the chain.
    hum : HumResult or None
        Mains hum, ``None`` when none was found; its level is referred to the active speech
        level (ITU-T P.56), or to the speech frames' RMS level when there is none.
    hum_window_count : int
        Hum analysis windows seen; 0 means the recording was too short to look for hum.
    voice : VoiceResult
        Talker F0 range.
    speech_noise : SpeechNoisePower or None
        Noise power, active level of the speech alone and SNR by power subtraction
        (:mod:`voiceband.measurement.speech_noise`).
    fine_edges : FineEdges or None
        Passband edges from the fine spectrum with their ranges (:mod:`voiceband.measurement.edges`).
    tones : tuple of SteadyTone
        Steady tones (CTCSS and others) in the pauses, or throughout a steady signal.
    mains_comb : bool
        Whether ``hum`` is a comb of mains harmonics that no steady tone explains.
    sii_speech, sii_noise : BandLevels or None
        The SII inputs: active speech band power by power subtraction, and the noise.
    sii_unmeasurable : str or None
        Why the SII cannot be measured from this recording (no usable pauses).
    """

    levels: LevelsResult
    clipping: ClippingResult
    activity: ActivityResult
    spectrum: Optional[SpectrumResult]
    occupied_bandwidth: Optional[OccupiedBandwidth]
    edges: Optional[PassbandEdges]
    hum: Optional[HumResult]
    hum_window_count: int
    voice: VoiceResult
    speech_noise: Optional[SpeechNoisePower] = None
    fine_edges: Optional[FineEdges] = None
    tones: tuple = ()
    mains_comb: bool = False
    sii_speech: Optional[BandLevels] = None
    sii_noise: Optional[BandLevels] = None
    sii_unmeasurable: Optional[str] = None


class RecordingAccumulator:
    """Every accumulator one analysis feeds, block by block (see the module docstring).

    Parameters
    ----------
    sample_rate_hz : float
        Sample rate (Hz).

    Examples
    --------
    >>> import numpy as np
    >>> acc = RecordingAccumulator(8000)
    >>> acc.update(0.5 * np.sin(2 * np.pi * 1000 * np.arange(8000) / 8000))
    >>> round(acc.result().levels.peak_dbfs, 2)
    -6.02
    """

    def __init__(self, sample_rate_hz: float, *, timeline: bool = False):
        from .measurement.activity import ActivityAccumulator
        from .measurement.hum import HumAccumulator
        from .measurement.clipping import ClippingAccumulator
        from .measurement.levels import LevelsAccumulator
        from .measurement.spectrum import LongTermSpectrumAccumulator
        from .measurement.voice import VoiceReservoir
        from .measurement.speech_noise import SpeechNoiseAccumulator

        self.activity = ActivityAccumulator(sample_rate_hz)  # checks the rate
        fs = self.activity.sample_rate_hz
        self.sample_rate_hz = fs
        self.levels = LevelsAccumulator(sample_rate_hz)
        self.clipping = ClippingAccumulator(sample_rate_hz)
        self.spectrum = LongTermSpectrumAccumulator(fs, self.activity.nfft)
        self.hum = HumAccumulator(fs)
        self.voice = VoiceReservoir(fs)
        self.speech_noise = SpeechNoiseAccumulator((self.activity.nfft // 2) / fs)
        self.timeline = None
        if timeline:  # only for the report's figures: level over time, coarse spectrogram, histogram
            from .measurement.timeline import TimelineAccumulator

            self.timeline = TimelineAccumulator(int(fs))
        self.samples = 0

    def update(self, block: np.ndarray, *, bounded: bool = False) -> None:
        """Add the next block of samples (1-D, native scale, any length >= 1).

        ``bounded=True`` says the samples came from integer codes (see
        :func:`voiceband.audio.is_bounded_subtype`), so they are finite and within ±1.0 and the
        scale check below is left out (about a tenth of the per-sample cost).
        """
        if not bounded:
            from .validate import measurable_samples

            # Huge finite samples (a float file at the wrong scale) are refused by what they are,
            # before any float32 path turns them into infinities.
            measurable_samples(np.asarray(block), name="The samples", first_sample=self.samples,
                               sample_rate_hz=self.sample_rate_hz)
        from .validate import block as checked_block

        x = checked_block(block)  # raises SignalValueError on a bad block before anything else sees it
        if x.size == 0:
            return
        # One pass of the level meter over the block, in cache-sized chunks, also finds the
        # maxima and minima of short pieces (its own sample and true peaks and the clipping
        # detector's extremes and candidates come from them) and writes the float32 copy the
        # framing, hum and F0 paths use.
        peaks = self.levels.update(x, copy_to=self.activity.float32_slot(x.size))
        self.clipping.update(x, peaks=peaks)
        frames, bins, first, x32, ms = self.activity.update_frames(x, converted=True)
        self.spectrum.update_frames(frames, bins, first)
        self.speech_noise.update(ms)
        self.hum.update(x32)
        self.voice.update(x32)
        if self.timeline is not None:
            self.timeline.update(block)
        self.samples += len(block)

    def result(self) -> Measurements:
        """Everything measured so far (does not change the accumulator)."""
        from .measurement.activity import classify_level_bins
        from .measurement.bandwidth import occupied_bandwidth, passband_edges
        from .measurement.edges import fine_edges, noise_from_quietest_frames
        from .measurement.spectrum import third_octave_levels_db
        from .measurement.speech_noise import noise_psd_at_level
        from .measurement.tones import is_mains_comb, steady_tones

        lv = self.levels.result()
        act = self.activity.result()
        active = finite(lv.active_level_dbfs)
        sn = self.speech_noise.result(act.noise_mode_dbfs, pause_floor_dbfs=act.noise_floor_dbfs)
        # Hum and tones are referred to the speech alone where the noise could be removed.
        ref_level = sn.active_level_dbfs if sn.active_level_dbfs is not None else (
            active if active is not None else act.speech_level_dbfs)
        hum = self.hum.result(reference_level_dbfs=ref_level)
        voice = self.voice.result(min_level_dbfs=act.speech_threshold_dbfs)
        spectrum = obw = edges = fine = None
        tones: tuple = ()
        sii_speech = sii_noise = None
        sii_why = None
        if act.frame_count > 0:
            speech_bins, pause_bins, _ = classify_level_bins(self.activity.counts)
            spectrum = self.spectrum.result(speech_bins, pause_bins)
            freqs = spectrum.freqs_hz
            noise_psd = spectrum.noise_psd_fs2_per_hz
            if noise_psd is not None and sn.noise_power_fs2 is not None:
                noise_psd = noise_psd_at_level(noise_psd, freqs, sn.noise_power_fs2)
            steady = act.noise_mode_dbfs is None
            line_psd = spectrum.speech_psd_fs2_per_hz if steady else spectrum.noise_psd_fs2_per_hz
            if line_psd is not None:
                low = self.hum.quiet_spectrum()
                rms = finite(lv.rms_dbfs)
                tones = steady_tones(line_psd, freqs, low_psd=None if low is None else low[1],
                                     low_freqs_hz=None if low is None else low[0],
                                     min_level_dbfs=(rms - TONE_FLOOR_DB) if rms is not None else -math.inf)
            if spectrum.speech_band_db is not None:
                try:
                    obw = occupied_bandwidth(spectrum.speech_psd_fs2_per_hz, freqs,
                                             span_hz=(OBW_SPAN_LOW_HZ, self.sample_rate_hz / 2.0))
                except MeasurementError:
                    obw = None
                # The noise the edges are read against: the pauses'; or, in speech in noise with no
                # pauses standing out, the quietest frames' spectrum, each edge then marked uncertain
                # (limited by noise) rather than left null while the true edges may lie below Nyquist.
                edge_noise = None
                if not steady:
                    edge_noise = (spectrum.noise_levels, noise_psd, False)
                elif voice.f0_median_hz is not None:
                    quiet = _quietest_bins(self.activity.counts)
                    quiet_psd = None if quiet is None else self.spectrum.psd_of(quiet)
                    if quiet_psd is not None:
                        edge_noise = (third_octave_levels_db(quiet_psd, freqs), quiet_psd, True)
                if edge_noise is not None:
                    noise_levels, edge_psd, from_quietest = edge_noise
                    edges = passband_edges(spectrum.speech_levels, noise=noise_levels, reference="auto")
                    fine = fine_edges(freqs, spectrum.speech_psd_fs2_per_hz, edge_psd,
                                      effort_index=edges.effort_index, f0_low_hz=voice.f0_p5_hz,
                                      f0_median_hz=voice.f0_median_hz)
                    if from_quietest and fine is not None:
                        fine = noise_from_quietest_frames(fine)
                if edges is not None:
                    lo_hz = fine.low.hz if fine is not None else edges.low_hz
                    hi_hz = fine.high.hz if fine is not None else edges.high_hz
                    spectrum = spectrum.within_passband(lo_hz, hi_hz)
            sii_speech, sii_noise, sii_why = self._sii_inputs(spectrum, sn, act, noise_psd)
        tone_hz = [t.frequency_hz for t in tones]
        comb = hum is not None and is_mains_comb(hum.harmonics_hz, hum.fundamental_hz, tone_hz,
                                                 hum.harmonic_levels_dbfs)
        if comb:  # the comb's own lines are hum, not separate tones
            tones = tuple(t for t in tones if not any(abs(t.frequency_hz - h) < 1.0 for h in hum.harmonics_hz))
        return Measurements(lv, self.clipping.result(), act, spectrum, obw, edges, hum, self.hum.window_count,
                            voice, sn, fine, tones, comb, sii_speech, sii_noise, sii_why)

    def _sii_inputs(self, spectrum, sn, act, noise_psd):
        """Speech and noise band levels for the SII, or why there are none."""
        from .bands import BandLevels
        from .measurement.spectrum import band_powers
        from .measurement.speech_noise import speech_band_power

        if spectrum.speech_band_db is None:
            return None, None, None
        if act.noise_mode_dbfs is None:
            return None, None, ("no pauses between words were found, so the noise under the speech "
                                "cannot be told from the speech; the SII is not measurable from this recording")
        if act.noise_mode_dbfs == -math.inf or noise_psd is None:
            # Pauses of digital silence: no noise; the speech frames are the speech.
            return spectrum.speech_levels, None, None
        if sn.activity is None or sn.noise_power_fs2 is None:
            return None, None, ("the speech does not stand clear of the noise, so its spectrum cannot be "
                                "separated from the noise; the SII is not measurable from this recording")
        bands = spectrum.speech_levels.bands
        freqs = spectrum.freqs_hz
        all_psd = self.spectrum.psd_of(np.ones(self.activity.counts.size, dtype=bool))
        p_all = band_powers(all_psd, freqs, bands.lower_hz, bands.upper_hz)
        p_noise = band_powers(noise_psd, freqs, bands.lower_hz, bands.upper_hz)
        speech = speech_band_power(p_all, p_noise, sn.activity)
        with np.errstate(divide="ignore"):
            return (BandLevels(bands, 10.0 * np.log10(speech)),
                    BandLevels(bands, 10.0 * np.log10(p_noise)), None)


def _quietest_bins(counts) -> Optional[np.ndarray]:
    """The frame-level bins (1 dB, :func:`voiceband.measurement.activity.level_bin`) holding
    the quietest :data:`QUIET_FRAME_FRACTION` of the frames, or ``None`` when the frame levels
    do not move as speech does (90th percentile less than :data:`SPEECH_LEVEL_SPREAD_DB`
    above the 10th) or the quietest frames are digital silence (bin 0)."""
    c = np.asarray(counts, dtype=np.int64)
    total = int(c.sum())
    if total <= 0:
        return None
    cum = np.cumsum(c)
    p10 = int(np.searchsorted(cum, 0.1 * total))
    p90 = int(np.searchsorted(cum, 0.9 * total))
    if p90 - p10 < SPEECH_LEVEL_SPREAD_DB or p10 == 0:
        return None
    last = int(np.searchsorted(cum, QUIET_FRAME_FRACTION * total))
    return np.arange(c.size) <= last


def measure_recording(x: np.ndarray, sample_rate_hz: float) -> Measurements:
    """The measurement results of a whole signal (one pass of :class:`RecordingAccumulator`)."""
    acc = RecordingAccumulator(sample_rate_hz)
    acc.update(x)
    return acc.result()


def analyze_file(
    path: Union[str, os.PathLike],
    *,
    channel: audio.Channel = 0,
    progress: Optional[ProgressFn] = None,
    block_frames: int = audio.DEFAULT_BLOCK_FRAMES,
) -> AnalysisResult:
    """Measure one channel of a recording of transmit audio.

    Parameters
    ----------
    path : path-like
        Any file libsndfile reads (WAV/RF64/W64, FLAC, OGG, MP3, ...), 8–192 kHz.
    channel : int or "mix", keyword-only
    progress : callable(done_frames, total_frames), optional

    Raises
    ------
    AudioInputError, AudioFormatError
        The file cannot be opened or decoded (see :mod:`voiceband.audio`).
    SignalValueError
        The samples contain NaN/Inf, or the recording is shorter than :data:`MIN_DURATION_S`.
    """
    return _combine(*_read_file(path, channel, progress, block_frames, timeline=False))


@dataclass(frozen=True)
class AnalysisDetails:
    """What the report's figures need beyond :class:`AnalysisResult`, from the same single pass.

    Attributes
    ----------
    measurements : Measurements
        The measurement results (fine speech and pause PSDs, activity thresholds, hum lines).
    timeline : voiceband.measurement.timeline.TimelineResult
        Level over time, coarse spectrogram and sample-value histogram.
    """

    measurements: Measurements
    timeline: "TimelineResult"


def analyze_file_detailed(
    path: Union[str, os.PathLike],
    *,
    channel: audio.Channel = 0,
    progress: Optional[ProgressFn] = None,
    block_frames: int = audio.DEFAULT_BLOCK_FRAMES,
) -> tuple[AnalysisResult, AnalysisDetails]:
    """:func:`analyze_file` plus the statistics the report's figures draw, in the same single pass."""
    info, pipe = _read_file(path, channel, progress, block_frames, timeline=True)
    m = pipe.result()
    return _combine(info, pipe, m), AnalysisDetails(m, pipe.timeline.result())


def _read_file(path, channel, progress, block_frames, *, timeline: bool) -> tuple[InputInfo, RecordingAccumulator]:
    ai = audio.info(path)
    if ai.frames < int(MIN_DURATION_S * ai.sample_rate_hz):
        raise SignalValueError(
            f"'{ai.path}' is too short to analyse ({ai.frames} samples, {ai.duration_s:.3f} s); "
            f"voiceband needs at least {MIN_DURATION_S} s."
        )
    pipe = RecordingAccumulator(ai.sample_rate_hz, timeline=timeline)
    bounded = audio.is_bounded_subtype(ai.subtype)
    for block in audio.blocks(ai.path, channel=channel, block_frames=block_frames, audio_info=ai):
        pipe.update(block, bounded=bounded)
        if progress is not None:
            progress(pipe.samples, ai.frames)
    if pipe.samples < int(MIN_DURATION_S * ai.sample_rate_hz):
        raise SignalValueError(f"'{ai.path}' holds fewer samples than its header says; it may be truncated.")
    ch = "mix" if str(channel) == "mix" else str(int(channel))
    info = InputInfo(
        path=ai.path,
        sample_rate_hz=ai.sample_rate_hz,
        channels=ai.channels,
        channel_used=ch,
        duration_s=pipe.samples / ai.sample_rate_hz,
        format=ai.format,
        subtype=ai.subtype,
    )
    return info, pipe


def analyze_signal(samples: np.ndarray, sample_rate_hz: int, *, name: str = "<signal>") -> AnalysisResult:
    """Measure a signal already in memory (native scale, full scale = ±1.0) as :func:`analyze_file` would.

    ``samples`` must be floating point: integer arrays are refused with a sentence saying how to
    scale them (their full scale depends on the type), rather than read as if ±1.0 were full scale.
    """
    x = validate.block(samples)
    fs = validate.sample_rate_hz(sample_rate_hz)
    if x.size < int(MIN_DURATION_S * fs):
        raise SignalValueError(f"the signal is too short to analyse ({x.size} samples); voiceband needs at least {MIN_DURATION_S} s.")
    pipe = RecordingAccumulator(fs)
    step = audio.DEFAULT_BLOCK_FRAMES
    for i in range(0, x.size, step):
        pipe.update(x[i:i + step])
    info = InputInfo(name, fs, 1, "0", x.size / fs, "memory", "FLOAT64")
    return _combine(info, pipe)


def _combine(info: InputInfo, pipe: RecordingAccumulator, m: Optional[Measurements] = None) -> AnalysisResult:
    from . import __version__
    from .findings import findings_for

    if m is None:
        m = pipe.result()
    levels = LevelsSection.of(m.levels)
    silent = levels.peak_dbfs is None
    noise = NoiseSection.of(m.activity, m.hum if m.mains_comb else None, active_level_dbfs=levels.active_level_dbfs,
                            silent=silent, speech_noise=m.speech_noise, tones=m.tones)
    spectrum = SpectrumSection.of(m.spectrum, m.edges, m.occupied_bandwidth, silent=silent, fine=m.fine_edges)
    act = m.activity
    pauses_silent = (not silent and act.pause_frame_count > 0 and act.noise_floor_dbfs is not None
                     and act.noise_floor_dbfs == -math.inf)
    intel = None
    sii_error = None if silent else m.sii_unmeasurable
    if m.sii_speech is not None and not silent:
        from .intelligibility import recording_intelligibility

        try:
            intel = recording_intelligibility(m.sii_speech, m.sii_noise)
        except ValueError as exc:
            sii_error = str(exc)
    clipping = ClippingSection.of(m.clipping, max_events=MAX_LISTED_CLIP_EVENTS)
    voice = VoiceSection.of(m.voice)
    findings = findings_for(
        duration_s=info.duration_s,
        sample_rate_hz=info.sample_rate_hz,
        levels=levels,
        clipping=clipping,
        noise=noise,
        spectrum=spectrum,
        voice=voice,
        sii=intel.sii if intel is not None else None,
        sii_rating=intel.rating if intel is not None else None,
        pauses_digital_silence=pauses_silent,
        sii_error=sii_error,
    )
    return AnalysisResult(
        input=info,
        levels=levels,
        clipping=clipping,
        noise=noise,
        spectrum=spectrum,
        voice=voice,
        intelligibility=intel,
        findings=findings,
        voiceband_version=__version__,
    )
