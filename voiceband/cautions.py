"""Cautions printed where the risk is: beside a test signal meant for a transmitter, and a chain measurement.

The wording defers to local regulations and licensed practice (the README's safety section).
The duty-cycle point is common practice: a steady tone keeps a transmitter at full output for
as long as it plays (100 % duty), and many transmitters are rated for less, or for full
output only for a limited key-down time.
"""

from __future__ import annotations

__all__ = ["TRANSMITTER_CAUTION"]

#: Printed by ``voiceband testsignal`` and ``voiceband response``.
TRANSMITTER_CAUTION = (
    "Caution: if this signal drives a transmitter, transmit into a dummy load where possible and only "
    "on frequencies and emissions your licence permits; a steady test tone is 100 % duty, and many "
    "transmitters are rated for less, so keep key-down periods within the transmitter's duty cycle "
    "(or reduce power). Local regulations and licensed practice come first."
)
