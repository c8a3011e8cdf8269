"""Margin drivers by one-at-a-time substitution, on hand-checkable planted changes.

Expected shares follow from the physics checked elsewhere against published references: a
suction pressure drop Δp lowers NPSHa by Δp/(ρg) exactly (ISO 9906 definition), and a
temperature rise lowers it by Δp_v/(ρg) plus the density effect (IAPWS-95 via CoolProp).
"""

from __future__ import annotations

import numpy as np
import pytest
from plantmaker import make_plant, steady_frame

import screening
from screening.engine.drivers import driver_shares
from screening.physics.properties import fluid_table


def _series(tmp_path, frame):
    path = make_plant(tmp_path, wide={"a.csv": frame})
    plant = screening.load_plant(path)
    r = screening.scan(plant, keep_series=True)
    pump = plant.pumps["P1"]
    return r.series["P1"], pump, plant.curves[pump.curve_id]


def test_a_pressure_drop_is_blamed_on_pressure(tmp_path):
    frame = steady_frame()
    frame.loc[720:, "P1.PS"] = 70.0  # 30 kPa less suction pressure in the afternoon
    series, pump, curve = _series(tmp_path, frame)
    base = (series["time"] < series["time"].iloc[720]).to_numpy()
    shares = driver_shares(series, pump, curve, fluid_table("Water"), base)
    late = shares.iloc[-1]
    rho = float(fluid_table("Water").density(293.15))
    assert late["suction_pressure_m"] == pytest.approx(-30e3 / (rho * 9.80665), rel=1e-9)
    assert late["temperature_m"] == pytest.approx(0.0, abs=1e-12)
    assert late["flow_m"] == pytest.approx(0.0, abs=1e-12)
    assert late["interaction_m"] == pytest.approx(0.0, abs=1e-9)


def test_a_warmer_liquid_is_blamed_on_temperature(tmp_path):
    frame = steady_frame(temperature_c=20.0)
    frame.loc[720:, "P1.TT"] = 60.0
    series, pump, curve = _series(tmp_path, frame)
    base = (series["time"] < series["time"].iloc[720]).to_numpy()
    shares = driver_shares(series, pump, curve, fluid_table("Water"), base)
    late = shares.iloc[-1]
    # check-values.md (IAPWS-95): 20 °C: p_v 2339.32 Pa, rho 998.16 kg/m3; 60 °C: 19946.4 Pa,
    # 983.16 kg/m3. The gauge reads 100 kPa at sea level (101325 Pa): p_abs = 201325 Pa. The
    # higher vapour pressure costs margin, the lower density gives a little back.
    g = 9.80665
    expected = (201325 - 19946.4) / (983.16 * g) - (201325 - 2339.32) / (998.16 * g)
    # tolerance: the published densities are rounded to 0.005 kg/m3 (about 1e-4 m here)
    assert late["temperature_m"] == pytest.approx(expected, abs=2e-3)
    assert late["suction_pressure_m"] == pytest.approx(0.0, abs=1e-12)
    assert np.isfinite(shares["interaction_m"]).all()


def test_a_lower_vessel_level_is_blamed_on_level(tmp_path):
    # Open tank at sea level (no barometer: the standard atmosphere, constant), 68 °F water:
    # the level falls from 10 ft to 6 ft at noon. NPSHa of a vessel moves one for one with
    # the level (ANSI/HI 1.3 definition: static head), so the level's share is exactly -4 ft.
    from test_vessel_scan import FT, vessel_plant

    from screening.engine.drivers import drivers_for

    level = np.where(np.arange(1440) < 720, 10.0, 6.0)
    path = vessel_plant(tmp_path, level)
    plant = screening.load_plant(path)
    pump = plant.pumps["P1"]
    assert drivers_for(pump) == ("surface_pressure", "level", "temperature", "flow")
    series = screening.scan(plant, keep_series=True).series["P1"]
    base = (series["time"] < series["time"].iloc[0] + np.timedelta64(12, "h")).to_numpy()
    shares = driver_shares(series, pump, plant.curves[pump.curve_id], fluid_table("Water"), base)
    late = shares.iloc[-1]
    assert late["level_m"] == pytest.approx(-4 * FT, rel=1e-12)
    for k in ("surface_pressure_m", "temperature_m", "flow_m", "interaction_m"):
        assert late[k] == pytest.approx(0.0, abs=1e-9)
    # the drivers recompute the margin exactly as the calculator did
    running = series[series["state"].isin(screening.STATES[:4]) & (series["hours"] > 0)]
    np.testing.assert_allclose(
        shares["margin_m"], running["npsha_m"] - running["npsh3_m"], rtol=1e-12
    )


def test_a_saturated_vessel_has_no_pressure_driver(tmp_path):
    from test_vessel_scan import vessel_plant

    from screening.engine.drivers import drivers_for

    plant = screening.load_plant(vessel_plant(tmp_path, 10.0, surface="saturated"))
    assert drivers_for(plant.pumps["P1"]) == ("level", "temperature", "flow")
