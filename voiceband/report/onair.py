"""The on-air test report: analyse, judge against a service profile, recommend, draw, write.

:func:`build_report` analyses one recording (and optionally a recording made before a change)
in a single pass each (:func:`voiceband.analysis.analyze_file_detailed`), judges it against a
service profile, runs the cutoff search and the recommendations, and returns a
:class:`Report`; :func:`write_report` writes ``index.html`` (self-contained), ``analysis.json``,
``summary.md``, the figures as PNG and, on request, ``report.pdf`` -- each atomically, and
nothing over an existing file without ``force``.
"""

from __future__ import annotations

import base64
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Optional, Union

from ..profiles import Profile, load_profile
from ..profiles.verdicts import Verdict, not_judged, verdicts
from ..recommend import CutoffSearch, Recommendation, recommendations, search_cutoffs, sii_at_channel_snr
from ..results import AnalysisResult

__all__ = ["Take", "Report", "build_report", "write_report", "report_json", "output_names", "changes"]

#: Channel SNR quoted in the "what changed" section (dB).
CHANGE_SNR_DB = 6.0


@dataclass(frozen=True)
class TakeReport:
    """One recording judged: its analysis, details, verdicts, search and recommendations."""

    label: str
    role: str  # "now" or "before"
    result: AnalysisResult
    details: Any
    verdicts: tuple[Verdict, ...]
    not_judged: tuple[tuple[str, str], ...]
    search: Optional[CutoffSearch]
    recommendations: tuple[Recommendation, ...]
    tags: dict = field(default_factory=dict)
    sii_at_6db: Optional[float] = None


Take = TakeReport


@dataclass(frozen=True)
class Report:
    """Everything a report shows."""

    title: str
    notes: str
    profile: Profile
    now: TakeReport
    before: Optional[TakeReport]
    changes: tuple[str, ...]
    settings: dict


def _take(path: Union[str, os.PathLike], profile: Profile, *, channel, role: str, label: str) -> TakeReport:
    from .. import audio
    from ..analysis import analyze_file_detailed

    result, details = analyze_file_detailed(path, channel=channel)
    if result.levels.peak_dbfs is None:
        from ..errors import SignalValueError

        raise SignalValueError(f"'{result.input.path}' is digital silence (every sample is zero): there is no audio to judge.")
    vs = verdicts(result, profile)
    search = search_cutoffs(result, profile, details.measurements.spectrum)
    return TakeReport(
        label=label, role=role, result=result, details=details, verdicts=vs,
        not_judged=not_judged(result, profile), search=search,
        recommendations=recommendations(result, profile, vs, search),
        tags=audio.tags(path), sii_at_6db=sii_at_channel_snr(result, CHANGE_SNR_DB),
    )


def build_report(path: Union[str, os.PathLike], *, profile: Union[str, os.PathLike, Profile] = "ssb-voice",
                 before: Optional[Union[str, os.PathLike]] = None, channel="0", title: Optional[str] = None,
                 notes: str = "", now_label: str = "after", before_label: str = "before") -> Report:
    """Analyse, judge and recommend for one recording (and the one made before a change)."""
    prof = profile if isinstance(profile, Profile) else load_profile(profile)
    ch = "mix" if str(channel) == "mix" else int(channel)
    label_now = now_label if before is not None else "this recording"
    now = _take(path, prof, channel=ch, role="now", label=label_now)
    prev = _take(before, prof, channel=ch, role="before", label=before_label) if before is not None else None
    return Report(
        title=title if title else f"On-air audio check: {Path(str(path)).name}",
        notes=notes or "",
        profile=prof,
        now=now,
        before=prev,
        changes=changes(prev.result, now.result, prev.sii_at_6db, now.sii_at_6db) if prev is not None else (),
        settings={"profile": prof.name, "profile file": _profile_file(prof), "channel": str(channel),
                  "before": str(before) if before is not None else "none",
                  "cutoff search channel SNR": "6 dB", "voiceband": now.result.voiceband_version},
    )


def _profile_file(prof: Profile) -> str:
    from ..profiles import BUILTIN_DIR

    p = Path(prof.path)
    return f"built-in ({p.name})" if p.parent.resolve() == BUILTIN_DIR.resolve() else prof.path


def changes(a: AnalysisResult, b: AnalysisResult, sii6_a: Optional[float], sii6_b: Optional[float]) -> tuple[str, ...]:
    """What changed from recording ``a`` (before) to ``b`` (after), one plain phrase per quantity."""
    out = []

    def pair(name: str, x, y, fmt, unit: str = "", tol: float = 0.0) -> None:
        if x is None or y is None:
            return
        if abs(y - x) <= tol:
            out.append(f"{name} unchanged at {fmt(y)}{unit}")
        else:
            out.append(f"{name} {fmt(x)} → {fmt(y)}{unit}")

    ob_a, ob_b = a.spectrum.occupied_bandwidth.width_hz, b.spectrum.occupied_bandwidth.width_hz
    pair("occupied bandwidth", None if ob_a is None else ob_a / 1000, None if ob_b is None else ob_b / 1000,
         lambda v: f"{v:.1f}", " kHz", 0.05)
    ea, eb = a.spectrum.edges_hz, b.spectrum.edges_hz
    pair("lower edge", ea.low, eb.low, lambda v: f"{v:.0f}", " Hz", 10.0)
    pair("upper edge", ea.high, eb.high, lambda v: f"{v:.0f}", " Hz", 50.0)
    pair("SII in quiet", getattr(a.intelligibility, "sii", None), getattr(b.intelligibility, "sii", None),
         lambda v: f"{v:.2f}", "", 0.005)
    pair(f"SII at {CHANGE_SNR_DB:g} dB channel SNR", sii6_a, sii6_b, lambda v: f"{v:.2f}", "", 0.005)
    pair("clipping events", float(a.clipping.event_count), float(b.clipping.event_count), lambda v: f"{v:.0f}")
    pair("active speech level", a.levels.active_level_dbfs, b.levels.active_level_dbfs, lambda v: f"{v:.1f}", " dBFS", 0.2)
    pair("speech-to-noise ratio", a.noise.snr_db, b.noise.snr_db, lambda v: f"{v:.0f}", " dB", 0.5)
    ha = a.noise.hum.level_db_re_speech if a.noise.hum is not None else None
    hb = b.noise.hum.level_db_re_speech if b.noise.hum is not None else None
    if ha is not None or hb is not None:
        out.append(f"mains hum {'none' if ha is None else f'{ha:.0f} dB'} → {'none' if hb is None else f'{hb:.0f} dB'}"
                   " relative to the speech")
    return tuple(out)


def report_json(take: TakeReport) -> dict:
    """The analyze JSON of a take plus ``verdicts`` and ``recommendations``."""
    from ..serialize import to_jsonable

    data = to_jsonable(take.result)
    data["verdicts"] = [
        {"check": v.check, "value": to_jsonable(v.value), "limit": v.limit, "status": v.status, "reason": v.reason}
        for v in take.verdicts
    ]
    data["recommendations"] = [{"code": r.code, "text": r.text} for r in take.recommendations]
    return data


def output_names(*, pdf: bool = False, before: bool = False) -> list[str]:
    """File names a report writes into its folder (figures vary: the hum close-up only with hum)."""
    from .figures import FIGURES

    names = ["index.html", "analysis.json", "summary.md"] + [f"{stem}.png" for stem, _, _ in FIGURES]
    if before:
        names.append("before-analysis.json")
    if pdf:
        names.append("report.pdf")
    return names


def check_outputs(out: Path, *, pdf: bool, before: bool, force: bool, inputs=()) -> None:
    """Refuse now, before the work, any file the report could not write (exists without ``force``, is an input, ...)."""
    from ..outputs import check_writable

    if os.path.isfile(out):
        from ..errors import OutputExistsError

        raise OutputExistsError(f"'{out}' exists and is not a folder; give a folder for the report.")
    for name in output_names(pdf=pdf, before=before):  # names checked for length before any stat of them
        check_writable(out / name, force=force, inputs=inputs, make_folders=True)


def write_report(report: Report, out: Union[str, os.PathLike], *, force: bool = False, pdf: bool = False) -> Path:
    """Write the report's files into ``out`` (created if needed); returns the path of ``index.html``."""
    from ..outputs import atomic_output, name_text
    from .figures import Take as FigureTake
    from .figures import FIGURES, figure_png, render_figures
    from .html import render_html
    from .markdown import render_markdown
    from ..serialize import dumps_json

    out = Path(out)
    check_outputs(out, pdf=pdf, before=report.before is not None, force=force)
    takes = ([FigureTake(report.before.label, report.before.result, report.before.details, "before")]
             if report.before is not None else [])
    takes.append(FigureTake(report.now.label, report.now.result, report.now.details, "now"))
    figs = render_figures(takes, report.profile)
    pngs = [(stem, caption, figure_png(fig)) for stem, caption, fig in figs]
    images = [(stem, caption, "data:image/png;base64," + base64.b64encode(png).decode("ascii")) for stem, caption, png in pngs]

    def put(name: str, data: Union[str, bytes]) -> None:
        with atomic_output(out / name, force=force, make_folders=True) as tmp:
            if isinstance(data, bytes):
                tmp.write_bytes(data)
            else:
                tmp.write_text(name_text(data), encoding="utf-8")  # a name's bytes that are not UTF-8 show as U+FFFD

    for stem, _, png in pngs:
        put(f"{stem}.png", png)
    written = {stem for stem, _, _ in pngs}
    for stem, _, _ in FIGURES:  # a figure that no longer applies (e.g. hum gone) must not linger from a forced rerun
        old = out / f"{stem}.png"
        if stem not in written and force and old.is_file():
            old.unlink()
    put("analysis.json", dumps_json(report_json(report.now)) + "\n")
    if report.before is not None:
        put("before-analysis.json", dumps_json(report_json(report.before)) + "\n")
    put("summary.md", render_markdown(report, [stem for stem, _, _ in pngs]))
    if pdf:
        from .pdf import render_pdf

        with atomic_output(out / "report.pdf", force=force, make_folders=True) as tmp:
            render_pdf(report, [fig for _, _, fig in figs], tmp)
    put("index.html", render_html(report, images))
    return out / "index.html"
