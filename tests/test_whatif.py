"""What-if scenarios and required setpoints on invented plants, checked by hand and against
IAPWS-IF97 (the `iapws` package)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from iapws import IAPWS97
from plantmaker import make_plant, pump_row, steady_frame
from typer.testing import CliRunner

import screening
from screening.cli.main import app
from screening.engine.drivers import npsh_pair
from screening.inputs.config import ConfigError
from screening.physics.npsh import G
from screening.physics.properties import fluid_table
from screening.scenarios.scenario import Change, read_scenarios
from screening.scenarios.whatif import apply_changes


def _scenarios(tmp_path, text: str):
    path = tmp_path / "scenarios.toml"
    path.write_text(text)
    return path


def _wavy(tmp_path, pressure=None, temperature=None, flow=None):
    """One day of a pump whose suction pressure, temperature or flow swings (invented)."""
    frame = steady_frame()
    i = np.arange(len(frame))
    if pressure is not None:
        frame["P1.PS"] = pressure(i)
    if temperature is not None:
        frame["P1.TT"] = temperature(i)
    if flow is not None:
        frame["P1.FT"] = flow(i)
    return make_plant(tmp_path, wide={"a.csv": frame})


def _series(path):
    plant = screening.load_plant(path)
    series = screening.scan(plant, keep_series=True).series["P1"]
    pump = plant.pumps["P1"]
    return plant, pump, series


def test_raising_a_flooded_level_by_delta_raises_npsha_by_delta_exactly(tmp_path):
    # NPSHa of a vessel-fed pump = pressure head + level + offset - friction (ANSI/HI 1.3):
    # the level enters one for one, so +0.37 m of level is +0.37 m of NPSHa, to rounding.
    from test_vessel_scan import vessel_plant

    path = vessel_plant(tmp_path, np.linspace(4.0, 12.0, 1440))
    plant, pump, series = _series(path)
    change = Change("level_add", "level", "add", 0.37, "0.37 m")
    inputs, report = apply_changes(series, pump, [change])
    table = fluid_table("Water")
    after, _ = npsh_pair(pump, plant.curves[pump.curve_id], table, inputs)
    ran = series["state"].isin(screening.STATES[:5]).to_numpy()
    np.testing.assert_allclose(after[ran] - series["npsha_m"][ran], 0.37, rtol=0, atol=1e-12)
    assert report[0]["acts_h"] == pytest.approx(24.0)


def test_a_temperature_cap_changes_npsha_by_vapour_pressure_and_density(tmp_path):
    # Water at 60 °C capped at 25 °C: NPSHa = (p_abs - p_v)/(rho g) + v²/2g + z changes by
    # the pressure head difference only (same flow, same tap). IAPWS-IF97 (iapws package)
    # gives p_v and the saturated-liquid density at both temperatures; CoolProp's IAPWS-95
    # agrees with IF97 to about 1e-4 relative here, hence the tolerance of 2 mm.
    path = _wavy(tmp_path, temperature=lambda i: np.full(len(i), 60.0))
    plant, pump, series = _series(path)
    cap = Change("temperature_cap", "temperature", "cap", 298.15, "25 degC")
    inputs, _ = apply_changes(series, pump, [cap])
    after, _ = npsh_pair(pump, plant.curves[pump.curve_id], fluid_table("Water"), inputs)
    p_abs = 101325.0 + 100e3  # 100 kPa gauge at sea level (standard atmosphere)
    hot, cold = IAPWS97(T=333.15, x=0), IAPWS97(T=298.15, x=0)
    expected = (p_abs - cold.P * 1e6) / (cold.rho * G) - (p_abs - hot.P * 1e6) / (hot.rho * G)
    gain = after[0] - series["npsha_m"].iloc[0]
    assert gain == pytest.approx(expected, abs=2e-3)
    assert gain > 0.4  # about 1.7 m: mostly the vapour pressure, 19.9 kPa -> 3.2 kPa


def test_required_pressure_for_all_hours_puts_the_worst_sample_on_the_guidance(tmp_path):
    # The suction swings between -70 and 0 kPa gauge and the flow between 60 and 100 m3/h
    # (so each sample needs its own pressure): part of the day below the guidance.
    path = _wavy(
        tmp_path,
        pressure=lambda i: -35.0 + 35.0 * np.sin(2 * np.pi * i / 480),
        flow=lambda i: 80.0 + 20.0 * np.sin(2 * np.pi * i / 317),
    )
    r = screening.whatif(path, [], shares=(0.9, 1.0))
    plant, pump, series = _series(path)
    sp = r.setpoints.set_index(["input", "share"])
    full = sp.loc[("suction_pressure", 1.0)]
    assert full["unit"] == "Pa (gauge)" and full["achieved_share"] == 1.0
    floor = Change("suction_pressure_floor", "suction_pressure", "floor", full["required"],
                   "x", gauge=True)  # fmt: skip
    inputs, _ = apply_changes(series, pump, [floor])
    curve, table = plant.curves[pump.curve_id], fluid_table("Water")
    after, npsh3 = npsh_pair(pump, curve, table, inputs)
    ratio = after / plant.guidance["P1"].head(npsh3)
    ran = series["state"].isin(screening.BANDS).to_numpy() & (series["hours"] > 0).to_numpy()
    assert ratio[ran].min() == pytest.approx(1.0, abs=1e-9)  # exactly on the guidance
    # 90 %: the floor is the smallest that keeps 90 % of the running hours at guidance;
    # 100 Pa lower keeps less
    part = sp.loc[("suction_pressure", 0.9)]
    assert part["required"] < full["required"]
    assert part["achieved_share"] >= 0.9
    lower = Change("f", "suction_pressure", "floor", part["required"] - 100.0, "x", gauge=True)
    inputs, _ = apply_changes(series, pump, [lower])
    after, npsh3 = npsh_pair(pump, curve, table, inputs)
    ok = after >= plant.guidance["P1"].head(npsh3) * (1 - 1e-9)
    w = series["hours"].to_numpy()
    assert w[ran & ok].sum() / w[ran].sum() < 0.9


def test_required_temperature_for_all_hours_puts_the_worst_sample_on_the_guidance(tmp_path):
    # -50 kPa gauge suction (about 51 kPa absolute), water swinging 20-75 °C: hot hours fall
    # below the guidance; a cap on the temperature is the cure.
    path = _wavy(
        tmp_path,
        pressure=lambda i: np.full(len(i), -50.0),
        temperature=lambda i: 47.5 + 27.5 * np.sin(2 * np.pi * i / 720),
    )
    r = screening.whatif(path, [])
    plant, pump, series = _series(path)
    cap = r.setpoints.set_index(["input", "share"]).loc[("temperature", 1.0)]
    assert cap["unit"] == "K" and 293.15 < cap["required"] < 348.65
    change = Change("temperature_cap", "temperature", "cap", cap["required"], "x")
    inputs, _ = apply_changes(series, pump, [change])
    after, npsh3 = npsh_pair(pump, plant.curves[pump.curve_id], fluid_table("Water"), inputs)
    ratio = after / plant.guidance["P1"].head(npsh3)
    ran = series["state"].isin(screening.BANDS).to_numpy() & (series["hours"] > 0).to_numpy()
    assert ratio[ran].min() == pytest.approx(1.0, abs=1e-9)


def test_a_scenario_that_changes_nothing_reproduces_the_scan_exactly(tmp_path):
    path = _wavy(tmp_path, pressure=lambda i: -35.0 + 35.0 * np.sin(2 * np.pi * i / 480))
    scenarios = _scenarios(tmp_path, """
[[scenario]]
name = "nothing"
  [[scenario.change]]
  pumps = ["P*"]
  suction_pressure_add = "0 kPa"
  temperature_cap = "150 degC"
  flow_cap = "1000 m3/h"
""")  # fmt: skip
    r = screening.whatif(path, scenarios)
    plain = screening.scan(path).hours.set_index(["pump_id", "kind", "state"])["hours"]
    h = r.hours.set_index(["pump_id", "kind", "state"])
    assert (h["after_h"] == plain.loc[h.index]).all()  # exactly, not approximately
    assert (h["before_h"] == h["after_h"]).all()
    assert r.moves.empty
    assert (r.changes["acts_h"] == 0).all()


def test_a_suction_pressure_rise_moves_hours_up_and_a_flow_cap_is_flagged(tmp_path):
    path = _wavy(tmp_path, pressure=lambda i: -35.0 + 35.0 * np.sin(2 * np.pi * i / 480))
    scenarios = _scenarios(tmp_path, """
[[scenario]]
name = "more pressure"
  [[scenario.change]]
  pumps = ["P1"]
  suction_pressure_add = "30 kPa"

[[scenario]]
name = "capped flow"
  [[scenario.change]]
  areas = ["A"]
  flow_cap = "50 m3/h"
  level_floor = "2 m"
""")  # fmt: skip
    r = screening.whatif(path, scenarios)
    h = r.hours.set_index(["scenario", "kind", "state"]).sort_index()
    below = h.loc[("more pressure", "margin", "below_guidance")]
    assert below["before_h"] > 1.0 and below["after_h"] == pytest.approx(0.0, abs=1e-9)
    # every margin hour is accounted for before and after
    for sc in ("more pressure", "capped flow"):
        for kind in ("margin", "region"):
            part = h.loc[(sc, kind)]
            assert part["after_h"].sum() == pytest.approx(24.0, abs=1e-9)
    moved = r.moves[(r.moves.scenario == "more pressure") & (r.moves.kind == "margin")]
    out_of_below = moved[moved.from_state == "below_guidance"]["hours"].sum()
    assert out_of_below == pytest.approx(below["before_h"] - below["after_h"], abs=1e-9)
    assert set(moved.to_state) <= {"meets_guidance", "ample_margin"}  # only upwards
    ch = r.changes.set_index(["scenario", "change"])
    flow = ch.loc[("capped flow", "flow_cap = 50 m3/h")]
    assert flow["acts_h"] == pytest.approx(24.0)
    assert "would not have been delivered" in flow["note"]
    level = ch.loc[("capped flow", "level_floor = 2 m")]
    assert level["acts_h"] == 0.0 and "no vessel level" in level["note"]
    # 50 m3/h is 62.5 % of the 80 m3/h BEP: below the preferred region (70 %) all day
    region = h.loc[("capped flow", "region")]
    assert region.loc["low_flow", "after_h"] == pytest.approx(24.0)
    assert region.loc["preferred_region", "before_h"] == pytest.approx(24.0)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ('[[scenario]]\nname = "a"\n[[scenario.change]]\npumps = ["P1"]\n'
         'suction_pressure_floor = "50 kPa"\n', r"needs reference = 'gauge' or 'absolute'"),
        ('[[scenario]]\nname = "a"\n[[scenario.change]]\npumps = ["P1"]\nlevel_flor = "1 m"\n',
         r"level_flor\] unknown key"),
        ('[[scenario]]\nname = "a"\n[[scenario.change]]\nlevel_floor = "1 m"\n',
         r"select pumps with 'pumps', 'areas' or 'services'"),
        ('[[scenario]]\nname = "a"\n[[scenario.change]]\npumps = ["P1"]\nlevel_floor = "1"\n',
         r"change\[1\]\.level_floor\] '1' has no unit"),
        ('[[scenario]]\nname = "a"\n[[scenario.change]]\npumps = ["P1"]\nlevel_add = "1 m"\n'
         '[[scenario]]\nname = "a"\n[[scenario.change]]\npumps = ["P1"]\nlevel_add = "1 m"\n',
         r"scenario name\(s\) used twice: a"),
    ],
)  # fmt: skip
def test_scenario_file_errors_name_the_place(tmp_path, text, message):
    with pytest.raises(ConfigError, match=message):
        read_scenarios(_scenarios(tmp_path, text))


def test_temperature_differences_are_differences(tmp_path):
    s = read_scenarios(_scenarios(tmp_path, """
[[scenario]]
name = "cooler"
  [[scenario.change]]
  pumps = ["P1"]
  temperature_subtract = "9 degF"
"""))  # fmt: skip
    change = s[0].entries[0].changes[0]
    # 1 °F of difference is 5/9 K by the definition of the Fahrenheit scale: 9 °F = 5 K
    assert change.operation == "add" and change.value == pytest.approx(-5.0)


def test_whatif_command_writes_pages_tables_and_cautions(tmp_path):
    path = _wavy(tmp_path, pressure=lambda i: -35.0 + 35.0 * np.sin(2 * np.pi * i / 480))
    scenarios = _scenarios(tmp_path, """
[[scenario]]
name = "<b>more</b> pressure"
  [[scenario.change]]
  pumps = ["P1"]
  suction_pressure_add = "30 kPa"
""")  # fmt: skip
    out = tmp_path / "wi"
    res = CliRunner().invoke(app, ["whatif", str(path), str(scenarios), "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert "below guidance" in res.output and "-> 0.0 h" in res.output
    for name in ("whatif_hours", "whatif_moves", "whatif_changes", "required_setpoints",
                 "margin_sensitivity", "whatif_summary"):  # fmt: skip
        assert (out / f"{name}.csv").exists() and (out / f"{name}.parquet").exists()
    index = (out / "index.html").read_text()
    assert "management-of-change" in index and "screening aid" in index
    assert "&lt;b&gt;more&lt;/b&gt; pressure" in index and "<b>more</b>" not in index
    pages = list(out.glob("scenario_*.html"))
    assert len(pages) == 1 and "management-of-change" in pages[0].read_text()
    setpoints = pd.read_csv(out / "required_setpoints.csv")
    assert set(setpoints["input"]) == {"suction_pressure", "temperature"}


def test_today_setpoint_is_compared(tmp_path):
    frame = steady_frame()
    frame["P1.PS"] = -35.0 + 35.0 * np.sin(2 * np.pi * np.arange(1440) / 480)
    header_extra = ",low_pressure_setpoint"
    from plantmaker import PUMP_HEADER

    path = make_plant(tmp_path, wide={"a.csv": frame}, rows=[pump_row("P1")])
    (tmp_path / "pumps.csv").write_text(
        PUMP_HEADER + header_extra + "\n" + pump_row("P1") + ",-60 kPa\n"
    )
    r = screening.whatif(path, [])
    row = r.setpoints.set_index(["input", "share"]).loc[("suction_pressure", 1.0)]
    assert row["today_setpoint"] == pytest.approx(-60e3)
    assert row["change_from_setpoint"] == pytest.approx(row["required"] + 60e3)


def test_demo_scenarios_on_the_demo_plant():
    """The invented demo plant's scenarios (configs/demo_scenarios.toml) act on the planted
    events of demo_exports/planted_events.csv: the hotwell draw-down of CD-412 (below guidance
    for about 4.5 h) is cured by a 1.2 m low-level floor, and RW-502's fouled strainer by 25 kPa
    more suction pressure."""
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    r = screening.whatif(root / "configs/demo_plant.toml", root / "configs/demo_scenarios.toml",
                         "2026-10-01", "2026-11-01", pumps=["CD-412", "RW-502"])  # fmt: skip
    h = r.hours[r.hours.kind == "margin"].set_index(["scenario", "pump_id", "state"]).sort_index()
    level = h.loc[("hotwell low level 1.2 m", "CD-412")]
    assert 4.0 < level.loc["below_guidance", "before_h"] < 5.5
    assert level.loc["below_guidance", "after_h"] == pytest.approx(0.0, abs=1e-9)
    strainer = h.loc[("raw-water intake: strainer kept clean", "RW-502")]
    assert strainer.loc["below_npsh3", "before_h"] > 10
    assert strainer.loc[["below_npsh3", "below_guidance"], "after_h"].sum() == pytest.approx(
        0.0, abs=1e-9
    )
    sp = r.setpoints.set_index(["pump_id", "input", "share"])
    cd = sp.loc[("CD-412", "level", 1.0)]
    assert cd["today_setpoint"] == pytest.approx(0.8)  # 800 mm in the register
    assert cd["required"] > cd["today_setpoint"]  # today's low level is too low


def test_a_pump_named_twice_is_replayed_once(tmp_path):
    path = _wavy(tmp_path, pressure=lambda i: -35.0 + 35.0 * np.sin(2 * np.pi * i / 480))
    scenarios = _scenarios(tmp_path, """
[[scenario]]
name = "more pressure"
  [[scenario.change]]
  pumps = ["P1"]
  suction_pressure_add = "30 kPa"
""")  # fmt: skip
    once = screening.whatif(path, scenarios, pumps=["P1"])
    twice = screening.whatif(path, scenarios, pumps=["P1", "P1"])
    pd.testing.assert_frame_equal(twice.hours, once.hours)
    pd.testing.assert_frame_equal(twice.setpoints, once.setpoints)
    margin = twice.hours[twice.hours.kind == "margin"]
    assert margin["before_h"].sum() == pytest.approx(24.0, rel=1e-12)
    out = tmp_path / "wi"
    args = ["whatif", str(path), str(scenarios), "--out", str(out), "--pump", "P1", "--pump", "P1"]
    res = CliRunner().invoke(app, args)
    assert res.exit_code == 0, res.output
    assert "on 1 pump(s)" in res.output


def test_whatif_pages_in_us_units_say_each_caution_once(tmp_path):
    path = _wavy(tmp_path, pressure=lambda i: -35.0 + 35.0 * np.sin(2 * np.pi * i / 480))
    scenarios = _scenarios(tmp_path, """
[[scenario]]
name = "more pressure"
  [[scenario.change]]
  pumps = ["P1"]
  suction_pressure_add = "30 kPa"
""")  # fmt: skip
    out = tmp_path / "wi"
    args = ["whatif", str(path), str(scenarios), "--out", str(out), "--units", "us"]
    res = CliRunner().invoke(app, args)
    assert res.exit_code == 0, res.output
    from screening.report.cautions import CAUTIONS
    from screening.report.whatif_page import WHATIF_CAUTION

    for page in [out / "index.html", *out.glob("scenario_*.html")]:
        text = page.read_text()
        for caution in (WHATIF_CAUTION, *CAUTIONS):
            assert text.count(caution.replace("'", "&#39;")) == 1, (page.name, caution)
        assert text.count("management-of-change") == 1, page.name
    index = (out / "index.html").read_text()
    # US customary on the page: psi, °F, ft, gpm; never kPa or °C
    assert "psi (gauge)" in index and "°F" in index and "flow gpm" in index
    kpa = (
        pd.read_csv(out / "required_setpoints.csv")
        .query("input == 'suction_pressure' and share == 1.0")["required"]
        .iloc[0]
        / 1000
    )
    on_instrument = f"{kpa:.4g} kPa gauge on P1.PS"
    assert "kPa" not in index.replace(on_instrument, "") and "°C" not in index
    # the strictest limit in the transmitter's own unit and reference (kPa gauge here, as
    # the register gives it), ready for a change request
    assert on_instrument in index


def test_whatif_refuses_unknown_units_before_the_work(tmp_path):
    path = _wavy(tmp_path)
    scenarios = _scenarios(tmp_path, '[[scenario]]\nname = "x"\n')
    res = CliRunner().invoke(app, ["whatif", str(path), str(scenarios), "--units", "metric"])
    assert res.exit_code != 0 and "'metric' is not 'si' or 'us'" in res.output


@pytest.mark.parametrize(
    ("key", "text", "gauge", "si", "us"),
    [
        # 27 °C = 27 x 1.8 + 32 °F (definition of the Fahrenheit scale)
        ("temperature_cap", "27 degC", False, "temperature_cap = 27 degC",
         "temperature_cap = 27 degC (80.6 °F)"),
        # a difference converts without the offset: 5 K = 9 °F
        ("temperature_subtract", "5 K", False, "temperature_subtract = 5 K",
         "temperature_subtract = 5 K (9.0 °F)"),
        # 1 psi = 6.894757 kPa (NIST SP 811, appendix B)
        ("suction_pressure_add", "25 kPa", False, "suction_pressure_add = 25 kPa",
         "suction_pressure_add = 25 kPa (3.63 psi)"),
        ("suction_pressure_floor", "30 psi", True,
         "suction_pressure_floor = 30 psi (206.8 kPa gauge)", "suction_pressure_floor = 30 psi"),
        # 1 ft = 0.3048 m exactly
        ("level_floor", "1.2 m", False, "level_floor = 1.2 m", "level_floor = 1.2 m (3.94 ft)"),
        ("speed_cap", "2950 rpm", False, "speed_cap = 2950 rpm", "speed_cap = 2950 rpm"),
    ],
)  # fmt: skip
def test_a_change_is_shown_in_the_pages_units_too(key, text, gauge, si, us):
    """Issue 19: a US page shows a change written in SI in US units beside it (and the other
    way round), as written first, so the scenario file stays recognisable."""
    from screening.report.pump_pages import DISPLAY_UNITS
    from screening.report.whatif_page import change_text
    from screening.scenarios.scenario import _convert

    change = _convert(Path("s.toml"), "scenario 'x'", key, text, gauge)
    assert change_text(change, DISPLAY_UNITS["si"]) == si
    assert change_text(change, DISPLAY_UNITS["us"]) == us
