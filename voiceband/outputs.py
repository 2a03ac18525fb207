"""Writing outputs safely: checked before the work, written atomically, never over a file without ``force``.

One output layer for every command:

* :func:`check_writable` validates a destination *before* any work: the name is a file name
  (not a folder), its folder exists or can be made (no regular file in the way), the folder is
  writable, the name and our temporary name fit the file system's name limit, it is not one of
  the command's inputs (an output never replaces an input, ``--force`` or not), and an existing
  file is replaced only with ``force``.
* :func:`atomic_output` gives a temporary path beside the destination that replaces it on
  success (``os.replace``) and is removed on failure, with any folder it made for it that is
  still empty (so a failed ``--out`` leaves no empty folder behind).
* Temporary files are registered while they exist, so :func:`remove_temporaries` (called by the
  CLI on SIGTERM, SIGHUP and Ctrl-C) can delete them; their names carry the writing process's
  ID, so :func:`sweep_stale` removes those left by a process that was killed outright (SIGKILL,
  power loss) the next time a command writes into the same folder.

Examples
--------
>>> import tempfile, pathlib
>>> d = pathlib.Path(tempfile.mkdtemp())
>>> with atomic_output(d / "out.txt") as tmp:
...     _ = tmp.write_text("hello")
>>> (d / "out.txt").read_text()
'hello'
>>> check_writable(d / "out.txt")  # doctest: +ELLIPSIS
Traceback (most recent call last):
...
voiceband.errors.OutputExistsError: '...out.txt' already exists; use --force to overwrite it.
"""

from __future__ import annotations

import errno
import os
import re
from pathlib import Path
from typing import Iterable, Optional, Union

from .errors import OutputExistsError, OutputPathError

__all__ = ["atomic_output", "check_writable", "name_text", "remove_temporaries", "sweep_stale"]

PathLike = Union[str, os.PathLike]

#: Our temporary files: ``.vb-<pid>-<random>.part<suffix>`` (short, so any legal destination name fits).
_TMP_RE = re.compile(r"^\.vb-(\d+)-[0-9a-f]{8}\.part(\.[A-Za-z0-9]{1,8})?$")
_live: set[Path] = set()


def name_text(name: Union[str, bytes, os.PathLike]) -> str:
    """A file name as text for people and for UTF-8 outputs (JSON, CSV, Parquet, HTML, the terminal).

    Unix file names are bytes; Python gives the bytes of a name that is not UTF-8 as lone
    surrogates (``os.fsdecode``), which no UTF-8 file may hold and which JSON would keep as
    ``\\udcff`` escapes that many readers refuse.  As careful Unix tools do when they print a name
    that is not valid text, each such byte is shown as U+FFFD REPLACEMENT CHARACTER: every output
    stays valid UTF-8 and the odd bytes are visible as such.  The text is for reading; a name that
    had odd bytes cannot be opened again from it (two such names may even read the same).

    >>> name_text(os.fsdecode(b"take\\xff1.wav"))
    'take\ufffd1.wav'
    """
    s = os.fsdecode(name) if not isinstance(name, str) else name
    try:
        s.encode("utf-8")
        return s
    except UnicodeEncodeError:
        pass
    try:
        return s.encode("utf-8", "surrogateescape").decode("utf-8", "replace")
    except UnicodeEncodeError:  # a surrogate that stands for no byte (text built in Python, not a name)
        return s.encode("utf-8", "surrogatepass").decode("utf-8", "replace")


def _name_max(folder: Path) -> int:
    try:
        return os.pathconf(folder, "PC_NAME_MAX")
    except (OSError, ValueError):
        return 255


def _existing_ancestor(p: Path) -> Path:
    q = p
    while not q.exists():
        if q.parent == q:
            break
        q = q.parent
    return q


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def check_writable(path: PathLike, *, force: bool = False, inputs: Iterable[PathLike] = (),
                   make_folders: bool = False) -> None:
    """Refuse now, with one sentence, any destination that could not be written after the work.

    Parameters
    ----------
    path : path-like
        The output file.
    force : bool, keyword-only
        Replace an existing file.
    inputs : iterable of path-like, keyword-only
        The command's input files; the output must be none of them.
    make_folders : bool, keyword-only
        The command will create missing folders on the way (an output folder given with ``--out``);
        otherwise the file's folder must exist, as for a shell redirection.

    Raises
    ------
    OutputExistsError
        The file exists and ``force`` is false, or it is a folder.
    OutputPathError
        The folder cannot be made or written, the name is too long, or the output is an input.
    """
    p = Path(path)
    name = p.name
    if isinstance(path, (str, bytes)) and os.fsdecode(path).endswith(("/", os.sep)):
        raise OutputPathError(f"'{os.fsdecode(path)}' names a folder; give a file name.")
    if not name or name in (".", ".."):
        raise OutputPathError(f"'{p}' is not a file name; give a file name.")
    limit = _name_max(Path("."))  # before any stat: a part over the limit makes every stat fail
    if len(os.fsencode(name)) > limit:
        raise OutputPathError(
            f"cannot write '{p}': the file name is {len(os.fsencode(name))} bytes long; "
            f"this file system allows {limit}.")
    for part in p.parent.parts:
        if len(os.fsencode(part)) > limit:
            raise OutputPathError(f"cannot write '{p}': the folder name '{part[:40]}…' is too long for this file system.")
    try:
        _check_place(p, force=force, inputs=inputs, make_folders=make_folders)
    except PermissionError:  # a folder on the way without search (x) permission
        raise OutputPathError(f"cannot write '{p}': no permission to enter the folder '{_closed_folder(p)}'.") from None


def _closed_folder(p: Path) -> Path:
    """The first folder on the way to ``p`` that this process may not enter."""
    a = Path(os.path.abspath(p))
    for q in list(reversed(a.parents)):
        if not os.access(q, os.X_OK):
            return q
    return a.parent


def _check_place(p: Path, *, force: bool, inputs: Iterable[PathLike], make_folders: bool) -> None:
    for i in inputs:
        if _same_file(p, Path(i)) or os.path.abspath(p) == os.path.abspath(i):
            raise OutputPathError(f"'{p}' is an input of this command; choose another output name.")
    if p.is_dir():
        raise OutputExistsError(f"'{p}' is a folder; give a file name.")
    if p.exists() and not p.is_file():
        raise OutputPathError(f"'{p}' exists and is not a regular file (a device, pipe or socket); "
                              f"voiceband writes regular files only.")
    if p.exists() and not force:
        raise OutputExistsError(f"'{p}' already exists; use --force to overwrite it.")
    parent = p.parent if str(p.parent) else Path(".")
    anc = _existing_ancestor(parent)
    if not anc.is_dir():
        raise OutputPathError(f"cannot write '{p}': '{anc}' is a file, not a folder.")
    if anc != parent and not make_folders:
        raise OutputPathError(f"cannot write '{p}': the folder '{parent}' does not exist.")
    if not os.access(anc, os.W_OK | os.X_OK):
        what = "folder" if anc == parent else "folder to create it in"
        raise OutputPathError(f"cannot write '{p}': no permission to write in the {what} '{anc}'.")
    _probe(anc, p)


def _probe(folder: Path, dest: Path) -> None:
    # Create and remove a temporary file of ours: the one test that holds for root, read-only
    # mounts, /proc and network file systems alike.
    t = folder / _tmp_name(dest)
    _live.add(t)  # registered before it exists: a signal between creating and removing it still removes it
    try:
        try:
            fd = os.open(t, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        except OSError as exc:
            raise OutputPathError(
                f"cannot write '{dest}': the folder '{folder}' does not accept new files "
                f"({os.strerror(exc.errno or errno.EIO).lower()}).") from None
        os.close(fd)
        try:
            os.unlink(t)
        except OSError:
            pass
    finally:
        _live.discard(t)


def _tmp_name(dest: Path) -> str:
    suffix = dest.suffix if re.fullmatch(r"\.[A-Za-z0-9]{1,8}", dest.suffix or "") else ""
    # os.urandom(4).hex() is what secrets.token_hex(4) does, without importing secrets (10 ms)
    return f".vb-{os.getpid()}-{os.urandom(4).hex()}.part{suffix}"


def _is_write_failure(exc: BaseException) -> bool:
    # An OSError while writing the temporary file, or the encoder's error (soundfile raises its own
    # LibsndfileError, a RuntimeError, with "System error" when the disk refuses the data).
    if isinstance(exc, OSError):
        return not isinstance(exc, (FileExistsError,)) and exc.errno is not None
    return type(exc).__name__ == "LibsndfileError"


def _write_failure_reason(exc: BaseException, folder: Path) -> str:
    if isinstance(exc, OSError) and exc.errno:
        return os.strerror(exc.errno).lower()
    try:
        st = os.statvfs(folder)
        if st.f_bavail * st.f_frsize < (1 << 20):
            return os.strerror(errno.ENOSPC).lower()
    except OSError:
        pass
    return f"the encoder failed ({str(exc).strip().rstrip('.') or type(exc).__name__})"


def _pid_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def sweep_stale(folder: PathLike) -> int:
    """Remove temporary files of ours in ``folder`` whose writing process no longer runs; return how many."""
    n = 0
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return 0
    for e in entries:
        m = _TMP_RE.match(e.name)
        if m and not _pid_alive(int(m.group(1))):
            try:
                os.unlink(e.path)
                n += 1
            except OSError:
                pass
    return n


def remove_temporaries() -> None:
    """Delete every temporary file this process has open through :func:`atomic_output` (signal handlers call this)."""
    for t in list(_live):
        try:
            t.unlink()
        except OSError:
            pass
        _live.discard(t)


def atomic_output(path: PathLike, *, force: bool = False, inputs: Iterable[PathLike] = (),
                  make_folders: bool = False) -> "_AtomicPath":
    """Context manager giving a temporary path that replaces ``path`` on success.

    Runs :func:`check_writable` first; refuses to overwrite an existing file unless ``force``.
    """
    return _AtomicPath(Path(path), force, tuple(inputs), make_folders)


class _AtomicPath:
    def __init__(self, path: Path, force: bool, inputs: tuple, make_folders: bool):
        self.make_folders = make_folders
        self.path = path
        self.force = force
        self.inputs = inputs
        self.tmp: Optional[Path] = None
        self.made: list[Path] = []

    def __enter__(self) -> Path:
        check_writable(self.path, force=self.force, inputs=self.inputs, make_folders=self.make_folders)
        parent = self.path.parent if str(self.path.parent) else Path(".")
        missing = []  # folders this output makes, deepest first: removed again if it writes nothing
        q = parent
        while not os.path.lexists(q) and q.parent != q:
            missing.append(q)
            q = q.parent
        try:
            parent.mkdir(parents=True, exist_ok=True)
            self.made = missing
        except OSError as exc:
            raise OutputPathError(f"cannot make the folder '{parent}': {os.strerror(exc.errno or errno.EIO)}.") from None
        sweep_stale(parent)
        tmp = parent / _tmp_name(self.path)
        umask = os.umask(0)
        os.umask(umask)
        _live.add(tmp)  # registered before it exists, so a signal at any point still removes it
        try:
            fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666 & ~umask)
        except OSError as exc:
            _live.discard(tmp)
            raise OutputPathError(f"cannot write in '{parent}': {os.strerror(exc.errno or errno.EIO)}.") from None
        except BaseException:
            _live.discard(tmp)
            try:
                tmp.unlink()
            except OSError:
                pass
            raise
        os.close(fd)
        self.tmp = tmp
        return tmp

    def __exit__(self, exc_type, exc, tb) -> bool:
        assert self.tmp is not None
        done = False
        try:
            if exc is not None and _is_write_failure(exc):
                raise OutputPathError(
                    f"cannot write '{self.path}': {_write_failure_reason(exc, self.tmp.parent)}; nothing was written.") from None
            if exc_type is None:
                try:
                    os.replace(self.tmp, self.path)
                    done = True
                except OSError as e:
                    raise OutputPathError(
                        f"cannot write '{self.path}': {os.strerror(e.errno or errno.EIO)}.") from None
        finally:
            _live.discard(self.tmp)
            try:
                self.tmp.unlink()
            except OSError:
                pass
            if not done:
                _remove_empty(self.made)
        return False


def _remove_empty(folders: list[Path]) -> None:
    """Remove the folders an output made (deepest first) while they are empty: a failed command leaves no trace."""
    for d in folders:
        try:
            os.rmdir(d)
        except OSError:
            break
