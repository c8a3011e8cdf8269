"""Operating regions: preferred region 70-120 % of BEP flow by default (ANSI/HI 9.6.3-2012;
Davis, Water and Wastewater Engineering (2010) p. 3-29, per check-values.md), BEP flow scaled
with speed by the affinity laws (Q ∝ n, any pump handbook)."""

from __future__ import annotations

import numpy as np
import pytest
from plantmaker import make_plant, pump_row, steady_frame

import screening
from screening.physics import regions
from screening.physics.regions import operating_region, region_edges


def test_default_preferred_region_is_70_to_120_percent_of_bep():
    edges = region_edges(1.0, 1.0)
    q = np.array([0.0, 0.69, 0.70, 1.0, 1.20, 1.21, 50.0])
    expect = ["low_flow", "low_flow", "preferred_region", "preferred_region",
              "preferred_region", "high_flow", "high_flow"]  # fmt: skip
    got = [regions.REGIONS[c] for c in operating_region(q, edges)]
    assert got == expect


def test_minimum_flow_is_the_larger_of_stable_and_thermal():
    edges = region_edges(1.0, 1.0, min_stable_flow=0.30, thermal_min_flow=0.25)
    assert float(edges[0]) == pytest.approx(0.30)
    edges = region_edges(1.0, 1.0, min_stable_flow=0.20, thermal_min_flow=0.25)
    assert float(edges[0]) == pytest.approx(0.25)
    codes = operating_region(np.array([0.24, 0.25, 0.5]), edges)
    assert [regions.REGIONS[c] for c in codes] == ["below_min_flow", "low_flow", "low_flow"]


def test_edges_scale_with_speed_by_the_affinity_law():
    # at 80 % speed the BEP flow is 80 % of rated: 0.8 m3/s for a 1 m3/s pump; the stable
    # minimum and allowable end scale alike; the thermal minimum does not
    q_min, lo, hi, q_max = region_edges(
        1.0, 0.8, min_stable_flow=0.3, thermal_min_flow=0.1, allowable_max_flow=1.3
    )
    assert float(lo) == pytest.approx(0.7 * 0.8)
    assert float(hi) == pytest.approx(1.2 * 0.8)
    assert float(q_min) == pytest.approx(0.3 * 0.8)
    assert float(q_max) == pytest.approx(1.3 * 0.8)


def test_beyond_allowable_defaults_to_the_end_of_the_vendor_curve(tmp_path):
    # plantmaker's curve C1 ends at 120 m3/h; BEP 80 m3/h: POR 56-96 m3/h
    frame = steady_frame(flow_m3h=100.0)
    frame.loc[720:, "P1.FT"] = 125.0  # past the curve's last point
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    h = r.hours.query("kind == 'region'").set_index("state")["hours"]
    assert h["high_flow"] == pytest.approx(12.0)
    assert h["beyond_allowable"] == pytest.approx(12.0)
    assert h.sum() == pytest.approx(24.0)


def test_regions_from_register_columns(tmp_path):
    frame = steady_frame(flow_m3h=30.0)  # 37.5 % of BEP
    text = make_plant(tmp_path, wide={"a.csv": frame})
    reg = (tmp_path / "pumps.csv").read_text().splitlines()
    reg[0] += ",min_stable_flow [m3/h],preferred_low"
    reg[1] += ",32,0.6"
    (tmp_path / "pumps.csv").write_text("\n".join(reg) + "\n")
    r = screening.scan(text)
    h = r.hours.query("kind == 'region'").set_index("state")["hours"]
    assert h["below_min_flow"] == pytest.approx(24.0)
    assert r.summary.loc[0, "below_min_flow_hours"] == pytest.approx(24.0)
    assert r.summary.loc[0, "outside_preferred_hours"] == pytest.approx(24.0)


def test_region_needs_only_flow_not_pressure(tmp_path):
    frame = steady_frame().astype({"P1.TT": object})
    frame["P1.TT"] = "probe-out"  # no temperature: no margin band, but the region is known
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    m = r.hours.query("kind == 'margin'").set_index("state")["hours"]
    g = r.hours.query("kind == 'region'").set_index("state")["hours"]
    assert m["bad_data"] == pytest.approx(24.0)
    assert g["preferred_region"] == pytest.approx(24.0)


def test_speed_outside_scaling_range_is_counted(tmp_path):
    frame = steady_frame()
    frame["P1.SP"] = 1480.0
    frame.loc[:359, "P1.SP"] = 1850.0  # 125 % of rated for six hours
    rows = [pump_row("P1", speed_tag="P1.SP", speed_unit="rpm")]
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}, rows=rows))
    assert r.summary.loc[0, "speed_outside_scaling_hours"] == pytest.approx(6.0)
