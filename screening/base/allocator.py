"""Keep freed array memory in the process for reuse (glibc only).

The calculation allocates many short-lived arrays of a few hundred kilobytes per pump. glibc
serves blocks above its mmap threshold with fresh pages from the kernel and gives them back on
free, so every array pass pays page faults again: about a third of the scan's time on the
benchmark plant. Raising the mmap and trim thresholds lets the freed blocks be reused. The peak
memory is unchanged (the blocks were needed anyway); the process keeps them until it ends.
Measured with benchmarks/bench_scan.py; a no-op where glibc's mallopt is not available.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import sys

_M_TRIM_THRESHOLD = -1
_M_MMAP_THRESHOLD = -3
_done = False


def keep_freed_memory(threshold: int = 256 * 1024 * 1024) -> bool:
    """Raise glibc's mmap and trim thresholds to ``threshold`` [bytes]; True if applied."""
    global _done
    if _done or not sys.platform.startswith("linux"):
        return _done
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        ok = libc.mallopt(_M_MMAP_THRESHOLD, threshold) and libc.mallopt(
            _M_TRIM_THRESHOLD, 2 * threshold
        )
    except (OSError, AttributeError):
        return False
    _done = bool(ok)
    return _done
