"""Checks that a recording can be measured at all: not silent, not clipped.

A clipped recording gives a response and distortion figures of the clipper, not of the
chain, so it is refused with a clear message rather than measured.  Clipping is found
by the project's detector (:mod:`voiceband.measurement.clipping`: flat runs at each polarity's
extreme, confirmed by a spike in the amplitude histogram's tail), which also finds a
clip level below full scale.
"""

from __future__ import annotations

import numpy as np

from .. import validate
from ..errors import MeasurementError, SignalValueError

__all__ = ["check_recording", "SILENCE_DBFS", "MIN_CLIPPED_RUNS"]

#: A recording whose sample peak is below this level is treated as silent (dBFS peak).
SILENCE_DBFS = -90.0
#: Flat runs at a clip level that make a recording count as clipped (a single loud click
#: may touch the ceiling once or twice; a clipped sweep or multitone does so hundreds of times).
MIN_CLIPPED_RUNS = 10


def check_recording(recording: np.ndarray, sample_rate_hz: int, *, name: str = "recording") -> None:
    """Refuse a recording that is empty, not finite, silent or clipped.

    Raises
    ------
    SignalValueError
        Empty, or contains NaN/Inf.
    MeasurementError
        Silent (peak below −90 dBFS) or clipped (at least ten flat runs at a clip level).
    """
    from ..measurement.clipping import measure_clipping

    y = np.asarray(recording, dtype=np.float64)
    if y.ndim != 1 or y.size == 0:
        raise SignalValueError(f"The {name} must be a non-empty single channel of samples.")
    validate.measurable_samples(y, name=f"The {name}'s samples")
    peak = float(np.max(np.abs(y)))
    if peak < 10.0 ** (SILENCE_DBFS / 20.0):
        level = "-inf" if peak == 0.0 else f"{20.0 * np.log10(peak):.1f}"
        raise MeasurementError(
            f"The {name} is silent (peak {level} dBFS); check the connection and the recording level."
        )
    clip = measure_clipping(y, float(sample_rate_hz))
    if clip.clip_level is not None and clip.run_count >= MIN_CLIPPED_RUNS:
        raise MeasurementError(
            f"The {name} is clipped ({clip.run_count} flat tops at {20.0 * np.log10(clip.clip_level):.1f} dBFS); "
            "lower the playback or recording level and record again."
        )
