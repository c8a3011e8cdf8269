"""The report folder: tidy tables (CSV and Parquet) and an offline HTML overview.

The folder is written to a temporary sibling and moved into place at the end, so an
interrupted run never leaves a half-written report where the last good one was.
"""

from __future__ import annotations

import hashlib
import json
import multiprocessing
import sys
from collections.abc import Iterator
from concurrent.futures import ProcessPoolExecutor
from contextlib import ExitStack, contextmanager
from datetime import UTC, datetime
from importlib import metadata
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pa_csv
from plotly.offline import get_plotlyjs

from screening.base import states
from screening.base.files import atomic_folder, page_names
from screening.base.version import __version__
from screening.engine.execution import default_processes
from screening.engine.scan import ScanResult
from screening.inputs.window import WindowError
from screening.physics import regions
from screening.report import field_page, trend
from screening.report.cautions import CAUTIONS
from screening.report.figjson import figure_html, numbers
from screening.report.palette import (
    REGION_COLOURS,
    REGION_LABELS,
    REGION_PATTERNS,
    STATE_COLOURS,
    STATE_LABELS,
    STATE_PATTERNS,
)
from screening.report.pump_pages import DISPLAY_UNITS
from screening.report.pump_writer import write_some_pages
from screening.report.templating import ENV
from screening.report.trend import trend_cells
from screening.report.why import why_text, worst_inputs_by_pump, worst_inputs_table

_ENV = ENV
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def _safe_cell(value):
    """Neutralise text a spreadsheet would read as a formula (prefix a quote)."""
    if isinstance(value, str) and value.startswith(_FORMULA_START):
        try:
            float(value)
            return value
        except ValueError:
            return "'" + value
    return value


def _neutralised(column: pd.Series) -> pd.Series:
    """The column with formula-like text neutralised; each distinct value is checked once (a
    plot table repeats 500 pump ids 750 000 times)."""
    try:
        distinct = pd.unique(column)
    except TypeError:  # unhashable cells: check each
        return column.map(_safe_cell)
    changed = {v: _safe_cell(v) for v in distinct if isinstance(v, str)}
    changed = {k: v for k, v in changed.items() if v != k}
    return column.replace(changed) if changed else column


#: Tables longer than this are written as Parquet only: the plot data of a 500-pump month
#: (750 000 rows) would make a 200 MB CSV that no spreadsheet opens, its daily hours (250 000
#: rows) a 12 MB one.
CSV_MAX_ROWS = 100_000


def write_table(
    frame: pd.DataFrame,
    folder: Path,
    name: str,
    csv_max_rows: int | None = None,
    float32: bool = False,
):
    """Write a table as ``name.parquet`` and ``name.csv``; formula-like text in the CSV is
    neutralised (a quote in front), so a spreadsheet shows it as text. With ``csv_max_rows``,
    a longer table gets no CSV (the Parquet file holds every row). With ``float32`` the
    Parquet file keeps floats in 32 bits (7 significant digits; for the plot tables, whose
    pages show less) and is compressed with zstd."""
    if float32:
        floats = [c for c in frame.columns if frame[c].dtype == "float64"]
        small = frame.astype(dict.fromkeys(floats, "float32"))
        # dictionary encoding only where values repeat (pump ids, times): tried on a float
        # column it is given up after each page, at three times the cost of the whole write
        dictionary = [c for c in frame.columns if frame[c].dtype.kind not in "fc"]
        small.to_parquet(folder / f"{name}.parquet", index=False, compression="zstd",
                         use_dictionary=dictionary)  # fmt: skip
    else:
        frame.to_parquet(folder / f"{name}.parquet", index=False)
    if csv_max_rows is not None and len(frame) > csv_max_rows:
        return
    text = frame.copy()
    for col in text.columns:
        if text[col].dtype == object or pd.api.types.is_string_dtype(text[col]):
            text[col] = _neutralised(text[col])
    try:
        # Arrow's CSV writer: ten times faster than pandas on the large plot tables; times
        # keep their offset (2026-10-25 02:00:00.000000+0200)
        pa_csv.write_csv(pa.Table.from_pandas(text, preserve_index=False),
                         folder / f"{name}.csv")  # fmt: skip
    except (pa.ArrowInvalid, pa.ArrowTypeError, pa.ArrowNotImplementedError):
        text.to_csv(folder / f"{name}.csv", index=False)  # a column of mixed Python objects


def _as_text(column: pd.Series) -> pd.Series:
    """``column.astype("string")``, each distinct value turned to text once (a 500-pump
    month's daily table repeats 31 dates 279 000 times)."""
    codes, uniques = pd.factorize(column)
    if (codes < 0).any():  # missing values: pandas' own way
        return column.astype("string")
    text = np.array([str(u) for u in uniques], dtype=object)[codes]
    return pd.Series(text, index=column.index, name=column.name).astype("string")


def _hours_figure(result: ScanResult, kind: str = "margin") -> str:
    """Stacked horizontal bars of hours [h] per state (``kind`` "margin") or per operating
    region (``kind`` "region"), one bar per pump in ranking order, as a figure's HTML."""
    if kind == "margin":
        names, colours, patterns, labels = (
            states.STATES, STATE_COLOURS, STATE_PATTERNS, STATE_LABELS
        )  # fmt: skip
    else:
        names, colours, patterns, labels = (
            regions.REGIONS, REGION_COLOURS, REGION_PATTERNS, REGION_LABELS
        )  # fmt: skip
    order = list(result.summary["pump_id"]) if len(result.summary) else []
    table = result.hours[result.hours["kind"] == kind]
    wide = table.pivot(index="pump_id", columns="state", values="hours")
    wide = wide.reindex(index=order[::-1])
    pumps = [str(p) for p in wide.index]
    traces = [
        {
            "type": "bar",
            "y": pumps,
            "x": numbers(wide[state]),
            "name": labels[state],
            "orientation": "h",
            "marker": {
                "color": colours[state],
                "line": {"color": "#555", "width": 0.5},
                "pattern": {"shape": patterns[state], "fgcolor": "#ffffff"},
            },
            "hovertemplate": "%{y}: %{x:.1f} h " + labels[state] + "<extra></extra>",
        }
        for state in names
        if state in wide.columns
    ]
    layout = {
        "barmode": "stack",
        "height": max(300, 22 * len(wide) + 120),
        "margin": {"l": 120, "r": 20, "t": 30, "b": 40},
        "xaxis": {"title": {"text": "hours in the window"}},
        "legend": {"orientation": "h", "y": 1.02, "yanchor": "bottom", "traceorder": "normal"},
        "plot_bgcolor": "#ffffff",
    }
    return _fig({"data": traces, "layout": layout}, f"hours-by-{kind}")


def _input_files(result: ScanResult) -> list[dict]:
    files = []
    paths = [result.plant.path]
    reg = result.plant.settings.register_files
    paths += [result.plant.base / reg.pumps, result.plant.base / reg.curves]
    index_paths = sorted(result.export_files)
    for p in [str(x) for x in paths] + index_paths:
        path = Path(p)
        try:
            data = path.read_bytes()
        except OSError:
            continue
        files.append(
            {"path": str(path), "bytes": len(data), "sha256": hashlib.sha256(data).hexdigest()}
        )
    return files


def write_report(
    result: ScanResult,
    out: str | Path,
    units: str = "si",
    compare_to: str | Path | list[str | Path] | None = None,
) -> Path:
    """Write the report folder of a scan.

    Parameters
    ----------
    result : ScanResult
        From :func:`screening.scan`.
    out : str or Path
        The report folder; replaced whole when the new report is complete.
    units : str
        Display units of the HTML pages: ``"si"`` or ``"us"`` (US customary); the tables
        beside them stay SI with units in the column names.
    compare_to : str, Path or list of them, optional
        Earlier report folders, or folders holding them: pumps that got worse or better
        since the latest (by window start) are marked, by how many hours, and each pump's
        hours below the guidance per month are drawn (:mod:`screening.report.trend`).

    Returns
    -------
    Path of the report folder.
    """
    empty = result.empty_message() if len(result.summary) else None
    if empty:  # an empty report would read as an all-clear
        raise WindowError(f"no report written: {empty}")
    out = Path(out)
    if units not in DISPLAY_UNITS:
        raise ValueError(f"display units {units!r} are not 'si' or 'us'")
    changes, months = _compared(result, compare_to)
    with atomic_folder(out, "report") as tmp, ExitStack() as stack:
        write_table(result.hours, tmp, "hours")
        summary = result.summary.copy()
        if "worst_time" in summary:
            summary["worst_time"] = summary["worst_time"].astype("string")
        write_table(summary, tmp, "summary")
        daily = result.daily.copy()
        daily["date"] = _as_text(daily["date"])
        write_table(daily, tmp, "daily_hours", CSV_MAX_ROWS)
        write_table(result.quality, tmp, "data_quality")
        write_table(result.problems, tmp, "not_screened")
        write_table(result.file_problems, tmp, "files_not_read")
        ranked = worst_inputs_by_pump(result.summary, result.plots)
        write_table(worst_inputs_table(result, result.plots, ranked), tmp, "worst_inputs")
        write_table(_events_table(result), tmp, "events")
        pages = page_names(result.summary["pump_id"]) if len(result.summary) else {}
        # the pump pages are written while the tables are (in forked processes, large plants)
        stack.enter_context(_pump_pages(result, tmp, pages, DISPLAY_UNITS[units]))
        (tmp / "plotly.min.js").write_text(get_plotlyjs(), encoding="utf-8")
        site = result.plant.settings.site
        meta = {
            "tool": "pumpscreen",
            "version": __version__,
            "written_utc": datetime.now(UTC).isoformat(timespec="seconds"),
            "plant": site.name,
            "config": str(result.plant.path),
            "window_start_utc": result.start.isoformat(),
            "window_end_utc": result.end.isoformat(),
            "timezone": site.timezone,
            "pumps_screened": int(result.summary.shape[0]),
            "pumps_not_screened": int(result.problems.shape[0]),
            "samples": result.samples,
            "elapsed_s": round(result.elapsed_s, 3),
            "coolprop": metadata.version("CoolProp"),
            "inputs": _input_files(result),
        }
        (tmp / "run.json").write_text(json.dumps(meta, indent=2), encoding="utf-8")
        if changes is not None:
            write_table(changes, tmp, "changes")
            write_table(months, tmp, "monthly_hours")
        if result.plots:
            # the numbers behind the pump pages' plots, tidy, beside them
            buckets = _buckets_table(result)
            write_table(buckets, tmp, "plot_buckets", CSV_MAX_ROWS, float32=True)
            points = _points_table(result.points)
            write_table(points, tmp, "operating_points", CSV_MAX_ROWS, float32=True)
        field_page.write_tables(result, tmp, write_table)
        _write_workbook(tmp / "summary.xlsx", result, changes)
        stack.close()  # every pump page written
        (tmp / "index.html").write_text(
            _overview_html(
                result,
                meta,
                pages,
                changes,
                DISPLAY_UNITS[units],
                trend_cells(months) if months is not None else None,
                ranked,
            ),
            encoding="utf-8",
        )
    return out


def _compared(result: ScanResult, compare_to) -> tuple:
    """The changes since the latest earlier report and the month-by-month table, or
    ``(None, None)`` without ``compare_to``."""
    if compare_to is None:
        return None, None
    paths = [compare_to] if isinstance(compare_to, str | Path) else list(compare_to)
    folders = trend.report_folders([Path(p) for p in paths])
    tz = result.plant.timezone
    past = trend.history(folders, tz)

    def start(folder: Path) -> str:
        run = json.loads((folder / "run.json").read_text(encoding="utf-8"))
        return str(pd.Timestamp(run["window_start_utc"]).tz_convert("UTC"))

    latest = max(folders, key=start)
    month = result.start.tz_convert(tz).strftime("%Y-%m")
    return _changes(result, latest), trend.monthly_table(past, result.summary, month)


def _changes(result: ScanResult, previous: Path) -> pd.DataFrame:
    """Hours below NPSH3 and below guidance now against a previous report's summary."""
    path = previous / "summary.parquet"
    if not path.exists():
        raise FileNotFoundError(f"{previous}: no summary.parquet (is it a pumpscreen report?)")
    before = pd.read_parquet(path)
    cols = ["below_npsh3_hours", "below_guidance_hours", "outside_preferred_hours"]
    cols = [c for c in cols if c in before.columns]
    now = result.summary.set_index("pump_id")[cols]
    old = before.set_index("pump_id")[cols]
    joined = now.add_suffix("_now").join(old.add_suffix("_before"), how="outer")
    out = pd.DataFrame(index=joined.index)
    for c in cols:
        out[f"{c}_before"] = joined[f"{c}_before"]
        out[f"{c}_now"] = joined[f"{c}_now"]
        out[f"{c}_change"] = joined[f"{c}_now"] - joined[f"{c}_before"]
    change = out["below_guidance_hours_change"]
    out["verdict"] = np.select(
        [joined["below_guidance_hours_before"].isna(), joined["below_guidance_hours_now"].isna(),
         change > 0.5, change < -0.5],
        ["new", "not in this report", "worse", "better"], default="unchanged",
    )  # fmt: skip
    return out.reset_index().rename(columns={"index": "pump_id"})


def _write_workbook(path: Path, result: ScanResult, changes) -> None:
    """One spreadsheet gathering the summary tables (formula-like text neutralised)."""
    sheets = {
        "summary": result.summary,
        "hours": result.hours,
        "data_quality": result.quality,
        "not_screened": result.problems,
    }
    if changes is not None:
        sheets["changes"] = changes
    # XlsxWriter: three times faster than openpyxl on a 500-pump plant; text is never read
    # as a formula or a link
    options = {"strings_to_formulas": False, "strings_to_urls": False}
    with pd.ExcelWriter(path, engine="xlsxwriter", engine_kwargs={"options": options}) as xl:
        for name, frame in sheets.items():
            f = frame.copy()
            for col in f.columns:
                if isinstance(f[col].dtype, pd.DatetimeTZDtype):
                    f[col] = f[col].astype("string")
                elif f[col].dtype == object or pd.api.types.is_string_dtype(f[col]):
                    f[col] = _neutralised(f[col])
            columns = [_excel_cells(f[c]) for c in f.columns]
            if any(c is None for c in columns):  # a kind of value not handled below
                f.to_excel(xl, sheet_name=name, index=False)
                continue
            sheet = xl.book.add_worksheet(name)
            for j, head in enumerate(f.columns):  # pandas' order: the header, then by column
                sheet.write(0, j, str(head), None)
            for j, cells in enumerate(columns):
                for i, value in enumerate(cells, start=1):
                    sheet.write(i, j, value, None)


def _excel_cells(column: pd.Series) -> list | None:
    """A column's cells as pandas' ``to_excel`` writes them (without its per-cell objects,
    two thirds of the workbook's time): missing -> "" (a blank), ±inf -> "inf"/"-inf",
    numbers, booleans and text as Python values; None for anything else (datetimes, long
    text), which is then left to pandas."""
    out = []
    for v in column.tolist():
        if v is None or v is pd.NA or v is pd.NaT:
            out.append("")
        elif isinstance(v, bool | np.bool_):
            out.append(bool(v))
        elif isinstance(v, int | np.integer):
            out.append(int(v))
        elif isinstance(v, float | np.floating):
            v = float(v)
            out.append("" if v != v else "inf" if v == np.inf else "-inf" if v == -np.inf else v)
        elif isinstance(v, str) and len(v) <= 32767:
            out.append(v)
        else:
            return None
    return out


#: From this many pump pages on, they are written by forked worker processes (one per core):
#: a page costs about 13 ms, so a 500-pump plant's pages take 6-7 s on one core.
PARALLEL_PAGES = 100


@contextmanager
def _pump_pages(result: ScanResult, folder: Path, pages: dict, units) -> Iterator[None]:
    """Write every pump page by the end of the block. For large plants (Linux) forked
    processes write them while the block runs (the tables and the workbook): the children
    inherit ``result`` (no copy is sent) and each writes its share. A failure in one is raised
    here, so the report is never moved into place without all its pages; an error in the
    block stops the children."""
    (folder / "pumps").mkdir()
    n = min(default_processes(), len(pages) // (PARALLEL_PAGES // 2) or 1)
    if len(pages) < PARALLEL_PAGES or n < 2 or not sys.platform.startswith("linux"):
        yield
        write_some_pages(result, folder, pages, units)
        return
    items = list(pages.items())
    shares = [dict(items[i::n]) for i in range(n)]
    _FORKED[id(result)] = result  # before the children fork, so that they inherit it
    pool = ProcessPoolExecutor(max_workers=n, mp_context=multiprocessing.get_context("fork"))
    try:
        futures = [
            pool.submit(_pages_in_child, id(result), folder, share, units) for share in shares
        ]
        yield
        for f in futures:
            f.result()
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
        _FORKED.pop(id(result), None)


#: The scan result the forked page writers inherit, by id (set before the children fork).
_FORKED: dict[int, ScanResult] = {}


def _pages_in_child(key: int, folder: Path, pages: dict, units) -> None:
    write_some_pages(_FORKED[key], folder, pages, units)


def _events_table(result: ScanResult) -> pd.DataFrame:
    """The plant's known events in the window, times as text in the site's zone."""
    ev = result.plant.events
    ev = ev[(ev["time"] >= result.start) & (ev["time"] < result.end)].copy()
    ev["time"] = ev["time"].dt.tz_convert(result.plant.timezone).astype("string")
    return ev.reset_index(drop=True)


def _buckets_table(result: ScanResult) -> pd.DataFrame:
    """Every pump's plot buckets in one tidy table, ``pump_id`` first, times in the site's
    zone (one concatenation: a copy per pump cost a second on a 500-pump plant)."""
    plots = result.plots
    buckets = pd.concat(list(plots.values()), ignore_index=True)
    pids = np.array(list(plots), dtype=object)
    buckets.insert(0, "pump_id", np.repeat(pids, [len(p) for p in plots.values()]))
    buckets["time"] = buckets["time"].dt.tz_convert(result.plant.timezone)
    return buckets


def _points_table(points: dict) -> pd.DataFrame:
    """Operating-point histograms as a tidy table: one row per non-empty cell."""
    if not points:
        return pd.DataFrame()
    cols: dict[str, list] = {k: [] for k in ("flow_low_m3_s", "flow_high_m3_s", "npsha_low_m",
                                             "npsha_high_m", "hours")}  # fmt: skip
    counts = []
    for p in points.values():
        fi, hi = np.nonzero(p["hours"])
        fe, he = p["flow_edges"], p["npsha_edges"]
        for key, part in zip(cols, (fe[fi], fe[fi + 1], he[hi], he[hi + 1], p["hours"][fi, hi]),
                             strict=True):  # fmt: skip
            cols[key].append(part)
        counts.append(len(fi))
    pids = np.repeat(np.array(list(points), dtype=object), counts)
    return pd.DataFrame({"pump_id": pids, **{k: np.concatenate(v) for k, v in cols.items()}})


def _fig(fig: dict, div_id: str) -> str:
    """A plotly.js figure dict as the page's ``<div>`` and the script drawing it."""
    return figure_html(fig, div_id)


#: Counts of the data quality table that make a tag worth listing on the overview.
PROBLEM_COUNTS = (
    "gaps", "text_values", "bad_quality", "not_finite", "frozen", "out_of_range",
    "bad_timestamps", "duplicates", "out_of_order", "malformed_rows",
)  # fmt: skip


def problem_quality(quality: pd.DataFrame) -> pd.DataFrame:
    """The rows of the data quality table with something counted or flagged against the tag
    (the overview lists those; data_quality.csv keeps every tag)."""
    if not len(quality):
        return quality
    cols = [c for c in PROBLEM_COUNTS if c in quality]
    counted = quality[cols].fillna(0).sum(axis=1) > 0
    flagged = quality["flags"].fillna("").astype(str).str.len() > 0
    return quality[counted | flagged]


def _ranking_row(row, units, why: str) -> dict:
    """One row of the overview ranking: the summary row with its texts in display units."""
    d = row._asdict()
    length = units.convert
    d["worst_ratio_text"] = "—" if pd.isna(row.worst_ratio) else f"{row.worst_ratio:.2f}"
    d["worst_margin_text"] = (
        "—" if pd.isna(row.worst_margin_m) else units.length_text(row.worst_margin_m)
    )
    d["worst_guidance_text"] = (
        "—"
        if pd.isna(row.worst_margin_to_guidance_m)
        else f"{float(length(row.worst_margin_to_guidance_m, 'length')):+.2f}"
    )
    d["guidance_text"] = f"{row.guidance_ratio:.2f} / {units.length_text(row.guidance_margin_m)}"
    d["guidance_rule"] = (
        f"ratio {row.guidance_ratio:.2f} or NPSH3 + {units.length_text(row.guidance_margin_m)}, "
        f"the greater; {row.guidance_source}; S = {row.suction_specific_speed_us:.0f} US "
        f"({row.suction_specific_speed_metric:.0f} metric)"
    )
    # severity (metre-hours) in the display length unit times hours
    d["depth_npsh3_text"] = f"{float(length(row.below_npsh3_metre_hours, 'length')):.2f}"
    d["depth_guidance_text"] = f"{float(length(row.below_guidance_metre_hours, 'length')):.2f}"
    d["why"] = why
    return d


def _overview_html(
    result: ScanResult, meta: dict, pages=None, changes=None, units=None, trend=None,
    ranked: dict | None = None,
) -> str:  # fmt: skip
    tz = result.plant.timezone
    site = result.plant.settings.site
    units = units or DISPLAY_UNITS["si"]
    ranking = []
    for row in result.ranked.itertuples(index=False):
        why = why_text(row._asdict(), result.plots.get(row.pump_id), result.quality, units,
                       None if ranked is None else ranked.get(row.pump_id))  # fmt: skip
        d = _ranking_row(row, units, why)
        d["trend"] = trend.get(row.pump_id, "") if trend else ""
        d["page"] = f"pumps/{pages[row.pump_id]}" if pages and row.pump_id in pages else None
        d["change"] = ""
        d.update(field_page.overview_cells(d))
        if d["head_loss_text"]:  # field evidence after the worst time and its input
            field = f"head loss {d['head_loss_text']}; field NPSH3 {d['field_npsh3_text']}"
            d["why"] = f"{d['why']}; {field}" if d["why"] else field
        if changes is not None:
            c = changes.set_index("pump_id")
            if row.pump_id in c.index:
                v = c.loc[row.pump_id]
                delta = v["below_guidance_hours_change"]
                d["change"] = (
                    v["verdict"]
                    if v["verdict"] in ("new", "unchanged")
                    else f"{v['verdict']} ({delta:+.1f} h)"
                )
        ranking.append(d)
    if site.barometer_tag:
        baro = (
            f"tag {site.barometer_tag} where fresh and plausible, otherwise the 1976 standard "
            f"atmosphere at {units.length_text(site.elevation, 0)} (hours on the standard "
            "atmosphere per pump in summary.csv)"
        )
    else:
        elevation = units.length_text(site.elevation, 0)
        baro = f"1976 standard atmosphere at the site elevation of {elevation}"
    template = _ENV.get_template("overview.html")
    return template.render(
        plant_name=site.name,
        window_start=result.start.tz_convert(tz).strftime("%Y-%m-%d %H:%M %Z"),
        window_end=result.end.tz_convert(tz).strftime("%Y-%m-%d %H:%M %Z"),
        window_hours=f"{result.window_hours:.0f}",
        timezone=tz,
        n_screened=len(result.summary),
        n_problems=len(result.problems),
        version=meta["version"],
        written=meta["written_utc"],
        ranking=ranking,
        thin=[
            {
                **r,
                "page": f"pumps/{pages[r['pump_id']]}" if pages and r["pump_id"] in pages else None,
            }
            for r in result.not_enough_data.to_dict("records")
        ],
        min_coverage=result.plant.settings.data.min_coverage,
        hours_figure=_hours_figure(result, "margin"),
        region_figure=_hours_figure(result, "region"),
        quality=problem_quality(result.quality).to_dict("records"),
        n_tags=len(result.quality),
        length_unit=units.head,
        trend=bool(trend),
        problems=result.problems.to_dict("records"),
        file_problems=result.file_problems.to_dict("records"),
        barometer=baro,
        ample_ratio=result.plant.settings.policy.ample_ratio,
        coolprop_version=metadata.version("CoolProp"),
        n_no_min_flow=int(
            (result.summary["min_flow_source"] == regions.MIN_FLOW_NOT_REGISTERED).sum()
        ),
        plant_min_fraction=result.plant.settings.running.min_stable_flow_fraction,
        por_low=0.70,
        por_high=1.20,
        cautions=CAUTIONS,
        compared=changes is not None,
        inputs=meta["inputs"],
    )
