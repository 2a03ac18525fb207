"""``report.pdf``: a text page (verdict, what to change, what changed) and the figures, with matplotlib's PDF backend."""

from __future__ import annotations

import textwrap
from pathlib import Path
from typing import Any, Sequence

__all__ = ["render_pdf"]


def render_pdf(report: Any, figures: Sequence[Any], path: Path) -> None:
    """Write the report as a PDF: one A4 text page, then one page per figure."""
    import matplotlib.style
    from matplotlib.backends.backend_pdf import PdfPages
    from matplotlib.figure import Figure

    from ..profiles.verdicts import CHECKS
    from .plots import STYLE

    marks = {"pass": "PASS", "marginal": "MARGINAL", "fail": "FAIL"}
    lines: list[tuple[str, str]] = [(report.title, "title"), (f"Service: {report.profile.title}", "body"), ("", "body"),
                                    ("Verdict", "head")]
    for v in report.now.verdicts:
        lines.append((f"[{marks[v.status]}] {CHECKS[v.check].label}: {v.reason}", "body"))
    lines += [("", "body"), ("What to change", "head")]
    lines += [(f"{i}. {rec.text}", "body") for i, rec in enumerate(report.now.recommendations, start=1)]
    if report.before is not None:
        lines += [("", "body"), ("What changed", "head")] + [(f"- {c}", "body") for c in report.changes]
    lines += [("", "body"), ("Take care", "head"),
              ("Transmit only as your licence allows, mind RF exposure, unplug and discharge mains-powered gear "
               "before working on it; local regulations and licensed practice come first.", "body")]
    with matplotlib.style.context(STYLE), PdfPages(str(path)) as pdf:
        page = Figure(figsize=(8.27, 11.69))
        y = 0.95
        for text, kind in lines:
            size = {"title": 14, "head": 11.5, "body": 9}[kind]
            weight = "normal" if kind == "body" else "bold"
            for part in textwrap.wrap(text, 105 if kind == "body" else 70) or [""]:
                page.text(0.07, y, part, fontsize=size, fontweight=weight, va="top")
                y -= 0.018 * size / 9.0
        pdf.savefig(page)
        for fig in figures:
            pdf.savefig(fig)
