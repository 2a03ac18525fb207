"""``voiceband response``: measure a chain's frequency response from a recorded test signal."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Annotated, Any, Optional

import typer

from .common import emit_json, guarded


@guarded
def response(
    stimulus: Annotated[Path, typer.Argument(help="The test signal as played (a sweep or multitone file).", show_default=False)],
    recording: Annotated[Path, typer.Argument(help="What the chain delivered when the test signal was played into it.", show_default=False)],
    out: Annotated[
        Optional[Path], typer.Option("--out", help="Folder for the Bode plot (PNG).", metavar="DIR")
    ] = None,
    json_path: Annotated[
        Optional[str], typer.Option("--json", help="Also write JSON to PATH; '-' prints only JSON on stdout.", metavar="PATH|-")
    ] = None,
    channel: Annotated[
        str, typer.Option("--channel", "-c", help="Channel of the recording: a number from 0, or 'mix'.")
    ] = "0",
    force: Annotated[bool, typer.Option("--force", help="Overwrite existing output files.")] = False,
) -> None:
    """Measure magnitude and phase response, passband edges, ripple, distortion and
    carrier offset of a chain from a recording of a sweep or multitone."""
    from ..audio import read
    from ..errors import OutputExistsError
    from ..outputs import atomic_output, check_writable
    from ..response import measure_response

    png = None
    if out is not None:
        if out.exists() and not out.is_dir():
            raise OutputExistsError(f"'{out}' is a file; --out needs a folder.")
        png = out / f"{recording.stem}_response.png"
        check_writable(png, force=force, make_folders=True, inputs=(stimulus, recording))  # refuse before the work
    # A missing folder is made only when it is the --out folder (as the README's example writes the JSON there).
    json_in_out = out is not None and json_path not in (None, "-") and Path(json_path).resolve().parent == out.resolve()
    if json_path not in (None, "-"):
        check_writable(Path(json_path), force=force, make_folders=json_in_out, inputs=(stimulus, recording))
    x, fs_x = read(stimulus)
    y, fs_y = read(recording, channel=channel)
    result = measure_response(x, fs_x, y, fs_y)
    doc = response_document(result, stimulus=stimulus, recording=recording)
    if png is not None:
        from ..report.plots import bode_figure

        fig = bode_figure(result)
        with atomic_output(png, force=force, make_folders=True) as tmp:
            fig.savefig(tmp, format="png")
    if json_path != "-":
        _print_summary(result, png)
    emit_json(doc, json_path, force=force, make_folders=json_in_out)


def response_document(result: Any, *, stimulus: Path, recording: Path) -> dict[str, Any]:
    """The JSON document for a :class:`~voiceband.response.ResponseResult` (NaN becomes null on writing)."""
    return {
        "stimulus": str(stimulus),
        "recording": str(recording),
        "stimulus_kind": result.stimulus_kind,
        "sample_rate_hz": result.sample_rate_hz,
        "recording_sample_rate_hz": result.recording_sample_rate_hz,
        "analysis_band_hz": list(result.analysis_band_hz),
        "frequencies_hz": result.frequencies_hz,
        "magnitude_db": result.magnitude_db,
        "phase_deg": result.phase_deg,
        "group_delay_s": result.group_delay_s,
        "snr_db": result.snr_db,
        "passband_level_db": result.passband_level_db,
        "passband_peak_hz": result.passband_peak_hz,
        "edges_hz": result.edges_hz,
        "ripple_db": result.ripple_db,
        "delay_s": result.delay_s,
        "clock_ratio": result.clock_ratio,
        "clock_ratio_measured": result.clock_ratio_measured,
        "frequency_offset_hz": result.frequency_offset_hz,
        "frequency_offset_corrected": result.frequency_offset_corrected,
        "frequency_offset_resolution_hz": result.frequency_offset_resolution_hz,
        "frequency_offset_spread_hz": result.frequency_offset_spread_hz,
        "harmonics": [
            {"order": h.order, "level_db_re_fundamental": h.level_db_re_fundamental} for h in result.harmonics
        ],
        "thd_vs_frequency": {
            "frequencies_hz": result.thd_frequencies_hz,
            "thd_db": result.thd_db,
            "orders": [
                {"order": k, "level_db_re_fundamental": result.harmonic_levels_db[i]}
                for i, k in enumerate(h.order for h in result.harmonics)
            ]
            if result.harmonic_levels_db.shape[1]
            else [],
        },
        "findings": list(result.findings),
    }


def _v(v: Optional[float], unit: str, digits: int = 1) -> str:
    if v is None or not math.isfinite(v):
        return "—"
    return f"{v:.{digits}f} {unit}"


def _print_summary(r: Any, png: Optional[Path]) -> None:
    e = r.edges_hz
    lines = [
        f"Stimulus         {r.stimulus_kind}, analysed {r.analysis_band_hz[0]:.0f}–{r.analysis_band_hz[1]:.0f} Hz "
        f"at {r.sample_rate_hz} Hz (recording {r.recording_sample_rate_hz} Hz)",
        f"Passband −3 dB   {_v(e.low_3db, 'Hz', 0)} – {_v(e.high_3db, 'Hz', 0)}",
        f"Passband −10 dB  {_v(e.low_10db, 'Hz', 0)} – {_v(e.high_10db, 'Hz', 0)}",
        f"Ripple           {_v(r.ripple_db, 'dB', 2)} (peak-to-valley inside the −3 dB passband)",
        f"Gain             {_v(r.passband_level_db, 'dB', 2)} at {r.passband_peak_hz:.0f} Hz (recording re stimulus)",
        f"Delay            {_v(r.delay_s, 's', 4)} (stimulus start to response peak, recording clock)",
        f"Clock ratio      {r.clock_ratio:.6f}" + ("" if r.clock_ratio_measured else " (not measured)"),
        "Carrier offset   "
        + (f"{r.frequency_offset_hz:+.2f} Hz (corrected)" if r.frequency_offset_corrected
           else f"none above {r.frequency_offset_resolution_hz:g} Hz"),
        "Harmonics        "
        + ", ".join(f"H{h.order} {_v(h.level_db_re_fundamental, 'dB')}" for h in r.harmonics)
        + " re fundamental",
    ]
    for line in lines:
        typer.echo(line)
    for f in r.findings:
        typer.echo(f"Note: {f}")
    if png is not None:
        typer.echo(f"Plot             {png}")
