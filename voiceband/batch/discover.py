"""Which files a batch covers: explicit files as given, folders walked for audio files."""

from __future__ import annotations

import fnmatch
import os
from pathlib import Path
from typing import Iterable, Optional

from ..errors import AudioInputError

__all__ = ["AUDIO_SUFFIXES", "discover_files"]

#: File-name endings taken from a folder when no ``--glob`` is given: the containers libsndfile reads.
AUDIO_SUFFIXES = frozenset({
    ".wav", ".wave", ".rf64", ".w64", ".bwf", ".flac", ".ogg", ".oga", ".opus", ".mp3",
    ".aif", ".aiff", ".aifc", ".au", ".snd", ".caf", ".sd2", ".voc", ".htk", ".paf", ".svx",
})


def discover_files(paths: Iterable[os.PathLike | str], *, pattern: Optional[str] = None) -> list[Path]:
    """The files a batch analyses, each once, in a stable order.

    Parameters
    ----------
    paths : path-likes
        Files (taken as given, whatever their name) and folders (walked recursively; hidden
        entries, whose names start with ``.``, are skipped).
    pattern : str, optional
        Shell-style pattern matched against each file name found in a folder (``*.wav``);
        without it, a folder contributes the files whose ending is in :data:`AUDIO_SUFFIXES`.

    Returns
    -------
    list of Path
        Folder contents sorted by path; a file reached twice (named and inside a named folder,
        or through two spellings) appears once, where it was first reached.

    Raises
    ------
    AudioInputError
        A path does not exist, or names a device, pipe or socket.
    """
    seen: set[str] = set()
    out: list[Path] = []

    def add(p: Path) -> None:
        key = os.path.realpath(p)
        if key not in seen:
            seen.add(key)
            out.append(p)

    for raw in paths:
        p = Path(raw)
        if p.is_dir():
            for root, dirs, files in os.walk(p):
                dirs[:] = sorted(d for d in dirs if not d.startswith("."))
                for name in sorted(files):
                    if name.startswith("."):
                        continue
                    if pattern is not None:
                        if not fnmatch.fnmatch(name, pattern):
                            continue
                    elif Path(name).suffix.lower() not in AUDIO_SUFFIXES:
                        continue
                    if (Path(root) / name).is_file():  # a pipe or device with an audio name is not a recording
                        add(Path(root) / name)
        elif p.exists() and not p.is_file():
            # A device such as /dev/zero would be read (and hashed) for ever; a pipe or socket cannot be re-read.
            raise AudioInputError(
                f"'{p}' is not a regular file (a device, pipe or socket); batch reads recordings from files and folders.")
        elif p.exists() or p.is_symlink():
            add(p)
        else:
            raise AudioInputError(f"No such file or folder: '{p}'.")
    return out
