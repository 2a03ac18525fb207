"""Fractional-octave band geometry (IEC 61260-1:2014, base 10), written once, and a band-level type.

Every module that speaks of one-third-octave or octave bands takes its geometry from here:
the measured long-term spectrum, the passband edges, the SII one-third-octave and octave
procedures, the stepped test tones, the design bench.

Geometry
--------
IEC 61260-1:2014 clause 5.2 (base-10 system): the octave frequency ratio is ``G = 10**(3/10)``;
the exact mid-band frequency of band ``x`` of a ``1/b``-octave filter set with odd ``b`` is
``f_m = 1000 * G**(x/b)`` Hz (clause 5.4, eq. 3), and its band edges are
``f_m * G**(-1/(2b))`` and ``f_m * G**(+1/(2b))`` (clause 5.5, eqs. 5 and 6). The nominal
labels 25, 31.5, 40 ... 20000 Hz are the preferred numbers of IEC 61260-1 Annex E / ISO 266.

Band level vs spectrum level
----------------------------
A *band level* is ``10 log10`` of the power in a band (dB, e.g. dBFS); a *spectrum level* is
the power per hertz, ``band level - 10 log10(band width / 1 Hz)`` (dB per Hz; ANSI S3.5-1997
clause 3.27 and Table 3's "bandwidth adjustment"). :class:`BandLevels` carries the frequency
axis, the levels and which of the two they are, so no function takes loose parallel arrays.

Examples
--------
>>> from voiceband.bands import third_octave_bands
>>> b = third_octave_bands(8000)
>>> float(b.nominal_hz[-1])
3150.0
>>> round(float(b.upper_hz[-1]), 1)
3548.1
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, Optional

import numpy as np

from .errors import MeasurementError

__all__ = [
    "NOMINAL_THIRD_OCTAVE_HZ",
    "NOMINAL_OCTAVE_HZ",
    "OCTAVE_RATIO",
    "Bands",
    "BandLevels",
    "third_octave_bands",
    "octave_bands",
    "bands_for_nominal",
    "exact_centre_hz",
    "band_limits_hz",
]

#: Octave frequency ratio of the base-10 system, ``G = 10**(3/10)`` (IEC 61260-1:2014 clause 5.2).
OCTAVE_RATIO = 10.0 ** 0.3
#: Reference frequency (Hz) of the band numbering (IEC 61260-1:2014 clause 5.4).
REFERENCE_HZ = 1000.0

#: Nominal one-third-octave mid-band frequencies 25 Hz ... 20 kHz (IEC 61260-1:2014 Annex E,
#: ISO 266), band numbers x = -16 ... 13.
NOMINAL_THIRD_OCTAVE_HZ: tuple[float, ...] = (
    25.0, 31.5, 40.0, 50.0, 63.0, 80.0, 100.0, 125.0, 160.0, 200.0, 250.0, 315.0, 400.0, 500.0,
    630.0, 800.0, 1000.0, 1250.0, 1600.0, 2000.0, 2500.0, 3150.0, 4000.0, 5000.0, 6300.0,
    8000.0, 10000.0, 12500.0, 16000.0, 20000.0,
)
_FIRST_THIRD_OCTAVE_X = -16
#: Nominal octave mid-band frequencies 31.5 Hz ... 16 kHz (IEC 61260-1:2014 Annex E).
NOMINAL_OCTAVE_HZ: tuple[float, ...] = (31.5, 63.0, 125.0, 250.0, 500.0, 1000.0, 2000.0, 4000.0, 8000.0, 16000.0)

Kind = Literal["band", "spectrum"]


def _ro(a) -> np.ndarray:
    a = np.array(a, dtype=float)
    a.flags.writeable = False
    return a


def _check_fraction(fraction: int) -> int:
    if fraction not in (1, 3):
        raise MeasurementError(f"fraction must be 1 (octave) or 3 (one-third octave); got {fraction!r}.")
    return fraction


def exact_centre_hz(nominal_hz, *, fraction: int = 3) -> np.ndarray:
    """Exact mid-band frequencies (Hz) of the bands with the given nominal labels.

    IEC 61260-1:2014 clause 5.4: ``f_m = 1000 * G**(x/b)`` with ``G = 10**0.3``; the band
    number ``x`` is recovered from the nominal label by rounding.

    >>> [round(float(f), 2) for f in exact_centre_hz([31.5, 1000, 3150])]
    [31.62, 1000.0, 3162.28]
    """
    b = _check_fraction(fraction)
    f = np.asarray(nominal_hz, dtype=float)
    if np.any(~np.isfinite(f)) or np.any(f <= 0):
        raise MeasurementError("nominal band frequencies must be positive and finite (Hz).")
    x = np.round(b * np.log10(f / REFERENCE_HZ) / 0.3)
    # G**(x/b) written as 10**(3x/(10b)): the same number, rounded once.
    return REFERENCE_HZ * 10.0 ** (3.0 * x / (10.0 * b))


def band_limits_hz(nominal_hz, *, fraction: int = 3) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper band edges (Hz) of the bands with the given nominal labels.

    IEC 61260-1:2014 clause 5.5: ``f_m * G**(-1/(2b))`` and ``f_m * G**(+1/(2b))``.

    >>> lo, hi = band_limits_hz([1000])
    >>> round(float(lo[0]), 1), round(float(hi[0]), 1)
    (891.3, 1122.0)
    """
    b = _check_fraction(fraction)
    fm = exact_centre_hz(nominal_hz, fraction=b)
    k = 10.0 ** (3.0 / (20.0 * b))  # G**(1/(2b)), rounded once (10**0.05 for b = 3)
    return fm / k, fm * k


@dataclass(frozen=True)
class Bands:
    """A set of fractional-octave bands (IEC 61260-1:2014 base 10).

    Attributes
    ----------
    nominal_hz, centre_hz, lower_hz, upper_hz : ndarray, shape (n,)
        Nominal label, exact mid-band frequency and band edges (Hz), read-only.
    fraction : int
        3 for one-third-octave bands, 1 for octave bands.
    """

    nominal_hz: np.ndarray
    centre_hz: np.ndarray
    lower_hz: np.ndarray
    upper_hz: np.ndarray
    fraction: int = 3

    @property
    def width_hz(self) -> np.ndarray:
        """Band widths ``upper - lower`` (Hz)."""
        return self.upper_hz - self.lower_hz

    @property
    def size(self) -> int:
        return int(self.nominal_hz.size)

    def __len__(self) -> int:
        return self.size


def bands_for_nominal(nominal_hz, *, fraction: int = 3) -> Bands:
    """The :class:`Bands` with the given nominal labels (any subset, in the order given)."""
    f = np.asarray(nominal_hz, dtype=float).reshape(-1)
    lo, hi = band_limits_hz(f, fraction=fraction)
    return Bands(_ro(f), _ro(exact_centre_hz(f, fraction=fraction)), _ro(lo), _ro(hi), fraction)


def _below_nyquist(nominal: tuple[float, ...], fraction: int, sample_rate_hz: Optional[float],
                   low_hz: Optional[float], high_hz: Optional[float]) -> Bands:
    all_bands = bands_for_nominal(nominal, fraction=fraction)
    keep = np.ones(all_bands.size, dtype=bool)
    if sample_rate_hz is not None:
        keep &= all_bands.upper_hz < float(sample_rate_hz) / 2.0
    if low_hz is not None:
        keep &= all_bands.nominal_hz >= float(low_hz) * (1 - 1e-9)
    if high_hz is not None:
        keep &= all_bands.nominal_hz <= float(high_hz) * (1 + 1e-9)
    return bands_for_nominal(all_bands.nominal_hz[keep], fraction=fraction)


def third_octave_bands(sample_rate_hz: Optional[float] = None, *, low_hz: Optional[float] = None,
                       high_hz: Optional[float] = None) -> Bands:
    """The one-third-octave bands 25 Hz ... 20 kHz whose upper edge lies below ``fs / 2``.

    Parameters
    ----------
    sample_rate_hz : float, optional
        Keep only bands whose upper edge is below the Nyquist frequency (Hz).
    low_hz, high_hz : float, optional, keyword-only
        Keep only bands whose nominal centre lies in ``[low_hz, high_hz]`` (Hz).
    """
    return _below_nyquist(NOMINAL_THIRD_OCTAVE_HZ, 3, sample_rate_hz, low_hz, high_hz)


def octave_bands(sample_rate_hz: Optional[float] = None, *, low_hz: Optional[float] = None,
                 high_hz: Optional[float] = None) -> Bands:
    """The octave bands 31.5 Hz ... 16 kHz whose upper edge lies below ``fs / 2`` (as :func:`third_octave_bands`)."""
    return _below_nyquist(NOMINAL_OCTAVE_HZ, 1, sample_rate_hz, low_hz, high_hz)


@dataclass(frozen=True)
class BandLevels:
    """Levels on a set of bands, saying whether they are band levels or spectrum levels.

    Attributes
    ----------
    bands : Bands
        The frequency axis.
    levels_db : ndarray, shape (n,)
        Band levels (dB, power in the band) when ``kind == "band"``; spectrum levels (dB per Hz)
        when ``kind == "spectrum"``. ``-inf`` for a band without power; NaN is refused.
    kind : {"band", "spectrum"}

    Examples
    --------
    >>> import numpy as np
    >>> bl = BandLevels(third_octave_bands(low_hz=1000, high_hz=1000), np.array([30.0]), "band")
    >>> round(float(bl.as_spectrum().levels_db[0]), 2)   # 30 dB - 10 log10(230.7 Hz)
    6.37
    """

    bands: Bands
    levels_db: np.ndarray
    kind: Kind = "band"

    def __post_init__(self) -> None:
        lv = np.array(self.levels_db, dtype=float).reshape(-1)
        if lv.shape != self.bands.nominal_hz.shape:
            raise MeasurementError(
                f"levels_db must have one value per band ({self.bands.size}); got {lv.size}.")
        if np.any(np.isnan(lv)):
            raise MeasurementError("levels_db must not contain NaN (use -inf for a band without power).")
        if self.kind not in ("band", "spectrum"):
            raise MeasurementError(f"kind must be 'band' or 'spectrum'; got {self.kind!r}.")
        lv.flags.writeable = False
        object.__setattr__(self, "levels_db", lv)

    @property
    def nominal_hz(self) -> np.ndarray:
        return self.bands.nominal_hz

    def as_band(self) -> "BandLevels":
        """The same levels as band levels (dB)."""
        if self.kind == "band":
            return self
        return BandLevels(self.bands, self.levels_db + 10.0 * np.log10(self.bands.width_hz), "band")

    def as_spectrum(self) -> "BandLevels":
        """The same levels as spectrum levels (dB per Hz)."""
        if self.kind == "spectrum":
            return self
        return BandLevels(self.bands, self.levels_db - 10.0 * np.log10(self.bands.width_hz), "spectrum")

    def power(self) -> np.ndarray:
        """``10**(levels_db/10)``: band power, or power per hertz for spectrum levels."""
        with np.errstate(over="ignore"):
            return 10.0 ** (self.levels_db / 10.0)

    def select(self, nominal_hz) -> "BandLevels":
        """The levels on the bands with the given nominal labels (each must be present)."""
        want = np.asarray(nominal_hz, dtype=float).reshape(-1)
        idx = []
        for f in want:
            k = np.flatnonzero(np.isclose(self.bands.nominal_hz, f, rtol=1e-3))
            if k.size == 0:
                raise MeasurementError(f"no band at {f:g} Hz in these levels.")
            idx.append(int(k[0]))
        ix = np.array(idx, dtype=int)
        return BandLevels(bands_for_nominal(self.bands.nominal_hz[ix], fraction=self.bands.fraction),
                          self.levels_db[ix], self.kind)
