"""Where ``voiceband analyze`` spends its time: an in-process stage timer.

Runs, in one fresh process, what ``voiceband analyze FILE --json -`` runs, with a clock around
each stage (every accumulator method and end-of-file function is wrapped by a timer):

imports
    the modules the command loads, timed once before anything else (everything that
    ``sys.modules`` holds after one run of the analysis on a short signal);
decode
    ``audio.blocks`` (libsndfile and the conversion to float64);
levels, clipping, activity, spectrum, hum, voice
    each accumulator's ``update`` over every block and its ``result`` at the end (levels:
    also the peak pieces clipping uses and the float32 copy the framing uses; activity: the framing and frame levels; spectrum: the frame FFTs; voice: the reservoir
    while streaming, the YIN/pYIN analysis at the end, printed as "voice F0");
bandwidth and edges, SII, sections and findings, JSON
    the rest of the command.

Each figure is the median of ``--repeat`` runs (default 3); peak RSS is printed at the end.
Usage: ``python benchmarks/stages_analyze.py FILE [--repeat N]``.
"""

from __future__ import annotations

import argparse
import functools
import resource
import statistics
import time
from collections import defaultdict

CLOCK: dict[str, float] = defaultdict(float)


def _timed(name: str, fn):
    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        t = time.perf_counter()
        try:
            return fn(*args, **kwargs)
        finally:
            CLOCK[name] += time.perf_counter() - t
    return wrapper


def _imports() -> float:
    """Seconds to import what the command imports (found by running it once on a short signal in a child)."""
    import subprocess
    import sys

    probe = (
        "import os, sys, tempfile, numpy as np, voiceband.cli.main\n"
        "from voiceband import audio\n"
        "from voiceband.analysis import analyze_file\n"
        "from voiceband.serialize import dumps_json\n"
        "t = np.arange(48000) / 48000\n"
        "x = 0.3 * np.sin(2 * np.pi * 200 * t) * (np.sin(2 * np.pi * 2 * t) > 0)"
        " + 1e-3 * np.random.default_rng(1).standard_normal(t.size)\n"
        "d = tempfile.mkdtemp()\n"
        "p = audio.write(os.path.join(d, 'probe.wav'), x, 48000)\n"
        "dumps_json(analyze_file(p))\n"
        "os.remove(p); os.rmdir(d)\n"
        "print(' '.join(sorted(m for m in sys.modules if not m.startswith('_')"
        " and ('.' not in m or m.startswith(('voiceband', 'scipy'))))))\n"
    )
    mods = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, check=True).stdout.split()
    timer = (
        "import sys, time\n"
        "t = time.perf_counter()\n"
        f"for m in {mods!r}:\n"
        "    try:\n"
        "        __import__(m)\n"
        "    except ImportError:\n"  # a name only another module's import creates
        "        pass\n"
        "print(time.perf_counter() - t)\n"
    )
    return float(subprocess.run([sys.executable, "-c", timer], capture_output=True, text=True, check=True).stdout)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("file")
    ap.add_argument("--repeat", type=int, default=3)
    a = ap.parse_args()
    imports = _imports()

    import voiceband.intelligibility as intel
    import voiceband.measurement.bandwidth as bw
    from voiceband import analysis, audio, findings
    from voiceband import serialize
    from voiceband.results import InputInfo

    bw.occupied_bandwidth = _timed("bandwidth and edges", bw.occupied_bandwidth)
    bw.passband_edges = _timed("bandwidth and edges", bw.passband_edges)
    intel.recording_intelligibility = _timed("SII", intel.recording_intelligibility)
    findings.findings_for = _timed("sections and findings", findings.findings_for)

    runs: dict[str, list[float]] = defaultdict(list)
    for _ in range(a.repeat):
        CLOCK.clear()
        total0 = time.perf_counter()
        ai = audio.info(a.file)
        pipe = analysis.RecordingAccumulator(ai.sample_rate_hz)
        for attr, stage in (("levels", "levels and true peak"), ("clipping", "clipping"), ("hum", "hum")):
            acc = getattr(pipe, attr)
            acc.update = _timed(stage, acc.update)
            acc.result = _timed(stage, acc.result)
        pipe.activity.update_frames = _timed("activity (framing)", pipe.activity.update_frames)
        pipe.activity.result = _timed("activity (framing)", pipe.activity.result)
        pipe.spectrum.update_frames = _timed("spectrum", pipe.spectrum.update_frames)
        pipe.spectrum.result = _timed("spectrum", pipe.spectrum.result)
        pipe.voice.update = _timed("voice reservoir", pipe.voice.update)
        pipe.voice.result = _timed("voice F0", pipe.voice.result)
        it = audio.blocks(ai.path, audio_info=ai)
        while True:
            t = time.perf_counter()
            block = next(it, None)
            CLOCK["decode"] += time.perf_counter() - t
            if block is None:
                break
            pipe.update(block)
        info = InputInfo(ai.path, ai.sample_rate_hz, ai.channels, "0", pipe.samples / ai.sample_rate_hz,
                         ai.format, ai.subtype)
        res = analysis._combine(info, pipe)
        t = time.perf_counter()
        serialize.dumps_json(res)
        CLOCK["JSON"] += time.perf_counter() - t
        CLOCK["total (in process)"] = time.perf_counter() - total0
        for k, v in CLOCK.items():
            runs[k].append(v)
    print(f"{a.file}: {pipe.samples / ai.sample_rate_hz / 3600:.3f} h at {ai.sample_rate_hz} Hz, "
          f"median of {a.repeat} runs")
    print(f"  {'imports (separate process)':28s} {imports:7.3f} s")
    order = ["decode", "levels and true peak", "clipping", "activity (framing)", "hum", "spectrum",
             "voice reservoir", "voice F0", "bandwidth and edges", "SII", "sections and findings", "JSON"]
    for k in order + [k for k in runs if k not in order and k != "total (in process)"]:
        if k in runs:
            print(f"  {k:28s} {statistics.median(runs[k]):7.3f} s")
    print(f"  {'total (in process)':28s} {statistics.median(runs['total (in process)']):7.3f} s")
    print(f"  peak RSS {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB")


if __name__ == "__main__":
    main()
