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


def keep_arrow_memory() -> bool:
    """Have Arrow allocate from its jemalloc pool, keeping the pages it frees, for the rest of
    this process; True if applied. For a forked pool worker only
    (:mod:`screening.engine.execution`), which ends with the scan.

    A worker decodes each batch's export files (about 40 MiB a batch on the benchmark plant)
    and frees them when the batch is done. With Arrow's default allocator (mimalloc) a
    worker's decoding took its memory in transparent huge pages, each cleared by the kernel
    on first touch, again and again (175-193 huge pages faulted in a two-worker scan, and
    8.8 % of a two-worker scan's `perf` samples clearing them, against 3.8 % for one
    process); with jemalloc 36-51, the scan's system time 0.26-0.33 s against 0.35-0.81 s,
    and the scan faster in each of five interleaved pairs (benchmarks/bench_scan.py's plant,
    2026-12-03; docs/scale.md). A fresh page is dear on a machine whose host backs memory
    lazily (docs/scale.md, "Fresh memory on this machine"). The decay time is set to -1 too,
    so that jemalloc never gives freed pages back (jemalloc manual, ``opt.dirty_decay_ms``:
    -1 disables purging; recalled from memory; ``pyarrow.jemalloc_set_decay_ms`` sets it for
    the arenas made afterwards): the worker holds its high-water mark until it exits, as
    glibc's heap already does (:func:`keep_freed_memory`). Not for a long-lived process (the
    command line's own, a notebook's), where Arrow's memory would stay for the process's
    life. A pyarrow built without jemalloc (Windows wheels) keeps its default allocator.
    """
    import pyarrow

    try:
        pyarrow.jemalloc_set_decay_ms(-1)
        pool = pyarrow.jemalloc_memory_pool()
    except (NotImplementedError, AttributeError, pyarrow.ArrowException):
        return False
    pyarrow.set_memory_pool(pool)
    return True
