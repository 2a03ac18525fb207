"""Transmit audio chains: stages built from parts or prototypes, their response, and audio through them.

In the manner of scipy.signal, design, evaluation and application are kept apart: a stage is built
from its parameters (:mod:`.stages`), a linear stage gives ``response(frequencies_hz)`` without
touching audio, and every stage can ``process(samples, sample_rate_hz)``. A :class:`Chain` is an
ordered tuple of stages; :func:`read_chain` reads one from a TOML chain file (:mod:`.reader`), and
:func:`parse_value` reads SI-prefixed part values ("47n", "4k7", "68m").

Importing this package needs only numpy; scipy.signal is imported inside the functions that use it.
"""

from .chain import Chain
from .reader import STAGE_PARAMETERS, chain_from_dict, read_chain
from .stages import (
    FILTER_TYPES,
    RC,
    SSB,
    Channel,
    Clipper,
    Compressor,
    Emphasis,
    Filter,
    Gain,
    Ladder,
    LadderBranch,
    Microphone,
    apply_response,
    sideband_suppression_db,
)
from .values import parse_value

__all__ = [
    "Chain",
    "read_chain",
    "chain_from_dict",
    "STAGE_PARAMETERS",
    "FILTER_TYPES",
    "Gain",
    "Filter",
    "RC",
    "Ladder",
    "LadderBranch",
    "Microphone",
    "Emphasis",
    "Clipper",
    "Compressor",
    "SSB",
    "Channel",
    "apply_response",
    "sideband_suppression_db",
    "parse_value",
]
