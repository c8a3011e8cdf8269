"""The onset page's evidence: the daily flow-normalised suction condition with the fitted step
or ramp drawn over it, the interval of its start shaded, the failure and the known events
marked; and the table of the exposure before a failure with the empty cells explained."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from screening.report.figjson import label_at, numbers, vband, vline

#: Colours of the evidence figure (ours): points, fit, interval, margin, events.
POINTS, FIT, INTERVAL, MARGIN, EVENT = "#2d5f8f", "#b3261e", "#f3d9d6", "#9a9a9a", "#3d7a4a"


def _day(ts) -> str:
    return pd.Timestamp(ts).strftime("%Y-%m-%d")


def fitted_line(result) -> tuple[list[str], list[float], str] | None:
    """The chosen model's line (x as dates, y [m]) and its name, or None when nothing was found.

    Ramp (when chosen): intercept, then intercept + slope·(t − t_k) from the hinge day t_k;
    step: the mean before the onset, then the mean after (as fitted in
    :mod:`screening.onset.changepoint`); failing both, the step of the margin itself.
    """
    d = result.daily
    if d.empty:
        return None
    first, last = d["date"].iloc[0], d["date"].iloc[-1]
    ramp, step, margin = result.ramp, result.onset, result.onset_margin
    if ramp.get("chosen"):
        k = pd.Timestamp(ramp["onset"])
        drop = ramp["slope"] * ((last - k) / pd.Timedelta(days=1))
        xs = [_day(first), _day(k), _day(last)]
        ys = [ramp["intercept"], ramp["intercept"], ramp["intercept"] + drop]
        return xs, ys, "fitted decline (broken stick)"
    if step.get("onset") is not None:
        k = pd.Timestamp(step["onset"])
        xs = [_day(first), _day(k), _day(k), _day(last)]
        ys = [step["mean_before"], step["mean_before"], step["mean_after"], step["mean_after"]]
        return xs, ys, "fitted step"
    if margin.get("onset") is not None:
        k = pd.Timestamp(margin["onset"])
        xs = [_day(first), _day(k), _day(k), _day(last)]
        ys = [margin["mean_before"], margin["mean_before"], margin["mean_after"],
              margin["mean_after"]]  # fmt: skip
        return xs, ys, "fitted step of the margin"
    return None


def chosen_estimate(result) -> dict:
    """The estimate the finding speaks of: a chosen ramp, else a step of the suction
    condition, else a step of the margin (the same order as :mod:`screening.onset.finding`)."""
    if result.ramp.get("chosen"):
        return result.ramp
    if result.onset.get("onset") is not None:
        return result.onset
    return result.onset_margin


def evidence_figure(result, local, units) -> dict:
    """Daily suction condition (points), the margin change (line), the fit, the interval of its
    start (shaded), the baseline, failure and events (vertical lines), in the display length
    unit of ``units`` (:class:`screening.report.pump_pages.DisplayUnits`); a plotly.js figure
    dict for :func:`screening.report.figjson.figure_html`."""
    d = result.daily
    length = lambda v: numbers(units.convert(np.asarray(v, dtype=float), "length"))  # noqa: E731
    x = d["date"].dt.strftime("%Y-%m-%d").tolist() if len(d) else []
    data = [{"type": "scatter", "x": x, "y": length(d.get("residual_m", [])),
             "mode": "markers", "name": "suction condition (daily)",
             "marker": {"color": POINTS, "size": 4}}]  # fmt: skip
    if "margin_change_m" in d:
        data.append({"type": "scatter", "x": x, "y": length(d["margin_change_m"]),
                     "mode": "lines", "name": "margin change, all inputs",
                     "line": {"color": MARGIN, "width": 1}})  # fmt: skip
    shapes, notes = [], []
    chosen = chosen_estimate(result)
    if chosen.get("onset") is not None and chosen.get("interval"):
        lo, hi = chosen["interval"]
        shapes.append(vband(_day(lo), _day(pd.Timestamp(hi) + pd.Timedelta(days=1)), INTERVAL))
        data.append({"type": "scatter", "x": [None], "y": [None], "mode": "markers",
                     "name": "5-95 % interval of the start",  # a legend entry for the shading
                     "marker": {"color": INTERVAL, "size": 12, "symbol": "square"}})  # fmt: skip
    line = fitted_line(result)
    if line is not None:
        data.append({"type": "scatter", "x": line[0], "y": length(line[1]), "mode": "lines",
                     "name": line[2], "line": {"color": FIT, "width": 3}})  # fmt: skip
    a, b = result.baseline
    shapes.append(vband(local(a)[:10], local(b)[:10], "#e7edf3"))
    notes.append({**label_at(local(a)[:10], "baseline", 0.02, size=11), "xanchor": "left"})
    _marks(shapes, notes, result, local)
    layout = {
        "height": 380, "hovermode": "x unified", "legend": {"orientation": "h", "y": -0.18},
        "margin": {"l": 60, "r": 20, "t": 64, "b": 40}, "plot_bgcolor": "white",
        "xaxis": {"gridcolor": "#e3e3e3", "type": "date"},
        "yaxis": {"gridcolor": "#e3e3e3", "zerolinecolor": "#8a8a8a",
                  "title": {"text": f"against the baseline [{units.label('length')}]"}},
        "shapes": shapes, "annotations": notes,
    }  # fmt: skip
    return {"data": data, "layout": layout}


def _marks(shapes: list, notes: list, result, local) -> None:
    """Vertical lines for the failure and each known event, labelled above the plot."""
    labels: list[tuple[str, str, str, str]] = []
    for e in result.events.itertuples(index=False) if len(result.events) else []:
        if e.kind != "failure":
            labels.append((local(e.time)[:10], e.kind.replace("_", " "), EVENT, "dot"))
    if result.failed_on is not None:
        labels.append((local(result.failed_on)[:10], "failure", "#1d1d1d", "solid"))
    for i, (x, text, colour, dash) in enumerate(labels):
        shapes.append(vline(x, colour, dash))
        notes.append(label_at(x, text, 1.0 + 0.06 * (i % 2), size=11, color=colour))


def _why_empty(start: pd.Timestamp, window_start: pd.Timestamp) -> str:
    """Why a sum of the exposure table is empty."""
    if start < window_start:
        return f"not in the window (starts {window_start:%Y-%m-%d})"
    return "days without data"


def before_rows(before: pd.DataFrame, result) -> list[dict]:
    """The exposure-before-failure table as text, an empty sum saying why it is empty."""
    start = pd.Timestamp(result.start).tz_convert(result.timezone).tz_localize(None).normalize()
    rows = []
    for r in before.to_dict("records"):
        prior_start = r["prior_window_start"]
        row = {
            "days before the failure": str(int(r["span_days"])),
            "from": _day(r["window_start"]),
            "to (exclusive)": _day(r["window_end"]),
        }
        for key, label, begin in (
            ("below_npsh3_h", "below NPSH3 [h]", r["window_start"]),
            ("below_guidance_h", "below guidance [h]", r["window_start"]),
            ("prior_below_npsh3_h", "a year earlier: below NPSH3 [h]", prior_start),
            ("prior_below_guidance_h", "a year earlier: below guidance [h]", prior_start),
        ):
            v = r.get(key, math.nan)
            ok = v is not None and np.isfinite(v)
            row[label] = f"{v:.1f}" if ok else _why_empty(pd.Timestamp(begin), start)
        rows.append(row)
    return rows
