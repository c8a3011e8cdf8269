"""How deep and how long a pump ran short of margin, beside the hours in each band.

Hours below NPSH3 count a one-minute dip at every start the same as an hour deep below the
curve. Two measures weigh the depth:

- metre-hours below NPSH3 and below the guidance: the integral over the running time in a
  margin band of max(0, NPSH3 − NPSHa) and of max(0, guidance head − NPSHa) [m·h];
- the longest continuous time below NPSH3 [h] (pieces in a row, each fresh to its end).

On a piece drawn by lines (a compressed record, :mod:`screening.engine.timeline`) the depth at
both ends is known and the integral is the trapezoid rule, exact where the depth is linear in
time; on a piece of steps the depth is constant and the integral is exact. A choice of ours,
in the manner of the exposure measures of fatigue and corrosion screening (a dose, depth times
duration); no standard prescribes it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from screening.base import states

NS_PER_HOUR = 3_600_000_000_000


@dataclass
class Severity:
    """Depth times duration below NPSH3 and below the guidance [m·h], and the longest
    continuous time below NPSH3 [h] with its start (None when never below)."""

    below_npsh3_m_h: float = 0.0
    below_guidance_m_h: float = 0.0
    longest_below_npsh3_h: float = 0.0
    longest_start: pd.Timestamp | None = None


def _depth(upper, npsha) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        d = np.asarray(upper, dtype=np.float64) - np.asarray(npsha, dtype=np.float64)
    return np.where(d > 0, d, 0.0)  # NaN -> 0: no margin known, no depth


def severity(
    grid: np.ndarray,
    t_next: np.ndarray,
    fresh: np.ndarray,
    code: np.ndarray,
    left: tuple[np.ndarray, np.ndarray],
    guidance,
    right: tuple[np.ndarray, np.ndarray] | None = None,
) -> Severity:
    """The severity measures of one pump over its pieces.

    Parameters
    ----------
    grid, t_next : numpy.ndarray
        Start of each piece and of the next [ns].
    fresh : numpy.ndarray
        Fresh part of each piece [ns] (the rest is no data).
    code : numpy.ndarray
        Margin state of each piece (:mod:`screening.base.states`).
    left : tuple of numpy.ndarray
        NPSHa and NPSH3 [m] at each piece's start.
    guidance : Guidance
        The pump's guidance (:meth:`Guidance.head` [m] of NPSH3 [m]).
    right : tuple of numpy.ndarray, optional
        The same just before the next piece (pieces drawn by lines); None for steps.
    """
    out = Severity()
    # only pieces below the guidance have a depth (NPSHa < guidance head <=> band code <= 1)
    short = (code <= states.BELOW_GUIDANCE) & (fresh > 0)
    if not short.any():
        return out
    idx = np.flatnonzero(short)
    g, f, span = grid[idx], fresh[idx], t_next[idx] - grid[idx]
    full = f == span
    hours = f / NS_PER_HOUR
    a, n3 = left[0][idx], left[1][idx]
    for attr, upper in (("below_npsh3_m_h", n3), ("below_guidance_m_h", guidance.head(n3))):
        d = _depth(upper, a)
        if right is not None:
            a_r, n3_r = right[0][idx], right[1][idx]
            up_r = n3_r if attr == "below_npsh3_m_h" else guidance.head(n3_r)
            # trapezoid rule on a fully fresh piece drawn by lines
            d = np.where(full & np.isfinite(a_r), 0.5 * (d + _depth(up_r, a_r)), d)
        setattr(out, attr, float(np.sum(d * hours)))
    below = code[idx] == states.BELOW_NPSH3
    if below.any():
        # a stretch continues while the next piece follows on directly, fresh to its end
        follows = np.zeros(len(idx), dtype=bool)
        follows[1:] = (idx[1:] == idx[:-1] + 1) & below[1:] & below[:-1] & full[:-1]
        run_id = np.cumsum(~follows)
        sums = np.bincount(run_id[below], weights=f[below])
        best = int(np.argmax(sums))
        out.longest_below_npsh3_h = float(sums[best] / NS_PER_HOUR)
        first = int(np.flatnonzero((run_id == best) & below)[0])
        out.longest_start = pd.Timestamp(int(g[first]), tz="UTC")
    return out
