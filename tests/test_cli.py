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


def test_a_pump_named_twice_is_screened_once(two_pumps, tmp_path):
    once = screening.scan(two_pumps, pumps=["P1"])
    twice = screening.scan(two_pumps, pumps=["P1", "P1", "nope", "nope"])
    assert list(twice.summary["pump_id"]) == ["P1"]
    pd.testing.assert_frame_equal(twice.hours, once.hours)
    assert twice.hours["hours"].sum() == pytest.approx(2 * 24.0, rel=1e-12)
    assert list(twice.problems["pump_id"]) == ["nope"]
    out = tmp_path / "r"
    res = runner.invoke(app, ["scan", str(two_pumps), "--out", str(out), "--pump", "P1",
                              "--pump", "P1"])  # fmt: skip
    assert res.exit_code == 0, res.output
    assert "screened 1 pump(s), 0 not screened" in res.output
    table = pd.read_csv(out / "hours.csv")
    assert table.groupby("kind")["hours"].sum().to_numpy() == pytest.approx([24.0, 24.0])


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--workers", "0"], "--workers must be 1 or more, got 0"),
        (["--workers", "-3"], "--workers must be 1 or more, got -3"),
        (["--processes", "0"], "--processes must be 1 or more"),
        (["--processes", "-1"], "--processes must be 1 or more"),
        (["--cluster", "tcp://192.0.2.1:8786", "--workers", "2"], "give --cluster or --workers"),
        (["--processes", "2", "--workers", "2"], "give --processes, or --cluster / --workers"),
    ],
)
def test_worker_options_are_usage_errors_before_any_work(tmp_path, args, message):
    # the plant file does not exist: the options are refused before it is even read
    res = runner.invoke(app, ["scan", str(tmp_path / "missing.toml"), *args])
    assert res.exit_code == 2, res.output
    lines = [line for line in res.output.splitlines() if line.strip()]
    assert lines == [f"pumpscreen: usage error: {message}" + lines[0].split(message, 1)[1]]
    assert "Traceback" not in res.output


@pytest.mark.parametrize(("kw", "name"), [({"processes": 0}, "processes"),
                                          ({"processes": -2}, "processes"),
                                          ({"cluster": 0}, "workers")])  # fmt: skip
def test_scan_refuses_no_workers(two_pumps, kw, name):
    with pytest.raises(ValueError, match=f"{name} must be a whole number of 1 or more"):
        screening.scan(two_pumps, **kw)


def test_a_register_of_only_its_header_says_so(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame("P1")}, rows=[])
    res = runner.invoke(app, ["scan", str(path), "--out", str(tmp_path / "r")])
    assert res.exit_code == 4, res.output
    assert f"no pump screened: the register {tmp_path / 'pumps.csv'} lists no pump" in res.output


@pytest.mark.parametrize(
    ("column", "value", "message"),
    [
        ("rated_speed", "1e308", "1e+308 rpm is outside the valid range 1 to 60000 rpm"),
        ("rated_speed", "0.5", "0.5 rpm is outside the valid range 1 to 60000 rpm"),
        ("bep_flow", "1e9", "is outside the valid range 0.0036 to 360000 m³/h"),
        ("tap_bore", "1e6", "is outside the valid range 1 to 10000 mm"),
        ("tap_elevation", "-1e300", "is outside the valid range -500 to 500 m"),
    ],
)
def test_implausible_register_values_are_refused_with_the_range(tmp_path, column, value, message):
    rows = [pump_row("P1"), pump_row("P2", **{column: value})]
    frame = steady_frame("P1").merge(steady_frame("P2"), on="timestamp")
    result = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}, rows=rows))
    assert list(result.summary["pump_id"]) == ["P1"]  # the rest of the plant is screened
    reason = result.problems.set_index("pump_id")["message"]["P2"]
    assert f"(pump P2), column '{column}': " in reason and message in reason, reason


@pytest.mark.parametrize("word", ["metric", "SI units", ""])
def test_scan_refuses_unknown_display_units_before_the_work(two_pumps, tmp_path, word):
    """``scan --units`` takes si or us (any case) and refuses the rest at once, writing
    nothing (it used to screen the plant first and fail when writing the pages)."""
    out = tmp_path / "never"
    res = CliRunner().invoke(app, ["scan", str(two_pumps), "--out", str(out), "--units", word])
    assert res.exit_code == 2 and f"{word!r} is not 'si' or 'us'" in res.output
    assert not out.exists()
    ok = CliRunner().invoke(app, ["scan", str(two_pumps), "--out", str(out), "--units", "US"])
    assert ok.exit_code == 0, ok.output
    assert "US customary" in next((out / "pumps").glob("*.html")).read_text()


def test_the_installed_command_in_its_own_process(two_pumps, tmp_path):
    # the command as a user runs it: a process of its own, which ends with the exit code and a
    # complete report (every table readable) after the interpreter's teardown
    import subprocess
    import sys
    from pathlib import Path

    out = tmp_path / "report"
    code = "import sys; from screening.cli.main import app; sys.exit(app())"
    args = ["scan", str(two_pumps), "--out", str(out), "--quiet"]
    done = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True,
                          cwd=Path(screening.__file__).parents[1])  # fmt: skip
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == str((out / "index.html").resolve())
    book = pd.read_excel(out / "summary.xlsx", sheet_name=None)
    assert set(book) == {"summary", "hours", "data_quality", "not_screened"}
    assert sorted(book["summary"]["pump_id"]) == ["P1", "P2"]
    api = screening.scan(two_pumps)
    pd.testing.assert_frame_equal(pd.read_parquet(out / "hours.parquet"), api.hours)
