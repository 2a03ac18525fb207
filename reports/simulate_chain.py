"""Stand-in for a real chain in the example report: 4th-order Butterworth band-pass 300–2700 Hz,
0.25 s delay, −3 dB gain, written as 16-bit WAV. Usage: simulate_chain.py STIMULUS OUT."""

import sys

import numpy as np
import soundfile as sf
from scipy.signal import butter, sosfilt

x, fs = sf.read(sys.argv[1])
sos = butter(4, [300, 2700], "bandpass", fs=fs, output="sos")
y = np.concatenate([np.zeros(int(0.25 * fs)), sosfilt(sos, x), np.zeros(fs // 2)]) * 10 ** (-3 / 20)
sf.write(sys.argv[2], y, fs, subtype="PCM_16")
