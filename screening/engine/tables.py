"""The tidy tables of a plant scan: hours per state, the summary per pump, daily hours,
tag quality, problems; and the :class:`ScanResult` that holds them."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from screening.base import states
from screening.engine.field_tables import FIELD_SUMMARY_COLUMNS, field_summary
from screening.engine.one_pump import QUALITY_COLUMNS
from screening.inputs.plant import Plant, pump_suction_specific_speed
from screening.physics import regions
from screening.physics.properties import fluid_table

#: Suction specific speed: U.S. units (rpm, gpm, ft) per metric units (rpm, m³/s, m);
#: 1 gpm^0.5 / ft^0.75 = (6.309e-5 m³/s)^0.5 / (0.3048 m)^0.75, so S_US = 51.64 · S_metric.
US_PER_METRIC_S = (1 / 6.30901964e-5) ** 0.5 / (1 / 0.3048) ** 0.75


@dataclass
class ScanResult:
    """Tables of a plant scan (tidy; units in column names).

    Attributes
    ----------
    hours : DataFrame
        ``pump_id``, ``state``, ``hours``: one row per screened pump and state, zeros included.
    summary : DataFrame
        One row per screened pump: hours running, worst ratio, hours below guidance, coverage
        and whether it reaches ``[data] min_coverage`` (``enough_data``); pumps without
        enough data come last, never ranked among the healthy.
    daily : DataFrame
        ``pump_id``, ``date``, ``state``, ``hours``: hours per local day and state.
    quality : DataFrame
        One row per pump and tag: what the loader found (text values, bad quality, ...).
    problems : DataFrame
        ``pump_id``, ``stage``, ``message``: pumps that could not be screened, and why.
    file_problems : DataFrame
        ``file``, ``message``: export files that could not be read.
    """

    plant: Plant
    start: pd.Timestamp
    end: pd.Timestamp
    hours: pd.DataFrame
    summary: pd.DataFrame
    daily: pd.DataFrame
    quality: pd.DataFrame
    problems: pd.DataFrame
    file_problems: pd.DataFrame
    series: dict[str, pd.DataFrame] = field(default_factory=dict)
    extras: dict[str, Any] = field(default_factory=dict)  # what ``each_pump`` returned
    plots: dict[str, pd.DataFrame] = field(default_factory=dict)
    #: Every export file the plant file's globs matched (read or not), for the audit trail.
    export_files: list[str] = field(default_factory=list)
    points: dict[str, dict] = field(default_factory=dict)
    elapsed_s: float = 0.0
    samples: int = 0
    #: When no pump had a sample in the window: the first and last sample the exports hold
    #: (UTC), or None when they hold none.
    data_span: tuple[pd.Timestamp, pd.Timestamp] | None = None
    #: Field evidence (discharge pressure, vibration) of the pumps that have such tags
    #: (:mod:`screening.engine.field_head`; tables by :func:`field_tables.field_tables`).
    evidence: dict[str, Any] = field(default_factory=dict)

    @property
    def not_enough_data(self) -> pd.DataFrame:
        """Summary rows of pumps whose data cover less than ``[data] min_coverage``."""
        return self.summary[~self.summary["enough_data"].astype(bool)]

    @property
    def ranked(self) -> pd.DataFrame:
        """Summary rows of pumps with enough data, most exposed first."""
        return self.summary[self.summary["enough_data"].astype(bool)]

    def empty_message(self) -> str | None:
        """One line when no pump had a sample inside the window (else None): the window and
        what the exports hold."""
        if self.samples:
            return None
        tz = self.plant.timezone
        a, b = (x.tz_convert(tz).strftime("%Y-%m-%d %H:%M") for x in (self.start, self.end))
        if self.data_span is None:
            held = "the exports hold no readable sample"
        else:
            lo, hi = (x.tz_convert(tz).strftime("%Y-%m-%d %H:%M") for x in self.data_span)
            held = f"the exports hold {lo} to {hi}"
        text = f"no samples between {a} and {b} ({tz}); {held}"
        if len(self.file_problems):
            first = self.file_problems.iloc[0]["message"]
            text += f". {len(self.file_problems)} file(s) not read or read only in part: {first}"
        return text

    @property
    def window_hours(self) -> float:
        """Length of the window [h]."""
        return (self.end - self.start).total_seconds() / 3600.0


#: Columns of the summary and quality tables (also when no pump could be screened).
SUMMARY_COLUMNS = [
    "pump_id", "service", "area", "fluid", "vapour_pressure_model", "window_hours",
    "running_hours", "below_npsh3_hours", "below_guidance_hours",
    "below_npsh3_metre_hours", "below_guidance_metre_hours", "longest_below_npsh3_hours",
    "longest_below_npsh3_start", "starting_hours", "off_curve_hours", "no_data_hours",
    "bad_data_hours", "coverage", "enough_data", "worst_ratio", "worst_time",
    "worst_margin_m", "worst_margin_to_guidance_m",
    "guidance_ratio", "guidance_margin_m", "guidance_source", "suction_energy_us",
    "suction_energy_class", "suction_specific_speed_us",
    "suction_specific_speed_metric", "preferred_region_hours", "outside_preferred_hours",
    "below_min_flow_hours", "beyond_allowable_hours", "speed_outside_scaling_hours",
    "standard_atmosphere_hours", "min_flow_source", "below_vapour_pressure_hours", "npsh_datum",
    "pressure_point_elevation_m", "datum_note",
    *FIELD_SUMMARY_COLUMNS,
]  # fmt: skip


def _daily(results, days, kind: str, names: list[str], get) -> pd.DataFrame:
    n_days, n_states = len(days), len(names)
    if not results:
        return pd.DataFrame(
            {"pump_id": np.array([]), "kind": kind, "date": days[:0],
             "state": np.array(names)[:0], "hours": []}
        )  # fmt: skip
    n = len(results)
    # the text columns taken from their few distinct words: as pandas builds them from the
    # long arrays of words, many times faster
    pumps = _words([r.pump_id for r in results], np.repeat(np.arange(n), n_days * n_states))
    return pd.DataFrame(
        {
            "pump_id": pumps,
            "kind": _words([kind], np.zeros(n * n_days * n_states, dtype=np.intp)),
            "date": np.tile(np.repeat(days, n_states), n),
            "state": _words(names, np.tile(np.arange(n_states), n_days * n)),
            "hours": np.concatenate([get(r).ravel() for r in results]),
        }
    )


def _words(words: list[str], codes: np.ndarray):
    """The column of ``words[codes]``, of the type pandas gives a column of words."""
    return pd.Series(words).array.take(codes)


def _summary_row(plant, r) -> dict:
    """One pump's row of the summary table (hours [h], ratios [-], metres [m]), with whether
    its data cover ``[data] min_coverage`` of the window."""
    pump = plant.pumps[r.pump_id]
    g = plant.guidance[r.pump_id]
    names = list(states.STATES)
    h = dict(zip(names, r.hours, strict=True))
    rh = dict(zip(regions.REGIONS, r.region_hours, strict=True))
    s_us = pump_suction_specific_speed(plant, r.pump_id)
    running = sum(h[s] for s in states.RUNNING) + h["starting"]
    sev = r.severity
    coverage = 1.0 - (h["no_data"] + h["bad_data"]) / r.window_hours
    return {
        "pump_id": r.pump_id,
        "service": pump.service,
        "area": pump.area,
        "fluid": pump.fluid,
        "vapour_pressure_model": fluid_table(
            pump.fluid, pump.vapour_pressure
        ).vapour_pressure_model,
        "window_hours": r.window_hours,
        "running_hours": running,
        "below_npsh3_hours": h["below_npsh3"],
        "below_guidance_hours": h["below_npsh3"] + h["below_guidance"],
        # severity: depth times duration [m·h] and the longest stretch below NPSH3 [h]
        "below_npsh3_metre_hours": sev.below_npsh3_m_h,
        "below_guidance_metre_hours": sev.below_guidance_m_h,
        "longest_below_npsh3_hours": sev.longest_below_npsh3_h,
        "longest_below_npsh3_start": (
            sev.longest_start.tz_convert(plant.timezone) if sev.longest_start is not None else None
        ),
        "starting_hours": h["starting"],
        "off_curve_hours": h["off_curve"],
        "no_data_hours": h["no_data"],
        "bad_data_hours": h["bad_data"],
        "coverage": coverage,
        "enough_data": bool(coverage >= plant.settings.data.min_coverage),
        "worst_ratio": r.worst_ratio,
        "worst_time": (
            r.worst_time.tz_convert(plant.timezone) if r.worst_time is not None else None
        ),
        "worst_margin_m": r.worst_margin_m,
        "worst_margin_to_guidance_m": r.worst_guidance_margin_m,
        "guidance_ratio": g.ratio,
        "guidance_margin_m": g.margin,
        "guidance_source": g.source,
        "suction_energy_us": g.suction_energy,
        "suction_energy_class": g.suction_energy_class,
        "suction_specific_speed_us": s_us,
        "suction_specific_speed_metric": s_us / US_PER_METRIC_S,
        "preferred_region_hours": rh["preferred_region"],
        "outside_preferred_hours": sum(rh[x] for x in regions.RUNNING_REGIONS)
        - rh["preferred_region"],
        "below_min_flow_hours": rh["below_min_flow"],
        "beyond_allowable_hours": rh["beyond_allowable"],
        "speed_outside_scaling_hours": r.speed_outside_hours,
        "standard_atmosphere_hours": r.baro_fallback_hours,
        "min_flow_source": regions.min_flow_source(
            pump, plant.settings.running.min_stable_flow_fraction
        ),
        "below_vapour_pressure_hours": r.below_vapour_hours,
        "npsh_datum": pump.datum,
        "pressure_point_elevation_m": pump.tap_elevation
        if pump.source == "transmitter"
        else np.nan,
        "datum_note": pump.datum_note,
        **field_summary(r.evidence),
    }


@dataclass
class TablePart:
    """The rows of one batch of results in the hours and summary tables, built while the
    other batches still run (see :func:`table_part`)."""

    hours: list[dict]
    summary: list[dict]


def table_part(plant, results) -> TablePart:
    """One batch's rows of the hours and summary tables; :func:`scan_tables` joins the parts
    in batch order into the tables it would build from all the results at once."""
    names = list(states.STATES)
    hours_rows, summary_rows = [], []
    for r in results:
        for name, h in zip(names, r.hours, strict=True):
            hours_rows.append(
                {"pump_id": r.pump_id, "kind": "margin", "state": name, "hours": float(h)}
            )
        for name, h in zip(regions.REGIONS, r.region_hours, strict=True):
            hours_rows.append(
                {"pump_id": r.pump_id, "kind": "region", "state": name, "hours": float(h)}
            )
        summary_rows.append(_summary_row(plant, r))
    return TablePart(hours_rows, summary_rows)


def scan_tables(
    plant, results, start, end, edges, quality_rows, problems, file_problems, parts=None
):  # fmt: skip
    """The tidy tables of a scan from the pumps' results (see :class:`ScanResult`).
    ``parts``: the results' rows already built batch by batch (:func:`table_part`), in the
    order of ``results``; None builds them here."""
    names = list(states.STATES)
    days = pd.to_datetime(edges[:-1], utc=True).tz_convert(plant.timezone).date
    parts = [table_part(plant, results)] if parts is None else parts
    hours_rows = [row for p in parts for row in p.hours]
    hours = pd.DataFrame(hours_rows, columns=["pump_id", "kind", "state", "hours"])
    summary = pd.DataFrame([row for p in parts for row in p.summary], columns=SUMMARY_COLUMNS)
    if len(summary):
        # pumps with enough data ranked by severity (depth times duration below NPSH3, then
        # below guidance: a string of short dips weighs less than one long deep stretch); those
        # without enough data are listed after them, least covered first, never among the
        # healthy
        summary["_thin_coverage"] = np.where(summary["enough_data"], 0.0, summary["coverage"])
        summary = (
            summary.sort_values(
                ["enough_data", "_thin_coverage", "below_npsh3_metre_hours",
                 "below_guidance_metre_hours", "below_npsh3_hours", "below_guidance_hours",
                 "pump_id"],
                ascending=[False, True, False, False, False, False, True],
            )
            .drop(columns="_thin_coverage")
            .reset_index(drop=True)
        )  # fmt: skip
    daily = pd.concat(
        [
            _daily(results, days, "margin", names, lambda r: r.daily),
            _daily(results, days, "region", list(regions.REGIONS), lambda r: r.region_daily),
        ],
        ignore_index=True,
    )
    quality = pd.DataFrame(quality_rows, columns=QUALITY_COLUMNS)
    probs = pd.DataFrame(problems, columns=["pump_id", "stage", "message"])
    files = pd.DataFrame(
        [{"file": k, "message": v} for k, v in file_problems.items()], columns=["file", "message"]
    )
    return ScanResult(plant, start, end, hours, summary, daily, quality, probs, files)
