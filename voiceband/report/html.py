"""The report's self-contained HTML page (jinja2, autoescaped).

Everything from the user or the file -- title, notes, file names, metadata tags -- goes through
jinja2's autoescaping, so ``<script>`` in a title is shown as text.  Figures are embedded as
``data:`` URLs, the style sheet is inline and a Content-Security-Policy forbids any request, so the
page opens offline and asks nothing of the network.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any, Optional, Sequence

from ..profiles.verdicts import CHECKS, STATUSES, limit_text, worst

__all__ = ["render_html", "render_comparison", "environment", "number_rows", "STATUS_WORDS"]

TEMPLATES = Path(__file__).parent / "templates"

#: Words and marks for each status: a verdict never depends on colour alone.
STATUS_WORDS = {
    "pass": ("✓", "Pass"),
    "marginal": ("◐", "Marginal"),
    "fail": ("✗", "Fail"),
}


def environment():
    """The jinja2 environment: templates from ``report/templates``, autoescape always on."""
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(TEMPLATES)),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.globals["status_words"] = STATUS_WORDS
    return env


def number_rows(now: Any, before: Optional[Any]) -> list[tuple[str, str, Optional[str], str, str]]:
    """(section, quantity, before value or None, value, note) rows of the numbers table."""
    from .summary import analysis_rows as rows

    r_now = rows(now)
    if before is None:
        return [(s, q, None, v, n) for s, q, v, n in r_now]
    r_before = {q: v for _, q, v, _ in rows(before)}
    return [(s, q, r_before.get(q, "—"), v, n) for s, q, v, n in r_now]


def _overall(verdicts: Sequence[Any]) -> str:
    return worst(v.status for v in verdicts) or "pass"


def _headline(report: Any) -> str:
    vs = report.now.verdicts
    n = {s: sum(1 for v in vs if v.status == s) for s in STATUSES}
    title = report.profile.title
    missing = len(report.now.not_judged)
    tail = f" ({missing} more could not be judged from this recording.)" if missing else ""
    if n["fail"]:
        return f"Not yet right for {title}: {n['fail']} of {len(vs)} checks fail" + (
            f", {n['marginal']} marginal." if n["marginal"] else ".") + tail
    if n["marginal"]:
        return f"Usable for {title}, with {n['marginal']} marginal point{'s' if n['marginal'] > 1 else ''}." + tail
    return f"Right for {title}: all {len(vs)} judged checks pass." + tail


def _limits(profile: Any) -> list[dict]:
    return [{"label": CHECKS[l.check].label, "limit": limit_text(l), "source": l.source} for l in profile.limits]


def render_html(report: Any, images: Sequence[tuple[str, str, str]]) -> str:
    """The report page.

    Parameters
    ----------
    report : voiceband.report.onair.Report
    images : sequence of (stem, caption, data URL)
    """
    before_by_check = {v.check: v for v in report.before.verdicts} if report.before is not None else {}
    rows = []
    for v in report.now.verdicts:
        b = before_by_check.get(v.check)
        rows.append({"label": CHECKS[v.check].label, "v": v, "before": b})
    env = environment()
    return env.get_template("report.html.j2").render(
        r=report,
        overall=_overall(report.now.verdicts),
        headline=_headline(report),
        verdict_rows=rows,
        not_judged=[(CHECKS[c].label, why) for c, why in report.now.not_judged],
        images=images,
        numbers=number_rows(report.now.result, report.before.result if report.before is not None else None),
        limits=_limits(report.profile),
        checks=CHECKS,
    )


def render_comparison(title: str, intro: str, profile: Any, entries: Sequence[dict],
                      image: Optional[tuple[str, str]] = None) -> str:
    """A page comparing several recordings against one profile.

    ``entries``: dicts with ``name``, ``description``, ``href`` (relative link to its report or None),
    ``take`` (a :class:`voiceband.report.onair.TakeReport`).
    """
    rows = []
    for e in entries:
        t = e["take"]
        ob = t.result.spectrum.occupied_bandwidth.width_hz
        rows.append({
            "name": e["name"], "description": e["description"], "href": e.get("href"),
            "overall": _overall(t.verdicts),
            "verdicts": {v.check: v for v in t.verdicts},
            "sii": getattr(t.result.intelligibility, "sii", None),
            "sii6": t.sii_at_6db,
            "obw_khz": None if ob is None else ob / 1000.0,
            "clips": t.result.clipping.event_count,
            "first": t.recommendations[0].text if t.recommendations else "",
        })
    return environment().get_template("compare.html.j2").render(
        title=title, intro=intro, profile=profile, rows=rows, image=image, checks=CHECKS,
        check_order=[l.check for l in profile.limits])
