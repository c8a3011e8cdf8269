"""Small data for the report's plots, computed inside the scan so that series never pile up.

Long series are downsampled for the browser keeping the extremes: the window is cut into
equal time buckets and each bucket keeps the minimum and the maximum of every series, so a
short dip below NPSH3 is never averaged away (the report says so). Operating points are a
time-weighted two-dimensional histogram of flow and NPSHa.
"""

from __future__ import annotations

from contextvars import ContextVar
from dataclasses import dataclass

import numpy as np
import pandas as pd

from screening.base.kernels import bucket_min_max

#: Buckets per window for the time plots (each keeps a minimum and a maximum).
DEFAULT_BUCKETS = 1500


@dataclass(frozen=True)
class BucketGrid:
    """The buckets of a whole window [ns] (``count`` of them), for a calculation over a part
    of it: a pump screened in time chunks (:mod:`screening.engine.chunked`) gets the same
    buckets as in one piece. Passed where a number of buckets is expected."""

    start_ns: int
    end_ns: int
    count: int

    def __bool__(self) -> bool:
        return self.count > 0


def min_max_buckets(
    grid: np.ndarray,
    weight: np.ndarray,
    series: dict[str, np.ndarray],
    start_ns: int,
    end_ns: int,
    buckets: int = DEFAULT_BUCKETS,
) -> pd.DataFrame:
    """Minimum and maximum of each series per time bucket [same units as the series].

    Parameters
    ----------
    grid : numpy.ndarray
        Piece start times [ns], sorted.
    weight : numpy.ndarray
        Fresh duration of each piece [ns]; pieces of zero weight are ignored.
    series : dict of str to numpy.ndarray
        Values per piece (NaN where not defined, e.g. not running).
    start_ns, end_ns : int
        Window [ns].
    buckets : int or BucketGrid
        Number of equal time buckets of [start_ns, end_ns), or those of a whole window.

    Returns
    -------
    DataFrame with ``time`` (bucket start, UTC) and ``<name>_min``, ``<name>_max`` columns;
    buckets without any value are left out.
    """
    if isinstance(buckets, BucketGrid):
        start_ns, end_ns, buckets = buckets.start_ns, buckets.end_ns, buckets.count
    width = max(1, -(-(end_ns - start_ns) // buckets))
    keep = weight > 0
    g = grid[keep]
    if len(g) == 0:
        return pd.DataFrame({"time": pd.to_datetime([], utc=True)})
    b = (g - start_ns) // width
    starts = np.flatnonzero(np.concatenate(([True], b[1:] != b[:-1])))
    names = list(series)
    # the kept pieces of every series, written straight into one array (no stacked copy)
    stacked = np.empty((len(names), len(g)))
    kept = None if len(g) == len(grid) else np.flatnonzero(keep)  # as a rule every piece
    for i, k in enumerate(names):
        values = np.asarray(series[k], dtype=np.float64)
        if kept is None:
            stacked[i] = values
        else:
            np.take(values, kept, out=stacked[i])
    lo, hi = bucket_min_max(stacked, starts.astype(np.int64))
    # one block of floats, columns <name>_min, <name>_max in turn (a frame built column by
    # column cost more than the buckets themselves)
    both = np.empty((len(starts), 2 * len(names)))
    both[:, 0::2], both[:, 1::2] = lo.T, hi.T
    frame = pd.DataFrame(both, columns=[f"{k}_{m}" for k in names for m in ("min", "max")])
    times = (start_ns + b[starts] * width).astype("datetime64[ns]")
    frame.insert(0, "time", pd.DatetimeIndex(times).tz_localize("UTC"))
    return frame


#: Set by :class:`screening.engine.chunked.PointSpill` while a pump is screened in time
#: chunks: :func:`operating_points` hands the running points to it instead of binning them.
POINT_SINK: ContextVar = ContextVar("point_sink", default=None)


def operating_points(
    flow: np.ndarray, npsha: np.ndarray, weight: np.ndarray, flow_max: float, bins: int = 50
) -> dict | None:
    """Time-weighted histogram of running points: hours per (flow, NPSHa) cell.

    Parameters
    ----------
    flow : numpy.ndarray
        Flow per piece [m³/s] (NaN where not running).
    npsha : numpy.ndarray
        NPSH available per piece [m].
    weight : numpy.ndarray
        Hours of each piece [h].
    flow_max : float
        Upper flow edge of the histogram [m³/s] (the curve's end, with room beyond).
    bins : int
        Cells per axis.

    Returns
    -------
    dict with ``flow_edges`` [m³/s], ``npsha_edges`` [m] and ``hours`` [h] (flow by NPSHa);
    None while :data:`POINT_SINK` takes the points.
    """
    sink = POINT_SINK.get()
    if sink is not None:
        sink(flow, npsha, weight, flow_max)
        return None
    ok = np.isfinite(flow) & np.isfinite(npsha) & (weight > 0)
    return operating_points_parts([(flow[ok], npsha[ok], weight[ok])], flow_max, bins)


def operating_points_parts(parts, flow_max: float, bins: int = 50, tops=None) -> dict:
    """:func:`operating_points` of the running points (flow, NPSHa, hours; all finite, hours
    positive) given in parts in time order: the same histogram, summed in the same order.
    ``tops``: the points' count and largest flow and NPSHa, known beforehand (then ``parts``
    may be an iterator that loads one part at a time)."""
    if tops is None:
        tops = (sum(len(p[0]) for p in parts),
                max((float(np.max(p[0])) for p in parts if len(p[0])), default=0.0),
                max((float(np.max(p[1])) for p in parts if len(p[1])), default=1.0))  # fmt: skip
    n, f_top, top = tops
    f_edges = np.linspace(0.0, max(flow_max, f_top if n else 0) * 1.05, bins + 1)
    h_edges = np.linspace(0.0, max(top, 1e-3) * 1.05, bins + 1)
    hist = None
    for flow, npsha, weight in parts:
        # uniform cells: the cell index is arithmetic (np.histogram2d's search is slower)
        fi = np.minimum(((flow - f_edges[0]) / (f_edges[1] - f_edges[0])).astype(np.int64),
                        bins - 1)  # fmt: skip
        hi = np.minimum(((npsha - h_edges[0]) / (h_edges[1] - h_edges[0])).astype(np.int64),
                        bins - 1)  # fmt: skip
        inside = (fi >= 0) & (hi >= 0)
        cells = fi[inside] * bins + hi[inside]
        if hist is None:
            hist = np.bincount(cells, weights=weight[inside], minlength=bins * bins)
        else:  # one sample after the other, as bincount adds them
            np.add.at(hist, cells, weight[inside])
    if hist is None:
        hist = np.zeros(bins * bins)
    return {"flow_edges": f_edges, "npsha_edges": h_edges, "hours": hist.reshape(bins, bins)}
