"""Per-recording measurements: pure, streaming, no file I/O and no plotting.

One module per concern (levels, clipping, activity, hum, spectrum, bandwidth, voice).
Each offers an accumulator (``update(block)`` / ``result()``) and a one-shot
``measure_*`` function; :mod:`voiceband.analysis` fans a recording out to them.
"""
