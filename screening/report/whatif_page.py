"""The what-if report folder: the scenarios side by side, one page per scenario with before
and after, the required setpoints, and the tables beside them (CSV and Parquet)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
from jinja2 import Environment, PackageLoader, select_autoescape
from plotly.offline import get_plotlyjs

from screening.base.files import atomic_folder, page_names
from screening.base.states import BANDS
from screening.inputs.units import UnitError, si_to
from screening.report.cautions import CAUTIONS
from screening.report.figjson import figure_html
from screening.report.palette import STATE_COLOURS, STATE_LABELS, STATE_PATTERNS
from screening.report.pump_pages import DISPLAY_UNITS, DisplayUnits
from screening.report.tablefiles import write_table
from screening.scenarios.scenario import ACTIONS
from screening.scenarios.whatif import WhatIfResult

_ENV = Environment(loader=PackageLoader("screening.report", "templates"),
                   autoescape=select_autoescape(["html"]))  # fmt: skip
#: The caution specific to setpoints, on every what-if page beside the general ones.
WHATIF_CAUTION = (
    "These results are a screening estimate from past operation: the same history replayed "
    "with changed inputs, not a prediction. The pump manufacturer and the site's engineers "
    "review any change drawn from them (see the cautions at the end of the page)."
)
_BELOW = ("below_npsh3", "below_guidance")
_OUTSIDE = ("below_min_flow", "low_flow", "high_flow", "beyond_allowable")


def _summary(hours: pd.DataFrame) -> pd.DataFrame:
    """Per scenario and pump: hours below NPSH3, below guidance and outside the preferred
    region, before and after [h]."""
    h = hours
    rows = []
    for (sc, pid), g in h.groupby(["scenario", "pump_id"], sort=False):
        m = g[g.kind == "margin"].set_index("state")
        r = g[g.kind == "region"].set_index("state")
        row = {"scenario": sc, "pump_id": pid}
        for when in ("before", "after"):
            row[f"below_npsh3_{when}_h"] = float(m.loc["below_npsh3", f"{when}_h"])
            row[f"below_guidance_{when}_h"] = float(m.loc[list(_BELOW), f"{when}_h"].sum())
            row[f"outside_preferred_{when}_h"] = float(r.loc[list(_OUTSIDE), f"{when}_h"].sum())
        rows.append(row)
    return pd.DataFrame(rows)


def _hours(x: float) -> str:
    if x is None or not np.isfinite(x):
        return ""
    return f"{0.0 if abs(x) < 0.05 else x:.1f}"  # no "-0.0" from rounding


def _kind(unit: str) -> str:
    """The quantity kind of a setpoint row's SI ``unit`` (pressure, temperature, length)."""
    return "pressure" if unit.startswith("Pa") else "temperature" if unit == "K" else "length"


def _display_value(
    value: float, unit: str, difference: bool = False, units: DisplayUnits | None = None
) -> str:
    """A required value [SI, ``unit`` of the setpoint row] in the page's display units; a
    difference signed (a temperature difference in K or °F)."""
    if value is None or not np.isfinite(value):
        return ""
    units = units or DISPLAY_UNITS["si"]
    sign = "+" if difference else ""
    kind = _kind(unit)
    if kind == "pressure":
        ref = "" if difference else unit[2:]
        return f"{float(units.convert(value, 'pressure')):{sign}.1f} {units.pressure}{ref}"
    if kind == "temperature":
        if difference:
            us = units.temperature == "degF"
            return f"{value * 1.8:+.1f} °F" if us else f"{value:+.1f} K"
        return f"{float(units.convert(value, 'temperature')):.1f} {units.label('temperature')}"
    return f"{float(units.convert(value, 'length')):{sign}.3f} {units.head}"


def _one_sample(row, units: DisplayUnits) -> str:
    """A 100 % limit set by one sample: when, and the 99.9 % value beside it."""
    if not getattr(row, "set_by_one_sample", ""):
        return ""
    near = _display_value(row.required_99_9, row.unit, units=units) or "not needed"
    return f"{row.set_by_one_sample}; for 99.9 %: {near}"


def instrument_text(pump, unit: str, value: float) -> str:
    """A required value [SI, ``unit`` of the setpoint row] in the unit and reference of the
    pump's own instrument (the suction pressure transmitter, level transmitter or temperature
    element), as written on a change request; empty where the instrument's unit is not one
    the tool converts (a level in % of span, say)."""
    if value is None or not np.isfinite(value):
        return ""
    kind = _kind(unit)
    role = {"pressure": "suction", "temperature": "temperature", "length": "level"}[kind]
    spec = pump.tags().get(role)
    if spec is None:
        return ""
    try:
        shown = float(si_to(value, spec.unit, kind))
    except (UnitError, ValueError):
        return ""
    ref = {"pressure": " gauge" if pump.gauge else " absolute"}.get(kind, "")
    return f"{shown:.4g} {spec.unit}{ref} on {spec.tag}"


def _setpoint_rows(
    frame: pd.DataFrame, shares: tuple[float, ...], units: DisplayUnits, pumps: dict
) -> tuple[list[dict], list]:
    """One row per pump and input with the required limit at each share (display units, and
    the strictest in the instrument's own unit); pumps that met the guidance all the time
    without any change are listed apart."""
    rows, fine = [], []
    for pid, g in frame.groupby("pump_id", sort=True):
        if g["required"].isna().all() and (g["achieved_share"] >= 1.0).all():
            fine.append(pid)
            continue
        for (inp, limit), h in g.groupby(["input", "limit"], sort=False):
            by = h.set_index("share")
            strict = by.loc[max(shares)]
            rows.append(
                {
                    "pump_id": pid,
                    "input": inp.replace("_", " "),
                    "limit": limit,
                    "required": [_display_value(by.loc[q, "required"], strict.unit, units=units)
                                 or "not needed" for q in shares],
                    "instrument": instrument_text(pumps[pid], strict.unit, strict.required),
                    "today": _display_value(strict.today_setpoint, strict.unit, units=units)
                    or "not in register",
                    "change": _display_value(
                        strict.change_from_setpoint, strict.unit, difference=True, units=units
                    ),
                    "recorded": _display_value(strict.recorded, strict.unit, units=units),
                    "achieved": "" if not np.isfinite(strict.achieved_share)
                    else f"{100 * strict.achieved_share:.2f} %",
                    "cannot": _hours(strict.cannot_meet_h) if strict.cannot_meet_h else "",
                    "note": "; ".join(x for x in (strict.note, _one_sample(strict, units)) if x),
                }
            )  # fmt: skip
    return rows, fine


def _before_after_figure(hours: pd.DataFrame, div_id: str) -> str:
    """Stacked margin-band hours, before and after, for each pump of one scenario."""
    m = hours[(hours.kind == "margin") & hours.state.isin(BANDS)]
    pumps = list(dict.fromkeys(m["pump_id"]))
    x = [sum(([p, p] for p in pumps), []), ["before", "after"] * len(pumps)]
    data = []
    for state in BANDS:
        s = m[m.state == state].set_index("pump_id")
        y = [float(s.loc[p, col]) for p in pumps for col in ("before_h", "after_h")]
        data.append({"type": "bar", "x": x, "y": y, "name": STATE_LABELS[state],
                     "marker": {"color": STATE_COLOURS[state],
                                "pattern": {"shape": STATE_PATTERNS[state]}}})  # fmt: skip
    layout = {"barmode": "stack", "height": 360,
              "yaxis": {"title": {"text": "running hours in each band"}},
              "margin": {"l": 60, "r": 20, "t": 20, "b": 60}}  # fmt: skip
    return figure_html({"data": data, "layout": layout}, div_id)  # pump ids shown as written


def write_whatif_report(result: WhatIfResult, out: str | Path, units: str = "si") -> Path:
    """Write the what-if report folder: ``index.html``, one page per scenario, and the tables
    ``whatif_hours``, ``whatif_moves``, ``whatif_changes``, ``whatif_summary``,
    ``required_setpoints`` and ``margin_sensitivity`` (CSV and Parquet, SI units in the
    column names or a ``unit`` column). The pages show ``units`` (``"si"`` or ``"us"``).
    The folder is replaced whole when complete."""
    out = Path(out)
    if units not in DISPLAY_UNITS:
        raise ValueError(f"display units {units!r} are not 'si' or 'us'")
    shown = DISPLAY_UNITS[units]
    plant = result.scan.plant
    summary = _summary(result.hours) if len(result.hours) else pd.DataFrame()
    pages = page_names([f"scenario_{s.name}" for s in result.scenarios])
    with atomic_folder(out, "whatif") as tmp:
        write_table(result.hours, tmp, "whatif_hours")
        write_table(result.moves, tmp, "whatif_moves")
        write_table(result.changes, tmp, "whatif_changes")
        write_table(summary, tmp, "whatif_summary")
        write_table(result.setpoints, tmp, "required_setpoints")
        write_table(result.sensitivity, tmp, "margin_sensitivity")
        write_table(result.scan.problems, tmp, "not_screened")
        (tmp / "plotly.min.js").write_text(get_plotlyjs(), encoding="utf-8")
        meta = {
            "plant": plant.name,
            "config": str(plant.path),
            "window_start_utc": result.scan.start.isoformat(),
            "window_end_utc": result.scan.end.isoformat(),
            "scenarios": [s.name for s in result.scenarios],
            "shares": list(result.shares),
        }
        (tmp / "run.json").write_text(json.dumps(meta, indent=2), encoding="utf-8")
        common = {
            "plant_name": plant.name,
            "window": f"{result.scan.start.tz_convert(plant.timezone):%Y-%m-%d %H:%M} to "
            f"{result.scan.end.tz_convert(plant.timezone):%Y-%m-%d %H:%M} ({plant.timezone})",
            "first": WHATIF_CAUTION,
            "cautions": CAUTIONS,
            "units": shown,
        }
        side = _side_by_side(summary, result)
        setpoints, fine = _setpoint_rows(result.setpoints, result.shares, shown, plant.pumps)
        (tmp / "index.html").write_text(
            _ENV.get_template("whatif.html").render(
                **common,
                scenarios=[
                    {
                        "name": s.name,
                        "description": s.description,
                        "page": pages[f"scenario_{s.name}"],
                    }
                    for s in result.scenarios
                ],
                side=side,
                setpoints=setpoints,
                fine=fine,
                share_labels=[f"{100 * q:g} %" for q in result.shares],
                sensitivity=_sensitivity_rows(result.sensitivity, shown),
                notes=result.notes,
                problems=result.scan.problems.to_dict("records"),
                shares=", ".join(f"{100 * q:g} %" for q in result.shares),
            ),  # fmt: skip
            encoding="utf-8",
        )
        for i, sc in enumerate(result.scenarios):
            h = result.hours[result.hours.scenario == sc.name]
            figure = _before_after_figure(h, f"before_after_{i}") if len(h) else ""
            (tmp / pages[f"scenario_{sc.name}"]).write_text(
                _ENV.get_template("whatif_scenario.html").render(
                    **common,
                    scenario=sc,
                    figure=figure,
                    summary=summary[summary.scenario == sc.name].to_dict("records")
                    if len(summary)
                    else [],
                    moves=result.moves[result.moves.scenario == sc.name].to_dict("records"),
                    changes=_change_rows(
                        result.changes[result.changes.scenario == sc.name], sc, shown
                    ),  # fmt: skip
                    fmt=_hours,
                ),  # fmt: skip
                encoding="utf-8",
            )
    return out


def change_text(change, units: DisplayUnits) -> str:
    """A scenario's change as written (``temperature_cap = 27 degC``), followed by its value
    in the page's display units where those differ from the unit it was written in, e.g.
    ``temperature_cap = 27 degC (80.6 °F)``. A difference (``add``, ``subtract``) converts
    without an offset (1 K = 1.8 °F)."""
    kind = ACTIONS[change.key][2]
    if kind == "speed":
        return change.label
    unit = {"pressure": units.pressure, "temperature": units.temperature, "length": units.head,
            "flow": units.flow}[kind]  # fmt: skip
    written = change.text.replace(" ", "")
    difference = kind == "temperature" and change.operation == "add"
    same = ("degF", "°F", "F") if units.temperature == "degF" else ("K", "degC", "°C", "C")
    if written.endswith(unit.replace("**3", "3")) or (difference and written.endswith(same)):
        return change.label
    if difference:
        value = -change.value if change.key.endswith("subtract") else change.value
        value *= 1.8 if units.temperature == "degF" else 1.0
        shown = f"{value:.1f} {'°F' if units.temperature == 'degF' else 'K'}"
    else:
        v = float(units.convert(change.value, kind))
        shown = f"{v:.{1 if abs(v) >= 10 else 2}f} {units.label(kind)}"
        if kind == "pressure" and change.operation == "floor":
            shown += " gauge" if change.gauge else " absolute"
    return f"{change.label} ({shown})"


def _change_rows(changes: pd.DataFrame, scenario, units: DisplayUnits) -> list[dict]:
    """The scenario's rows of the changes table, each change also in the display units."""
    by_label = {c.label: c for e in scenario.entries for c in e.changes}
    rows = changes.to_dict("records")
    for r in rows:
        if r["change"] in by_label:
            r["change"] = change_text(by_label[r["change"]], units)
    return rows


def _side_by_side(summary: pd.DataFrame, result: WhatIfResult) -> dict:
    """Rows of pumps, columns of scenarios: hours below guidance (and below NPSH3, outside
    the preferred region) before and after each scenario."""
    names = [s.name for s in result.scenarios]
    keys = ("below_npsh3", "below_guidance", "outside_preferred")
    rows = []
    if len(summary):
        for pid, g in summary.groupby("pump_id", sort=True):
            by = g.set_index("scenario")
            cells = [
                {k: _hours(by.loc[n, f"{k}_after_h"]) for k in keys} if n in by.index else None
                for n in names
            ]
            before = {k: _hours(g.iloc[0][f"{k}_before_h"]) for k in keys}
            rows.append({"pump_id": pid, "before": before, "cells": cells})
    return {"names": names, "rows": rows}


def _sensitivity_rows(frame: pd.DataFrame, units: DisplayUnits) -> list[dict]:
    """The margin-per-unit table in display units: flow, temperature, heads, and the margin
    gained per unit of suction pressure, level and cooling."""
    c = units.convert
    rows = []
    for r in frame.to_dict("records"):
        per_p = float(c(1000.0, "pressure"))  # display pressure units in one kPa
        per_l = float(c(1.0, "length"))  # display length units in one metre
        cool = 1.8 if units.temperature == "degF" else 1.0  # display degrees in one kelvin
        rows.append({
            "pump_id": r["pump_id"],
            "flow": f"{float(c(r['flow_m3_s'], 'flow')):.1f}",
            "temperature": f"{float(c(r['temperature_k'], 'temperature')):.1f}",
            "npsha": f"{float(c(r['npsha_m'], 'length')):.2f}",
            "guidance": f"{float(c(r['guidance_m'], 'length')):.2f}",
            "per_pressure": _per(r["margin_per_kpa_m"] * per_l / per_p),
            "per_level": _per(r["margin_per_m_level"]),
            "per_degree": _per(r["margin_per_k_cooler_m"] * per_l / cool),
        })  # fmt: skip
    return rows


def _per(x: float) -> str:
    return f"{x:.3f}" if x is not None and np.isfinite(x) else ""
