"""The HTML report in a real browser: headless Chromium opens the written folder offline.

The overview (index.html) and, where the folder has them, pump pages under pumps/ are
loaded from file:// in the system's Chromium, driven by the `playwright` package
with the browser at /usr/bin/chromium (Debian package `chromium`; `playwright install` is
never needed). A page fails when it logs a console error, throws an uncaught exception, asks
for anything outside the report folder (such requests are aborted and listed), or leaves a
plot undrawn. A full-page screenshot of each page is saved in the test's temporary folder
and its path printed (shown with `pytest -s`, or under the failure report).

Pump pages opened: the first three by name, RW-502 and CD-412, and the first page of each
pump-id prefix (one per service family), which keeps the test well under a minute; set
PUMPSCREEN_BROWSER_ALL=1 to open every pump page (about a minute for the 37 demo pumps).

Skipped, with the reason, when playwright is not installed or Chromium is not found. Set
PUMPSCREEN_CHROMIUM to use another Chromium binary (a path that does not exist skips).
"""

from __future__ import annotations

import os
import re
from pathlib import Path
from urllib.parse import urlsplit

import pytest

import screening
from screening.engine.plotdata import DEFAULT_BUCKETS

ROOT = Path(__file__).resolve().parents[1]
CONFIG = ROOT / "configs" / "demo_plant.toml"
CHROMIUM = os.environ.get("PUMPSCREEN_CHROMIUM", "/usr/bin/chromium")
CHROMIUM_ARGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    # without these Chromium reaches out to Google hosts as it starts
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]
# schemes a page of an offline report may load; anything else is a request to the network
LOCAL_SCHEMES = {"file", "data", "blob", "about"}
# pump pages always opened when present (besides the first three in name order)
KEY_PUMPS = ("RW-502", "CD-412")

# ask every plot div on the page whether Plotly drew it
_PLOT_STATE_JS = """
() => Array.from(document.querySelectorAll('div.plotly-graph-div')).map((div, i) => ({
    id: div.id || `#${i}`,
    drawn: div.querySelector('svg.main-svg') !== null,
}))
"""


# true once every plot div holds its drawn svg
_ALL_DRAWN_JS = """
() => Array.from(document.querySelectorAll('div.plotly-graph-div'))
    .every((div) => div.querySelector('svg.main-svg') !== null)
"""


@pytest.fixture(scope="module")
def report(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("browser-report") / "report"
    # the same plot data the command line asks for, so the pump pages carry all their plots
    screening.write_report(screening.scan(CONFIG, plot_buckets=DEFAULT_BUCKETS), out)
    return out


@pytest.fixture(scope="module")
def browser():
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        pytest.skip(
            "browser test skipped: the Python package 'playwright' is not installed "
            "(pip install -e '.[test]')"
        )
    if not (os.path.isfile(CHROMIUM) and os.access(CHROMIUM, os.X_OK)):
        pytest.skip(
            f"browser test skipped: no Chromium executable at {CHROMIUM} "
            "(apt-get install chromium, or set PUMPSCREEN_CHROMIUM to its path)"
        )
    with sync_playwright() as pw:
        chromium = pw.chromium.launch(executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS)
        try:
            yield chromium
        finally:
            chromium.close()


def _pages_to_open(report: Path) -> list[Path]:
    """index.html, then pump pages: the first three by name, the key pumps, and then either
    the first page of every pump-id prefix (one per service family, the default) or all."""
    pump_dir = report / "pumps"
    pumps = sorted(pump_dir.glob("*.html")) if pump_dir.is_dir() else []
    chosen = pumps[:3] + [p for p in pumps if p.stem in KEY_PUMPS]
    if os.environ.get("PUMPSCREEN_BROWSER_ALL") == "1":
        chosen += pumps
    else:
        families: dict[str, Path] = {}
        for p in pumps:
            families.setdefault(p.stem.split("-")[0], p)
        chosen += families.values()
    return [report / "index.html"] + list(dict.fromkeys(chosen))


def _shot_name(report: Path, page_file: Path) -> str:
    rel = page_file.relative_to(report).with_suffix("").as_posix()
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", rel) + ".png"


class _Tab:
    """One browser tab that opens the pages in turn and sorts what goes wrong by page.

    A single tab is reused on purpose: Chromium then compiles plotly.min.js once instead
    of once per page (about 2 s saved on each page after the first).
    """

    def __init__(self, context):
        self.problems: list[str] = []
        self.page = context.new_page()
        self.page.on("console", self._console)
        self.page.on("pageerror", lambda exc: self.problems.append(f"uncaught exception: {exc}"))
        self.page.on("requestfailed", self._failed)

    def _console(self, msg) -> None:
        if msg.type == "error":
            where = msg.location or {}
            at = f"{where.get('url', '?')}:{where.get('lineNumber', '?')}"
            self.problems.append(f"console error: {msg.text} (at {at})")

    def _failed(self, request) -> None:
        # requests to the network are aborted by the route guard and reported there
        if urlsplit(request.url).scheme in LOCAL_SCHEMES:
            self.problems.append(f"local load failed: {request.url} ({request.failure})")

    def visit(self, page_file: Path, shot: Path, need_plot: bool = True) -> list[str]:
        """Open one page, check its plots, save a full-page screenshot; return its problems.
        ``draw_s`` is then the time from the start of the navigation until every plot of
        the page was drawn [s] (printed, never asserted: no test measures time)."""
        from playwright.sync_api import TimeoutError as PlaywrightTimeout

        self.problems = []
        self.page.goto(page_file.as_uri(), wait_until="load")
        try:
            self.page.wait_for_function(_ALL_DRAWN_JS, timeout=30_000)
        except PlaywrightTimeout:
            pass  # an undrawn plot is reported below
        self.draw_s = self.page.evaluate("performance.now()") / 1000
        plots = self.page.evaluate(_PLOT_STATE_JS)
        if not plots and need_plot:
            self.problems.append("no plot (div.plotly-graph-div) on the page")
        for plot in plots:
            if not plot["drawn"]:
                self.problems.append(f"plot {plot['id']} not drawn (no svg.main-svg inside)")
        self.page.screenshot(path=str(shot), full_page=True)
        return self.problems


def test_report_pages_render_offline_without_errors(browser, report, tmp_path_factory):
    shots = tmp_path_factory.mktemp("browser-screenshots")
    network: list[str] = []

    def guard(route):
        url = route.request.url
        if urlsplit(url).scheme in LOCAL_SCHEMES:
            route.continue_()
        else:
            network.append(url)
            route.abort()

    context = browser.new_context(viewport={"width": 1280, "height": 900})
    context.route("**/*", guard)
    tab = _Tab(context)
    failures: dict[str, list[str]] = {}
    opened: list[str] = []
    try:
        for page_file in _pages_to_open(report):
            name = page_file.relative_to(report).as_posix()
            before = len(network)
            shot = shots / _shot_name(report, page_file)
            problems = tab.visit(page_file, shot)
            problems += [f"network request (aborted): {url}" for url in network[before:]]
            if problems:
                failures[name] = problems
            opened.append(name)
            size = page_file.stat().st_size
            print(f"{name}: drawn in {tab.draw_s:.2f} s, {size / 1000:.0f} kB; screenshot {shot}")
    finally:
        context.close()

    assert opened[0] == "index.html"
    assert not failures, "report pages with problems:\n" + "\n".join(
        f"  {name}:\n" + "\n".join(f"    - {p}" for p in probs) for name, probs in failures.items()
    )


def test_onset_and_whatif_pages_render_offline_without_errors(browser, tmp_path):
    """The onset page of the invented year-long history (HX-701) and the what-if pages of the
    demo scenarios: no console error, no network request, every plot drawn."""
    onset = screening.investigate(ROOT / "configs" / "demo_history.toml", "HX-701",
                                  "2025-11-01", "2026-11-01", failed_on="2026-09-20")  # fmt: skip
    onset_page = screening.write_onset_report(onset, tmp_path / "onset")
    wi = screening.whatif(CONFIG, ROOT / "configs" / "demo_scenarios.toml",
                          pumps=["CD-412", "RW-502", "CW-103", "DH-202"])  # fmt: skip
    wi_dir = screening.write_whatif_report(wi, tmp_path / "whatif")
    pages = [(onset_page, True), (wi_dir / "index.html", False)]
    pages += [(p, True) for p in sorted(wi_dir.glob("scenario_*.html"))]
    assert len(pages) == 6  # onset, the what-if index and its four scenarios
    network: list[str] = []

    def guard(route):
        if urlsplit(route.request.url).scheme in LOCAL_SCHEMES:
            route.continue_()
        else:
            network.append(route.request.url)
            route.abort()

    context = browser.new_context(viewport={"width": 1280, "height": 900})
    context.route("**/*", guard)
    tab = _Tab(context)
    failures = {}
    try:
        for page_file, need_plot in pages:
            problems = tab.visit(page_file, tmp_path / f"{page_file.stem}.png", need_plot)
            print(f"{page_file.name}: drawn in {tab.draw_s:.2f} s")
            if problems:
                failures[page_file.name] = problems
    finally:
        context.close()
    assert not network, network
    assert not failures, failures
