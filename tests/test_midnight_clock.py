"""Clock changes at local midnight: a day whose midnight does not exist (the clock jumps from
23:59:59 to 01:00) or exists twice (the clock is set back over it) still has one day edge, and
every hour of the window is counted, in the scan and in the onset investigation.

The zones and dates are those of the IANA time zone database shipped with Python (zoneinfo /
tzdata): America/Santiago springs forward at 24:00 on the first Saturday of September;
Atlantic/Azores at 00:00 on the last Sunday of March, and back from 01:00 to 00:00 on the last
Sunday of October (midnight occurs twice); America/Havana at 00:00 on the second Sunday of
March, and back from 01:00 to 00:00 on the first Sunday of November; Africa/Cairo at 00:00 on
the last Friday of April, and back at 24:00 on the last Thursday of October; Europe/Berlin on
1916-04-30 at 23:00.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from plantmaker import make_plant, steady_frame

import screening
from screening.inputs.window import day_edges, local_midnights

CASES = [
    ("America/Santiago", "2026-09-03", "2026-09-09"),
    ("America/Santiago", "2026-04-02", "2026-04-07"),
    ("Atlantic/Azores", "2026-03-27", "2026-04-01"),
    ("Atlantic/Azores", "2026-10-22", "2026-10-28"),
    ("America/Havana", "2026-03-06", "2026-03-11"),
    ("America/Havana", "2026-10-30", "2026-11-03"),
    ("Africa/Cairo", "2026-04-22", "2026-04-27"),
    ("Africa/Cairo", "2026-10-27", "2026-11-01"),
    ("Europe/Berlin", "1916-04-28", "1916-05-03"),
]


def _has_midnight_change(tz: str, start: str, end: str) -> bool:
    """True when some local day of the window is not 24 h long at a midnight edge."""
    dates = pd.date_range(start, end, freq="D")
    edges = local_midnights(dates, tz)
    return bool((np.diff(edges) != 86_400 * 10**9).any())


@pytest.mark.parametrize(("tz", "start", "end"), CASES)
def test_day_edges_across_a_clock_change_at_midnight(tz, start, end):
    assert _has_midnight_change(tz, start, end), "the case must cross a clock change"
    a = pd.Timestamp(start).tz_localize(tz)
    b = pd.Timestamp(end).tz_localize(tz)
    edges = day_edges(a.tz_convert("UTC"), b.tz_convert("UTC"), tz)
    days = (pd.Timestamp(end) - pd.Timestamp(start)).days
    assert len(edges) == days + 1  # one edge per local day, never two, never none
    assert edges[0] == a.value and edges[-1] == b.value
    assert (np.diff(edges) > 0).all()
    lengths = np.diff(edges) / 3.6e12
    assert set(np.round(lengths, 9)) <= {23.0, 24.0, 25.0}
    assert lengths.sum() == pytest.approx((b - a) / pd.Timedelta(hours=1), abs=1e-9)


def test_nonexistent_midnight_starts_at_the_first_instant_that_exists():
    # America/Santiago 2026-09-06: 00:00 to 00:59:59 does not exist; the day begins at 01:00
    edge = local_midnights(pd.DatetimeIndex(["2026-09-06"]), "America/Santiago")[0]
    assert pd.Timestamp(edge, tz="UTC") == pd.Timestamp("2026-09-06 01:00-03:00")


def test_repeated_midnight_starts_at_the_first_of_the_two():
    # Atlantic/Azores 2026-10-25: the clock goes back from 01:00 to 00:00, so midnight occurs
    # twice; the day begins at the first, the earlier UTC instant
    tz = "Atlantic/Azores"
    dates = pd.DatetimeIndex(["2026-10-25"])
    early = dates.tz_localize(tz, ambiguous=np.array([True])).as_unit("ns").asi8[0]
    late = dates.tz_localize(tz, ambiguous=np.array([False])).as_unit("ns").asi8[0]
    assert early < late  # the test's premise: midnight is repeated on that day
    assert local_midnights(dates, tz)[0] == early


@pytest.mark.parametrize(("tz", "start", "end"), CASES)
def test_scan_and_onset_count_every_hour_across_the_change(tmp_path, tz, start, end):
    minutes = int((pd.Timestamp(end) - pd.Timestamp(start)) / pd.Timedelta(minutes=1)) + 120
    path = make_plant(
        tmp_path, wide={"a.csv": steady_frame("P1", start=start, periods=minutes)},
        timezone=tz, start=start, end=end,
    )  # fmt: skip
    result = screening.scan(path)
    assert result.problems.empty, result.problems
    a = pd.Timestamp(start).tz_localize(tz)
    b = pd.Timestamp(end).tz_localize(tz)
    window_h = (b - a) / pd.Timedelta(hours=1)
    by_kind = result.hours.groupby("kind")["hours"].sum()
    assert by_kind.to_numpy() == pytest.approx([window_h, window_h], rel=1e-12)
    # one row of daily hours per local calendar day, adding up to that day's length
    daily = result.daily[result.daily.kind == "margin"].groupby("date")["hours"].sum()
    edges = day_edges(a.tz_convert("UTC"), b.tz_convert("UTC"), tz)
    assert list(daily.index) == [d.date() for d in pd.date_range(start, end, inclusive="left")]
    assert daily.to_numpy() == pytest.approx(np.diff(edges) / 3.6e12, rel=1e-12)

    onset = screening.investigate(path, "P1", start, end)
    assert len(onset.hours) == len(daily)
    running = result.summary.set_index("pump_id").loc["P1", "running_hours"]
    assert onset.hours["running_h"].sum() == pytest.approx(running, rel=1e-12)
    assert onset.drivers["date"].is_monotonic_increasing
