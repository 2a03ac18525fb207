"""Chains run on the same speech audio and tabulated: ``voiceband compare``.

For each chain the speech is processed by every stage up to (not including) a channel stage -- linear and
nonlinear alike -- and the output is measured:

* **Band gains** on speech: the long-term power of the output over that of the input in each SII
  one-third-octave band (Welch PSDs, fractional-bin band integration), referred to equal overall average
  power (the listener sets the volume). With the standard speech spectrum these give the SII in quiet.
* **SII with channel noise, average-power referenced**: the channel SNR is the output's average power
  over the noise in the receive passband (:func:`voiceband.intelligibility.channel_sii`).
* **SII with channel noise, peak-power referenced**: the channel SNR is the peak envelope power over the
  noise, so the average-referenced SNR is lower by the output's peak-to-average ratio. Speech processing
  lowers that ratio, i.e. raises average power at the same peak power: the talk power that matters on SSB.
* **Peak-to-average ratio**: peak envelope power over average power, the envelope from the analytic
  signal (``|x + j H{x}|^2 / 2`` is the power an SSB transmitter puts out for this audio): 0 dB for one
  tone, 3.01 dB for two equal tones (analytic).
* **STOI** of the output against the input (Taal et al. 2011), the output aligned by cross-correlation.
* **Occupied bandwidth** (99 %, 20 Hz to the Nyquist frequency) of the output.
* **Clipped fraction**: the share of samples that the chain's clipper stages held at their clip level
  (summed over clippers); and, as found in the output itself, the share the clipping detector
  (:func:`voiceband.measurement.clipping.measure_clipping`) reports, which a filter after a clipper hides.

The best chain is the one with the highest peak-referenced SII averaged over the channel SNRs (the
condition an SSB or AM transmitter at its peak-power limit meets), ties going to the higher STOI.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Optional, Sequence

import numpy as np

from ..errors import MeasurementError, SignalValueError
from ..response.metrics import ResponseEdges

__all__ = ["ChainComparison", "ComparedChain", "compare_chains", "default_speech", "peak_to_average_db",
           "response_curves", "DEFAULT_SPEECH"]

#: The default speech: the corpus generator's reference talker (medium voice, normal effort, seed 1,
#: P.56 active level -26 dBFS, as ``corpus_synthetic/speech_medium_normal.toml``), 6 s at 24 kHz.
DEFAULT_SPEECH = {"duration_s": 6.0, "sample_rate_hz": 24000, "voice": "medium", "effort": "normal", "seed": 1}
#: Longest delay searched when aligning a chain's output with its input for STOI, s.
_MAX_ALIGN_S = 0.05


@dataclass(frozen=True)
class SNRPoint:
    """SII at one channel SNR, with the SNR referred to average and to peak power."""

    snr_db: float
    sii_average_ref: float
    sii_peak_ref: float


@dataclass(frozen=True)
class ComparedChain:
    """One chain's row of the comparison (see the module docstring for each figure)."""

    name: str
    path: Optional[str]
    occupied_bandwidth_hz: float
    occupied_low_hz: float
    occupied_high_hz: float
    edges_hz: ResponseEdges
    sii_quiet: float
    sii_by_channel_snr: tuple
    stoi: Optional[float]
    peak_to_average_db: float
    sample_peak_to_average_db: float
    clipped_fraction: float
    output_clipped_fraction: float
    band_gains_db: np.ndarray
    delay_s: float
    best: bool = False


@dataclass(frozen=True)
class ChainComparison:
    """All rows, the winner and why."""

    chains: tuple
    best: str
    reason: str
    snrs_db: tuple
    receive_band_hz: tuple
    speech: str
    sample_rate_hz: int
    duration_s: float


def default_speech() -> tuple[np.ndarray, int]:
    """The default comparison speech (:data:`DEFAULT_SPEECH`), read-only, made once per process."""
    return _default_speech(), DEFAULT_SPEECH["sample_rate_hz"]


@lru_cache(maxsize=1)
def _default_speech() -> np.ndarray:
    from ..synth import synthesize_speech

    d = DEFAULT_SPEECH
    x = synthesize_speech(d["duration_s"], d["sample_rate_hz"], voice=d["voice"], effort=d["effort"], seed=d["seed"])
    x.flags.writeable = False
    return x


def peak_to_average_db(x: np.ndarray) -> float:
    """Peak envelope power over average power, dB (envelope from the analytic signal)."""
    from scipy.signal import hilbert

    z = hilbert(x)
    avg = float(np.mean(x * x))
    if avg == 0.0:
        raise MeasurementError("the chain's output is silent; nothing to compare.")
    return 10.0 * np.log10(float(np.max(np.abs(z) ** 2)) / 2.0 / avg)


def _welch(x: np.ndarray, fs: int) -> tuple[np.ndarray, np.ndarray]:
    from scipy.signal import welch

    n = min(x.size, 1 << int(np.ceil(np.log2(fs / 10.0))))  # about 10 Hz resolution
    return welch(x, fs, nperseg=n)


def _align(x: np.ndarray, y: np.ndarray, fs: int) -> int:
    """Lag (samples, >= 0) of ``y`` behind ``x`` within :data:`_MAX_ALIGN_S`, by cross-correlation."""
    from scipy.signal import correlate

    lag_max = int(_MAX_ALIGN_S * fs)
    c = correlate(y, x, mode="full", method="fft")
    mid = x.size - 1
    window = c[mid:mid + lag_max + 1]
    return int(np.argmax(np.abs(window)))


def _one(chain, x: np.ndarray, fs: int, clean_psd: np.ndarray, f: np.ndarray, snrs: np.ndarray, band) -> ComparedChain:
    from ..chain.stages import Channel, Clipper
    from ..intelligibility import channel_sii, sii, stoi
    from ..intelligibility.tables import band_procedure
    from ..measurement.bandwidth import occupied_bandwidth
    from ..measurement.clipping import measure_clipping
    from ..measurement.spectrum import band_powers
    from .evaluate import response_figures, response_grid

    y = x
    clipped = 0
    for stage in chain.stages:
        if isinstance(stage, Channel):
            break
        if isinstance(stage, Clipper):
            clipped += int(np.count_nonzero(np.abs(y) > stage.clip_level(y)))
        y = stage.process(y, fs)
    if not np.all(np.isfinite(y)):
        raise MeasurementError(f"chain '{chain.name}' produced non-finite samples; check its gains.")
    _, psd = _welch(y, fs)
    table = band_procedure("one-third-octave")
    top = min(float(f[-1]), float(table.upper_hz[-1]))
    p_in = band_powers(clean_psd, f, table.lower_hz, np.minimum(table.upper_hz, top))
    p_out = band_powers(psd, f, table.lower_hz, np.minimum(table.upper_hz, top))
    total_in, total_out = float(np.sum(clean_psd)), float(np.sum(psd))
    if total_out <= 0.0:
        raise MeasurementError(f"chain '{chain.name}' produced silence; nothing to compare.")
    with np.errstate(divide="ignore", invalid="ignore"):
        gains = 10.0 * np.log10(p_out / p_in) - 10.0 * np.log10(total_out / total_in)
    gains = np.where(np.isfinite(gains), gains, -np.inf)
    gains = np.where(p_in > 0, gains, 0.0)
    from ..intelligibility import standard_speech_spectrum

    speech_db = standard_speech_spectrum("normal") + gains
    quiet = float(sii(speech_db).index)
    papr = peak_to_average_db(y)
    avg = np.atleast_1d(channel_sii(snrs, speech_db=speech_db, receive_band_hz=band).index)
    peak = np.atleast_1d(channel_sii(snrs - papr, speech_db=speech_db, receive_band_hz=band).index)
    points = tuple(SNRPoint(float(s), float(a), float(p)) for s, a, p in zip(snrs, avg, peak))
    lag = _align(x, y, fs)
    score = None
    try:
        score = float(stoi(x[:x.size - lag] if lag else x, y[lag:], fs))
    except MeasurementError:
        score = None
    obw = occupied_bandwidth(psd, f, span_hz=(20.0, float(f[-1])))
    pk = float(np.max(np.abs(y)))
    output_clip = measure_clipping(y / pk, fs).clipped_fraction
    figures = response_figures(response_grid(), 20.0 * np.log10(np.maximum(np.abs(chain.response(response_grid())), 1e-300)))
    return ComparedChain(
        name=chain.name,
        path=chain.path,
        occupied_bandwidth_hz=obw.width_hz,
        occupied_low_hz=obw.low_hz,
        occupied_high_hz=obw.high_hz,
        edges_hz=figures.edges_hz,
        sii_quiet=quiet,
        sii_by_channel_snr=points,
        stoi=score,
        peak_to_average_db=papr,
        sample_peak_to_average_db=10.0 * np.log10(pk * pk / float(np.mean(y * y))),
        clipped_fraction=clipped / x.size,
        output_clipped_fraction=float(output_clip),
        band_gains_db=gains,
        delay_s=lag / fs,
    )


def _reason(rows: list, best: ComparedChain, snrs: np.ndarray) -> str:
    def mean_peak(r: ComparedChain) -> float:
        return float(np.mean([p.sii_peak_ref for p in r.sii_by_channel_snr]))

    snr_text = ", ".join(f"{s:g}" for s in snrs)
    text = (f"{best.name} keeps the most speech intelligible at {snr_text} dB channel SNR referred to peak power "
            f"(mean SII {mean_peak(best):.3f}")
    others = [r for r in rows if r is not best]
    if not others:
        return text + "); it is the only chain compared."
    second = max(others, key=mean_peak)
    text += f" against {mean_peak(second):.3f} for {second.name})"
    gain_papr = second.peak_to_average_db - best.peak_to_average_db
    mean_avg = lambda r: float(np.mean([p.sii_average_ref for p in r.sii_by_channel_snr]))  # noqa: E731
    if gain_papr >= 1.0:
        text += (f": its peak-to-average ratio is {gain_papr:.1f} dB lower, so it sends that much more average "
                 "power at the same peak power")
    elif mean_avg(best) > mean_avg(second):
        text += ": its passband keeps more of the important speech bands for the same channel noise"
    else:
        text += ": its peak-to-average ratio is lower at similar band coverage"
    if best.occupied_bandwidth_hz > second.occupied_bandwidth_hz + 100.0:
        text += f", at {best.occupied_bandwidth_hz - second.occupied_bandwidth_hz:.0f} Hz more occupied bandwidth"
    return text + "."


def compare_chains(chains: Sequence, samples, sample_rate_hz: int, *, snrs_db: Optional[Sequence[float]] = None,
                   receive_band_hz=None, speech_name: str = "synthetic") -> ChainComparison:
    """Compare chains on the same speech (see the module docstring).

    Parameters
    ----------
    chains : sequence of voiceband.chain.Chain
    samples : ndarray
        The speech, one channel, full scale ±1.
    sample_rate_hz : int
    snrs_db : sequence of float, optional
        Channel SNRs (default :data:`voiceband.design.evaluate.DEFAULT_SNRS_DB`).
    receive_band_hz : (float, float), optional
        Receive passband of the channel noise (default 300-3000 Hz).
    """
    from .. import validate
    from .evaluate import DEFAULT_RECEIVE_BAND_HZ, DEFAULT_SNRS_DB

    if not chains:
        raise MeasurementError("give at least one chain file to compare.")
    fs = validate.sample_rate_hz(sample_rate_hz)
    x = validate.finite_samples(validate.block(samples))
    if x.size < fs:
        raise MeasurementError(f"the speech is {x.size / fs:.2f} s long; compare needs at least 1 s of speech.")
    if float(np.max(np.abs(x))) == 0.0:
        raise MeasurementError("the speech is silent; give a recording of speech.")
    snrs = np.asarray(DEFAULT_SNRS_DB if not snrs_db else snrs_db, dtype=np.float64)
    band = tuple(DEFAULT_RECEIVE_BAND_HZ if receive_band_hz is None else receive_band_hz)
    f, clean = _welch(x, fs)
    rows = []
    for c in chains:
        try:
            rows.append(_one(c, x, fs, clean, f, snrs, band))
        except (SignalValueError, MeasurementError) as exc:
            where = f"'{Path(c.path).name}'" if c.path else f"chain '{c.name}'"
            raise MeasurementError(f"{where} cannot run on the speech at {fs} Hz: {str(exc).rstrip('.')}.") from None

    def key(r: ComparedChain):
        return (round(float(np.mean([p.sii_peak_ref for p in r.sii_by_channel_snr])), 6), r.stoi or 0.0)

    best = max(rows, key=key)
    reason = _reason(rows, best, snrs)
    from dataclasses import replace

    rows = [replace(r, best=(r is best)) for r in rows]
    return ChainComparison(tuple(rows), best.name, reason, tuple(float(s) for s in snrs), band, speech_name, fs,
                           x.size / fs)


def response_curves(chains: Sequence) -> list:
    """(frequencies_hz, magnitude dB re passband) of each chain's linear stages, for the overlay figure."""
    from .evaluate import response_figures, response_grid

    f = response_grid()
    curves = []
    for c in chains:
        with np.errstate(divide="ignore"):
            m = 20.0 * np.log10(np.abs(c.response(f)))
        curves.append((f, m - response_figures(f, m).gain_db))
    return curves
