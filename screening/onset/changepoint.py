"""Onset dates from daily series: a change in the mean (a step) or the start of a decline (a ramp).

Pure functions of a daily series (dates and values; days without a value are left out). Both
estimators give a point date, a test of whether there is a change at all, and a
moving-block bootstrap interval with a confidence score, so a date is never reported without
its uncertainty:

* :func:`estimate_onset`: the best single split of the series into two constant means, found
  with the ``ruptures`` library (least squares);
* :func:`estimate_ramp_onset`: the best broken-stick fit, flat then a straight decline (or
  rise); a slow drift such as a fouling strainer is a ramp, which a change in the mean places
  too late.

Uncertainty (both): the residuals around the fitted model are resampled in blocks of
consecutive days (moving-block bootstrap, H. R. Künsch (1989), "The jackknife and the bootstrap
for general stationary observations", Ann. Statist. 17:1217-1241), added back to the fitted
model and refitted. Blocks keep the day-to-day correlation of plant data (weather, campaigns,
a ramp that is not quite straight), which resampling single days would break, giving intervals
far too narrow. The block length defaults to the cube root of the number of days (the order
of magnitude of Hall, Horowitz & Jing (1995), Biometrika 82:561-574).
"""

from __future__ import annotations

import functools
import math
from typing import Any

import numpy as np
import pandas as pd

from screening.onset import dependence as dep

ONSET_METHOD = (
    "ruptures.Binseg, L2 cost, one change point (exact best single split); BIC-type test with "
    "AR(1) errors; moving-block bootstrap interval"
)
RAMP_METHOD = (
    "broken-stick least squares (exhaustive search of the hinge day); BIC-type test with AR(1) "
    "errors; moving-block bootstrap interval"
)


def _day_index(values: Any) -> pd.DatetimeIndex:
    """Calendar days (naive, midnight) from dates, strings or Timestamps; tz is dropped."""
    idx = pd.DatetimeIndex(pd.to_datetime(values))
    if idx.tz is not None:
        idx = idx.tz_localize(None)
    return idx.normalize()


def _whole(name: str, value: Any, least: int) -> None:
    if isinstance(value, bool) or not isinstance(value, int | np.integer) or value < least:
        raise ValueError(f"{name} must be a whole number >= {least}, got {value!r}")


def _nonnegative(name: str, value: Any) -> None:
    if not (isinstance(value, int | float) and math.isfinite(value) and value >= 0):
        raise ValueError(f"{name} must be a finite number >= 0, got {value!r}")


def _prepare(dates: Any, values: Any, args: dict[str, Any]) -> tuple[pd.DatetimeIndex, np.ndarray]:
    """Check the common arguments; return the days and values with NaN days left out."""
    days = _day_index(dates)
    y = np.asarray(values, dtype=np.float64).ravel()
    if len(days) != len(y):
        raise ValueError(
            f"dates and values must have the same length, got {len(days)} and {len(y)}"
        )
    if len(days) > 1 and not np.all(np.diff(days.asi8) > 0):
        raise ValueError("dates must be strictly increasing (one value per day)")
    _whole("n_bootstrap", args["n_bootstrap"], 1)
    _whole("min_days", args["min_days"], 1)
    if args["block_days"] is not None:
        _whole("block_days", args["block_days"], 1)
    _nonnegative("tolerance_days", args["tolerance_days"])
    if args["penalty"] is not None:
        _nonnegative("penalty", args["penalty"])
    _nonnegative("min_change", args["min_change"])
    if args["null_draws"] != 0:
        _whole("null_draws", args["null_draws"], 19)
    keep = np.isfinite(y)
    return days[keep], y[keep]


def _start(dates, values, args: dict, fewest: int, method: str, **fields):
    """Common start of the estimators: checked data, the result skeleton (``fields`` are the
    estimator's own keys) and SSE0; SSE0 is None when the series is too short or constant
    (the skeleton then says why)."""
    days, y = _prepare(dates, values, args)
    n = len(y)
    penalty = args["penalty"]
    out: dict[str, Any] = {
        "onset": None,
        "reason": None,
        **fields,
        "interval": None,
        "confidence": None,
        "statistic": None,
        "phi_null": None,
        "phi": None,
        "penalty": float(2.0 * math.log(n)) if penalty is None and n > 1 else penalty,
        "n_days": n,
        "block_days": args["block_days"] or max(1, round(n ** (1 / 3))),
        "method": method,
    }
    if n < fewest:
        out["reason"] = f"too few days with data ({n}; need at least {fewest})"
        return days, y, out, None
    sse0 = _sse(y)
    if sse0 == 0.0:
        out["statistic"] = 0.0
        out["reason"] = "the series is constant"
        return days, y, out, None
    return days, y, out, sse0


def block_bootstrap_indices(
    n: int, block: int, n_bootstrap: int, rng: np.random.Generator
) -> np.ndarray:
    """Indices of ``n_bootstrap`` moving-block resamples of a series of length ``n``.

    Each resample strings together blocks of ``block`` consecutive indices [days] whose starts
    are drawn uniformly from 0 .. n - block, cut to length n (Künsch 1989).

    Returns
    -------
    numpy.ndarray of int, shape (n_bootstrap, n)
    """
    block = max(1, min(int(block), n))
    n_blocks = -(-n // block)
    starts = rng.integers(0, n - block + 1, size=(n_bootstrap, n_blocks))
    idx = (starts[:, :, None] + np.arange(block)[None, None, :]).reshape(n_bootstrap, -1)
    return idx[:, :n]


def _interval(days: pd.DatetimeIndex, k: int, boot_k: np.ndarray, tolerance_days: float):
    """5th-95th percentile of the refitted dates and the share within the tolerance."""
    lo = int(np.percentile(boot_k, 5, method="lower"))
    hi = int(np.percentile(boot_k, 95, method="higher"))
    offset = np.abs((days[boot_k] - days[k]) / pd.Timedelta(days=1))  # [days]
    return (days[lo], days[hi]), float(np.mean(offset <= tolerance_days))


# -------------------------------------------------------------------------- change in the mean


@functools.cache
def _l2_cost_class() -> type:
    """The L2 cost as a ruptures cost class (built on first use: ruptures and the scipy it
    imports cost half a second, which a plant scan need not pay)."""
    from ruptures.base import BaseCost

    class L2Cost(BaseCost):
        """L2 cost (squared deviation from the segment mean) in O(1) per segment from running
        sums. Gives the same numbers as ruptures' own ``CostL2`` (which recomputes a variance
        for every segment), only faster; the series is centred first to keep the sums small.
        """

        model = "l2_running_sums"
        min_size = 1

        def fit(self, signal: np.ndarray):
            y = np.asarray(signal, dtype=np.float64).ravel()
            y = y - y.mean()
            self.signal = y.reshape(-1, 1)
            self._s1 = np.concatenate(([0.0], np.cumsum(y)))
            self._s2 = np.concatenate(([0.0], np.cumsum(y * y)))
            return self

        def error(self, start: int, end: int) -> float:
            s1 = self._s1[end] - self._s1[start]
            return float(max(self._s2[end] - self._s2[start] - s1 * s1 / (end - start), 0.0))

    return L2Cost


def _single_split(y: np.ndarray, min_size: int) -> int:
    """Index k of the best single split y[:k] | y[k:] under the L2 cost, with ruptures.

    Binary segmentation (Scott & Knott 1974, Biometrics 30:507-512) stopped after one change
    point scans every admissible split, so it returns the exact least-squares split. ruptures:
    C. Truong, L. Oudre, N. Vayatis (2020), "Selective review of offline change point detection
    methods", Signal Processing 167:107299.
    """
    import ruptures

    algo = ruptures.Binseg(custom_cost=_l2_cost_class()(), min_size=min_size, jump=1).fit(y)
    return int(algo.predict(n_bkps=1)[0])


def _sse(y: np.ndarray) -> float:
    return float(np.sum((y - y.mean()) ** 2))


def _dependent_test(y, x, out: dict, random_state, null_draws: int):
    """The AR(1) likelihood statistic of the change model ``x`` against one mean (into
    ``out``: ``statistic``, ``phi_null``, ``phi``), and where it beats the penalty the Monte
    Carlo p-value against simulated correlated noise (else None); see
    :mod:`screening.onset.dependence`."""
    stat, out["phi_null"], out["phi"] = dep.ar1_statistic(y, x)
    out["statistic"] = stat
    if not (stat > out["penalty"] and null_draws):
        return stat, None
    rng = dep.null_rng(random_state, y)
    return stat, dep.monte_carlo_p(stat, out["phi_null"], x, rng, null_draws)


def estimate_onset(
    dates: Any,
    values: Any,
    penalty: float | None = None,
    n_bootstrap: int = 200,
    random_state: int = 0,
    min_days: int = 5,
    tolerance_days: int = 3,
    block_days: int | None = None,
    min_change: float = 0.0,
    null_draws: int = dep.MC_DRAWS,
) -> dict[str, Any]:
    """Date of a single change in the mean of a daily series, with a bootstrap interval.

    The series is, for example, the daily hours below guidance, or the daily median of a
    flow-normalised margin residual. Days with a NaN value are left out.

    Method
    ------
    1. Change point: the split of the series into two segments, each at least ``min_days``
       long, that minimises the summed squared deviation from the segment means (L2 cost),
       found with ``ruptures.Binseg`` and ``n_bkps=1`` (see :func:`_single_split` for the
       references). The onset is the first day of the second segment.
    2. Is there a change at all: a BIC-type test (Schwarz 1978, Ann. Statist. 6:461-464) for
       Gaussian noise whose days depend on each other as an AR(1) process (see
       :mod:`screening.onset.dependence`: one mean, and a step at each admissible day, each
       fitted with AR(1) errors; Beaulieu & Killick 2018). The statistic is
       (n − 1)·ln(σ̂0²/σ̂1²), σ̂² the innovations' variance of one mean and of the best step;
       the change is accepted only if it exceeds ``penalty``, by default 2·ln(n): one ln(n)
       for the extra mean and one for the change location. For independent days (φ = 0) it
       is the old n·ln(SSE0/SSE1). A constant series has no change. False-alarm rates on
       AR(1) noise with lag-one correlation 0, 0.5 and 0.8 are measured by
       ``benchmarks/bench_onset_false_alarms.py`` (figures in the README). A daily median of
       many samples is so precise that a change of millimetres passes the test: a change
       smaller than ``min_change`` (in the series' unit) is not reported either.
    3. Uncertainty: moving-block bootstrap of the residuals around the two-segment fit (see
       the module docstring); each resampled series is refitted as in step 1. The interval is
       the 5th-95th percentile of the refitted onset dates (taken as observed dates: lower and
       higher order statistics); the confidence is the share of refits within
       ``tolerance_days`` calendar days of the estimate.

    Parameters
    ----------
    dates : array-like of dates
        One calendar day per value, strictly increasing.
    values : array-like of float
        The daily series [any unit]; NaN for missing days.
    penalty : float or None
        Threshold for the statistic of step 2 [-]; None for the BIC default 2·ln(n).
    n_bootstrap : int
        Number of bootstrap refits (>= 1).
    random_state : int
        Fixed random state of the bootstrap, so a result can be reproduced.
    min_days : int
        Shortest segment [days of data], >= 1.
    tolerance_days : int
        Half-width of the confidence window [days].
    block_days : int or None
        Bootstrap block length [days of data]; None for round(n^(1/3)).
    min_change : float
        Smallest change of the mean worth reporting [unit of values], >= 0.
    null_draws : int
        Simulated AR(1) series of the Monte Carlo check of step 2 (19: a 5 % test); 0 leaves
        the check out (the penalty alone decides).

    Returns
    -------
    dict
        ``onset`` (Timestamp or None), ``reason`` (None, or why there is no onset),
        ``mean_before``, ``mean_after`` (segment means [unit of values] or None),
        ``interval`` ((low, high) Timestamps or None), ``confidence`` ([-] or None),
        ``statistic`` and ``penalty`` (of step 2), ``phi_null`` and ``phi`` (the lag-one
        coefficients of the one-mean and of the best-step fit [-]), ``n_days`` (days used),
        ``block_days`` and ``method``.
    """
    days, y, result, sse0 = _start(dates, values, locals(), 2 * min_days, ONSET_METHOD,
                                   mean_before=None, mean_after=None)  # fmt: skip
    if sse0 is None:
        return result
    n, pen = len(y), result["penalty"]
    k = _single_split(y, min_days)
    ks = np.arange(min_days, n - min_days + 1)
    x = dep.step_regressors(n, ks)
    stat, p = _dependent_test(y, x, result, random_state, null_draws)
    if p is not None and p > 0.05:
        result["reason"] = (
            f"no change in the mean: the step is no larger than those of simulated correlated "
            f"noise (Monte Carlo p = {p:.2f}; lag-one correlation {result['phi_null']:.2f})"
        )
        return result
    if not stat > pen:
        result["reason"] = (
            f"no change in the mean: with days correlated from one to the next, two segments "
            f"do not beat one by the BIC-type criterion (statistic {stat:.2f} <= penalty "
            f"{pen:.2f}; lag-one correlation {result['phi_null']:.2f})"
        )
        return result

    mean_before, mean_after = float(y[:k].mean()), float(y[k:].mean())
    if abs(mean_after - mean_before) < min_change:
        result["reason"] = (
            f"the change of the mean ({mean_after - mean_before:+.3g}) is smaller than the "
            f"smallest change worth reporting ({min_change:g})"
        )
        return result
    fitted = np.where(np.arange(n) < k, mean_before, mean_after)
    resid = y - fitted
    idx = block_bootstrap_indices(
        n, result["block_days"], n_bootstrap, np.random.default_rng(random_state)
    )
    boot_k = np.array([_single_split(fitted + resid[i], min_days) for i in idx], dtype=np.int64)
    interval, confidence = _interval(days, k, boot_k, tolerance_days)
    result.update(
        onset=days[k],
        mean_before=mean_before,
        mean_after=mean_after,
        interval=interval,
        confidence=confidence,
    )
    return result


# ---------------------------------------------------------------------- start of a decline


def _hinge_fits(t: np.ndarray, ys: np.ndarray, ks: np.ndarray):
    """Least-squares broken-stick fits y = a + b·max(0, t − t_k) for every hinge k at once.

    For a fixed hinge the model is a straight line in x = max(0, t − t_k), whose least-squares
    slope is Sxy/Sxx and squared error Syy − Sxy²/Sxx (simple linear regression). ``ys`` has
    shape (m, n): m series fitted together. Returns SSE, slope and intercept, each (m, K).
    """
    x = np.maximum(0.0, t[:, None] - t[ks][None, :])  # (n, K)
    xbar = x.mean(axis=0)
    xc = x - xbar
    sxx = np.einsum("ij,ij->j", xc, xc)
    yc = ys - ys.mean(axis=1, keepdims=True)
    sxy = yc @ xc  # (m, K)
    syy = np.einsum("ij,ij->i", yc, yc)[:, None]
    slope = sxy / sxx
    sse = np.maximum(syy - sxy * slope, 0.0)
    intercept = ys.mean(axis=1, keepdims=True) - slope * xbar
    return sse, slope, intercept


def estimate_ramp_onset(
    dates: Any,
    values: Any,
    penalty: float | None = None,
    n_bootstrap: int = 200,
    random_state: int = 0,
    min_days: int = 5,
    tolerance_days: int = 7,
    block_days: int | None = None,
    min_change: float = 0.0,
    null_draws: int = dep.MC_DRAWS,
) -> dict[str, Any]:
    """Start of a gradual decline (or rise): the best broken-stick fit of a daily series.

    Method
    ------
    1. Model y = a + b·max(0, t − t_k) with t in days: flat, then a straight line from the
       hinge day t_k on (a continuous piecewise-linear "hinge", the segmented regression of
       V. M. R. Muggeo (2003), Statistics in Medicine 22:3055-3071), solved exactly by
       least squares at every admissible hinge (at least ``min_days`` days of data on each
       side) and keeping the best.
    2. Is there a ramp at all: the BIC-type test with AR(1) errors of :func:`estimate_onset`
       with the hinge fits in place of the steps (two extra parameters, slope and hinge:
       penalty 2·ln(n)).
    3. Uncertainty: moving-block bootstrap of the residuals around the hinge fit, refitted as
       in step 1; interval and confidence as in :func:`estimate_onset`. A ramp's start is
       less sharp than a step, hence the wider default tolerance. A ramp whose total change
       (slope times the days from the hinge to the last day) is smaller than ``min_change``
       is not reported.

    Parameters
    ----------
    dates : array-like of dates
        One calendar day per value, strictly increasing.
    values : array-like of float
        The daily series [any unit]; NaN days are left out.
    penalty : float or None
        Threshold for the statistic of step 2 [-]; None for 2·ln(n).
    n_bootstrap : int
        Number of bootstrap refits (>= 1).
    random_state : int
        Fixed random state of the bootstrap.
    min_days : int
        Fewest days of data on each side of the hinge.
    tolerance_days : int
        Half-width of the confidence window [days].
    block_days : int or None
        Bootstrap block length [days of data]; None for round(n^(1/3)).
    min_change : float
        Smallest total change along the ramp worth reporting [unit of values], >= 0.
    null_draws : int
        Simulated AR(1) series of the Monte Carlo check (see :func:`estimate_onset`).

    Returns
    -------
    dict
        ``onset`` (the hinge day, or None with a ``reason``), ``slope`` [unit of values per
        day] after it, ``intercept`` (the level before it), ``sse`` of the hinge fit and
        ``sse_step`` of the best single mean shift (for comparison), ``interval``,
        ``confidence``, ``statistic``, ``penalty``, ``phi_null``, ``phi``, ``n_days``,
        ``block_days`` and ``method``.
    """
    days, y, out, sse0 = _start(
        dates, values, locals(), 2 * min_days + 2, RAMP_METHOD, slope=math.nan,
        intercept=math.nan, sse=math.nan, sse_step=math.nan,
    )  # fmt: skip
    if sse0 is None:
        return out
    n, pen = len(y), out["penalty"]
    t = ((days - days[0]) / pd.Timedelta(days=1)).to_numpy(dtype=np.float64)
    ks = np.arange(min_days, n - min_days)
    sse, slope, intercept = _hinge_fits(t, y[None, :], ks)
    j = int(np.argmin(sse[0]))
    k = int(ks[j])
    step_k = _single_split(y, min_days)
    out.update(
        slope=float(slope[0, j]),
        intercept=float(intercept[0, j]),
        sse=float(sse[0, j]),
        sse_step=_sse(y[:step_k]) + _sse(y[step_k:]),
    )
    x = dep.hinge_regressors(t, ks)
    stat, p = _dependent_test(y, x, out, random_state, null_draws)
    if p is not None and p > 0.05:
        out["reason"] = (
            f"no ramp: the broken stick is no better than on simulated correlated noise "
            f"(Monte Carlo p = {p:.2f}; lag-one correlation {out['phi_null']:.2f})"
        )
        return out
    if not stat > pen:
        out["reason"] = (
            f"no ramp: with days correlated from one to the next, a broken stick does not "
            f"beat one mean by the BIC-type criterion (statistic {stat:.2f} <= penalty "
            f"{pen:.2f}; lag-one correlation {out['phi_null']:.2f})"
        )
        return out
    total = out["slope"] * (t[-1] - t[k])
    if abs(total) < min_change:
        out["reason"] = (
            f"the change along the ramp ({total:+.3g}) is smaller than the smallest change "
            f"worth reporting ({min_change:g})"
        )
        return out
    fitted = out["intercept"] + out["slope"] * np.maximum(0.0, t - t[k])
    resid = y - fitted
    idx = block_bootstrap_indices(
        n, out["block_days"], n_bootstrap, np.random.default_rng(random_state)
    )
    boot_sse, _, _ = _hinge_fits(t, fitted[None, :] + resid[idx], ks)
    boot_k = ks[np.argmin(boot_sse, axis=1)]
    interval, confidence = _interval(days, k, boot_k, tolerance_days)
    out.update(onset=days[k], interval=interval, confidence=confidence)
    return out
