"""The overview page of the demo plant's report: one line per pump with the reason for its
place, one legend per state chart, only the tags with problems, pages within their size."""

from __future__ import annotations

import re
from pathlib import Path

import pandas as pd
import pytest

import screening
from screening.engine.plotdata import DEFAULT_BUCKETS
from screening.report.plant_report import problem_quality

ROOT = Path(__file__).resolve().parents[1]
CONFIG = ROOT / "configs" / "demo_plant.toml"
#: Most bytes of a pump page of the demo report (the plot data of a month of 1-min samples).
PAGE_LIMIT = 150_000


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    """The demo plant scanned once with the command line's plot data, its report written."""
    result = screening.scan(CONFIG, plot_buckets=DEFAULT_BUCKETS)
    out = tmp_path_factory.mktemp("overview") / "report"
    screening.write_report(result, out)
    return result, out, (out / "index.html").read_text(encoding="utf-8")


def _rows(html: str) -> dict[str, str]:
    """The ranking's rows by pump id (their HTML)."""
    body = html[html.index('<table id="ranking">') :].split("</table>")[0]
    rows = re.findall(r"<tr data-search=.*?</tr>", body, re.S)
    return {re.search(r'<a href="pumps/[^"]+">([^<]+)</a>', r).group(1): r for r in rows}


def _why(row_html: str) -> str:
    return re.search(r'<td class="text clip why" title="([^"]*)"', row_html).group(1)


def test_each_row_says_why_the_pump_ranks_there(demo):
    result, out, html = demo
    rows = _rows(html)
    assert len(rows) == len(result.ranked)
    s = result.summary.set_index("pump_id")
    # the worst pump: its worst time and the input furthest from its median at that time
    assert _why(rows["RW-502"]).startswith("worst 27 Oct 13:59: suction pressure")
    # the hours the ranking's own columns would hide: bad data with its tag, minimum flow
    bad = s["bad_data_hours"].idxmax()
    tags = problem_quality(result.quality).query("pump_id == @bad and frozen > 0")["tag"]
    assert f"{s.loc[bad, 'bad_data_hours']:.1f} h bad data (" in _why(rows[bad])
    assert any(t in _why(rows[bad]) for t in tags)
    low = s["below_min_flow_hours"].idxmax()
    assert f"{s.loc[low, 'below_min_flow_hours']:.1f} h below minimum flow" in _why(rows[low])
    # the table beside it holds the inputs at the worst time
    table = pd.read_csv(out / "worst_inputs.csv")
    rw = table[table.pump_id == "RW-502"].sort_values("spreads_toward_less_margin")
    assert rw["input"].iloc[-1] == "suction pressure"
    assert rw["at_worst"].iloc[-1] < rw["running_median"].iloc[-1]


def test_a_ranking_row_is_one_line(demo):
    _, _, html = demo
    for pid, row in _rows(html).items():
        assert "<br" not in row and "<small" not in row, pid
    assert "#ranking td, #coverage td { white-space: nowrap; }" in html
    # the guidance rule sits in the cell's tooltip
    assert re.search(
        r'<td class="text" title="ratio 1\.30 or NPSH3 \+ 1\.00 m, the greater; '
        r'policy rule 4[^"]*">1\.30 / 1\.00 m</td>',
        _rows(html)["RW-502"],
    )


def test_state_charts_share_one_legend(demo):
    _, _, html = demo
    assert 'class="swatch"' not in html and 'class="legend"' not in html
    from test_pump_pages import _figures

    figs = _figures(html)
    margin = {t["name"]: t["marker"] for t in figs["hours-by-margin"]["data"]}
    region = {t["name"]: t["marker"] for t in figs["hours-by-region"]["data"]}
    shared = set(margin) & set(region)
    assert shared >= {"stopped", "no data", "bad data"}  # and "starting" (issue 17)
    assert all(margin[n] == region[n] for n in shared)


def test_coverage_lists_only_tags_with_problems(demo):
    result, out, html = demo
    table = html[html.index('<table id="coverage">') :].split("</table>")[0]
    listed = re.findall(
        r"<tr><td class=\"text\">([^<]+)</td><td class=\"text\">([^<]+)</td>"
        r"<td class=\"text\">([^<]+)</td>",
        table,
    )
    problems = problem_quality(result.quality)
    assert 0 < len(listed) == len(problems) < len(result.quality)
    clean = result.quality[~result.quality.index.isin(problems.index)]
    assert clean.iloc[0]["tag"] not in {t for _, _, t in listed}
    assert len(pd.read_csv(out / "data_quality.csv")) == len(result.quality)  # all in the CSV


def test_pump_pages_stay_small(demo):
    _, out, _ = demo
    sizes = {p.name: p.stat().st_size for p in (out / "pumps").glob("*.html")}
    print(f"pump pages: largest {max(sizes.values())} bytes, total {sum(sizes.values())} bytes")
    assert max(sizes.values()) <= PAGE_LIMIT, max(sizes, key=sizes.get)


def test_pump_page_points_out_bad_data_and_minimum_flow_hours(demo):
    """The hours the overview's reason names are on the pump's own page too (issue 19)."""
    result, out, _ = demo
    s = result.summary.set_index("pump_id")
    bad = s["bad_data_hours"].idxmax()
    page = (out / "pumps" / _rows_page(out, bad)).read_text(encoding="utf-8")
    look = page[page.index("<h2>Worth a look</h2>") :].split("</ul>")[0]
    assert f"{s.loc[bad, 'bad_data_hours']:.1f} h of bad data from " in look
    frozen = problem_quality(result.quality).query("pump_id == @bad and frozen > 0")["tag"]
    assert any(str(t) in look for t in frozen)
    low = s["below_min_flow_hours"].idxmax()
    page = (out / "pumps" / _rows_page(out, low)).read_text(encoding="utf-8")
    look = page[page.index("<h2>Worth a look</h2>") :].split("</ul>")[0]
    assert f"{s.loc[low, 'below_min_flow_hours']:.1f} h running below the minimum flow" in look
    # a pump without bad data says nothing of it
    clean = s.index[s["bad_data_hours"] == 0][0]
    page = (out / "pumps" / _rows_page(out, clean)).read_text(encoding="utf-8")
    assert "of bad data" not in page


def _rows_page(out: Path, pump_id: str) -> str:
    """The file name of a pump's page, as the overview links it."""
    html = (out / "index.html").read_text(encoding="utf-8")
    return re.search(rf'<a href="pumps/([^"]+)">{re.escape(pump_id)}</a>', html).group(1)


@pytest.mark.parametrize("sizes", [[1], [2], [1, 2, 3, 4], list(range(1, 40)), [1500, 7, 999]])
def test_worst_input_medians_and_spreads_are_numpys(sizes):
    # the overview's running medians and 10th-90th percentile spreads, worked out for every
    # pump and input at once, against numpy.median and numpy.percentile (default "linear"
    # method, Hyndman & Fan 1996 type 7) group by group: the same numbers to the last bit
    import numpy as np

    from screening.report.why import median_and_deciles

    rng = np.random.default_rng(len(sizes))
    groups = []
    for k, n in enumerate(sizes):
        g = rng.normal(size=n) * 10.0 ** (k % 7 - 3)
        groups.append(np.round(g, 1) if k % 2 else g)  # ties in every other group
    got = median_and_deciles(groups)
    assert got.shape == (len(groups), 3)
    for g, (median, p10, p90) in zip(groups, got, strict=True):
        assert median == np.median(g)
        assert [p10, p90] == list(np.percentile(g, [10, 90]))


def test_worst_inputs_of_one_pump_and_of_all_agree(demo):
    # the table's rows (all pumps at once) and the one-pump reading give the same inputs
    from screening.report.why import worst_inputs, worst_inputs_by_pump

    result, _, _ = demo
    every = worst_inputs_by_pump(result.summary, result.plots)
    assert sum(map(len, every.values())) > 0
    for row in result.summary.itertuples(index=False):
        assert every[row.pump_id] == worst_inputs(result.plots.get(row.pump_id), row.worst_time)
