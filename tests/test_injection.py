"""File content never acts on the reader of the report.

Markup and scripts planted in tag names, pump ids, services, areas, export file names and
text values are shown as text in the overview and the pump pages (escaped; checked in the
HTML and, where Chromium is installed, in a real browser that must run none of them); pump
ids with ``../`` never write outside the report folder; table cells a spreadsheet would read
as a formula are neutralised in the CSV and xlsx tables.
"""

from __future__ import annotations

import os
from pathlib import Path

import pandas as pd
import pytest
from markupsafe import escape
from plantmaker import make_plant, pump_row, steady_frame

import screening

SCRIPT = "<script>window.__pwned = 1</script>"
IMG = '<img src=x onerror="window.__pwned = 2">'
ATTR = "'><svg onload=window.__pwned=3>"
TAG = "<script>window.__pwned = 4</script>.PS"
FILE = "<img src=x onerror=window.__pwned=5>.csv"
PAYLOADS = (SCRIPT, IMG, ATTR, TAG)
FORMULAS = {"service": "+1+cmd", "area": "-2+3", "pump": "@SUM(A1)", "word": '=HYPERLINK("x")'}


@pytest.fixture(scope="module")
def report(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("injection")
    p1 = steady_frame("P1").rename(columns={"P1.PS": TAG}).astype({TAG: object})
    p1.loc[20:22, TAG] = "fault"  # text values: the tag is listed with its problems, and in
    # the reason for P1's place in the ranking (tooltips too)
    p2 = steady_frame("P2").astype({"P2.TT": object})
    p2.loc[5:9, "P2.TT"] = FORMULAS["word"]  # a text value, counted with its word
    p3 = steady_frame("Q").rename(columns=lambda c: c.replace("Q.", "../../Q."))
    p4 = steady_frame("F")
    wide = {"a.csv": p1.merge(p2, on="timestamp").merge(p3, on="timestamp"), "f.csv": p4}
    rows = [
        pump_row("P1", service=SCRIPT, area=IMG, suction_pressure_tag=TAG),
        pump_row("P2", service=ATTR, area="<b>bold</b>"),
        pump_row(
            "../../Q",
            suction_pressure_tag="../../Q.PS",
            temperature_tag="../../Q.TT",
            flow_tag="../../Q.FT",
            run_tag="../../Q.RUN",
        ),  # fmt: skip
        pump_row(
            FORMULAS["pump"],
            service=FORMULAS["service"],
            area=FORMULAS["area"],
            suction_pressure_tag="F.PS",
            temperature_tag="F.TT",
            flow_tag="F.FT",
            run_tag="F.RUN",
        ),  # fmt: skip
        pump_row("<i>P5</i>"),  # its tags are nowhere: listed as not screened, by its id
    ]
    path = make_plant(folder, wide=wide, rows=rows)
    (folder / "exports" / FILE).write_bytes(b"timestamp,X\n2026-10-01 00:00,\xb0\n")
    out = folder / "report" / "october"
    screening.write_report(screening.scan(path, plot_buckets=100), out)
    return out


def _pages(report: Path) -> list[Path]:
    return [report / "index.html", *sorted((report / "pumps").glob("*.html"))]


def test_markup_is_escaped_in_every_page(report):
    pages = _pages(report)
    assert len(pages) == 5  # the overview and four pump pages
    overview = pages[0].read_text(encoding="utf-8")
    for payload in (SCRIPT, IMG, ATTR, TAG, FILE, "<i>P5</i>"):
        assert str(escape(payload)) in overview, payload  # as Jinja's autoescape writes it
    for page in pages:
        text = page.read_text(encoding="utf-8")
        for payload in (*PAYLOADS, FILE, "<b>bold</b>", "<i>P5</i>"):
            assert payload not in text, (page.name, payload)
    p1 = (report / "pumps" / "P1.html").read_text(encoding="utf-8")
    assert str(escape(SCRIPT)) in p1 and str(escape(TAG)) in p1


def test_pump_ids_never_leave_the_report_folder(report):
    root = report.parent.parent
    outside = [
        p for p in root.rglob("*.html") if report not in p.parents and p.parent != report
    ]  # fmt: skip
    assert outside == []
    names = sorted(p.name for p in (report / "pumps").iterdir())
    assert names == ["P1.html", "P2.html", "_.._Q.html", "_SUM_A1_.html"]  # no "/" in any


def test_formula_like_cells_are_neutralised(report):
    summary = pd.read_csv(report / "summary.csv", dtype=str).set_index("pump_id")
    row = summary.loc["'" + FORMULAS["pump"]]
    assert row["service"] == "'" + FORMULAS["service"]
    assert row["area"] == "'" + FORMULAS["area"]
    quality = pd.read_csv(report / "data_quality.csv", dtype=str)
    words = quality.loc[quality["role"] == "temperature", "words"].dropna()
    assert any(w.startswith("'=HYPERLINK") for w in words), list(words)
    book = pd.read_excel(report / "summary.xlsx", sheet_name=None, dtype=str)
    cells = {str(v) for sheet in book.values() for v in sheet.to_numpy().ravel()}
    for value in (*FORMULAS.values(),):
        assert value not in cells  # never a bare formula
    assert "'" + FORMULAS["pump"] in cells and "'" + FORMULAS["service"] in cells
    # a negative number stays a number
    assert pd.read_csv(report / "summary.csv")["guidance_margin_m"].dtype.kind == "f"


CHROMIUM = os.environ.get("PUMPSCREEN_CHROMIUM", "/usr/bin/chromium")


def test_no_planted_script_runs_in_a_browser(report):
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
    dialogs: list[str] = []
    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=CHROMIUM, headless=True, args=args)
        try:
            context = browser.new_context()
            context.route(
                "**/*",
                lambda route: (
                    route.continue_()
                    if route.request.url.startswith(("file:", "data:", "blob:", "about:"))
                    else route.abort()
                ),
            )
            page = context.new_page()
            page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
            for file in _pages(report):
                page.goto(file.as_uri(), wait_until="load")
                page.wait_for_timeout(200)  # let any onerror/onload handler fire
                assert page.evaluate("typeof window.__pwned") == "undefined", file.name
                planted = "document.querySelectorAll('img[src=x], svg[onload]').length"
                assert page.evaluate(planted) == 0, file.name  # no element made of the text
                body = page.inner_text("body")
                if file.name == "index.html":
                    for payload in (SCRIPT, IMG, FILE):
                        assert payload in body  # shown as text, literally
        finally:
            browser.close()
    assert dialogs == []
