"""Sample checks that need the tag's whole series: frozen transmitters and impossible values."""

from __future__ import annotations

import numpy as np


def frozen_samples(times: np.ndarray, values: np.ndarray, bad: np.ndarray, limit_ns: int):
    """Flag samples of a transmitter that has reported exactly the same value for too long.

    A run of consecutive good samples with identical values counts as frozen from the moment it
    has lasted longer than ``limit_ns``; the samples after that moment are flagged. Runs at
    exactly zero are exempt (a stopped pump's flow or speed legitimately sits at zero).

    Parameters
    ----------
    times : numpy.ndarray
        Sample times [ns], sorted ascending.
    values : numpy.ndarray
        Sample values (any unit).
    bad : numpy.ndarray
        Samples already bad (they break a run).
    limit_ns : int
        Longest plausible unchanged stretch [ns].

    Returns
    -------
    numpy.ndarray of bool, True for frozen samples.
    """
    n = len(values)
    out = np.zeros(n, dtype=bool)
    if n < 2:
        return out
    same = (values[1:] == values[:-1]) & ~bad[1:] & ~bad[:-1] & (values[1:] != 0)
    if not same.any():
        return out
    # Start index of the run each sample belongs to.
    new_run = np.concatenate(([True], ~same))
    run_id = np.cumsum(new_run) - 1
    starts = np.flatnonzero(new_run)
    run_start_time = times[starts][run_id]
    out = (times - run_start_time) > limit_ns
    return out


def sample_gaps(
    times: np.ndarray, start_ns: int, end_ns: int, limit_ns: int, keep: int = 3
) -> tuple[int, int, list[tuple[int, int]]]:
    """Stretches of the window [start_ns, end_ns) in which a tag had no fresh sample: a
    sample holds for ``limit_ns`` (the stale limit), so a gap is a stretch from a sample (or
    the window start) to the next sample (or the window end) longer than that.

    Parameters
    ----------
    times : numpy.ndarray
        Sample times [ns], sorted ascending (any span; those before the window count as the
        last sample before it).
    start_ns, end_ns : int
        The window [ns].
    limit_ns : int
        Stale limit [ns].
    keep : int
        How many of the longest gaps to return.

    Returns
    -------
    (count, no_data_ns, longest)
        Number of gaps, the time without a fresh sample in them [ns] (each gap less the
        ``limit_ns`` its first sample holds), and the ``keep`` longest as (from [ns], length [ns]).
    """
    lo, hi = np.searchsorted(times, [start_ns, end_ns])
    inside = times[lo:hi].astype(np.int64, copy=False)
    first = times[lo - 1] if lo > 0 else None
    held = first is not None and first + limit_ns > start_ns
    # points from which a stretch is measured, and where each stretch ends
    begin = np.concatenate(([first if held else start_ns], inside))
    stop = np.concatenate((inside, [end_ns]))
    length = stop - begin
    over = np.flatnonzero(length > limit_ns)  # few: the rest of the work is on these only
    if not len(over):
        return 0, 0, []
    # a stretch from the window start with no sample behind it has no sample to hold: all of
    # it is without data, but like any stretch it is a gap only when longer than the limit
    hold = np.full(len(over), limit_ns, dtype=np.int64)
    if not held:
        hold[over == 0] = 0
    b, e = begin[over], stop[over]
    missing = np.clip(np.minimum(e, end_ns) - np.maximum(b + hold, start_ns), 0, None)
    gap = missing > 0
    idx, missing = over[gap], missing[gap]
    order = idx[np.argsort(-length[idx], kind="stable")][:keep]
    longest = [
        (int(max(begin[i], start_ns)), int(stop[i] - max(begin[i], start_ns))) for i in order
    ]
    return len(idx), int(missing.sum()), longest
