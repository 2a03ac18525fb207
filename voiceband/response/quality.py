"""Checks that a recording can be measured at all: not silent, not clipped.

A clipped recording gives a response and distortion figures of the clipper, not of the
chain, so it is refused with a clear message rather than measured.
"""

from __future__ import annotations

import numpy as np

from ..errors import MeasurementError, SignalValueError

__all__ = ["clipped_runs", "check_recording", "SILENCE_DBFS", "MIN_CLIPPED_RUNS"]

#: A recording whose sample peak is below this level is treated as silent (dBFS peak).
SILENCE_DBFS = -90.0
#: Runs of a flat top that make a recording count as clipped.
MIN_CLIPPED_RUNS = 10
_MIN_RUN = 3
#: The step into and out of a flat top must exceed this fraction of the clip level: a
#: smooth peak that merely rounds to equal samples arrives with a much smaller step.
_STEP_FRACTION = 0.005


def clipped_runs(x: np.ndarray) -> int:
    """Number of flat tops at the signal's extreme values.

    A flat top is a run of at least three samples within 1e-4 (relative) of the largest
    positive or most negative sample, entered and left by a step larger than 0.5 % of
    that level.  This finds clipping at full scale and below it (a clip level set by an
    analogue stage); a sinusoid's peak never stays flat for three samples and then
    falls away steeply.

    References
    ----------
    Flat-run detection of clipping is common practice (trade-facts §4).
    """
    x = np.asarray(x, dtype=np.float64)
    if x.size < _MIN_RUN + 2:
        return 0
    count = 0
    for sign in (1.0, -1.0):
        v = sign * x
        top = float(v.max())
        if top <= 0.0:
            continue
        tol = max(1e-4 * top, 1e-12)
        at = v >= top - tol
        edges = np.flatnonzero(np.diff(np.concatenate(([0], at.view(np.int8), [0]))))
        starts, stops = edges[0::2], edges[1::2]
        long = (stops - starts) >= _MIN_RUN
        starts, stops = starts[long], stops[long]
        inner = (starts > 0) & (stops < x.size)
        starts, stops = starts[inner], stops[inner]
        step_in = v[starts] - v[starts - 1]
        step_out = v[stops - 1] - v[stops]
        need = _STEP_FRACTION * top
        count += int(np.count_nonzero((step_in > need) & (step_out > need)))
    return count


def check_recording(recording: np.ndarray, *, name: str = "recording") -> None:
    """Refuse a recording that is empty, not finite, silent or clipped.

    Raises
    ------
    SignalValueError
        Empty, or contains NaN/Inf.
    MeasurementError
        Silent (peak below −90 dBFS) or clipped (ten or more flat tops at its extremes).
    """
    y = np.asarray(recording, dtype=np.float64)
    if y.ndim != 1 or y.size == 0:
        raise SignalValueError(f"The {name} must be a non-empty single channel of samples.")
    if not np.all(np.isfinite(y)):
        raise SignalValueError(f"The {name} contains NaN or infinite samples.")
    peak = float(np.max(np.abs(y)))
    if peak < 10.0 ** (SILENCE_DBFS / 20.0):
        level = "-inf" if peak == 0.0 else f"{20.0 * np.log10(peak):.1f}"
        raise MeasurementError(
            f"The {name} is silent (peak {level} dBFS); check the connection and the recording level."
        )
    runs = clipped_runs(y)
    if runs >= MIN_CLIPPED_RUNS:
        raise MeasurementError(
            f"The {name} is clipped ({runs} flat tops at {20.0 * np.log10(peak):.1f} dBFS); "
            "lower the playback or recording level and record again."
        )
