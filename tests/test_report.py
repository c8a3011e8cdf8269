"""The report folder: pump pages, safe file names, workbook, comparison, downsampling."""

from __future__ import annotations

import json
import re

import numpy as np
import pandas as pd
import pytest
from plantmaker import make_plant, pump_row, steady_frame
from typer.testing import CliRunner

import screening
from screening.base.files import page_names
from screening.cli.main import app
from screening.engine.plotdata import min_max_buckets

runner = CliRunner()


def test_min_max_buckets_keep_a_short_dip():
    # one-minute pieces for a day, a single-minute dip to 0.5: a mean per bucket would hide it
    grid = np.arange(1440, dtype=np.int64) * 60 * 10**9
    ratio = np.full(1440, 2.0)
    ratio[777] = 0.5
    out = min_max_buckets(
        grid, np.full(1440, 60 * 10**9), {"ratio": ratio}, 0, 1440 * 60 * 10**9, 48
    )
    assert len(out) == 48
    assert out["ratio_min"].min() == 0.5
    assert out["ratio_max"].max() == 2.0


def test_page_names_stay_inside_the_folder():
    names = page_names(["../../etc/passwd", "P/1", "p/1", "<script>"])
    assert all("/" not in n and not n.startswith(".") for n in names.values())
    assert len(set(n.lower() for n in names.values())) == 4  # unique, even on a Windows share


def _plant(tmp_path, pressure):
    frame = steady_frame("P1", pressure_kpa=pressure).merge(
        steady_frame("P2", pressure_kpa=100.0), on="timestamp"
    )
    return make_plant(tmp_path, wide={"a.csv": frame}, rows=[pump_row("P1"), pump_row("P2")])


def test_pump_pages_workbook_and_comparison(tmp_path):
    before = tmp_path / "september"
    res = runner.invoke(app, ["scan", str(_plant(tmp_path / "a", 100.0)), "--out", str(before)])
    assert res.exit_code == 0, res.output
    after = tmp_path / "october"
    # P1's suction now under vacuum: below guidance all day
    path = _plant(tmp_path / "b", -95.0)
    res = runner.invoke(
        app, ["scan", str(path), "--out", str(after), "--compare-to", str(before), "--units", "us"]
    )
    assert res.exit_code == 0, res.output
    changes = pd.read_csv(after / "changes.csv").set_index("pump_id")
    assert changes.loc["P1", "verdict"] == "worse"
    assert changes.loc["P1", "below_guidance_hours_change"] == pytest.approx(24.0)
    assert changes.loc["P2", "verdict"] == "unchanged"
    html = (after / "index.html").read_text()
    assert "worse (+24.0 h)" in html
    assert 'href="pumps/P1.html"' in html
    page = (after / "pumps" / "P1.html").read_text()
    assert '<script src="../plotly.min.js">' in page
    assert "head [ft]" in page  # US customary display units
    # every number of the pages in US units: no SI unit outside the tag names and units the
    # register gives (the transmitter's own "kPa" in the register rows)
    for text in (html, page):
        shown = re.sub(r'<script type="application/json".*?</script>', "", text, flags=re.S)
        shown = shown.replace("[kPa, gauge]", "")
        assert not re.search(r"\d (m|mm|kPa|°C)\b|\[(m|kPa|°C|m³/h)\]", shown)
    assert "1.10 or 1.97 ft above NPSH3" in page  # 0.60 m
    assert re.search(r"tap / [\d.]+ ft / [\d.]+ in", page)  # elevation and bore
    assert "°F" in page and "psi" in page and "gpm" in page
    assert "screening aid, not a design or safety determination" in page
    # the numbers behind the plots are in tables beside the pages
    buckets = pd.read_parquet(after / "plot_buckets.parquet")
    assert set(buckets["pump_id"]) == {"P1", "P2"} and "npsha_m_min" in buckets
    points = pd.read_csv(after / "operating_points.csv")
    assert points.groupby("pump_id")["hours"].sum().to_numpy() == pytest.approx([24.0, 24.0])
    book = pd.read_excel(after / "summary.xlsx", sheet_name=None)
    assert {"summary", "hours", "data_quality", "not_screened", "changes"} <= set(book)


def test_formula_like_text_is_neutralised(tmp_path):
    rows = [pump_row("P1", service="=SUM(1+2)")]
    path = make_plant(tmp_path, wide={"a.csv": steady_frame("P1")}, rows=rows)
    out = tmp_path / "r"
    screening.write_report(screening.scan(path), out)
    assert pd.read_csv(out / "summary.csv")["service"].iloc[0].startswith("'=")
    book = pd.read_excel(out / "summary.xlsx", sheet_name="summary")
    assert book["service"].iloc[0].startswith("'=")


def test_unknown_display_units(tmp_path):
    with pytest.raises(ValueError, match="display units 'metric' are not 'si' or 'us'"):
        screening.write_report(screening.scan(_plant(tmp_path, 100.0)), tmp_path / "r", "metric")


def test_operating_points_match_numpy_histogram():
    from screening.engine.plotdata import operating_points

    rng = np.random.default_rng(3)  # fixed random state
    flow = rng.uniform(0.0, 0.03, 5000)
    npsha = rng.uniform(0.0, 12.0, 5000)
    w = rng.uniform(0.0, 1.0, 5000)
    got = operating_points(flow, npsha, w, 0.03, bins=20)
    ref, _, _ = np.histogram2d(flow, npsha, bins=[got["flow_edges"], got["npsha_edges"]], weights=w)
    np.testing.assert_allclose(got["hours"], ref, rtol=1e-12, atol=1e-12)
    assert got["hours"].sum() == pytest.approx(w.sum())


def test_pages_say_when_the_scan_kept_no_plot_data(tmp_path):
    out = tmp_path / "r"
    screening.write_report(screening.scan(_plant(tmp_path, 100.0)), out)  # API default: none
    assert "No time plots" in (out / "pumps" / "P1.html").read_text()
    screening.write_report(screening.scan(_plant(tmp_path, 100.0), plot_buckets=100), out)
    page = (out / "pumps" / "P1.html").read_text()
    assert "No time plots" not in page and 'id="timeline"' in page


def test_markup_in_register_text_is_shown_as_text(tmp_path):
    bad = "<script>alert(1)</script>"
    rows = [pump_row("P1", service=bad)]
    path = make_plant(tmp_path, wide={"a.csv": steady_frame("P1")}, rows=rows)
    out = tmp_path / "r"
    screening.write_report(screening.scan(path, plot_buckets=100), out)
    for page in (out / "index.html", out / "pumps" / "P1.html"):
        html = page.read_text()
        assert bad not in html
        assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html


def test_compare_to_a_folder_of_reports_draws_each_pump_per_month(tmp_path):
    history = tmp_path / "history"
    months = {"2026-08": 100.0, "2026-09": -95.0}  # P1 healthy in August, below in September
    for month, pressure in months.items():
        folder = history / month
        res = runner.invoke(app, ["scan", str(_plant(tmp_path / month, pressure)), "--out",
                                  str(folder)])  # fmt: skip
        assert res.exit_code == 0, res.output
        run = json.loads((folder / "run.json").read_text())
        run["window_start_utc"] = f"{month}-01T00:00:00+00:00"  # as if written that month
        (folder / "run.json").write_text(json.dumps(run))
    out = tmp_path / "october"
    path = _plant(tmp_path / "b", 100.0)  # October: healthy again
    res = runner.invoke(app, ["scan", str(path), "--out", str(out), "--compare-to", str(history)])
    assert res.exit_code == 0, res.output
    table = pd.read_csv(out / "monthly_hours.csv")
    p1 = table[table.pump_id == "P1"].set_index("month")["below_guidance_hours"]
    assert list(p1.index) == ["2026-08", "2026-09", "2026-10"]
    assert p1.to_list() == pytest.approx([0.0, 24.0, 0.0])
    # since the latest earlier report (September), P1 got better by a whole day
    changes = pd.read_csv(out / "changes.csv").set_index("pump_id")
    assert changes.loc["P1", "verdict"] == "better"
    html = (out / "index.html").read_text()
    title = "hours below the guidance per month; 2026-08: 0.0 h, 2026-09: 24.0 h, 2026-10: 0.0 h"
    assert f"<title>{title}</title>" in html
    assert html.count('<svg class="spark"') == 2  # one per pump
    with pytest.raises(FileNotFoundError, match="no summary.parquet in it or in its sub-folders"):
        screening.write_report(screening.scan(path), tmp_path / "x", compare_to=[tmp_path / "b"])
