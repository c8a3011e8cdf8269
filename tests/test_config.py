"""Clear errors on bad configuration: file, line, column and what would be valid."""

from __future__ import annotations

import pytest
from plantmaker import CURVES, make_plant, pump_row, steady_frame

import screening
from screening.inputs.config import ConfigError, read_plant_file
from screening.inputs.register import read_curves, read_pump_register


def test_unknown_key_in_plant_file(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    path.write_text(path.read_text().replace("[running]", "[running]\nmin_flow_fractoin = 0.1"))
    with pytest.raises(ConfigError, match=r"plant.toml: \[running.min_flow_fractoin\] unknown key"):
        read_plant_file(path)


def test_bad_layout_names_valid_values(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    path.write_text(path.read_text().replace('layout = "wide"', 'layout = "tall"'))
    with pytest.raises(
        ConfigError, match=r"exports\[1\]\.layout\] Input should be 'wide', 'long' or 'dataset'"
    ):
        read_plant_file(path)


def test_unknown_time_zone(tmp_path):
    path = make_plant(tmp_path, wide={}, timezone="Mars/Olympus")
    with pytest.raises(
        ConfigError, match=r"site.timezone\] time zone 'Mars/Olympus' is not an IANA"
    ):
        read_plant_file(path)


def test_elevation_without_unit_is_an_error(tmp_path):
    path = make_plant(tmp_path, wide={}, elevation="120")
    with pytest.raises(ConfigError, match=r"site.elevation\] '120' has no unit"):
        read_plant_file(path)


def test_not_toml(tmp_path):
    path = tmp_path / "plant.toml"
    path.write_text("[site\nname=1")
    with pytest.raises(ConfigError, match="not valid TOML"):
        read_plant_file(path)


def test_bad_unit_in_register_row_names_line_and_column(tmp_path):
    make_plant(tmp_path, wide={}, rows=[pump_row("P1"), pump_row("P2", flow_unit="gmp")])
    pumps, problems = read_pump_register(tmp_path / "pumps.csv")
    assert list(pumps) == ["P1"]  # the good row is kept
    assert problems[0].pump_id == "P2"
    assert "line 3 (pump P2), column 'flow_unit': unit 'gmp' is not known" in problems[0].message
    assert "gpm" in problems[0].message  # names what would be valid


def test_flow_unit_of_wrong_dimension(tmp_path):
    make_plant(tmp_path, wide={}, rows=[pump_row("P1", flow_unit="kPa")])
    _, problems = read_pump_register(tmp_path / "pumps.csv")
    assert "'kPa' is not a flow unit" in problems[0].message


def test_cell_unit_overrides_header_unit(tmp_path):
    make_plant(tmp_path, wide={}, rows=[pump_row("P1", tap_elevation="10 ft", tap_bore="4 in")])
    pumps, _ = read_pump_register(tmp_path / "pumps.csv")
    assert pumps["P1"].tap_elevation == pytest.approx(3.048)  # 1 ft = 0.3048 m exactly
    assert pumps["P1"].tap_bore == pytest.approx(0.1016)


def test_bad_reference_and_duplicate_ids(tmp_path):
    rows = [pump_row("P1"), pump_row("P1"), pump_row("P3", suction_pressure_reference="gage")]
    make_plant(tmp_path, wide={}, rows=rows)
    _, problems = read_pump_register(tmp_path / "pumps.csv")
    messages = " | ".join(p.message for p in problems)
    assert "'P1' already used on line 2" in messages
    assert "'gage' is not 'gauge' or 'absolute'" in messages


def test_unknown_register_column(tmp_path):
    make_plant(tmp_path, wide={})
    text = (tmp_path / "pumps.csv").read_text().replace("area,", "zone,", 1)
    (tmp_path / "pumps.csv").write_text(text)
    with pytest.raises(ConfigError, match="unknown column.*zone; valid columns are"):
        read_pump_register(tmp_path / "pumps.csv")


def test_curve_problems_reach_the_pump(tmp_path):
    curves = CURVES + "C2,50,m3/h,3,m\nC2,40,m3/h,4,m\n"
    rows = [pump_row("P1"), pump_row("P2", curve_id="C2"), pump_row("P3", curve_id="C9")]
    path = make_plant(tmp_path, wide={"a.csv": steady_frame()}, rows=rows, curves=curves)
    _, problems = read_curves(tmp_path / "curves.csv")
    assert "flows must be strictly increasing" in problems["C2"]
    plant = screening.load_plant(path)
    assert "curve is unusable" in plant.problems["P2"]
    assert "curve_id 'C9' is not in the curve table" in plant.problems["P3"]
    assert list(plant.pumps) == ["P1"]


def test_unknown_fluid_and_missing_policy(tmp_path):
    rows = [pump_row("P1", fluid="Unobtainium"), pump_row("P2", application="brewing")]
    plant = screening.load_plant(make_plant(tmp_path, wide={}, rows=rows))
    assert "'Unobtainium' is not known to CoolProp" in plant.problems["P1"]
    assert "no policy rule for application 'brewing'" in plant.problems["P2"]


def test_window_errors(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    with pytest.raises(screening.WindowError, match="not after its start"):
        screening.scan(path, "2026-10-02", "2026-10-01")
    with pytest.raises(screening.WindowError, match="not an ISO 8601 date; write it as 2026-10-01"):
        screening.scan(path, "next tuesday", "2026-10-01")
    # dotted and slashed dates can be read two ways: refused, never guessed
    for ambiguous in ("01.10.2026", "10/01/2026", "1/10/2026 06:00"):
        with pytest.raises(screening.WindowError, match="not an ISO 8601 date"):
            screening.scan(path, ambiguous, "2026-10-02")
