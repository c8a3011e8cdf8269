"""The barometer is used only near the standard atmosphere at the site elevation.

References: U.S. Standard Atmosphere 1976 (COESA) pressures at 0 m (101325 Pa) and 1500 m
(84559.7 Pa), as gathered in /work/shared/reference/check-values.md (Davis, *Water and
Wastewater Engineering* (2010) Table 3-7: 84.56 kPa); NPSHa from a gauge reading as in ISO 9906
(check-values.md, "from a suction gauge"). Water properties from CoolProp (IAPWS-95).
"""

from __future__ import annotations

import pytest
from CoolProp.CoolProp import PropsSI
from plantmaker import make_plant, pump_row, steady_frame

import screening
from screening.physics.npsh import G

P_1500 = 84559.7  # [Pa] US Standard Atmosphere 1976 at 1500 m (check-values.md)
BARO = 'barometer_tag = "SITE.BARO"\nbarometer_unit = "hPa"'


def _scan(tmp_path, hpa: float, extra: str = ""):
    frame = steady_frame(pressure_kpa=10.0, temperature_c=20.0, flow_m3h=80.0)
    frame["SITE.BARO"] = hpa
    path = make_plant(
        tmp_path, wide={"a.csv": frame}, rows=[pump_row("P1", tap_bore="100")],
        elevation="1500 m", barometer=BARO + extra,
    )  # fmt: skip
    return screening.scan(path, keep_series=True)


def _npsha(p_abs: float) -> float:
    # ISO 9906 from a gauge: (p_abs − p_v)/(ρg) + v²/(2g) + z, z = 0; 80 m³/h in a 100 mm bore
    p_v = PropsSI("P", "T", 293.15, "Q", 0, "Water")
    rho = PropsSI("D", "T", 293.15, "Q", 0, "Water")
    v = 80.0 / 3600.0 / (3.141592653589793 * 0.1**2 / 4)
    return (p_abs - p_v) / (rho * G) + v * v / (2 * G)


def test_sea_level_corrected_reading_is_not_used(tmp_path):
    # 1013.25 hPa at a site 1500 m up is a sea-level-corrected value, 16.8 kPa above the
    # standard atmosphere there: outside the 5 kPa tolerance, so the standard atmosphere
    # stands and every running hour is counted on it.
    r = _scan(tmp_path, 1013.25)
    npsha = r.series["P1"]["npsha_m"].dropna()
    # our arithmetic from the 1976 atmosphere; tolerance 1e-6 m for the tabulated properties
    assert npsha.to_numpy() == pytest.approx(
        _npsha(10_000.0 + P_1500), abs=1e-5
    )  # P_1500 printed to 0.1 Pa
    s = r.summary.set_index("pump_id").loc["P1"]
    assert s["standard_atmosphere_hours"] == pytest.approx(s["running_hours"], rel=1e-12)
    assert s["standard_atmosphere_hours"] == pytest.approx(24.0, rel=1e-12)
    # the overstatement it would have caused: 16.77 kPa / (ρ g) = 1.71 m of water at 20 °C
    assert _npsha(101325.0 + 10_000.0) - _npsha(P_1500 + 10_000.0) == pytest.approx(1.71, abs=0.01)


def test_station_pressure_within_tolerance_is_used(tmp_path):
    r = _scan(tmp_path, 860.0)  # 1.4 kPa above the standard atmosphere at 1500 m: weather
    npsha = r.series["P1"]["npsha_m"].dropna()
    assert npsha.to_numpy() == pytest.approx(_npsha(10_000.0 + 86_000.0), abs=1e-6)
    assert r.summary["standard_atmosphere_hours"].iloc[0] == 0.0


def test_tolerance_is_configurable(tmp_path):
    # with a 20 kPa tolerance the same sea-level reading is used (the user's choice)
    r = _scan(tmp_path, 1013.25, '\nbarometer_tolerance = "20 kPa"')
    npsha = r.series["P1"]["npsha_m"].dropna()
    assert npsha.to_numpy() == pytest.approx(_npsha(10_000.0 + 101_325.0), abs=1e-6)


def test_check_names_the_tag_and_its_offset(tmp_path):
    frame = steady_frame()
    frame["SITE.BARO"] = 1013.25
    path = make_plant(tmp_path, wide={"a.csv": frame}, elevation="1500 m", barometer=BARO)
    result = screening.check(path)
    notes = " ".join(result.notes)
    assert "SITE.BARO" in notes and "+16.8 kPa" in notes and "sea level" in notes
