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


def hold_numpy(times, values, bad, grid, stale_ns, never):
    """Each tag's last sample at each grid point: (value, bad, fresh-until) (numpy form).

    Before the first sample the value is NaN, not bad, and fresh until ``never``.
    """
    if len(times) == 0:
        n = len(grid)
        return np.full(n, np.nan), np.zeros(n, bool), np.full(n, never, np.int64)
    j = np.searchsorted(times, grid, side="right") - 1
    has = j >= 0
    jj = np.maximum(j, 0)
    value = np.where(has, values[jj], np.nan)
    flag = bad[jj] & has
    until = np.where(has, times[jj] + stale_ns, never)
    return value, flag, until


def hold_fold_numpy(times, values, bad, grid, stale_ns, never, in_bad, in_until, inplace):
    """A tag held at each grid point (:func:`hold_numpy`), its bad flags or-ed into ``in_bad``
    and its fresh-until times [ns] min-ed into ``in_until`` (empty: nothing to fold into);
    returns (value, the tag's own bad flags, the folded bad flags, the folded fresh-until
    times) (numpy form; ``inplace`` is ignored, the result is new)."""
    value, flag, until = hold_numpy(times, values, bad, grid, stale_ns, never)
    if len(in_bad):
        return value, flag, flag | in_bad, np.minimum(until, in_until)
    return value, flag, flag.copy(), until


def _hold_fold_loop(times, values, bad, grid, stale_ns, never, in_bad, in_until, inplace):
    """A tag held at each grid point with its own bad flags, folded into the bad flags and
    fresh-until times of the tags before it in one pass (into those arrays themselves when
    ``inplace``)."""
    n = grid.shape[0]
    m = times.shape[0]
    value = np.empty(n)
    own = np.empty(n, np.bool_)
    fold = in_bad.shape[0] > 0
    if fold and inplace:
        flag = in_bad
        until = in_until
    else:  # new arrays (a later tag may fold into them in place: never the tag's own)
        flag = np.empty(n, np.bool_)
        until = np.empty(n, np.int64)
    k = -1
    for i in range(n):
        g = grid[i]
        if k + 1 < m:
            nxt = times[k + 1]
            if nxt == g:  # the usual case: a sample at this cut (a third less time)
                k += 1
            elif nxt < g:
                while k + 1 < m and times[k + 1] <= g:
                    k += 1
        if k < 0:
            value[i] = np.nan
            b = False
            u = never
        else:
            value[i] = values[k]
            b = bad[k]
            u = times[k] + stale_ns
        own[i] = b
        if fold:
            b = b or in_bad[i]
            u = min(u, in_until[i])
        flag[i] = b
        until[i] = u
    return value, own, flag, until


def pchip_eval_numpy(x_nodes, coef, q):
    """Evaluate a piecewise cubic (scipy PPoly layout: coef[4, k]) at ``q``; NaN outside."""
    inside = (q >= x_nodes[0]) & (q <= x_nodes[-1])
    qq = np.where(inside, q, x_nodes[0])
    i = np.clip(np.searchsorted(x_nodes, qq, side="right") - 1, 0, len(x_nodes) - 2)
    d = qq - x_nodes[i]
    out = ((coef[0, i] * d + coef[1, i]) * d + coef[2, i]) * d + coef[3, i]
    return np.where(inside, out, np.nan)


def _pchip_eval_loop(x_nodes, coef, q):  # pragma: no cover - compiled
    """Piecewise cubic at each ``q``; NaN outside. Each interval is found by a short scan from
    the previous one (flows change little from one piece to the next)."""
    n = q.shape[0]
    k = x_nodes.shape[0] - 1
    out = np.empty(n)
    lo = x_nodes[0]
    hi = x_nodes[k]
    i = 0
    for m in range(n):
        v = q[m]
        if not (v >= lo and v <= hi):
            out[m] = np.nan
            continue
        while i > 0 and v < x_nodes[i]:
            i -= 1
        while i < k - 1 and v >= x_nodes[i + 1]:
            i += 1
        d = v - x_nodes[i]
        out[m] = ((coef[0, i] * d + coef[1, i]) * d + coef[2, i]) * d + coef[3, i]
    return out


def table_eval_numpy(t, t_min, t_max, step, ln_pv, rho):
    """Linear interpolation of ln p_v and rho on a uniform grid; NaN outside (numpy form)."""
    ok = (t >= t_min) & (t <= t_max)
    pos = np.where(ok, (t - t_min) / step, 0.0)
    idx = np.minimum(pos.astype(np.int64), len(rho) - 2)
    frac = pos - idx
    pv = np.exp(ln_pv[idx] + frac * (ln_pv[idx + 1] - ln_pv[idx]))
    r = rho[idx] + frac * (rho[idx + 1] - rho[idx])
    return np.where(ok, pv, np.nan), np.where(ok, r, np.nan)


#: The table look-up's cache of temperatures met: 2**_CACHE_BITS entries.
_CACHE_BITS = 10
_CACHE = 1 << _CACHE_BITS


def _table_eval_loop(t, t_min, t_max, step, ln_pv, rho):  # pragma: no cover - compiled
    """Linear interpolation of ln p_v and rho on a uniform grid; NaN outside.

    Historian temperatures are stored to a resolution (0.01 or 0.1 of a degree), so a month
    of one-minute samples holds a few thousand distinct values. Each value's properties are
    kept in a small cache keyed by its exact bits (direct-mapped, a multiplicative hash:
    Knuth, *The Art of Computer Programming* vol. 3 §6.4, from memory): a value met before
    gets the properties computed for it then, the same bits, without a second ``exp``."""
    n = t.shape[0]
    last = rho.shape[0] - 1
    pv = np.empty(n)
    r = np.empty(n)
    bits = t.view(np.uint64)
    keys = np.zeros(_CACHE, np.uint64)
    have = np.zeros(_CACHE, np.bool_)
    c_pv = np.empty(_CACHE)
    c_r = np.empty(_CACHE)
    for m in range(n):
        b = bits[m]
        h = ((b ^ (b >> np.uint64(29))) * np.uint64(0x9E3779B97F4A7C15)) >> np.uint64(
            64 - _CACHE_BITS
        )
        if have[h] and keys[h] == b:
            pv[m] = c_pv[h]
            r[m] = c_r[h]
            continue
        v = t[m]
        if not (v >= t_min and v <= t_max):
            pv_m = np.nan
            r_m = np.nan
        else:
            pos = (v - t_min) / step
            i = min(int(pos), last - 1)
            f = pos - i
            pv_m = np.exp(ln_pv[i] + f * (ln_pv[i + 1] - ln_pv[i]))
            r_m = rho[i] + f * (rho[i + 1] - rho[i])
        have[h] = True
        keys[h] = b
        c_pv[h] = pv_m
        c_r[h] = r_m
        pv[m] = pv_m
        r[m] = r_m
    return pv, r


def bucket_min_max_numpy(values, starts):
    """Minimum and maximum (NaN-ignoring) of each row of ``values`` per run beginning at
    ``starts`` (numpy form)."""
    with np.errstate(invalid="ignore"):
        return np.fmin.reduceat(values, starts, axis=1), np.fmax.reduceat(values, starts, axis=1)


def _bucket_min_max_loop(values, starts):  # pragma: no cover - compiled
    """Minimum and maximum (NaN-ignoring) of each row of ``values`` per run; one pass.

    Written without branches on the values (a NaN never compares less or greater, so it
    leaves the running minimum and maximum alone; the first of equal values is kept): three
    to six times faster than testing each value for NaN first, the same numbers.
    """
    k, n = values.shape
    m = starts.shape[0]
    lo = np.empty((k, m))
    hi = np.empty((k, m))
    for b in range(m):
        a = starts[b]
        e = starts[b + 1] if b + 1 < m else n
        for r in range(k):
            mn = np.inf
            mx = -np.inf
            seen = 0
            for i in range(a, e):
                v = values[r, i]
                seen += v == v
                mn = v if v < mn else mn
                mx = v if v > mx else mx
            lo[r, b] = mn if seen else np.nan
            hi[r, b] = mx if seen else np.nan
    return lo, hi


def compile_kernel(func, fallback):
    """``func`` compiled by numba (machine code cached beside the module), else ``fallback``.

    Floating-point errors follow numpy (x/0 is inf or NaN, as in the numpy forms), not
    Python (which would raise in the middle of a pump)."""
    if numba is None:  # pragma: no cover
        return fallback
    try:
        return numba.njit(cache=True, nogil=True, error_model="numpy")(func)
    except Exception:  # pragma: no cover - e.g. a read-only install without a cache folder
        return numba.njit(nogil=True, error_model="numpy")(func)


def copy_into_numpy(source, target) -> None:
    """``target[:len(source)] = source`` (numpy form)."""
    target[: len(source)] = source


def _copy_into_loop(source, target):  # pragma: no cover - compiled
    """``target[:len(source)] = source`` as a loop from 0, which numba vectorises (its slice
    assignment is a general strided copy, about twice as slow)."""
    for k in range(source.shape[0]):
        target[k] = source[k]


copy_into = compile_kernel(_copy_into_loop, copy_into_numpy)
hold_fold = compile_kernel(_hold_fold_loop, hold_fold_numpy)
_NO_FLAGS = np.empty(0, dtype=np.bool_)
_NO_TIMES = np.empty(0, dtype=np.int64)


def hold(times, values, bad, grid, stale_ns, never):
    """Each tag's last sample at each grid point [ns]: (value, bad, fresh-until [ns]), one
    merge pass (:func:`hold_fold` folding into nothing; the definition is
    :func:`hold_numpy`)."""
    value, own, _, until = hold_fold(times, values, bad, grid, stale_ns, never, _NO_FLAGS,
                                     _NO_TIMES, False)  # fmt: skip
    return value, own, until


pchip_eval = compile_kernel(_pchip_eval_loop, pchip_eval_numpy)
table_eval = compile_kernel(_table_eval_loop, table_eval_numpy)
bucket_min_max = compile_kernel(_bucket_min_max_loop, bucket_min_max_numpy)


def _warm_up() -> None:
    """Load (or compile, on the first run after install) every kernel once, at import.

    The fixed cost (a fraction of a second from numba's cache) is paid with the other imports,
    not inside the first pump's calculation.
    """
    t = np.array([0, 1], dtype=np.int64)
    no = np.zeros(2, dtype=np.bool_)
    hold(t, np.zeros(2), no, t, 1, -1)
    for into in (no[:0], no):
        hold_fold(t, np.zeros(2), no, t, 1, -1, into, t[: len(into)], False)
    x = np.array([0.0, 1.0])
    pchip_eval(x, np.zeros((4, 1)), x)
    table_eval(x, 0.0, 1.0, 1.0, x, x)
    bucket_min_max(np.zeros((1, 2)), t)


_warm_up()
