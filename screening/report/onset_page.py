"""The onset page: timeline of daily band hours with the onset and failure marked, cumulative
exposure, episodes, drivers over time, and the plain-language finding."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import plotly.graph_objects as go
from jinja2 import Environment, PackageLoader, select_autoescape
from plotly.offline import get_plotlyjs

from screening.base.files import atomic_folder
from screening.engine.drivers import DRIVERS
from screening.onset.investigate import OnsetResult
from screening.report.cautions import CAUTIONS
from screening.report.figjson import plain_figure
from screening.report.onset_evidence import before_rows, evidence_figure
from screening.report.palette import STATE_COLOURS

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


def _html(fig: go.Figure, div_id: str) -> str:
    plain_figure(fig)  # plotly.js reads HTML in trace texts: show them as written
    return fig.to_html(full_html=False, include_plotlyjs=False, div_id=div_id)


def _mark(fig, when, label, dash):
    if when is not None:
        x = pd.Timestamp(when).strftime("%Y-%m-%d")
        fig.add_vline(x=x, line={"dash": dash, "color": "#1d1d1d"})
        fig.add_annotation(x=x, yref="paper", y=1.02, text=label, showarrow=False)


def _display(frame: pd.DataFrame, tz: str) -> pd.DataFrame:
    """The table as text for the page: times in the site's zone to the minute, hours to 0.1,
    ratios to 0.001 and metres to 0.01 (the CSV and Parquet tables keep every digit)."""
    out = pd.DataFrame(index=frame.index)
    for c in frame.columns:
        v = frame[c]
        if isinstance(v.dtype, pd.DatetimeTZDtype):
            out[c] = v.dt.tz_convert(tz).dt.strftime("%Y-%m-%d %H:%M")
        elif v.dtype.kind == "M":
            out[c] = v.dt.strftime("%Y-%m-%d")
        elif v.dtype.kind == "f":
            digits = 3 if c.endswith("ratio") else 2 if c.endswith("_m") else 1
            out[c] = v.map(lambda x, d=digits: "" if pd.isna(x) else f"{x:.{d}f}")
        else:
            out[c] = v.astype(str)
    return out


def _estimate(what: str, res: dict) -> dict:
    """One row of the page's table of onset estimates."""
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
            row["note"] = f"slope {res['slope']:+.3f} per day" + (
                "; chosen: fits better than a step" if res.get("chosen") else ""
            )
    return row


def _sentence(text: str) -> str:
    """The text with its first letter upper-case (the rest as written)."""
    return text[:1].upper() + text[1:]


def write_onset_page(result, out: Path, failed_on=None) -> Path:
    """Write ``onset.html`` (and plotly.min.js) into ``out``; return the page's path."""
    h = result.hours
    x = h["date"].dt.strftime("%Y-%m-%d")
    timeline = _timeline_figure(result, x)
    cumul = _cumulative_figure(h, x)
    d = result.drivers
    drivers = _drivers_figure(d)
    eps = _display(result.episodes, result.timezone)
    estimates = _estimates(result)
    local = lambda ts: pd.Timestamp(ts).tz_convert(result.timezone).strftime("%Y-%m-%d %H:%M")  # noqa: E731
    events = _display(result.events, result.timezone) if len(result.events) else None
    html = _ENV.get_template("onset.html").render(
        r=result,
        fig_evidence=_html(evidence_figure(result, local), "evidence"),
        notes=_sentence("; ".join(result.notes)),
        events=None if events is None else events.to_dict("records"),
        event_columns=[] if events is None else list(events.columns),
        fig_timeline=_html(timeline, "timeline"),
        fig_cumulative=_html(cumul, "cumulative"),
        fig_drivers=_html(drivers, "drivers") if len(d) else "",
        estimates=estimates,
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


def _timeline_figure(result, x: pd.Series) -> go.Figure:
    """Hours below NPSH3 and below guidance per period [h], the onset and failure marked."""
    h = result.hours
    timeline = go.Figure()
    timeline.add_bar(
        x=x,
        y=h["below_npsh3_h"],
        name="below NPSH3",
        marker={"color": STATE_COLOURS["below_npsh3"], "pattern": {"shape": "x"}},
    )
    timeline.add_bar(
        x=x,
        y=h["below_guidance_h"] - h["below_npsh3_h"],
        name="below guidance",
        marker={"color": STATE_COLOURS["below_guidance"], "pattern": {"shape": "/"}},
    )
    timeline.update_layout(barmode="stack", height=320, yaxis_title=f"hours per {result.period}",
                           margin={"l": 60, "r": 20, "t": 30, "b": 40})  # fmt: skip
    if result.ramp.get("chosen"):
        _mark(timeline, result.ramp.get("onset"), "decline begins", "dash")
    else:
        _mark(timeline, result.onset.get("onset"), "onset (margin)", "dash")
    _mark(timeline, result.onset_exposure.get("onset"), "onset (exposure)", "dot")
    if result.failed_on is not None:
        failed = pd.Timestamp(result.failed_on).tz_convert(result.timezone).tz_localize(None)
        _mark(timeline, failed, "failure", "solid")
    return timeline


def _cumulative_figure(h: pd.DataFrame, x: pd.Series) -> go.Figure:
    """Cumulative hours below NPSH3 and below guidance [h]."""
    cumul = go.Figure()
    for col, name, colour in (
        ("cum_below_npsh3_h", "below NPSH3", "below_npsh3"),
        ("cum_below_guidance_h", "below guidance", "below_guidance"),
    ):
        if col in h:
            cumul.add_scatter(
                x=x,
                y=h[col],
                name=name,
                mode="lines",
                line={"color": STATE_COLOURS[colour], "width": 2},
            )
    cumul.update_layout(height=300, yaxis_title="cumulative hours",
                        margin={"l": 60, "r": 20, "t": 30, "b": 40})  # fmt: skip
    return cumul


def _drivers_figure(d: pd.DataFrame) -> go.Figure:
    """Each driver's margin change against the baseline per day [m], and the total."""
    drivers = go.Figure()
    if len(d):
        dx = pd.to_datetime(d["date"]).dt.strftime("%Y-%m-%d")
        for k in (k for k in DRIVERS if f"{k}_m" in d):
            drivers.add_scatter(
                x=dx,
                y=d[f"{k}_m"],
                name=k.replace("_", " "),
                mode="lines",
                line={"color": DRIVER_COLOURS[k]},
            )
        drivers.add_scatter(
            x=dx,
            y=d["change_m"],
            name="total change",
            mode="lines",
            line={"color": "#1d1d1d", "dash": "dash"},
        )
    drivers.update_layout(height=320, yaxis_title="margin change against baseline [m]",
                          margin={"l": 60, "r": 20, "t": 30, "b": 40})  # fmt: skip
    return drivers


def _estimates(result) -> list[dict]:
    """The rows of the page's table of onset estimates: step, ramp and exposure."""
    return [
        _estimate("step in the flow-normalised margin", result.onset),
        _estimate("start of a decline in it (broken stick)", result.ramp),
        _estimate("step in the margin itself (all inputs)", result.onset_margin),
        _estimate("step in the daily hours below guidance", result.onset_exposure),
    ]


def write_onset_report(result: OnsetResult, out: str | Path) -> Path:
    """Write the onset tables (CSV and Parquet) and an HTML page into the folder ``out``,
    replaced whole when complete (only a folder the tool wrote: see
    :func:`screening.base.files.check_out`); returns the page's path."""
    out = Path(out)
    with atomic_folder(out, "onset") as tmp:
        _write_onset_folder(result, tmp)
    return out / "onset.html"


def _write_onset_folder(result: OnsetResult, out: Path) -> None:
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
    write_onset_page(result, out)
