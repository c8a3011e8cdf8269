"""Physically impossible inputs are bad data with a reason, never numbers in the results."""

from __future__ import annotations

import numpy as np
import pytest
from plantmaker import make_plant, pump_row, steady_frame

import screening
from screening.physics.curves import CurveError, Npsh3Curve


def _margin_hours(result, pid="P1"):
    h = result.hours
    return h[(h.pump_id == pid) & (h.kind == "margin")].set_index("state")["hours"]


def _quality(result, role):
    return result.quality.set_index("role").loc[role]


def test_negative_absolute_pressure_is_bad_data(tmp_path):
    frame = steady_frame(pressure_kpa=150.0)
    frame.loc[600:659, "P1.PS"] = -5.0  # an absolute transmitter cannot read below zero
    rows = [pump_row("P1", suction_pressure_reference="absolute")]
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}, rows=rows))
    assert _margin_hours(r)["bad_data"] == pytest.approx(1.0)
    assert _quality(r, "suction")["out_of_range"] == 60
    assert r.summary["worst_ratio"].iloc[0] > 1.0  # the impossible hour set no worst ratio


def test_gauge_reading_below_full_vacuum_is_bad_data(tmp_path):
    frame = steady_frame(pressure_kpa=100.0)
    frame.loc[0:119, "P1.PS"] = -150.0  # kPa gauge: more than a perfect vacuum
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    assert _margin_hours(r)["bad_data"] == pytest.approx(2.0)
    assert _quality(r, "suction")["out_of_range"] == 120


def test_temperature_above_the_critical_point_is_bad_data(tmp_path):
    frame = steady_frame()
    frame.loc[0:179, "P1.TT"] = 400.0  # degC; water's critical point is 373.946 degC
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    assert _margin_hours(r)["bad_data"] == pytest.approx(3.0)
    assert _quality(r, "temperature")["out_of_range"] == 180
    assert _margin_hours(r).sum() == pytest.approx(24.0)


FALLING = """curve_id,flow,flow_unit,npsh3,npsh3_unit
C1,20,m3/h,2.0,m
C1,50,m3/h,2.5,m
C1,80,m3/h,3.2,m
C1,100,m3/h,2.9,m
C1,120,m3/h,5.2,m
"""


def test_npsh3_curve_falling_beyond_its_minimum_is_refused_with_the_reason(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame()}, curves=FALLING)
    r = screening.scan(path)
    assert r.summary.empty
    message = r.problems.set_index("pump_id").loc["P1", "message"]
    assert "curve 'C1': NPSH3 falls from 3.2 m at 80 m3/h to 2.9 m at 100 m3/h" in message
    assert "curves.csv" in message


@pytest.mark.parametrize(
    ("npsh3", "reason"),
    [
        ([5.0, 4.0, 3.0], "falls all the way to the highest flow"),
        ([2.0, 4.0, 3.0], "falls from 4 m"),
        ([3.0, 2.0, 2.0, 4.0, 3.9], "falls from 4 m"),
    ],
)
def test_curve_shapes_refused(npsh3, reason):
    flow = np.linspace(0.005, 0.03, len(npsh3))
    with pytest.raises(CurveError, match=reason):
        Npsh3Curve("bad", flow, np.array(npsh3))


@pytest.mark.parametrize(
    "npsh3",
    [[2.0, 2.5, 4.0], [3.0, 2.2, 2.0, 2.4, 4.0], [2.0, 2.0, 2.0], [3.0, 2.0, 2.0, 2.5]],
)
def test_curve_shapes_accepted(npsh3):
    """Rising, U-shaped (recirculation at low flow) and flat stretches are real curves."""
    flow = np.linspace(0.005, 0.03, len(npsh3))
    assert Npsh3Curve("ok", flow, np.array(npsh3)).flow_max == pytest.approx(0.03)


def test_gauge_reading_below_the_local_vacuum_is_bad_data(tmp_path):
    # at 5000 m the standard atmosphere gives about 54 kPa: -80 kPa gauge is -26 kPa absolute
    frame = steady_frame(pressure_kpa=-80.0)
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}, elevation="5000 m"))
    assert _margin_hours(r)["bad_data"] == pytest.approx(24.0)


def test_a_reading_too_large_for_si_is_not_finite(tmp_path):
    # 1e306 kPa is a finite float, but 1e309 Pa is not: counted as not finite, with its place
    frame = steady_frame(pressure_kpa=100.0)
    frame.loc[0:59, "P1.PS"] = 1e306
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    assert _margin_hours(r)["bad_data"] == pytest.approx(1.0)
    q = _quality(r, "suction")
    assert q["not_finite"] == 60
    assert "too large to convert to SI" in q["first_problem"]
    assert "out_of_range: sample at" not in q["first_problem"]


def test_the_first_impossible_sample_is_named(tmp_path):
    frame = steady_frame(pressure_kpa=100.0)
    frame.loc[30:89, "P1.PS"] = -150.0
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    q = _quality(r, "suction")
    assert (
        "out_of_range: sample at 2026-10-01T00:30:00+00:00: physically impossible"
        in (q["first_problem"])
    )


def test_nothing_screened_still_gives_tables_with_their_columns(tmp_path):
    frame = steady_frame().drop(columns=["P1.TT"])  # the only pump's temperature is missing
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    assert r.summary.empty and "pump_id" in r.summary.columns
    assert r.quality.empty and "malformed_rows" in r.quality.columns
    assert list(r.problems["pump_id"]) == ["P1"]
