"""Compiled single passes (numba) over one tag's samples for the readers and checks, with plain
numpy forms giving the same results.

Reading a wide export file and making its tags ready took about ten numpy passes per tag and
step (a mask, then a copy of each array through the mask, then one comparison per kind of
problem), each allocating a temporary as long as the tag; at a month of one-minute data these
passes, not the decoding of the file, were most of the reading time
(benchmarks/bench_scan.py). Each kernel below walks the samples once and returns the arrays
the numpy steps returned together with the counts and the first places the callers report.
The callers in :mod:`screening.inputs.tagdata`, :mod:`screening.inputs.quality` and
:mod:`screening.engine.prepare` keep every message; a test compares each kernel with its
numpy form.
"""

from __future__ import annotations

import numpy as np

from screening.base.kernels import compile_kernel, copy_into

# ----------------------------------------------------------------- one wide column of numbers


def wide_column_numpy(times, ok, raw, rows, lo, hi, use_span, ordered=False):
    """One numeric column of a wide file as the readers count it (numpy form).

    ``raw`` [any unit] with NaN for an empty cell (not sampled), ``times`` [ns] and ``ok``
    (a time was placed) per row, ``rows`` the row numbers; with ``use_span`` only samples with
    ``lo <= time < hi`` [ns] are kept (and every sample without a time, which is counted).
    ``ordered``: the placed times of the file strictly increase (a shortcut of the compiled
    form; the result is the same).

    Returns ``(kept, all_kept, t, v, skipped, bad, counts)``: how many samples have a time,
    whether those are every row (then ``t``, ``v`` and ``skipped`` are empty and the caller
    uses the inputs as they are), the kept samples' times [ns] and values, the positions in
    the inputs of the rows not kept (a kept sample's row is found from them when a message
    needs it, :func:`screening.inputs.tagdata.chunk_rows`), which kept samples are infinite
    (``bad``), and ``counts`` = (bad times, the row of the first, infinite values,
    the row of the first, steps back in time, the row of the first later sample, samples
    without a time or in the span, 1 when the kept times strictly increase), a row being -1
    where there is none.
    """
    present = ~np.isnan(raw)
    untimed = present & ~ok
    timed = present & ok
    if use_span:
        timed &= (times >= lo) & (times < hi)
    idx = np.flatnonzero(timed)
    t, v, r = times[idx], raw[idx], rows[idx]
    bad = np.isinf(v)
    back = np.flatnonzero(np.diff(t) < 0)
    first_bad_time = np.flatnonzero(untimed)
    counts = np.array(
        [
            int(untimed.sum()),
            int(rows[first_bad_time[0]]) if len(first_bad_time) else -1,
            int(bad.sum()),
            int(r[np.flatnonzero(bad)[0]]) if bad.any() else -1,
            len(back),
            int(r[back[0] + 1]) if len(back) else -1,
            int(untimed.sum()) + len(idx),
            int(bool(np.all(t[1:] > t[:-1]))),
        ],
        dtype=np.int64,
    )
    n = len(raw)
    if len(idx) == n:
        empty = np.zeros(0, dtype=np.int64)
        return n, True, empty, np.zeros(0), empty, bad, counts
    return len(idx), False, t, v, np.flatnonzero(~timed), bad, counts


def _outputs_loop(raw, kept, infinite):  # pragma: no cover
    """The arrays a wide column's pass fills for ``kept`` [-] samples kept of ``raw`` (one
    element more than needed, so that a branchless copy may write past the last): whether
    every row is kept (then the kept times and values are the inputs, and only the infinite
    values' flags are set here), how many are copied, times, values, rows not kept, flags."""
    n = raw.shape[0]
    all_kept = kept == n
    m = 0 if all_kept else kept
    t_out = np.empty(m + 1, np.int64)
    v_out = np.empty(m + 1)
    s_out = np.empty(n - kept + 1, np.int64)
    bad = np.zeros(kept + 1, np.bool_)
    for i in range(n if all_kept and infinite else 0):
        bad[i] = (raw[i] - raw[i]) != 0
    return all_kept, m, t_out, v_out, s_out, bad


def _column_counts_loop(  # pragma: no cover - compiled
    bad_times, first_bad_time, infinite, first_infinite, back, first_back, counted, increasing
):
    """A wide column's ``counts`` array, in the order :func:`wide_column_numpy` gives."""
    counts = np.empty(8, np.int64)
    counts[0] = bad_times
    counts[1] = first_bad_time
    counts[2] = infinite
    counts[3] = first_infinite
    counts[4] = back
    counts[5] = first_back
    counts[6] = counted
    counts[7] = increasing
    return counts


def _usual_rows_loop(times, ok, raw, lo, hi, use_span):  # pragma: no cover
    """For a column of a file whose placed times strictly increase: when every time is placed
    and at most one row in 16 of the span is an empty cell, the span's rows ``a`` to ``b``
    (end excluded; found by bisection), the places of the empty cells among them and how many
    infinite values they hold; else ``a`` = -1."""
    n = raw.shape[0]
    nothing = np.empty(0, np.int64)
    every_ok = True
    for i in range(n):
        every_ok &= ok[i]
    if not every_ok:
        return -1, -1, nothing, 0
    a, b = 0, n
    if use_span:  # the times strictly increase: the span is one range of rows
        a = np.searchsorted(times, lo)
        b = max(a, np.searchsorted(times, hi))
    # (numba vectorises a loop over a whole array from 0, not one from a variable start)
    span_raw = raw[a:b]
    nonfinite = 0
    for i in range(span_raw.shape[0]):
        x = span_raw[i]
        nonfinite += (x - x) != 0  # NaN for NaN and for an infinity
    empty = np.empty(span_raw.shape[0] // 16 + 1, np.int64)
    found = 0
    for start in range(0, span_raw.shape[0] if nonfinite else 0, 256):
        block = span_raw[start : start + 256]
        here = 0
        for i in range(block.shape[0]):
            x = block[i]
            here += x != x
        if here:
            if found + here > empty.shape[0]:
                return -1, -1, nothing, 0
            for i in range(block.shape[0]):
                if block[i] != block[i]:
                    empty[found] = a + start + i
                    found += 1
    return a, b, empty[:found], nonfinite - found


def _wide_column_blocks(times, raw, rows, a, b, empty, infinite):  # pragma: no cover
    """:func:`_wide_column_loop` of a column whose times are all placed and strictly increase,
    with the span's rows ``a`` to ``b`` (end excluded), the places of its empty cells in that
    range (``empty``, ascending) and ``infinite`` [-] infinite values among them: the kept
    samples copied in blocks between the empty cells."""
    n = raw.shape[0]
    kept = b - a - empty.shape[0]
    first_infinite = -1
    if infinite:
        for i in range(a, b):
            x = raw[i]
            if x == x and (x - x) != 0:
                first_infinite = rows[i]
                break
    all_kept, m, t_out, v_out, s_out, bad = _outputs(raw, kept, infinite)
    if not all_kept:
        sk = 0
        for i in range(a):
            s_out[sk] = i
            sk += 1
        j = 0
        start = a
        for i in empty:  # an empty cell ends a block
            copy_into(times[start:i], t_out[j:])
            copy_into(raw[start:i], v_out[j:])
            j += i - start
            s_out[sk] = i
            sk += 1
            start = i + 1
        copy_into(times[start:b], t_out[j:])
        copy_into(raw[start:b], v_out[j:])
        for i in range(b, n):
            s_out[sk] = i
            sk += 1
        for k in range(kept if infinite else 0):
            bad[k] = (v_out[k] - v_out[k]) != 0
    counts = _column_counts(0, -1, infinite, first_infinite, 0, -1, kept, 1)
    skipped = s_out[: 0 if all_kept else n - kept]
    return kept, all_kept, t_out[:m], v_out[:m], skipped, bad[:kept], counts


def _wide_column_loop(times, ok, raw, rows, lo, hi, use_span, ordered):  # pragma: no cover
    """One numeric column of a wide file as the readers count it: a pass without branches
    that counts, a pass for the first places only where there is something to place (or the
    file's times are not in order), and a copy of the kept samples where some rows are not
    kept (written without branches: a row not kept is overwritten by the next). The usual
    wide file (every time placed and in order, few empty cells) takes a shorter way: the span
    is a range of rows found by bisection, and the samples are copied in blocks between the
    empty cells (:func:`_wide_column_blocks`)."""
    n = raw.shape[0]
    if ordered and n > 0:
        a, b, empty, infinite = _usual_rows(times, ok, raw, lo, hi, use_span)
        if a >= 0:
            return _wide_column_blocks(times, raw, rows, a, b, empty, infinite)
    kept = 0
    bad_times = 0
    infinite = 0
    for i in range(n):
        x = raw[i]
        t = times[i]
        present = x == x  # NaN: an empty cell, not sampled at this instant
        keep = present & ok[i] & ((not use_span) | ((t >= lo) & (t < hi)))
        kept += keep
        bad_times += present & ~ok[i]  # a sample without a time: counted whatever the span
        infinite += keep & ((x - x) != 0)
    first_bad_time = -1
    first_infinite = -1
    back = 0
    first_back = -1
    increasing = 1
    if bad_times or infinite or not ordered:
        last = 0  # the time of the last sample kept
        seen = False
        for i in range(n):
            x = raw[i]
            if x != x:
                continue
            if not ok[i]:
                if first_bad_time < 0:
                    first_bad_time = rows[i]
                continue
            t = times[i]
            if use_span and not (t >= lo and t < hi):
                continue
            if (x - x) != 0 and first_infinite < 0:
                first_infinite = rows[i]
            if seen and t <= last:
                increasing = 0
                if t < last:
                    back += 1
                    if first_back < 0:
                        first_back = rows[i]
            last = t
            seen = True
    all_kept, m, t_out, v_out, s_out, bad = _outputs(raw, kept, infinite)
    if not all_kept:
        j = np.uint64(0)  # unsigned: no check for an index from the end
        sk = np.uint64(0)
        for i in range(n):
            x = raw[i]
            t = times[i]
            t_out[j] = t
            v_out[j] = x
            if infinite:
                bad[j] = (x - x) != 0
            keep = (x == x) & ok[i] & ((not use_span) | ((t >= lo) & (t < hi)))
            s_out[sk] = i  # a row kept is overwritten by the next row not kept
            j += np.uint64(keep)
            sk += np.uint64(not keep)
    counts = _column_counts(
        bad_times, first_bad_time, infinite, first_infinite, back, first_back,
        bad_times + kept, increasing,
    )  # fmt: skip
    skipped = s_out[: 0 if all_kept else n - kept]
    return kept, all_kept, t_out[:m], v_out[:m], skipped, bad[:kept], counts


# ------------------------------------------------------- overflow and frozen transmitters


def overflow_frozen_numpy(times, values, bad, limit_ns, frozen_on):
    """Samples not finite (an overflow on conversion to SI) and, when ``frozen_on``, samples
    of a run of identical good non-zero values that has lasted more than ``limit_ns`` [ns]
    (numpy form of :func:`screening.inputs.quality.frozen_samples` after the overflow).

    Returns ``(bad, counts)``: ``bad`` the input's bad flags with both added, ``counts`` =
    (samples not finite that were good, the index of the first, frozen samples)."""
    overflow = ~np.isfinite(values) & ~bad
    out = bad | overflow
    first = np.flatnonzero(overflow)
    frozen_n = 0
    if frozen_on and len(values) >= 2:
        same = (values[1:] == values[:-1]) & ~out[1:] & ~out[:-1] & (values[1:] != 0)
        if same.any():
            new_run = np.concatenate(([True], ~same))
            start = times[np.flatnonzero(new_run)][np.cumsum(new_run) - 1]
            frozen = ((times - start) > limit_ns) & ~out
            frozen_n = int(frozen.sum())
            out |= frozen
    counts = np.array(
        [int(overflow.sum()), int(first[0]) if len(first) else -1, frozen_n], dtype=np.int64
    )
    return out, counts


def _overflow_frozen_loop(times, values, bad, limit_ns, frozen_on):  # pragma: no cover
    """Overflowed samples in one pass without branches on the values, then the runs of
    identical values in a second."""
    n = values.shape[0]
    out = np.empty(n, np.bool_)
    overflow = 0
    for i in range(n):
        x = values[i]
        b = bad[i] | ((x - x) != 0)  # x - x is NaN for NaN and for an infinity
        out[i] = b
        overflow += b & ~bad[i]
    first = -1
    if overflow:
        for i in range(n):
            if out[i] and not bad[i]:
                first = i
                break
    frozen = 0
    if frozen_on and limit_ns >= 0 and n:
        prev_x = values[0]
        prev_b = out[0]  # the sample before: bad before this check
        began = times[0]  # the time the run of identical values began
        for i in range(1, n):
            x = values[i]
            b = out[i]
            if x == prev_x and x != 0 and not b and not prev_b:
                if times[i] - began > limit_ns:
                    out[i] = True
                    frozen += 1
            else:
                began = times[i]
            prev_x = x
            prev_b = b
    elif frozen_on:  # a limit below zero: once two neighbours are alike, every good sample
        same_any = False  # has outlasted it (as frozen_samples has it)
        for i in range(1, n):
            x = values[i]
            if x == values[i - 1] and x != 0 and not out[i] and not out[i - 1]:
                same_any = True
                break
        start = 0
        prev_b = True  # the sample before: bad before this check
        for i in range(n if same_any else 0):
            x = values[i]
            b = out[i]
            if not (i > 0 and x == values[i - 1] and not b and not prev_b and x != 0):
                start = times[i]
            prev_b = b
            if not b and times[i] - start > limit_ns:
                out[i] = True
                frozen += 1
    counts = np.empty(3, np.int64)
    counts[0] = overflow
    counts[1] = first
    counts[2] = frozen
    return out, counts


# ------------------------------------------------------------------------ gaps and order


def long_steps_numpy(times, lo, hi, first, end, final, limit_ns):
    """The steps longer than ``limit_ns`` [ns] along the points ``first``, ``times[lo:hi]``
    and (when ``final``) ``end`` [ns] (numpy form): their index among the steps, and the
    points they begin and stop at [ns]."""
    tail = [end] if final else []
    points = np.concatenate(([first], times[lo:hi], tail)).astype(np.int64)
    over = np.flatnonzero(np.diff(points) > limit_ns)
    return over, points[over], points[over + 1]


def _long_steps_loop(times, lo, hi, first, end, final, limit_ns):  # pragma: no cover
    """The steps longer than the limit along the points: counted in a pass that vectorises,
    then placed in a second only where there are any."""
    x = times[lo:hi]  # a slice: indices numba knows are not from the end (the loop vectorises)
    k = 0
    if x.shape[0]:
        k += np.int64(x[0] - first > limit_ns)
        for j in range(1, x.shape[0]):
            k += np.int64(x[j] - x[j - 1] > limit_ns)
    last = x[-1] if x.shape[0] else first
    k += final and end - last > limit_ns
    over = np.empty(k, np.int64)
    begin = np.empty(k, np.int64)
    stop = np.empty(k, np.int64)
    k = 0
    prev = first
    for j in range(lo, hi if over.shape[0] else lo):
        t = times[j]
        if t - prev > limit_ns:
            over[k] = j - lo
            begin[k] = prev
            stop[k] = t
            k += 1
        prev = t
    if final and end - last > limit_ns:
        over[k] = hi - lo
        begin[k] = last
        stop[k] = end
    return over, begin, stop


def strictly_increasing_numpy(times) -> bool:
    """Whether every time [ns] is later than the one before (numpy form)."""
    return bool(np.all(times[1:] > times[:-1]))


def _strictly_increasing_loop(times):  # pragma: no cover - compiled
    """Whether every time is later than the one before (no early exit: the loop vectorises)."""
    later = True
    for i in range(1, times.shape[0]):
        later &= times[i] > times[i - 1]
    return later


_outputs = compile_kernel(_outputs_loop, None)
_column_counts = compile_kernel(_column_counts_loop, None)
_usual_rows = compile_kernel(_usual_rows_loop, None)
_wide_column_blocks = compile_kernel(_wide_column_blocks, None)
wide_column = compile_kernel(_wide_column_loop, wide_column_numpy)
overflow_frozen = compile_kernel(_overflow_frozen_loop, overflow_frozen_numpy)
long_steps = compile_kernel(_long_steps_loop, long_steps_numpy)
strictly_increasing = compile_kernel(_strictly_increasing_loop, strictly_increasing_numpy)


def _warm_up() -> None:
    """Load (or compile, the first time) every kernel at import, for the types the readers
    pass (numba compiles a read-only array, such as one Arrow lends, as a type of its own),
    so that the first tag read, in this process or a forked worker, pays nothing (see
    :func:`screening.base.kernels._warm_up`)."""

    def arrays(write: bool):
        t = np.array([0, 1], dtype=np.int64)
        x = np.array([0.0, 1.0])
        t.setflags(write=write)
        x.setflags(write=write)
        return t, x

    yes = np.ones(2, dtype=np.bool_)
    for write in (True, False):
        t, x = arrays(write)
        for raw in (arrays(True)[1], arrays(False)[1]):
            wide_column(t, yes, raw, np.array([0, 1]), np.int64(0), np.int64(2), True, True)
        overflow_frozen(t, x, ~yes, np.int64(1), True)
        long_steps(t, 0, 2, np.int64(0), np.int64(3), True, np.int64(1))
        strictly_increasing(t)


_warm_up()
