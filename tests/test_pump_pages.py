"""Pump pages and the overview: figures written as plotly.js JSON inside the page."""

from __future__ import annotations

import json
import re

import numpy as np
import pandas as pd
import pytest
from plantmaker import make_plant, pump_row, steady_frame

import screening
from screening.report import figjson

_FIGURE = re.compile(r'<script type="application/json" id="([\w-]+)-figure">(.*?)</script>', re.S)


def _figures(html: str) -> dict[str, dict]:
    """The figures embedded in a page, by the id of their div."""
    return {div: json.loads(text) for div, text in _FIGURE.findall(html)}


@pytest.fixture(scope="module")
def stopped_two_hours(tmp_path_factory):
    """A day of one pump, stopped from 10:00 to 12:00 (no NPSHa then), its report written."""
    tmp = tmp_path_factory.mktemp("pages")
    frame = steady_frame("P1")
    frame.loc[600:719, "P1.RUN"] = 0
    path = make_plant(tmp, wide={"a.csv": frame}, rows=[pump_row("P1")], timezone="Europe/Berlin")
    result = screening.scan(path, plot_buckets=96)
    out = tmp / "r"
    screening.write_report(result, out)
    return result, out


def test_pump_page_figures_parse_with_the_expected_traces(stopped_two_hours):
    result, out = stopped_two_hours
    figs = _figures((out / "pumps" / "P1.html").read_text(encoding="utf-8"))
    assert set(figs) == {"npsh", "ratio", "process", "points", "calendar"}
    npsh = figs["npsh"]
    assert [t["name"] for t in npsh["data"]] == [
        "NPSHa (min in bucket)",
        "NPSHa (max in bucket)",
        "guidance (max in bucket)",
        "NPSH3 (max in bucket)",
    ]
    assert npsh["layout"]["yaxis"]["title"]["text"] == "head [m]"
    assert npsh["config"] == {"responsive": True}
    # times: wall-clock ISO strings in the site's time zone, one per bucket
    plot = result.plots["P1"]
    expected = plot["time"].dt.tz_convert("Europe/Berlin").dt.strftime("%Y-%m-%dT%H:%M:%S")
    assert npsh["data"][0]["x"] == list(expected)
    # the stop is a gap (null), not a line drawn through it; running buckets are numbers
    low = npsh["data"][0]["y"]
    assert len(low) == len(plot) == 96
    assert low.count(None) == int(plot["npsha_m_min"].isna().sum()) > 0
    running = [v for v in low if v is not None]
    np.testing.assert_allclose(running, plot["npsha_m_min"].dropna(), rtol=1e-12)
    # band edges of the ratio plot as lines across it, with their labels
    ratio = figs["ratio"]["layout"]
    g = result.plant.guidance["P1"]
    assert [s["y0"] for s in ratio["shapes"]] == pytest.approx(
        [1.0, g.ratio, result.plant.settings.policy.ample_ratio]
    )
    assert [a["text"] for a in ratio["annotations"]] == ["NPSH3", "guidance ratio", "ample"]
    # process conditions: one y axis per quantity, stacked, all x axes moving together
    process = figs["process"]["layout"]
    assert process["yaxis"]["title"]["text"] == "temperature [°C]"
    assert process["yaxis3"]["title"]["text"] == "flow [m³/h]"
    assert process["xaxis"]["matches"] == process["xaxis2"]["matches"] == "x3"
    assert process["yaxis3"]["domain"][0] == 0.0
    assert process["yaxis"]["domain"][1] == pytest.approx(1.0)
    points = figs["points"]
    assert [t["type"] for t in points["data"]] == ["heatmap", "scatter"]
    assert points["layout"]["shapes"][0]["type"] == "rect"
    assert points["layout"]["annotations"][0]["text"] == "preferred region"
    assert "below NPSH3" in [t["name"] for t in figs["calendar"]["data"]]


def test_overview_figures_parse(stopped_two_hours):
    _, out = stopped_two_hours
    figs = _figures((out / "index.html").read_text(encoding="utf-8"))
    assert set(figs) == {"hours-by-margin", "hours-by-region"}
    bars = figs["hours-by-margin"]["data"]
    assert all(t["type"] == "bar" and t["y"] == ["P1"] for t in bars)
    hours = sum(t["x"][0] for t in bars)
    assert hours == pytest.approx(24.0)  # every hour of the window in one state


def test_script_closing_text_cannot_leave_the_figure_json():
    bad = "</script><script>alert(1)</script><!--"
    text = figjson.dumps({"name": bad, "y": np.array([1.0, np.nan])})
    assert "<" not in text and ">" not in text and "&" not in text
    assert json.loads(text) == {"name": bad, "y": [1.0, None]}


def test_markup_in_a_tag_name_stays_inside_the_page_text(tmp_path):
    bad = "</script><script>alert(1)</script>"
    tag = f"P1.PS{bad}"
    frame = steady_frame("P1").rename(columns={"P1.PS": tag})
    path = make_plant(
        tmp_path, wide={"a.csv": frame}, rows=[pump_row("P1", suction_pressure_tag=tag)]
    )
    out = tmp_path / "r"
    screening.write_report(screening.scan(path, plot_buckets=50), out)
    for page in (out / "index.html", out / "pumps" / "P1.html"):
        html = page.read_text(encoding="utf-8")
        assert bad not in html
        assert html.count("<script") == html.count("</script>")  # no script added or cut
    page = (out / "pumps" / "P1.html").read_text(encoding="utf-8")
    assert "&lt;/script&gt;&lt;script&gt;alert(1)&lt;/script&gt;" in page  # shown as text
    assert _figures(page)["npsh"]["data"][0]["name"] == "NPSHa (min in bucket)"


def test_figure_json_refuses_objects_it_cannot_write():
    with pytest.raises(TypeError, match="not JSON serializable: object"):
        figjson.dumps({"x": object()})


def test_local_times_keep_milliseconds_only_when_needed():
    stamps = ["2026-10-01 00:00:00.0", "2026-10-01 00:00:01.5"]
    t = pd.Series(pd.to_datetime(stamps, utc=True, format="ISO8601"))
    assert figjson.local_times(t, "UTC") == ["2026-10-01T00:00:00.000", "2026-10-01T00:00:01.500"]
    assert figjson.local_times(t[:1], "Europe/Berlin") == ["2026-10-01T02:00:00"]
