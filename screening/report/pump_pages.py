"""One HTML page per pump: NPSHa against NPSH3 over time, margin ratio, process conditions,
operating points on the curve, daily hours per band, register data.

Plots use the min/max-per-bucket data kept by the scan (:mod:`screening.engine.plotdata`); numbers
are shown in the chosen display units (SI or US customary), converted here at the edge.
Figures are plain plotly.js JSON dicts (:mod:`screening.report.figjson`), drawn in the browser.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from screening.base import states
from screening.base.text import hours_text
from screening.engine.one_pump import BELOW_VAPOUR_FLAG
from screening.inputs.units import si_to
from screening.physics.curves import exponent_text
from screening.physics.regions import MIN_FLOW_NOT_REGISTERED
from screening.report.figjson import label_at, numbers, vline
from screening.report.palette import STATE_COLOURS, STATE_LABELS, STATE_PATTERNS


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

    def length_text(self, metres: float, digits: int = 2) -> str:
        """A length [m] as text in this display unit, e.g. ``1.00 m`` or ``3.28 ft``."""
        return f"{float(self.convert(metres, 'length')):.{digits}f} {self.head}"

    def small_length_text(self, metres: float) -> str:
        """A small length [m] such as a pipe bore as text: ``mm`` or ``in``."""
        if self.head == "ft":
            return f"{float(si_to(metres, 'inch', 'length')):.2f} in"
        return f"{metres * 1000:.0f} mm"


DISPLAY_UNITS = {
    "si": DisplayUnits("SI", "m", "m**3/h", "kPa", "degC"),
    "us": DisplayUnits("US customary", "ft", "gpm", "psi", "degF"),
}


def _title(text: str, **font) -> dict:
    return {"title": {"text": text, "font": font} if font else {"text": text}}


#: plotly's "Greys" colour scale (white for few hours to black for many).
_GREYS = [
    [0.0, "rgb(255,255,255)"], [0.125, "rgb(240,240,240)"], [0.25, "rgb(217,217,217)"],
    [0.375, "rgb(189,189,189)"], [0.5, "rgb(150,150,150)"], [0.625, "rgb(115,115,115)"],
    [0.75, "rgb(82,82,82)"], [0.875, "rgb(37,37,37)"], [1.0, "rgb(0,0,0)"],
]  # fmt: skip


def _curve_traces(curve, pump, units: DisplayUnits, guidance, speed: float) -> list[dict]:
    """NPSH3 at rated speed (thin, dotted), at the running speed ``speed`` [rpm] and the
    guidance NPSHa over that curve, in display units."""
    c = units.convert
    q = np.linspace(curve.flow_min, curve.flow_max, 100)
    rated = curve.at_reference_speed(q)
    q_run = q * speed / pump.rated_speed  # the curve's flow range moves with speed (affinity)
    at_speed = curve.at_speed(q_run, speed, pump.rated_speed, pump.npsh3_exponent)
    same = abs(speed - pump.rated_speed) < 0.5
    traces = []
    if not same:
        traces.append({
            "type": "scatter", "x": numbers(c(q, "flow")), "y": numbers(c(rated, "length")),
            "mode": "lines", "name": f"NPSH3 at rated speed {pump.rated_speed:.0f} rpm",
            "line": {"color": "#5c2a00", "width": 1.2, "dash": "dot"},
        })  # fmt: skip
    label = "rated" if same else "typical running"
    traces.append({
        "type": "scatter", "x": numbers(c(q_run, "flow")), "y": numbers(c(at_speed, "length")),
        "mode": "lines", "name": f"NPSH3 at {label} speed {speed:.0f} rpm",
        "line": {"color": "#5c2a00", "width": 2.5},
    })  # fmt: skip
    traces.append({
        "type": "scatter", "x": numbers(c(q_run, "flow")),
        "y": numbers(c(guidance.head(at_speed), "length")), "mode": "lines",
        "name": "guidance NPSHa at that speed", "line": {"color": "#c7761c", "width": 2,
                                                         "dash": "dash"},
    })  # fmt: skip
    return traces


def points_figure(
    points: dict, curve, pump, units: DisplayUnits, guidance, speed: float | None = None
) -> dict:
    """Time-weighted operating points (flow, NPSHa) [h per cell] with NPSH3 at the running
    ``speed`` [rpm] (the rated speed when None; the rated-speed curve dotted beside it where
    they differ), the guidance NPSHa over it and the preferred operating region, in display
    units."""
    fe, he, hours = points["flow_edges"], points["npsha_edges"], points["hours"]
    xc = units.convert((fe[1:] + fe[:-1]) / 2, "flow")
    yc = units.convert((he[1:] + he[:-1]) / 2, "length")
    # the cells with hours as columns (x, y, z), plus one empty cell on every row and column
    # so that plotly.js finds the whole grid: a tenth of the bytes of the full matrix
    fi, hi = np.nonzero(hours > 0)
    n = len(xc)
    heatmap = {
        "type": "heatmap",
        "x": numbers(np.concatenate([xc[fi], xc, np.full(len(yc), xc[0])])),
        "y": numbers(np.concatenate([yc[hi], np.full(n, yc[0]), yc])),
        "z": numbers(np.concatenate([hours[fi, hi], np.full(n + len(yc), np.nan)])),
        "colorscale": _GREYS,
        "colorbar": {"title": {"text": "h"}, "len": 0.6, "y": 0.7},
        "name": "running hours",
        "hovertemplate": "%{z:.2f} h<extra></extra>",
    }
    speed = pump.rated_speed if speed is None else speed
    curves = _curve_traces(curve, pump, units, guidance, speed)
    lo = float(units.convert(pump.preferred_low * pump.bep_flow * speed / pump.rated_speed, "flow"))
    hi = float(units.convert(pump.preferred_high * pump.bep_flow * speed / pump.rated_speed,
                             "flow"))  # fmt: skip
    # the preferred region shaded over the full height, its label in its top left corner
    region = {
        "type": "rect", "xref": "x", "x0": lo, "x1": hi, "yref": "y domain", "y0": 0, "y1": 1,
        "fillcolor": "#9cc3e4", "opacity": 0.25, "line": {"width": 0},
    }  # fmt: skip
    note = {
        "text": "preferred region", "showarrow": False, "xref": "x", "x": lo, "xanchor": "left",
        "yref": "y domain", "y": 1, "yanchor": "top", "font": {"size": 12},
    }  # fmt: skip
    layout = {
        "shapes": [region],
        "annotations": [note],
        "height": 460,
        "margin": {"l": 60, "r": 20, "t": 30, "b": 50},
        "xaxis": _title(f"flow [{units.label('flow')}]", size=12),
        "yaxis": _title(f"NPSHa [{units.label('length')}]", size=12),
        "legend": {"orientation": "h", "y": -0.18, "yanchor": "top", "font": {"size": 12}},
        "plot_bgcolor": "#ffffff",
    }
    return {"data": [heatmap] + curves, "layout": layout}


def calendar_figure(daily: pd.DataFrame) -> dict:
    """Stacked daily hours [h] per margin state (one bar per local day), from one pump's rows
    of the daily table in any layout (:func:`calendars_by_pump` does every pump at once where
    the table is laid out as the scan writes it)."""
    wide = daily.pivot(index="date", columns="state", values="hours")
    return calendar_of(
        [str(d) for d in wide.index], {s: wide[s] for s in states.STATES if s in wide}
    )


def calendar_of(days: list[str], hours: dict) -> dict:
    """The calendar figure from the days' labels and each margin state's hours [h] per day
    (in report order)."""
    traces = [
        {
            "type": "bar",
            "x": days,
            "y": numbers(y),
            "name": STATE_LABELS[s],
            "marker": {
                "color": STATE_COLOURS[s],
                "line": {"color": "#555", "width": 0.4},
                "pattern": {"shape": STATE_PATTERNS[s], "fgcolor": "#ffffff"},
            },
        }
        for s, y in hours.items()
    ]
    layout = {
        "barmode": "stack",
        "height": 400,
        "yaxis": _title("hours per day"),
        "margin": {"l": 50, "r": 20, "t": 30, "b": 60},
        "legend": {"orientation": "h", "y": -0.3, "traceorder": "normal"},
    }
    return {"data": traces, "layout": layout}


def _laid_out(state: np.ndarray) -> bool:
    """Whether a daily table's states run through every state in order on every day (as the
    scan writes it, :mod:`screening.engine.tables`)."""
    n = len(states.STATES)
    return (
        bool(len(state))
        and not len(state) % n
        and np.array_equal(state, np.tile(states.STATES, len(state) // n))
    )


def calendars_by_pump(daily: pd.DataFrame) -> dict[str, dict] | None:
    """Every pump's calendar figure from the scan's margin rows of the daily table at once
    (one block of rows per pump, every state of every day in order); None for a table laid
    out otherwise (then :func:`calendar_figure` per pump)."""
    n = len(states.STATES)
    pids = daily["pump_id"].to_numpy()
    if not _laid_out(daily["state"].to_numpy()):
        return None
    cut = np.flatnonzero(pids[1:] != pids[:-1]) + 1
    starts, ends = np.append(0, cut), np.append(cut, len(pids))
    if len(set(pids[starts])) != len(starts) or ((ends - starts) % n).any():
        return None  # a pump's rows in two blocks, or a block cutting a day
    hours, dates = daily["hours"].to_numpy(dtype=np.float64), daily["date"].to_numpy()
    out = {}
    for a, b in zip(starts, ends, strict=True):
        block = hours[a:b].reshape(-1, n)
        days = [str(d) for d in dates[a:b:n]]
        out[pids[a]] = calendar_of(days, {s: block[:, i] for i, s in enumerate(states.STATES)})
    return out


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
        ("NPSH datum", f"{pump.datum} ({pump.orientation} pump)"),
        ("NPSH3 speed scaling", exponent_text(pump.npsh3_exponent, pump.speed is not None)),
        (
            "guidance",
            f"{guidance.ratio:.2f} or {units.length_text(guidance.margin)} above NPSH3, the "
            f"greater ({guidance.source})",
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
                "pressure read at / elevation above datum / bore",
                f"{_POINTS[pump.pressure_point]} / "
                f"{float(c(pump.tap_elevation, 'length')):.2f} {L} / "
                f"{units.small_length_text(pump.tap_bore)}"
                + (f" ({pump.datum_note})" if pump.datum_note else ""),
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
        if pump.shared_line is not None:
            line = pump.shared_line
            others = ", ".join(m.pump_id for m in pump.peers()) or "no other pump"
            rows.append((
                "shared suction line",
                f"{line.line_id} with {others}: loss at the line's total flow ("
                + (f"header flow {line.header_flow.tag} where fresh, else " if line.header_flow
                   else "")
                + "the sum of the running members' flows)",
            ))  # fmt: skip
    if pump.can_loss_k is not None:
        rows.append(("can loss", f"{pump.can_loss_k:.4g} s2/m5 x Q^2, nozzle to impeller eye"))
    if pump.speed_signal:
        rows.append(("speed tag", _speed_text(pump)))
    rows.append(("tags", ", ".join(f"{r}: {t.tag}" for r, t in pump.tags().items())))
    return rows


_POINTS = {"sensor": "transmitter sensing element (liquid-filled impulse line)", "tap": "tap"}


def _speed_text(pump) -> str:
    """How the speed tag was read."""
    if pump.speed_signal == "drive_frequency":
        return (
            f"drive output frequency: n = {pump.rated_speed:.0f} rpm x f / "
            f"{pump.rated_frequency:g} Hz (slip neglected)"
        )
    return "shaft revolutions per second"


def pump_flags(
    row: dict | None, units: DisplayUnits, bad_tags: list[str] | None = None
) -> list[str]:
    """What the pump page points out from the pump's summary row: suction pressure below
    vapour pressure, the worst margins in the display length unit, hours of bad data (naming
    ``bad_tags``, the tags with frozen, impossible, bad-quality or text samples) and of no
    data, hours below the minimum flow, hours on the standard atmosphere, an unregistered
    minimum flow."""
    if row is None:
        return []
    c, L = units.convert, units.label("length")  # noqa: N806
    flags = []
    if row["below_vapour_pressure_hours"] > 0:
        flags.append(
            f"{BELOW_VAPOUR_FLAG} ({row['below_vapour_pressure_hours']:.2f} h running; counted "
            "below NPSH3, see data_quality.csv)"
        )
    if pd.notna(row["worst_margin_m"]):
        flags.append(
            f"worst margin NPSHa - NPSH3 {float(c(row['worst_margin_m'], 'length')):.2f} {L}, "
            f"NPSHa - guidance {float(c(row['worst_margin_to_guidance_m'], 'length')):+.2f} {L} "
            f"(worst ratio {row['worst_ratio']:.2f})"
        )
    flags += _hour_flags(row, bad_tags or [])
    if row["standard_atmosphere_hours"] > 0:
        flags.append(
            f"{row['standard_atmosphere_hours']:.1f} running hours on the standard atmosphere "
            "(barometer missing, stale or away from the standard atmosphere at the site)"
        )
    if row.get("datum_note"):
        flags.append(row["datum_note"])
    if row["min_flow_source"] == MIN_FLOW_NOT_REGISTERED:
        flags.append(
            "minimum flow not registered: hours below the minimum flow cannot be counted "
            "(give min_stable_flow or thermal_min_flow in the register)"
        )
    return flags


#: Hours shorter than this [h] are not pointed out (three minutes).
_NOTABLE_H = 0.05


def _hour_flags(row: dict, bad_tags: list[str]) -> list[str]:
    """Lines for the hours a reader must not overlook: bad data (with its tags), no data
    while the window ran, running below the minimum flow."""
    flags = []
    bad = float(row.get("bad_data_hours", 0.0) or 0.0)
    if bad >= _NOTABLE_H:
        named = f" from {', '.join(bad_tags[:4])}" + (" and others" if len(bad_tags) > 4 else "")
        flags.append(
            f"{hours_text(bad, True)} of bad data{named if bad_tags else ''}: "
            "frozen, impossible or bad-quality values, not screened (see data_quality.csv)"
        )
    none = float(row.get("no_data_hours", 0.0) or 0.0)
    if none >= _NOTABLE_H:
        flags.append(
            f"{hours_text(none, True)} with no data (gaps longer than the hold allowance): "
            "nothing is known of the margin then"
        )
    low = float(row.get("below_min_flow_hours", 0.0) or 0.0)
    if low >= _NOTABLE_H:
        flags.append(
            f"{hours_text(low, True)} running below the minimum flow "
            "(recirculation and heating, whatever the NPSH margin)"
        )
    return flags


def write_pump_page(path: Path, html: str) -> None:
    """Write one page (the folder exists; ``path`` comes from :func:`page_names`)."""
    path.write_text(html, encoding="utf-8")


def event_rows(events: pd.DataFrame, tz: str) -> list[dict]:
    """A pump's known events as rows for its page: time in the site's zone, kind, note, and
    whether the event was the pump's own or its area's."""
    return [
        {
            "time": f"{pd.Timestamp(e.time).tz_convert(tz):%Y-%m-%d %H:%M}",
            "kind": e.kind.replace("_", " "),
            "for": e.pump_id or f"area {e.area}",
            "note": e.note,
        }
        for e in (events.itertuples(index=False) if len(events) else ())  # a tuple type a call
    ]


def mark_events(fig: dict, events: pd.DataFrame, tz: str) -> dict:
    """Dotted vertical lines at the known events on a time figure (plotly.js shapes), each
    labelled with its kind above the plot; a failure solid. Returns the figure."""
    shapes, notes = [], []
    for i, e in enumerate(events.itertuples(index=False) if len(events) else ()):
        x = f"{pd.Timestamp(e.time).tz_convert(tz):%Y-%m-%d %H:%M}"
        failure = e.kind == "failure"
        colour, dash = ("#1d1d1d", "solid") if failure else ("#3d7a4a", "dot")
        shapes.append(vline(x, colour, dash))
        notes.append(label_at(x, e.kind.replace("_", " "), 1.0 + 0.06 * (i % 2), size=11))
    layout = fig.setdefault("layout", {})
    layout["shapes"] = layout.get("shapes", []) + shapes
    layout["annotations"] = layout.get("annotations", []) + notes
    if shapes:
        layout["margin"] = {**layout.get("margin", {}), "t": 44}
    return fig
