"""One HTML page per pump: NPSHa against NPSH3 over time, margin ratio, process conditions,
operating points on the curve, daily hours per band, register data.

Plots use the min/max-per-bucket data kept by the scan (:mod:`screening.plotdata`); numbers
are shown in the chosen display units (SI or US customary), converted here at the edge.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from . import states
from .palette import STATE_COLOURS, STATE_LABELS, STATE_PATTERNS
from .units import si_to


@dataclass(frozen=True)
class DisplayUnits:
    """Units shown in the report (the tables beside it stay SI, with units in column names)."""

    name: str
    head: str
    flow: str
    pressure: str
    temperature: str

    def label(self, kind: str) -> str:
        """Short label of the display unit of ``kind``."""
        return {
            "length": self.head,
            "flow": self.flow.replace("**3", "³"),
            "pressure": self.pressure,
            "temperature": self.temperature.replace("deg", "°"),
            "speed": "rpm",
        }[kind]

    def convert(self, values, kind: str):
        """SI values of ``kind`` in this display unit."""
        unit = {
            "length": self.head,
            "flow": self.flow,
            "pressure": self.pressure,
            "temperature": self.temperature,
            "speed": "rpm",
        }[kind]
        return si_to(values, unit, kind)


DISPLAY_UNITS = {
    "si": DisplayUnits("SI", "m", "m**3/h", "kPa", "degC"),
    "us": DisplayUnits("US customary", "ft", "gpm", "psi", "degF"),
}

_SAFE = re.compile(r"[^A-Za-z0-9._-]")


def page_names(pump_ids) -> dict[str, str]:
    """A file name per pump id that cannot leave the report folder, unique per pump."""
    names: dict[str, str] = {}
    used: set[str] = set()
    for pid in pump_ids:
        base = _SAFE.sub("_", str(pid)).strip(".") or "pump"
        name, n = base, 1
        while name.lower() in used:
            n += 1
            name = f"{base}_{n}"
        used.add(name.lower())
        names[pid] = f"{name}.html"
    return names


def _html(fig: go.Figure, div_id: str) -> str:
    return fig.to_html(full_html=False, include_plotlyjs=False, div_id=div_id)


def _band(fig, t, lo, hi, name, colour, row=None, dash=None):
    """Minimum and maximum per bucket as two lines (no fill: fills bridge the gaps)."""
    kw = {} if row is None else {"row": row, "col": 1}
    fig.add_scatter(
        x=t, y=lo, mode="lines", line={"width": 1.4, "color": colour, "dash": dash},
        name=f"{name} (min in bucket)", legendgroup=name, **kw,
    )  # fmt: skip
    fig.add_scatter(
        x=t, y=hi, mode="lines", line={"width": 0.6, "color": colour, "dash": dash},
        opacity=0.6, name=f"{name} (max in bucket)", legendgroup=name, **kw,
    )  # fmt: skip


def npsh_figure(plot: pd.DataFrame, units: DisplayUnits, tz: str) -> go.Figure:
    """NPSHa (min-max band), NPSH3 and the guidance over time."""
    t = plot["time"].dt.tz_convert(tz)
    fig = go.Figure()
    c = units.convert
    _band(
        fig,
        t,
        c(plot["npsha_m_min"], "length"),
        c(plot["npsha_m_max"], "length"),
        "NPSHa",
        "#2d5f8f",
    )
    fig.add_scatter(
        x=t,
        y=c(plot["guidance_m_max"], "length"),
        mode="lines",
        name="guidance (max in bucket)",
        line={"color": "#c7761c", "dash": "dash"},
    )
    fig.add_scatter(
        x=t,
        y=c(plot["npsh3_m_max"], "length"),
        mode="lines",
        name="NPSH3 (max in bucket)",
        line={"color": "#5c2a00", "width": 2},
    )
    fig.update_layout(
        height=380,
        margin={"l": 60, "r": 20, "t": 20, "b": 40},
        yaxis_title=f"head [{units.label('length')}]",
        hovermode="x unified",
    )
    return fig


def ratio_figure(plot: pd.DataFrame, tz: str, guidance_ratio: float, ample: float) -> go.Figure:
    """Margin ratio over time (minimum per bucket) with the band edges."""
    t = plot["time"].dt.tz_convert(tz)
    fig = go.Figure()
    fig.add_scatter(
        x=t,
        y=plot["ratio_min"],
        mode="lines",
        name="NPSHa/NPSH3 (min in bucket)",
        line={"color": "#2d5f8f"},
    )
    for y, label, colour, dash in (
        (1.0, "NPSH3", "#5c2a00", "solid"),
        (guidance_ratio, "guidance ratio", "#c7761c", "dash"),
        (ample, "ample", "#2d5f8f", "dot"),
    ):
        fig.add_hline(
            y=y,
            line={"color": colour, "dash": dash, "width": 1.2},
            annotation_text=label,
            annotation_position="top left",
        )
    fig.update_layout(
        height=300, margin={"l": 60, "r": 20, "t": 20, "b": 40}, yaxis_title="NPSHa / NPSH3 [-]"
    )
    return fig


def process_figure(plot: pd.DataFrame, units: DisplayUnits, tz: str) -> go.Figure:
    """Temperature, suction pressure or level, flow and speed on a shared time axis."""
    rows = [("temperature_k", "temperature", "temperature")]
    if "suction_pressure_abs_pa_min" in plot:
        rows.append(("suction_pressure_abs_pa", "suction pressure (abs)", "pressure"))
    if "level_m_min" in plot:
        rows.append(("level_m", "vessel level", "length"))
    rows.append(("flow_m3_s", "flow", "flow"))
    if "speed_rpm_min" in plot:
        rows.append(("speed_rpm", "speed", "speed"))
    fig = make_subplots(rows=len(rows), cols=1, shared_xaxes=True, vertical_spacing=0.03)
    t = plot["time"].dt.tz_convert(tz)
    for i, (col, label, kind) in enumerate(rows, start=1):
        lo = units.convert(plot[f"{col}_min"], kind)
        hi = units.convert(plot[f"{col}_max"], kind)
        _band(fig, t, lo, hi, label, "#444444", row=i)
        fig.update_yaxes(
            title_text=f"{label} [{units.label(kind)}]", row=i, col=1, title_font={"size": 10}
        )
    fig.update_layout(
        height=170 * len(rows) + 60, showlegend=False, margin={"l": 70, "r": 20, "t": 20, "b": 40}
    )
    return fig


def points_figure(points: dict, curve, pump, units: DisplayUnits) -> go.Figure:
    """Time-weighted operating points (flow, NPSHa) with the NPSH3 curve and the POR."""
    fe, he, hours = points["flow_edges"], points["npsha_edges"], points["hours"]
    fig = go.Figure()
    z = np.where(hours > 0, hours, np.nan).T
    fig.add_heatmap(
        x=units.convert((fe[1:] + fe[:-1]) / 2, "flow"),
        y=units.convert((he[1:] + he[:-1]) / 2, "length"),
        z=z,
        colorscale="Greys",
        colorbar={"title": "h"},
        name="running hours",
        hovertemplate="%{z:.2f} h<extra></extra>",
    )
    q = np.linspace(curve.flow_min, curve.flow_max, 100)
    fig.add_scatter(
        x=units.convert(q, "flow"),
        y=units.convert(curve.at_reference_speed(q), "length"),
        mode="lines",
        name="NPSH3 (rated speed)",
        line={"color": "#5c2a00", "width": 2.5},
    )
    lo = units.convert(pump.preferred_low * pump.bep_flow, "flow")
    hi = units.convert(pump.preferred_high * pump.bep_flow, "flow")
    fig.add_vrect(
        x0=float(lo),
        x1=float(hi),
        fillcolor="#9cc3e4",
        opacity=0.25,
        line_width=0,
        annotation_text="preferred region",
        annotation_position="top left",
    )
    fig.update_layout(
        height=400,
        margin={"l": 60, "r": 20, "t": 30, "b": 50},
        xaxis_title=f"flow [{units.label('flow')}]",
        yaxis_title=f"NPSHa [{units.label('length')}]",
        legend={"orientation": "h", "y": -0.2},
    )
    return fig


def calendar_figure(daily: pd.DataFrame) -> go.Figure:
    """Stacked daily hours per margin state (one bar per local day)."""
    wide = daily.pivot(index="date", columns="state", values="hours")
    fig = go.Figure()
    for s in states.STATES:
        if s in wide:
            fig.add_bar(
                x=[str(d) for d in wide.index],
                y=wide[s],
                name=STATE_LABELS[s],
                marker={
                    "color": STATE_COLOURS[s],
                    "line": {"color": "#555", "width": 0.4},
                    "pattern": {"shape": STATE_PATTERNS[s], "fgcolor": "#ffffff"},
                },
            )
    fig.update_layout(
        barmode="stack",
        legend_traceorder="normal",
        height=400,
        yaxis_title="hours per day",
        margin={"l": 50, "r": 20, "t": 30, "b": 60},
        legend={"orientation": "h", "y": -0.3},
    )
    return fig


def register_rows(pump, guidance, table_model: str, units: DisplayUnits) -> list[tuple[str, str]]:
    """The pump's register data and method, as (label, text) rows."""
    c = units.convert
    L, F = units.label("length"), units.label("flow")  # noqa: N806
    rows = [
        ("service / area", f"{pump.service} / {pump.area}"),
        ("fluid", pump.fluid),
        ("vapour pressure", table_model),
        ("application", pump.application),
        ("rated speed", f"{pump.rated_speed:.0f} rpm"),
        ("BEP flow", f"{float(c(pump.bep_flow, 'flow')):.1f} {F}"),
        ("curve", pump.curve_id),
        ("NPSH3 speed exponent", f"{pump.npsh3_exponent:g}"),
        (
            "guidance",
            f"{guidance.ratio:.2f} or {float(c(guidance.margin, 'length')):.2f} {L} "
            f"({guidance.source})",
        ),
        ("preferred region", f"{pump.preferred_low:.0%} to {pump.preferred_high:.0%} of BEP"),
    ]
    if pump.source == "transmitter":
        rows += [
            (
                "suction",
                f"transmitter {pump.suction.tag} [{pump.suction.unit}, "
                f"{'gauge' if pump.gauge else 'absolute'}]",
            ),
            (
                "tap elevation / bore",
                f"{float(c(pump.tap_elevation, 'length')):.2f} {L} / {pump.tap_bore * 1000:.0f} mm",
            ),
            ("method", "NPSHa = (p_abs - p_v)/(rho g) + v^2/(2g) + z (ISO 9906, ANSI/HI 1.3)"),
        ]
    else:
        rows += [
            (
                "suction",
                f"vessel, level {pump.level.tag} [{pump.level.unit}], surface "
                f"{pump.vessel_surface}",
            ),
            ("level zero above datum", f"{float(c(pump.level_zero_elevation, 'length')):.2f} {L}"),
            ("method", "NPSHa = (p_surface - p_v)/(rho g) + level + offset - line loss"),
        ]
    rows.append(("tags", ", ".join(f"{r}: {t.tag}" for r, t in pump.tags().items())))
    return rows


def write_pump_page(path: Path, html: str) -> None:
    """Write one page (the folder exists; ``path`` comes from :func:`page_names`)."""
    path.write_text(html, encoding="utf-8")
