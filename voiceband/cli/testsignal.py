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
    from ..synth.testsignals import make_test_signal

    if bits not in _SUBTYPE:
        raise SignalValueError(f"--bits must be 16, 24 or 32, got {bits}.")
    check_writable(out, force=force, make_folders=True)
    k = Kind(kind)
    if k is Kind.steps and duration_s is not None:
        raise SignalValueError("'steps' takes its length from --dwell-s, --gap-s and the number of tones; leave out --duration-s.")
    if k is not Kind.sweep and not markers:
        raise SignalValueError("--no-markers applies to 'sweep' only.")
    if k not in (Kind.sweep, Kind.multitone) and (low_hz is not None or high_hz is not None):
        raise SignalValueError("--low-hz and --high-hz apply to 'sweep' and 'multitone' only; use --tone-hz.")
    if k in (Kind.sweep, Kind.multitone) and tone_hz:
        raise SignalValueError("--tone-hz applies to 'two-tone', 'tone' and 'steps'; use --low-hz and --high-hz.")
    if k is Kind.tone and tone_hz and len(tone_hz) != 1:
        raise SignalValueError("'tone' takes one --tone-hz.")

    sig = make_test_signal(k.value, sample_rate_hz=rate_hz, peak_dbfs=peak_dbfs, duration_s=duration_s, low_hz=low_hz,
                           high_hz=high_hz, tones=tones, tone_hz=tone_hz, dwell_s=dwell_s, gap_s=gap_s, markers=markers)
    samples, fs = sig.samples, sig.sample_rate_hz
    write(out, samples, fs, subtype=_SUBTYPE[bits], force=force, make_folders=True)
    typer.echo(f"{out}: {samples.size / fs:.3f} s at {fs} Hz, {_SUBTYPE[bits]}")
    for line in sig.lines:
        typer.echo("  " + line)
