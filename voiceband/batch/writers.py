"""Batch outputs: CSV, JSON Lines or Parquet, one row per file, each row on disk as soon as its file is done.

Every output starts as a complete file written atomically (a CSV header, an empty JSON Lines
file); rows are then appended, flushed and synced one at a time, so a run that is interrupted
at any moment (Ctrl-C, a killed process) leaves a valid file holding every finished row.  A
process killed while writing a row can leave that row incomplete: resuming cuts it off (the
file is then analysed again).

Parquet keeps its index at the end of the file and cannot be appended to, so a Parquet output
is journalled: rows go to a hidden JSON Lines file beside it (appended and synced like above),
and the Parquet file is rewritten atomically from the rows when the run ends (or is stopped)
and every :data:`PARQUET_REWRITE_S` seconds.  A killed run leaves the previous Parquet file and
the journal; ``--resume`` reads both.  pyarrow is imported only for a Parquet output.
"""

from __future__ import annotations

import abc
import csv
import io
import json
import math
import os
import time
from pathlib import Path
from typing import Any, Mapping, Optional

from ..errors import OutputExistsError, VoicebandError

__all__ = ["BatchOutput", "check_output", "open_output", "OUTPUT_SUFFIXES", "PARQUET_REWRITE_S", "journal_path", "path_key"]

OUTPUT_SUFFIXES = (".csv", ".jsonl", ".parquet")
#: Seconds between atomic rewrites of a Parquet output during a run.
PARQUET_REWRITE_S = 60.0


class OutputFormatError(VoicebandError, ValueError):
    """An existing output cannot be resumed (other columns, a damaged line)."""


def path_key(path: str) -> str:
    """The key of a file's row in :attr:`BatchOutput.recorded_paths`: its path as the output holds it."""
    return _text(path)


def journal_path(path: Path) -> Path:
    """The hidden journal beside a Parquet output."""
    return path.with_name("." + path.name + ".journal.jsonl")


def _sync(f: Any) -> None:
    f.flush()
    os.fsync(f.fileno())


def _cut_partial_last_line(path: Path) -> None:
    """Drop an incomplete last line (a row being written when the process was killed)."""
    size = path.stat().st_size
    if size == 0:
        return
    with open(path, "rb+") as f:
        f.seek(-1, os.SEEK_END)
        if f.read(1) == b"\n":
            return
        # find the last newline, reading backwards in steps
        pos = size
        step = 1 << 16
        keep = 0
        while pos > 0:
            start = max(0, pos - step)
            f.seek(start)
            chunk = f.read(pos - start)
            i = chunk.rfind(b"\n")
            if i >= 0:
                keep = start + i + 1
                break
            pos = start
        f.truncate(keep)
        _sync(f)


def _json_safe(v: Any) -> Any:
    if isinstance(v, float) and not math.isfinite(v):
        return None
    if isinstance(v, str):
        return _text(v)
    return v


def _text(s: str) -> str:
    """Valid UTF-8 text: the bytes of a path that are not UTF-8 shown as U+FFFD (see :func:`voiceband.outputs.name_text`)."""
    if s.isascii():
        return s
    from ..outputs import name_text

    return name_text(s)


class BatchOutput(abc.ABC):
    """An open batch output (abstract: one subclass per format gives :meth:`open`, :meth:`_append`, :meth:`_read_back`).

    ``recorded`` maps (sha256, settings) of the first row recorded for each content to
    (status, where the row is); ``recorded_paths`` maps (path, settings) of every recorded row
    to its sha256 (None when the file could not be read).  Rows themselves stay on disk (a
    few hundred bytes of bookkeeping per file, so hundreds of thousands of files fit in memory);
    :meth:`copy_row` reads one back when a copy of that content turns up.
    """

    def __init__(self, path: Path, columns: tuple[str, ...], types: Mapping[str, str]):
        self.path = path
        self.columns = columns
        self.types = dict(types)
        self.recorded: dict[tuple[str, str], tuple[str, Any]] = {}
        self.recorded_paths: dict[tuple[str, str], Optional[str]] = {}
        self.rows_written = 0

    def _remember(self, row: Mapping[str, Any], where: Any) -> None:
        settings = str(row.get("settings") or "")
        sha = row.get("sha256") or None
        # keyed by the path as written (a name that is not UTF-8 is on disk with U+FFFD): see path_key
        self.recorded_paths[(path_key(str(row.get("path"))), settings)] = sha
        if sha and (sha, settings) not in self.recorded:
            self.recorded[(sha, settings)] = (str(row.get("status")), where)

    def _check_columns(self, found: list[str]) -> None:
        if list(found) != list(self.columns):
            raise OutputFormatError(
                f"'{self.path}' has other columns than this batch writes (another voiceband version or "
                f"--profile made it); resume with the same settings or write to a new file."
            )

    def copy_row(self, key: tuple[str, str], path: str) -> dict[str, Any]:
        """Record the row of content ``key`` (sha256, settings) again for a copy of that file at ``path``."""
        row, analysis = self._read_back(self.recorded[key][1])
        row["path"] = path
        if isinstance(analysis, dict) and isinstance(analysis.get("input"), dict):
            analysis["input"]["path"] = _text(path)
        self.write(row, analysis)
        return row

    def write(self, row: Mapping[str, Any], analysis: Optional[Mapping[str, Any]] = None) -> None:
        """Append one row (and, for JSON Lines, the full analysis) and push it to disk."""
        where = self._append(row, analysis)
        self._remember(row, where)
        self.rows_written += 1

    @abc.abstractmethod
    def open(self, *, exists: bool) -> None:
        """Start writing: a new output (``exists`` false) or an existing one whose rows are read into ``recorded``."""

    @abc.abstractmethod
    def _append(self, row: Mapping[str, Any], analysis: Optional[Mapping[str, Any]]) -> Any:
        """Append one row and push it to disk; return where it is, for :meth:`_read_back`."""

    @abc.abstractmethod
    def _read_back(self, where: Any) -> tuple[dict[str, Any], Optional[dict]]:
        """The row (and its analysis, or None) that :meth:`_append` put at ``where``."""

    def close(self) -> None:
        """Finish the output (a Parquet output is written here); safe to call twice."""
        f = getattr(self, "_f", None)
        if f is not None and not f.closed:
            f.close()


def _lines_with_offsets(path: Path):
    """(byte offset, complete line) of a text file; a CSV record whose quoted field holds a newline is one line."""
    with open(path, "rb") as f:
        offset = f.tell()
        pending = b""
        for raw in iter(f.readline, b""):
            pending += raw
            if pending.count(b'"') % 2:  # inside a quoted field: the record goes on
                continue
            yield offset, pending
            offset += len(pending)
            pending = b""


class _CsvOutput(BatchOutput):
    def open(self, *, exists: bool) -> None:
        if exists:
            _cut_partial_last_line(self.path)
            header_seen = False
            for n, (offset, raw) in enumerate(_lines_with_offsets(self.path), 1):
                rec = next(csv.reader([raw.decode("utf-8")]), [])
                if not header_seen:
                    self._check_columns(rec)
                    header_seen = True
                    continue
                if len(rec) != len(self.columns):
                    raise OutputFormatError(
                        f"'{self.path}' line {n} has {len(rec)} fields instead of {len(self.columns)}; "
                        f"it is not a batch table this version can resume."
                    )
                self._remember({c: (v if v != "" else None) for c, v in zip(self.columns, rec)}, offset)
            if not header_seen:
                raise OutputFormatError(f"'{self.path}' is empty, not a batch table; write to a new file.")
        self._f = open(self.path, "ab")

    @staticmethod
    def _cell(v: Any) -> str:
        if v is None:
            return ""
        if isinstance(v, float):
            return repr(v) if math.isfinite(v) else ""
        return _text(str(v))

    def _append(self, row, analysis) -> int:
        buf = io.StringIO()
        csv.writer(buf, lineterminator="\n").writerow([self._cell(row.get(c)) for c in self.columns])
        where = self._f.tell()
        self._f.write(buf.getvalue().encode("utf-8"))
        _sync(self._f)
        return where

    def _read_back(self, where: int):
        with open(self.path, "rb") as f:
            f.seek(where)
            raw = f.readline()
            while raw.count(b'"') % 2:
                more = f.readline()
                if not more:
                    break
                raw += more
        rec = next(csv.reader([raw.decode("utf-8")]))
        return {c: (v if v != "" else None) for c, v in zip(self.columns, rec)}, None


class _JsonlOutput(BatchOutput):
    def open(self, *, exists: bool) -> None:
        if exists:
            _cut_partial_last_line(self.path)
            for n, (offset, raw) in enumerate(_lines_with_offsets_plain(self.path), 1):
                if not raw.strip():
                    continue
                rec = _parse_line(self.path, n, raw)
                self._check_columns([k for k in rec if k != "analysis"])
                self._remember(rec, offset)
        self._f = open(self.path, "ab")

    def _append(self, row, analysis) -> int:
        rec = {c: _json_safe(row.get(c)) for c in self.columns}
        rec["analysis"] = analysis
        where = self._f.tell()
        self._f.write((json.dumps(rec, allow_nan=False, separators=(",", ":")) + "\n").encode("utf-8"))
        _sync(self._f)
        return where

    def _read_back(self, where: int):
        with open(self.path, "rb") as f:
            f.seek(where)
            rec = json.loads(f.readline())
        return {c: rec.get(c) for c in self.columns}, rec.get("analysis")


def _lines_with_offsets_plain(path: Path):
    with open(path, "rb") as f:
        offset = 0
        for raw in iter(f.readline, b""):
            yield offset, raw
            offset += len(raw)


def _parse_line(path: Path, n: int, raw: bytes) -> dict:
    try:
        rec = json.loads(raw)
    except ValueError:
        raise OutputFormatError(f"'{path}' line {n} is not JSON; it is not a batch output this version can resume.") from None
    if not isinstance(rec, dict):
        raise OutputFormatError(f"'{path}' line {n} is not a JSON object; it is not a batch output this version can resume.")
    return rec


class _ParquetOutput(BatchOutput):
    def open(self, *, exists: bool) -> None:
        import pyarrow.parquet as pq

        self._rows: list[tuple] = []
        if exists and self.path.exists():
            try:
                table = pq.read_table(self.path)
            except Exception:
                raise OutputFormatError(f"'{self.path}' is not a Parquet file this version can read; write to a new file.") from None
            self._check_columns(table.column_names)
            for rec in table.to_pylist():
                self._keep(rec)
        j = journal_path(self.path)
        if exists and j.exists():
            _cut_partial_last_line(j)
            for n, (_, raw) in enumerate(_lines_with_offsets_plain(j), 1):
                if not raw.strip():
                    continue
                rec = _parse_line(j, n, raw)
                if (path_key(str(rec.get("path"))), str(rec.get("settings") or "")) in self.recorded_paths:
                    continue  # already in the Parquet file (stopped between a rewrite and the journal's removal)
                self._keep(rec)
        self._f = open(j, "ab" if exists else "wb")
        self._rewrite()  # a valid Parquet file from the start
        self._last_rewrite = time.monotonic()

    def _keep(self, rec: Mapping[str, Any]) -> int:
        self._rows.append(tuple(_json_safe(rec.get(c)) for c in self.columns))
        where = len(self._rows) - 1
        self._remember(rec, where)
        return where

    def _append(self, row, analysis) -> int:
        # the row goes to the journal now; the Parquet file gets it at the next rewrite (no analysis kept)
        rec = {c: _json_safe(row.get(c)) for c in self.columns}
        self._f.write((json.dumps(rec, allow_nan=False, separators=(",", ":")) + "\n").encode("utf-8"))
        _sync(self._f)
        self._rows.append(tuple(rec[c] for c in self.columns))
        return len(self._rows) - 1

    def write(self, row: Mapping[str, Any], analysis: Optional[Mapping[str, Any]] = None) -> None:
        super().write(row, analysis)
        if time.monotonic() - self._last_rewrite >= PARQUET_REWRITE_S:
            self._rewrite()

    def _read_back(self, where: int):
        return dict(zip(self.columns, self._rows[where])), None

    def _rewrite(self) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        from ..outputs import atomic_output

        kinds = {"string": pa.string(), "int": pa.int64(), "float": pa.float64()}
        convert = {"string": lambda v: None if v is None else _text(str(v)),
                   "int": lambda v: None if v is None else int(v),
                   "float": lambda v: None if v is None else float(v)}
        arrays = []
        for i, c in enumerate(self.columns):
            kind = self.types.get(c, "string")
            arrays.append(pa.array([convert[kind](r[i]) for r in self._rows], type=kinds[kind]))
        table = pa.Table.from_arrays(arrays, schema=pa.schema([(c, kinds[self.types.get(c, "string")]) for c in self.columns]))
        with atomic_output(self.path, force=True) as tmp:
            pq.write_table(table, str(tmp))
        self._last_rewrite = time.monotonic()

    def close(self) -> None:
        if self._f.closed:
            return
        self._f.close()
        self._rewrite()
        journal_path(self.path).unlink(missing_ok=True)


def _parquet_available() -> bool:
    try:
        import pyarrow.parquet  # noqa: F401
    except ImportError:
        return False
    return True


def check_output(path: os.PathLike | str, *, force: bool = False, resume: bool = False,
                 inputs: tuple[os.PathLike | str, ...] = ()) -> None:
    """Raise now, before any work, if :func:`open_output` would refuse ``path`` (same arguments),
    or if ``path`` is one of the batch's ``inputs`` or cannot be written (see :func:`voiceband.outputs.check_writable`)."""
    from ..outputs import check_writable

    p = Path(path)
    suffix = p.suffix.lower()
    if suffix not in OUTPUT_SUFFIXES:
        raise OutputFormatError(f"--out must end in .csv, .jsonl or .parquet; got '{p.name}'.")
    check_writable(p, force=True, inputs=inputs)  # first: name length before any stat; folder, permission, not an input
    if p.is_dir():
        raise OutputExistsError(f"'{p}' is a folder; give a file name.")
    if suffix == ".parquet" and not _parquet_available():
        raise OutputFormatError(
            "a .parquet output needs pyarrow, which is not installed (pip install 'voiceband[cluster]'); "
            "use a .csv or .jsonl output instead."
        )
    exists = p.exists()
    if exists and not (force or resume):
        raise OutputExistsError(f"'{p}' already exists; use --resume to continue it or --force to replace it.")
    if suffix == ".parquet" and not exists and journal_path(p).exists() and not resume and not force:
        raise OutputExistsError(f"'{journal_path(p)}' holds rows of an interrupted run; use --resume to continue it or --force to start again.")


def open_output(path: os.PathLike | str, columns: tuple[str, ...], types: Mapping[str, str], *,
                force: bool = False, resume: bool = False) -> BatchOutput:
    """Open a batch output for appending rows.

    Parameters
    ----------
    path : path-like
        ``.csv``, ``.jsonl`` or ``.parquet`` (the ending picks the format).
    columns, types
        Column names in order, and each one's ``"string"``/``"int"``/``"float"``.
    force : bool
        Replace an existing file with a fresh, empty output.
    resume : bool
        Keep an existing file's rows and append; its rows are in ``recorded``.

    Raises
    ------
    OutputExistsError
        The file exists and neither ``force`` nor ``resume`` is given.
    VoicebandError
        Unknown ending, Parquet without pyarrow, or an existing file that cannot be resumed.
    """
    from ..outputs import atomic_output

    p = Path(path)
    suffix = p.suffix.lower()
    check_output(p, force=force, resume=resume)
    exists = p.exists()
    cls = {".csv": _CsvOutput, ".jsonl": _JsonlOutput, ".parquet": _ParquetOutput}[suffix]
    out = cls(p, tuple(columns), types)
    if suffix == ".parquet":
        exists = resume and (exists or journal_path(p).exists())
    elif exists and force and not resume:
        exists = False
    if not exists and suffix != ".parquet":
        with atomic_output(p, force=force) as tmp:
            if suffix == ".csv":
                buf = io.StringIO()
                csv.writer(buf, lineterminator="\n").writerow(columns)
                tmp.write_text(buf.getvalue(), encoding="utf-8")
            else:
                tmp.write_text("", encoding="utf-8")
    out.open(exists=exists)
    return out
