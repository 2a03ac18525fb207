"""Re-read the passband edges of dumped ``bench_edges`` cases with the current code.

``python benchmarks/bench_edges.py --seed S --dump cases-S.pkl`` writes each case's inputs of
:func:`voiceband.measurement.edges.fine_edges` (the fine speech and noise PSDs, the fitted
vocal effort, the talker's F0) and its truth (the filters' exact -10 dB points, scipy
``sosfreqz``).  This script runs ``fine_edges`` again on them, about a second for 160
cases instead of a minute or more of rendering and analysis, and prints issue 8's edge
targets as ``bench_edges`` counts them:

* order >= 4: upper -10 dB edge within 5 %, lower within max(8 %, 25 Hz), over all cases
  and at SNR >= 10 dB (and no noise), with the median |error|;
* order 1-2: the true edge inside the reported range;
* null edges where the true edge lies below Nyquist.

It first checks that the replay gives the edges the dump recorded (same code, same
numbers); after a change to ``edges.py`` the count of changed cases says how many moved.
An edge-finding experiment is then measured by editing ``edges.py`` (or by ``--set NAME=VALUE``
for its module constants, e.g. ``--set STAY_OCTAVES=0.5``) and replaying.

Usage: ``python benchmarks/replay_edges.py FILE [FILE ...] [--set NAME=VALUE ...]``.
"""

from __future__ import annotations

import argparse
import math
import pickle
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from voiceband.measurement import edges as edges_mod  # noqa: E402


def _same(a, b) -> bool:
    if a is None or b is None:
        return a is None and b is None
    if isinstance(a, (tuple, list)):
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b))
    return math.isclose(float(a), float(b), rel_tol=1e-9, abs_tol=1e-9)


def replay(cases: list) -> dict:
    """Counts of issue 8's edge targets over ``cases`` with the current ``fine_edges``."""
    n = dict(cases=0, unchanged=0, up=0, up_ok=0, up10=0, up_ok10=0, lo=0, lo_ok=0, lo10=0, lo_ok10=0,
             hi12=0, hi_in=0, lo12=0, lo_in=0, null=0,
             no_fine=0, no_fine_valid_sides=0)
    err = {"upper": [], "lower": []}
    for c in cases:
        inp = c["inputs"]
        fe = None if inp is None else edges_mod.fine_edges(
            inp["freqs_hz"], inp["speech_psd"], inp["noise_psd"], effort_index=inp["effort_index"],
            f0_low_hz=inp["f0_low_hz"], f0_median_hz=inp["f0_median_hz"])
        if fe is not None and inp.get("quietest_frames"):
            fe = edges_mod.noise_from_quietest_frames(fe)
        n["cases"] += 1
        if fe is None:
            # No fine edges (analyze then reports the one-third-octave edges, or none).
            n["unchanged"] += int(inp is None)
            n["no_fine"] += 1
            n["no_fine_valid_sides"] += int(c["high_valid"]) + int(c["low_valid"])
            continue
        got = (fe.low.hz, fe.high.hz, fe.low.range_hz, fe.high.range_hz)
        n["unchanged"] += int(_same(got, tuple(c["reported"])))
        steep = c["order"] >= 4
        good = c["snr_db"] is None or c["snr_db"] >= 10.0
        for side, edge, truth, valid in (("upper", fe.high, c["true_high_hz"], c["high_valid"]),
                                         ("lower", fe.low, c["true_low_hz"], c["low_valid"])):
            if not valid:
                continue
            if edge.hz is None:
                n["null"] += 1
            elif steep:
                tol = 0.05 * truth if side == "upper" else max(0.08 * truth, 25.0)
                ok = abs(edge.hz - truth) <= tol
                k = "up" if side == "upper" else "lo"
                n[k] += 1
                n[k + "_ok"] += int(ok)
                if good:
                    n[k + "10"] += 1
                    n[k + "_ok10"] += int(ok)
                err[side].append(abs(edge.hz - truth) / truth)
            if not steep and edge.range_hz is not None:
                k = "hi" if side == "upper" else "lo"
                n[k + "12"] += 1
                n[k + "_in"] += int(edge.range_hz[0] <= truth <= edge.range_hz[1])
    n["median_abs_error_upper_pct"] = 100.0 * float(np.median(err["upper"])) if err["upper"] else math.nan
    n["median_abs_error_lower_pct"] = 100.0 * float(np.median(err["lower"])) if err["lower"] else math.nan
    return n


def _set(assignments) -> None:
    for a in assignments:
        name, _, value = a.partition("=")
        if not hasattr(edges_mod, name):
            raise SystemExit(f"voiceband.measurement.edges has no constant {name!r}")
        old = getattr(edges_mod, name)
        setattr(edges_mod, name, type(old)(value) if not isinstance(old, bool) else value.lower() in ("1", "true"))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("dumps", nargs="+", type=Path, help="files written by bench_edges.py --dump")
    ap.add_argument("--set", action="append", default=[], metavar="NAME=VALUE",
                    help="override a module constant of voiceband.measurement.edges for this replay")
    a = ap.parse_args()
    _set(a.set)
    for path in a.dumps:
        with open(path, "rb") as fh:
            d = pickle.load(fh)
        n = replay(d["cases"])
        print(f"{path.name} (seed {d['seed']}): {n['cases']} cases, edges as recorded {n['unchanged']}")
        print(f"  order >=4 upper within 5 %: {n['up_ok']}/{n['up']} (median |e| {n['median_abs_error_upper_pct']:.1f} %), "
              f"at SNR >= 10 dB {n['up_ok10']}/{n['up10']}")
        print(f"  order >=4 lower within max(8 %, 25 Hz): {n['lo_ok']}/{n['lo']} (median |e| {n['median_abs_error_lower_pct']:.1f} %), "
              f"at SNR >= 10 dB {n['lo_ok10']}/{n['lo10']}")
        print(f"  order 1-2 truth in range: upper {n['hi_in']}/{n['hi12']}, lower {n['lo_in']}/{n['lo12']}; "
              f"null edges {n['null']}")
        if n["no_fine"]:
            print(f"  cases without fine edges: {n['no_fine']} ({n['no_fine_valid_sides']} edges with a truth below Nyquist)")


if __name__ == "__main__":
    main()
