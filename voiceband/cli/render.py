"""The one rendering path for every command's terminal output.

Every command prints through :func:`print_report`: a heading, a table of
``(section, quantity, value, note)`` rows (from :mod:`voiceband.report.summary` or the
command's own document) and a list of findings, notes or cautions.  The rules, in one place:

* the width is the terminal's (``COLUMNS`` when set; 80 when the output is not a terminal);
* text from the user or a file (file names, sentences) is printed as it is: no console
  markup, no emoji codes, no automatic colouring of numbers or brackets;
* a note that does not fit beside its value goes on the next line, indented under its
  quantity, and wraps only between words; wrapped findings stay indented under their text;
* no line ends in spaces.
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass
from typing import TYPE_CHECKING, Iterable, Optional, Sequence

if TYPE_CHECKING:  # typing only
    from rich.console import Console

    from ..results import AnalysisResult

__all__ = ["Item", "console", "width", "print_report", "print_analysis", "lines_of_report", "grid_lines", "print_grid"]

#: Marks before findings by severity.
_MARKS = {"problem": ("✗", "red"), "warning": ("!", "yellow"), "info": ("·", ""), "caution": ("!", "yellow"),
          "note": ("·", "")}
_GAP = 2
_INDENT = 2


@dataclass(frozen=True)
class Item:
    """A finding, note or caution under the table: a severity (a key of the marks) and its sentence."""

    severity: str
    text: str
    code: str = ""


def console(*, stderr: bool = False) -> "Console":
    """A console that prints text literally (no markup, emoji codes or highlighting), terminal-wide."""
    from rich.console import Console

    con = Console(stderr=stderr, markup=False, emoji=False, highlight=False, soft_wrap=True)
    con.on_broken_pipe = _broken_pipe  # type: ignore[method-assign]  # one handling for every command: cli.common.guarded
    return con


def _broken_pipe() -> None:
    # rich would exit with status 1 on its own; hand the closed pipe to the command's guard instead.
    raise BrokenPipeError(32, "Broken pipe")


def width(con: Optional["Console"] = None) -> int:
    """Columns to fill: the terminal's (``COLUMNS`` when set), at least 40."""
    con = con or console()
    return max(40, int(con.width))


def _cells(s: str) -> int:
    from rich.cells import cell_len

    return cell_len(s)


def _wrap(text: str, w: int, first: str = "", rest: str = "") -> list[str]:
    return textwrap.wrap(text, width=max(10, w), initial_indent=first, subsequent_indent=rest,
                         break_long_words=False, break_on_hyphens=False) or [first.rstrip()]


def lines_of_report(
    heading: Optional[str],
    rows: Sequence[tuple[str, str, str, str]],
    items: Iterable[Item] = (),
    *,
    columns: int = 80,
    items_title: str = "Findings",
) -> list[tuple[str, str]]:
    """The report as ``(text, style)`` lines at ``columns`` wide; the pure half of :func:`print_report`."""
    out: list[tuple[str, str]] = []
    if heading:
        for ln in _wrap(heading, columns, "", "  "):
            out.append((ln, "bold"))
    if rows:
        qw = max(_cells(_INDENT * " " + q) for _s, q, _v, _n in rows)
        qw = min(qw, max(16, columns // 2 - 8))
        vw = max(_cells(v) for _s, _q, v, _n in rows)
        note_col = qw + _GAP + vw + _GAP
        note_w = columns - note_col
        for sec, q, v, n in rows:
            if sec:
                out.append((sec, "bold"))
            label = _INDENT * " " + q
            if _cells(label) > qw:  # a long quantity gets its own line, the value under it
                out.append((label, ""))
                label = ""
            if not v:  # text only: it takes the value's place and wraps under itself
                pad = " " * (qw + _GAP)
                first = label + " " * (qw - _cells(label) + _GAP)
                out.extend((ln, "") for ln in _wrap(n, columns, first, pad))
                continue
            left = label + " " * (qw - _cells(label) + _GAP) + " " * (vw - _cells(v)) + v
            if not n:
                out.append((left.rstrip(), ""))
            elif note_w >= 20 and _cells(n) <= note_w:
                out.append((left + " " * _GAP + n, ""))
            else:
                out.append((left.rstrip(), ""))
                pad = " " * (2 * _INDENT)
                out.extend((ln, "dim") for ln in _wrap(n, columns, pad, pad))
    items = list(items)
    if items:
        out.append((items_title, "bold"))
        for it in items:
            mark, _style = _MARKS.get(it.severity, ("·", ""))
            text = it.text + (f" ({it.code})" if it.code else "")
            for ln in _wrap(text, columns, f" {mark} ", "   "):
                out.append((ln, ""))
    return [(t.rstrip(), s) for t, s in out]


def print_report(
    heading: Optional[str],
    rows: Sequence[tuple[str, str, str, str]],
    items: Iterable[Item] = (),
    *,
    items_title: str = "Findings",
    stderr: bool = False,
) -> None:
    """Print a heading, the rows and the items at the terminal's width (the one path for every command).

    On stdout, or on stderr with ``stderr=True`` (a command whose stdout carries data, or a summary
    beside a progress bar).
    """
    from rich.text import Text

    con = console(stderr=stderr)
    items = list(items)
    for text, style in lines_of_report(heading, rows, items, columns=width(con), items_title=items_title):
        t = Text(text, style=style or "")
        for it in items:  # colour only the mark of a finding, never its text
            mark, mstyle = _MARKS.get(it.severity, ("·", ""))
            if mstyle and text.startswith(f" {mark} "):
                t.stylize(mstyle, 1, 2)
        con.print(t)


def print_analysis(r: "AnalysisResult") -> None:
    """Print the summary table and the findings of an analysis."""
    from ..report.summary import analysis_heading, analysis_rows

    # The finding codes stay in the JSON (for programs); people read the sentences.
    print_report(analysis_heading(r), analysis_rows(r), [Item(f.severity, f.message) for f in r.findings])


def grid_lines(headers: Sequence[str], rows: Sequence[Sequence[str]], *, columns: int = 80) -> Optional[list[str]]:
    """A table with a header line, the first column left-aligned and the others right-aligned, or
    ``None`` when it does not fit in ``columns`` (the caller then prints one block per row)."""
    n = len(headers)
    widths = [max([_cells(headers[j])] + [_cells(r[j]) for r in rows]) for j in range(n)]
    if sum(widths) + _GAP * (n - 1) > columns:
        return None
    out = []
    for cells in [list(headers), *[list(r) for r in rows]]:
        parts = [cells[0] + " " * (widths[0] - _cells(cells[0]))]
        parts += [" " * (widths[j] - _cells(cells[j])) + cells[j] for j in range(1, n)]
        out.append((" " * _GAP).join(parts).rstrip())
    return out


def print_grid(
    heading: Optional[str],
    headers: Sequence[str],
    rows: Sequence[Sequence[str]],
    items: Iterable[Item] = (),
    *,
    items_title: str = "Notes",
) -> None:
    """Print a table with one line per record when it fits the terminal; otherwise one block per
    record (its first cell as the section, the other columns as quantity and value), as
    :func:`print_report` prints it."""
    from rich.text import Text

    con = console()
    cols = width(con)
    grid = grid_lines(headers, rows, columns=cols)
    if grid is None:
        blocks = []
        for r in rows:
            for j in range(1, len(headers)):
                blocks.append((r[0] if j == 1 else "", headers[j], r[j], ""))
        print_report(heading, blocks, items, items_title=items_title)
        return
    if heading:
        for ln in _wrap(heading, cols, "", "  "):
            con.print(Text(ln, style="bold"))
    for i, ln in enumerate(grid):
        con.print(Text(ln, style="bold" if i == 0 else ""))
    items = list(items)
    if items:
        print_report(None, [], items, items_title=items_title)
