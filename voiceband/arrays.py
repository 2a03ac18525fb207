"""Small array helpers shared by the measurements.

:func:`sorted_unique` stands in for ``numpy.unique`` in the per-block paths of the
measurements: numpy 2's ``unique`` takes hundreds of microseconds for a few hundred integers
(its hash-table path, measured with numpy 2.4), where a sort takes a few.
"""

from __future__ import annotations

import numpy as np

__all__ = ["sorted_unique"]


def sorted_unique(a) -> np.ndarray:
    """The distinct values of a 1-D array, ascending (as ``numpy.unique(a)`` for real numbers).

    >>> sorted_unique(np.array([3, 1, 3, 2])).tolist()
    [1, 2, 3]
    """
    s = np.sort(np.asarray(a).ravel())
    if s.size < 2:
        return s
    keep = np.empty(s.size, dtype=bool)
    keep[0] = True
    np.not_equal(s[1:], s[:-1], out=keep[1:])
    return s[keep]
