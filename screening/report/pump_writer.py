"""Writing the pump pages: one HTML page per pump from the scan's tables and plot data."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from screening.base import states
from screening.base.text import hours_text
from screening.engine.scan import ScanResult
from screening.inputs.events import events_for
from screening.physics import regions
from screening.physics.properties import fluid_table
from screening.report import field_page, pump_pages
from screening.report.cautions import CAUTIONS
from screening.report.figjson import figure_html
from screening.report.palette import REGION_LABELS, STATE_LABELS
from screening.report.pump_pages import DisplayUnits
from screening.report.templating import ENV
from screening.report.timeline import time_figure
from screening.report.why import problem_tags_by_pump


def hours_rows(h: pd.DataFrame | dict) -> list[list[str]]:
    """The hours table of a pump page: one row per kind of state, each cell a state's label
    and its hours (``19.0 h``, ``2 min``), in report order. ``h`` is the pump's rows of the
    hours table, or its hours [h] by (kind, state) (:func:`hours_by_pump`)."""
    if isinstance(h, pd.DataFrame):
        h = dict(zip(zip(h["kind"], h["state"], strict=True), h["hours"], strict=True))
    rows = []
    for kind, title, names, labels in (
        ("margin", "margin band", states.STATES, STATE_LABELS),
        ("region", "operating region", regions.REGIONS, REGION_LABELS),
    ):
        rows.append(
            [title] + [f"{labels[n]}: {hours_text(h.get((kind, n), 0.0), True)}" for n in names]
        )
    return rows


def hours_by_pump(hours: pd.DataFrame) -> dict[str, dict[tuple[str, str], float]]:
    """Every pump's hours [h] by (kind, state), from the hours table in one pass (a mask per
    pump would cost pumps x rows)."""
    out: dict[str, dict[tuple[str, str], float]] = {}
    cols = (hours[c].tolist() for c in ("pump_id", "kind", "state", "hours"))
    for pid, kind, state, value in zip(*cols, strict=True):
        out.setdefault(pid, {}).setdefault((kind, state), value)
    return out


def running_speed(plot: pd.DataFrame | None, rated: float) -> float:
    """The pump's typical running speed [rpm]: the median of the buckets' mid speeds, or the
    rated speed where the pump has no speed tag."""
    if plot is None or "speed_rpm_min" not in plot:
        return rated
    lo, hi, npsha = (plot[c].to_numpy(dtype=np.float64) for c in
                     ("speed_rpm_min", "speed_rpm_max", "npsha_m_min"))  # fmt: skip
    mid = (lo + hi) / 2
    mid = mid[~np.isnan(mid) & ~np.isnan(npsha)]  # running buckets only
    return float(np.median(mid)) if len(mid) else rated


def write_some_pages(result: ScanResult, folder: Path, pages: dict, units: DisplayUnits) -> None:
    """Write the pages of ``pages`` (pump id -> file name) under ``folder``/pumps, in display
    ``units``."""
    writer = PageWriter(result, folder, units)
    for pid, name in pages.items():
        writer.write(pid, name)


class PageWriter:
    """Writes pump pages one at a time; what every page needs is picked from the scan's tables
    once, when it is made (each pump's rows in one pass: a mask per pump would cost pumps x
    rows). Made before the report's page writers fork, it is theirs without a copy."""

    def __init__(self, result: ScanResult, folder: Path, units: DisplayUnits) -> None:
        plant = result.plant
        self.result, self.folder, self.units = result, folder, units
        self.template = ENV.get_template("pump.html")
        a, b = result.start.tz_convert(plant.timezone), result.end.tz_convert(plant.timezone)
        self.window = f"{a:%Y-%m-%d %H:%M} to {b:%Y-%m-%d %H:%M}"
        self.hours_of = hours_by_pump(result.hours)
        self.margin_days = result.daily[result.daily.kind == "margin"]
        self.calendars = pump_pages.calendars_by_pump(self.margin_days) or {}
        self.daily_of = (
            {} if self.calendars else dict(list(self.margin_days.groupby("pump_id", sort=False)))
        )
        self.thin = result.not_enough_data.set_index("pump_id")["coverage"].to_dict()
        self.summary_of = {row["pump_id"]: row for row in result.summary.to_dict("records")}
        self.bad_tags_of = problem_tags_by_pump(result.quality)

    def _figures(self, pid: str, pump, g, events) -> dict[str, str]:
        """The page's three figures as HTML: time, operating points, calendar."""
        result, units, tz = self.result, self.units, self.result.plant.timezone
        ample = result.plant.settings.policy.ample_ratio
        plot = result.plots.get(pid)
        figs = {"fig_time": "", "fig_points": ""}
        if plot is not None and len(plot):
            fig = time_figure(plot, units, tz, g.ratio, ample, result.start, result.end)
            figs["fig_time"] = figure_html(pump_pages.mark_events(fig, events, tz), "timeline")
        if pid in result.points:
            speed = running_speed(plot, pump.rated_speed)
            fig = pump_pages.points_figure(
                result.points[pid], result.plant.curves[pump.curve_id], pump, units, g, speed
            )
            figs["fig_points"] = figure_html(fig, "points")
        calendar = self.calendars.get(pid)
        if calendar is None:
            calendar = pump_pages.calendar_figure(self.daily_of.get(pid, self.margin_days.iloc[:0]))
        figs["fig_calendar"] = figure_html(calendar, "calendar")
        return figs

    def write(self, pid: str, name: str) -> None:
        """Write pump ``pid``'s page as ``name`` under the folder's ``pumps``."""
        result, plant, units = self.result, self.result.plant, self.units
        pump, g = plant.pumps[pid], plant.guidance[pid]
        events = (
            events_for(plant.events, pid, pump.area, result.start, result.end)
            if len(plant.events)
            else plant.events
        )
        plot = result.plots.get(pid)
        model = fluid_table(pump.fluid, pump.vapour_pressure).vapour_pressure_model
        thin, least = self.thin, plant.settings.data.min_coverage
        html = self.template.render(
            pump=pump,
            plant_name=plant.name,
            window=self.window,
            units_label=units.name,
            hours_rows=hours_rows(self.hours_of.get(pid, {})),
            downsample_note=(
                f"Downsampled for the browser: the window is cut into "
                f"{len(plot) if plot is not None else 0} time buckets and each keeps the minimum "
                "and the maximum of every series, so short dips stay visible. Full-resolution "
                "hours are in the tables beside this page."
            ),
            guidance_ratio=f"{g.ratio:.2f}",
            guidance_margin=units.length_text(g.margin),
            ample_ratio=f"{plant.settings.policy.ample_ratio:.2f}",
            register=pump_pages.register_rows(pump, g, model, units),
            flags=pump_pages.pump_flags(self.summary_of.get(pid), units, self.bad_tags_of.get(pid)),
            events=pump_pages.event_rows(events, plant.timezone),
            cautions=CAUTIONS,
            field_section=field_page.section(
                result.evidence.get(pid), pump, plant.curves[pump.curve_id], units
            ),
            thin_note=(
                f"Not enough data to screen: usable data for {100 * thin[pid]:.1f} % of the "
                f"window, less than the {100 * least:.0f} % asked ([data] min_coverage). The "
                "hours here are those of the data there was; little time below the guidance "
                "means little was seen, not that the margin was good."
                if pid in thin
                else ""
            ),
            **self._figures(pid, pump, g, events),
        )
        pump_pages.write_pump_page(self.folder / "pumps" / name, html)
