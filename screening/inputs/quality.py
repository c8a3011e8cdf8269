"""Sample checks that need the tag's whole series: frozen transmitters and impossible values."""

from __future__ import annotations

import numpy as np

from screening.base.read_kernels import long_steps


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


def frozen_continued(times, values, bad, limit_ns: int, carry, upto: int):
    """:func:`frozen_samples` over one time chunk's samples, continuing the run of identical
    values that the chunk before left open, so that a frozen stretch across a chunk edge is
    flagged exactly as in one piece.

    ``carry`` is None (the first chunk) or (time [ns], value, bad, run start [ns]) of the last
    sample before the chunk's own start; ``upto`` [ns] is the chunk's end. Returns the flags
    and the carry for the next chunk (the last sample before ``upto``)."""
    times = np.asarray(times, dtype=np.int64)
    start = times.copy()  # the start time of the run each sample belongs to
    skip = 0
    if carry is not None and (len(times) == 0 or times[0] > carry[0]):
        times = np.concatenate(([carry[0]], times))
        values = np.concatenate(([carry[1]], values))
        bad = np.concatenate(([carry[2]], bad))
        skip = 1
    n = len(times)
    if n:
        same = (values[1:] == values[:-1]) & ~bad[1:] & ~bad[:-1] & (values[1:] != 0)
        new_run = np.concatenate(([True], ~same))
        run_id = np.cumsum(new_run) - 1
        start = times[np.flatnonzero(new_run)][run_id]
        if carry is not None:
            at = int(np.searchsorted(times, carry[0]))
            start[run_id == run_id[at]] = carry[3]  # the run began in an earlier chunk
    out = (times - start) > limit_ns
    last = int(np.searchsorted(times, upto)) - 1
    if last >= 0:
        carry = (int(times[last]), values[last], bool(bad[last]), int(start[last]))
    return out[skip:], carry


def gap_stretches(
    times, a: int, b: int, start_ns: int, end_ns: int, limit_ns: int, open_=None, final=True
):
    """The stretches of :func:`sample_gaps` that end at a sample in [a, b) of the window
    [start_ns, end_ns) [ns], and the stretch to the window's end when ``final``: the part of
    the gap count of one time chunk. ``open_`` is the stretch the chunk before left open, as
    (its begin [ns], the hold of its first sample [ns]); None at the window's start. Returns
    (begin, stop, length, missing) of the gaps [ns] and the stretch left open."""
    times = np.asarray(times, dtype=np.int64)
    lo, hi = np.searchsorted(times, [a, b])
    if open_ is None:
        first = times[lo - 1] if lo > 0 else None
        held = first is not None and first + limit_ns > start_ns
        open_ = (int(first), limit_ns) if held else (start_ns, 0)
    hold0 = open_[1]  # the first stretch's: the sample it begins at holds (or none does)
    # the stretches between the points open_[0], the samples and (when final) end_ns; only
    # those longer than the limit are gaps: the rest is never looked at again
    over, begin, stop = long_steps(
        times, int(lo), int(hi), np.int64(open_[0]), np.int64(end_ns), final, np.int64(limit_ns)
    )
    if not final:
        open_ = (int(times[hi - 1]) if hi > lo else int(open_[0]), limit_ns if hi > lo else hold0)
    if len(over) == 0:
        return (begin, stop, stop - begin, np.zeros(0, dtype=np.int64)), open_
    hold = np.where(over == 0, hold0, limit_ns)
    length = stop - begin
    missing = np.clip(np.minimum(stop, end_ns) - np.maximum(begin + hold, start_ns), 0, None)
    idx = np.flatnonzero(missing > 0)
    return (begin[idx], stop[idx], length[idx], missing[idx]), open_


def gaps_summary(stretches, start_ns: int, keep: int = 3) -> tuple[int, int, list]:
    """(count, no-data [ns], the ``keep`` longest as (from [ns], length [ns])) of the gap
    stretches of :func:`gap_stretches` (several chunks' concatenated in time order)."""
    begin, stop, length, missing = stretches
    if len(begin) == 0:
        return 0, 0, []
    order = np.argsort(-length, kind="stable")[:keep]
    longest = [
        (int(max(begin[i], start_ns)), int(stop[i] - max(begin[i], start_ns))) for i in order
    ]
    return len(begin), int(missing.sum()), longest


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
    # a stretch from the window start with no sample behind it has no sample to hold: all of
    # it is without data, but like any stretch it is a gap only when longer than the limit
    stretches, _ = gap_stretches(times, start_ns, end_ns, start_ns, end_ns, limit_ns)
    return gaps_summary(stretches, start_ns, keep)
