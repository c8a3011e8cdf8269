"""The report folder: tidy tables (CSV and Parquet) and an offline HTML overview.

The folder is written to a temporary sibling and moved into place at the end, so an
interrupted run never leaves a half-written report where the last good one was.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import tempfile
from datetime import UTC, datetime
from pathlib import Path

import CoolProp
import pandas as pd
import plotly.graph_objects as go
from jinja2 import Environment, PackageLoader, select_autoescape
from plotly.offline import get_plotlyjs

from . import regions, states
from .cautions import CAUTIONS
from .palette import (
    REGION_COLOURS,
    REGION_LABELS,
    REGION_PATTERNS,
    STATE_COLOURS,
    STATE_LABELS,
    STATE_PATTERNS,
)
from .scan import ScanResult

_ENV = Environment(
    loader=PackageLoader("screening", "templates"),
    autoescape=select_autoescape(["html"]),
)
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


def _write_table(frame: pd.DataFrame, folder: Path, name: str) -> None:
    frame.to_parquet(folder / f"{name}.parquet", index=False)
    text = frame.copy()
    for col in text.columns:
        if text[col].dtype == object or pd.api.types.is_string_dtype(text[col]):
            text[col] = text[col].map(_safe_cell)
    text.to_csv(folder / f"{name}.csv", index=False)


def _hours_figure(result: ScanResult, kind: str = "margin") -> str:
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
    fig = go.Figure()
    for state in names:
        if state not in wide.columns:
            continue
        fig.add_bar(
            y=wide.index,
            x=wide[state],
            name=labels[state],
            orientation="h",
            marker={
                "color": colours[state],
                "line": {"color": "#555", "width": 0.5},
                "pattern": {"shape": patterns[state], "fgcolor": "#ffffff"},
            },
            hovertemplate="%{y}: %{x:.1f} h " + labels[state] + "<extra></extra>",
        )
    fig.update_layout(
        barmode="stack",
        height=max(300, 22 * len(wide) + 120),
        margin={"l": 120, "r": 20, "t": 30, "b": 40},
        xaxis_title="hours in the window",
        legend={"orientation": "h", "y": 1.02, "yanchor": "bottom", "traceorder": "normal"},
        plot_bgcolor="#ffffff",
    )
    return fig.to_html(full_html=False, include_plotlyjs=False, div_id=f"hours-by-{kind}")


def _input_files(result: ScanResult) -> list[dict]:
    files = []
    paths = [result.plant.path]
    reg = result.plant.settings.register_files
    paths += [result.plant.base / reg.pumps, result.plant.base / reg.curves]
    index_paths = sorted({str(p) for p in _export_paths(result)})
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


def _export_paths(result: ScanResult):
    import glob

    for source in result.plant.settings.exports:
        pattern = source.files
        if not Path(pattern).is_absolute():
            pattern = str(result.plant.base / pattern)
        yield from glob.glob(pattern, recursive=True)


def write_report(result: ScanResult, out: str | Path) -> Path:
    """Write the report folder of a scan.

    Parameters
    ----------
    result : ScanResult
        From :func:`screening.scan`.
    out : str or Path
        The report folder; replaced whole when the new report is complete.

    Returns
    -------
    Path of the report folder.
    """
    from . import __version__

    out = Path(out)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.", dir=out.parent))
    try:
        _write_table(result.hours, tmp, "hours")
        summary = result.summary.copy()
        if "worst_time" in summary:
            summary["worst_time"] = summary["worst_time"].astype("string")
        _write_table(summary, tmp, "summary")
        daily = result.daily.copy()
        daily["date"] = daily["date"].astype("string")
        _write_table(daily, tmp, "daily_hours")
        _write_table(result.quality, tmp, "data_quality")
        _write_table(result.problems, tmp, "not_screened")
        _write_table(result.file_problems, tmp, "files_not_read")
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
            "coolprop": CoolProp.__version__,
            "inputs": _input_files(result),
        }
        (tmp / "run.json").write_text(json.dumps(meta, indent=2), encoding="utf-8")
        (tmp / "index.html").write_text(_overview_html(result, meta), encoding="utf-8")
        if out.exists():
            old = out.with_name(f".{out.name}.old")
            if old.exists():
                shutil.rmtree(old)
            os.replace(out, old)
            os.replace(tmp, out)
            shutil.rmtree(old)
        else:
            os.replace(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return out


def _overview_html(result: ScanResult, meta: dict) -> str:
    tz = result.plant.timezone
    site = result.plant.settings.site
    ranking = []
    for row in result.summary.itertuples(index=False):
        d = row._asdict()
        d["worst_ratio_text"] = "—" if pd.isna(row.worst_ratio) else f"{row.worst_ratio:.2f}"
        d["guidance_text"] = f"{row.guidance_ratio:.2f} or {row.guidance_margin_m:.2f} m"
        ranking.append(d)
    if site.barometer_tag:
        baro = (
            f"tag {site.barometer_tag} where fresh and plausible, otherwise the 1976 standard "
            f"atmosphere at {site.elevation:.0f} m (hours on the standard atmosphere per pump "
            "in summary.csv)"
        )
    else:
        baro = f"1976 standard atmosphere at the site elevation of {site.elevation:.0f} m"
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
        legend=[{"label": STATE_LABELS[s], "colour": STATE_COLOURS[s]} for s in states.STATES],
        hours_figure=_hours_figure(result, "margin"),
        region_figure=_hours_figure(result, "region"),
        quality=result.quality.to_dict("records"),
        problems=result.problems.to_dict("records"),
        file_problems=result.file_problems.to_dict("records"),
        barometer=baro,
        ample_ratio=result.plant.settings.policy.ample_ratio,
        coolprop_version=CoolProp.__version__,
        por_low=0.70,
        por_high=1.20,
        cautions=CAUTIONS,
    )
