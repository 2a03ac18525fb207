"""What a chain does to speech, from its linear response alone (no audio): the ``voiceband chain`` result.

* Response on a log grid (:data:`RESPONSE_GRID`): magnitude, phase, group delay ``-d(phase)/d(omega)``.
* Passband gain, -3/-10 dB edges and ripple by the conventions of :mod:`voiceband.response.metrics`
  (the same ones a measured response is read with, so design and measurement compare like for like).
* SII of standard speech through the chain (band gains by power-averaging ``|H|^2`` over each SII band,
  :func:`voiceband.intelligibility.band_gains_db`), referred to the passband gain (the listener sets the
  volume), in quiet and at channel SNRs (:func:`voiceband.intelligibility.sii_vs_channel_snr`).
* Occupied bandwidth (ITU-R SM.328, 99 % power) of the speech PSD times ``|H|^2``.
* For an SSB stage, its unwanted-sideband suppression on the same grid.

Nonlinear stages (clipper, compressor) have no response and are left out here; ``voiceband compare``
runs them on audio. A channel stage sets the receive passband and adds its SNR to the list.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional, Sequence

import numpy as np

from ..errors import MeasurementError
from ..measurement.bandwidth import OccupiedBandwidth
from ..response.metrics import ResponseEdges

__all__ = [
    "DEFAULT_SNRS_DB",
    "DEFAULT_RECEIVE_BAND_HZ",
    "RESPONSE_GRID",
    "ChainEvaluation",
    "MeasuredComparison",
    "response_grid",
    "evaluate_chain",
    "response_figures",
    "compare_measured",
]

#: Channel SNRs (dB) at which the SII is reported unless others are asked for.
DEFAULT_SNRS_DB: tuple[float, ...] = (0.0, 5.0, 10.0, 15.0, 20.0)
#: Receive passband of the channel noise unless a channel stage says otherwise (the SII engine's default).
DEFAULT_RECEIVE_BAND_HZ: tuple[float, float] = (300.0, 3000.0)
#: (low Hz, high Hz, points) of the logarithmic response grid.
RESPONSE_GRID = (20.0, 20000.0, 1000)


def response_grid() -> np.ndarray:
    """The log-spaced frequency grid of the reported response, Hz."""
    lo, hi, n = RESPONSE_GRID
    return np.geomspace(lo, hi, n)


@dataclass(frozen=True)
class ResponseFigures:
    """Figures read off a magnitude response (see :mod:`voiceband.response.metrics`)."""

    gain_db: float
    edges_hz: ResponseEdges
    ripple_db: Optional[float]


@dataclass(frozen=True)
class ChainEvaluation:
    """A chain's response and what it does to standard speech.

    Attributes
    ----------
    name : str
    frequencies_hz, magnitude_db, phase_deg, group_delay_s : ndarray
        Response of the linear stages on :func:`response_grid` (absolute magnitude, dB; phase wrapped to
        ±180°; group delay in seconds).
    gain_db : float
        Passband gain (±1/24-octave power-smoothed maximum), dB.
    ripple_db : float or None
        Passband ripple, dB.
    edges_hz : ResponseEdges
        -3 and -10 dB edges re ``gain_db``, Hz (None where the response does not fall that far).
    sii_quiet : float
    sii_by_channel_snr : tuple of ChannelSIIPoint
    receive_band_hz : (float, float)
    occupied_bandwidth : OccupiedBandwidth
        Of the speech through the chain, 20 Hz-20 kHz span.
    sideband_suppression_db : ndarray or None
        Of the chain's SSB stage on the same grid.
    left_out : tuple of str
        Stages without a response (nonlinear, channel), by description.
    """

    name: str
    frequencies_hz: np.ndarray
    magnitude_db: np.ndarray
    phase_deg: np.ndarray
    group_delay_s: np.ndarray
    gain_db: float
    ripple_db: Optional[float]
    edges_hz: ResponseEdges
    sii_quiet: float
    sii_by_channel_snr: tuple
    receive_band_hz: tuple
    occupied_bandwidth: OccupiedBandwidth
    sideband_suppression_db: Optional[np.ndarray]
    left_out: tuple


def response_figures(frequencies_hz, magnitude_db) -> ResponseFigures:
    """Passband gain, edges and ripple of a magnitude response (dB, absolute)."""
    from ..response.metrics import passband_level_db, passband_ripple_db, response_edges

    f = np.asarray(frequencies_hz, dtype=np.float64)
    m = np.asarray(magnitude_db, dtype=np.float64)
    gain, peak = passband_level_db(f, m)
    if not np.isfinite(gain):
        raise MeasurementError("the chain passes nothing (its response is zero at every frequency).")
    rel = m - gain
    edges = response_edges(f, rel, peak)
    return ResponseFigures(gain, edges, passband_ripple_db(f, rel, edges))


def _db(h: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return 20.0 * np.log10(np.abs(h))


def _group_delay(f: np.ndarray, h: np.ndarray) -> np.ndarray:
    phase = np.unwrap(np.angle(h))
    return -np.gradient(phase, 2.0 * np.pi * f)


def _speech_model(speech):
    from .speech import standard_speech

    return standard_speech() if speech is None else speech


def _receive_band(chain, receive_band_hz):
    if receive_band_hz is not None:
        return tuple(float(v) for v in receive_band_hz)
    ch = chain.channel
    return ch.receive_band_hz if ch is not None else DEFAULT_RECEIVE_BAND_HZ


def _snrs(chain, snrs_db) -> tuple:
    snrs = tuple(float(s) for s in (DEFAULT_SNRS_DB if snrs_db is None else snrs_db))
    ch = chain.channel
    if ch is not None and float(ch.snr_db) not in snrs:
        snrs = tuple(sorted(snrs + (float(ch.snr_db),)))
    if not snrs:
        raise MeasurementError("give at least one channel SNR.")
    return snrs


def band_gains_re_passband(h_grid: np.ndarray, f_grid: np.ndarray, gain_db: float) -> np.ndarray:
    """SII one-third-octave band gains of a response, dB re its passband gain."""
    from ..intelligibility import band_gains_db

    return band_gains_db(f_grid, np.abs(h_grid) * 10.0 ** (-gain_db / 20.0), outside_gain_db=-np.inf)


def evaluate_chain(chain, *, snrs_db: Optional[Sequence[float]] = None, receive_band_hz=None,
                   speech=None) -> ChainEvaluation:
    """Evaluate a :class:`~voiceband.chain.Chain` (see the module docstring).

    Parameters
    ----------
    chain : voiceband.chain.Chain
    snrs_db : sequence of float, optional
        Channel SNRs, dB (default :data:`DEFAULT_SNRS_DB`, plus a channel stage's own).
    receive_band_hz : (float, float), optional
        Receive passband of the channel noise (default: a channel stage's, else 300-3000 Hz).
    speech : voiceband.design.speech.SpeechModel, optional
        Default :func:`voiceband.design.speech.standard_speech`.
    """
    from ..intelligibility import sii, sii_vs_channel_snr
    from ..measurement.bandwidth import occupied_bandwidth

    model = _speech_model(speech)
    f = response_grid()
    h = chain.response(f)
    mag = _db(h)
    figures = response_figures(f, mag)
    gains = band_gains_re_passband(h, f, figures.gain_db)
    speech_db = model.speech_db + gains
    band = _receive_band(chain, receive_band_hz)
    snrs = _snrs(chain, snrs_db)
    quiet = float(sii(speech_db).index)
    points = sii_vs_channel_snr(snrs, speech_db=speech_db, receive_band_hz=band)
    h_lin = chain.response(model.freqs_hz)
    obw = occupied_bandwidth(model.psd * np.abs(h_lin) ** 2, model.freqs_hz, span_hz=(20.0, float(model.freqs_hz[-1])))
    ssb = chain.ssb
    return ChainEvaluation(
        name=chain.name,
        frequencies_hz=f,
        magnitude_db=mag,
        phase_deg=np.degrees(np.angle(h)),
        group_delay_s=_group_delay(f, h),
        gain_db=figures.gain_db,
        ripple_db=figures.ripple_db,
        edges_hz=figures.edges_hz,
        sii_quiet=quiet,
        sii_by_channel_snr=points,
        receive_band_hz=band,
        occupied_bandwidth=obw,
        sideband_suppression_db=None if ssb is None else ssb.sideband_suppression_db(f),
        left_out=tuple(s.describe() for s in chain.stages if not s.linear),
    )


# --------------------------------------------------------------------------- design against measurement


@dataclass(frozen=True)
class MeasuredComparison:
    """A measured response (``voiceband response`` JSON) held against the design.

    Attributes
    ----------
    source : str
    frequencies_hz, magnitude_db : ndarray
        The measurement, dB re its own passband level.
    design_db : ndarray
        The design at those frequencies, dB re its passband gain.
    difference_db : ndarray
        Measured minus design, dB (NaN where either is not finite or the design is 20 dB or more down).
    rms_difference_db, max_difference_db : float or None
        Over the design's -3 dB passband.
    gain_difference_db : float or None
        Measured passband level minus the design's gain, dB.
    edges_hz : dict
        The measured -3/-10 dB edges as the measurement reported them.
    """

    source: str
    frequencies_hz: np.ndarray
    magnitude_db: np.ndarray
    design_db: np.ndarray
    difference_db: np.ndarray
    rms_difference_db: Optional[float]
    max_difference_db: Optional[float]
    gain_difference_db: Optional[float]
    edges_hz: dict


def _number_list(doc: dict, key: str, source: str) -> np.ndarray:
    v = doc.get(key)
    if not isinstance(v, list) or not v:
        raise MeasurementError(f"'{source}' has no {key} list; give the JSON that 'voiceband response --json' wrote.")
    try:
        return np.array([np.nan if e is None else float(e) for e in v], dtype=np.float64)
    except (TypeError, ValueError):
        raise MeasurementError(f"'{source}' has a non-numeric entry in {key}; give an unmodified response JSON.") from None


def load_measured(path) -> dict:
    """Read a ``voiceband response`` JSON file (one-sentence errors)."""
    import json
    from pathlib import Path

    p = Path(path)
    if not p.is_file():
        raise MeasurementError(f"no measured response at '{p}'; give the JSON written by 'voiceband response --json'.")
    try:
        doc = json.loads(p.read_text(encoding="utf-8"))
    except (UnicodeDecodeError, ValueError):
        raise MeasurementError(f"'{p.name}' is not JSON; give the file written by 'voiceband response --json'.") from None
    if not isinstance(doc, dict):
        raise MeasurementError(f"'{p.name}' is not a response document; give the file written by 'voiceband response --json'.")
    return doc


def compare_measured(chain, evaluation: ChainEvaluation, doc: dict, *, source: str = "measured") -> MeasuredComparison:
    """Hold a measured response against the design (both referred to their own passband level)."""
    f = _number_list(doc, "frequencies_hz", source)
    m = _number_list(doc, "magnitude_db", source)
    if f.shape != m.shape or not np.all(np.isfinite(f)) or np.any(f <= 0):
        raise MeasurementError(f"'{source}' has frequencies and magnitudes that do not match; give an unmodified response JSON.")
    design = _db(chain.response(f)) - evaluation.gain_db
    diff = np.where(np.isfinite(m) & np.isfinite(design) & (design > -20.0), m - design, np.nan)
    e = evaluation.edges_hz
    lo = e.low_3db if e.low_3db is not None else f[0]
    hi = e.high_3db if e.high_3db is not None else f[-1]
    inband = (f >= lo) & (f <= hi) & np.isfinite(diff)
    rms = float(np.sqrt(np.mean(diff[inband] ** 2))) if np.any(inband) else None
    worst = float(diff[inband][np.argmax(np.abs(diff[inband]))]) if np.any(inband) else None
    level = doc.get("passband_level_db")
    gain_diff = float(level) - evaluation.gain_db if isinstance(level, (int, float)) and np.isfinite(level) else None
    edges = doc.get("edges_hz") if isinstance(doc.get("edges_hz"), dict) else {}
    return MeasuredComparison(source, f, m, design, diff, rms, worst, gain_diff, edges)
