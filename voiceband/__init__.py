"""voiceband: measure and model the transmit audio of voice radio.

Public API (importing this package loads neither matplotlib nor librosa):

- :func:`analyze_file`, :func:`analyze_signal` -> :class:`AnalysisResult`
- :mod:`voiceband.audio` reading/writing; :mod:`voiceband.levels`, :mod:`voiceband.clipping`,
  :mod:`voiceband.activity`, :mod:`voiceband.spectrum`, :mod:`voiceband.bandwidth`,
  :mod:`voiceband.voice` measurements; :mod:`voiceband.intelligibility` (SII, STOI);
  :mod:`voiceband.synth` synthetic speech and test signals; :mod:`voiceband.response`.
"""

from __future__ import annotations

__version__ = "0.1.0"

from .analysis import analyze_file, analyze_signal
from .errors import (
    AudioFormatError,
    AudioInputError,
    ChainFileError,
    MeasurementError,
    OutputExistsError,
    SignalValueError,
    VoicebandError,
)
from .results import AnalysisResult, Finding

__all__ = [
    "__version__",
    "analyze_file",
    "analyze_signal",
    "AnalysisResult",
    "Finding",
    "VoicebandError",
    "AudioInputError",
    "AudioFormatError",
    "SignalValueError",
    "ChainFileError",
    "OutputExistsError",
    "MeasurementError",
]
