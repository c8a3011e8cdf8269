"""Vessel-fed pumps through the public API: the worked examples of check-values.md.

Open tank, flooded suction (Pumps & Systems 2018, "NPSH" series part 1, adapted from a
hydraulic data handbook): 68 °F water, open tank at sea level, liquid 10 ft above the datum,
suction friction 3.2 ft: 40 ft published, 39.98 ft recomputed in SI. Suction lift (part 2):
liquid 10 ft below the datum: 19.98 ft recomputed.
"""

from __future__ import annotations

import pandas as pd
import pytest
from plantmaker import PUMP_HEADER, make_plant, pump_row

import screening

FT = 0.3048  # m, exact by definition
VESSEL_COLUMNS = (
    ",suction_source,level_tag,level_unit,level_zero_elevation,vessel_surface,"
    "vessel_pressure_tag,vessel_pressure_unit,vessel_pressure_reference,"
    "line_loss_head,line_loss_flow"
)


def vessel_plant(tmp_path, level_ft, surface="open", temp_f=68.0, extra=None):
    times = pd.date_range("2026-10-01", periods=1440, freq="1min")
    frame = pd.DataFrame(
        {
            "timestamp": times.strftime("%Y-%m-%d %H:%M:%S"),
            "P1.LT": level_ft,
            "P1.TT": temp_f,
            "P1.FT": 80.0,
            "P1.RUN": 1,
        }
    )
    if extra:
        frame = frame.assign(**extra)
    row = pump_row("P1", suction_pressure_tag="", suction_pressure_unit="",
                   suction_pressure_reference="", temperature_unit="degF")  # fmt: skip
    vessel = f",vessel,P1.LT,ft,0 m,{surface},,,,3.2 ft,80 m3/h"
    if surface == "pressure":
        vessel = ",vessel,P1.LT,ft,0 m,pressure,P1.VP,psi,absolute,3.2 ft,80 m3/h"
    path = make_plant(tmp_path, wide={"a.csv": frame}, rows=[row + vessel])
    (tmp_path / "pumps.csv").write_text(PUMP_HEADER + VESSEL_COLUMNS + "\n" + row + vessel + "\n")
    return path


def npsha_ft(path):
    r = screening.scan(path, keep_series=True)
    assert r.problems.empty, r.problems
    return r.series["P1"]["npsha_m"].median() / FT


def test_open_tank_flooded(tmp_path):
    # site at 0 m: 101325 Pa = 14.696 psia against the example's 14.7 psia (0.009 ft of
    # water less); the published figure is rounded to the foot
    value = npsha_ft(vessel_plant(tmp_path, 10.0))
    assert value == pytest.approx(40.0, abs=0.5)
    assert value == pytest.approx(39.98, abs=0.02)


def test_open_tank_suction_lift(tmp_path):
    assert npsha_ft(vessel_plant(tmp_path, -10.0)) == pytest.approx(19.98, abs=0.02)


def test_pressurised_vessel_reading_14_7_psia_is_the_open_tank(tmp_path):
    value = npsha_ft(vessel_plant(tmp_path, 10.0, "pressure", extra={"P1.VP": 14.7}))
    assert value == pytest.approx(39.98, abs=0.01)  # the example's own 14.7 psia


def test_saturated_vessel_is_static_head_minus_friction(tmp_path):
    # a deaerator or hotwell at saturation: the pressure term is zero whatever the temperature
    value = npsha_ft(vessel_plant(tmp_path, 10.0, "saturated", temp_f=240.0))
    assert value == pytest.approx(10.0 - 3.2, abs=1e-9)


def test_vessel_row_without_level_tag_is_a_clear_error(tmp_path):
    path = vessel_plant(tmp_path, 10.0)
    text = (tmp_path / "pumps.csv").read_text().replace(",vessel,P1.LT,", ",vessel,,")
    (tmp_path / "pumps.csv").write_text(text)
    plant = screening.load_plant(path)
    assert "column 'level_tag': is empty" in plant.problems["P1"]


def test_bad_surface_kind(tmp_path):
    path = vessel_plant(tmp_path, 10.0)
    text = (tmp_path / "pumps.csv").read_text().replace(",open,", ",vented,")
    (tmp_path / "pumps.csv").write_text(text)
    plant = screening.load_plant(path)
    assert "'vented' is not 'open', 'saturated' or 'pressure'" in plant.problems["P1"]
