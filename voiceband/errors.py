"""Exceptions raised by voiceband.

Every exception a user can provoke derives from :class:`VoicebandError`, so the
command line can turn it into one sentence on stderr and a non-zero exit.  Each
subclass also inherits the matching builtin (``ValueError``, ``OSError``) so
library callers can catch by meaning.
"""

from __future__ import annotations

__all__ = [
    "VoicebandError",
    "AudioInputError",
    "AudioFormatError",
    "SignalValueError",
    "ChainFileError",
    "OutputExistsError",
    "OutputPathError",
    "MeasurementError",
]


class VoicebandError(Exception):
    """Root of all voiceband errors; its message is one plain sentence."""


class AudioInputError(VoicebandError, OSError):
    """A path cannot be opened as audio: missing, a folder, unreadable."""


class AudioFormatError(VoicebandError, ValueError):
    """The file is not audio, is empty or truncated, or has an unsupported rate or shape."""


class SignalValueError(VoicebandError, ValueError):
    """The samples themselves cannot be measured (NaN/Inf, too short)."""


class ChainFileError(VoicebandError, ValueError):
    """A chain description file cannot be read or is inconsistent."""


class OutputExistsError(VoicebandError, FileExistsError):
    """An output file already exists and ``force`` was not given."""


class OutputPathError(VoicebandError, OSError):
    """An output cannot be written where asked: no such folder possible, no permission, name too long, an input."""


class MeasurementError(VoicebandError, ValueError):
    """A measurement cannot be made on the given signal (e.g. no stimulus found)."""
