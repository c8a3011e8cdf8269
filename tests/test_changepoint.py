"""Onset dates (a step or the start of a ramp) on invented daily series with planted changes.

The estimators are checked against methods independent of screening.changepoint: a
brute-force least-squares split and a brute-force broken-stick fit with numpy.linalg.lstsq.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from screening.onset.changepoint import block_bootstrap_indices, estimate_onset, estimate_ramp_onset

# ------------------------------------------------------------------------------------ onset

DAYS = pd.date_range("2025-01-01", periods=365, freq="D")
TRUE_ONSET = 120  # index of the first day after the step: 2025-05-01


def stepped(step: float, sd: float, state: int) -> np.ndarray:
    """Invented daily hours below guidance: 0.5 h/day, then + step from day 120."""
    rng = np.random.default_rng(state)
    return 0.5 + step * (np.arange(365) >= TRUE_ONSET) + rng.normal(0.0, sd, 365)


def brute_force_split(y: np.ndarray, min_size: int) -> tuple[int, float]:
    """Textbook single L2 change point: the split minimising the summed squared error of the
    two segment means, by trying every split. Returns (k, SSE of the best split)."""
    best_k, best = -1, math.inf
    for k in range(min_size, len(y) - min_size + 1):
        a, b = y[:k], y[k:]
        sse = float(((a - a.mean()) ** 2).sum() + ((b - b.mean()) ** 2).sum())
        if sse < best:
            best_k, best = k, sse
    return best_k, best


def test_planted_step_is_found_with_an_interval_around_it():
    # Step 3 h/day, noise sd 0.5 h/day: the step is six noise sd, so the split is sharp.
    y = stepped(step=3.0, sd=0.5, state=11)
    res = estimate_onset(DAYS, y)
    true_day = DAYS[TRUE_ONSET]
    assert abs((res["onset"] - true_day).days) <= 3
    low, high = res["interval"]
    assert low <= true_day <= high
    assert res["mean_before"] == pytest.approx(0.5, abs=0.15)  # mean of 120 noisy days
    assert res["mean_after"] == pytest.approx(3.5, abs=0.15)
    assert res["confidence"] >= 0.9  # nearly all refits land within +-3 days
    assert res["reason"] is None
    # The fixed random state makes the bootstrap reproducible.
    assert estimate_onset(DAYS, y) == res


def test_weaker_step_gets_a_wider_interval():
    # Step 0.5 h/day with noise sd 1 h/day: still detected (many days), but less sharp than
    # the clear step above; the interval must still cover the true day.
    y = stepped(step=0.5, sd=1.0, state=5)
    res = estimate_onset(DAYS, y)
    clear = estimate_onset(DAYS, stepped(step=3.0, sd=0.5, state=11))
    assert res["onset"] is not None
    low, high = res["interval"]
    assert low <= DAYS[TRUE_ONSET] <= high
    assert (high - low) > (clear["interval"][1] - clear["interval"][0])
    # ...and fewer refits land within +-3 days of the estimate than for the clear step (where
    # the interval is a few days wide at most, so the share is close to 1).
    assert res["confidence"] < clear["confidence"]


def test_no_step_gives_no_onset():
    y = stepped(step=0.0, sd=0.5, state=3)
    res = estimate_onset(DAYS, y)
    assert res["onset"] is None
    assert "BIC-type criterion" in res["reason"]
    assert res["statistic"] <= res["penalty"] == pytest.approx(2 * math.log(365))
    flat = estimate_onset(DAYS, np.full(365, 2.0))
    assert flat["onset"] is None and flat["reason"] == "the series is constant"


@pytest.mark.parametrize("state", [1, 2, 3, 4, 5])
def test_change_point_matches_brute_force_least_squares(state):
    # Weak step (0.3 sd) so the best split wanders; penalty 0 and no Monte Carlo check force a
    # fit every time. The ruptures-based estimate must be exactly the brute-force
    # least-squares split.
    y = stepped(step=0.3, sd=1.0, state=state)
    res = estimate_onset(DAYS, y, penalty=0.0, n_bootstrap=1, min_days=5, null_draws=0)
    k, sse1 = brute_force_split(y, 5)
    assert res["onset"] == DAYS[k]
    assert res["mean_before"] == pytest.approx(y[:k].mean())


def test_missing_days_are_left_out():
    # Blank every ninth day (41 days): the planted step is still found within +-3 days.
    y = stepped(step=3.0, sd=0.5, state=11)
    y[::9] = np.nan
    res = estimate_onset(DAYS, y)
    assert res["n_days"] == 365 - 41  # indices 0, 9, ..., 360: 41 days
    assert abs((res["onset"] - DAYS[TRUE_ONSET]).days) <= 3


def test_estimate_onset_rejects_bad_input_and_short_series():
    with pytest.raises(ValueError, match="same length"):
        estimate_onset(DAYS, np.zeros(10))
    with pytest.raises(ValueError, match="strictly increasing"):
        estimate_onset(DAYS[::-1], np.zeros(365))
    with pytest.raises(ValueError, match="n_bootstrap must be a whole number >= 1"):
        estimate_onset(DAYS, np.zeros(365), n_bootstrap=0)
    short = estimate_onset(DAYS[:8], np.arange(8.0))
    assert short["onset"] is None
    assert short["reason"].startswith("too few days with data (8; need at least 10)")


def test_ramp_onset_found_where_the_drift_begins():
    # invented daily series: flat, then a steady decline from day 150 of 365 (fixed random
    # state); a change in the mean would land in the middle of the decline
    rng = np.random.default_rng(21)
    days = pd.date_range("2026-01-01", periods=365, freq="D")
    t = np.arange(365.0)
    y = 5.0 - 0.03 * np.maximum(0.0, t - 150) + rng.normal(0, 0.15, 365)
    ramp = estimate_ramp_onset(days, y)
    assert abs((ramp["onset"] - days[150]).days) <= 7
    assert ramp["slope"] == pytest.approx(-0.03, rel=0.1)
    assert ramp["sse"] < ramp["sse_step"]  # the hinge explains a drift better than a step
    # the best single split lands far into the decline (why the hinge is needed); with AR(1)
    # errors a steady decline is not even taken for a step: forced here (penalty 0)
    step = estimate_onset(days, y, penalty=0.0, null_draws=0)
    assert (pd.Timestamp(step["onset"]) - days[150]).days > 30
    # brute-force check of the hinge search: no other day fits better (least squares)
    sses = []
    for k in range(5, 360):
        x = np.column_stack([np.ones(365), np.maximum(0.0, t - t[k])])
        coef, *_ = np.linalg.lstsq(x, y, rcond=None)
        sses.append(float(np.sum((y - x @ coef) ** 2)))
    assert min(sses) == pytest.approx(ramp["sse"], rel=1e-12)


def test_block_bootstrap_indices_are_runs_of_consecutive_days():
    idx = block_bootstrap_indices(20, 6, 50, np.random.default_rng(0))
    assert idx.shape == (50, 20)
    assert idx.min() >= 0 and idx.max() <= 19
    # blocks of 6 consecutive indices start at 0, 6, 12, 18 (the last one cut to 2)
    for row in idx:
        for start in (0, 6, 12):
            assert np.array_equal(np.diff(row[start : start + 6]), np.ones(5))
        assert row[19] == row[18] + 1


def _correlated_noise(n: int, phi: float, sd: float, state: int) -> np.ndarray:
    """AR(1) noise x_t = phi*x_{t-1} + e_t (stationary start), invented."""
    rng = np.random.default_rng(state)
    e = rng.normal(0.0, sd, n)
    x = np.empty(n)
    x[0] = e[0] / math.sqrt(1 - phi**2)
    for i in range(1, n):
        x[i] = phi * x[i - 1] + e[i]
    return x


def test_blocks_widen_the_interval_on_correlated_days():
    # Plant data are correlated from day to day (weather, campaigns). With AR(1) noise (phi
    # 0.8), resampling single days pretends the days are independent and gives a narrower
    # interval than blocks of 20 days, which keep the correlation (Künsch 1989).
    y = 1.0 * (np.arange(365) >= TRUE_ONSET) + _correlated_noise(365, 0.8, 0.5, state=7)
    single = estimate_onset(DAYS, y, block_days=1)
    blocks = estimate_onset(DAYS, y, block_days=20)
    assert single["onset"] == blocks["onset"]  # the point estimate does not depend on it
    width = {k: (r["interval"][1] - r["interval"][0]).days for k, r in
             (("single", single), ("blocks", blocks))}  # fmt: skip
    assert width["blocks"] > width["single"]
    assert blocks["interval"][0] <= DAYS[TRUE_ONSET] <= blocks["interval"][1]


def test_ramp_interval_covers_the_planted_start_and_no_ramp_in_noise():
    rng = np.random.default_rng(21)  # fixed random state
    days = pd.date_range("2026-01-01", periods=365, freq="D")
    t = np.arange(365.0)
    y = 5.0 - 0.03 * np.maximum(0.0, t - 150) + rng.normal(0, 0.15, 365)
    ramp = estimate_ramp_onset(days, y)
    low, high = ramp["interval"]
    assert low <= days[150] <= high
    assert (high - low).days <= 60  # a clear ramp: the start is known to within weeks
    assert 0.0 < ramp["confidence"] <= 1.0
    assert ramp["statistic"] > ramp["penalty"] == pytest.approx(2 * math.log(365))
    assert estimate_ramp_onset(days, y) == ramp  # fixed random state: reproducible
    flat = estimate_ramp_onset(days, 5.0 + rng.normal(0, 0.15, 365))
    assert flat["onset"] is None and "no ramp" in flat["reason"]
    with pytest.raises(ValueError, match="block_days must be a whole number >= 1"):
        estimate_ramp_onset(days, y, block_days=0)


def test_a_change_too_small_to_matter_is_not_an_onset():
    # Noise sd 0.002 and a step of 0.01: overwhelming by the BIC-type test, but below a
    # smallest change worth reporting of 0.3 (the plant file's default for metres of margin).
    rng = np.random.default_rng(4)
    y = 0.01 * (np.arange(365) >= TRUE_ONSET) + rng.normal(0.0, 0.002, 365)
    assert estimate_onset(DAYS, y)["onset"] == DAYS[TRUE_ONSET]
    small = estimate_onset(DAYS, y, min_change=0.3)
    assert small["onset"] is None and "smaller than the smallest change" in small["reason"]
    ramp = 0.0001 * np.maximum(0, np.arange(365) - 150) + rng.normal(0.0, 0.002, 365)
    assert estimate_ramp_onset(DAYS, ramp)["onset"] is not None
    assert estimate_ramp_onset(DAYS, ramp, min_change=0.3)["onset"] is None
