"""The plant scan: every pump of a plant over one window, as tidy tables.

This is the Python API the command line uses: ``screening.scan(config, start, end)`` returns a
:class:`ScanResult` of pandas data frames.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from . import regions, states
from ._allocator import keep_freed_memory
from .calculator import PumpResult, Settings, calculate_pump, prepare_tag
from .execution import BatchContext, BatchOutput, fluid_tables_for, run_batches
from .loader import ExportError, ExportIndex, TagQuality
from .plant import Plant, load_plant, pump_suction_specific_speed
from .properties import fluid_table
from .units import UnitError, to_si

#: Suction specific speed: U.S. units (rpm, gpm, ft) per metric units (rpm, m³/s, m);
#: 1 gpm^0.5 / ft^0.75 = (6.309e-5 m³/s)^0.5 / (0.3048 m)^0.75, so S_US = 51.64 · S_metric.
US_PER_METRIC_S = (1 / 6.30901964e-5) ** 0.5 / (1 / 0.3048) ** 0.75


class WindowError(ValueError):
    """A screening window that cannot be used."""


@dataclass
class ScanResult:
    """Tables of a plant scan (tidy; units in column names).

    Attributes
    ----------
    hours : DataFrame
        ``pump_id``, ``state``, ``hours``: one row per screened pump and state, zeros included.
    summary : DataFrame
        One row per screened pump: hours running, worst ratio, hours below guidance, coverage.
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

    @property
    def window_hours(self) -> float:
        """Length of the window [h]."""
        return (self.end - self.start).total_seconds() / 3600.0


def window_bounds(plant: Plant, start=None, end=None) -> tuple[pd.Timestamp, pd.Timestamp]:
    """The window [start, end) as UTC timestamps; dates without offset are site-local.

    Parameters
    ----------
    plant : Plant
    start, end : str, date or Timestamp, optional
        Window bounds; default to the plant file's ``[window]``.
    """
    start = start if start is not None else plant.settings.window.start
    end = end if end is not None else plant.settings.window.end
    if start is None or end is None:
        raise WindowError("no window: give --from and --to, or [window] start and end")
    out = []
    for name, value in (("start", start), ("end", end)):
        try:
            ts = pd.Timestamp(value)
        except (ValueError, TypeError) as exc:
            raise WindowError(f"window {name} {value!r} is not a date such as 2026-10-01") from exc
        if ts.tzinfo is None:
            try:
                ts = ts.tz_localize(plant.timezone, ambiguous="raise", nonexistent="raise")
            except Exception as exc:
                raise WindowError(
                    f"window {name} {value} is not a single instant in {plant.timezone} "
                    "(a clock change); give it with an offset"
                ) from exc
        out.append(ts.tz_convert("UTC"))
    if out[1] <= out[0]:
        raise WindowError(f"window end {end} is not after its start {start}")
    return out[0], out[1]


def _day_edges(start: pd.Timestamp, end: pd.Timestamp, tz: str) -> np.ndarray:
    local_start = start.tz_convert(tz)
    first = local_start.normalize()
    days = pd.date_range(first, end.tz_convert(tz).normalize() + pd.Timedelta(days=1), freq="D")
    edges = days.tz_convert("UTC").as_unit("ns").asi8
    inner = edges[(edges > start.value) & (edges < end.value)]
    return np.concatenate(([start.value], inner, [end.value])).astype(np.int64)


def _settings(plant: Plant) -> Settings:
    s = plant.settings
    return Settings(
        stale_limit=s.data.stale_limit,
        frozen_after=s.data.frozen_after,
        min_flow_fraction=s.running.min_flow_fraction,
        min_speed_fraction=s.running.min_speed_fraction,
        ample_ratio=s.policy.ample_ratio,
        site_elevation=s.site.elevation,
        barometer_stale_limit=s.site.barometer_stale_limit,
        speed_scaling_range=tuple(s.running.speed_scaling_range),
    )


def _check_range(role: str, pump, table):
    """Physically impossible values of a role (SI): flagged as bad data."""
    if role == "temperature":
        return lambda v: ~table.in_range(v)
    if role == "suction":
        if pump.gauge:
            return lambda v: v < -110_000.0  # a gauge reading below full vacuum
        return lambda v: v <= 0.0
    if role == "vessel_pressure":
        if pump.vessel_gauge:
            return lambda v: v < -110_000.0
        return lambda v: v <= 0.0
    if role == "speed":
        return lambda v: v < 0.0
    return None


def scan(
    config: str | Path | Plant,
    start=None,
    end=None,
    pumps: list[str] | None = None,
    keep_series: bool = False,
    plot_buckets: int = 0,
    each_pump: Callable[[Plant, PumpResult], Any] | None = None,
    processes: int | None = None,
    cluster: Any = None,
    progress: Callable[[BatchOutput], None] | None = None,
) -> ScanResult:
    """Screen every pump of a plant over a window.

    Parameters
    ----------
    config : str, Path or Plant
        The plant file, or a loaded :class:`Plant`.
    start, end : str or Timestamp, optional
        Window [start, end); dates without an offset are in the site time zone; default from
        the plant file.
    pumps : list of str, optional
        Screen only these pump ids.
    keep_series : bool
        Keep each pump's time series (NPSHa, NPSH3, ratio, state) in ``ScanResult.series``.
    plot_buckets : int
        Time buckets of the report's plot data (minimum and maximum per bucket) kept per pump
        in ``ScanResult.plots``; 0 (the default) keeps none. The command line asks for
        :data:`screening.plotdata.DEFAULT_BUCKETS` to draw the pump pages.
    each_pump : callable, optional
        Called as ``each_pump(plant, result)`` right after each pump is screened, with its
        per-piece series in ``result.series``; what it returns is kept in
        ``ScanResult.extras[pump_id]`` and the series is then dropped (unless
        ``keep_series``), so memory stays bounded by one pump. A ``ValueError`` it raises
        makes that pump a problem, as bad data does. The what-if analysis uses it. With
        several processes it must be picklable (a module-level function or a partial of one).
    processes : int or None
        Worker processes on this machine [-]: None (the default) for every core, 1 to run in
        this process. A plant that fits in one batch always runs in this process.
    cluster : str, distributed.Client or int, optional
        Run the batches on Dask distributed instead: a scheduler address
        (``tcp://host:port``), a connected client, or a number of workers for a local Dask
        cluster started for this run (see :mod:`screening.execution`).
    progress : callable, optional
        Called with each batch's output (``pumps``, ``samples``) as it completes.

    The results do not depend on where the work ran.

    Returns
    -------
    ScanResult
    """
    t0 = time.perf_counter()
    keep_freed_memory()
    plant = config if isinstance(config, Plant) else load_plant(config)
    start_ts, end_ts = window_bounds(plant, start, end)
    start_ns, end_ns = start_ts.value, end_ts.value
    edges = _day_edges(start_ts, end_ts, plant.timezone)
    settings = _settings(plant)
    index = ExportIndex(plant.settings, plant.base)
    problems: list[dict] = [
        {"pump_id": pid, "stage": "config", "message": msg} for pid, msg in plant.problems.items()
    ]
    selected = list(plant.pumps) if pumps is None else pumps
    unknown = [p for p in selected if p not in plant.pumps and p not in plant.problems]
    for pid in unknown:
        problems.append({"pump_id": pid, "stage": "config", "message": "not in the register"})
    selected = [p for p in selected if p in plant.pumps]
    if pumps is not None:
        problems = [p for p in problems if p["pump_id"] in pumps]

    baro_span = (start_ns - int(settings.barometer_stale_limit * 1e9) - 1, end_ns)
    barometer, baro_quality = _read_barometer(plant, index, settings, baro_span)
    # One look-back for the whole plant, so that what is read (and counted) never depends on
    # which pumps share a batch: the longest hold or frozen allowance of any tag.
    longest = max(
        [settings.stale_limit, settings.frozen_after or 0.0]
        + [t.stale_limit or 0.0 for p in selected for t in plant.pumps[p].tags().values()]
    )
    span = (start_ns - int(longest * 1e9) - 1, end_ns)
    batches = _batches(plant, index, selected, end_ts - start_ts)
    ctx = BatchContext(
        plant, index, settings, barometer, start_ns, end_ns, edges, span, keep_series,
        plot_buckets, each_pump,
        fluid_tables_for(plant, selected) if len(batches) > 1 else {},
    )  # fmt: skip
    outputs = run_batches(ctx, batches, processes, cluster, progress)
    results: list[PumpResult] = []
    extras: dict[str, Any] = {}
    quality_rows: list[dict] = []
    file_problems = {**index.file_problems, **index.partly_read}
    samples = 0
    for o in outputs:
        results.extend(o.results)
        extras.update(o.extras)
        quality_rows.extend(o.quality_rows)
        problems.extend(o.problems)
        file_problems.update(o.file_problems)
        samples += o.samples
    if baro_quality is not None:
        quality_rows.append(_quality_row("(site)", "barometer", baro_quality))
    out = _tables(plant, results, start_ts, end_ts, edges, quality_rows, problems, file_problems)
    out.series = {r.pump_id: r.series for r in results if r.series is not None}
    out.extras = extras
    out.plots = {r.pump_id: r.plot for r in results if r.plot is not None}
    out.points = {r.pump_id: r.points for r in results if r.points is not None}
    out.export_files = [str(f.path) for f in index.files] + [
        p for p in index.file_problems if Path(p).is_file()
    ]
    out.samples = samples
    out.elapsed_s = time.perf_counter() - t0
    return out


def _read_barometer(plant, index, settings, span):
    site = plant.settings.site
    if not site.barometer_tag:
        return None, None
    series, _ = index.read([site.barometer_tag], span)
    s = series.get(site.barometer_tag)
    if s is None:
        return None, None
    values = to_si(s.values, site.barometer_unit or "Pa", "pressure")
    s.values = values
    return s, s.quality


#: Pumps read together for a window of a month: the files they share are read once per batch.
#: Memory grows with the batch, not with the plant; longer windows get fewer pumps per batch.
BATCH_PUMPS = 25
BATCH_PUMP_DAYS = BATCH_PUMPS * 31


def _batches(
    plant: Plant, index: ExportIndex, selected: list[str], window: pd.Timedelta | None = None
) -> list[list[str]]:
    """Pumps grouped by the files holding their tags, in batches of at most BATCH_PUMPS pumps
    and BATCH_PUMP_DAYS pump-days, so that a batch's memory stays about the same whatever the
    window's length (a year-long window: two pumps per batch)."""
    size = BATCH_PUMPS
    if window is not None:
        days = max(window / pd.Timedelta(days=1), 1.0)
        size = int(min(BATCH_PUMPS, max(1, BATCH_PUMP_DAYS // days)))

    def key(pid: str):
        files = sorted({str(f) for t in plant.pumps[pid].tags().values()
                        for f in index.files_for(t.tag)})  # fmt: skip
        return (files, pid)

    ordered = sorted(selected, key=key)
    return [ordered[i : i + size] for i in range(0, len(ordered), size)]


def _screen_pump(
    plant, pump, index, raw, barometer, settings, start_ns, end_ns, edges, keep, buckets
):
    roles = pump.tags()
    known = index.known_tags()
    missing = [f"{spec.tag} ({role})" for role, spec in roles.items() if spec.tag not in known]
    if missing:
        raise ExportError(f"tag(s) not found in any export file: {', '.join(missing)}")
    table = fluid_table(pump.fluid, pump.vapour_pressure)
    prepared = {}
    n = 0
    for role, spec in roles.items():
        s = raw.get(spec.tag)
        if s is None:
            raise ExportError(
                f"tag {spec.tag} ({role}) could not be read from "
                f"{', '.join(map(str, index.files_for(spec.tag)))}"
            )
        try:
            prepared[role] = prepare_tag(s, spec, settings, role, _check_range(role, pump, table))
        except UnitError as exc:
            raise ExportError(f"tag {spec.tag} ({role}): {exc}") from exc
        n += int(np.searchsorted(s.times, end_ns) - np.searchsorted(s.times, start_ns))
    result = calculate_pump(
        pump, plant.curves[pump.curve_id], plant.guidance[pump.pump_id], table, prepared,
        barometer if pump.needs_barometer else None, settings, start_ns, end_ns, edges, keep,
        buckets,
    )  # fmt: skip
    quality = {role: prepared[role].quality for role in roles}
    return result, quality, n


#: Columns of the summary and quality tables (also when no pump could be screened).
SUMMARY_COLUMNS = [
    "pump_id", "service", "area", "fluid", "vapour_pressure_model", "window_hours",
    "running_hours", "below_npsh3_hours", "below_guidance_hours", "off_curve_hours",
    "no_data_hours", "bad_data_hours", "coverage", "worst_ratio", "worst_time",
    "guidance_ratio", "guidance_margin_m", "guidance_source", "suction_specific_speed_us",
    "suction_specific_speed_metric", "preferred_region_hours", "outside_preferred_hours",
    "below_min_flow_hours", "beyond_allowable_hours", "speed_outside_scaling_hours",
    "standard_atmosphere_hours",
]  # fmt: skip
QUALITY_COLUMNS = [
    "pump_id", "role", "tag", "samples", "text_values", "bad_quality", "not_finite", "frozen",
    "out_of_range", "bad_timestamps", "duplicates", "out_of_order", "malformed_rows", "words",
    "first_problem",
]  # fmt: skip


def _quality_row(pid: str, role: str, q: TagQuality) -> dict:
    return {
        "pump_id": pid,
        "role": role,
        "tag": q.tag,
        "samples": q.samples,
        "text_values": q.text_values,
        "bad_quality": q.bad_quality,
        "not_finite": q.not_finite,
        "frozen": q.frozen,
        "out_of_range": q.out_of_range,
        "bad_timestamps": q.bad_timestamps,
        "duplicates": q.duplicates,
        "out_of_order": q.out_of_order,
        "malformed_rows": q.malformed_rows,
        "words": "; ".join(f"{w} ({c})" for w, c in sorted(q.words.items())),
        "first_problem": "; ".join(f"{k}: {v}" for k, v in q.first_problem.items()),
    }


def _daily(results, days, kind: str, names: list[str], get) -> pd.DataFrame:
    n_days, n_states = len(days), len(names)
    return pd.DataFrame(
        {
            "pump_id": np.repeat([r.pump_id for r in results], n_days * n_states),
            "kind": kind,
            "date": np.tile(np.repeat(days, n_states), len(results)),
            "state": np.tile(names, n_days * len(results)),
            "hours": np.concatenate([get(r).ravel() for r in results]) if results else [],
        }
    )


def _tables(plant, results, start, end, edges, quality_rows, problems, file_problems):
    names = list(states.STATES)
    hours_rows, summary_rows = [], []
    days = pd.to_datetime(edges[:-1], utc=True).tz_convert(plant.timezone).date
    for r in results:
        pump = plant.pumps[r.pump_id]
        g = plant.guidance[r.pump_id]
        for name, h in zip(names, r.hours, strict=True):
            hours_rows.append(
                {"pump_id": r.pump_id, "kind": "margin", "state": name, "hours": float(h)}
            )
        for name, h in zip(regions.REGIONS, r.region_hours, strict=True):
            hours_rows.append(
                {"pump_id": r.pump_id, "kind": "region", "state": name, "hours": float(h)}
            )
        h = dict(zip(names, r.hours, strict=True))
        rh = dict(zip(regions.REGIONS, r.region_hours, strict=True))
        s_us = pump_suction_specific_speed(plant, r.pump_id)
        running = sum(h[s] for s in states.RUNNING)
        summary_rows.append(
            {
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
                "off_curve_hours": h["off_curve"],
                "no_data_hours": h["no_data"],
                "bad_data_hours": h["bad_data"],
                "coverage": 1.0 - (h["no_data"] + h["bad_data"]) / r.window_hours,
                "worst_ratio": r.worst_ratio,
                "worst_time": (
                    r.worst_time.tz_convert(plant.timezone) if r.worst_time is not None else None
                ),
                "guidance_ratio": g.ratio,
                "guidance_margin_m": g.margin,
                "guidance_source": g.source,
                "suction_specific_speed_us": s_us,
                "suction_specific_speed_metric": s_us / US_PER_METRIC_S,
                "preferred_region_hours": rh["preferred_region"],
                "outside_preferred_hours": sum(rh[x] for x in regions.RUNNING_REGIONS)
                - rh["preferred_region"],
                "below_min_flow_hours": rh["below_min_flow"],
                "beyond_allowable_hours": rh["beyond_allowable"],
                "speed_outside_scaling_hours": r.speed_outside_hours,
                "standard_atmosphere_hours": r.baro_fallback_hours,
            }
        )
    hours = pd.DataFrame(hours_rows, columns=["pump_id", "kind", "state", "hours"])
    summary = pd.DataFrame(summary_rows, columns=SUMMARY_COLUMNS)
    if len(summary):
        summary = summary.sort_values(
            ["below_npsh3_hours", "below_guidance_hours", "pump_id"],
            ascending=[False, False, True],
        ).reset_index(drop=True)
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
