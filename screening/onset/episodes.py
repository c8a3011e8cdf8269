"""When did a pump's trouble begin: episodes below guidance and the exposure before a failure.

Pure functions on arrays and small tables, SI units inside (hours for durations, as the daily
tables of the scan report them). Three tools (the onset date itself is estimated in
:mod:`screening.onset.changepoint`):

* :func:`find_episodes` cuts the per-piece NPSHa/NPSH3 ratio of the calculator into stretches
  spent below guidance, with hysteresis (a lower threshold to enter, a higher one to leave), so
  a ratio wobbling around one threshold does not make dozens of one-minute episodes.
* :func:`cumulative_exposure` adds running totals to the daily hours below NPSH3 and below
  guidance.
* :func:`exposure_before` sums the hours below NPSH3 and below guidance over fixed spans before
  a failure date and over the same spans one year earlier, for comparison.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

NS_PER_HOUR = 3_600_000_000_000

EPISODE_COLUMNS = ["start", "end", "duration_h", "exposure_h", "worst_ratio", "worst_time"]
DAILY_COLUMNS = ["date", "below_npsh3_h", "below_guidance_h"]


# --------------------------------------------------------------------------------- episodes


def _check_nonnegative(name: str, value: float) -> None:
    if not (isinstance(value, int | float) and math.isfinite(value) and value >= 0):
        raise ValueError(f"{name} must be a finite number >= 0, got {value!r}")


def find_episodes(
    time_ns: np.ndarray,
    hours: np.ndarray,
    ratio: np.ndarray,
    enter_below: float,
    leave_above: float,
    min_duration_h: float = 0.5,
    bridge_gap_h: float = 1.0,
) -> pd.DataFrame:
    """Stretches of time with the NPSHa/NPSH3 ratio below guidance, with hysteresis.

    Parameters
    ----------
    time_ns : array of int64
        Start of each piece [ns since the Unix epoch, UTC], sorted (non-decreasing).
    hours : array of float
        Fresh duration of each piece [h], >= 0.
    ratio : array of float
        NPSHa/NPSH3 of each piece [-]; NaN when the pump is stopped or the value is unknown.
    enter_below : float
        An episode starts at the first piece whose ratio is below this [-] (strictly).
    leave_above : float
        A running episode ends at the first piece whose ratio is above this [-] (strictly);
        must be greater than ``enter_below``. Pieces between the two thresholds keep the
        current state: inside an episode they extend it, outside they do not start one.
    min_duration_h : float
        Episodes with less exposure than this [h] are dropped (after bridging).
    bridge_gap_h : float
        Consecutive episodes whose gap (next start minus previous end) is shorter than this
        [h] are merged into one. A stretch without a ratio (pump stopped, no data) inside an
        episode is bridged the same way: shorter than this, the episode runs on through it;
        this long or longer, the episode ends where the stretch began.

    Returns
    -------
    pandas.DataFrame
        One row per episode, columns:

        * ``start``: start of the piece that entered [UTC Timestamp];
        * ``end``: start of the piece that left; or, where the episode ends in a long stretch
          without a ratio or at the end of the data, the end (start plus fresh hours) of its
          last piece with a ratio [UTC Timestamp];
        * ``duration_h``: end - start [h];
        * ``exposure_h``: summed fresh hours of the pieces inside with a ratio below
          ``enter_below`` [h]. Pieces with a NaN ratio (stopped, no data) never start an
          episode and are not counted; pieces between the thresholds are not counted either
          (they are in the episode but not below guidance);
        * ``worst_ratio``: lowest ratio inside [-] and ``worst_time`` the start of the first
          piece with it [UTC Timestamp].

    Raises
    ------
    ValueError
        On arrays of different lengths, unsorted times, negative or non-finite hours,
        ``leave_above <= enter_below`` or negative durations.
    """
    t, h, r = _checked_arrays(time_ns, hours, ratio)
    _check_thresholds(enter_below, leave_above, min_duration_h, bridge_gap_h)
    gap_ns = bridge_gap_h * NS_PER_HOUR
    raw = _raw_episodes(t, h, r, enter_below, leave_above, gap_ns)
    return _episode_table(_bridged(raw, gap_ns, min_duration_h))


def _checked_arrays(
    time_ns: np.ndarray, hours: np.ndarray, ratio: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The pieces' start [ns], fresh hours [h] and ratio [-] as checked arrays."""
    t = np.asarray(time_ns)
    h = np.asarray(hours, dtype=np.float64)
    r = np.asarray(ratio, dtype=np.float64)
    if t.ndim != 1 or h.ndim != 1 or r.ndim != 1:
        raise ValueError("time_ns, hours and ratio must be one-dimensional arrays")
    if not (len(t) == len(h) == len(r)):
        raise ValueError(
            f"time_ns, hours and ratio must have the same length, got {len(t)}, {len(h)}, {len(r)}"
        )
    if len(t) and not np.issubdtype(t.dtype, np.integer):
        raise ValueError(f"time_ns must hold integer nanoseconds, got dtype {t.dtype}")
    t = t.astype(np.int64)
    if np.any(np.diff(t) < 0):
        raise ValueError("time_ns must be sorted in increasing order")
    if np.any(~np.isfinite(h)) or np.any(h < 0):
        raise ValueError("hours must be finite and >= 0 for every piece")
    return t, h, r


def _check_thresholds(
    enter_below: float, leave_above: float, min_duration_h: float, bridge_gap_h: float
) -> None:
    """Check the hysteresis thresholds [-] and the shortest episode and gap [h]."""
    for name, value in (("enter_below", enter_below), ("leave_above", leave_above)):
        if not (isinstance(value, int | float) and math.isfinite(value)):
            raise ValueError(f"{name} must be a finite number, got {value!r}")
    if not leave_above > enter_below:
        raise ValueError(
            f"leave_above ({leave_above}) must be greater than enter_below ({enter_below})"
        )
    _check_nonnegative("min_duration_h", min_duration_h)
    _check_nonnegative("bridge_gap_h", bridge_gap_h)


def _raw_episodes(
    t: np.ndarray,
    h: np.ndarray,
    r: np.ndarray,
    enter_below: float,
    leave_above: float,
    gap_ns: float,
) -> list[list[Any]]:
    """Episodes of the hysteresis state machine (starts [ns], hours [h], ratios [-], gap [ns])."""
    stream = EpisodeStream(enter_below, leave_above, gap_ns)
    stream.feed(t, h, r)
    return stream.close()


class EpisodeStream:
    """The hysteresis state machine of :func:`find_episodes` fed piece by piece in time order,
    in as many parts as wanted (a pump screened in time chunks): the episodes are those of one
    pass over all the pieces."""

    def __init__(self, enter_below: float, leave_above: float, gap_ns: float):
        self.enter, self.leave, self.gap_ns = enter_below, leave_above, gap_ns
        # Raw episodes as [first piece, end time in ns) with the hysteresis state machine.
        self.raw: list[list[Any]] = []  # [start_ns, end_ns, exposure_h, worst_ratio, worst_ns]
        self.current: list[Any] | None = None
        self.known_end = 0  # end of the current episode's last piece with a ratio [ns]

    def feed(self, t: np.ndarray, h: np.ndarray, r: np.ndarray) -> None:
        """The next pieces: starts [ns], fresh hours [h], ratios [-] (NaN: no ratio)."""
        enters = np.flatnonzero(r < self.enter)  # outside an episode only these matter
        i, n = 0, len(t)
        while i < n:
            if self.current is None:
                k = int(np.searchsorted(enters, i))
                if k == len(enters):
                    break
                i = int(enters[k])  # outside an episode, no other piece changes anything
            self._step(int(t[i]), float(h[i]), float(r[i]))
            i += 1

    def _step(self, ti: int, hi: float, ri: float) -> None:
        if math.isnan(ri):
            return
        current = self.current
        gap = ti - self.known_end
        if current is not None and gap > 0 and gap >= self.gap_ns:
            current[1] = self.known_end  # a long stop or data gap ends the episode
            self.raw.append(current)
            current = None
        if current is None:
            if ri < self.enter:
                current = [ti, None, hi, ri, ti]
        elif ri > self.leave:
            current[1] = ti
            self.raw.append(current)
            current = None
        else:
            if ri < self.enter:
                current[2] += hi
            if ri < current[3]:
                current[3], current[4] = ri, ti
        self.current = current
        self.known_end = ti + int(round(hi * NS_PER_HOUR))

    def close(self) -> list[list[Any]]:
        """The raw episodes, the one still going on ended at its last piece with a ratio."""
        if self.current is not None:
            self.current[1] = self.known_end
            self.raw.append(self.current)
            self.current = None
        return self.raw

    def table(self, min_duration_h: float, bridge_gap_h: float) -> pd.DataFrame:
        """The episodes (:func:`find_episodes`' table) after the last part."""
        return _episode_table(_bridged(self.close(), bridge_gap_h * NS_PER_HOUR, min_duration_h))


def _bridged(raw: list[list[Any]], gap_ns: float, min_duration_h: float) -> list[list[Any]]:
    """Episodes bridged over gaps under ``gap_ns`` [ns], kept from ``min_duration_h`` [h]."""
    # Bridge short gaps, then drop episodes with too little exposure.
    merged: list[list[Any]] = []
    for ep in raw:
        if merged and ep[0] - merged[-1][1] < gap_ns:
            prev = merged[-1]
            prev[1] = max(prev[1], ep[1])
            prev[2] += ep[2]
            if ep[3] < prev[3]:
                prev[3], prev[4] = ep[3], ep[4]
        else:
            merged.append(list(ep))
    return [ep for ep in merged if ep[2] >= min_duration_h]


def _episode_table(kept: list[list[Any]]) -> pd.DataFrame:
    """The episodes as a table with the columns of :data:`EPISODE_COLUMNS`."""
    start = np.array([ep[0] for ep in kept], dtype=np.int64)
    end = np.array([ep[1] for ep in kept], dtype=np.int64)
    return pd.DataFrame(
        {
            "start": pd.to_datetime(start, unit="ns", utc=True),
            "end": pd.to_datetime(end, unit="ns", utc=True),
            "duration_h": (end - start) / NS_PER_HOUR,
            "exposure_h": np.array([ep[2] for ep in kept], dtype=np.float64),
            "worst_ratio": np.array([ep[3] for ep in kept], dtype=np.float64),
            "worst_time": pd.to_datetime(
                np.array([ep[4] for ep in kept], dtype=np.int64), unit="ns", utc=True
            ),
        },
        columns=EPISODE_COLUMNS,
    )


# ------------------------------------------------------------------------------ daily tables


def _day_index(values: Any) -> pd.DatetimeIndex:
    """Calendar days (naive, midnight) from dates, strings or Timestamps; tz is dropped."""
    idx = pd.DatetimeIndex(pd.to_datetime(values))
    if idx.tz is not None:
        idx = idx.tz_localize(None)
    return idx.normalize()


def _check_daily(daily: pd.DataFrame) -> pd.DataFrame:
    missing = [c for c in DAILY_COLUMNS if c not in daily.columns]
    if missing:
        raise ValueError(f"daily table is missing column(s): {', '.join(missing)}")
    out = daily.copy()
    out["date"] = _day_index(out["date"])
    if out["date"].duplicated().any():
        raise ValueError("daily table has more than one row for a date")
    return out.sort_values("date", kind="stable").reset_index(drop=True)


def cumulative_exposure(daily: pd.DataFrame) -> pd.DataFrame:
    """Add running totals of the daily hours below NPSH3 and below guidance.

    Parameters
    ----------
    daily : pandas.DataFrame
        Columns ``date`` (calendar day), ``below_npsh3_h`` and ``below_guidance_h`` [h per
        day]; other columns are kept. One row per date.

    Returns
    -------
    pandas.DataFrame
        A copy sorted by date with ``cum_below_npsh3_h`` and ``cum_below_guidance_h`` [h]:
        the hours up to and including each day. A missing (NaN) day adds nothing.
    """
    out = _check_daily(daily)
    for col in ("below_npsh3_h", "below_guidance_h"):
        out[f"cum_{col}"] = out[col].astype(np.float64).fillna(0.0).cumsum()
    return out


def exposure_before(
    daily: pd.DataFrame,
    failed_on: Any,
    spans: Sequence[int] = (30, 90, 180),
) -> pd.DataFrame:
    """Hours below NPSH3 and below guidance in the days before a failure, and a year earlier.

    For a span of N days the window is the N calendar days before ``failed_on``, not including
    the failure day itself: [failed_on - N days, failed_on). The comparison window is the same
    span ending on the same calendar date one year earlier (``pandas.DateOffset(years=1)``, so
    29 February falls back to 28 February).

    Parameters
    ----------
    daily : pandas.DataFrame
        Columns ``date``, ``below_npsh3_h`` and ``below_guidance_h`` [h per day].
    failed_on : date-like
        The failure date (a time of day is ignored).
    spans : sequence of int
        Window lengths [days], each >= 1.

    Returns
    -------
    pandas.DataFrame
        One row per span: ``span_days``, ``window_start``, ``window_end`` (exclusive),
        ``below_npsh3_h``, ``below_guidance_h`` [h], and the same for the year-earlier window
        with the prefix ``prior_``. A sum is NaN when any day of its window has no row or a
        NaN value (the data don't reach), so a short history never looks like a quiet one.
    """
    table = _check_daily(daily).set_index("date")
    failed = _day_index([failed_on])[0]
    spans = list(spans)
    for n in spans:
        if isinstance(n, bool) or not isinstance(n, int | np.integer) or n < 1:
            raise ValueError(f"spans must be whole numbers of days >= 1, got {n!r}")

    def window_sums(end: pd.Timestamp, n: int) -> tuple[pd.Timestamp, float, float]:
        start = end - pd.Timedelta(days=n)
        days = pd.date_range(start, end - pd.Timedelta(days=1), freq="D")
        part = table.reindex(days)[["below_npsh3_h", "below_guidance_h"]].astype(np.float64)
        sums = [float(part[c].sum()) if part[c].notna().all() else math.nan for c in part]
        return start, sums[0], sums[1]

    prior_end = failed - pd.DateOffset(years=1)
    rows = []
    for n in spans:
        start, npsh3, guide = window_sums(failed, n)
        p_start, p_npsh3, p_guide = window_sums(prior_end, n)
        rows.append(
            {
                "span_days": int(n),
                "window_start": start,
                "window_end": failed,
                "below_npsh3_h": npsh3,
                "below_guidance_h": guide,
                "prior_window_start": p_start,
                "prior_window_end": prior_end,
                "prior_below_npsh3_h": p_npsh3,
                "prior_below_guidance_h": p_guide,
            }
        )
    return pd.DataFrame(rows)
