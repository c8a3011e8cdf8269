"""Holes an independent invented test plant found in the readers and the register.

Parquet time columns of every unit and zone, the viscosity of mixtures and incompressible
solutions for a Darcy-Weisbach suction line, level transmitters in per cent of span, the run
status threshold, and `check` against the scan. Expected hours are worked out by hand from the
time-weighting rules; property values are checked against CoolProp called directly.
"""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from fuzzkit import plant_with_export
from plantmaker import steady_frame

import screening


def _margin(result) -> dict[str, float]:
    h = result.hours
    return h[h.kind == "margin"].set_index("state")["hours"].to_dict()


def _parquet_bytes(table: pa.Table) -> bytes:
    buf = io.BytesIO()
    pq.write_table(table, buf, version="2.6")  # keeps nanoseconds (older formats coerce to us)
    return buf.getvalue()


def _wide_table(unit: str, zone: str | None) -> pa.Table:
    frame = steady_frame(start="2026-09-30 22:00", periods=1680)  # 28 h around the window
    times = pd.to_datetime(frame["timestamp"])
    if zone is not None:
        times = times.dt.tz_localize("UTC").dt.tz_convert(zone)
    cols = {"timestamp": pa.array(times, pa.timestamp(unit, tz=zone))}
    cols.update({c: pa.array(frame[c].to_numpy(dtype=float)) for c in frame.columns[1:]})
    return pa.table(cols)


@pytest.mark.parametrize("unit", ["s", "ms", "us", "ns"])
@pytest.mark.parametrize("zone", [None, "UTC", "America/Santiago"])
def test_parquet_time_column_of_any_unit_and_zone_is_read(tmp_path, unit, zone):
    # One pump running steadily well above NPSH3 (plantmaker's invented bench pump): the whole
    # window of 24 h is ample margin, whatever unit and zone the time column is stored in.
    # A zone-free column is local time of the site (UTC here), as the README says.
    data = _parquet_bytes(_wide_table(unit, zone))
    stored = pq.read_schema(io.BytesIO(data)).field("timestamp").type
    assert stored.tz == zone  # the file really has that zone ("s" is stored as ms by Parquet)
    r = screening.scan(plant_with_export(tmp_path, "wide-parquet", data))
    assert r.problems.empty and r.file_problems.empty, (r.problems, r.file_problems)
    assert _margin(r)["ample_margin"] == pytest.approx(24.0, rel=1e-12)
    # the 1440 samples of the window and the 5 of the look-back (the stale limit, 5 min)
    assert r.quality.set_index("role").loc["suction", "samples"] == 1440 + 5


@pytest.mark.parametrize("unit", ["ms", "us"])
def test_long_parquet_with_a_zoned_time_column_is_read(tmp_path, unit):
    wide = _wide_table(unit, "Asia/Kolkata").to_pandas()
    long = wide.melt(id_vars="timestamp", var_name="tag", value_name="value")
    long["quality"] = "ok"
    table = pa.table(
        {
            "tag": pa.array(long["tag"]),
            "time": pa.array(long["timestamp"], pa.timestamp(unit, tz="Asia/Kolkata")),
            "value": pa.array(long["value"]),
            "quality": pa.array(long["quality"]),
        }
    )
    r = screening.scan(plant_with_export(tmp_path, "long-parquet", _parquet_bytes(table)))
    assert r.problems.empty and r.file_problems.empty
    assert _margin(r)["ample_margin"] == pytest.approx(24.0, rel=1e-12)


# --- Darcy-Weisbach suction lines on mixtures and incompressible solutions -----------------

DARCY_COLUMNS = (
    ",vapour_pressure,suction_source,level_tag,level_unit,level_zero_elevation,vessel_surface,"
    "line_length,line_bore,line_roughness,line_fittings_k"
)


def _darcy_plant(tmp_path, fluid: str, temp_c: float, vapour_pressure: str = ""):
    from plantmaker import PUMP_HEADER, make_plant, pump_row

    times = pd.date_range("2026-10-01", periods=1440, freq="1min")
    frame = pd.DataFrame(
        {"timestamp": times.strftime("%Y-%m-%d %H:%M:%S"), "P1.LT": 3.0, "P1.TT": temp_c,
         "P1.FT": 80.0, "P1.RUN": 1}
    )  # fmt: skip
    row = pump_row("P1", fluid=fluid, suction_pressure_tag="", suction_pressure_unit="",
                   suction_pressure_reference="", tap_elevation="", tap_bore="")  # fmt: skip
    row += f",{vapour_pressure}"
    line = ",vessel,P1.LT,m,0 m,open,40 m,150 mm,0.05 mm,2.5"
    path = make_plant(tmp_path, wide={"a.csv": frame}, rows=[row + line])
    (tmp_path / "pumps.csv").write_text(PUMP_HEADER + DARCY_COLUMNS + "\n" + row + line + "\n")
    return path


def test_darcy_line_on_an_incompressible_solution_against_fluids_and_coolprop(tmp_path):
    # 30 % ethylene glycol at 20 °C, open tank at sea level, liquid 3 m above the datum, 40 m
    # of 150 mm pipe (roughness 0.05 mm) with fittings K = 2.5, at 80 m³/h. Reference built
    # apart from the tool: density and viscosity by direct CoolProp calls, water's vapour
    # pressure (the conservative choice for glycol solutions) by CoolProp, the friction loss
    # by the `fluids` package (Clamond's Colebrook solution, one_phase_dP).
    from CoolProp.CoolProp import PropsSI
    from fluids.core import head_from_K
    from fluids.friction import one_phase_dP

    r = screening.scan(_darcy_plant(tmp_path, "INCOMP::MEG-30%", 20.0, "water"), keep_series=True)
    assert r.problems.empty, r.problems
    t = 293.15
    rho = PropsSI("D", "T", t, "P", 101325.0, "INCOMP::MEG-30%")
    mu = PropsSI("V", "T", t, "P", 101325.0, "INCOMP::MEG-30%")
    p_v = PropsSI("P", "T", t, "Q", 0.0, "Water")
    q, d = 80.0 / 3600.0, 0.150
    v = q / (np.pi * d * d / 4.0)
    g = 9.80665  # standard gravity (CGPM 1901)
    loss = one_phase_dP(q * rho, rho, mu, d, roughness=0.05e-3, L=40.0) / (rho * g)
    loss += head_from_K(2.5, v, g=g)
    expected = (101325.0 - p_v) / (rho * g) + 3.0 - loss
    npsha = r.series["P1"]["npsha_m"].median()
    # both sides solve Colebrook (to about 1e-12 relative); the tool's viscosity table is
    # within 1e-6 of CoolProp: far below a millimetre on a loss of about a metre
    assert npsha == pytest.approx(expected, abs=1e-5)


def test_darcy_line_on_a_mixture_is_screened_and_its_range_stated(tmp_path):
    # An invented LPG (propane 0.6, n-butane 0.4 by mole) at its bubble point in an open-vented
    # drum is not physical; the point here is the viscosity table: at 10 °C the pump is
    # screened, and a temperature below where CoolProp's mixture viscosity converges is bad
    # data counted as impossible, never a loss of zero.
    fluid = "Propane[0.6]&n-Butane[0.4]"
    from screening.physics.viscosity import viscosity_table

    table = viscosity_table(fluid)
    r = screening.scan(_darcy_plant(tmp_path, fluid, 10.0))
    assert r.problems.empty, r.problems
    assert _margin(r)["bad_data"] == 0.0
    cold = table.t_min - 273.15 - 1.0
    r = screening.scan(_darcy_plant(tmp_path / "cold", fluid, cold))
    assert r.problems.empty, r.problems
    assert _margin(r)["bad_data"] == pytest.approx(24.0)
    assert r.quality.set_index("role").loc["temperature", "out_of_range"] > 0


# --- level transmitters in per cent of span --------------------------------------------------

LEVEL_COLUMNS = ",suction_source,level_tag,level_unit,level_zero_elevation,vessel_surface"


def _level_plant(tmp_path, level, unit: str, span: str = ""):
    from plantmaker import PUMP_HEADER, make_plant, pump_row

    times = pd.date_range("2026-10-01", periods=1440, freq="1min")
    frame = pd.DataFrame(
        {"timestamp": times.strftime("%Y-%m-%d %H:%M:%S"), "P1.LT": level, "P1.TT": 20.0,
         "P1.FT": 80.0, "P1.RUN": 1}
    )  # fmt: skip
    row = pump_row("P1", suction_pressure_tag="", suction_pressure_unit="",
                   suction_pressure_reference="", tap_elevation="", tap_bore="")  # fmt: skip
    extra = f",vessel,P1.LT,{unit},-2 m,open"
    header = PUMP_HEADER + LEVEL_COLUMNS
    if span:
        header += ",level_span_low,level_span_high"
        extra += span
    path = make_plant(tmp_path, wide={"a.csv": frame}, rows=[row + extra])
    (tmp_path / "pumps.csv").write_text(header + "\n" + row + extra + "\n")
    return path


def test_level_in_per_cent_of_span_is_the_level_in_metres(tmp_path):
    # A transmitter ranged 0.5 m (0 %) to 4.5 m (100 %) reading 62.5 % stands at
    # 0.5 + 0.625 · 4.0 = 3.0 m (linear scaling of the span, common practice): NPSHa equals
    # that of the same vessel with the level given as 3.0 m.
    pct = screening.scan(_level_plant(tmp_path / "a", 62.5, "%", ",0.5 m,4.5 m"), keep_series=True)
    metres = screening.scan(_level_plant(tmp_path / "b", 3.0, "m"), keep_series=True)
    assert pct.problems.empty, pct.problems
    a, b = pct.series["P1"]["npsha_m"], metres.series["P1"]["npsha_m"]
    assert a.to_numpy() == pytest.approx(b.to_numpy(), abs=1e-12)


def test_level_in_per_cent_needs_its_span(tmp_path):
    r = screening.scan(_level_plant(tmp_path / "a", 50.0, "%"))
    message = r.problems.set_index("pump_id").loc["P1", "message"]
    assert "level_span_low" in message
    r = screening.scan(_level_plant(tmp_path / "b", 50.0, "percent", ",4 m,1 m"))
    message = r.problems.set_index("pump_id").loc["P1", "message"]
    assert "level_span_high" in message and "must be above level_span_low" in message


# --- the run status threshold ----------------------------------------------------------------


def test_run_status_is_running_above_one_half(tmp_path):
    # README: a run tag is running above 0.5 (1), stopped at or below (0); 0.4 and 0.5 are
    # stopped, 0.6 and 2 running (6 h each)
    frame = steady_frame()
    frame["P1.RUN"] = np.repeat([0.4, 0.5, 0.6, 2.0], 360)
    r = screening.scan(plant_with_export(tmp_path, "wide-csv", frame.to_csv(index=False).encode()))
    h = _margin(r)
    assert h["stopped"] == pytest.approx(12.0)
    assert h["ample_margin"] == pytest.approx(12.0)
