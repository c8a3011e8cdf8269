"""The NPSH datum and the elevation of the point whose pressure the transmitter reads.

References: NPSHa from a gauge reading, (p_abs − p_v)/(ρg) + v²/(2g) + z with z the elevation
of the pressure's point above the NPSH datum (ISO 9906; check-values.md "from a suction
gauge"); hydrostatics of a liquid-filled impulse line, Δp = ρ·g·Δz (any fluid mechanics
text); water at 20 °C ρ = 998.16 kg/m³ (IAPWS-95, check-values.md). Datum: shaft centreline
of a horizontal pump, first-stage impeller eye of a vertical one (check-values.md).
"""

from __future__ import annotations

import pytest
from plantmaker import header_with, make_plant, pump_row, steady_frame

import screening
from screening.physics.npsh import G

RHO_20 = 998.16  # [kg/m³] water at 20 °C (check-values.md)


def _scan(tmp_path, kpa: float, columns: dict, tap_elevation: str = ""):
    frame = steady_frame(pressure_kpa=kpa)
    row = pump_row("P1", tap_elevation=tap_elevation, **columns)
    path = make_plant(tmp_path, wide={"a.csv": frame}, rows=[row], header=header_with(*columns))
    return screening.scan(path, keep_series=True)


def test_transmitter_below_the_tap_on_a_liquid_filled_line(tmp_path):
    # Tap 0.5 m above the datum at 20 kPa g; transmitter at grade 1.5 m below the tap on a
    # liquid-filled line reads 20 kPa + ρ·g·1.5 m = 34.683 kPa g (our arithmetic). Referred to
    # the sensing element (−1.0 m) NPSHa equals the tap's; read as if at the tap (+0.5 m) it
    # would be 1.5 m too high.
    reading = 20.0 + RHO_20 * G * 1.5 / 1000.0
    at_tap = {"pressure_reference_point": "tap", "pressure_point_elevation": "0.5 m"}
    at_sensor = {"pressure_reference_point": "sensor", "pressure_point_elevation": "-1.0 m"}
    tap = _scan(tmp_path / "tap", 20.0, at_tap)
    sensor = _scan(tmp_path / "sensor", reading, at_sensor)
    a = tap.series["P1"]["npsha_m"].dropna().to_numpy()
    b = sensor.series["P1"]["npsha_m"].dropna().to_numpy()
    # tolerance: ρ printed to 0.01 kg/m³ (1e-5 relative of the 1.5 m column)
    assert b == pytest.approx(a, abs=1e-4)
    wrong = _scan(tmp_path / "wrong", reading, at_tap)
    assert wrong.series["P1"]["npsha_m"].dropna().to_numpy() - a == pytest.approx(1.5, abs=1e-4)
    assert sensor.summary["pressure_point_elevation_m"].iloc[0] == pytest.approx(-1.0)
    assert sensor.summary["npsh_datum"].iloc[0] == "shaft centreline"


def test_old_tap_elevation_is_read_with_a_note_or_refused(tmp_path):
    r = _scan(tmp_path / "a", 20.0, {}, tap_elevation="0.5")
    assert "close-coupled tap" in r.summary["datum_note"].iloc[0]
    plant = screening.load_plant(
        make_plant(
            tmp_path / "b",
            wide={"a.csv": steady_frame()},
            rows=[pump_row("P1", tap_elevation="0.5", pressure_reference_point="sensor")],
            header=header_with("pressure_reference_point"),
        )  # fmt: skip
    )
    assert "pressure_point_elevation" in plant.problems["P1"]
    assert "tap_elevation" in plant.problems["P1"]


def test_vertical_can_loss_counted_once(tmp_path):
    # A vertical can pump: pressure at the can's suction nozzle 2.0 m above the first-stage
    # impeller eye; can loss 0.4 m at 80 m³/h (k·Q²), the running flow: NPSHa at the eye is
    # 0.4 m below the nozzle's figure referred to the eye (our arithmetic).
    base = {"pressure_reference_point": "tap", "pressure_point_elevation": "2.0 m",
            "orientation": "vertical"}  # fmt: skip
    plain = _scan(tmp_path / "a", 20.0, base)
    can = _scan(tmp_path / "b", 20.0, {**base, "can_loss_head": "0.4 m",
                                        "can_loss_flow": "80 m3/h"})  # fmt: skip
    a = plain.series["P1"]["npsha_m"].dropna().to_numpy()
    b = can.series["P1"]["npsha_m"].dropna().to_numpy()
    assert a - b == pytest.approx(0.4, rel=1e-9)
    assert can.summary["npsh_datum"].iloc[0] == "first-stage impeller eye"
    # with the vendor's NPSH3 at the can's nozzle the can loss is inside NPSH3: refused here
    plant = screening.load_plant(
        make_plant(
            tmp_path / "c",
            wide={"a.csv": steady_frame()},
            rows=[
                pump_row(
                    "P1",
                    tap_elevation="",
                    **base,
                    npsh3_datum="can_suction_nozzle",
                    can_loss_head="0.4 m",
                    can_loss_flow="80 m3/h",
                )
            ],
            header=header_with(*base, "npsh3_datum", "can_loss_head", "can_loss_flow"),
        )  # fmt: skip
    )
    assert "twice" in plant.problems["P1"]
