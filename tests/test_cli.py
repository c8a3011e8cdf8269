"""The command line against the Python API: same numbers, meaningful exit codes."""

from __future__ import annotations

import json

import pandas as pd
import pytest
from plantmaker import make_plant, pump_row, steady_frame
from typer.testing import CliRunner

import screening
from screening.cli.main import app

runner = CliRunner()


@pytest.fixture()
def two_pumps(tmp_path):
    a = steady_frame("P1", pressure_kpa=100.0)
    b = steady_frame("P2", pressure_kpa=-60.0)  # a suction under vacuum: little margin
    frame = a.merge(b, on="timestamp")
    return make_plant(tmp_path, wide={"a.csv": frame}, rows=[pump_row("P1"), pump_row("P2")])


def test_scan_cli_matches_api(two_pumps, tmp_path):
    out = tmp_path / "report"
    res = runner.invoke(app, ["scan", str(two_pumps), "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert str(out / "index.html") in res.output.replace("\n", "")
    api = screening.scan(two_pumps)
    table = pd.read_csv(out / "hours.csv")
    assert list(table.columns) == ["pump_id", "kind", "state", "hours"]
    # margin states and operating regions, zeros included
    assert len(table) == 2 * (len(screening.STATES) + len(screening.REGIONS))
    merged = table.merge(api.hours, on=["pump_id", "kind", "state"], suffixes=("_cli", "_api"))
    pd.testing.assert_series_equal(
        merged["hours_cli"],
        merged["hours_api"],
        check_names=False,
        check_dtype=False,
        rtol=1e-12,
    )  # (a CSV has no types: a whole number of hours may come back as an integer)
    pq = pd.read_parquet(out / "hours.parquet")
    assert pq.groupby("kind")["hours"].sum().to_numpy() == pytest.approx([48.0, 48.0])
    html = (out / "index.html").read_text()
    assert '<script src="plotly.min.js">' in html
    assert '<div id="hours-by-margin"' in html  # the figure is markup, not escaped text
    assert '<div id="hours-by-region"' in html
    assert "screening aid, not a design or safety determination" in html
    assert (out / "plotly.min.js").stat().st_size > 1_000_000
    meta = json.loads((out / "run.json").read_text())
    assert meta["pumps_screened"] == 2
    assert all(len(f["sha256"]) == 64 for f in meta["inputs"])


def test_one_pumps_bad_config_does_not_stop_the_rest(tmp_path):
    rows = [pump_row("P1"), pump_row("P2", fluid="NotAFluid"), pump_row("P3")]
    path = make_plant(tmp_path, wide={"a.csv": steady_frame("P1")}, rows=rows)
    res = runner.invoke(app, ["scan", str(path), "--out", str(tmp_path / "r")])
    assert res.exit_code == 3, res.output  # partly screened
    problems = pd.read_csv(tmp_path / "r" / "not_screened.csv")
    assert set(problems["pump_id"]) == {"P2", "P3"}
    assert "P3.PS (suction)" in problems.set_index("pump_id").loc["P3", "message"]
    assert "not found in any export" in problems.set_index("pump_id").loc["P3", "message"]


def test_nothing_screened_exit_code(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame("P9")}, rows=[pump_row("P1")])
    res = runner.invoke(app, ["scan", str(path), "--out", str(tmp_path / "r")])
    assert res.exit_code == 4


def test_config_error_is_one_paragraph(tmp_path):
    res = runner.invoke(app, ["scan", str(tmp_path / "missing.toml")])
    assert res.exit_code == 1
    assert "plant file not found" in res.output
    assert "Traceback" not in res.output


def test_check_reports_tags_and_coverage(two_pumps):
    res = runner.invoke(app, ["check", str(two_pumps)])
    assert res.exit_code == 0, res.output
    assert "P1           can be screened     data for 100.0 % of the window" in res.output
    assert "2 pump(s): 2 can be screened, 0 not enough data, 0 cannot be screened" in res.output
    result = screening.check(two_pumps)
    assert result.ok and len(result.tags) == 8
    assert set(result.tags["samples"]) == {1440}


def test_check_finds_missing_tag(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame("P1")}, rows=[pump_row("P2")])
    res = runner.invoke(app, ["check", str(path)])
    assert res.exit_code == 3
    assert "P2           cannot be screened" in res.output
    assert "not found in any export file" in res.output and "P2.PS (suction)" in res.output


def test_check_counts_malformed_rows(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame("P1")})
    export = tmp_path / "exports" / "a.csv"
    lines = export.read_text().splitlines()
    lines[5] += ",7,8"  # two stray fields: a garbled line of the historian's export
    export.write_text("\n".join(lines) + "\n")
    result = screening.check(path)
    suction = result.tags.set_index("role").loc["suction"]
    assert "1 rows with a wrong number of fields" in suction["problems"]
