"""Speech Intelligibility Index, ANSI S3.5-1997 clause 4: the calculation chain, vectorised over batches.

The engine takes *equivalent spectrum levels* (dB per Hz, free field at the centre of the listener's
head with the listener absent; clause 3 definitions and clause 4.2) and returns the SII with every
intermediate term of clause 4:

=====  =========================================  ==============================================
term   meaning                                    standard
=====  =========================================  ==============================================
E'     equivalent speech spectrum level           input (clause 5 derives it)
N'     equivalent noise spectrum level            input (default -50 dB, "no noise", clause 4.2)
T'     equivalent hearing threshold level, dB HL  input (default 0 dB HL)
V      self-speech masking spectrum level         4.3.2.1, Eq. 5: V = E' - 24 dB
B      larger of N' and V                         4.3.2.2
C      slope of upward spread of masking          4.3.2.3, Eq. 6 (critical bands) / Eq. 7 (1/3 oct)
Z      equivalent masking spectrum level          4.3.2.4-5, Eq. 8 / Eq. 9; octave: Z = N' (4.3.1)
X'     equivalent internal noise spectrum level   4.4, Eq. 10: X' = X + T'
D      equivalent disturbance spectrum level      4.5: the larger of Z and X'
L      level distortion factor                    4.6, Eq. 11, clipped to [0, 1]
K      temporary audibility variable              4.7.1, Eq. 12, clipped to [0, 1]
A      band audibility function                   4.7.2, Eq. 13: A = L * K
SII    speech intelligibility index               4.8, Eq. 14: SII = sum(I * A)
=====  =========================================  ==============================================

Inputs broadcast over leading dimensions, so a batch of spectra is one call (the spread-of-masking sum
over lower bands is evaluated for all band pairs at once and reduced with one matrix product).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Union

import numpy as np

from .. import validate
from ..errors import MeasurementError, SignalValueError
from .tables import (
    DEFAULT_NOISE_SPECTRUM_DB,
    IMPORTANCE_ALIASES,
    IMPORTANCE_NAMES,
    SELF_SPEECH_MASKING_DB,
    BandProcedure,
    band_procedure,
)

__all__ = ["SIIResult", "sii", "sii_index", "band_importance"]

ArrayLike = Union[float, np.ndarray, list, tuple]

# Constants of the calculation chain (ANSI S3.5-1997 clause 4; the same values appear in the working
# group's reference C program).
_SLOPE_OFFSET_DB = -80.0  # Eqs. 6 and 7: C = -80 + 0.6 [ ... ]
_SLOPE_FACTOR = 0.6  # Eqs. 6 and 7
_TO_SLOPE_REFERENCE_DB = 6.353  # Eq. 7: 10 log10(F) - 6.353
_OCTAVES_PER_DECADE = 3.32  # Eqs. 8 and 9: 3.32 C log10(ratio), C in dB per octave
_TO_MASKING_RATIO = 0.89  # Eq. 9: log10(0.89 F_i / F_k)
_SPEECH_PEAK_DB = 15.0  # Eq. 12: K = (E' - D + 15) / 30
_SPEECH_RANGE_DB = 30.0  # Eq. 12
_LEVEL_DISTORTION_KNEE_DB = 10.0  # Eq. 11: L = 1 - (E' - U - 10) / 160
_LEVEL_DISTORTION_SPAN_DB = 160.0  # Eq. 11


@dataclass(frozen=True)
class SIIResult:
    """Result of :func:`sii`: the index and every term of ANSI S3.5-1997 clause 4.

    Band arrays have shape ``(..., n_bands)`` where ``...`` is the broadcast batch shape of the inputs.
    All arrays are read-only.

    Attributes
    ----------
    index : float or ndarray
        The SII (Eq. 14), a float for a single spectrum, an array of shape ``(...)`` for a batch.
    procedure : str
        Procedure name.
    band_centres_hz : ndarray, shape (n_bands,)
        Nominal band centre frequencies (Tables 1-4).
    band_importance : ndarray, shape (n_bands,) or (..., n_bands)
        Band-importance function I.
    band_audibility : ndarray
        Band audibility function A = L K (Eq. 13).
    speech_db, noise_db, threshold_db : ndarray
        Inputs E', N' (dB per Hz) and T' (dB HL), broadcast.
    self_speech_masking_db : ndarray or None
        V (Eq. 5); None for the octave procedure, which has no self-speech masking (4.3.1).
    masker_db : ndarray or None
        B = max(N', V) (4.3.2.2); None for the octave procedure.
    slope_db_per_octave : ndarray or None
        C, slope of the upward spread of masking (Eq. 6 or 7); None for the octave procedure.
    masking_db : ndarray
        Z, equivalent masking spectrum level (Eq. 8 or 9; Z = N' for octaves).
    internal_noise_db : ndarray
        X' = X + T' (Eq. 10).
    disturbance_db : ndarray
        D = max(Z, X') (4.5).
    level_distortion : ndarray
        L (Eq. 11), within [0, 1].
    audibility_factor : ndarray
        K (Eq. 12), within [0, 1].
    """

    index: Union[float, np.ndarray]
    procedure: str
    band_centres_hz: np.ndarray
    band_importance: np.ndarray
    band_audibility: np.ndarray
    speech_db: np.ndarray
    noise_db: np.ndarray
    threshold_db: np.ndarray
    self_speech_masking_db: Union[np.ndarray, None]
    masker_db: Union[np.ndarray, None]
    slope_db_per_octave: Union[np.ndarray, None]
    masking_db: np.ndarray
    internal_noise_db: np.ndarray
    disturbance_db: np.ndarray
    level_distortion: np.ndarray
    audibility_factor: np.ndarray

    # Short names, as the standard writes them.
    @property
    def E(self) -> np.ndarray:  # noqa: N802 - the standard's symbol
        """E', equivalent speech spectrum level (alias of ``speech_db``)."""
        return self.speech_db

    @property
    def N(self) -> np.ndarray:  # noqa: N802
        """N', equivalent noise spectrum level (alias of ``noise_db``)."""
        return self.noise_db

    @property
    def T(self) -> np.ndarray:  # noqa: N802
        """T', equivalent hearing threshold level (alias of ``threshold_db``)."""
        return self.threshold_db

    @property
    def V(self) -> Union[np.ndarray, None]:  # noqa: N802
        """V, self-speech masking spectrum level, Eq. 5 (alias of ``self_speech_masking_db``)."""
        return self.self_speech_masking_db

    @property
    def B(self) -> Union[np.ndarray, None]:  # noqa: N802
        """B, larger of N' and V, clause 4.3.2.2 (alias of ``masker_db``)."""
        return self.masker_db

    @property
    def C(self) -> Union[np.ndarray, None]:  # noqa: N802
        """C, slope of spread of masking, Eq. 6/7 (alias of ``slope_db_per_octave``)."""
        return self.slope_db_per_octave

    @property
    def Z(self) -> np.ndarray:  # noqa: N802
        """Z, equivalent masking spectrum level, Eq. 8/9 (alias of ``masking_db``)."""
        return self.masking_db

    @property
    def X_prime(self) -> np.ndarray:  # noqa: N802
        """X', equivalent internal noise spectrum level, Eq. 10 (alias of ``internal_noise_db``)."""
        return self.internal_noise_db

    @property
    def D(self) -> np.ndarray:  # noqa: N802
        """D, equivalent disturbance spectrum level, clause 4.5 (alias of ``disturbance_db``)."""
        return self.disturbance_db

    @property
    def L(self) -> np.ndarray:  # noqa: N802
        """L, level distortion factor, Eq. 11 (alias of ``level_distortion``)."""
        return self.level_distortion

    @property
    def K(self) -> np.ndarray:  # noqa: N802
        """K, Eq. 12 (alias of ``audibility_factor``)."""
        return self.audibility_factor

    @property
    def A(self) -> np.ndarray:  # noqa: N802
        """A, band audibility function, Eq. 13 (alias of ``band_audibility``)."""
        return self.band_audibility

    @property
    def I(self) -> np.ndarray:  # noqa: N802, E743
        """I, band-importance function (alias of ``band_importance``)."""
        return self.band_importance


@dataclass(frozen=True)
class _Engine:
    """Constants of the spread-of-masking sum for one procedure, precomputed once."""

    table: BandProcedure
    slope_term_db: np.ndarray  # the bracketed constant of Eq. 6 or 7, per masker band k
    spread_gain: np.ndarray  # [k, i]: ln(10) * [0.1 + 0.332 * 0.6 * log10(ratio_ik)] -- multiplies B_k
    spread_offset: np.ndarray  # [k, i]: ln(10) * 0.332 * log10(ratio_ik) * (-80 + 0.6 * slope_term_k)
    dense_gain: np.ndarray  # [i, k]: spread_gain transposed, 0 where k >= i
    dense_offset: np.ndarray  # [i, k]: spread_offset transposed, -inf where k >= i
    normal_speech_db: np.ndarray  # U of Eq. 11: normal-effort spectrum of the procedure


@lru_cache(maxsize=None)
def _engine(procedure: str) -> _Engine:
    table = band_procedure(procedure)
    n = table.n_bands
    if table.name == "one-third-octave":
        # Eq. 7: C = -80 + 0.6 [B + 10 log10(F) - 6.353]; Eq. 9: ratio = 0.89 F_i / F_k.
        f = table.centres_hz
        slope_term = 10.0 * np.log10(f) - _TO_SLOPE_REFERENCE_DB
        log_ratio = np.log10(_TO_MASKING_RATIO * f[:, None] / f[None, :])
    else:
        # Eq. 6: C = -80 + 0.6 [B + 10 log10(h - l)]; Eq. 8: ratio = F_i / h_k with F_i the band's
        # geometric centre sqrt(l_i h_i), as in the working group's reference C program.
        lo, hi = table.lower_hz, table.upper_hz
        slope_term = 10.0 * np.log10(hi - lo)
        centre = np.sqrt(lo * hi)
        log_ratio = np.log10(centre[:, None] / hi[None, :])
    g = log_ratio.T  # [k, i]: masker band k, masked band i; only k < i is used
    ln10 = np.log(10.0)
    # 10**(0.1 [B_k + 3.32 C_k g]) = exp(B_k * gain + offset), with C_k = -80 + 0.6 (B_k + s_k).
    gain = ln10 * (0.1 + 0.1 * _OCTAVES_PER_DECADE * _SLOPE_FACTOR * g)
    offset = ln10 * 0.1 * _OCTAVES_PER_DECADE * g * (_SLOPE_OFFSET_DB + _SLOPE_FACTOR * slope_term[:, None])
    below = np.tril(np.ones((n, n), dtype=bool), k=-1)  # [i, k]: k < i
    dense_gain = np.where(below, gain.T, 0.0)
    dense_offset = np.where(below, offset.T, -np.inf)
    for arr in (slope_term, gain, offset, dense_gain, dense_offset):
        arr.setflags(write=False)
    return _Engine(
        table=table,
        slope_term_db=slope_term,
        spread_gain=gain,
        spread_offset=offset,
        dense_gain=dense_gain,
        dense_offset=dense_offset,
        normal_speech_db=table.speech_spectrum_db["normal"],
    )


def _upward_spread(b: np.ndarray, eng: _Engine) -> np.ndarray:
    """Sum over lower bands k < i of 10**(0.1 [B_k + 3.32 C_k log10(r_ik)]) (Eqs. 8 and 9).

    ``b`` has shape (rows, n_bands). A few rows take one dense step over all (i, k) pairs; more rows work
    band-major (one vectorised step per masker band over all rows), which keeps the temporaries small
    and contiguous.
    """
    n = b.shape[-1]
    b = np.maximum(b, _NO_POWER_DB)  # -inf (no power) as a finite level whose terms underflow to 0
    if b.shape[0] <= _SMALL_BATCH_ROWS:
        # Few rows: all (i, k) pairs in one step; pairs with k >= i carry an offset of -inf (term 0).
        terms = np.exp(b[:, None, :] * eng.dense_gain + eng.dense_offset)  # (rows, i, k)
        return terms.sum(axis=-1)
    bt = np.ascontiguousarray(b.T)  # (n_bands, rows)
    acc = np.zeros_like(bt)
    for k in range(n - 1):
        term = np.multiply.outer(eng.spread_gain[k, k + 1 :], bt[k])
        term += eng.spread_offset[k, k + 1 :, None]
        np.exp(term, out=term)
        acc[k + 1 :] += term
    return acc.T


# Rows of the result block, one per band array of SIIResult.
_E, _N, _T, _V, _B, _C, _Z, _X, _D, _L, _K, _A = range(12)
_N_FIELDS = 12
_CHUNK_ROWS = 2048  # rows per step: temporaries of 2048 x 21 doubles stay in cache
_NO_POWER_DB = -1.0e6  # stands in for -inf inside the spread-of-masking sum (avoids -inf * 0)
_SMALL_BATCH_ROWS = 16  # up to this many rows the spread of masking is one dense step


def _chain(out: np.ndarray, eng: _Engine) -> None:
    """Clause 4 on one chunk; ``out`` is a (12, rows, n) view whose E', N', T' rows are filled in."""
    table = eng.table
    e, nz, t = out[_E], out[_N], out[_T]
    if table.spread_of_masking:
        np.subtract(e, SELF_SPEECH_MASKING_DB, out=out[_V])  # Eq. 5
        np.maximum(nz, out[_V], out=out[_B])  # 4.3.2.2
        b = out[_B]
        c = out[_C]
        np.add(b, eng.slope_term_db, out=c)  # Eq. 6 / Eq. 7
        c *= _SLOPE_FACTOR
        c += _SLOPE_OFFSET_DB
        z = out[_Z]
        np.multiply(nz, 0.1 * np.log(10.0), out=z)
        np.exp(z, out=z)
        z += _upward_spread(b, eng)
        np.log10(z, out=z)
        z *= 10.0  # Eq. 8 / Eq. 9
        z[:, 0] = b[:, 0]  # 4.3.2.4: Z_1 = B_1
    else:
        out[_V] = np.nan  # not part of the octave procedure (4.3.1); never returned
        out[_B] = np.nan
        out[_C] = np.nan
        out[_Z] = nz  # 4.3.1: Z = N'
    np.add(t, table.internal_noise_db, out=out[_X])  # Eq. 10
    np.maximum(out[_Z], out[_X], out=out[_D])  # 4.5: the larger of Z and X'
    lvl = out[_L]
    np.subtract(e, eng.normal_speech_db, out=lvl)  # Eq. 11
    lvl -= _LEVEL_DISTORTION_KNEE_DB
    lvl *= -1.0 / _LEVEL_DISTORTION_SPAN_DB
    lvl += 1.0
    np.clip(lvl, 0.0, 1.0, out=lvl)
    k = out[_K]
    np.subtract(e, out[_D], out=k)  # Eq. 12
    k += _SPEECH_PEAK_DB
    k *= 1.0 / _SPEECH_RANGE_DB
    np.clip(k, 0.0, 1.0, out=k)
    np.multiply(lvl, k, out=out[_A])  # Eq. 13


def band_importance(importance: Union[str, ArrayLike] = "average", *, procedure: str = "one-third-octave") -> np.ndarray:
    """The band-importance function I of a procedure (Tables 1-4; Annex B Tables B.1-B.3).

    Parameters
    ----------
    importance : str or array_like
        ``"average"`` (average speech, Tables 1-4), one of the Annex B speech tests
        ``"nonsense-syllables"``, ``"cid-w22"``, ``"nu6"``, ``"drt"``, ``"short-passages"``, ``"spin"``
        (case-insensitive; aliases in :data:`~voiceband.intelligibility.tables.IMPORTANCE_ALIASES`),
        or an array of weights whose last axis has one value per band (finite, not negative).
    procedure : str, keyword-only
        Procedure name.

    Returns
    -------
    ndarray
        Read-only weights, shape ``(n_bands,)`` (or the shape of the given array).

    Raises
    ------
    voiceband.errors.MeasurementError
        Unknown name, a name the procedure has no table for (the equally-contributing critical-band
        procedure has only its uniform weights, Table 2), or a bad array.

    Notes
    -----
    Annex B gives no functions for the equally-contributing critical-band procedure. For the octave
    procedure the ``nu6`` and ``cid-w22`` columns as transcribed sum to 0.978 and 0.9978 (every other
    column sums to 1.000 within rounding); they are used as transcribed.
    """
    table = band_procedure(procedure)
    procedure = table.name
    if isinstance(importance, str):
        key = importance.strip().lower().replace("_", "-").replace(" ", "-")
        key = IMPORTANCE_ALIASES.get(key, key)
        if key == "average":
            return table.importance
        if key not in IMPORTANCE_NAMES:
            raise MeasurementError(
                f"importance must be one of {', '.join(IMPORTANCE_NAMES)} or an array of {table.n_bands} "
                f"weights; got {importance!r}."
            )
        if key not in table.annex_b_importance:
            raise MeasurementError(
                f"importance {importance!r} has no table for the {procedure} procedure "
                f"(ANSI S3.5-1997 Annex B covers critical-band, one-third-octave and octave); "
                f"use 'average' or pass an array of {table.n_bands} weights."
            )
        return table.annex_b_importance[key]
    try:
        weights = np.array(importance, dtype=np.float64)
    except (TypeError, ValueError):
        raise MeasurementError(
            f"importance must be a name or an array of {table.n_bands} numbers; got {type(importance).__name__}."
        ) from None
    if weights.ndim == 0 or weights.shape[-1] != table.n_bands:
        raise MeasurementError(
            f"importance array must have {table.n_bands} values per band set for the {procedure} procedure; "
            f"got shape {weights.shape}."
        )
    if not np.all(np.isfinite(weights)) or np.any(weights < 0):
        raise MeasurementError("importance weights must be finite and not negative.")
    weights.setflags(write=False)
    return weights


def _readonly(arr: np.ndarray) -> np.ndarray:
    if arr.flags.writeable:
        arr.setflags(write=False)
    return arr


def _prepare(speech_db, noise_db, threshold_db, procedure, importance):
    """Validated, broadcast inputs of :func:`sii` and :func:`sii_index` (one check for both)."""
    procedure = band_procedure(procedure).name  # validates the name; canonical spelling
    eng = _engine(procedure)
    table = eng.table
    n = table.n_bands
    weights = band_importance(importance, procedure=procedure)

    e = validate.band_levels_db(speech_db, name="speech_db", n_bands=n, procedure=procedure, scalar_ok=True)
    nz = (
        np.full(n, DEFAULT_NOISE_SPECTRUM_DB)
        if noise_db is None
        else validate.band_levels_db(noise_db, name="noise_db", n_bands=n, procedure=procedure, scalar_ok=True)
    )
    t = (np.zeros(n) if threshold_db is None
         else validate.band_levels_db(threshold_db, name="threshold_db", n_bands=n, procedure=procedure,
                                      minus_inf_ok=False, scalar_ok=True))
    try:
        e, nz, t, _ = np.broadcast_arrays(e, nz, t, weights)
    except ValueError:
        raise SignalValueError(
            f"speech_db, noise_db, threshold_db and importance have shapes {np.shape(speech_db)}, "
            f"{np.shape(noise_db)}, {np.shape(threshold_db)}, {weights.shape} that do not broadcast together."
        ) from None

    return procedure, eng, weights, e, nz, t


def sii(
    speech_db: ArrayLike,
    noise_db: Union[ArrayLike, None] = None,
    threshold_db: Union[ArrayLike, None] = None,
    *,
    procedure: str = "one-third-octave",
    importance: Union[str, ArrayLike] = "average",
) -> SIIResult:
    """Speech Intelligibility Index (ANSI S3.5-1997 clause 4, Eqs. 5-14).

    Parameters
    ----------
    speech_db : array_like, shape (..., n_bands)
        Equivalent speech spectrum level E', dB SPL **per Hz** (not band level; see
        :func:`voiceband.intelligibility.band_to_spectrum_level`). ``-inf`` means no speech in a band.
    noise_db : array_like, shape (..., n_bands), optional
        Equivalent noise spectrum level N', dB per Hz. Default -50 dB in every band ("no noise",
        clause 4.2 note). ``-inf`` means no noise.
    threshold_db : array_like, shape (..., n_bands), optional
        Equivalent hearing threshold level T', dB HL. Default 0 dB HL.
    procedure : str, keyword-only
        ``"critical-band"`` (21 bands, Table 1), ``"equal-critical-band"`` (17, Table 2),
        ``"one-third-octave"`` (18, Table 3) or ``"octave"`` (6, Table 4).
    importance : str or array_like, keyword-only
        ``"average"``, an Annex B test name, or weights (see :func:`band_importance`).

    Returns
    -------
    SIIResult
        ``index`` is a float for 1-D inputs and an array of the broadcast leading shape otherwise.

    Raises
    ------
    voiceband.errors.SignalValueError
        Level arrays with the wrong number of bands, NaN or +inf (T' must be finite).
    voiceband.errors.MeasurementError
        Unknown procedure or importance.

    Notes
    -----
    * Self-speech masking V = E' - 24 dB (Eq. 5); B = max(N', V) (4.3.2.2).
    * Slope C = -80 + 0.6 [B + 10 log10(h - l)] for critical bands (Eq. 6) or
      C = -80 + 0.6 [B + 10 log10(F) - 6.353] for one-third octaves (Eq. 7).
    * Z_1 = B_1; Z_i = 10 log10[10^(0.1 N'_i) + sum_{k<i} 10^(0.1 [B_k + 3.32 C_k log10(r_ik)])] with
      r_ik = 0.89 F_i / F_k (Eq. 9) or F_i / h_k (Eq. 8; F_i taken as sqrt(l_i h_i) as in the working
      group's reference program). The octave procedure has no V, B, C and uses Z = N' (4.3.1).
    * D = max(Z, X') -- the larger of the two, not a power sum (4.5); X' = X + T' (Eq. 10).
    * L = 1 - (E' - U - 10)/160 clipped to [0, 1], with U the **normal-effort** standard speech spectrum
      whatever the actual vocal effort (Eq. 11).
    * K = (E' - D + 15)/30 clipped to [0, 1] (Eq. 12); A = L K (Eq. 13); SII = sum I A (Eq. 14).

    The standard's scope excludes sharply filtered speech or noise; results for such bands rest on an
    extrapolation of the method.

    References
    ----------
    ANSI/ASA S3.5-1997 (R2017), *Methods for Calculation of the Speech Intelligibility Index*, clause 4
    and Tables 1-4.
    """
    procedure, eng, weights, e, nz, t = _prepare(speech_db, noise_db, threshold_db, procedure, importance)
    table = eng.table
    n = table.n_bands
    batch_shape = e.shape[:-1]
    rows = int(np.prod(batch_shape, dtype=np.int64))
    # One block holds every band array of the result (a single allocation is much cheaper than a dozen
    # for large batches); the chain runs on row chunks small enough to stay in cache.
    block = np.empty((_N_FIELDS, rows, n))
    block[_E] = e.reshape(rows, n)
    block[_N] = nz.reshape(rows, n)
    block[_T] = t.reshape(rows, n)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for lo in range(0, rows, _CHUNK_ROWS):
            _chain(block[:, lo : lo + _CHUNK_ROWS], eng)
    if weights.ndim == 1:
        index = block[_A] @ weights  # Eq. 14
    else:
        index = np.sum(block[_A].reshape(batch_shape + (n,)) * weights, axis=-1)
    index = np.asarray(index).reshape(batch_shape)
    block.setflags(write=False)
    fields = block.reshape((_N_FIELDS,) + batch_shape + (n,))
    index_out: Union[float, np.ndarray] = float(index) if index.ndim == 0 else _readonly(index)
    spread = table.spread_of_masking

    return SIIResult(
        index=index_out,
        procedure=procedure,
        band_centres_hz=table.centres_hz,
        band_importance=weights,
        band_audibility=fields[_A],
        speech_db=fields[_E],
        noise_db=fields[_N],
        threshold_db=fields[_T],
        self_speech_masking_db=fields[_V] if spread else None,
        masker_db=fields[_B] if spread else None,
        slope_db_per_octave=fields[_C] if spread else None,
        masking_db=fields[_Z],
        internal_noise_db=fields[_X],
        disturbance_db=fields[_D],
        level_distortion=fields[_L],
        audibility_factor=fields[_K],
    )


def sii_index(
    speech_db: ArrayLike,
    noise_db: Union[ArrayLike, None] = None,
    threshold_db: Union[ArrayLike, None] = None,
    *,
    procedure: str = "one-third-octave",
    importance: Union[str, ArrayLike] = "average",
) -> Union[float, np.ndarray]:
    """The SII alone, as :func:`sii` computes it, without keeping the intermediate band arrays.

    For large batches (a cutoff search, a parameter sweep): the clause-4 chain runs on row chunks
    in one scratch block that is reused, so memory stays a few hundred kilobytes whatever the batch
    size, where :func:`sii` keeps twelve band arrays per row (about 1.7 kB a row for 18 bands).
    Parameters, units and Raises as :func:`sii`; results are identical to ``sii(...).index``.

    Examples
    --------
    >>> from voiceband.intelligibility import standard_speech_spectrum
    >>> round(sii_index(standard_speech_spectrum("normal")), 4)
    0.9958
    """
    procedure, eng, weights, e, nz, t = _prepare(speech_db, noise_db, threshold_db, procedure, importance)
    n = eng.table.n_bands
    batch_shape = e.shape[:-1]
    rows = int(np.prod(batch_shape, dtype=np.int64))
    e2, n2, t2 = e.reshape(rows, n), nz.reshape(rows, n), t.reshape(rows, n)
    w2 = None if weights.ndim == 1 else np.broadcast_to(weights, e.shape).reshape(rows, n)
    index = np.empty(rows)
    scratch = np.empty((_N_FIELDS, min(rows, _CHUNK_ROWS), n))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for lo in range(0, rows, _CHUNK_ROWS):
            m = min(_CHUNK_ROWS, rows - lo)
            blk = scratch[:, :m]
            blk[_E] = e2[lo:lo + m]
            blk[_N] = n2[lo:lo + m]
            blk[_T] = t2[lo:lo + m]
            _chain(blk, eng)
            if w2 is None:
                np.matmul(blk[_A], weights, out=index[lo:lo + m])  # Eq. 14
            else:
                np.sum(blk[_A] * w2[lo:lo + m], axis=-1, out=index[lo:lo + m])
    index = index.reshape(batch_shape)
    return float(index) if index.ndim == 0 else _readonly(index)
