"""Writing outputs safely: atomically, and never over an existing file without ``force``."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import Union

from .errors import OutputExistsError

__all__ = ["atomic_output", "check_writable"]


def check_writable(path: Union[str, os.PathLike], *, force: bool = False) -> None:
    """Raise :class:`OutputExistsError` now if ``path`` exists and ``force`` is false.

    Commands call this before long work so a refusal comes first, not after the work.
    """
    p = Path(path)
    if p.is_dir():
        raise OutputExistsError(f"'{p}' is a folder; give a file name.")
    if p.exists() and not force:
        raise OutputExistsError(f"'{p}' already exists; use --force to overwrite it.")


def atomic_output(path: Union[str, os.PathLike], *, force: bool = False) -> "_AtomicPath":
    """Context manager giving a temporary path that replaces ``path`` on success.

    Refuses to overwrite an existing file unless ``force`` is true.
    """
    return _AtomicPath(Path(path), force)


class _AtomicPath:
    def __init__(self, path: Path, force: bool):
        self.path = path
        self.force = force
        self.tmp: Path | None = None

    def __enter__(self) -> Path:
        if self.path.exists() and not self.force:
            raise OutputExistsError(
                f"'{self.path}' already exists; use --force to overwrite it."
            )
        if self.path.is_dir():
            raise OutputExistsError(f"'{self.path}' is a folder; give a file name.")
        parent = self.path.parent if str(self.path.parent) else Path(".")
        parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix="." + self.path.name + ".", suffix=".part" + self.path.suffix, dir=parent)
        os.close(fd)
        # mkstemp creates 0600; give the file the permissions a plain open() would (0666 less umask)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        self.tmp = Path(tmp)
        return self.tmp

    def __exit__(self, exc_type, exc, tb) -> bool:
        assert self.tmp is not None
        if exc_type is None:
            os.replace(self.tmp, self.path)
        else:
            try:
                self.tmp.unlink()
            except FileNotFoundError:
                pass
        return False


