"""Measuring a chain's response from a recorded test signal (sweep or steady tones).

The entry point is :func:`measure_response`; the modules below it each do one step:
``stimulus`` (what the test signal is), ``align`` (delay, sample rate, clock drift),
``offset`` (SSB carrier offset, per-tone tracking), ``deconvolve`` (sweep to impulse
responses), ``metrics`` (edges, ripple), ``quality`` (silent or clipped recordings);
``document`` builds the JSON document of ``voiceband response``.
"""

from .document import response_document
from .measure import HarmonicLevel, ResponseResult, measure_response
from .metrics import ResponseEdges

__all__ = ["measure_response", "response_document", "ResponseResult", "HarmonicLevel", "ResponseEdges"]
