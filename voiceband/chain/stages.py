"""The stage kinds of a chain, one module each; this module lists them.

Every stage is a frozen dataclass built from its parameters (checked, with one-sentence errors);
linear stages give ``response(frequencies_hz)``, every stage can ``process(samples, sample_rate_hz)``
(see :mod:`voiceband.chain.base` for how audio is processed).
"""

from __future__ import annotations

from .base import FILTER_TYPES, Stage, apply_response
from .channel import Channel
from .clipper import Clipper
from .compressor import Compressor
from .emphasis import Emphasis
from .filters import Filter
from .gain import Gain
from .ladder import Ladder, LadderBranch
from .microphone import Microphone
from .rc import RC
from .ssb import SSB, sideband_suppression_db

__all__ = [
    "FILTER_TYPES",
    "Stage",
    "apply_response",
    "Gain",
    "Filter",
    "RC",
    "LadderBranch",
    "Ladder",
    "Microphone",
    "Emphasis",
    "Clipper",
    "Compressor",
    "SSB",
    "Channel",
    "sideband_suppression_db",
]
