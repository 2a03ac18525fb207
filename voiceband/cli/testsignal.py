"""``voiceband testsignal``: write a test signal (sweep, multitone, two-tone, tone, stepped tones) to a file."""

from __future__ import annotations

import enum
from pathlib import Path
from typing import Annotated, Optional

import typer

from .common import guarded


class Kind(str, enum.Enum):
    sweep = "sweep"
    multitone = "multitone"
    two_tone = "two-tone"
    tone = "tone"
    steps = "steps"


_SUBTYPE = {16: "PCM_16", 24: "PCM_24", 32: "FLOAT"}


@guarded
def testsignal(
    kind: Annotated[
        Kind,
        typer.Argument(
            help="sweep: exponential sine sweep with start/stop markers; multitone: Schroeder-phase "
            "multitone; two-tone: SSB two-tone pair; tone: reference tone; steps: stepped tones.",
            show_default=False,
        ),
    ],
    out: Annotated[Path, typer.Option("--out", "-o", help="Output file (.wav or .flac).", show_default=False)],
    peak_dbfs: Annotated[
        Optional[float],
        typer.Option("--peak-dbfs", help="Sample peak level, dBFS (default -20 for 'tone', -6 otherwise).", show_default=False),
    ] = None,
    duration_s: Annotated[
        Optional[float],
        typer.Option("--duration-s", help="Length in seconds (default 10; for 'sweep' the sweep itself, markers excluded). "
                     "Not used by 'steps'.", show_default=False),
    ] = None,
    rate_hz: Annotated[int, typer.Option("--rate-hz", help="Sample rate, Hz.")] = 48000,
    low_hz: Annotated[
        Optional[float], typer.Option("--low-hz", help="sweep: start frequency (20 Hz); multitone: first tone (300 Hz).", show_default=False)
    ] = None,
    high_hz: Annotated[
        Optional[float],
        typer.Option("--high-hz", help="sweep: stop frequency (20 kHz, at most 0.9 × Nyquist); multitone: last tone (3000 Hz).", show_default=False),
    ] = None,
    tones: Annotated[int, typer.Option("--tones", help="multitone: number of tones.")] = 28,
    tone_hz: Annotated[
        Optional[list[float]],
        typer.Option("--tone-hz", metavar="HZ", help="Tone frequency; repeat for two-tone (default 400 and 1800) and steps "
                     "(default one-third-octave centres 100 Hz–8 kHz); tone default 1000.", show_default=False),
    ] = None,
    dwell_s: Annotated[float, typer.Option("--dwell-s", help="steps: length of each tone.")] = 0.5,
    gap_s: Annotated[float, typer.Option("--gap-s", help="steps: silence between tones.")] = 0.1,
    markers: Annotated[bool, typer.Option("--markers/--no-markers", help="sweep: add the start/stop marker chirps.")] = True,
    bits: Annotated[int, typer.Option("--bits", help="Sample format: 16 or 24 (integer PCM) or 32 (float).")] = 24,
    force: Annotated[bool, typer.Option("--force", help="Overwrite an existing file.")] = False,
) -> None:
    """Write a test signal for measuring a transmit chain; prints its levels (and the multitone crest factor)."""
    from ..audio import write
    from ..errors import SignalValueError
    from ..outputs import check_writable
    from ..synth import tones as tn

    if bits not in _SUBTYPE:
        raise SignalValueError(f"--bits must be 16, 24 or 32, got {bits}.")
    check_writable(out, force=force, make_folders=True)
    k = Kind(kind)
    peak = peak_dbfs if peak_dbfs is not None else (tn.REFERENCE_TONE_PEAK_DBFS if k is Kind.tone else -6.0)
    if k is Kind.steps and duration_s is not None:
        raise SignalValueError("'steps' takes its length from --dwell-s, --gap-s and the number of tones; leave out --duration-s.")
    dur = 10.0 if duration_s is None else duration_s
    if k is not Kind.sweep and not markers:
        raise SignalValueError("--no-markers applies to 'sweep' only.")
    if k not in (Kind.sweep, Kind.multitone) and (low_hz is not None or high_hz is not None):
        raise SignalValueError("--low-hz and --high-hz apply to 'sweep' and 'multitone' only; use --tone-hz.")
    if k in (Kind.sweep, Kind.multitone) and tone_hz:
        raise SignalValueError("--tone-hz applies to 'two-tone', 'tone' and 'steps'; use --low-hz and --high-hz.")

    lines: list[str] = []
    if k is Kind.sweep:
        from ..synth.sweep import exponential_sweep

        kw = {}
        if low_hz is not None:
            kw["start_hz"] = low_hz
        if high_hz is not None:
            kw["stop_hz"] = high_hz
        sw = exponential_sweep(duration_s=dur, sample_rate_hz=rate_hz, level_dbfs=peak, markers=markers, **kw)
        samples, fs = sw.samples, sw.sample_rate_hz
        lines.append(f"exponential sweep {sw.start_hz:g}–{sw.stop_hz:g} Hz, {sw.duration_s:g} s, peak {sw.level_dbfs:g} dBFS")
        if markers:
            starts = ", ".join(f"{i / fs:.3f} s" for i in sw.marker_start_indices)
            lines.append(f"markers at {starts}; sweep from {sw.sweep_start_index / fs:.3f} s to {sw.sweep_stop_index / fs:.3f} s")
    else:
        if k is Kind.multitone:
            sig = tn.multitone(dur, rate_hz, low_hz=300.0 if low_hz is None else low_hz,
                               high_hz=3000.0 if high_hz is None else high_hz, n_tones=tones, peak_dbfs=peak)
            f = sig.frequencies_hz
            lines.append(f"Schroeder-phase multitone: {f.size} tones {f[0]:g}–{f[-1]:g} Hz, spacing {f[1] - f[0]:g} Hz")
            lines.append(f"crest factor {sig.crest_factor_db:.2f} dB")
        elif k is Kind.two_tone:
            pair = tuple(tone_hz) if tone_hz else tn.SSB_TWO_TONE_HZ
            sig = tn.two_tone(dur, rate_hz, tones_hz=pair, peak_dbfs=peak)
            lines.append("two-tone pair " + " + ".join(f"{v:g}" for v in sig.frequencies_hz) + " Hz, equal levels, "
                         f"each {peak - 6.02:.2f} dBFS peak")
        elif k is Kind.tone:
            if tone_hz and len(tone_hz) != 1:
                raise SignalValueError("'tone' takes one --tone-hz.")
            sig = tn.reference_tone(dur, rate_hz, frequency_hz=tone_hz[0] if tone_hz else tn.REFERENCE_TONE_HZ, peak_dbfs=peak)
            lines.append(f"tone {sig.frequencies_hz[0]:g} Hz")
        else:
            freqs = list(tone_hz) if tone_hz else tn.third_octave_step_frequencies_hz(rate_hz)
            st = tn.stepped_tones(freqs, rate_hz, dwell_s=dwell_s, gap_s=gap_s, peak_dbfs=peak)
            sig = st.signal
            lines.append(f"{sig.frequencies_hz.size} stepped tones {sig.frequencies_hz[0]:g}–{sig.frequencies_hz[-1]:g} Hz, "
                         f"{dwell_s:g} s each, {gap_s:g} s gaps; first starts at {st.starts_s[0]:.3f} s")
        samples, fs = sig.samples, sig.sample_rate_hz
        lines.append(f"peak {sig.peak_dbfs:.2f} dBFS, RMS {sig.rms_dbfs:.2f} dBFS")
    write(out, samples, fs, subtype=_SUBTYPE[bits], force=force, make_folders=True)
    typer.echo(f"{out}: {samples.size / fs:.3f} s at {fs} Hz, {_SUBTYPE[bits]}")
    for line in lines:
        typer.echo("  " + line)
