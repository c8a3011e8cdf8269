"""Ordinary mistakes of a new user never end in a report that reads as "all clear".

Each test reproduces one way an earlier version screened a plant as healthy, or as empty with
exit code 0, when its data had been misread or was missing; the plants are invented
(tests/plantmaker.py) and the expected hours are worked out by hand from the time-weighting
rules (a sample stands until the next one, at most the stale limit).
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest
from plantmaker import make_plant, pump_row, steady_frame
from typer.testing import CliRunner

import screening
from screening.base.text import hours_text
from screening.cli.main import app

runner = CliRunner()
H = 1.0 / 60.0  # one minute [h]


def _margin(result, pump="P1") -> dict[str, float]:
    h = result.hours
    return h[(h.kind == "margin") & (h.pump_id == pump)].set_index("state")["hours"].to_dict()


# --- 1. dates --------------------------------------------------------------------------------


@pytest.mark.parametrize("value", ["01.10.2026", "10/01/2026", "1.10.2026 06:00", "Oct 1 2026"])
def test_window_outside_iso_8601_is_refused_with_exit_2(tmp_path, value):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    res = runner.invoke(app, ["scan", str(path), "--from", value, "--to", "2026-10-02"])
    assert res.exit_code == 2
    assert "not an ISO 8601 date" in res.output and "2026-10-01" in res.output
    assert not (tmp_path / "reports").exists()


def test_window_options_of_onset_check_and_ingest_are_iso_too(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    for args in (
        ["onset", str(path), "P1", "--from", "01.10.2026", "--to", "2026-10-02"],
        ["onset", str(path), "P1", "--from", "2026-10-01", "--to", "2026-10-02",
         "--failed-on", "02/10/2026"],
        ["check", str(path), "--from", "10/01/2026", "--to", "2026-10-02"],
        ["ingest", str(path), "--from", "1.10.2026"],
    ):  # fmt: skip
        res = runner.invoke(app, args)
        assert res.exit_code == 2, (args, res.output)
        assert "ISO 8601" in res.output


def _slashed_export(folder: Path, day_first: bool = True) -> Path:
    """A wide CSV written day first, as a European historian writes it: 13 March 2026 from
    00:00, one sample a minute for a day (the 13th makes the order visible)."""
    frame = steady_frame(start="2026-03-13", periods=1440)
    stamps = pd.to_datetime(frame["timestamp"])
    fmt = "%d/%m/%Y %H:%M" if day_first else "%m/%d/%Y %H:%M"
    frame["timestamp"] = stamps.dt.strftime(fmt)
    path = make_plant(
        folder, wide={"a.csv": frame}, start="2026-03-13", end="2026-03-14",
        timezone="Europe/London",
    )  # fmt: skip
    return path


def _declare(path: Path, order: str) -> None:
    text = path.read_text()
    path.write_text(text.replace('layout = "wide"', f'layout = "wide"\ndate_order = "{order}"'))


def test_day_first_dates_without_a_declared_order_are_never_guessed(tmp_path):
    path = _slashed_export(tmp_path)
    # check names the file, the first row and both readings of an example, and exits 3
    res = runner.invoke(app, ["check", str(path)])
    assert res.exit_code == 3, res.output
    out = " ".join(res.output.split())
    assert "a.csv" in out and "first at line 2" in out
    assert "13 March 2026 (day first)" in out or "(day first) or" in out
    assert 'date_order = "day_first" or "month_first"' in out
    # the scan places none of those rows: no sample in the window, exit 4, the file named
    res = runner.invoke(app, ["scan", str(path), "--out", str(tmp_path / "r")])
    assert res.exit_code == 4, res.output
    out = " ".join(res.output.split())
    assert "no samples between 2026-03-13 00:00 and 2026-03-14 00:00" in out
    assert "a.csv: dates like '13/03/2026 00:00'" in out and "date_order" in out
    assert not (tmp_path / "r").exists()
    r = screening.scan(path)
    assert r.quality.set_index("role").loc["suction", "bad_timestamps"] == 1440
    assert _margin(r)["no_data"] == pytest.approx(24.0)
    assert not bool(r.summary["enough_data"].iloc[0])


def test_declared_day_first_reads_the_month_right(tmp_path):
    path = _slashed_export(tmp_path)
    _declare(path, "day_first")
    r = screening.scan(path)
    # 24 h of steady running well above NPSH3: ample margin all day, nothing unplaced
    assert _margin(r)["ample_margin"] == pytest.approx(24.0)
    assert r.quality["bad_timestamps"].sum() == 0
    res = runner.invoke(app, ["check", str(path)])
    assert res.exit_code == 0, res.output


def test_rows_contradicting_the_declared_order_are_bad_timestamps(tmp_path):
    path = _slashed_export(tmp_path)  # written day first: "13/03/2026" ...
    _declare(path, "month_first")  # ... declared month first: a 13th month
    r = screening.scan(path)
    q = r.quality.set_index("role").loc["suction"]
    assert q["bad_timestamps"] == 1440
    assert "a.csv line 2" in q["first_problem"]
    files = " ".join(r.file_problems["message"])
    assert "no date read month first" in files


# --- 2. empty and thin windows ---------------------------------------------------------------


def test_window_without_samples_exits_4_with_what_the_exports_hold(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    out = tmp_path / "r"
    res = runner.invoke(
        app, ["scan", str(path), "--from", "2025-01-01", "--to", "2025-02-01", "--out", str(out)]
    )
    assert res.exit_code == 4, res.output
    assert (
        "no samples between 2025-01-01 00:00 and 2025-02-01 00:00 (UTC); the exports hold "
        "2026-10-01 00:00 to 2026-10-01 23:59" in " ".join(res.output.split())
    )
    assert not out.exists()  # no report that could read as an all-clear
    result = screening.scan(path, "2025-01-01", "2025-02-01")
    with pytest.raises(screening.WindowError, match="no report written: no samples between"):
        screening.write_report(result, out)


def test_pump_below_min_coverage_is_listed_apart_and_never_ranked(tmp_path):
    a = steady_frame("P1")
    b = steady_frame("P2").iloc[:600]  # 10 h of 24: 41.7 % of the window (then no data)
    frame = a.merge(b, on="timestamp", how="left")
    path = make_plant(tmp_path, wide={"a.csv": frame}, rows=[pump_row("P1"), pump_row("P2")])
    out = tmp_path / "r"
    res = runner.invoke(app, ["scan", str(path), "--out", str(out)])
    assert res.exit_code == 3, res.output
    text = res.output
    assert "not enough data to screen (1 pump(s)" in text
    ranked = text.split("not enough data")[0]
    assert "P2" not in ranked.split("most exposed")[1]
    summary = pd.read_csv(out / "summary.csv")
    p2 = summary.set_index("pump_id").loc["P2"]
    assert not p2["enough_data"]
    assert p2["coverage"] == pytest.approx((600 + 4) / 1440)  # the last sample holds 5 min
    assert list(summary["pump_id"]) == ["P1", "P2"]  # never among the healthy ones above
    html = (out / "index.html").read_text()
    ranking = html.split('<table id="ranking">')[1].split("</table>")[0]
    assert "P2" not in ranking
    assert "Not enough data to screen" in html and '<table id="thin">' in html
    page = next((out / "pumps").glob("P2*.html")).read_text()
    assert "Not enough data to screen" in page
    res = runner.invoke(app, ["check", str(path)])
    assert res.exit_code == 3
    assert "P2           not enough data" in res.output
    assert "gap(s) beyond the stale limit" in res.output


def test_min_coverage_is_a_plant_setting(tmp_path):
    b = steady_frame("P1").iloc[:600]
    path = make_plant(tmp_path, wide={"a.csv": b})
    path.write_text(path.read_text().replace("[data]\n", "[data]\nmin_coverage = 0.4\n"))
    r = screening.scan(path)
    assert bool(r.summary["enough_data"].iloc[0])


# --- 3. run-status words ---------------------------------------------------------------------


@pytest.mark.parametrize(
    ("on", "off"), [("ON", "OFF"), ("True", "False"), ("running", "Stopped"), ("yes", "NO")]
)
def test_run_status_words_are_read_as_running_and_stopped(tmp_path, on, off):
    frame = steady_frame()
    frame["P1.RUN"] = [on if i < 720 else off for i in range(1440)]
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    h = _margin(r)
    assert h["bad_data"] == 0.0
    assert h["ample_margin"] == pytest.approx(12.0)
    assert h["stopped"] == pytest.approx(12.0)


def test_unknown_run_word_is_bad_data_counted_with_the_word(tmp_path):
    frame = steady_frame()
    frame["P1.RUN"] = ["ON" if i < 1380 else "STANDBY" for i in range(1440)]
    path = make_plant(tmp_path, wide={"a.csv": frame})
    r = screening.scan(path)
    q = r.quality.set_index("role").loc["run"]
    assert q["text_values"] == 60 and "STANDBY (60)" in q["words"]
    assert _margin(r)["bad_data"] == pytest.approx(1.0)
    # the plant's own words extend the defaults
    path.write_text(path.read_text().replace("[running]\n", '[running]\noff_words = ["standby"]\n'))
    h = _margin(screening.scan(path))
    assert h["bad_data"] == 0.0 and h["stopped"] == pytest.approx(1.0)


def test_check_names_a_run_tag_of_mostly_unknown_words(tmp_path):
    frame = steady_frame()
    frame["P1.RUN"] = "IN SERVICE"
    path = make_plant(tmp_path, wide={"a.csv": frame})
    res = runner.invoke(app, ["check", str(path)])
    assert res.exit_code == 3, res.output
    out = " ".join(res.output.split())
    assert "run tag P1.RUN: 100 % of its samples are words not known as on or off" in out
    assert "on_words or off_words" in out


def test_a_word_meaning_both_on_and_off_is_refused(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    path.write_text(path.read_text().replace("[running]\n", '[running]\non_words = ["off"]\n'))
    with pytest.raises(screening.ConfigError, match="'off' in both on_words and off_words"):
        screening.scan(path)


# --- 4. check: units and register -----------------------------------------------------------


@pytest.mark.parametrize(
    ("unit", "hint"),
    [("psig", "write 'psi' and put the reference, 'gauge'"),
     ("barg", "write 'bar' and put the reference, 'gauge'"),
     ("kpa", "write 'kPa' (units are case-sensitive)")],
)  # fmt: skip
def test_a_refused_unit_says_what_to_write(tmp_path, unit, hint):
    rows = [pump_row("P1", suction_pressure_unit=unit), pump_row("P2")]
    frame = steady_frame("P1").merge(steady_frame("P2"), on="timestamp")
    path = make_plant(tmp_path, wide={"a.csv": frame}, rows=rows)
    res = runner.invoke(app, ["check", str(path)])
    assert res.exit_code == 3
    assert hint in " ".join(res.output.split())


def test_every_empty_register_cell_of_a_row_is_named_at_once(tmp_path):
    rows = [pump_row("P1", tap_bore="", flow_unit="", curve_id="")]
    path = make_plant(tmp_path, wide={"a.csv": steady_frame()}, rows=rows)
    res = runner.invoke(app, ["check", str(path)])
    assert res.exit_code == 3
    assert "columns 'flow_unit', 'curve_id', 'tap_bore' are empty" in " ".join(res.output.split())


# --- 5. short exposure -----------------------------------------------------------------------


def test_two_minutes_below_npsh3_never_show_as_zero(tmp_path):
    frame = steady_frame()
    # two one-minute samples at a suction pressure under deep vacuum: NPSHa < NPSH3
    frame.loc[700:701, "P1.PS"] = -95.0
    path = make_plant(tmp_path, wide={"a.csv": frame})
    out = tmp_path / "r"
    res = runner.invoke(app, ["scan", str(path), "--out", str(out)])
    assert res.exit_code == 0, res.output
    r = screening.scan(path)
    assert _margin(r)["below_npsh3"] == pytest.approx(2 * H)
    line = next(x for x in res.output.splitlines() if x.strip().startswith("P1"))
    assert line.split()[1:3] == ["2", "min"]  # below NPSH3: minutes, never "0.0 h"
    html = (out / "index.html").read_text()
    ranking = html.split('<table id="ranking">')[1].split("</table>")[0]
    assert ">2 min<" in ranking
    page = next((out / "pumps").glob("P1*.html")).read_text()
    assert "below NPSH3: 2 min" in page


def test_hours_text():
    # 0.1 h and above: one decimal; below: minutes; never "0.0" for a positive time
    assert hours_text(0.0) == "0.0"
    assert hours_text(2 / 60) == "2 min"
    assert hours_text(0.2 / 60) == "<1 min"
    assert hours_text(0.1, unit=True) == "0.1 h"
    assert hours_text(105.64) == "105.6"
