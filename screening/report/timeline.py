"""The pump page's time chart: NPSHa against NPSH3 and the guidance, the margin ratio and the
process conditions stacked on one shared time axis, one width, one legend.

Time buckets where the pump was stopped, had bad data or had no data at all are shaded, each
kind in its own colour and named in the legend (a gap in a line alone does not say why).
Numbers in display units (:class:`screening.report.pump_pages.DisplayUnits`), converted here
at the edge; the figure is plain plotly.js JSON (:mod:`screening.report.figjson`) whose
traces share one packed time axis.
"""

from __future__ import annotations

import functools

import numpy as np
import pandas as pd

from screening.report.figjson import SHARED_TIME, local_ms, numbers
from screening.report.palette import GAP_COLOURS, GAP_LABELS, INK

#: Font size of axis titles and tick labels [px].
AXIS_FONT = 12
#: Gap between stacked rows [fraction of the plot height].
SPACING = 0.025
#: Height of a process row and the heights of the head and ratio rows [px].
ROW_PX, HEAD_PX, RATIO_PX = 120, 300, 190


def _trace(y, name: str, row: int, colour: str, **extra) -> dict:
    """A line on the shared time axis, on the axes of ``row`` (1 at the top)."""
    suffix = "" if row == 1 else str(row)
    return {
        "type": "scatter", "x": SHARED_TIME, "y": numbers(y), "mode": "lines", "name": name,
        "xaxis": f"x{suffix}", "yaxis": f"y{suffix}", "line": {"color": colour}, **extra,
    }  # fmt: skip


def _rows(plot: pd.DataFrame) -> list[tuple[str, str, str]]:
    """The process rows of a pump's plot data: (column, label, kind)."""
    rows = [("temperature_k", "temperature", "temperature")]
    if "suction_pressure_abs_pa_min" in plot:
        rows.append(("suction_pressure_abs_pa", "suction pressure (abs)", "pressure"))
    if "level_m_min" in plot:
        rows.append(("level_m", "vessel level", "length"))
    rows.append(("flow_m3_s", "flow", "flow"))
    if "speed_rpm_min" in plot:
        rows.append(("speed_rpm", "speed", "speed"))
    return rows


def _head_traces(plot: pd.DataFrame, units) -> list[dict]:
    c = units.convert
    return [
        _trace(c(plot["npsha_m_min"], "length"), "NPSHa, minimum in bucket", 1, "#2d5f8f",
               legendgroup="npsha", line={"color": "#2d5f8f", "width": 1.6}),
        _trace(c(plot["npsha_m_max"], "length"), "NPSHa, maximum in bucket", 1, "#2d5f8f",
               legendgroup="npsha", opacity=0.55, line={"color": "#2d5f8f", "width": 0.7}),
        _trace(c(plot["guidance_m_max"], "length"), "guidance NPSHa", 1, "#c7761c",
               line={"color": "#c7761c", "dash": "dash", "width": 1.6}),
        _trace(c(plot["npsh3_m_max"], "length"), "NPSH3 at running speed", 1, "#5c2a00",
               line={"color": "#5c2a00", "width": 2}),
    ]  # fmt: skip


def _ratio_traces(plot, times, guidance_ratio: float, ample: float) -> list[dict]:
    """The minimum ratio per bucket, and the band edges as named lines across the window (in
    the legend, so that their labels never print over each other)."""
    traces = [_trace(plot["ratio_min"], "NPSHa/NPSH3, minimum in bucket", 2, "#2d5f8f")]
    ends = np.array([times[0], times[-1]]) if len(times) else np.array([0.0, 0.0])
    for y, name, colour, dash in (
        (1.0, "ratio 1: NPSH3", "#5c2a00", "solid"),
        (guidance_ratio, f"guidance ratio {guidance_ratio:.2f}", "#c7761c", "dash"),
        (ample, f"ample from ratio {ample:.2f}", "#2d5f8f", "dot"),
    ):
        traces.append({
            "type": "scatter", "x": ends, "y": [y, y], "mode": "lines", "name": name,
            "xaxis": "x2", "yaxis": "y2", "hoverinfo": "skip",
            "line": {"color": colour, "dash": dash, "width": 1.2},
        })  # fmt: skip
    return traces


def _gap_runs(flags: np.ndarray, starts: np.ndarray, width: float) -> list[tuple[float, float]]:
    """Contiguous runs of flagged buckets as (start, end) [ms]."""
    runs: list[list[float]] = []
    for t in starts[flags]:
        if runs and t - runs[-1][1] <= 0.5 * width:
            runs[-1][1] = t + width
        else:
            runs.append([t, t + width])
    return [(a, b) for a, b in runs]


def gap_spans(plot: pd.DataFrame, times: np.ndarray, start_ms: float, end_ms: float) -> dict:
    """Time spans [ms, wall clock] to shade, by kind: ``stopped`` and ``bad_data`` where a
    bucket holds some of that state, ``no_data`` where the window has no bucket at all (no
    fresh sample of a needed tag in the whole bucket)."""
    spans: dict[str, list[tuple[float, float]]] = {k: [] for k in GAP_LABELS}
    if len(times) == 0:
        spans["no_data"] = [(start_ms, end_ms)]
        return spans
    diffs = np.diff(times)
    width = float(diffs[diffs > 0].min()) if (diffs > 0).any() else end_ms - start_ms
    for kind in ("stopped", "bad_data"):
        col = f"{kind}_max"
        if col in plot:
            spans[kind] = _gap_runs(plot[col].to_numpy() > 0, times, width)
    edges = np.concatenate(([start_ms], times + width))
    nexts = np.concatenate((times, [end_ms]))
    missing = nexts - edges > 0.5 * width
    spans["no_data"] = [
        (float(a), float(b)) for a, b in zip(edges[missing], nexts[missing], strict=True)
    ]
    return spans


def _gap_spans(spans: dict) -> list[dict]:
    """Shaded rectangles over the whole height of the chart, one colour per kind, the first of
    each kind in the legend (as :func:`figure_html` spans: edges and one shape)."""
    return [
        {
            "edges": np.asarray(runs, dtype=float),
            "shape": {
                "type": "rect",
                "xref": "x",
                "yref": "paper",
                "y0": 0,
                "y1": 1,
                "layer": "below",
                "fillcolor": GAP_COLOURS[kind],
                "opacity": 0.45,
                "line": {"width": 0},
                "name": GAP_LABELS[kind],
                "legendgroup": f"gap-{kind}",
            },
        }  # fmt: skip
        for kind, runs in spans.items()
        if runs
    ]


def _axis_title(text: str) -> dict:
    return {"text": text, "font": {"size": AXIS_FONT}}


@functools.lru_cache(maxsize=8)
def _window_ms(start: pd.Timestamp, end: pd.Timestamp, tz: str) -> np.ndarray:
    """The window's ends as wall-clock milliseconds (:func:`local_ms`), once per report."""
    out = local_ms(pd.Series([start, end]), tz)
    out.flags.writeable = False  # shared by every page
    return out


def time_figure(
    plot: pd.DataFrame, units, tz: str, guidance_ratio: float, ample: float,
    start: pd.Timestamp, end: pd.Timestamp,
) -> dict:  # fmt: skip
    """The stacked time chart of one pump (see the module docstring).

    Parameters
    ----------
    plot : DataFrame
        The pump's plot buckets (:func:`screening.engine.plotdata.min_max_buckets`, SI).
    units : DisplayUnits
        Display units of heads, pressures, temperatures and flows.
    tz : str
        Site time zone (times are drawn as its wall-clock time).
    guidance_ratio, ample : float
        Guidance ratio and ample ratio [-] (band edges of the ratio row).
    start, end : Timestamp
        The screening window (shaded as no data where it has no bucket).
    """
    times = local_ms(plot["time"], tz)
    window = _window_ms(start, end, tz)
    rows = _rows(plot)
    heights = [HEAD_PX, RATIO_PX] + [ROW_PX] * len(rows)
    traces = _head_traces(plot, units) + _ratio_traces(plot, times, guidance_ratio, ample)
    titles = [f"head [{units.label('length')}]", "NPSHa / NPSH3 [-]"]
    for i, (col, label, kind) in enumerate(rows, start=3):
        lo, hi = units.convert(plot[f"{col}_min"], kind), units.convert(plot[f"{col}_max"], kind)
        first = i == 3  # one legend entry for the thick and thin lines of every process row
        traces.append(
            _trace(
                lo,
                "process value, minimum in bucket",
                i,
                INK,
                legendgroup="lo",
                showlegend=first,
                line={"color": INK, "width": 1.3},
            )
        )
        traces.append(
            _trace(
                hi,
                "process value, maximum in bucket",
                i,
                INK,
                legendgroup="hi",
                showlegend=first,
                opacity=0.55,
                line={"color": INK, "width": 0.6},
            )
        )
        titles.append(f"{label}<br>[{units.label(kind)}]")  # fmt: skip
    total = sum(heights)
    plot_px = total / (1 - SPACING * (len(heights) - 1))
    layout: dict = {}
    top = 1.0
    n = len(heights)
    for i, (h, title) in enumerate(zip(heights, titles, strict=True), start=1):
        suffix = "" if i == 1 else str(i)
        bottom = max(0.0, top - h / plot_px)
        xaxis = {"anchor": f"y{suffix}", "domain": [0.0, 1.0], "type": "date",
                 "tickfont": {"size": AXIS_FONT}, "showticklabels": i in (1, n),
                 "gridcolor": "#e3e3e3"}  # fmt: skip
        if i > 1:
            xaxis["matches"] = "x"
        layout[f"xaxis{suffix}"] = xaxis
        layout[f"yaxis{suffix}"] = {
            "anchor": f"x{suffix}", "domain": [bottom, top], "title": _axis_title(title),
            "tickfont": {"size": AXIS_FONT}, "gridcolor": "#e3e3e3", "zeroline": False,
        }  # fmt: skip
        top = bottom - SPACING
    layout["xaxis"]["side"] = "top"
    layout["xaxis"]["range"] = [float(window[0]), float(window[1])]
    layout |= {
        "height": int(plot_px) + 170,
        "margin": {"l": 90, "r": 45, "t": 150, "b": 40},
        "plot_bgcolor": "#ffffff",
        "hovermode": "x",
        "legend": {
            "orientation": "h",
            "x": 0,
            "y": 1.0,
            "yanchor": "top",
            "yref": "container",
            "font": {"size": AXIS_FONT},
        },  # fmt: skip
        "modebar": {"orientation": "v"},
    }
    spans = _gap_spans(gap_spans(plot, times, float(window[0]), float(window[1])))
    return {"data": traces, "layout": layout, "times": times, "spans": spans}
