"""Steady tones in a recording: CTCSS (sub-audible squelch) tones, test tones, and the mains
comb told apart from them.

A steady tone is a narrow spectral line present in the pauses (or throughout a recording
without pauses): speech harmonics move with the talker's pitch and are absent from pauses.
:func:`find_tones` finds such lines in a long-term PSD; :func:`ctcss_tone` names a line
that matches the standard CTCSS list; :func:`is_mains_comb` decides whether a mains-hum
detection is really a comb of mains harmonics rather than one tone or a CTCSS tone's own
harmonics.

CTCSS tones
-----------
:data:`CTCSS_TONES_HZ` is the list of continuous tone-coded squelch frequencies
67.0-254.1 Hz in common use (the standard tones of EIA/TIA-603, with the widely used
additional tones).  **From memory**: the standard itself was not consulted; the range
agrees with trade notes 1.6 (67.0-254.1 Hz).  A line matches a tone within
:data:`CTCSS_TOLERANCE` (0.5 %, narrower than half the closest spacing, 159.8/162.2 Hz).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional, Sequence

import numpy as np

from ..arrays import median

__all__ = [
    "CTCSS_TONES_HZ",
    "CTCSS_TOLERANCE",
    "LINE_PROMINENCE_DB",
    "Tone",
    "find_tones",
    "ctcss_tone",
    "is_mains_comb",
]

#: CTCSS tone frequencies (Hz). From memory (EIA/TIA-603 standard tones plus the common
#: additional ones); see the module docstring.
CTCSS_TONES_HZ = (
    67.0, 69.3, 71.9, 74.4, 77.0, 79.7, 82.5, 85.4, 88.5, 91.5, 94.8, 97.4, 100.0, 103.5,
    107.2, 110.9, 114.8, 118.8, 123.0, 127.3, 131.8, 136.5, 141.3, 146.2, 150.0, 151.4,
    156.7, 159.8, 162.2, 165.5, 167.9, 171.3, 173.8, 177.3, 179.9, 183.5, 186.2, 189.9,
    192.8, 196.6, 199.5, 203.5, 206.5, 210.7, 218.1, 225.7, 229.1, 233.6, 241.8, 250.3, 254.1,
)
#: Relative frequency tolerance of a CTCSS match.
CTCSS_TOLERANCE = 0.005
#: A line must stand this far above the local median spectrum (dB).
LINE_PROMINENCE_DB = 15.0
#: A line must also stand this far above its own shoulders, 3-6 bins away (dB): narrow.
_SHOULDER_DB = 10.0
#: Half-width of the local-median window (bins).
_MEDIAN_HALF_BINS = 24


@dataclass(frozen=True)
class Tone:
    """One steady spectral line.

    Attributes
    ----------
    frequency_hz : float
        Peak frequency, parabolic interpolation of the log spectrum (Hz).
    level_dbfs : float
        Line power above the local background (dBFS).
    prominence_db : float
        Peak over the local median spectrum (dB).
    """

    frequency_hz: float
    level_dbfs: float
    prominence_db: float


def find_tones(psd, freqs_hz, *, low_hz: float = 20.0, high_hz: Optional[float] = None,
               max_tones: int = 8) -> tuple[Tone, ...]:
    """Narrow lines in a one-sided PSD (window with a main lobe of about +/-2 bins, e.g. Hann).

    A bin is a line when it is a local maximum, at least :data:`LINE_PROMINENCE_DB` above
    the median of the PSD within +/-24 bins and :data:`_SHOULDER_DB` above the mean of the
    bins 3-6 away on both sides.  The line's power is the PSD summed over +/-2 bins minus
    the median background, times the bin width.

    Parameters
    ----------
    psd, freqs_hz : array_like, shape (n,)
        PSD (full-scale units squared per Hz) on a uniform grid.
    low_hz, high_hz : float, keyword-only
        Search span (Hz); ``high_hz`` defaults to 95 % of the grid's last frequency.
    max_tones : int, keyword-only
        The strongest lines kept.

    Returns
    -------
    tuple of Tone
        Strongest first.
    """
    p = np.asarray(psd, dtype=float)
    f = np.asarray(freqs_hz, dtype=float)
    df = float(f[1] - f[0])
    n = p.size
    hi = 0.95 * f[-1] if high_hz is None else float(high_hz)
    k0 = max(int(math.ceil(low_hz / df)), 7)
    k1 = min(int(hi / df), n - 8)
    if k1 <= k0:
        return ()
    tiny = float(np.max(p)) * 1e-15 + 1e-300
    cand = np.arange(k0, k1)
    cand = cand[(p[cand] >= p[cand - 1]) & (p[cand] > p[cand + 1])]
    # Background: the median of the +/-24 bins around each candidate, its own +/-2 bins left
    # out.  Candidates whose whole window lies inside the grid are done in one vectorised
    # median (same values, same result as one at a time); those near the ends one by one.
    h = _MEDIAN_HALF_BINS
    background = np.full(cand.size, np.nan)
    inner = (cand >= h) & (cand + h + 1 <= n)
    if np.any(inner):
        ki = cand[inner]
        offsets = np.r_[np.arange(-h, -2), np.arange(3, h + 1)]
        background[inner] = median(p[ki[:, None] + offsets[None, :]], axis=1)
    found = []
    for k, bg_k in zip(cand.tolist(), background.tolist()):
        if math.isnan(bg_k):
            a, b = max(k - h, 0), min(k + h + 1, n)
            window = np.r_[p[a:max(k - 2, a)], p[k + 3:b]]
            if window.size < 8:
                continue
            bg_k = float(median(window))
        bg = max(bg_k, tiny)
        prom = 10.0 * math.log10(max(p[k], tiny) / bg)
        if prom < LINE_PROMINENCE_DB:
            continue
        shoulders = np.r_[p[k - 6:k - 2], p[k + 3:k + 7]]
        if p[k] < float(np.mean(shoulders)) * 10 ** (_SHOULDER_DB / 10):
            continue
        la, lb, lc = np.log(np.maximum(p[k - 1:k + 2], tiny))
        den = la - 2 * lb + lc
        delta = 0.5 * (la - lc) / den if den < 0 else 0.0
        power = float(np.sum(np.maximum(p[k - 2:k + 3] - bg, 0.0)) * df)
        if power <= 0:
            continue
        found.append(Tone((k + float(np.clip(delta, -0.5, 0.5))) * df, 10.0 * math.log10(power), prom))
    found.sort(key=lambda t: -t.level_dbfs)
    return tuple(found[:max_tones])


def ctcss_tone(frequency_hz: float) -> Optional[float]:
    """The standard CTCSS tone within :data:`CTCSS_TOLERANCE` of a frequency, else ``None``."""
    tones = np.asarray(CTCSS_TONES_HZ)
    i = int(np.argmin(np.abs(tones - frequency_hz)))
    return float(tones[i]) if abs(tones[i] - frequency_hz) <= CTCSS_TOLERANCE * tones[i] else None


#: Harmonics weaker than this below the comb's strongest line do not count towards a comb (dB).
COMB_SPAN_DB = 40.0


def is_mains_comb(harmonics_hz: Sequence[float], fundamental_hz: float,
                  tones_hz: Sequence[float] = (), levels_dbfs: Optional[Sequence[float]] = None) -> bool:
    """Whether detected mains harmonics form a comb that only mains hum explains.

    At least two harmonics within :data:`COMB_SPAN_DB` of the strongest must be present (a
    lone line at 50 or 60 Hz, or a 400 Hz test tone with a converter residue at 200 Hz, is a
    steady tone, not a measured comb), and they must not all be multiples of one steady
    tone that is not the mains fundamental (a CTCSS tone of 100.0 or 150.0 Hz and its
    distortion products sit on multiples of 50 Hz).
    """
    h = [float(v) for v in harmonics_hz]
    if levels_dbfs is not None and len(levels_dbfs) == len(h) and h:
        top = max(float(v) for v in levels_dbfs)
        h = [v for v, lv in zip(h, levels_dbfs) if float(lv) >= top - COMB_SPAN_DB]
    if len(h) < 2:
        return False
    for t in tones_hz:
        if t <= 0 or abs(t - fundamental_hz) < 1.0:
            continue
        ratios = [v / t for v in h]
        if all(abs(r - round(r)) * t < 1.0 and round(r) >= 1 for r in ratios):
            return False
    return True


@dataclass(frozen=True)
class SteadyTone:
    """A steady tone as reported: frequency, level, and what it is.

    Attributes
    ----------
    frequency_hz : float
    level_dbfs : float
    kind : {"ctcss", "tone"}
        ``"ctcss"`` when it matches a standard CTCSS tone (:func:`ctcss_tone`).
    ctcss_hz : float or None
        The matched standard tone.
    """

    frequency_hz: float
    level_dbfs: float
    kind: str
    ctcss_hz: Optional[float]


#: Below this frequency (Hz) tones are read from the fine low-rate spectrum when one is given.
LOW_SPAN_TOP_HZ = 300.0


def steady_tones(psd, freqs_hz, *, low_psd=None, low_freqs_hz=None, max_tones: int = 8,
                 min_level_dbfs: float = -math.inf) -> tuple[SteadyTone, ...]:
    """Steady tones of a recording: lines in the pause (or steady-signal) spectrum.

    Below :data:`LOW_SPAN_TOP_HZ` the lines are taken from ``low_psd`` (a long-window spectrum
    of the quiet stretches with a fraction of a hertz resolution, enough to tell CTCSS tones
    apart) when given; above it, and without it, from ``psd``.  Each line is matched against
    the CTCSS list.  Lines weaker than ``min_level_dbfs`` are left out (the caller sets it
    some tens of dB below the recording's level: converter and filter residues are not tones).
    """
    out: list[Tone] = []
    if low_psd is not None and low_freqs_hz is not None and len(low_freqs_hz) > 16:
        top = min(LOW_SPAN_TOP_HZ, 0.95 * float(low_freqs_hz[-1]))
        out += list(find_tones(low_psd, low_freqs_hz, low_hz=20.0, high_hz=top, max_tones=max_tones))
        out += list(find_tones(psd, freqs_hz, low_hz=top, max_tones=max_tones))
    else:
        out += list(find_tones(psd, freqs_hz, max_tones=max_tones))
    out = [t for t in out if t.level_dbfs >= min_level_dbfs]
    out.sort(key=lambda t: -t.level_dbfs)
    result = []
    for t in out[:max_tones]:
        c = ctcss_tone(t.frequency_hz)
        result.append(SteadyTone(t.frequency_hz, t.level_dbfs, "ctcss" if c is not None else "tone", c))
    return tuple(result)
