"""The accounting identity: every hour of the window falls in exactly one state.

DESIGN.md requires that the hours of all states of a pump add up to the window length on every
input. Hypothesis generates random sample times, gaps, values, bad flags, stale limits and
windows; the identity must hold on each, per day and in total.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from plantmaker import make_plant, pump_row

import screening
from screening.engine.calculator import NS_PER_HOUR, Settings, calculate_pump
from screening.inputs.register import PumpSpec, TagSpec
from screening.inputs.tagdata import TagQuality, TagSeries
from screening.inputs.window import day_edges as _day_edges
from screening.physics.curves import Npsh3Curve
from screening.physics.margin import Guidance
from screening.physics.properties import fluid_table

NS_MIN = 60 * 10**9
START = pd.Timestamp("2026-10-01", tz="UTC")

PUMP = PumpSpec(
    pump_id="P1", service="", area="", fluid="Water", application="water",
    suction=TagSpec("PS", "Pa", "pressure"), gauge=False,
    temperature=TagSpec("TT", "K", "temperature"), flow=TagSpec("FT", "m3/s", "flow"),
    speed=TagSpec("ST", "rpm", "speed"), run=TagSpec("RUN", "", "status"),
    tap_elevation=1.0, tap_bore=0.1, rated_speed=1480.0, bep_flow=0.02, curve_id="C",
)  # fmt: skip
CURVE = Npsh3Curve("C", np.array([0.005, 0.02, 0.03]), np.array([2.0, 3.0, 4.5]))


def per_day_h(edges):
    return np.diff(edges) / NS_PER_HOUR


@st.composite
def tag_series(draw, name: str, low: float, high: float):
    n = draw(st.integers(0, 60))
    offsets = draw(
        st.lists(st.integers(-120, 3000), min_size=n, max_size=n)
    )  # minutes, some before the window
    times = np.sort(np.array(offsets, dtype=np.int64)) * NS_MIN + START.value
    times = np.unique(times)
    values = np.array(
        draw(st.lists(st.floats(low, high), min_size=len(times), max_size=len(times)))
    )
    bad = np.array(draw(st.lists(st.booleans(), min_size=len(times), max_size=len(times))))
    return TagSeries(name, times, values, bad.astype(bool), TagQuality(name))


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    ps=tag_series("PS", -1e4, 5e5),
    tt=tag_series("TT", 250.0, 700.0),  # reaches outside the water table on purpose
    ft=tag_series("FT", -0.01, 0.05),
    sp=tag_series("ST", 0.0, 2000.0),
    run=tag_series("RUN", 0.0, 1.0),
    stale_min=st.integers(1, 240),
    window_min=st.integers(1, 3 * 1440),
    start_offset=st.integers(0, 600),
)
def test_hours_add_up_to_the_window(ps, tt, ft, sp, run, stale_min, window_min, start_offset):
    start = START + pd.Timedelta(minutes=start_offset)
    end = start + pd.Timedelta(minutes=window_min)
    edges = _day_edges(start, end, "Europe/Berlin")
    s = Settings(stale_min * 60.0, None, 0.05, 0.2, 2.0, 0.0)
    result = calculate_pump(
        PUMP, CURVE, Guidance(1.1, 0.6, "test"), fluid_table("Water"),
        {"suction": ps, "temperature": tt, "flow": ft, "speed": sp, "run": run},
        None, s, start.value, end.value, edges,
    )  # fmt: skip
    window_h = (end.value - start.value) / NS_PER_HOUR
    assert result.hours.sum() == pytest.approx(window_h, rel=1e-12, abs=1e-12)
    assert np.all(result.hours >= 0)
    # the operating regions are a second kind of state with the same accounting
    assert result.region_hours.sum() == pytest.approx(window_h, rel=1e-12, abs=1e-12)
    np.testing.assert_allclose(result.region_daily.sum(axis=1), per_day_h(edges), rtol=1e-12)
    per_day = np.diff(edges) / NS_PER_HOUR
    np.testing.assert_allclose(result.daily.sum(axis=1), per_day, rtol=1e-12, atol=1e-12)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow,
          HealthCheck.function_scoped_fixture])  # fmt: skip
@given(
    data=st.lists(
        st.tuples(
            st.integers(0, 2 * 1440),  # minute of the sample
            st.sampled_from(["P1.PS", "P1.TT", "P1.FT", "P1.RUN"]),
            st.one_of(st.floats(-1e3, 1e3, allow_nan=False), st.sampled_from(["x", "", "inf"])),
        ),
        max_size=80,
    )
)
def test_identity_holds_through_the_loader(tmp_path_factory, data):
    """Random long-layout files, text values and all, through the public API."""
    folder = tmp_path_factory.mktemp("plant")
    lines = ["tag,time,value,quality"]
    for minute, tag, value in data:
        t = pd.Timestamp("2026-10-01", tz="UTC") + pd.Timedelta(minutes=minute)
        lines.append(f"{tag},{t.isoformat()},{value},ok")
    path = make_plant(folder, wide={}, long={"a.csv": "\n".join(lines)}, rows=[pump_row("P1")])
    r = screening.scan(path, "2026-10-01", "2026-10-03")
    if r.problems.empty:
        by_kind = r.hours.groupby("kind")["hours"].sum()
        assert by_kind.to_numpy() == pytest.approx([48.0, 48.0], rel=1e-12)
    else:  # a tag absent from every file: the pump is listed as not screened, with the reason
        assert "not found" in r.problems["message"].iloc[0]


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    ps=tag_series("PS", -1e4, 5e5),
    tt=tag_series("TT", 250.0, 700.0),
    ft=tag_series("FT", -0.01, 0.05),
    sp=tag_series("ST", 0.0, 2000.0),
    run=tag_series("RUN", 0.0, 1.0),
    linear=st.lists(st.booleans(), min_size=4, max_size=4),
    interval_min=st.integers(1, 600),
    stale_min=st.integers(1, 240),
    settle_min=st.integers(0, 30),
    window_min=st.integers(1, 3 * 1440),
    start_offset=st.integers(0, 600),
)
def test_hours_add_up_with_lines_and_starts(
    ps, tt, ft, sp, run, linear, interval_min, stale_min, settle_min, window_min, start_offset
):
    """The same identity with compressed records drawn by lines (band crossings cut into the
    pieces, see screening.engine.timeline) and a settling time after each start."""
    start = START + pd.Timedelta(minutes=start_offset)
    end = start + pd.Timedelta(minutes=window_min)
    edges = _day_edges(start, end, "Europe/Berlin")
    s = Settings(stale_min * 60.0, None, 0.05, 0.2, 2.0, 0.0, settle_after_start=settle_min * 60.0)
    tags = {"suction": ps, "temperature": tt, "flow": ft, "speed": sp}
    for series, drawn in zip(tags.values(), linear, strict=True):
        if drawn:
            series.max_interval = interval_min * 60.0
    result = calculate_pump(
        PUMP, CURVE, Guidance(1.1, 0.6, "test"), fluid_table("Water"), {**tags, "run": run},
        None, s, start.value, end.value, edges,
    )  # fmt: skip
    window_h = (end.value - start.value) / NS_PER_HOUR
    assert result.hours.sum() == pytest.approx(window_h, rel=1e-12, abs=1e-12)
    assert np.all(result.hours >= 0)
    assert result.region_hours.sum() == pytest.approx(window_h, rel=1e-12, abs=1e-12)
    np.testing.assert_allclose(result.daily.sum(axis=1), per_day_h(edges), rtol=1e-12, atol=1e-12)
    assert result.severity.below_npsh3_m_h >= 0
    assert result.severity.longest_below_npsh3_h <= result.hours[0] + 1e-12
