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
