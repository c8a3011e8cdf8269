"""Compiled passes of the per-pump calculation (numba), with plain numpy equivalents.

The calculation of one pump is a handful of passes over its pieces (a month of one-minute
data is some 43 000 of them). Written with numpy, each step is several whole-array passes and
temporary arrays; the loops below do each step in one pass. They give the same numbers to the
last bit as the numpy forms beside them (tests/test_kernels.py compares both on random input),
which in turn are the calculator's definitions (DESIGN.md, "Time weighting").
"""

from __future__ import annotations

import numpy as np

from screening.base.kernels import compile_kernel, copy_into

#: Standard gravity [m/s²] (exact by definition, CGPM 1901), as in screening.physics.npsh.
G = 9.80665


def merge_axes_numpy(base, axes, end):
    """Sorted unique union of the sorted int64 array ``base`` and the strictly increasing
    arrays ``axes``, followed by ``end`` (numpy form: the grid is ``out[:-1]``, each piece's
    next start ``out[1:]``)."""
    cat = np.concatenate([base, *axes]) if axes else base
    return np.append(np.unique(cat), np.int64(end))


def _not_in_loop(a, b):  # pragma: no cover - compiled
    """The elements of the strictly increasing ``b`` that are not in the strictly
    increasing ``a``: one walk of both."""
    out = np.empty(b.shape[0], np.int64)
    n = 0
    j = 0
    na = a.shape[0]
    for i in range(b.shape[0]):
        v = b[i]
        if j < na and a[j] == v:  # the usual case: the next instant of a (half the work)
            j += 1
            continue
        while j < na and a[j] < v:
            j += 1
        if j < na and a[j] == v:
            j += 1
        else:
            out[n] = v
            n += 1
    return out[:n]


def _insert_sorted_loop(a, few, end):  # pragma: no cover - compiled
    """The union of the strictly increasing ``a`` and the sorted unique ``few``, followed by
    ``end``: each run of ``a`` between two of ``few`` is found by bisection and copied whole."""
    na = a.shape[0]
    out = np.empty(na + few.shape[0] + 1, np.int64)
    n = 0
    i = 0
    for e in range(few.shape[0]):
        v = few[e]
        j = i + np.searchsorted(a[i:], v)
        copy_into(a[i:j], out[n:])
        n += j - i
        i = j
        if i < na and a[i] == v:
            continue
        out[n] = v
        n += 1
    copy_into(a[i:], out[n:])
    n += na - i
    out[n] = end
    return out[: n + 1]


def merge_axes(base: np.ndarray, axes: list[np.ndarray], end: int) -> np.ndarray:
    """Sorted unique union of ``base`` (sorted, unique) and the strictly increasing time axes
    ``axes`` [ns], followed by ``end`` [ns]: the grid is ``out[:-1]`` and each piece's next
    start ``out[1:]`` (two views of one array).

    The tags of a pump mostly share their sample times, each missing a few: the longest axis
    is taken whole, the others are walked once each for the few instants it lacks, and those
    are inserted by bisection and block copies (about twice as fast as a k-way merge of all
    the axes on a month of one-minute data, the same array as :func:`merge_axes_numpy`).
    """
    if not axes:
        return insert_sorted(np.empty(0, dtype=np.int64), base, np.int64(end))
    longest = max(axes, key=len)
    few = [base] + [not_in(longest, b) for b in axes if b is not longest]
    few = np.unique(np.concatenate(few)) if len(few) > 1 else few[0]
    return insert_sorted(longest, few, np.int64(end))


def weigh_numpy(code, until, grid, t_next, day_edges, n_states, no_data):
    """Time per day and state [ns] (int64, shape (days, n_states)) and the fresh part of each
    piece [ns]: the fresh part (until ``until``) has the piece's state, the rest ``no_data``.
    Every local midnight ``day_edges[1:-1]`` is a grid point (numpy form)."""
    n_days = len(day_edges) - 1
    day = np.searchsorted(day_edges, grid, side="right") - 1
    fresh = np.maximum(np.minimum(until, t_next) - grid, 0)
    stale = t_next - grid - fresh
    out = np.zeros(n_days * n_states, dtype=np.int64)
    np.add.at(out, day * n_states + code, fresh)
    np.add.at(out, day * n_states + no_data, stale)
    return out.reshape(n_days, n_states), fresh


def margin_codes_numpy(npsha, npsh3, p_abs, running, decide_bad, run_bad, all_until,
                       decide_until, g_ratio, g_margin, ample_ratio, codes):  # fmt: skip
    """The margin state of each piece, until when it holds [ns] and which pieces are bad data
    (numpy form). ``codes`` = (off_curve, bad_data, stopped); NPSHa, NPSH3 [m], the absolute
    pressure [Pa] (at or below zero: impossible, bad data); guidance ratio [-] and margin [m],
    the ample ratio [-]. The band is the number of edges reached (NPSH3, guidance, ample)."""
    off_curve, bad_data, stopped = codes
    with np.errstate(invalid="ignore"):
        all_bad = run_bad | (p_abs <= 0.0)
        guide = np.maximum(g_ratio * npsh3, npsh3 + g_margin)
        ample = np.maximum(guide, ample_ratio * npsh3)
        code = (npsha >= npsh3).view(np.int8)
        code += npsha >= guide
        code += npsha >= ample
    code[~(np.isfinite(npsh3) & np.isfinite(npsha))] = off_curve
    code[all_bad] = bad_data
    code[~running] = stopped
    code[decide_bad] = bad_data
    until = np.where(running & ~decide_bad, all_until, decide_until)
    return code, until, all_bad


def _margin_codes_loop(npsha, npsh3, p_abs, running, decide_bad, run_bad, all_until,
                       decide_until, g_ratio, g_margin, ample_ratio, codes):  # fmt: skip
    """The margin state, until when it holds [ns] and bad data of each piece, in one pass."""
    off_curve, bad_data, stopped = codes
    n = npsha.shape[0]
    code = np.empty(n, np.int8)
    until = np.empty(n, np.int64)
    all_bad = np.empty(n, np.bool_)
    for i in range(n):
        a = npsha[i]
        h3 = npsh3[i]
        bad = run_bad[i] or p_abs[i] <= 0.0
        all_bad[i] = bad
        if decide_bad[i]:
            c = bad_data
        elif not running[i]:
            c = stopped
        elif bad:
            c = bad_data
        elif not (np.isfinite(a) and np.isfinite(h3)):
            c = off_curve
        else:
            guide = max(g_ratio * h3, h3 + g_margin)
            ample = max(guide, ample_ratio * h3)
            c = (a >= h3) + (a >= guide) + (a >= ample)
        code[i] = c
        until[i] = all_until[i] if running[i] and not decide_bad[i] else decide_until[i]
    return code, until, all_bad


def band_summary_numpy(code, fresh, npsha, npsh3, p_abs, p_v, g_ratio, g_margin, codes):
    """One pass over the pieces for the summary (numpy form): the piece of the least
    NPSHa/NPSH3 among fresh pieces in a margin band (-1: none), the least NPSHa − NPSH3 and
    NPSHa − guidance head [m] there, and the fresh time [ns] running in a band or off the
    curve with the absolute pressure below the vapour pressure [Pa], with its first piece
    (-1: none). ``codes`` = (ample_margin, off_curve)."""
    ample_margin, off_curve = codes
    banded = (code <= ample_margin) & (fresh > 0)
    worst, least_m, least_g = -1, np.nan, np.nan
    if banded.any():
        with np.errstate(invalid="ignore", divide="ignore"):
            worst = int(np.argmin(np.where(banded, npsha / npsh3, np.inf)))
        a, h3 = npsha[banded], npsh3[banded]
        least_m = float(np.min(a - h3))
        least_g = float(np.min(a - np.maximum(g_ratio * h3, h3 + g_margin)))
    with np.errstate(invalid="ignore"):
        below = (code <= off_curve) & (p_abs < p_v) & (fresh > 0)
    first = int(np.argmax(below)) if below.any() else -1
    return worst, least_m, least_g, int(fresh[below].sum()), first


def transmitter_npsha_numpy(reading, baro, gauge, p_v, rho, flow, area, elevation):
    """Absolute pressure [Pa] and NPSHa [m] of a pump with a suction transmitter (numpy form;
    the definitions are :func:`screening.physics.npsh.absolute_pressure` and
    :func:`screening.physics.npsh.npsha_from_pressure`, ISO 9906:2012 and ANSI/HI 1.3):
    ``reading`` [Pa] gauge (``gauge`` True: plus ``baro`` [Pa]) or absolute, vapour pressure
    ``p_v`` [Pa] and density ``rho`` [kg/m³], ``flow`` [m³/s] through the tap of cross-section
    ``area`` [m²] at ``elevation`` [m] above the NPSH datum."""
    p_abs = reading + baro if gauge else reading.copy()
    v = flow / area
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        npsha = (p_abs - p_v) / (rho * G) + v * v / (2.0 * G) + elevation
    return p_abs, npsha


def _transmitter_npsha_loop(reading, baro, gauge, p_v, rho, flow, area, elevation):
    """p_abs and NPSHa of each piece in one pass, without temporaries (the same divisions,
    rounded the same: the same bits as the numpy form)."""
    n = reading.shape[0]
    p_abs = np.empty(n)
    npsha = np.empty(n)
    for m in range(n):
        p = reading[m] + baro[m] if gauge else reading[m]
        p_abs[m] = p
        v = flow[m] / area
        npsha[m] = (p - p_v[m]) / (rho[m] * G) + v * v / (2.0 * G) + elevation
    return p_abs, npsha


def region_codes_numpy(flow, edges, running, decide_bad, r_bad, r_until, decide_until, codes):
    """The operating region of each piece and until when it holds [ns] (numpy form of
    :func:`screening.physics.regions.operating_region` with bad data and stopped pieces):
    ``edges`` = (q_min, q_por_low, q_por_high, q_max) [m³/s] per piece; ``codes`` =
    (preferred, low_flow, below_min_flow, high_flow, beyond_allowable, bad_data, stopped)."""
    preferred, low, below_min, high, beyond, bad_data, stopped = codes
    q_min, q_lo, q_hi, q_max = edges
    code = np.full(flow.shape, preferred, dtype=np.int8)
    code[flow < q_lo] = low
    code[flow < q_min] = below_min
    code[flow > q_hi] = high
    code[flow > q_max] = beyond
    code[r_bad] = bad_data
    code[~running] = stopped
    code[decide_bad] = bad_data
    return code, np.where(running & ~decide_bad, r_until, decide_until)


def _region_codes_loop(flow, edges, running, decide_bad, r_bad, r_until, decide_until, codes):
    """The operating region of each piece and until when it holds [ns], in one pass."""
    preferred, low, below_min, high, beyond, bad_data, stopped = codes
    q_min, q_lo, q_hi, q_max = edges
    n = flow.shape[0]
    code = np.empty(n, np.int8)
    until = np.empty(n, np.int64)
    for i in range(n):
        if decide_bad[i]:
            c = bad_data
        elif not running[i]:
            c = stopped
        elif r_bad[i]:
            c = bad_data
        else:
            q = flow[i]
            c = preferred
            if q > q_max[i]:
                c = beyond
            elif q > q_hi[i]:
                c = high
            elif q < q_min[i]:
                c = below_min
            elif q < q_lo[i]:
                c = low
        code[i] = c
        until[i] = r_until[i] if running[i] and not decide_bad[i] else decide_until[i]
    return code, until


def piece_sums_numpy(margin, region, grid, t_next, day_edges, sizes, phys, speed, baro, par):
    """The time weighting and the summary of one pump's pieces (numpy form).

    ``margin`` = (code, until [ns]) and ``region`` = (code, until [ns]) of each piece;
    ``sizes`` = (margin states, region states, no-data code); ``phys`` = (NPSHa [m], NPSH3
    [m], absolute pressure [Pa], vapour pressure [Pa]); ``speed`` = running speed over rated
    [-] per piece (empty: no speed tag); ``baro`` = (running, bad data, barometer used) per
    piece (empty: the pump needs no barometer); ``par`` = (guidance ratio [-], guidance margin
    [m], lowest and highest trusted speed ratio [-], ample-margin code, off-curve code,
    stopped code).

    Returns the time [ns] per day and margin state, per day and region, the fresh part of
    each piece [ns] for each, the summary of :func:`band_summary_numpy`, the fresh time [ns] in
    a margin band outside the trusted speed ratios, and the fresh time [ns] counted with the
    standard atmosphere in place of the barometer."""
    n_m, n_r, no_data = sizes
    daily, fresh = weigh_numpy(margin[0], margin[1], grid, t_next, day_edges, n_m, no_data)
    r_daily, r_fresh = weigh_numpy(region[0], region[1], grid, t_next, day_edges, n_r, no_data)
    g_ratio, g_margin, lo, hi, ample, off_curve, stopped = par
    code = margin[0]
    summary = band_summary_numpy(code, fresh, *phys, g_ratio, g_margin, (ample, off_curve))
    outside = 0
    if len(speed):
        with np.errstate(invalid="ignore"):
            out = (code <= ample) & ((speed < lo) | (speed > hi))
        outside = int(fresh[out].sum())
    fallback = 0
    if len(baro[0]):
        running, bad, used = baro
        fallback = int(fresh[running & ~bad & (code != stopped) & ~used].sum())
    return daily, r_daily, fresh, r_fresh, summary, outside, fallback


def _piece_sums_loop(margin, region, grid, t_next, day_edges, sizes, phys, speed, baro, par):
    """The time weighting and the summary of one pump's pieces in one pass (see the numpy
    form)."""
    n_m, n_r, no_data = sizes
    code, until = margin
    rcode, r_until = region
    npsha, npsh3, p_abs, p_v = phys
    running, bad, used = baro
    g_ratio, g_margin, lo, hi, ample, off_curve, stopped = par
    n = grid.shape[0]
    n_days = day_edges.shape[0] - 1
    daily = np.zeros((n_days, n_m), np.int64)
    r_daily = np.zeros((n_days, n_r), np.int64)
    fresh = np.empty(n, np.int64)
    r_fresh = np.empty(n, np.int64)
    has_speed = speed.shape[0] > 0
    has_baro = running.shape[0] > 0
    worst, best, nan_seen = -1, np.inf, False
    least_m, least_g, below_ns, first, outside, fallback = np.inf, np.inf, 0, -1, 0, 0
    d = 0
    for i in range(n):
        g = grid[i]
        while d + 1 < n_days and g >= day_edges[d + 1]:
            d += 1
        span = t_next[i] - g
        f = max(min(until[i], t_next[i]) - g, 0)
        rf = max(min(r_until[i], t_next[i]) - g, 0)
        fresh[i] = f
        r_fresh[i] = rf
        c = code[i]
        daily[d, c] += f
        daily[d, no_data] += span - f
        r_daily[d, rcode[i]] += rf
        r_daily[d, no_data] += span - rf
        if f <= 0:
            continue
        if c <= ample:
            a = npsha[i]
            h3 = npsh3[i]
            r = a / h3
            if worst < 0:
                worst = i  # np.argmin: the first piece unless a later one is less (or NaN)
            if not nan_seen:
                if r != r:
                    worst, nan_seen = i, True
                elif r < best:
                    best, worst = r, i
            least_m = min(least_m, a - h3)
            least_g = min(least_g, a - max(g_ratio * h3, h3 + g_margin))
            if has_speed and (speed[i] < lo or speed[i] > hi):
                outside += f
        if c <= off_curve and p_abs[i] < p_v[i]:
            below_ns += f
            if first < 0:
                first = i
        if has_baro and running[i] and not bad[i] and c != stopped and not used[i]:
            fallback += f
    if worst < 0:
        least_m = np.nan
        least_g = np.nan
    summary = (worst, least_m, least_g, below_ns, first)
    return daily, r_daily, fresh, r_fresh, summary, outside, fallback


not_in = compile_kernel(_not_in_loop, lambda a, b: np.setdiff1d(b, a, assume_unique=True))
insert_sorted = compile_kernel(
    _insert_sorted_loop, lambda a, few, end: np.append(np.union1d(a, few), np.int64(end))
)
margin_codes = compile_kernel(_margin_codes_loop, margin_codes_numpy)
transmitter_npsha = compile_kernel(_transmitter_npsha_loop, transmitter_npsha_numpy)
region_codes = compile_kernel(_region_codes_loop, region_codes_numpy)
piece_sums = compile_kernel(_piece_sums_loop, piece_sums_numpy)


def _warm_up() -> None:
    """Load (or compile) every kernel once, at import (see :mod:`screening.base.kernels`)."""
    t = np.array([0, 1], dtype=np.int64)
    merge_axes(t, [t, t[1:]], 2)
    x, yes = np.ones(2), np.ones(2, dtype=np.bool_)
    margin_codes(x, x, x, yes, ~yes, ~yes, t, t, 1.1, 1.0, 1.5, (4, 7, 5))
    transmitter_npsha(x, x, True, x, x, x, 1.0, 0.0)
    region_codes(x, (x, x, x, x), yes, ~yes, ~yes, t, t, (0, 1, 2, 3, 4, 7, 5))
    code, days = np.zeros(2, np.int8), np.array([0, 2], dtype=np.int64)
    for speed, baro in ((x, (yes, ~yes, yes)), (x[:0], (yes[:0], yes[:0], yes[:0]))):
        piece_sums((code, t), (code, t), t, t + 1, days, (9, 9, 6), (x, x, x, x), speed, baro,
                   (1.1, 1.0, 0.8, 1.2, 3, 4, 5))  # fmt: skip


_warm_up()
