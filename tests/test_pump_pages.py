"""Pump pages and the overview: figures written as plotly.js JSON inside the page."""

from __future__ import annotations

import base64
import json
import re

import numpy as np
import pandas as pd
import pytest
from plantmaker import make_plant, pump_row, steady_frame

import screening
from screening.report import figjson

_FIGURE = re.compile(r'<script type="application/json" id="([\w-]+)-figure">(.*?)</script>', re.S)


def _array(value):
    """A figure array as the page's script would see it: packed typed arrays and 16-bit series
    decoded (NaN and the 16-bit missing code as None), plain lists as they are."""
    if isinstance(value, dict) and "bdata" in value:
        a = np.frombuffer(base64.b64decode(value["bdata"]), dtype="<" + value["dtype"])
        if "shape" in value:
            a = a.reshape([int(n) for n in value["shape"].split(",")])
        return [None if not np.isfinite(v) else float(v) for v in a.ravel()]
    if isinstance(value, dict) and "q16" in value:
        code = np.frombuffer(base64.b64decode(value["q16"]), dtype="<i2")
        return [
            None if c == figjson.Q16_MISSING else value["lo"] + (int(c) + 32767) * value["step"]
            for c in code
        ]
    return value


def _figures(html: str) -> dict[str, dict]:
    """The figures embedded in a page, by the id of their div, their arrays decoded and the
    shared time axis put into the traces that use it (as the page's script does)."""
    figs = {}
    for div, text in _FIGURE.findall(html):
        fig = json.loads(text)
        times = _array(fig["times"]) if "times" in fig else None
        if times is not None and "t0" in fig["times"]:
            times = [fig["times"]["t0"] + v for v in times]
        for trace in fig["data"]:
            for key in ("x", "y", "z"):
                if key in trace:
                    trace[key] = _array(trace[key])
            if trace.get("x") == figjson.SHARED_TIME:
                trace["x"] = times
        figs[div] = fig
    return figs


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
    assert set(figs) == {"timeline", "points", "calendar"}
    time = figs["timeline"]
    names = [t["name"] for t in time["data"]]
    assert names[:5] == [
        "NPSHa, minimum in bucket",
        "NPSHa, maximum in bucket",
        "guidance NPSHa",
        "NPSH3 at running speed",
        "NPSHa/NPSH3, minimum in bucket",
    ]
    assert time["layout"]["yaxis"]["title"]["text"] == "head [m]"
    assert time["config"] == {"responsive": True}
    # times: wall-clock milliseconds in the site's time zone, one per bucket, shared by all
    plot = result.plots["P1"]
    wall = plot["time"].dt.tz_convert("Europe/Berlin").dt.tz_localize(None)
    expected = (wall - pd.Timestamp("1970-01-01")) // pd.Timedelta(milliseconds=1)
    assert time["data"][0]["x"] == [float(v) for v in expected]
    assert time["data"][-1]["x"] == time["data"][0]["x"]
    # the stop is a gap (null), not a line drawn through it; running buckets are numbers
    # within half a 16-bit step of the series' range
    low = time["data"][0]["y"]
    assert len(low) == len(plot) == 96
    assert low.count(None) == int(plot["npsha_m_min"].isna().sum()) > 0
    running = [v for v in low if v is not None]
    span = np.ptp(plot["npsha_m_min"].dropna())
    np.testing.assert_allclose(running, plot["npsha_m_min"].dropna(), atol=span / 65534 + 1e-12)
    # band edges of the ratio row as named lines (their labels in the legend, never printed
    # over each other)
    g = result.plant.guidance["P1"]
    edges = {t["name"]: t["y"][0] for t in time["data"] if t.get("yaxis") == "y2"}
    ample = result.plant.settings.policy.ample_ratio
    assert edges == {
        "NPSHa/NPSH3, minimum in bucket": pytest.approx(edges["NPSHa/NPSH3, minimum in bucket"]),
        "ratio 1: NPSH3": 1.0,
        f"guidance ratio {g.ratio:.2f}": pytest.approx(g.ratio),
        f"ample from ratio {ample:.2f}": pytest.approx(ample),
    }
    # process conditions: one y axis per quantity below the head and ratio rows, every x axis
    # moving with the first (one width, one time axis), titles at least 11 px
    lay = time["layout"]
    assert lay["yaxis3"]["title"]["text"] == "temperature<br>[°C]"
    assert lay["yaxis5"]["title"]["text"] == "flow<br>[m³/h]"
    axes = [k for k in lay if k.startswith("xaxis")]
    assert len(axes) == 5 and all(lay[k].get("matches") == "x" for k in axes if k != "xaxis")
    assert all(lay[k]["domain"] == [0.0, 1.0] for k in axes)
    assert all(lay[k]["title"]["font"]["size"] >= 11 for k in lay if k.startswith("yaxis"))
    # the thick and thin lines of the process rows have one legend entry each
    shown = [t["name"] for t in time["data"] if t.get("showlegend", True)]
    assert shown.count("process value, minimum in bucket") == 1
    assert shown.count("process value, maximum in bucket") == 1
    # the stop is shaded as stopped, named in the legend
    spans = {sp["shape"]["name"]: _array(sp["edges"]) for sp in time["spans"]}
    assert list(spans) == ["shaded: stopped"]
    stop = spans["shaded: stopped"]
    assert len(stop) == 2 and stop[1] - stop[0] == pytest.approx(2 * 3600e3, abs=2 * 900e3)
    points = figs["points"]
    assert [t["type"] for t in points["data"]] == ["heatmap", "scatter", "scatter"]
    cells = [z for z in points["data"][0]["z"] if z is not None]
    assert sum(cells) == pytest.approx(result.points["P1"]["hours"].sum(), rel=1e-6)
    assert [t["name"] for t in points["data"][1:]] == [
        f"NPSH3 at rated speed {result.plant.pumps['P1'].rated_speed:.0f} rpm",
        "guidance NPSHa at that speed",
    ]
    assert points["layout"]["shapes"][0]["type"] == "rect"
    assert points["layout"]["annotations"][0]["text"] == "preferred region"
    assert "below NPSH3" in [t["name"] for t in figs["calendar"]["data"]]


def test_hours_table_shows_labels_not_codes(stopped_two_hours):
    _, out = stopped_two_hours
    page = (out / "pumps" / "P1.html").read_text(encoding="utf-8")
    table = page[page.index('<table id="hours">') :].split("</table>")[0]
    assert "stopped: 2.0 h" in table and "below NPSH3: 0.0 h" in table
    assert "below minimum flow:" in table
    assert not re.search(r"\b(below_npsh3|no_data|bad_data|below_min_flow)\b", table)


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
    assert _figures(page)["timeline"]["data"][0]["name"] == "NPSHa, minimum in bucket"


def test_figure_json_refuses_objects_it_cannot_write():
    with pytest.raises(TypeError, match="not JSON serializable: object"):
        figjson.dumps({"x": object()})


def test_local_times_keep_milliseconds_only_when_needed():
    stamps = ["2026-10-01 00:00:00.0", "2026-10-01 00:00:01.5"]
    t = pd.Series(pd.to_datetime(stamps, utc=True, format="ISO8601"))
    assert figjson.local_times(t, "UTC") == ["2026-10-01T00:00:00.000", "2026-10-01T00:00:01.500"]
    assert figjson.local_times(t[:1], "Europe/Berlin") == ["2026-10-01T02:00:00"]
