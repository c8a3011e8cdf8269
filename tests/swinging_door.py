"""A small swinging-door compressor for the tests: a dense series in, the stored points out.

The swinging-door trending method (E. H. Bristol, "Swinging door trending: adaptive trend
recording?", ISA National Conference Proceedings, 1990; recalled from memory): from the last
stored point, two "doors" pivot at the stored value plus and minus the deviation E. Each new
sample narrows the range of slopes a straight line from the stored point may have and still
pass within E of every sample since; when the range closes (the doors would open past
parallel), the previous sample is stored and becomes the new pivot. Here the test is made on
the chord from the pivot to the newest sample (a strict form: the stored line itself, not only
some line, stays within E of every sample since the pivot). A point is also stored
when the time since the last stored point would exceed the longest interval. Every sample then
lies within E of the straight line between the stored points around it, which is how a reader
is meant to redraw the record.
"""

from __future__ import annotations

import numpy as np


def swinging_door(times: np.ndarray, values: np.ndarray, deviation: float, max_interval: int):
    """The indices of the samples a swinging-door compressor stores.

    Parameters
    ----------
    times : numpy.ndarray
        Sample times [ns], increasing.
    values : numpy.ndarray
        Sample values [any unit].
    deviation : float
        Compression deviation E [unit of the values].
    max_interval : int
        Longest time between stored points [ns].
    """
    n = len(times)
    if n <= 2:
        return np.arange(n)
    kept = [0]
    a = 0
    s_up, s_lo = np.inf, -np.inf  # the slopes within E of every sample since the pivot
    i = 1
    while i < n:
        dt = float(times[i] - times[a])
        chord = (values[i] - values[a]) / dt
        if (not s_lo <= chord <= s_up or times[i] - times[a] > max_interval) and a != i - 1:
            a = i - 1  # store the previous sample and pivot the doors there
            kept.append(a)
            s_up, s_lo = np.inf, -np.inf
            continue  # the same sample again, from the new pivot
        s_up = min(s_up, (values[i] + deviation - values[a]) / dt)
        s_lo = max(s_lo, (values[i] - deviation - values[a]) / dt)
        i += 1
    if kept[-1] != n - 1:
        kept.append(n - 1)
    return np.array(kept)
