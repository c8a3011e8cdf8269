"""Keep freed array memory in the process for reuse (glibc only), and the objects of the
imports out of the garbage collector's passes.

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
import gc
import sys

_M_TRIM_THRESHOLD = -1
_M_MMAP_THRESHOLD = -3
_done = False
_frozen = False


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


def keep_collector_off_imports() -> bool:
    """Move every object alive now out of the cyclic garbage collector's passes, once per
    process; True if done now.

    After the imports (numba, pandas, scipy, CoolProp) some hundred thousand objects are
    alive, and they stay alive; the collector's first full pass over them came during the
    scan's serial set-up (about 0.2 s on the benchmark plant, benchmarks/bench_scan.py), and a
    forked worker's passes would write to their pages. ``gc.freeze`` (Python documentation,
    module gc) leaves them out of every later pass; objects made afterwards are collected as
    before.
    """
    global _frozen
    if _frozen:
        return False
    gc.freeze()
    _frozen = True
    return True
