"""Decibel conversions of scalar powers and amplitudes, written once.

``10 log10`` of a power ratio and ``20 log10`` of an amplitude ratio (the decibel of
IEC 60027-3 for power and root-power quantities; from memory); a zero quantity reads
``-inf`` dB rather than raising, so "no power" stays distinguishable from "not measured"
(``None``).

Examples
--------
>>> db_power(0.5)
-3.010299956639812
>>> db_amplitude(0.0)
-inf
"""

from __future__ import annotations

import math

__all__ = ["db_power", "db_amplitude"]


def db_power(x: float) -> float:
    """``10 log10(x)`` for a power (mean square, band power); ``-inf`` for ``x <= 0``."""
    return 10.0 * math.log10(x) if x > 0.0 else -math.inf


def db_amplitude(x: float) -> float:
    """``20 log10(x)`` for an amplitude (peak, RMS); ``-inf`` for ``x <= 0``."""
    return 20.0 * math.log10(x) if x > 0.0 else -math.inf
