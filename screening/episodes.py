"""When did a pump's trouble begin: episodes below guidance, exposure and a change-point onset.

Pure functions on arrays and small tables, SI units inside (hours for durations, as the daily
tables of the scan report them). Four tools:

* :func:`find_episodes` cuts the per-piece NPSHa/NPSH3 ratio of the calculator into stretches
  spent below guidance, with hysteresis (a lower threshold to enter, a higher one to leave), so
  a ratio wobbling around one threshold does not make dozens of one-minute episodes.
* :func:`cumulative_exposure` adds running totals to the daily hours below NPSH3 and below
  guidance.
* :func:`estimate_onset` finds a single change in the mean of a daily series with the
  ``ruptures`` library and gives a bootstrap interval and a confidence score for its date.
* :func:`exposure_before` sums the hours below NPSH3 and below guidance over fixed spans before
  a failure date and over the same spans one year earlier, for comparison.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd
import ruptures
from ruptures.base import BaseCost

NS_PER_HOUR = 3_600_000_000_000

EPISODE_COLUMNS = ["start", "end", "duration_h", "exposure_h", "worst_ratio", "worst_time"]
DAILY_COLUMNS = ["date", "below_npsh3_h", "below_guidance_h"]
ONSET_METHOD = "ruptures.Binseg, L2 cost, one change point (exact best single split)"


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
        [h] are merged into one.

    Returns
    -------
    pandas.DataFrame
        One row per episode, columns:

        * ``start``: start of the piece that entered [UTC Timestamp];
        * ``end``: start of the piece that left, or, if the data end inside the episode, the
          start of the last piece plus its fresh hours [UTC Timestamp];
        * ``duration_h``: end - start [h];
        * ``exposure_h``: summed fresh hours of the pieces inside with a ratio below
          ``enter_below`` [h]. Pieces with a NaN ratio (stopped, no data) neither start nor
          end an episode and are not counted; pieces between the thresholds are not
          counted either (they are in the episode but not below guidance);
        * ``worst_ratio``: lowest ratio inside [-] and ``worst_time`` the start of the first
          piece with it [UTC Timestamp].

    Raises
    ------
    ValueError
        On arrays of different lengths, unsorted times, negative or non-finite hours,
        ``leave_above <= enter_below`` or negative durations.
    """
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
    for name, value in (("enter_below", enter_below), ("leave_above", leave_above)):
        if not (isinstance(value, int | float) and math.isfinite(value)):
            raise ValueError(f"{name} must be a finite number, got {value!r}")
    if not leave_above > enter_below:
        raise ValueError(
            f"leave_above ({leave_above}) must be greater than enter_below ({enter_below})"
        )
    _check_nonnegative("min_duration_h", min_duration_h)
    _check_nonnegative("bridge_gap_h", bridge_gap_h)

    # Raw episodes as [first piece, end time in ns) with the hysteresis state machine.
    raw: list[list[Any]] = []  # [start_ns, end_ns, exposure_h, worst_ratio, worst_ns]
    current: list[Any] | None = None
    for i in range(len(t)):
        ri = r[i]
        if math.isnan(ri):
            continue
        if current is None:
            if ri < enter_below:
                current = [int(t[i]), None, float(h[i]), float(ri), int(t[i])]
        elif ri > leave_above:
            current[1] = int(t[i])
            raw.append(current)
            current = None
        else:
            if ri < enter_below:
                current[2] += float(h[i])
            if ri < current[3]:
                current[3], current[4] = float(ri), int(t[i])
    if current is not None:
        last = len(t) - 1
        current[1] = int(t[last]) + int(round(h[last] * NS_PER_HOUR))
        raw.append(current)

    # Bridge short gaps, then drop episodes with too little exposure.
    merged: list[list[Any]] = []
    gap_ns = bridge_gap_h * NS_PER_HOUR
    for ep in raw:
        if merged and ep[0] - merged[-1][1] < gap_ns:
            prev = merged[-1]
            prev[1] = max(prev[1], ep[1])
            prev[2] += ep[2]
            if ep[3] < prev[3]:
                prev[3], prev[4] = ep[3], ep[4]
        else:
            merged.append(list(ep))
    kept = [ep for ep in merged if ep[2] >= min_duration_h]

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


# ------------------------------------------------------------------------------------ onset


class _L2Cost(BaseCost):
    """L2 cost (squared deviation from the segment mean) in O(1) per segment from running sums.

    Gives the same numbers as ruptures' own ``CostL2`` (which recomputes a variance for every
    segment), only faster; the series is centred first to keep the running sums small.
    """

    model = "l2_running_sums"
    min_size = 1

    def fit(self, signal: np.ndarray) -> _L2Cost:
        y = np.asarray(signal, dtype=np.float64).ravel()
        y = y - y.mean()
        self.signal = y.reshape(-1, 1)
        self._s1 = np.concatenate(([0.0], np.cumsum(y)))
        self._s2 = np.concatenate(([0.0], np.cumsum(y * y)))
        return self

    def error(self, start: int, end: int) -> float:
        s1 = self._s1[end] - self._s1[start]
        return float(max(self._s2[end] - self._s2[start] - s1 * s1 / (end - start), 0.0))


def _single_split(y: np.ndarray, min_size: int) -> int:
    """Index k of the best single split y[:k] | y[k:] under the L2 cost, with ruptures.

    Binary segmentation (Scott & Knott 1974, Biometrics 30:507-512) stopped after one change
    point scans every admissible split, so it returns the exact least-squares split. ruptures:
    C. Truong, L. Oudre, N. Vayatis (2020), "Selective review of offline change point detection
    methods", Signal Processing 167:107299.
    """
    algo = ruptures.Binseg(custom_cost=_L2Cost(), min_size=min_size, jump=1).fit(y)
    return int(algo.predict(n_bkps=1)[0])


def _sse(y: np.ndarray) -> float:
    return float(np.sum((y - y.mean()) ** 2))


def estimate_onset(
    dates: Any,
    values: Any,
    penalty: float | None = None,
    n_bootstrap: int = 200,
    random_state: int = 0,
    min_days: int = 5,
    tolerance_days: int = 3,
) -> dict[str, Any]:
    """Date of a single change in the mean of a daily series, with a bootstrap interval.

    The series is, for example, the daily hours below guidance, or the daily median of a
    flow-normalised margin residual. Days with a NaN value are left out.

    Method
    ------
    1. Change point: the split of the series into two segments, each at least ``min_days``
       long, that minimises the summed squared deviation from the segment means (L2 cost),
       found with ``ruptures.Binseg(model="l2", jump=1)`` and ``n_bkps=1`` (see
       :func:`_single_split` for the references). The onset is the first day of the second
       segment.
    2. Is there a change at all: a BIC-type test for Gaussian noise with unknown common
       variance (Schwarz 1978, Ann. Statist. 6:461-464). With SSE0 the squared error of one
       mean and SSE1 that of the best two-segment fit, the statistic n·ln(SSE0/SSE1) is twice
       the log-likelihood ratio; the change is accepted only if it exceeds ``penalty``, by
       default 2·ln(n): one ln(n) for the extra mean and one for the change location. A
       constant series has no change. On 365 days of pure Gaussian noise this default
       reports a change about 4 % of the time (200 noise series with fixed random states: 8
       false alarms); raise ``penalty`` to be stricter.
    3. Uncertainty: residual bootstrap (Efron & Tibshirani 1993, An Introduction to the
       Bootstrap, ch. 9). The residuals around the fitted two-segment mean are resampled
       with replacement and added back to that mean; each resampled series is refitted as in
       step 1. The interval is the 5th-95th percentile of the refitted onset dates (taken as
       observed dates: lower and higher order statistics); the confidence is the share of
       refits within ``tolerance_days`` calendar days of the estimate.

    Parameters
    ----------
    dates : array-like of dates
        One calendar day per value, strictly increasing.
    values : array-like of float
        The daily series [any unit]; NaN for missing days.
    penalty : float or None
        Threshold for n·ln(SSE0/SSE1) [-]; None for the BIC default 2·ln(n).
    n_bootstrap : int
        Number of bootstrap refits (>= 1).
    random_state : int
        Fixed random state of the bootstrap, so a result can be reproduced.
    min_days : int
        Shortest segment [days of data], >= 1.
    tolerance_days : int
        Half-width of the confidence window [days].

    Returns
    -------
    dict
        ``onset`` (Timestamp or None), ``reason`` (None, or why there is no onset),
        ``mean_before``, ``mean_after`` (segment means [unit of values] or None),
        ``interval`` ((low, high) Timestamps or None), ``confidence`` ([-] or None),
        ``statistic`` and ``penalty`` (of step 2), ``n_days`` (days used) and ``method``.
    """
    days = _day_index(dates)
    y_all = np.asarray(values, dtype=np.float64).ravel()
    if len(days) != len(y_all):
        raise ValueError(
            f"dates and values must have the same length, got {len(days)} and {len(y_all)}"
        )
    if len(days) > 1 and not np.all(np.diff(days.asi8) > 0):
        raise ValueError("dates must be strictly increasing (one value per day)")
    if isinstance(n_bootstrap, bool) or not isinstance(n_bootstrap, int) or n_bootstrap < 1:
        raise ValueError(f"n_bootstrap must be a whole number >= 1, got {n_bootstrap!r}")
    if isinstance(min_days, bool) or not isinstance(min_days, int) or min_days < 1:
        raise ValueError(f"min_days must be a whole number >= 1, got {min_days!r}")
    _check_nonnegative("tolerance_days", tolerance_days)
    if penalty is not None:
        _check_nonnegative("penalty", penalty)

    keep = np.isfinite(y_all)
    y = y_all[keep]
    days = days[keep]
    n = len(y)
    pen = float(2.0 * math.log(n)) if penalty is None and n > 1 else penalty
    result: dict[str, Any] = {
        "onset": None,
        "reason": None,
        "mean_before": None,
        "mean_after": None,
        "interval": None,
        "confidence": None,
        "statistic": None,
        "penalty": pen,
        "n_days": n,
        "method": ONSET_METHOD,
    }
    if n < 2 * min_days:
        result["reason"] = f"too few days with data ({n}; need at least {2 * min_days})"
        return result

    sse0 = _sse(y)
    if sse0 == 0.0:
        result["statistic"] = 0.0
        result["reason"] = "the series is constant"
        return result
    k = _single_split(y, min_days)
    sse1 = _sse(y[:k]) + _sse(y[k:])
    stat = math.inf if sse1 == 0.0 else float(n * math.log(sse0 / sse1))
    result["statistic"] = stat
    if not stat > pen:
        result["reason"] = (
            f"no change in the mean: two segments do not beat one by the BIC-type criterion "
            f"(n*ln(SSE0/SSE1) = {stat:.2f} <= penalty {pen:.2f})"
        )
        return result

    mean_before, mean_after = float(y[:k].mean()), float(y[k:].mean())
    fitted = np.where(np.arange(n) < k, mean_before, mean_after)
    resid = y - fitted
    rng = np.random.default_rng(random_state)
    boot_k = np.empty(n_bootstrap, dtype=np.int64)
    for b in range(n_bootstrap):
        boot_k[b] = _single_split(fitted + rng.choice(resid, size=n, replace=True), min_days)
    lo = int(np.percentile(boot_k, 5, method="lower"))
    hi = int(np.percentile(boot_k, 95, method="higher"))
    offset = np.abs((days[boot_k] - days[k]) / pd.Timedelta(days=1))  # [days]
    result.update(
        onset=days[k],
        mean_before=mean_before,
        mean_after=mean_after,
        interval=(days[lo], days[hi]),
        confidence=float(np.mean(offset <= tolerance_days)),
    )
    return result


def estimate_ramp_onset(dates: Any, values: Any, min_days: int = 5) -> dict:
    """Start of a gradual decline (or rise): the best broken-stick fit of a daily series.

    Model y = a + b·max(0, t − k) for every admissible day k, fitted by least squares
    (a continuous piecewise-linear "hinge", the segmented regression of Muggeo, Statistics in
    Medicine 22 (2003) 3055-3071, solved here by exhaustive search over k). A slow drift such
    as a fouling strainer is a ramp, which a change in the mean places too late.

    Parameters
    ----------
    dates : array-like of dates
        One calendar day per value, strictly increasing.
    values : array-like of float
        The daily series (NaN days are left out).
    min_days : int
        Fewest days before the hinge.

    Returns
    -------
    dict with ``onset`` (the hinge day or None), ``slope`` [value per day] after it, ``sse``
    of the hinge fit and ``sse_step`` of the best single mean shift, for comparison.
    """
    days = _day_index(dates)
    y = np.asarray(values, dtype=np.float64)
    ok = np.isfinite(y)
    days, y = days[ok], y[ok]
    n = len(y)
    out: dict = {"onset": None, "slope": np.nan, "sse": np.nan, "sse_step": np.nan}
    if n < 2 * min_days + 2:
        return out
    t = ((days - days[0]) / pd.Timedelta(days=1)).to_numpy(dtype=np.float64)
    best = (np.inf, None, np.nan)
    for k in range(min_days, n - min_days):
        x = np.maximum(0.0, t - t[k])
        design = np.column_stack([np.ones(n), x])
        coef, *_ = np.linalg.lstsq(design, y, rcond=None)
        sse = float(np.sum((y - design @ coef) ** 2))
        if sse < best[0]:
            best = (sse, k, float(coef[1]))
    sse, k, slope = best
    step_k = _single_split(y, min_days)
    sse_step = _sse(y[:step_k]) + _sse(y[step_k:])
    out.update(onset=days[k], slope=slope, sse=sse, sse_step=sse_step)
    return out
