"""The demo scenario: a portable station tries three microphone filter boards.

An invented scenario of our own, built from the synthetic corpus's clean reference talker
(``corpus_synthetic/speech_medium_normal.toml``: medium voice, normal effort, P.56 −26 dBFS, seed 1),
rendered with :func:`voiceband.synth.corpus.render`:

* **Board A, "as bought"**: a gentle 2-pole 80–5000 Hz band-pass and a ground loop adding 50 Hz hum --
  far too wide for SSB;
* **Board B, "SSB board"**: a 4-pole 300–2700 Hz band-pass -- the fix;
* **Board C, "SSB board, hot microphone"**: board B with the microphone gain turned up 14 dB, so its
  output stage clips at −6 dBFS (recorded at the rig's monitor output, where the flat tops survive).

Each board's audio crosses a quiet receiver (band-limited hiss 30 dB below the speech) as a friend
would record it.  The demo writes the recordings, one report per board -- board B's with board A as
"before", so it shows what the change did -- and a comparison page.  Each board is a
:class:`voiceband.chain.Chain` (:func:`board_chain`); :func:`apply_board` puts the talker through it.
"""

from __future__ import annotations

import base64
import os
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Callable, Optional, Union

import numpy as np

if TYPE_CHECKING:
    from .chain import Chain

__all__ = ["BOARDS", "Board", "board_chain", "apply_board", "talker", "run_demo", "demo_outputs"]

PROFILE = "ssb-voice"
SAMPLE_RATE_HZ = 48000
DURATION_S = 12.0


@dataclass(frozen=True)
class Board:
    """One filter board of the scenario."""

    key: str
    name: str
    description: str
    low_hz: float
    high_hz: float
    order: int
    mic_gain_db: float = 0.0
    preamp_clip_dbfs: Optional[float] = None
    hum_db_re_speech: Optional[float] = None


BOARDS = (
    Board("board-a", "Board A — as bought", "2-pole 80–5000 Hz band-pass; a ground loop adds 50 Hz hum.",
          80.0, 5000.0, 2, hum_db_re_speech=-34.0),
    Board("board-b", "Board B — SSB board", "4-pole 300–2700 Hz band-pass, ground loop fixed.", 300.0, 2700.0, 4),
    Board("board-c", "Board C — SSB board, hot microphone", "Board B with its microphone gain turned up 14 dB: the output stage clips at −6 dBFS (recorded at the rig's monitor output).",
          300.0, 2700.0, 4, mic_gain_db=14.0, preamp_clip_dbfs=-6.0),
)


def talker() -> np.ndarray:
    """The corpus's clean reference talker (speech_medium_normal spec), float64 at 48 kHz."""
    from .synth.corpus import CorpusSpec, render

    spec = CorpusSpec(path="speech_medium_normal.toml", description="demo talker", output="talker.wav",
                      sample_rate_hz=SAMPLE_RATE_HZ, duration_s=DURATION_S, seed=1, bits=16, voice="medium",
                      effort="normal", active_level_dbfs=-26.0, stages=(("pink", (("level_dbfs", -80.0),)),))
    return render(spec)


def board_chain(board: Board) -> "Chain":
    """The board as a :class:`voiceband.chain.Chain`: microphone gain and the band-pass filter."""
    from .chain import Chain, Filter, Gain

    return Chain(board.name, (Gain(gain=10.0 ** (board.mic_gain_db / 20.0)),
                              Filter(kind="bandpass", type="butterworth", order=board.order,
                                     low_hz=board.low_hz, high_hz=board.high_hz)))


def apply_board(x: np.ndarray, board: Board, *, seed: int = 0) -> np.ndarray:
    """The board's audio as recorded: the board's chain, hum, receiver hiss, output-stage clipping."""
    from .chain import Clipper
    from .measurement.levels import measure_levels
    from .synth.noise import mains_hum, receiver_hiss

    fs = SAMPLE_RATE_HZ
    active = measure_levels(x, fs).active_level_dbfs
    y = board_chain(board).process(x, fs)
    speech = active + board.mic_gain_db
    if board.hum_db_re_speech is not None:
        y = y + mains_hum(DURATION_S, fs, mains_hz=50.0, level_dbfs=speech + board.hum_db_re_speech, seed=seed + 1)[: y.size]
    y = y + receiver_hiss(DURATION_S, fs, low_hz=250.0, high_hz=3200.0, level_dbfs=active - 30.0, seed=seed + 2)[: y.size]
    if board.preamp_clip_dbfs is not None:  # the overdriven output stage, heard on the monitor output
        y = Clipper(mode="hard", level_dbfs=board.preamp_clip_dbfs).process(y, fs)
    peak = float(np.max(np.abs(y)))
    return y / peak * 0.89 if peak > 0.89 else y  # the receiver's recording level keeps 1 dB of headroom


def demo_outputs(out: Path) -> list[Path]:
    """Every file the demo writes (for the --force check)."""
    from .report.onair import output_names

    files = [out / "index.html"] + [out / "recordings" / f"{b.key}.wav" for b in BOARDS]
    for b in BOARDS:
        files += [out / b.key / n for n in output_names(pdf=False, before=(b.key == "board-b"))]
    return files


def run_demo(out: Union[str, os.PathLike] = "reports/demo", *, force: bool = False,
             progress: Callable[[str], None] = lambda text: None) -> Path:
    """Build the scenario and write its reports into ``out``; returns the comparison page's path."""
    from . import audio
    from .outputs import atomic_output, check_writable
    from .profiles import load_profile
    from .report.html import render_comparison
    from .report.figures import Take as FigureTake
    from .report.figures import comparison_figure, figure_png
    from .report.onair import build_report, write_report

    out = Path(out)
    for f in demo_outputs(out):
        check_writable(f, force=force, make_folders=True)
    profile = load_profile(PROFILE)
    progress("voiceband demo: synthesising the talker (corpus spec speech_medium_normal) ...")
    x = talker()
    paths = {}
    for i, b in enumerate(BOARDS):
        p = out / "recordings" / f"{b.key}.wav"
        audio.write(p, apply_board(x, b, seed=10 * i), SAMPLE_RATE_HZ, force=force, make_folders=True)
        paths[b.key] = p
    entries, takes = [], []
    for b in BOARDS:
        progress(f"voiceband demo: analysing and reporting {b.name} ...")
        before = paths["board-a"] if b.key == "board-b" else None
        rep = build_report(paths[b.key], profile=profile, before=before,
                           title=f"Portable station: {b.name}" + (" (after Board A)" if before else ""),
                           notes=f"{b.description} Recorded off the air by a friend; SSB voice profile.",
                           now_label=b.name.split(" — ")[0], before_label="Board A")
        write_report(rep, out / b.key, force=force)
        entries.append({"name": b.name, "description": b.description, "href": f"{b.key}/index.html", "take": rep.now})
        takes.append(FigureTake(b.name.split(" — ")[0], rep.now.result, rep.now.details))
    png = figure_png(comparison_figure(takes, profile))
    image = ("The three boards' long-term speech spectra and their SII against channel SNR",
             "data:image/png;base64," + base64.b64encode(png).decode("ascii"))
    page = render_comparison(
        "Portable station: three filter boards on SSB",
        "A portable station tried three microphone filter boards on the same talker; a friend recorded each one "
        "off the air. Each name opens that board's full report; Board B's report shows Board A as “before”.",
        profile, entries, image)
    with atomic_output(out / "index.html", force=force, make_folders=True) as tmp:
        tmp.write_text(page, encoding="utf-8")
    return out / "index.html"
