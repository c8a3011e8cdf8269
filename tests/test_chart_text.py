"""Text from the plant's files is shown as written in the charts, never read as markup.

plotly.js reads a subset of HTML in the texts it draws (trace names, category labels on the
axes, hover text): a pump id ``<a href='...'>link</a>`` would become a live link in the axis
labels of the overview's hours charts. Every text handed to a chart is escaped; checked in the
figure JSON and, where Chromium is installed, in the drawn charts of the overview, a pump page
and a what-if scenario page.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from plantmaker import make_plant, pump_row, steady_frame

import screening
from screening.report.figjson import figure_html, plain_texts

LINK = "<a href='https://example.invalid/x'>link</a>"
BOLD = "<b>B</b> & <br>C"
CHROMIUM = os.environ.get("PUMPSCREEN_CHROMIUM", "/usr/bin/chromium")


def _row(pid: str, prefix: str) -> str:
    return pump_row(
        pid, suction_pressure_tag=f"{prefix}.PS", temperature_tag=f"{prefix}.TT",
        flow_tag=f"{prefix}.FT", run_tag=f"{prefix}.RUN",
    )  # fmt: skip


@pytest.fixture(scope="module")
def folders(tmp_path_factory) -> dict[str, Path]:
    root = tmp_path_factory.mktemp("charttext")
    frame = steady_frame("A", pressure_kpa=-60.0).merge(steady_frame("B"), on="timestamp")
    path = make_plant(root, wide={"a.csv": frame}, rows=[_row(LINK, "A"), _row(BOLD, "B")])
    result = screening.scan(path, plot_buckets=100)
    screening.write_report(result, root / "report")
    scenarios = root / "scenarios.toml"
    scenarios.write_text(
        "[[scenario]]\nname = \"<a href='https://example.invalid/s'>s</a>\"\n"
        '  [[scenario.change]]\n  pumps = ["<a*", "<b*"]\n'
        '  suction_pressure_add = "30 kPa"\n'
    )
    screening.write_whatif_report(screening.whatif(path, scenarios), root / "whatif")
    return {"report": root / "report", "whatif": root / "whatif"}


def test_plain_texts_escape_strings_only():
    assert plain_texts(LINK) == "&lt;a href='https://example.invalid/x'&gt;link&lt;/a&gt;"
    assert plain_texts([[LINK, "P1"], ["before", "after"]])[0][1] == "P1"
    assert plain_texts([1.0, None]) == [1.0, None]
    times = ["2026-10-01T00:00:00"] * 3
    assert plain_texts(times) is times  # nothing to escape: the same list
    html = figure_html({"data": [{"type": "bar", "y": [LINK], "name": BOLD}], "layout": {}}, "f")
    assert "\\u003ca href" not in html  # no raw tag reaches plotly.js
    assert "\\u0026lt;a href='https://example.invalid/x'\\u0026gt;link" in html
    assert "\\u0026lt;b\\u0026gt;B\\u0026lt;/b\\u0026gt; \\u0026amp; " in html


def test_figure_json_holds_no_markup_from_the_plant(folders):
    pages = [folders["report"] / "index.html", *sorted((folders["report"] / "pumps").iterdir())]
    pages += sorted(folders["whatif"].glob("*.html"))
    for page in pages:
        text = page.read_text(encoding="utf-8")
        for raw in ("\\u003ca href", "\\u003cb\\u003eB", '"<a href', '"<b>B'):
            assert raw not in text, (page.name, raw)
    overview = (folders["report"] / "index.html").read_text(encoding="utf-8")
    assert "\\u0026lt;a href='https://example.invalid/x'\\u0026gt;link" in overview


def test_charts_show_the_ids_as_written_in_a_browser(folders):
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        pytest.skip("browser check skipped: the Python package 'playwright' is not installed")
    if not (os.path.isfile(CHROMIUM) and os.access(CHROMIUM, os.X_OK)):
        pytest.skip(f"browser check skipped: no Chromium executable at {CHROMIUM}")
    args = [
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
    ]
    pump_pages = sorted((folders["report"] / "pumps").iterdir())
    scenario_pages = sorted(folders["whatif"].glob("scenario_*.html"))
    pages = [folders["report"] / "index.html", *pump_pages, *scenario_pages]
    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=CHROMIUM, headless=True, args=args)
        try:
            page = browser.new_context().new_page()
            for file in pages:
                page.goto(file.as_uri(), wait_until="load")
                page.wait_for_function(
                    "() => Array.from(document.querySelectorAll('div.plotly-graph-div'))"
                    ".every(d => d.querySelector('svg.main-svg'))"
                )
                links = page.evaluate(
                    "document.querySelectorAll('div.plotly-graph-div svg a').length"
                )
                assert links == 0, file.name  # no live link drawn in any chart
                bold = page.evaluate(
                    "document.querySelectorAll('div.plotly-graph-div tspan[style*=bold]').length"
                )
                assert bold == 0, file.name
                if file.name in ("index.html", *(p.name for p in scenario_pages)):
                    drawn = page.evaluate(
                        "Array.from(document.querySelectorAll('div.plotly-graph-div'))"
                        ".map(d => d.textContent).join(' ')"
                    )
                    assert LINK in drawn and "<b>B</b> & <br>C" in drawn, file.name
        finally:
            browser.close()
