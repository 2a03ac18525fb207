"""voiceband: measure and model the transmit audio of voice radio.

Public API. Importing this package loads neither matplotlib nor librosa; the
measurement, intelligibility, synthesis and response names below are loaded on
first use (PEP 562 module ``__getattr__``), so the command line starts quickly.

Recordings
    :func:`analyze_file`, :func:`analyze_signal` -> :class:`AnalysisResult`;
    :func:`measure_recording`, :class:`RecordingAccumulator` -> the measurement results;
    :func:`read_audio`, :func:`audio_info`, :func:`write_audio`.
Measurements (streaming accumulators and one-shot functions)
    :func:`measure_levels`, :func:`measure_clipping`, :class:`LongTermSpectrumAccumulator`,
    :func:`occupied_bandwidth`, :func:`passband_edges`, :func:`detect_hum`, :func:`measure_voice`.
Intelligibility (ANSI S3.5-1997, Taal et al. 2011)
    :func:`sii`, :func:`band_gains_db`, :func:`channel_sii`, :func:`sii_vs_channel_snr`,
    :func:`recording_intelligibility`, :func:`standard_speech_spectrum`, :func:`stoi`.
Synthesis and test signals
    :func:`synthesize_speech`, :func:`exponential_sweep`, :func:`multitone`, :func:`two_tone`,
    :func:`reference_tone`, :func:`stepped_tones`, noise generators.
Chain response
    :func:`measure_response` -> ``ResponseResult``.
On-air test report
    :func:`load_profile`, :func:`profile_verdicts`, :func:`search_cutoffs`, :func:`recommendations`,
    :func:`build_report`, :func:`write_report`, :func:`analyze_file_detailed`.
Design bench
    :func:`read_chain` -> ``Chain``; :func:`evaluate_chain`, :func:`compare_chains`, :func:`sweep_cutoffs`.
"""

import importlib as _importlib

__version__ = "0.1.0"

from .errors import (
    AudioFormatError,
    AudioInputError,
    ChainFileError,
    MeasurementError,
    OutputExistsError,
    SignalValueError,
    VoicebandError,
)

# public name -> (module, attribute), imported on first access
_LAZY = {
    "AnalysisResult": ("voiceband.results", "AnalysisResult"),
    "Finding": ("voiceband.findings", "Finding"),
    "analyze_file": ("voiceband.analysis", "analyze_file"),
    "analyze_signal": ("voiceband.analysis", "analyze_signal"),
    "analyze_file_detailed": ("voiceband.analysis", "analyze_file_detailed"),
    "load_profile": ("voiceband.profiles", "load_profile"),
    "profile_verdicts": ("voiceband.profiles.verdicts", "verdicts"),
    "search_cutoffs": ("voiceband.recommend", "search_cutoffs"),
    "recommendations": ("voiceband.recommend", "recommendations"),
    "build_report": ("voiceband.report.onair", "build_report"),
    "write_report": ("voiceband.report.onair", "write_report"),
    "read_audio": ("voiceband.audio", "read"),
    "audio_info": ("voiceband.audio", "info"),
    "write_audio": ("voiceband.audio", "write"),
    "measure_levels": ("voiceband.measurement.levels", "measure_levels"),
    "LevelsAccumulator": ("voiceband.measurement.levels", "LevelsAccumulator"),
    "measure_clipping": ("voiceband.measurement.clipping", "measure_clipping"),
    "ClippingAccumulator": ("voiceband.measurement.clipping", "ClippingAccumulator"),
    "measure_recording": ("voiceband.analysis", "measure_recording"),
    "RecordingAccumulator": ("voiceband.analysis", "RecordingAccumulator"),
    "LongTermSpectrumAccumulator": ("voiceband.measurement.spectrum", "LongTermSpectrumAccumulator"),
    "third_octave_bands": ("voiceband.bands", "third_octave_bands"),
    "occupied_bandwidth": ("voiceband.measurement.bandwidth", "occupied_bandwidth"),
    "passband_edges": ("voiceband.measurement.bandwidth", "passband_edges"),
    "detect_hum": ("voiceband.measurement.hum", "detect_hum"),
    "measure_activity": ("voiceband.measurement.activity", "measure_activity"),
    "measure_voice": ("voiceband.measurement.voice", "measure_voice"),
    "sii": ("voiceband.intelligibility", "sii"),
    "sii_index": ("voiceband.intelligibility", "sii_index"),
    "band_gains_db": ("voiceband.intelligibility", "band_gains_db"),
    "channel_sii": ("voiceband.intelligibility", "channel_sii"),
    "sii_vs_channel_snr": ("voiceband.intelligibility", "sii_vs_channel_snr"),
    "recording_intelligibility": ("voiceband.intelligibility", "recording_intelligibility"),
    "standard_speech_spectrum": ("voiceband.intelligibility", "standard_speech_spectrum"),
    "stoi": ("voiceband.intelligibility", "stoi"),
    "synthesize_speech": ("voiceband.synth", "synthesize_speech"),
    "exponential_sweep": ("voiceband.synth", "exponential_sweep"),
    "multitone": ("voiceband.synth", "multitone"),
    "two_tone": ("voiceband.synth", "two_tone"),
    "reference_tone": ("voiceband.synth", "reference_tone"),
    "stepped_tones": ("voiceband.synth", "stepped_tones"),
    "white_noise": ("voiceband.synth", "white_noise"),
    "pink_noise": ("voiceband.synth", "pink_noise"),
    "receiver_hiss": ("voiceband.synth", "receiver_hiss"),
    "mains_hum": ("voiceband.synth", "mains_hum"),
    "static_crashes": ("voiceband.synth", "static_crashes"),
    "measure_response": ("voiceband.response", "measure_response"),
    "run_batch": ("voiceband.batch", "run_batch"),
    "BatchSettings": ("voiceband.batch", "BatchSettings"),
    "read_chain": ("voiceband.chain", "read_chain"),
    "evaluate_chain": ("voiceband.design.evaluate", "evaluate_chain"),
    "compare_chains": ("voiceband.design.compare", "compare_chains"),
    "sweep_cutoffs": ("voiceband.design.sweep", "sweep_cutoffs"),
}

__all__ = [
    "__version__",
    "AnalysisResult",
    "Finding",
    "VoicebandError",
    "AudioInputError",
    "AudioFormatError",
    "SignalValueError",
    "ChainFileError",
    "OutputExistsError",
    "MeasurementError",
    *_LAZY,
]


def __getattr__(name: str) -> object:
    try:
        module, attr = _LAZY[name]
    except KeyError:
        raise AttributeError(f"module 'voiceband' has no attribute {name!r}") from None
    value = getattr(_importlib.import_module(module), attr)
    globals()[name] = value
    return value


def __dir__() -> "list[str]":
    # The public names only (not the helpers this module imports for itself).
    return sorted(__all__)
