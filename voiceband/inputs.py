"""Input paths checked before they are opened: one sentence for each way a path is not a readable file.

Every command's input files (recordings, spec files, chain files) pass :func:`regular_file` first,
so a folder, a device such as ``/dev/zero``, a named pipe, a socket, a name too long for the file
system, a folder on the way that cannot be entered or a missing file is said for what it is,
never "empty" or an error from deeper down.

>>> regular_file(".", what="a spec file")
Traceback (most recent call last):
...
voiceband.errors.AudioInputError: '.' is a folder, not a spec file.
"""

from __future__ import annotations

import errno
import os
import stat
from pathlib import Path
from typing import Type, Union

from .errors import AudioInputError, VoicebandError

__all__ = ["regular_file"]


def regular_file(path: Union[str, os.PathLike], *, what: str = "an audio file",
                 error: Type[VoicebandError] = AudioInputError) -> os.stat_result:
    """``os.stat`` of ``path`` if it is a regular file this process may read; else ``error`` with one sentence.

    ``what`` names the expected thing with its article ("an audio file", "a chain file").
    """
    p = Path(path)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise error(f"No such file: '{p}'.") from None
    except PermissionError:
        raise error(f"cannot reach '{p}': no permission to enter one of its folders.") from None
    except OSError as exc:
        if exc.errno == errno.ENAMETOOLONG:
            raise error(f"'{_clip(p)}' cannot be a file: a part of the name is longer than the file system "
                        f"allows ({_name_max(p)} bytes).") from None
        if exc.errno == errno.ENOTDIR:
            raise error(f"No such file: '{p}' (a part of the path is a file, not a folder).") from None
        if exc.errno == errno.ELOOP:
            raise error(f"cannot open '{p}': too many levels of symbolic links.") from None
        raise error(f"cannot open '{p}': {os.strerror(exc.errno or errno.EIO).lower()}.") from None
    if stat.S_ISDIR(st.st_mode):
        raise error(f"'{p}' is a folder, not {what}.")
    if not stat.S_ISREG(st.st_mode):
        raise error(f"'{p}' is {_kind(st.st_mode)}, not {what}; voiceband reads regular files only.")
    if not os.access(p, os.R_OK):
        raise error(f"'{p}' cannot be read (permission denied).")
    return st


def _clip(p: Path, n: int = 60) -> str:
    s = str(p)
    return s if len(s) <= n else s[: n - 1] + "…"


def _name_max(p: Path) -> int:
    q = p.parent
    while True:
        try:
            if q.is_dir():
                return os.pathconf(q, "PC_NAME_MAX")
        except (OSError, ValueError):
            pass
        if q.parent == q:
            return 255
        q = q.parent


def _kind(mode: int) -> str:
    if stat.S_ISFIFO(mode):
        return "a named pipe (FIFO)"
    if stat.S_ISSOCK(mode):
        return "a socket"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    return "not a regular file"
