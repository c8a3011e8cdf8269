"""Worst margins in metres, suction pressure below vapour pressure, unregistered minimum flow.

References: NPSHa from a gauge reading (ISO 9906; check-values.md "from a suction gauge"),
water's vapour pressure at 20 °C 2339.2 Pa (IAPWS-IF97 via check-values.md), guidance head
max(ratio·NPSH3, NPSH3 + margin) (ANSI/HI 9.6.1-2012 as summarised in secondary sources,
check-values.md). The test plant is tests/plantmaker.py's (invented).
"""

from __future__ import annotations

import pytest
from CoolProp.CoolProp import PropsSI
from plantmaker import header_with, make_plant, pump_row, steady_frame

import screening
from screening.physics.npsh import G

P_SL = 101325.0  # [Pa] standard atmosphere at 0 m (US Standard Atmosphere 1976)


def test_worst_margins_in_metres_by_hand(tmp_path):
    # 80 m³/h at rated speed: NPSH3 = 3.2 m (the curve's point); guidance for S < 7500 is
    # 1.1 or 0.6 m -> max(3.52, 3.8) = 3.8 m. Gauge -60 kPa at 20 °C, z = 0, bore 100 mm.
    frame = steady_frame(pressure_kpa=-60.0)
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    s = r.summary.set_index("pump_id").loc["P1"]
    rho = PropsSI("D", "T", 293.15, "Q", 0, "Water")
    v = 80.0 / 3600.0 / (3.141592653589793 * 0.1**2 / 4)
    npsha = (P_SL - 60_000.0 - 2339.2) / (rho * G) + v * v / (2 * G)  # ISO 9906, our arithmetic
    # tolerance: p_v printed to 0.1 Pa (1e-5 m); the table interpolation is 1e-6 relative
    assert s["worst_margin_m"] == pytest.approx(npsha - 3.2, abs=1e-4)
    g = max(1.1 * 3.2, 3.2 + 0.6) if s["suction_specific_speed_us"] < 7500 else max(1.2 * 3.2, 4.2)
    assert s["worst_margin_to_guidance_m"] == pytest.approx(npsha - g, abs=1e-4)
    assert s["worst_ratio"] == pytest.approx(npsha / 3.2, rel=1e-4)


def test_suction_pressure_below_vapour_pressure_is_flagged(tmp_path):
    # 0.5 kPa absolute at 20 °C is below water's 2.339 kPa vapour pressure (IAPWS-IF97):
    # impossible in steady flow. Counted below NPSH3 (NPSHa < NPSH3 here) and flagged.
    frame = steady_frame(pressure_kpa=0.5)
    row = pump_row("P1", suction_pressure_reference="absolute")
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}, rows=[row]))
    s = r.summary.set_index("pump_id").loc["P1"]
    assert s["below_vapour_pressure_hours"] == pytest.approx(24.0, rel=1e-12)
    assert s["below_npsh3_hours"] == pytest.approx(24.0, rel=1e-12)
    q = r.quality.set_index(["pump_id", "role"])
    assert "suction pressure below vapour pressure" in q.loc[("P1", "suction"), "flags"]
    assert q.loc[("P1", "temperature"), "flags"] == ""
    checked = screening.check(make_plant(tmp_path, wide={"a.csv": frame}, rows=[row]))
    assert any("P1: suction pressure below vapour pressure" in n for n in checked.notes)


def test_no_flag_above_vapour_pressure(tmp_path):
    frame = steady_frame(pressure_kpa=3.0)  # gauge: 104 kPa absolute
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    assert r.summary["below_vapour_pressure_hours"].iloc[0] == 0.0
    assert (r.quality["flags"] == "").all()


def test_minimum_flow_not_registered_and_plant_default(tmp_path):
    # 20 m³/h is 25 % of the 80 m³/h BEP flow. Without a registered minimum flow it cannot be
    # below one: flagged. With a plant-wide 30 % of BEP (24 m³/h) it is below minimum flow.
    frame = steady_frame(flow_m3h=20.0)
    r = screening.scan(make_plant(tmp_path / "a", wide={"a.csv": frame}))
    s = r.summary.iloc[0]
    assert s["min_flow_source"] == "minimum flow not registered"
    assert s["below_min_flow_hours"] == 0.0
    path = make_plant(tmp_path / "b", wide={"a.csv": frame})
    text = path.read_text().replace(
        "min_speed_fraction = 0.2", "min_speed_fraction = 0.2\nmin_stable_flow_fraction = 0.3"
    )
    path.write_text(text)
    s = screening.scan(path).summary.iloc[0]
    assert s["min_flow_source"] == "plant-wide 30% of BEP flow"
    assert s["below_min_flow_hours"] == pytest.approx(24.0, rel=1e-12)
    # a registered minimum stable flow (15 m³/h) wins over the plant-wide fraction
    row = pump_row("P1", min_stable_flow="15 m3/h")
    path = make_plant(
        tmp_path / "c", wide={"a.csv": frame}, rows=[row], header=header_with("min_stable_flow")
    )
    path.write_text(path.read_text().replace(
        "min_speed_fraction = 0.2", "min_speed_fraction = 0.2\nmin_stable_flow_fraction = 0.3"
    ))  # fmt: skip
    s = screening.scan(path).summary.iloc[0]
    assert s["min_flow_source"] == "minimum stable flow (register)"
    assert s["below_min_flow_hours"] == 0.0
