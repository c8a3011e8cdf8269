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
from screening.drivers import driver_shares
from screening.properties import fluid_table


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
