"""Which files a batch covers: explicit files as given, folders walked for audio files."""

from __future__ import annotations

import fnmatch
import os
import stat
from pathlib import Path
from typing import Iterable, Optional

from ..errors import AudioInputError
from ..inputs import regular_file

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
        A path does not exist, names a device, pipe or socket, is too long for the file system or
        lies in a folder that cannot be entered.
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
        try:
            st = os.stat(p)
        except FileNotFoundError:
            if p.is_symlink():  # a dangling link: its row says why it cannot be read
                add(p)
                continue
            raise AudioInputError(f"No such file or folder: '{p}'.") from None
        except OSError:
            regular_file(p)  # one sentence: a name too long, a file on the way, a folder that cannot be entered
            raise
        if stat.S_ISDIR(st.st_mode):
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
        elif not stat.S_ISREG(st.st_mode):
            # A device such as /dev/zero would be read (and hashed) for ever; a pipe or socket cannot be re-read.
            raise AudioInputError(
                f"'{p}' is not a regular file (a device, pipe or socket); batch reads recordings from files and folders.")
        else:
            add(p)
    return out
