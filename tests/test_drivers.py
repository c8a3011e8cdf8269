"""Margin drivers by one-at-a-time substitution, on hand-checkable planted changes.

Expected shares follow from the physics checked elsewhere against published references: a
suction pressure drop Δp lowers NPSHa by Δp/(ρg) exactly (ISO 9906 definition), and a
temperature rise lowers it by Δp_v/(ρg) plus the density effect (IAPWS-95 via CoolProp).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
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


def test_weighted_median_is_the_median_of_the_hours():
    # Reference: numpy's median of the values repeated by their whole-minute weights (the
    # lower median, numpy.percentile(..., method="inverted_cdf")), on invented values.
    from screening.engine.drivers import weighted_median

    rng = np.random.default_rng(2)
    for _ in range(20):
        v = rng.normal(0, 1, 30)
        minutes = rng.integers(1, 20, 30)
        expanded = np.repeat(v, minutes)
        ref = float(np.percentile(expanded, 50, method="inverted_cdf"))
        assert weighted_median(v, minutes / 60.0) == ref
    # a long piece outweighs many short ones (a plain median of samples would not)
    assert weighted_median(np.array([1.0, 5.0, 5.0, 5.0]), np.array([10.0, 1.0, 1.0, 1.0])) == 1.0


def test_baseline_values_are_time_weighted(tmp_path):
    # 100 kPa for 20 h recorded once every 10 min, then 60 kPa for 4 h recorded every minute:
    # more samples at 60 kPa (240 against 120) but five times less time; the baseline
    # suction pressure is that of the hours, 100 kPa g (201 325 Pa absolute at sea level).
    from plantmaker import steady_frame

    from screening.engine.drivers import fit_baseline

    slow = steady_frame(periods=120, freq="10min")
    fast = steady_frame(start="2026-10-01 20:00", periods=240, freq="1min", pressure_kpa=60.0)
    frame = pd.concat([slow, fast], ignore_index=True)
    path = make_plant(tmp_path, wide={"a.csv": frame}, stale="15 min")
    plant = screening.load_plant(path)
    series = screening.scan(plant, keep_series=True).series["P1"]
    model = fit_baseline(series, plant.pumps["P1"], np.ones(len(series), dtype=bool))
    assert model.refs["suction_pressure"] == pytest.approx(201325.0, abs=1.0)
    plain = np.median(series["suction_pressure_abs_pa"][series["hours"] > 0])
    assert plain == pytest.approx(161325.0, abs=1.0)  # what a plain median of pieces gives


def test_suction_line_friction_is_attributed_to_flow(tmp_path):
    # Invented: the suction pressure falls with the square of the flow through the suction
    # line, p_s = 150 kPa g - 4 kPa * (Q / 50 m3/h)^2, with the flow swinging 40-60 m3/h in the
    # morning (the baseline) and at 90 m3/h in the afternoon; nothing else changes. The suction
    # pressure is lower in the afternoon only because of the flow: its share must be ~0 and
    # the flow must carry the 4 kPa * ((90/50)^2 - baseline) of friction.
    from plantmaker import steady_frame

    frame = steady_frame(pressure_kpa=150.0)
    minute = np.arange(1440)
    q = np.where(minute < 720, 50.0 + 10.0 * np.sin(2 * np.pi * minute / 60), 90.0)
    frame["P1.FT"] = q
    frame["P1.PS"] = 150.0 - 4.0 * (q / 50.0) ** 2
    from screening.engine.drivers import fit_baseline, margin_m

    series, pump, curve = _series(tmp_path, frame)
    base = (series["time"] < series["time"].iloc[720]).to_numpy()
    table = fluid_table("Water")
    model = fit_baseline(series, pump, base)
    # the fitted friction coefficient is the planted one: -4 kPa at 50 m3/h
    assert model.friction == pytest.approx(-4e3 / (50.0 / 3600.0) ** 2, rel=1e-3)
    shares = driver_shares(series, pump, curve, table, base, model)
    late = shares.iloc[-1]
    assert late["suction_pressure_m"] == pytest.approx(0.0, abs=2e-3)
    # the flow share: the margin now minus the margin at the baseline's flow, where the
    # suction pressure is higher by the friction saved (the planted law)
    q_ref = model.refs["flow"] * 3600.0  # [m3/h]
    p_now = 101325.0 + 1e3 * (150.0 - 4.0 * (90.0 / 50.0) ** 2)
    p_ref = 101325.0 + 1e3 * (150.0 - 4.0 * (q_ref / 50.0) ** 2)
    inputs = {"suction_pressure": np.array([p_now]), "temperature": np.array([293.15]),
              "flow": np.array([90.0 / 3600.0])}  # fmt: skip
    at_ref = {**inputs, "suction_pressure": np.array([p_ref]),
              "flow": np.array([q_ref / 3600.0])}  # fmt: skip
    expected = margin_m(pump, curve, table, inputs) - margin_m(pump, curve, table, at_ref)
    assert late["flow_m"] == pytest.approx(float(expected[0]), abs=5e-3)
    assert late["interaction_m"] == pytest.approx(0.0, abs=0.02)
