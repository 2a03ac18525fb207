"""``summary.md`` of an on-air test report: verdicts, what to change, what changed, the numbers.

Text from the user or the file is written as-is inside Markdown; a Markdown renderer that allows
raw HTML would render it, so pipes and angle brackets are escaped.
"""

from __future__ import annotations

from typing import Any, Sequence

from ..profiles.verdicts import CHECKS

__all__ = ["render_markdown"]

_MARKS = {"pass": "✓ PASS", "marginal": "◐ MARGINAL", "fail": "✗ FAIL"}


def _md(text: str) -> str:
    return (str(text).replace("\\", "\\\\").replace("|", "\\|").replace("<", "&lt;").replace(">", "&gt;")
            .replace("\n", " "))


def render_markdown(report: Any, figure_stems: Sequence[str]) -> str:
    """The summary as Markdown text."""
    r = report
    out = [f"# {_md(r.title)}", "", f"Service: **{_md(r.profile.title)}** (`{_md(r.profile.name)}`). "
           f"Recording: `{_md(r.now.result.input.path)}`"
           + (f"; before the change: `{_md(r.before.result.input.path)}`." if r.before else "."), ""]
    if r.notes:
        out += [f"> {_md(r.notes)}", ""]
    out += ["## Verdict", "", "| check | verdict | value and reason | limit |", "|---|---|---|---|"]
    for v in r.now.verdicts:
        out.append(f"| {CHECKS[v.check].label} | {_MARKS[v.status]} | {_md(v.reason)} | {_md(v.limit)} |")
    out += ["", "## What to change", ""]
    out += [f"{i}. {_md(rec.text)}" for i, rec in enumerate(r.now.recommendations, start=1)]
    if r.before is not None:
        out += ["", "## What changed", ""] + [f"- {_md(c)}" for c in r.changes]
    out += ["", "## The numbers", ""]
    from .html import number_rows

    rows = number_rows(r.now.result, r.before.result if r.before else None)
    if r.before:
        out += [f"| quantity | {_md(r.before.label)} | {_md(r.now.label)} |", "|---|---:|---:|"]
        out += [f"| {_md(q)} | {_md(b)} | {_md(v)} |" for _, q, b, v, _ in rows]
    else:
        out += ["| quantity | value |", "|---|---:|"] + [f"| {_md(q)} | {_md(v)} |" for _, q, _, v, _ in rows]
    out += ["", "## Pictures", ""] + [f"![{s}]({s}.png)" for s in figure_stems]
    out += ["", "## Take care", "",
            "Transmit only as your licence allows, mind RF exposure, unplug and discharge mains-powered gear "
            "before working on it; local regulations and licensed practice come first.", ""]
    return "\n".join(out)
