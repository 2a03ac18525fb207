"""Batch analysis of many recordings: on local processes or a Dask cluster, crash-safe and resumable.

Modules, one concern each:

- :mod:`~voiceband.batch.discover`: which files a batch covers (folders walked, a name pattern);
- :mod:`~voiceband.batch.hashing`: content hash (SHA-256) of a file and the hash of the analysis settings;
- :mod:`~voiceband.batch.rows`: the summary row of one file, columns named with the analyze JSON's dotted names;
- :mod:`~voiceband.batch.writers`: CSV / JSON Lines / Parquet outputs, appended and flushed per file, resumable;
- :mod:`~voiceband.batch.tasks`: the functions a worker runs (picklable, plain data in and out);
- :mod:`~voiceband.batch.executors`: the local process pool and the Dask path (imported only when used);
- :mod:`~voiceband.batch.runner`: the loop that hands files to workers and records each result once.
"""

from __future__ import annotations

from .discover import discover_files
from .hashing import file_sha256, settings_hash
from .rows import COLUMNS, BatchSettings
from .runner import BatchSummary, run_batch

__all__ = [
    "BatchSettings",
    "BatchSummary",
    "COLUMNS",
    "discover_files",
    "file_sha256",
    "run_batch",
    "settings_hash",
]
