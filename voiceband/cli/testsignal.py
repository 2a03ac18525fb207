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


# The generators' parameter names, as the options that set them.
_OPTION_OF = {
    "level_dbfs": "--peak-dbfs", "frequency_hz": "--tone-hz", "tones_hz": "--tone-hz", "frequencies_hz": "--tone-hz",
    "n_tones": "--tones", "start_hz": "--low-hz", "stop_hz": "--high-hz", "sample_rate_hz": "--rate-hz",
    "bits": "--bits",
}


@guarded(options=_OPTION_OF)
def testsignal(
    kind: Annotated[
        Kind,
        typer.Argument(
            help="sweep: exponential sine sweep with start/stop markers; multitone: Schroeder-phase "
            "multitone; two-tone: SSB two-tone pair; tone: reference tone; steps: stepped tones.",
            show_default=False,
            metavar="KIND",
        ),
    ],
    out: Annotated[Path, typer.Option("--out", "-o", help="Output file: .wav or .flac (lossless; a test signal must reach the chain as written).", show_default=False)],
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
    bits: Annotated[int, typer.Option("--bits", help="Sample format: 16 or 24 (integer PCM) or 32 (float, .wav only).")] = 24,
    force: Annotated[bool, typer.Option("--force", help="Overwrite an existing file.")] = False,
) -> None:
    """Write a test signal for measuring a transmit chain; prints its levels (and the multitone crest factor).

    A steady test signal keys a transmitter at 100 % duty: use a dummy load where possible, stay
    within your licence and the transmitter's duty cycle; local regulations and licensed practice
    come first."""
    from ..audio import write
    from ..cautions import TRANSMITTER_CAUTION
    from ..errors import SignalValueError
    from ..outputs import check_writable
    from ..report.summary import number
    from ..synth.testsignals import file_subtype, make_test_signal
    from .render import Item, print_report

    subtype = file_subtype(str(out), bits)
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
    write(out, samples, fs, subtype=subtype, force=force, make_folders=True)
    rows = [("", "Written", f"{number(samples.size / fs, 3)} s", f"{fs} Hz, {subtype}")]
    rows += [("", "Signal" if i == 0 else "", "", line) for i, line in enumerate(sig.lines)]
    print_report(str(out), rows, [Item("caution", TRANSMITTER_CAUTION)], items_title="Before you transmit")
