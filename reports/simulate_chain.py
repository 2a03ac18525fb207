"""Stand-in for a real chain in the example report: 4th-order Butterworth band-pass 300–2700 Hz,
0.25 s delay, −3 dB gain, written as 16-bit WAV. Usage: simulate_chain.py STIMULUS OUT."""

import sys

import numpy as np
import soundfile as sf

from voiceband.chain import chain_from_dict

chain = chain_from_dict({"name": "stand-in transmitter and receiver", "stage": [
    {"kind": "bandpass", "type": "butterworth", "order": 4, "low_hz": 300, "high_hz": "2.7k"},
    {"kind": "gain", "db": -3},
]})
x, fs = sf.read(sys.argv[1])
y = np.concatenate([np.zeros(int(0.25 * fs)), chain.process(x, fs), np.zeros(fs // 2)])
sf.write(sys.argv[2], y, fs, subtype="PCM_16")
