"""Imported by the local pool's fork server only: one analysis of a short generated signal, so that every
module and table an analysis loads is in memory before workers are forked from it.

Importing this module runs that analysis (about a tenth of a second); nothing else imports it.
"""

from __future__ import annotations

import numpy as np

from ..analysis import analyze_signal
from ..serialize import to_jsonable
from . import tasks  # noqa: F401  (the functions the workers run)


def _warm() -> None:
    fs = 8000
    t = np.arange(fs) / fs
    x = 0.1 * np.sin(2 * np.pi * 440 * t) * np.clip(np.sin(2 * np.pi * 4 * t), 0, None)
    x += 1e-4 * np.random.default_rng(0).standard_normal(fs)
    to_jsonable(analyze_signal(x, fs))
    import soundfile  # noqa: F401


_warm()
