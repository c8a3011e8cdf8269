"""The report folder: tidy tables (CSV and Parquet) and an offline HTML overview.

The folder is written to a temporary sibling and moved into place at the end, so an
interrupted run never leaves a half-written report where the last good one was.
"""

from __future__ import annotations

import hashlib
import json
from datetime import UTC, datetime
from functools import partial
from importlib import metadata
from pathlib import Path

import numpy as np
import pandas as pd
from plotly.offline import get_plotlyjs

from screening.base import states
from screening.base.files import atomic_folder, page_names
from screening.base.version import __version__
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
from screening.report.pump_writer import PageWriter
from screening.report.sharing import shared_work
from screening.report.tablefiles import CSV_MAX_ROWS, as_text, write_table
from screening.report.templating import ENV
from screening.report.trend import trend_cells
from screening.report.why import why_text, worst_inputs_by_pump, worst_inputs_table
from screening.report.workbook import write_workbook

_ENV = ENV


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
    display = DISPLAY_UNITS[units]
    pages = page_names(result.summary["pump_id"]) if len(result.summary) else {}
    with atomic_folder(out, "report") as tmp:
        (tmp / "pumps").mkdir()
        pump_page = PageWriter(result, tmp, display)
        # the big single files first, then the pump pages: in forked processes for a large
        # plant, while this process writes the tables and the overview (report.sharing)
        jobs = [partial(_write_plot_tables, result, tmp)] if result.plots else []
        jobs.append(partial(write_workbook, tmp / "summary.xlsx", result, changes))
        with shared_work(jobs, pages, pump_page.write):
            _write_tables(result, tmp, changes, months)
            ranked = worst_inputs_by_pump(result.summary, result.plots)
            write_table(worst_inputs_table(result, result.plots, ranked), tmp, "worst_inputs")
            (tmp / "plotly.min.js").write_text(get_plotlyjs(), encoding="utf-8")
            meta = _run_meta(result)
            (tmp / "run.json").write_text(json.dumps(meta, indent=2), encoding="utf-8")
            trends = trend_cells(months) if months is not None else None
            overview = _overview_html(result, meta, pages, changes, display, trends, ranked)
            (tmp / "index.html").write_text(overview, encoding="utf-8")
    return out


def _write_tables(result: ScanResult, tmp: Path, changes, months) -> None:
    """The tidy tables written by the main process (the plot tables and the workbook are
    jobs of :func:`screening.report.sharing.shared_work`)."""
    write_table(result.hours, tmp, "hours")
    summary = result.summary.copy()
    if "worst_time" in summary:
        summary["worst_time"] = summary["worst_time"].astype("string")
    write_table(summary, tmp, "summary")
    daily = result.daily.copy()
    daily["date"] = as_text(daily["date"])
    write_table(daily, tmp, "daily_hours", CSV_MAX_ROWS)
    write_table(result.quality, tmp, "data_quality")
    write_table(result.problems, tmp, "not_screened")
    write_table(result.file_problems, tmp, "files_not_read")
    write_table(_events_table(result), tmp, "events")
    if changes is not None:
        write_table(changes, tmp, "changes")
        write_table(months, tmp, "monthly_hours")
    field_page.write_tables(result, tmp, write_table)


def _write_plot_tables(result: ScanResult, tmp: Path) -> None:
    """The numbers behind the pump pages' plots, tidy, beside them."""
    buckets = _buckets_table(result)
    write_table(buckets, tmp, "plot_buckets", CSV_MAX_ROWS, float32=True)
    points = _points_table(result.points)
    write_table(points, tmp, "operating_points", CSV_MAX_ROWS, float32=True)


def _run_meta(result: ScanResult) -> dict:
    """What ``run.json`` records of the run: tool, window, counts, inputs and their hashes."""
    site = result.plant.settings.site
    return {
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
