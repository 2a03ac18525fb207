"""Synthetic speech, noise and test signals (sweep, multitone, two-tone, tones).

* :func:`synthesize_speech` -- calibrated source–filter speech (ANSI S3.5-1997 Table 3
  spectrum, P.56 active level −26 dBFS), low/medium/high voices, four vocal efforts.
* :mod:`.noise` -- white, pink, receiver hiss, mains hum, static crashes.
* :mod:`.sweep` -- exponential sine sweep (Farina) with start/stop markers, and its inverse filter.
* :mod:`.tones` -- Schroeder-phase multitone, SSB two-tone pair, reference tone, stepped tones.
* :mod:`.corpus` -- the ``corpus_synthetic/`` spec files, manifest and regeneration.

Importing this package needs only numpy; scipy is imported inside the generators.
"""

from .noise import mains_hum, pink_noise, receiver_hiss, static_crashes, white_noise
from .speech import EFFORTS, VOICES, synthesize_speech
from .sweep import SweepSignal, exponential_sweep, inverse_filter
from .tones import (
    SteppedTones,
    TestSignal,
    multitone,
    reference_tone,
    schroeder_phases,
    stepped_tones,
    two_tone,
)

__all__ = [
    "synthesize_speech",
    "VOICES",
    "EFFORTS",
    "white_noise",
    "pink_noise",
    "receiver_hiss",
    "mains_hum",
    "static_crashes",
    "SweepSignal",
    "exponential_sweep",
    "inverse_filter",
    "TestSignal",
    "SteppedTones",
    "multitone",
    "schroeder_phases",
    "two_tone",
    "reference_tone",
    "stepped_tones",
]
