"""Loader edge cases: text states, quality columns, gaps, duplicates, clock changes, units.

Expected hours here follow from the time-weighting rules of DESIGN.md (a sample stands until
the next one, at most its stale limit) applied by hand to small invented series.
"""

from __future__ import annotations

import gzip

import numpy as np
import pandas as pd
import pytest
from plantmaker import make_plant, pump_row, steady_frame

import screening
from screening.inputs.timestamps import parse_times

H = 1 / 60  # one minute in hours


def hours(result, pid="P1", kind="margin"):
    h = result.hours
    return h[(h.pump_id == pid) & (h.kind == kind)].set_index("state")["hours"]


def test_text_values_are_bad_data_counted_not_dropped(tmp_path):
    frame = steady_frame().astype({"P1.TT": object})
    frame.loc[10:14, "P1.TT"] = "sensor-lost"  # five one-minute samples
    frame.loc[20, "P1.TT"] = "  ---  "
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    h = hours(r)
    assert h["bad_data"] == pytest.approx(6 * H)
    q = r.quality.set_index("role").loc["temperature"]
    assert q["text_values"] == 6
    assert "sensor-lost (5)" in q["words"]
    assert "a.csv line 12" in q["first_problem"]  # row index 10 + header line + 1
    assert h.sum() == pytest.approx(24.0)


def test_long_layout_quality_column(tmp_path):
    base = steady_frame().drop(columns=["P1.TT"])
    times = pd.date_range("2026-10-01", periods=1440, freq="1min")
    lines = ["tag,time,value,quality"]
    for i, t in enumerate(times):
        quality = "suspect" if 600 <= i < 660 else "ok"
        lines.append(f"P1.TT,{t:%Y-%m-%dT%H:%M:%S}+00:00,20.0,{quality}")
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": base}, long={"t.csv": "\n".join(lines)}))
    h = hours(r)
    assert h["bad_data"] == pytest.approx(1.0)
    assert r.quality.set_index("role").loc["temperature", "bad_quality"] == 60


def test_gap_beyond_stale_limit_is_no_data(tmp_path):
    frame = steady_frame()
    frame = frame.drop(index=range(600, 720))  # two hours without any sample
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}, stale="5 min"))
    h = hours(r)
    # the sample at 09:59 stands until 10:04; 10:04..12:00 (116 min) has no data
    assert h["no_data"] == pytest.approx(116 * H)
    assert h.sum() == pytest.approx(24.0)


def test_tags_at_different_instants_are_aligned_by_holding(tmp_path):
    frame = steady_frame()
    # temperature every 10 minutes only, with a 15 min stale limit on the pump
    frame.loc[frame.index % 10 != 0, "P1.TT"] = np.nan
    rows = [pump_row("P1", stale_limit="15 min")]
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}, rows=rows))
    assert hours(r)["ample_margin"] == pytest.approx(24.0)


def test_duplicates_and_out_of_order_rows_are_counted(tmp_path):
    frame = steady_frame()
    frame = pd.concat([frame, frame.iloc[[5, 6, 7]]])  # three duplicated rows at the end
    frame = pd.concat([frame.iloc[:100], frame.iloc[[200]], frame.iloc[100:]])
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    q = r.quality.set_index("role").loc["suction"]
    assert q["duplicates"] == 4
    # the first instant held twice (row 5, 00:05) is named where it first appears and again
    a = tmp_path / "exports" / "a.csv"
    assert f"duplicate time: {a} line 7, again at {a} line 1443" in q["first_problem"]
    assert q["out_of_order"] >= 2
    assert hours(r).sum() == pytest.approx(24.0)
    assert hours(r)["ample_margin"] == pytest.approx(24.0)


def test_frozen_transmitter_is_bad_data(tmp_path):
    rng = np.random.default_rng(1)
    frame = steady_frame()
    for tag in ("P1.PS", "P1.TT", "P1.FT"):  # live transmitters never repeat exactly
        frame[tag] = frame[tag] + rng.normal(0, 0.5, len(frame)).round(3)
    frame.loc[100:579, "P1.PS"] = 101.25  # eight hours unchanged
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}, frozen="6 h"))
    # frozen from 6 h after the run began: samples 460..579 (two hours)
    assert hours(r)["bad_data"] == pytest.approx(2.0 - H, abs=2 * H)
    assert r.quality.set_index("role").loc["suction", "frozen"] == pytest.approx(119, abs=1)


def test_stopped_pump_needs_only_its_run_tag(tmp_path):
    frame = steady_frame(run=0).astype({"P1.PS": object})
    frame["P1.PS"] = "offline"  # a stopped pump's suction transmitter reading text
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    assert hours(r)["stopped"] == pytest.approx(24.0)


def test_running_inferred_from_flow_without_run_tag(tmp_path):
    frame = steady_frame().drop(columns=["P1.RUN"])
    frame.loc[:719, "P1.FT"] = 0.5  # below 5 % of the BEP flow of 80 m3/h: stopped
    rows = [pump_row("P1", run_tag="")]
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}, rows=rows))
    h = hours(r)
    assert h["stopped"] == pytest.approx(12.0)
    assert h["ample_margin"] == pytest.approx(12.0)


def test_flow_outside_curve_is_off_curve(tmp_path):
    frame = steady_frame(flow_m3h=10.0)  # curve starts at 20 m3/h
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": frame}))
    assert hours(r)["off_curve"] == pytest.approx(24.0)


def test_mixed_units_give_the_same_hours(tmp_path):
    """The same pump in kPa/degC/m3/h and in psi/degF/gpm gives identical states."""
    si = steady_frame(pressure_kpa=30.0, temperature_c=60.0, flow_m3h=100.0)
    us = si.copy()
    us["P1.PS"] = 30.0 / 6.894757293168  # kPa to psi (NIST SP 811 definition)
    us["P1.TT"] = 60.0 * 9 / 5 + 32
    us["P1.FT"] = 100.0 / 0.2271247104  # m3/h to US gpm (1 gal = 3.785411784 L, exact)
    a = screening.scan(make_plant(tmp_path / "si", wide={"a.csv": si}), keep_series=True)
    rows = [pump_row("P1", suction_pressure_unit="psi", temperature_unit="degF", flow_unit="gpm")]
    b = screening.scan(make_plant(tmp_path / "us", wide={"a.csv": us}, rows=rows), keep_series=True)
    # rtol: the decimal text of the converted values in the CSV carries ~1e-16 relative,
    # amplified by the subtraction p - p_v; 1e-8 is far below any physical meaning
    np.testing.assert_allclose(a.series["P1"]["npsha_m"], b.series["P1"]["npsha_m"], rtol=1e-8)
    pd.testing.assert_series_equal(hours(a), hours(b))


def test_gzip_csv_is_read(tmp_path):
    path = make_plant(tmp_path, wide={})
    text = steady_frame().to_csv(index=False)
    with gzip.open(tmp_path / "exports" / "a.csv.gz", "wt") as fh:
        fh.write(text)
    (tmp_path / "plant.toml").write_text(
        (tmp_path / "plant.toml").read_text().replace('"exports/*.csv"', '"exports/*.csv*"')
    )
    r = screening.scan(path)
    assert hours(r)["ample_margin"] == pytest.approx(24.0)


class TestClockChange:
    """Europe/Berlin clocks go back on 2026-10-25 03:00 CEST to 02:00 CET (EU Directive
    2000/84/EC: last Sunday of October, 01:00 UTC)."""

    def test_repeated_hour_read_in_file_order(self):
        raw = pd.Series(["2026-10-25 02:30:00", "2026-10-25 02:30:00"])
        t, ok = parse_times(raw, "Europe/Berlin")
        assert ok.all()
        assert t[1] - t[0] == 3600 * 10**9  # first CEST (00:30 UTC), then CET (01:30 UTC)
        assert pd.Timestamp(t[0], tz="UTC") == pd.Timestamp("2026-10-25 00:30", tz="UTC")

    def test_skipped_hour_is_a_bad_timestamp(self):
        # clocks go forward on 2026-03-29 02:00 CET to 03:00 CEST: 02:30 does not exist
        t, ok = parse_times(pd.Series(["2026-03-29 02:30:00"]), "Europe/Berlin")
        assert not ok[0]

    def test_offsets_are_honoured(self):
        t, ok = parse_times(pd.Series(["2026-10-25T02:30:00+01:00"]), "Europe/Berlin")
        assert pd.Timestamp(t[0], tz="UTC") == pd.Timestamp("2026-10-25 01:30", tz="UTC")

    def test_local_day_with_repeated_hour_has_25_hours(self, tmp_path):
        local = pd.date_range("2026-10-25", "2026-10-26", freq="1min", tz="Europe/Berlin",
                              inclusive="left")  # fmt: skip
        frame = pd.DataFrame({"timestamp": local.strftime("%Y-%m-%d %H:%M:%S")})
        for tag, v in (("P1.PS", 100.0), ("P1.TT", 20.0), ("P1.FT", 80.0), ("P1.RUN", 1)):
            frame[tag] = v
        path = make_plant(
            tmp_path, wide={"a.csv": frame}, timezone="Europe/Berlin",
            start="2026-10-25", end="2026-10-26",
        )  # fmt: skip
        r = screening.scan(path)
        assert r.window_hours == pytest.approx(25.0)
        assert hours(r)["ample_margin"] == pytest.approx(25.0)
        assert hours(r)["no_data"] == pytest.approx(0.0)


def test_sample_before_the_window_holds_into_it(tmp_path):
    # last sample at 23:58 the day before stands until 00:03 with a 5 min stale limit
    frame = steady_frame(start="2026-09-30 23:58", periods=2)  # 23:58 and 23:59
    later = steady_frame(start="2026-10-01 00:10", periods=1430)
    both = pd.concat([frame, later])
    r = screening.scan(make_plant(tmp_path, wide={"a.csv": both}))
    h = hours(r)
    assert h["ample_margin"] == pytest.approx(4 * H + 1430 * H)  # 00:00-00:04, 00:10-24:00
    assert h["no_data"] == pytest.approx(6 * H)
    assert r.quality.set_index("role").loc["suction", "samples"] == 1432  # the look-back too


def test_parquet_wide_with_naive_and_aware_times(tmp_path):
    path = make_plant(tmp_path, wide={})
    base = steady_frame()
    naive = base.assign(timestamp=pd.to_datetime(base["timestamp"]))
    naive.iloc[:720].to_parquet(tmp_path / "exports" / "a.parquet")
    aware = naive.assign(timestamp=naive["timestamp"].dt.tz_localize("UTC"))
    aware.iloc[720:].to_parquet(tmp_path / "exports" / "b.parquet")
    (tmp_path / "plant.toml").write_text(
        (tmp_path / "plant.toml").read_text().replace('"exports/*.csv"', '"exports/*.parquet"')
    )
    r = screening.scan(path)
    assert hours(r)["ample_margin"] == pytest.approx(24.0)


def test_long_parquet_filters_tags_and_reads_quality(tmp_path):
    path = make_plant(tmp_path, wide={"a.csv": steady_frame().drop(columns=["P1.TT"])})
    times = pd.date_range("2026-10-01", periods=1440, freq="1min", tz="UTC")
    frame = pd.DataFrame(
        {
            "tag": ["P1.TT"] * 1440 + ["OTHER.TAG"] * 1440,
            "time": list(times) * 2,
            "value": 20.0,
            "quality": ["ok"] * 1380 + ["stale-link"] * 60 + ["ok"] * 1440,
        }
    )
    frame.to_parquet(tmp_path / "long" / "t.parquet")
    text = (tmp_path / "plant.toml").read_text()
    text += (
        '\n[[exports]]\nfiles = "long/*.parquet"\nlayout = "long"\ntag_column = "tag"\n'
        'time_column = "time"\nvalue_column = "value"\nquality_column = "quality"\n'
    )
    (tmp_path / "plant.toml").write_text(text)  # TOML appends a later [[exports]] block
    r = screening.scan(path)
    assert hours(r)["bad_data"] == pytest.approx(1.0)
    assert hours(r)["ample_margin"] == pytest.approx(23.0)


def test_long_rows_without_a_tag_are_reported_not_dropped(tmp_path):
    # invented long export: two rows name no tag; they belong to no pump, and the report
    # says so with the first place instead of dropping them silently
    from plantmaker import make_plant, steady_frame

    long_text = "tag,time,value,quality\n" + "\n".join(
        f"P1.{t},2026-10-01 00:{m:02d}:00,{v},ok"
        for m in range(60)
        for t, v in (("PS", 100), ("TT", 20), ("FT", 80), ("RUN", 1))
    )
    long_text += "\n,2026-10-01 00:10:00,5,ok\n  ,2026-10-01 00:11:00,6,ok\n"
    path = make_plant(tmp_path, wide={"w.csv": steady_frame("P9")}, long={"l.csv": long_text})
    r = screening.scan(path)
    problems = r.file_problems.set_index("file")["message"]
    message = problems[str(tmp_path / "long" / "l.csv")]
    assert "2 row(s) without a tag name in column 'tag' (first at data row 241)" in message
    assert "P1" in set(r.summary["pump_id"])


def test_parquet_duplicate_after_blank_cells_names_the_files_rows(tmp_path):
    # the wide Parquet reader keeps only where the rows it drops are (blank cells); the row of
    # a duplicate instant is found from them, and must be the file's row, not the position
    # among the kept samples
    path = make_plant(tmp_path, wide={})
    frame = steady_frame()
    frame = frame.assign(timestamp=pd.to_datetime(frame["timestamp"]).dt.tz_localize("UTC"))
    frame = pd.concat([frame.iloc[:11], frame.iloc[[10]], frame.iloc[11:]], ignore_index=True)
    frame.loc[[2, 3, 7], "P1.PS"] = np.nan  # three blank cells before the duplicate
    frame.to_parquet(tmp_path / "exports" / "a.parquet")
    (tmp_path / "plant.toml").write_text(
        (tmp_path / "plant.toml").read_text().replace('"exports/*.csv"', '"exports/*.parquet"')
    )
    r = screening.scan(path)
    q = r.quality.set_index("role").loc["suction"]
    assert q["duplicates"] == 1
    a = tmp_path / "exports" / "a.parquet"
    # rows numbered from 0 as the Parquet reader numbers them: 10:00 at rows 10 and 11
    assert f"duplicate time: {a} row 10, again at {a} row 11" in q["first_problem"]
