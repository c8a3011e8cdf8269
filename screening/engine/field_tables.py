"""The field evidence as tidy tables and summary columns (SI; units in the column names).

See :mod:`screening.engine.field_head` for what the numbers are. Summary columns are appended
at the end of the scan's summary; pumps without field tags have them empty.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from screening.engine.field_head import NPSH3_COLUMNS, FieldEvidence
from screening.engine.field_vibration import VIBRATION_COLUMNS

#: Summary columns of the field evidence (the end of ``SUMMARY_COLUMNS``).
FIELD_SUMMARY_COLUMNS = [
    "head_baseline", "head_evaluated_hours", "head_evaluated_below_guidance_hours",
    "head_loss_hours", "head_loss_worst", "low_head_at_ample_hours", "field_npsh3_status",
    "field_npsh3_flow_fraction", "field_npsh3_to_vendor", "field_npsh3_to_vendor_p05",
    "field_npsh3_to_vendor_p95", "vibration_trend", "vibration_slope_m_s",
    "vibration_slope_p05_m_s", "vibration_slope_p95_m_s", "field_notes",
]  # fmt: skip


def headline_npsh3(table: pd.DataFrame | None) -> dict:
    """The field NPSH3 shown for a pump: the estimated flow bin with the most hours, else the
    tightest bound (the not-reached bin with the lowest margin ratio reached), else nothing.
    ``to_vendor`` [-] is the estimate, or the bound (the field NPSH3 lies below it)."""
    none = {"status": "", "flow_fraction": np.nan, "to_vendor": np.nan, "p05": np.nan,
            "p95": np.nan}  # fmt: skip
    if table is None or not len(table):
        return none
    centre = (table["flow_fraction_low"] + table["flow_fraction_high"]) / 2
    est = table[table["status"] == "estimated"]
    if len(est):
        row = est.loc[est["hours"].idxmax()]
        return {"status": "estimated", "flow_fraction": float(centre[row.name]),
                "to_vendor": float(row["field_to_vendor"]),
                "p05": float(row["field_to_vendor_p05"]),
                "p95": float(row["field_to_vendor_p95"])}  # fmt: skip
    bound = table[table["status"] == "not_reached"]
    if len(bound):
        row = bound.loc[bound["lowest_margin_ratio"].idxmin()]
        return {
            **none,
            "status": "not_reached",
            "flow_fraction": float(centre[row.name]),
            "to_vendor": float(row["lowest_margin_ratio"]),
        }
    return {**none, "status": "too_few_hours"}


def field_summary(ev: FieldEvidence | None) -> dict:
    """One pump's field-evidence summary columns (:data:`FIELD_SUMMARY_COLUMNS`); empty for a
    pump without field tags."""
    if ev is None:
        return dict.fromkeys(FIELD_SUMMARY_COLUMNS, None)
    head = headline_npsh3(ev.npsh3)
    trend = ev.vibration_trend or {}
    has_head = ev.baseline != "none"
    return {
        "head_baseline": ev.baseline,
        "head_evaluated_hours": ev.head_hours if has_head else np.nan,
        "head_evaluated_below_guidance_hours": (
            ev.below_guidance_head_hours if has_head else np.nan
        ),
        "head_loss_hours": ev.head_loss_hours if has_head else np.nan,
        "head_loss_worst": ev.head_loss_worst,
        "low_head_at_ample_hours": ev.low_head_ample_hours if has_head else np.nan,
        "field_npsh3_status": head["status"],
        "field_npsh3_flow_fraction": head["flow_fraction"],
        "field_npsh3_to_vendor": head["to_vendor"],
        "field_npsh3_to_vendor_p05": head["p05"],
        "field_npsh3_to_vendor_p95": head["p95"],
        "vibration_trend": trend.get("verdict", ""),
        "vibration_slope_m_s": trend.get("slope_m_s", np.nan),
        "vibration_slope_p05_m_s": trend.get("p05", np.nan),
        "vibration_slope_p95_m_s": trend.get("p95", np.nan),
        "field_notes": "; ".join(ev.notes),
    }


def field_tables(evidence: dict[str, FieldEvidence]) -> dict[str, pd.DataFrame]:
    """The field evidence of every pump as tidy tables: ``field_npsh3`` (per pump and flow
    bin), ``field_head_cells`` (hours per cell of NPSHa and head ratio), ``field_baseline``
    (median head per flow cell at ample margin and the fitted baseline), ``field_vibration``
    (per pump and band of margin ratio, with the trend's columns repeated per row)."""

    def gather(get, columns=None) -> pd.DataFrame:
        frames = [f for f in (get(ev) for ev in evidence.values()) if f is not None and len(f)]
        if frames:
            return pd.concat(frames, ignore_index=True)
        return pd.DataFrame(columns=columns)

    def vibration(ev: FieldEvidence):
        if ev.vibration is None:
            return None
        t = ev.vibration_trend or {}
        return ev.vibration.assign(
            trend=t.get("verdict", ""), trend_slope_m_s=t.get("slope_m_s", np.nan),
            trend_p05_m_s=t.get("p05", np.nan), trend_p95_m_s=t.get("p95", np.nan),
        )  # fmt: skip

    return {
        "field_npsh3": gather(lambda ev: ev.npsh3, NPSH3_COLUMNS),
        "field_head_cells": gather(lambda ev: ev.cells),
        "field_baseline": gather(lambda ev: ev.baseline_points),
        "field_vibration": gather(vibration, VIBRATION_COLUMNS),
    }
