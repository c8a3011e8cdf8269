"""Compiled inner loops (numba) with plain numpy equivalents.

Holding each tag's last sample at every point of a pump's timeline is a merge of two sorted
arrays. numpy's only tool for it, ``searchsorted``, is a binary search per point; the merge
below is one linear pass and about eight times faster on a month of one-minute data, which
made it the largest single cost of the calculation (benchmarks/bench_scan.py). numba compiles
it once and caches the machine code beside the module. Without numba, the numpy form is used
with identical results (a test compares them).
"""

from __future__ import annotations

import numpy as np

try:  # pragma: no cover - exercised through both paths in tests
    import numba
except ImportError:  # pragma: no cover
    numba = None


def last_index_numpy(times: np.ndarray, grid: np.ndarray) -> np.ndarray:
    """Index of the last of ``times`` at or before each of ``grid`` (-1 if none); both sorted."""
    return np.searchsorted(times, grid, side="right") - 1


def _last_index_loop(times, grid):  # pragma: no cover - compiled
    """Index of the last of ``times`` at or before each point of ``grid`` (-1 if none).

    ``times`` [ns]: sorted, unique sample times; ``grid`` [ns]: sorted timeline points.
    One merge pass: O(len(times) + len(grid)).
    """
    n = grid.shape[0]
    m = times.shape[0]
    out = np.empty(n, np.int64)
    k = -1
    for i in range(n):
        g = grid[i]
        while k + 1 < m and times[k + 1] <= g:
            k += 1
        out[i] = k
    return out


if numba is not None:
    try:
        last_index = numba.njit(cache=True, nogil=True)(_last_index_loop)
    except Exception:  # pragma: no cover - e.g. a read-only install without a cache folder
        last_index = numba.njit(nogil=True)(_last_index_loop)
else:  # pragma: no cover
    last_index = last_index_numpy
