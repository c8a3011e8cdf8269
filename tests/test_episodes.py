"""Episodes below guidance and exposure totals, on invented data.

Every expected number is worked out by hand beside the check.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from screening.onset.episodes import cumulative_exposure, exposure_before, find_episodes

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


def test_a_short_stop_is_bridged_and_nan_pieces_are_not_exposure():
    # Pieces 2-3 are NaN (pump stopped) inside an episode. With a 3 h bridge the 2 h stop is
    # bridged: one episode from 1 h to 5 h (piece 5 leaves), only pieces 1 and 4 exposure.
    eps = find_episodes(*hourly([2.0, 1.0, np.nan, np.nan, 1.0, 2.0]), 1.3, 1.5, bridge_gap_h=3)
    assert len(eps) == 1
    assert eps.iloc[0]["start"] == T0 + HOUR
    assert eps.iloc[0]["end"] == T0 + 5 * HOUR
    assert eps.iloc[0]["duration_h"] == pytest.approx(4.0)
    assert eps.iloc[0]["exposure_h"] == pytest.approx(2.0)
    # A NaN alone does not start one.
    assert find_episodes(*hourly([2.0, np.nan, np.nan, 2.0]), 1.3, 1.5).empty


def test_a_long_stop_ends_the_episode_where_it_began():
    # The same series with the default 1 h bridge: the 2 h stop (from 2 h, the end of piece 1,
    # to 4 h) ends the first episode at 2 h; piece 4 starts a second one, which piece 5 ends.
    eps = find_episodes(*hourly([2.0, 1.0, np.nan, np.nan, 1.0, 2.0]), 1.3, 1.5)
    assert eps["start"].tolist() == [T0 + HOUR, T0 + 4 * HOUR]
    assert eps["end"].tolist() == [T0 + 2 * HOUR, T0 + 5 * HOUR]
    # A pump that stops for good inside an episode (a failure): the episode ends with its
    # last running piece, not at the end of the data 10 h later.
    eps = find_episodes(*hourly([2.0, 1.0, 1.0] + [np.nan] * 10), 1.3, 1.5)
    assert eps["end"].tolist() == [T0 + 3 * HOUR]
    assert eps["duration_h"].tolist() == pytest.approx([2.0])


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
