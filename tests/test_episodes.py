"""Episodes below guidance, exposure totals and the change-point onset, on invented data.

Every expected number is worked out by hand beside the check, or computed here by a method
independent of screening.episodes (a brute-force least-squares split).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from screening.episodes import (
    cumulative_exposure,
    estimate_onset,
    exposure_before,
    find_episodes,
)

T0 = pd.Timestamp("2026-03-01", tz="UTC")
HOUR = pd.Timedelta(hours=1)
NS_PER_HOUR = 3_600_000_000_000


def hourly(ratio, hours=None):
    """Pieces starting every hour from T0; fresh for the whole hour unless given."""
    ratio = np.asarray(ratio, dtype=float)
    time_ns = T0.value + np.arange(len(ratio), dtype=np.int64) * NS_PER_HOUR
    hours = np.ones(len(ratio)) if hours is None else np.asarray(hours, dtype=float)
    return time_ns, hours, ratio


# ------------------------------------------------------------------------------- episodes


def test_hysteresis_wobble_between_thresholds_is_one_episode():
    # enter below 1.3, leave above 1.5. Piece 2 drops to 1.2 (enter); pieces 3-6 wobble
    # between 1.25 and 1.45, never above 1.5; piece 7 rises to 1.6 (leave).
    ratio = [2.0, 2.0, 1.2, 1.4, 1.25, 1.45, 1.4, 1.6, 2.0]
    eps = find_episodes(*hourly(ratio), enter_below=1.3, leave_above=1.5)
    assert len(eps) == 1
    ep = eps.iloc[0]
    assert ep["start"] == T0 + 2 * HOUR  # start of the piece that entered
    assert ep["end"] == T0 + 7 * HOUR  # start of the piece that left
    assert ep["duration_h"] == pytest.approx(5.0)  # 7 h - 2 h
    assert ep["exposure_h"] == pytest.approx(2.0)  # only pieces 2 (1.2) and 4 (1.25) < 1.3
    assert ep["worst_ratio"] == pytest.approx(1.2)
    assert ep["worst_time"] == T0 + 2 * HOUR


def test_without_hysteresis_the_same_wobble_splits():
    # Contrast for the test above: with leave just over enter (1.31), 1.4 at piece 3 and 1.45
    # at piece 5 end episodes, so the wobble makes two episodes (no bridging, no minimum).
    ratio = [2.0, 2.0, 1.2, 1.4, 1.25, 1.45, 1.4, 1.6, 2.0]
    eps = find_episodes(
        *hourly(ratio), enter_below=1.3, leave_above=1.31, min_duration_h=0.0, bridge_gap_h=0.0
    )
    assert list(eps["start"]) == [T0 + 2 * HOUR, T0 + 4 * HOUR]
    assert list(eps["end"]) == [T0 + 3 * HOUR, T0 + 5 * HOUR]


def test_bridging_merges_a_short_gap_but_not_a_long_one():
    # Episodes A = pieces 1-2 (ends at 3 h), B = pieces 4-5 (ends at 6 h), C = pieces 10-11.
    # Gap A->B = 4 h - 3 h = 1 h < 1.5 h: merged. Gap B->C = 10 h - 6 h = 4 h: kept apart.
    ratio = [2, 1.0, 1.0, 2, 1.0, 1.0, 2, 2, 2, 2, 1.0, 1.0, 2]
    eps = find_episodes(*hourly(ratio), enter_below=1.3, leave_above=1.5, bridge_gap_h=1.5)
    assert list(eps["start"]) == [T0 + 1 * HOUR, T0 + 10 * HOUR]
    assert list(eps["end"]) == [T0 + 6 * HOUR, T0 + 12 * HOUR]
    # The merged episode spans 5 h but only pieces 1, 2, 4, 5 were below: 4 h exposure.
    assert list(eps["duration_h"]) == pytest.approx([5.0, 2.0])
    assert list(eps["exposure_h"]) == pytest.approx([4.0, 2.0])
    # Without bridging the three stay separate.
    eps0 = find_episodes(*hourly(ratio), enter_below=1.3, leave_above=1.5, bridge_gap_h=0.0)
    assert len(eps0) == 3


def test_min_duration_drops_a_short_blip():
    # Piece 1 is below guidance but fresh for only 0.25 h: exposure 0.25 h < 0.5 h default.
    time_ns, hours, ratio = hourly([2.0, 1.0, 2.0, 2.0], hours=[1.0, 0.25, 1.0, 1.0])
    assert find_episodes(time_ns, hours, ratio, 1.3, 1.5).empty
    # With a lower minimum it is kept; exposure counts fresh hours, duration clock hours.
    eps = find_episodes(time_ns, hours, ratio, 1.3, 1.5, min_duration_h=0.2)
    assert eps["exposure_h"].tolist() == pytest.approx([0.25])
    assert eps["duration_h"].tolist() == pytest.approx([1.0])


def test_nan_pieces_neither_start_nor_end_and_are_not_exposure():
    # Pieces 2-3 are NaN (pump stopped) inside an episode: it runs on from 1 h to 5 h, but
    # only pieces 1 and 4 count as exposure.
    eps = find_episodes(*hourly([2.0, 1.0, np.nan, np.nan, 1.0, 2.0]), 1.3, 1.5)
    assert len(eps) == 1
    assert eps.iloc[0]["start"] == T0 + HOUR
    assert eps.iloc[0]["end"] == T0 + 5 * HOUR
    assert eps.iloc[0]["duration_h"] == pytest.approx(4.0)
    assert eps.iloc[0]["exposure_h"] == pytest.approx(2.0)
    # A NaN alone does not start one.
    assert find_episodes(*hourly([2.0, np.nan, np.nan, 2.0]), 1.3, 1.5).empty


def test_episode_running_at_the_end_closes_with_the_last_piece():
    # Data end inside the episode: end = start of last piece (2 h) + its fresh hours (0.5 h).
    eps = find_episodes(*hourly([2.0, 1.0, 1.0], hours=[1, 1, 0.5]), 1.3, 1.5)
    assert eps.iloc[0]["end"] == T0 + 2.5 * HOUR
    assert eps.iloc[0]["exposure_h"] == pytest.approx(1.5)


def test_no_pieces_gives_an_empty_table_with_the_columns():
    eps = find_episodes(np.array([], dtype=np.int64), [], [], 1.3, 1.5)
    assert eps.empty
    assert list(eps.columns) == [
        "start",
        "end",
        "duration_h",
        "exposure_h",
        "worst_ratio",
        "worst_time",
    ]


def test_find_episodes_rejects_bad_arguments():
    args = hourly([2.0, 1.0, 2.0])
    with pytest.raises(ValueError, match="leave_above .* must be greater than enter_below"):
        find_episodes(*args, enter_below=1.5, leave_above=1.5)
    with pytest.raises(ValueError, match="min_duration_h must be a finite number >= 0"):
        find_episodes(*args, 1.3, 1.5, min_duration_h=-1.0)
    with pytest.raises(ValueError, match="bridge_gap_h must be a finite number >= 0"):
        find_episodes(*args, 1.3, 1.5, bridge_gap_h=math.nan)
    with pytest.raises(ValueError, match="same length"):
        find_episodes(args[0], args[1][:2], args[2], 1.3, 1.5)
    with pytest.raises(ValueError, match="sorted"):
        find_episodes(args[0][::-1], args[1], args[2], 1.3, 1.5)
    with pytest.raises(ValueError, match="hours must be finite and >= 0"):
        find_episodes(args[0], [1.0, -1.0, 1.0], args[2], 1.3, 1.5)


# ------------------------------------------------------------------------------ daily tables


def test_cumulative_exposure_sorts_and_adds_up():
    daily = pd.DataFrame(
        {
            "date": ["2026-01-03", "2026-01-01", "2026-01-02"],
            "below_npsh3_h": [1.0, 0.5, np.nan],
            "below_guidance_h": [4.0, 2.0, 3.0],
        }
    )
    out = cumulative_exposure(daily)
    # Sorted by date: Jan 1, 2, 3. NPSH3: 0.5, +0 (NaN adds nothing), +1 -> 0.5, 0.5, 1.5.
    assert out["cum_below_npsh3_h"].tolist() == pytest.approx([0.5, 0.5, 1.5])
    assert out["cum_below_guidance_h"].tolist() == pytest.approx([2.0, 5.0, 9.0])
    with pytest.raises(ValueError, match="missing column.*below_guidance_h"):
        cumulative_exposure(daily.drop(columns="below_guidance_h"))


@pytest.fixture
def history():
    """Daily table 2025-01-01 .. 2026-03-31: 1 h below guidance every day, below NPSH3 only on
    2025-03-15 (1.5 h), 2026-03-15 (3 h) and the failure day 2026-03-31 (100 h)."""
    dates = pd.date_range("2025-01-01", "2026-03-31", freq="D")
    npsh3 = pd.Series(0.0, index=dates)
    npsh3[pd.Timestamp("2025-03-15")] = 1.5
    npsh3[pd.Timestamp("2026-03-15")] = 3.0
    npsh3[pd.Timestamp("2026-03-31")] = 100.0
    return pd.DataFrame({"date": dates, "below_npsh3_h": npsh3.to_numpy(), "below_guidance_h": 1.0})


def test_exposure_before_hand_made_table(history):
    out = exposure_before(history, "2026-03-31").set_index("span_days")
    # 30 days: 2026-03-01 .. 03-30 (the failure day's 100 h is excluded): NPSH3 3 h, 30 days
    # x 1 h guidance. A year earlier: 2025-03-01 .. 03-30: the 1.5 h day, 30 h.
    assert out.loc[30, "window_start"] == pd.Timestamp("2026-03-01")
    assert out.loc[30, "below_npsh3_h"] == pytest.approx(3.0)
    assert out.loc[30, "below_guidance_h"] == pytest.approx(30.0)
    assert out.loc[30, "prior_window_start"] == pd.Timestamp("2025-03-01")
    assert out.loc[30, "prior_below_npsh3_h"] == pytest.approx(1.5)
    assert out.loc[30, "prior_below_guidance_h"] == pytest.approx(30.0)
    # 90 and 180 days: fully covered now; a year earlier they start 2024-12-31 and 2024-10-02,
    # before the table begins (2025-01-01), so NaN rather than a misleading small total.
    assert out.loc[90, "below_guidance_h"] == pytest.approx(90.0)
    assert out.loc[180, "below_guidance_h"] == pytest.approx(180.0)
    assert out.loc[180, "below_npsh3_h"] == pytest.approx(3.0)
    assert math.isnan(out.loc[90, "prior_below_npsh3_h"])
    assert math.isnan(out.loc[180, "prior_below_guidance_h"])


def test_exposure_before_a_missing_day_makes_the_window_unknown(history):
    # Remove 2026-02-10: inside the 90-day window (starts 2025-12-31), outside the 30-day one.
    gappy = history[history["date"] != pd.Timestamp("2026-02-10")]
    out = exposure_before(gappy, pd.Timestamp("2026-03-31 14:00"), spans=(30, 90))
    out = out.set_index("span_days")
    assert out.loc[30, "below_guidance_h"] == pytest.approx(30.0)
    assert math.isnan(out.loc[90, "below_guidance_h"])
    with pytest.raises(ValueError, match="spans must be whole numbers of days >= 1"):
        exposure_before(history, "2026-03-31", spans=(0,))


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
    # Weak step (0.3 sd) so the best split wanders; penalty 0 forces a fit every time. The
    # ruptures-based estimate must be exactly the brute-force least-squares split, and the
    # statistic n*ln(SSE0/SSE1) must match the one computed here.
    y = stepped(step=0.3, sd=1.0, state=state)
    res = estimate_onset(DAYS, y, penalty=0.0, n_bootstrap=1, min_days=5)
    k, sse1 = brute_force_split(y, 5)
    assert res["onset"] == DAYS[k]
    sse0 = float(((y - y.mean()) ** 2).sum())
    assert res["statistic"] == pytest.approx(365 * math.log(sse0 / sse1), rel=1e-9)
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
    from screening.episodes import estimate_onset, estimate_ramp_onset

    rng = np.random.default_rng(21)
    days = pd.date_range("2026-01-01", periods=365, freq="D")
    t = np.arange(365.0)
    y = 5.0 - 0.03 * np.maximum(0.0, t - 150) + rng.normal(0, 0.15, 365)
    ramp = estimate_ramp_onset(days, y)
    assert abs((ramp["onset"] - days[150]).days) <= 7
    assert ramp["slope"] == pytest.approx(-0.03, rel=0.1)
    assert ramp["sse"] < ramp["sse_step"]  # the hinge explains a drift better than a step
    step = estimate_onset(days, y)
    assert (pd.Timestamp(step["onset"]) - days[150]).days > 30  # why the hinge is needed
    # brute-force check of the hinge search: no other day fits better (least squares)
    sses = []
    for k in range(5, 360):
        x = np.column_stack([np.ones(365), np.maximum(0.0, t - t[k])])
        coef, *_ = np.linalg.lstsq(x, y, rcond=None)
        sses.append(float(np.sum((y - x @ coef) ** 2)))
    assert min(sses) == pytest.approx(ramp["sse"], rel=1e-12)
