"""The field-evidence section of a pump page, its overview cells and its tables.

Three figures from :class:`screening.engine.field_head.FieldEvidence`: the head ratio against
NPSHa (hours per cell), the field NPSH3 per flow bin over the vendor curve, and vibration per
band of margin ratio. Display units at the edge (SI or US customary); the tables stay SI.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from jinja2 import Environment, PackageLoader, select_autoescape

from screening.base.text import hours_text
from screening.engine.field_head import FieldEvidence
from screening.engine.field_tables import field_tables, headline_npsh3
from screening.inputs.units import si_to
from screening.report.figjson import figure_html, numbers

_ENV = Environment(
    loader=PackageLoader("screening.report", "templates"),
    autoescape=select_autoescape(["html"]),
)
#: Cautions of the field evidence, on every page that shows it (and in the README).
FIELD_CAUTIONS = (
    "Head can also fall from wear, internal recirculation, entrained gas or air, a partly "
    "closed valve or a failing transmitter: a fall of head at low margin is evidence to look "
    "at, not proof of cavitation.",
    "A field estimate of NPSH3 from process history is not an NPSH test to ISO 9906: the "
    "flow, speed and temperature were not held steady while the suction pressure fell.",
    "Cavitation begins above NPSH3, often well above it: no head loss does not mean no "
    "cavitation damage.",
)
_GREYS = [[0.0, "#dfe6ee"], [1.0, "#1b3a5c"]]
_VENDOR = "#5c2a00"
_FIELD = "#0072b2"
_BOUND = "#cc79a7"


def _layout(x_title: str, y_title: str, **more) -> dict:
    return {
        "height": 380,
        "margin": {"l": 60, "r": 20, "t": 30, "b": 50},
        "xaxis": {"title": {"text": x_title}},
        "yaxis": {"title": {"text": y_title}},
        "legend": {"orientation": "h", "y": -0.22},
        **more,
    }


def head_figure(cells: pd.DataFrame, units) -> dict:
    """Hours per cell of NPSHa (display length) and head ratio [-], with the 3 % line."""
    x = units.convert((cells["npsha_low_m"] + cells["npsha_high_m"]) / 2, "length")
    y = (cells["head_ratio_low"] + cells["head_ratio_high"]) / 2
    hours = cells["hours"].to_numpy()
    points = {
        "type": "scatter", "mode": "markers", "x": numbers(x), "y": numbers(y),
        "marker": {"symbol": "square", "size": 7, "color": numbers(np.log10(hours + 1e-3)),
                   "colorscale": _GREYS, "showscale": False},
        "text": [f"{hours_text(h, True)}" for h in hours], "name": "running hours per cell",
        "hovertemplate": "NPSHa %{x:.2f}, head ratio %{y:.3f}: %{text}<extra></extra>",
    }  # fmt: skip
    line = {
        "type": "scatter", "mode": "lines", "x": numbers([float(x.min()), float(x.max())]),
        "y": [0.97, 0.97], "line": {"color": _VENDOR, "dash": "dash"}, "name": "3 % below baseline",
    }  # fmt: skip
    fig_layout = _layout(f"NPSHa [{units.label('length')}]", "head / baseline [-]")
    return {"data": [points, line], "layout": fig_layout}


def npsh3_figure(table: pd.DataFrame, curve, pump, units) -> dict:
    """The field NPSH3 per flow bin (estimates with their 5-95 % interval, bounds as arrows
    down) over the vendor NPSH3 curve, at rated speed, in display units."""
    q = np.linspace(curve.flow_min, curve.flow_max, 100)
    traces = [{
        "type": "scatter", "mode": "lines", "x": numbers(units.convert(q, "flow")),
        "y": numbers(units.convert(curve.at_reference_speed(q), "length")),
        "line": {"color": _VENDOR, "width": 2.5}, "name": "vendor NPSH3 (rated speed)",
    }]  # fmt: skip
    centre = (table["flow_fraction_low"] + table["flow_fraction_high"]) / 2 * pump.bep_flow
    est = table["status"] == "estimated"
    if est.any():
        y = units.convert(table.loc[est, "field_npsh3_m"], "length")
        hi = units.convert(table.loc[est, "field_npsh3_p95_m"], "length") - y
        lo = y - units.convert(table.loc[est, "field_npsh3_p05_m"], "length")
        traces.append({
            "type": "scatter", "mode": "markers", "x": numbers(units.convert(centre[est], "flow")),
            "y": numbers(y), "marker": {"color": _FIELD, "size": 10, "symbol": "circle"},
            "error_y": {"type": "data", "array": numbers(hi), "arrayminus": numbers(lo),
                        "visible": True},
            "name": "field NPSH3 (5-95 % interval)",
        })  # fmt: skip
    bound = (table["status"] == "not_reached") & np.isfinite(table["vendor_npsh3_m"])
    if bound.any():
        y = table.loc[bound, "lowest_margin_ratio"] * table.loc[bound, "vendor_npsh3_m"]
        traces.append({
            "type": "scatter", "mode": "markers",
            "x": numbers(units.convert(centre[bound], "flow")),
            "y": numbers(units.convert(y, "length")),
            "marker": {"color": _BOUND, "size": 11, "symbol": "triangle-down"},
            "name": "field NPSH3 lies below (never reached)",
        })  # fmt: skip
    fig_layout = _layout(f"flow at rated speed [{units.label('flow')}]",
                         f"NPSH3 [{units.label('length')}]")  # fmt: skip
    return {"data": traces, "layout": fig_layout}


def _vibration_unit(units) -> str:
    return "in/s" if units.head == "ft" else "mm/s"


def vibration_figure(bands: pd.DataFrame, units) -> dict:
    """Vibration per band of margin ratio: the 5, 25, 50, 75 and 95 % time-weighted quantiles
    drawn as boxes (whiskers at 5 and 95 %), in mm/s or in/s."""
    used = bands[bands["hours"] > 0]
    unit = _vibration_unit(units)

    def conv(col):
        return numbers(si_to(used[col].to_numpy(), unit, "velocity"))

    labels = [
        f"{lo:.1f}-{hi:.1f}" if np.isfinite(hi) else f"{lo:.1f} and above"
        for lo, hi in zip(used["ratio_low"], used["ratio_high"], strict=True)
    ]
    box = {
        "type": "box", "x": [f"{label} ({hours_text(h)})" for label, h in
                             zip(labels, used["hours"], strict=True)],
        "lowerfence": conv("p05_m_s"), "q1": conv("p25_m_s"), "median": conv("median_m_s"),
        "q3": conv("p75_m_s"), "upperfence": conv("p95_m_s"),
        "marker": {"color": _FIELD}, "name": "vibration (5-25-50-75-95 %)",
    }  # fmt: skip
    fig_layout = _layout("margin ratio NPSHa/NPSH3 (running hours)", f"vibration [{unit}]")
    return {"data": [box], "layout": fig_layout}


def _npsh3_rows(table: pd.DataFrame, units) -> list[list[str]]:
    """The per-bin table of the page, in display units."""
    rows = []
    lab = units.label("length")
    for r in table[table["hours"] > 0].itertuples(index=False):
        bin_text = f"{100 * r.flow_fraction_low:.0f}-{100 * r.flow_fraction_high:.0f} %"
        if r.status == "estimated":
            value = (
                f"{r.field_to_vendor:.2f} x vendor ({r.field_to_vendor_p05:.2f}-"
                f"{r.field_to_vendor_p95:.2f})"
            )
            if np.isfinite(r.field_npsh3_m):
                value += f"; {float(units.convert(r.field_npsh3_m, 'length')):.2f} {lab}"
        elif r.status == "not_reached":
            value = f"below {r.lowest_margin_ratio:.2f} x vendor (never reached)"
        else:
            value = "too few hours"
        rows.append([bin_text, hours_text(r.hours, True), value, r.note])
    return rows


def section(ev: FieldEvidence | None, pump, curve, units) -> str:
    """The pump page's field-evidence section as HTML ('' for a pump without field tags)."""
    if ev is None:
        return ""
    figs = {"fig_head": "", "fig_npsh3": "", "fig_vibration": ""}
    if ev.cells is not None and len(ev.cells):
        figs["fig_head"] = figure_html(head_figure(ev.cells, units), "field-head")
    if ev.npsh3 is not None and len(ev.npsh3):
        figs["fig_npsh3"] = figure_html(npsh3_figure(ev.npsh3, curve, pump, units), "field-npsh3")
    if ev.vibration is not None and ev.vibration["hours"].sum() > 0:
        figs["fig_vibration"] = figure_html(vibration_figure(ev.vibration, units), "field-vib")
    trend = ev.vibration_trend or {}
    unit = _vibration_unit(units)
    slope = [float(si_to(trend.get(k, np.nan), unit, "velocity")) for k in ("slope_m_s", "p05",
                                                                              "p95")]  # fmt: skip
    return _ENV.get_template("field.html").render(
        ev=ev,
        has_head=ev.baseline != "none",
        head_loss=hours_text(ev.head_loss_hours, True),
        below_head=hours_text(ev.below_guidance_head_hours, True),
        ample_low=hours_text(ev.low_head_ample_hours, True),
        worst=f"{100 * ev.head_loss_worst:.1f} %" if np.isfinite(ev.head_loss_worst) else "—",
        npsh3_rows=_npsh3_rows(ev.npsh3, units) if ev.npsh3 is not None else [],
        trend=trend,
        slope=[f"{-s:+.2f}" for s in slope] if np.isfinite(slope[0]) else None,
        vib_unit=unit,
        cautions=FIELD_CAUTIONS,
        **figs,
    )


def overview_cells(row: dict) -> dict:
    """The overview's two field-evidence cells of a summary row: the head loss while below
    the guidance and the field NPSH3 against the vendor's ('' without field evidence)."""
    baseline = row.get("head_baseline")
    if not isinstance(baseline, str) or baseline in ("", "none"):  # NaN: no field evidence
        return {"head_loss_text": "", "field_npsh3_text": ""}
    loss = f"{hours_text(row['head_loss_hours'], True)}"
    if row["head_loss_hours"] > 0:
        loss += f" (worst {100 * row['head_loss_worst']:.1f} %)"
    status = row.get("field_npsh3_status")
    at = f"at {100 * row['field_npsh3_flow_fraction']:.0f} % BEP"
    if status == "estimated":
        npsh3 = f"{row['field_npsh3_to_vendor']:.2f} x vendor {at}"
    elif status == "not_reached":
        npsh3 = f"below {row['field_npsh3_to_vendor']:.2f} x vendor {at} (never reached)"
    else:
        npsh3 = "too few hours"
    return {"head_loss_text": loss, "field_npsh3_text": npsh3}


def write_tables(result, folder: Path, write_table) -> None:
    """The field-evidence tables beside the report (CSV and Parquet, SI), only where some pump
    has field evidence."""
    if not result.evidence:
        return
    for name, frame in field_tables(result.evidence).items():
        write_table(frame, folder, name)


__all__ = ["FIELD_CAUTIONS", "headline_npsh3", "overview_cells", "section", "write_tables"]
