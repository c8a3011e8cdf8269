"""The onset page: timeline of daily band hours with the onset and failure marked, cumulative
exposure, episodes, drivers over time, and the plain-language finding."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from jinja2 import Environment, PackageLoader, select_autoescape
from plotly.offline import get_plotlyjs

from screening.base.files import atomic_folder
from screening.engine.drivers import DRIVERS
from screening.onset.investigate import OnsetResult
from screening.report.cautions import CAUTIONS
from screening.report.figjson import figure_html, label_at, numbers, vline
from screening.report.onset_evidence import before_rows, evidence_figure
from screening.report.palette import STATE_COLOURS
from screening.report.pump_pages import DISPLAY_UNITS, DisplayUnits

_ENV = Environment(loader=PackageLoader("screening.report", "templates"),
                   autoescape=select_autoescape(["html"]))  # fmt: skip
DRIVER_COLOURS = {
    "suction_pressure": "#2d5f8f",
    "surface_pressure": "#2d5f8f",
    "level": "#3d7a4a",
    "temperature": "#c7761c",
    "flow": "#5c2a00",
    "line_flow": "#a8673a",
    "speed": "#7d7d7d",
}


def _mark(layout: dict, when, label: str, dash: str) -> None:
    """A vertical line at the day ``when`` with ``label`` above the plot (nothing for None),
    every other label a row higher so that close marks stay readable."""
    if when is not None:
        x = pd.Timestamp(when).strftime("%Y-%m-%d")
        notes = layout.setdefault("annotations", [])
        layout.setdefault("shapes", []).append(vline(x, dash=dash, width=2))
        notes.append(label_at(x, label, 1.02 + 0.07 * (len(notes) % 2)))


def _display(frame: pd.DataFrame, tz: str, units: DisplayUnits) -> pd.DataFrame:
    """The table as text for the page: times in the site's zone to the minute, hours to 0.1,
    ratios to 0.001 and lengths (columns ``*_m``) in the display unit to 0.01, their header
    ``name [unit]`` (the CSV and Parquet tables keep every digit, in metres)."""
    out = pd.DataFrame(index=frame.index)
    for c in frame.columns:
        v = frame[c]
        if isinstance(v.dtype, pd.DatetimeTZDtype):
            out[c] = v.dt.tz_convert(tz).dt.strftime("%Y-%m-%d %H:%M")
        elif v.dtype.kind == "M":
            out[c] = v.dt.strftime("%Y-%m-%d")
        elif v.dtype.kind == "f" and c.endswith("_m"):
            shown = units.convert(v.to_numpy(dtype=float), "length")
            name = f"{c[:-2]} [{units.label('length')}]"
            out[name] = ["" if np.isnan(x) else f"{x:.2f}" for x in shown]
        elif v.dtype.kind == "f":
            digits = 3 if c.endswith("ratio") else 1
            out[c] = v.map(lambda x, d=digits: "" if pd.isna(x) else f"{x:.{d}f}")
        else:
            out[c] = v.astype(str)
    return out


def _estimate(what: str, res: dict, units: DisplayUnits) -> dict:
    """One row of the page's table of onset estimates (a slope in the display length unit)."""
    day = "{:%Y-%m-%d}".format
    row = {"what": what, "onset": "none found", "interval": "", "confidence": "",
           "method": res.get("method", ""), "note": res.get("reason") or ""}  # fmt: skip
    if res.get("onset") is not None:
        row["onset"] = day(pd.Timestamp(res["onset"]))
        if res.get("interval"):
            lo, hi = res["interval"]
            row["interval"] = f"{day(pd.Timestamp(lo))} to {day(pd.Timestamp(hi))}"
        if res.get("confidence") is not None:
            row["confidence"] = f"{100 * res['confidence']:.0f} %"
        if "slope" in res and res["slope"] == res["slope"]:
            slope = float(units.convert(res["slope"], "length"))
            row["note"] = f"slope {slope:+.3f} {units.label('length')} per day" + (
                "; chosen: fits better than a step" if res.get("chosen") else ""
            )
    return row


def _sentence(text: str) -> str:
    """The text with its first letter upper-case (the rest as written)."""
    return text[:1].upper() + text[1:]


def write_onset_page(result, out: Path, units: DisplayUnits | None = None) -> Path:
    """Write ``onset.html`` (and plotly.min.js) into ``out`` with lengths in the display
    ``units`` (default SI); return the page's path."""
    units = units or DISPLAY_UNITS["si"]
    h = result.hours
    x = h["date"].dt.strftime("%Y-%m-%d").tolist()
    d = result.drivers
    tz = result.timezone
    eps = _display(result.episodes, tz, units)
    local = lambda ts: pd.Timestamp(ts).tz_convert(tz).strftime("%Y-%m-%d %H:%M")  # noqa: E731
    events = _display(result.events, tz, units) if len(result.events) else None
    html = _ENV.get_template("onset.html").render(
        r=result,
        finding=result.finding_in(units.head),
        units_label=units.name,
        fig_evidence=figure_html(evidence_figure(result, local, units), "evidence"),
        notes=_sentence("; ".join(result.notes)),
        events=None if events is None else events.to_dict("records"),
        event_columns=[] if events is None else list(events.columns),
        fig_timeline=figure_html(_timeline_figure(result, x), "timeline"),
        fig_cumulative=figure_html(_cumulative_figure(h, x), "cumulative"),
        fig_drivers=figure_html(_drivers_figure(d, units), "drivers") if len(d) else "",
        estimates=[_estimate(what, res, units) for what, res in _estimates(result)],
        local=local,
        episodes=eps.to_dict("records"),
        episode_columns=list(eps.columns),
        before=None
        if result.before_failure is None
        else before_rows(result.before_failure, result),
        cautions=CAUTIONS,
    )
    (out / "plotly.min.js").write_text(get_plotlyjs(), encoding="utf-8")
    page = out / "onset.html"
    page.write_text(html, encoding="utf-8")
    return page


def _layout(height: int, y_title: str) -> dict:
    """The layout the onset page's time charts share: dates along, one y title."""
    return {"height": height, "xaxis": {"type": "date"}, "yaxis": {"title": {"text": y_title}},
            "legend": {"orientation": "h", "y": -0.2},  # below: every chart the same width
            "margin": {"l": 60, "r": 20, "t": 30, "b": 40}}  # fmt: skip


def _timeline_figure(result, x: list[str]) -> dict:
    """Hours below NPSH3 and below guidance per period [h], the onset and failure marked."""
    h = result.hours
    data = [
        {"type": "bar", "x": x, "y": numbers(h["below_npsh3_h"]), "name": "below NPSH3",
         "marker": {"color": STATE_COLOURS["below_npsh3"], "pattern": {"shape": "x"}}},
        {"type": "bar", "x": x, "y": numbers(h["below_guidance_h"] - h["below_npsh3_h"]),
         "name": "below guidance",
         "marker": {"color": STATE_COLOURS["below_guidance"], "pattern": {"shape": "/"}}},
    ]  # fmt: skip
    layout = {**_layout(320, f"hours per {result.period}"), "barmode": "stack"}
    layout["margin"]["t"] = 56  # the marks' labels above the plot, clear of the tool bar
    if result.ramp.get("chosen"):
        _mark(layout, result.ramp.get("onset"), "decline begins", "dash")
    else:
        _mark(layout, result.onset.get("onset"), "onset (margin)", "dash")
    _mark(layout, result.onset_exposure.get("onset"), "onset (exposure)", "dot")
    if result.failed_on is not None:
        failed = pd.Timestamp(result.failed_on).tz_convert(result.timezone).tz_localize(None)
        _mark(layout, failed, "failure", "solid")
    return {"data": data, "layout": layout}


def _cumulative_figure(h: pd.DataFrame, x: list[str]) -> dict:
    """Cumulative hours below NPSH3 and below guidance [h]."""
    data = [
        {"type": "scatter", "x": x, "y": numbers(h[col]), "name": name, "mode": "lines",
         "line": {"color": STATE_COLOURS[colour], "width": 2}}
        for col, name, colour in (
            ("cum_below_npsh3_h", "below NPSH3", "below_npsh3"),
            ("cum_below_guidance_h", "below guidance", "below_guidance"),
        )
        if col in h
    ]  # fmt: skip
    return {"data": data, "layout": _layout(300, "cumulative hours")}


def _drivers_figure(d: pd.DataFrame, units: DisplayUnits) -> dict:
    """Each driver's margin change against the baseline per day and the total, in the display
    length unit."""
    dx = pd.to_datetime(d["date"]).dt.strftime("%Y-%m-%d").tolist()
    length = lambda col: numbers(units.convert(d[col].to_numpy(float), "length"))  # noqa: E731
    data = [
        {"type": "scatter", "x": dx, "y": length(f"{k}_m"), "name": k.replace("_", " "),
         "mode": "lines", "line": {"color": DRIVER_COLOURS[k]}}
        for k in DRIVERS
        if f"{k}_m" in d
    ]  # fmt: skip
    data.append({"type": "scatter", "x": dx, "y": length("change_m"), "name": "total change",
                 "mode": "lines", "line": {"color": "#1d1d1d", "dash": "dash"}})  # fmt: skip
    title = f"margin change against baseline [{units.label('length')}]"
    return {"data": data, "layout": _layout(320, title)}


def _estimates(result) -> list[tuple[str, dict]]:
    """The estimates of the page's table: step, ramp, step of the margin and exposure."""
    return [
        ("step in the flow-normalised margin", result.onset),
        ("start of a decline in it (broken stick)", result.ramp),
        ("step in the margin itself (all inputs)", result.onset_margin),
        ("step in the daily hours below guidance", result.onset_exposure),
    ]


def write_onset_report(result: OnsetResult, out: str | Path, units: str = "si") -> Path:
    """Write the onset tables (CSV and Parquet, SI) and an HTML page with lengths in display
    ``units`` (``si`` or ``us``) into the folder ``out``, replaced whole when complete (only a
    folder the tool wrote: see :func:`screening.base.files.check_out`); returns the page's
    path."""
    if units not in DISPLAY_UNITS:
        raise ValueError(f"units must be one of {sorted(DISPLAY_UNITS)}, not {units!r}")
    out = Path(out)
    with atomic_folder(out, "onset") as tmp:
        _write_onset_folder(result, tmp, DISPLAY_UNITS[units])
    return out / "onset.html"


def _write_onset_folder(result: OnsetResult, out: Path, units: DisplayUnits) -> None:
    """The onset tables and page, written into the (new) folder ``out``."""
    tables = {"onset_hours": result.hours, "episodes": result.episodes,
              "drivers": result.drivers, "onset_daily": result.daily,
              "events": result.events}  # fmt: skip
    if result.before_failure is not None:
        tables["before_failure"] = result.before_failure
    for name, frame in tables.items():
        f = frame.copy()
        for c in f.columns:
            if f[c].dtype.kind == "M" or isinstance(f[c].dtype, pd.DatetimeTZDtype):
                f[c] = f[c].astype("string")
        f.to_csv(out / f"{name}.csv", index=False)
        f.to_parquet(out / f"{name}.parquet", index=False)
    write_onset_page(result, out, units)
