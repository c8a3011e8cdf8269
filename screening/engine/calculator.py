"""The per-pump calculation: aligned tags -> NPSHa, NPSH3, margin and a state for every moment.

Alignment (see DESIGN.md, "Time weighting"): the timeline of a pump is cut at every sample time
of any of its tags, at the window's start and at every local midnight. On each piece, every tag
holds its last sample, for at most that tag's stale limit. A piece therefore has one state for
as long as all the tags it needs are fresh, and is ``no_data`` for the rest of it. Which tags a
piece needs depends on what it is: the run status (or flow and speed, without a run tag) to
decide running or stopped; all process tags when running, and for a pump on a shared suction
line the line's total flow (:mod:`screening.engine.lineflow`). Time is kept in integer
nanoseconds until the very end, so the hours of all states add up to the window.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from screening.base import states
from screening.base.calc_kernels import (
    margin_codes,
    piece_sums,
    region_codes,
    transmitter_npsha,
)
from screening.engine import field_head, lineflow, plotdata, severity
from screening.engine.timeline import (
    NEVER,
    Held,
    Timeline,
    align,
    any_linear,
    crossings,
    folds_of,
    held_at,
)
from screening.inputs.register import PumpSpec
from screening.inputs.tagdata import TagSeries
from screening.physics import npsh, regions, suction
from screening.physics.atmosphere import standard_pressure
from screening.physics.curves import Npsh3Curve
from screening.physics.margin import Guidance
from screening.physics.properties import FluidTable
from screening.physics.regions import pump_region_edges

NS_PER_HOUR = 3_600_000_000_000


@dataclass
class Settings:
    """What the calculation needs besides the pump: SI units throughout.

    Attributes: stale_limit [s] (plant default), frozen_after [s] or None, min_flow_fraction
    and min_speed_fraction [-], ample_ratio [-], site_elevation [m], barometer_stale_limit [s],
    speed_scaling_range [-] (speed ratios inside which NPSH3 scaling is trusted),
    barometer_tolerance [Pa] (largest difference of a used barometer sample from the standard
    atmosphere at the site elevation).
    """

    stale_limit: float
    frozen_after: float | None
    min_flow_fraction: float
    min_speed_fraction: float
    ample_ratio: float
    site_elevation: float
    barometer_stale_limit: float = 1800.0
    speed_scaling_range: tuple[float, float] = (0.8, 1.2)
    barometer_tolerance: float = 5000.0
    min_stable_flow_fraction: float | None = None  # [-] of BEP flow, plant-wide; None: none
    settle_after_start: float = 0.0  # [s] after each start counted as starting; 0: none


@dataclass
class PumpResult:
    """The outcome for one pump over one window."""

    pump_id: str
    hours: np.ndarray  # [h] per state code
    daily: np.ndarray  # [h] per day and state code, shape (days, states)
    window_hours: float
    worst_ratio: float = np.nan
    worst_time: pd.Timestamp | None = None
    baro_fallback_hours: float = 0.0
    region_hours: np.ndarray | None = None  # [h] per region code
    region_daily: np.ndarray | None = None  # [h] per day and region code
    speed_outside_hours: float = 0.0  # running hours outside the speed scaling range
    worst_margin_m: float = np.nan  # [m] least NPSHa − NPSH3 on the curve while running
    worst_guidance_margin_m: float = np.nan  # [m] least NPSHa − guidance head
    below_vapour_hours: float = 0.0  # [h] running with p_abs < p_v: impossible, a data fault
    below_vapour_first: pd.Timestamp | None = None
    #: metre-hours below NPSH3 and guidance, longest time below NPSH3 (engine/severity.py)
    severity: severity.Severity = field(default_factory=severity.Severity)
    plot: pd.DataFrame | None = field(default=None, repr=False)  # min/max per time bucket
    points: dict | None = field(default=None, repr=False)  # operating-point histogram
    series: pd.DataFrame | None = field(default=None, repr=False)
    evidence: field_head.FieldEvidence | None = field(default=None, repr=False)


def _vessel_npsha(pump: PumpSpec, held, baro, p_v, rho, flow, temp, fluid: str, line_q=None):
    """Surface pressure [Pa] and NPSHa [m] of a vessel-fed pump (see screening.suction); the
    suction line's loss at ``line_q`` [m³/s], the total flow of a shared line, else at the
    pump's own ``flow`` [m³/s]."""
    if pump.vessel_surface == "open":
        p_surface = suction.surface_pressure_open(baro)
    elif pump.vessel_surface == "saturated":
        p_surface = suction.SATURATED
    else:
        p_surface = suction.surface_pressure_from_tag(
            held["vessel_pressure"].value, baro, pump.vessel_gauge
        )
    # the suction line's loss (at the line's total flow where it is shared) and a vertical
    # can's, from its nozzle to the impeller eye (at the pump's own flow)
    loss = suction.line_loss(pump.suction_line, flow if line_q is None else line_q, rho, temp,
                             fluid)  # fmt: skip
    loss = loss + suction.can_loss(pump.can_loss_k, flow)
    npsha = suction.npsha_from_vessel(
        p_surface, p_v, rho, held["level"].value, pump.level_zero_elevation, loss
    )
    p_abs = p_v if pump.vessel_surface == "saturated" else p_surface
    return np.broadcast_to(np.asarray(p_abs, dtype=np.float64), npsha.shape), npsha


def _flat(values, n: int) -> np.ndarray:
    """``values`` as a float64 array of ``n`` pieces (a scalar or broadcast view repeated)."""
    a = np.asarray(values, dtype=np.float64)
    return a if a.ndim == 1 and a.shape[0] == n else np.broadcast_to(a, (n,))


@functools.lru_cache(maxsize=16)
def _standard_pressure(elevation: float) -> float:
    return standard_pressure(elevation)


def calculate_pump(
    pump: PumpSpec,
    curve: Npsh3Curve,
    guidance: Guidance,
    table: FluidTable,
    tags: dict[str, TagSeries | None],
    barometer: TagSeries | None,
    settings: Settings,
    start_ns: int,
    end_ns: int,
    day_edges: np.ndarray,
    keep_series: bool = False,
    plot_buckets: int = 0,
    field_inputs: field_head.FieldInputs | None = None,
) -> PumpResult:
    """Screen one pump over the window [start_ns, end_ns).

    Parameters
    ----------
    pump : PumpSpec
        Register row (SI). A pump on a shared suction line needs the other members' tags and
        the header flow (see :mod:`screening.engine.lineflow`).
    curve : Npsh3Curve
        Vendor NPSH3 curve at ``pump.rated_speed``.
    guidance : Guidance
        The pump's margin guidance.
    table : FluidTable
        Saturated-liquid properties of the pump's fluid.
    tags : dict
        Prepared (SI) series by role: suction [Pa], temperature [K], flow [m³/s], and optional
        speed [rpm] and run [-]; see :func:`prepare_tag`. On a shared suction line also
        ``header_flow`` [m³/s] (if registered) and the other members' ``<pump_id>:flow``,
        ``<pump_id>:run`` and ``<pump_id>:speed`` (see :meth:`PumpSpec.peer_tags`).
    barometer : TagSeries or None
        Prepared barometer series [Pa], or None to use the standard atmosphere.
    settings : Settings
        Plant-wide rules.
    start_ns, end_ns : int
        Window bounds [ns since epoch, UTC]; end exclusive.
    day_edges : numpy.ndarray
        Local midnights [ns] from the window start to its end, both included.
    keep_series : bool
        Keep the per-piece series (NPSHa, NPSH3, ratio, state) in the result.
    plot_buckets : int
        When positive, keep the report's plot data: minimum and maximum per time bucket and
        the operating-point histogram (see :mod:`screening.engine.plotdata`).
    field_inputs : FieldInputs or None
        The pump's discharge pressure and vibration tags, for the field evidence
        (:mod:`screening.engine.field_head`); None (no such tags) costs nothing.
    """
    probe = functools.partial(_probe, pump, curve, table, tags, barometer, settings)
    timeline = _timeline(
        pump, curve, guidance, tags, barometer, settings, start_ns, end_ns, day_edges, probe
    )
    run = _decide_running(pump, timeline, settings)
    phys = _evaluate(pump, curve, table, timeline, barometer, settings, run)
    code, until, all_bad = _classify_margin(phys, run, guidance, settings)
    rcode, r_until = _classify_region(pump, curve, timeline.folds, phys, run, settings)
    if settings.settle_after_start > 0:
        _mark_starting(timeline.grid, run, code, rcode, int(settings.settle_after_start * 1e9))
    # the pieces' right ends (just before the next piece) where inputs are drawn by lines
    ends = probe(timeline.t_next - 1)[2] if any_linear(tags) else None
    result = _summarise(
        pump, curve, guidance, settings, timeline, run, phys, (code, until, all_bad),
        (rcode, r_until), start_ns, end_ns, day_edges, keep_series, plot_buckets, ends,
    )  # fmt: skip
    if field_inputs is not None:  # on the same pieces and states: nothing added to the hours
        result.evidence = field_head.field_evidence(
            pump, curve, timeline.grid, timeline.t_next, code, until, phys, field_inputs
        )
    return result


def _probe(pump, curve, table, tags, barometer, settings, times: np.ndarray):
    """The running decision and the physics at sorted instants ``times`` [ns], every tag
    held or drawn as on the timeline."""
    held = held_at(pump, tags, times, settings.stale_limit)
    tl = Timeline(times, times, held, folds_of(held))
    run = _decide_running(pump, tl, settings)
    return tl, run, _evaluate(pump, curve, table, tl, barometer, settings, run)


def _codes_at(pump, curve, guidance, settings, probe, times: np.ndarray) -> np.ndarray:
    """Margin and region state at the instants ``times`` [ns], as one code (16·margin +
    region) whose changes are the cuts of :func:`screening.engine.timeline.crossings`."""
    tl, run, phys = probe(times)
    code, _, _ = _classify_margin(phys, run, guidance, settings)
    rcode, _ = _classify_region(pump, curve, tl.folds, phys, run, settings)
    return code.astype(np.int64) * 16 + rcode


def _timeline(pump, curve, guidance, tags, barometer, settings, start_ns, end_ns, day_edges, probe):
    """The pump's pieces: cut at every sample, and where inputs are drawn by lines also at
    every change of state inside a piece; with a settling time also where each start's
    settling time ends (see :mod:`screening.engine.timeline`)."""

    def cut(extra=None) -> Timeline:
        return align(pump, tags, barometer, settings.stale_limit, start_ns, end_ns, day_edges,
                     extra)  # fmt: skip

    tl = cut()
    extra = np.empty(0, dtype=np.int64)
    if any_linear(tags):
        codes = functools.partial(_codes_at, pump, curve, guidance, settings, probe)
        extra = crossings(tl.grid, tl.t_next, codes)
        if len(extra):
            tl = cut(extra)
    if settings.settle_after_start > 0:
        run = _decide_running(pump, tl, settings)
        settled = tl.grid[_starts(tl.grid, run)] + int(settings.settle_after_start * 1e9)
        settled = settled[(settled > start_ns) & (settled < end_ns)]
        if len(settled):
            tl = cut(np.union1d(extra, settled))
    return tl


def _starts(grid: np.ndarray, run) -> np.ndarray:
    """Pieces where the pump starts: running after a piece in which it was stopped."""
    on = run.running & ~run.decide_bad
    off = ~run.running & ~run.decide_bad
    start = np.zeros(len(grid), dtype=bool)
    start[1:] = on[1:] & off[:-1]
    return start


def _mark_starting(grid, run, code, rcode, settle_ns: int) -> None:
    """Running pieces less than ``settle_ns`` [ns] after the pump's latest start are counted
    as starting (margin and region), unless their data are bad; in place."""
    begun = _starts(grid, run)
    last = np.maximum.accumulate(np.where(begun, grid, NEVER))
    starting = run.running & ~run.decide_bad & (grid < last + settle_ns)
    code[starting & (code <= states.OFF_CURVE)] = states.STARTING
    rcode[starting & (rcode <= regions.BEYOND_ALLOWABLE)] = regions.STARTING


@dataclass
class _Running:
    """Running or stopped on each piece, and which pieces the deciding (and all) tags leave
    bad or fresh until when [ns]."""

    running: np.ndarray
    decide_bad: np.ndarray
    decide_until: np.ndarray
    all_bad: np.ndarray
    all_until: np.ndarray
    line_flow: np.ndarray | None = None  # [m³/s] a shared suction line's total flow


@dataclass
class _Physics:
    """SI values on each piece: temperature [K], p_v [Pa], rho [kg/m³], flow [m³/s], the
    absolute pressure [Pa] (suction, or a vessel's surface), NPSHa and NPSH3 [m], speed [rpm]
    or None, barometric pressure [Pa] and whether the barometer supplied it."""

    temp: np.ndarray
    p_v: np.ndarray
    rho: np.ndarray
    flow: np.ndarray
    p_abs: np.ndarray
    npsha: np.ndarray
    npsh3: np.ndarray
    speed: np.ndarray | None
    baro: np.ndarray
    baro_used: np.ndarray
    line_flow: np.ndarray | None = None


def _decide_running(pump: PumpSpec, timeline: Timeline, settings: Settings) -> _Running:
    """Running or stopped: the run status, else flow [m³/s] (and speed [rpm]) against their
    fractions of BEP flow and rated speed. A running piece needs all the pump's own tags, and
    on a shared suction line the line's total flow (:mod:`screening.engine.lineflow`)."""
    held, folds = timeline.held, timeline.folds
    running = lineflow.is_running(
        held.get("run"), held["flow"], held.get("speed"), pump.bep_flow, pump.rated_speed,
        settings.min_flow_fraction, settings.min_speed_fraction,
    )  # fmt: skip
    decide_bad, decide_until = folds.decide_bad, folds.decide_until
    all_bad, all_until = folds.all_bad, folds.all_until
    line_q = None
    if pump.shared_line is not None:
        line_q, bad, until = lineflow.line_flow(
            pump, held, timeline.grid, settings.min_flow_fraction, settings.min_speed_fraction
        )
        all_bad = all_bad | bad
        all_until = np.minimum(all_until, until)
    return _Running(running, decide_bad, decide_until, all_bad, all_until, line_q)


def _barometric(barometer, grid, settings: Settings) -> tuple[np.ndarray, np.ndarray]:
    """Barometric pressure [Pa] on each piece and whether the barometer gave it: the barometer
    where fresh and within ``settings.barometer_tolerance`` [Pa] of the standard atmosphere at
    the site elevation (U.S. Standard Atmosphere 1976), else that atmosphere. A reading
    corrected to sea level (some historians store it so) at a site 1500 m up is 16.8 kPa too
    high and would raise NPSHa by about 1.7 m of water: it is not used."""
    p_std = _standard_pressure(settings.site_elevation)  # US Standard Atmosphere 1976
    baro = np.full(len(grid), p_std)
    baro_used = np.zeros(len(grid), dtype=bool)
    if barometer is not None and len(barometer.times):
        hb = Held(barometer, grid, int(round(settings.barometer_stale_limit * 1e9)))
        with np.errstate(invalid="ignore"):
            near = np.abs(hb.value - p_std) <= settings.barometer_tolerance
        fresh = ~hb.bad & (hb.until > grid) & near
        baro = np.where(fresh, hb.value, p_std)
        baro_used = fresh
    return baro, baro_used


def _evaluate(pump, curve, table, timeline: Timeline, barometer, settings, run) -> _Physics:
    """NPSHa and NPSH3 [m] on each piece (pure functions of SI arrays): NPSHa by ISO 9906 from a
    transmitter or ANSI/HI 1.3 from a vessel, NPSH3 by the affinity laws (see
    :mod:`screening.physics.npsh`, :mod:`screening.physics.suction`,
    :mod:`screening.physics.curves`)."""
    held = timeline.held
    baro, baro_used = _barometric(barometer, timeline.grid, settings)
    temp = held["temperature"].value
    p_v, rho = table.properties(temp)
    flow = held["flow"].value
    if pump.source == "transmitter":
        # npsh.absolute_pressure and npsh.npsha_from_pressure in one compiled pass, the same
        # bits (tests/test_calc_kernels.py)
        p_abs, npsha = transmitter_npsha(
            held["suction"].value, baro, bool(pump.gauge), p_v, rho, flow,
            float(npsh.pipe_area(pump.tap_bore)), float(pump.tap_elevation),
        )  # fmt: skip
        # a vertical can from its nozzle to the impeller eye (register; counted once); none
        # registered: no loss (subtracting zeros would change no number)
        if pump.can_loss_k is not None:
            npsha = npsha - suction.can_loss(pump.can_loss_k, flow)
    else:
        p_abs, npsha = _vessel_npsha(
            pump, held, baro, p_v, rho, flow, temp, table.fluid, run.line_flow
        )
    speed = held["speed"].value if "speed" in held else None
    npsh3 = curve.at_speed(flow, speed, pump.rated_speed, pump.npsh3_exponent)
    return _Physics(
        temp, p_v, rho, flow, p_abs, npsha, npsh3, speed, baro, baro_used, run.line_flow
    )


def _classify_margin(phys: _Physics, run: _Running, guidance: Guidance, settings: Settings):
    """The margin state of each piece (:func:`screening.physics.margin.margin_band`; off the
    curve, bad data, stopped), the time until which it holds [ns], and which pieces are bad
    data. An absolute pressure at or below zero (a gauge reading below the local vacuum) is
    impossible: bad data, not a number in the results. One compiled pass
    (:func:`screening.base.calc_kernels.margin_codes`)."""
    return margin_codes(
        phys.npsha, phys.npsh3, _flat(phys.p_abs, len(phys.npsha)), run.running,
        run.decide_bad, run.all_bad, run.all_until, run.decide_until, guidance.ratio,
        guidance.margin, settings.ample_ratio, (states.OFF_CURVE, states.BAD_DATA, states.STOPPED),
    )  # fmt: skip


def _classify_region(pump, curve, folds, phys: _Physics, run: _Running, settings: Settings):
    """The operating region of each piece (flow [m³/s] against the region edges at the running
    speed, :func:`screening.physics.regions.operating_region`) and the time until which it
    holds [ns]: needs only the run decision, flow and speed (``folds``: the timeline's, whose
    region flags are those of the deciding tags, flow and speed). One compiled pass
    (:func:`screening.base.calc_kernels.region_codes`)."""
    edges = pump_region_edges(pump, curve.flow_max, phys.speed, settings.min_stable_flow_fraction)
    n = len(phys.flow)
    return region_codes(
        phys.flow, tuple(_flat(e, n) for e in edges), run.running, run.decide_bad,
        folds.region_bad, folds.region_until, run.decide_until, (regions.PREFERRED,
        regions.LOW_FLOW, regions.BELOW_MIN_FLOW, regions.HIGH_FLOW, regions.BEYOND_ALLOWABLE,
        regions.BAD_DATA, regions.STOPPED),
    )  # fmt: skip


def _summarise(
    pump, curve, guidance, settings, timeline, run, phys, margin, region, start_ns, end_ns,
    day_edges, keep_series, plot_buckets, ends=None,
) -> PumpResult:  # fmt: skip
    """Time weighting: the fresh part of each piece has its state, the rest has no data;
    hours [h] per state, day and region, the worst ratio and the optional plot data and
    series."""
    code, until, all_bad = margin
    rcode, r_until = region
    grid, t_next = timeline.grid, timeline.t_next
    n_m, n_r = len(states.STATES), len(regions.REGIONS)
    speed_ratio = None if phys.speed is None else phys.speed / pump.rated_speed
    no = np.empty(0, dtype=bool)
    baro = (run.running, all_bad, phys.baro_used) if pump.needs_barometer else (no, no, no)
    daily, r_daily, fresh, r_fresh, summary, outside, fallback = piece_sums(
        (code, until), (rcode, r_until), grid, t_next, day_edges, (n_m, n_r, states.NO_DATA),
        (phys.npsha, phys.npsh3, _flat(phys.p_abs, len(grid)), phys.p_v),
        np.empty(0) if speed_ratio is None else speed_ratio, baro,
        (guidance.ratio, guidance.margin, *settings.speed_scaling_range, states.AMPLE_MARGIN,
         states.OFF_CURVE, states.STOPPED),
    )  # fmt: skip
    worst, least_m, least_g, below_ns, below_first = summary
    daily, r_daily = daily / NS_PER_HOUR, r_daily / NS_PER_HOUR
    result = PumpResult(pump.pump_id, daily.sum(axis=0), daily, (end_ns - start_ns) / NS_PER_HOUR)
    result.region_daily = r_daily
    result.region_hours = r_daily.sum(axis=0)
    if speed_ratio is not None:
        result.speed_outside_hours = float(outside / NS_PER_HOUR)
    if worst >= 0:
        # the least margins in metres too: a ratio alone hides how little head is left on a
        # small NPSH3
        result.worst_ratio = float(phys.npsha[worst] / phys.npsh3[worst])
        result.worst_time = pd.Timestamp(int(grid[worst]), tz="UTC")
        result.worst_margin_m, result.worst_guidance_margin_m = least_m, least_g
    if below_first >= 0:
        # running with p_abs < p_v: the liquid would be boiling, impossible in steady flow,
        # so a transmitter, its reference or the temperature is wrong (counted in its margin
        # state as computed, below NPSH3 as a rule, and flagged)
        result.below_vapour_hours = float(below_ns / NS_PER_HOUR)
        result.below_vapour_first = pd.Timestamp(int(grid[below_first]), tz="UTC")
    right = None if ends is None else (ends.npsha, ends.npsh3)
    result.severity = severity.severity(
        grid, t_next, fresh, code, (phys.npsha, phys.npsh3), guidance, right
    )
    if pump.needs_barometer:
        result.baro_fallback_hours = float(fallback / NS_PER_HOUR)
    ratio = phys.npsha / phys.npsh3 if plot_buckets or keep_series else None
    if plot_buckets:
        ratio_n = np.ones(len(grid)) if speed_ratio is None else speed_ratio
        result.plot, result.points = _plot_data(
            pump, curve, guidance, timeline, run, phys, code, all_bad, fresh, ratio, ratio_n,
            start_ns, end_ns, plot_buckets,
        )  # fmt: skip
    if keep_series:
        result.series = _series_frame(pump, timeline, run, phys, code, rcode, fresh, r_fresh, ratio)
    return result


def _plot_data(
    pump, curve, guidance, timeline, run, phys, code, all_bad, fresh, ratio, ratio_n, start_ns,
    end_ns, plot_buckets,
):  # fmt: skip
    """The report's plot data: minimum and maximum per time bucket of the SI series, and the
    operating-point histogram (flow [m³/s] against NPSHa [m], weighted by hours)."""
    held, grid = timeline.held, timeline.grid
    npsha, npsh3, speed, flow = phys.npsha, phys.npsh3, phys.speed, phys.flow
    guide = guidance.head(npsh3)
    on = run.running & ~all_bad
    series = {
        "npsha_m": np.where(on, npsha, np.nan),
        "npsh3_m": np.where(on, npsh3, np.nan),
        "guidance_m": np.where(on, guide, np.nan),
        "ratio": np.where(on, ratio, np.nan),
        "temperature_k": np.where(held["temperature"].bad, np.nan, phys.temp),
        "flow_m3_s": np.where(held["flow"].bad, np.nan, flow),
        # 1 where the piece is stopped or bad data: the pump page shades those buckets
        "stopped": (code == states.STOPPED).astype(np.float64),
        "bad_data": (code == states.BAD_DATA).astype(np.float64),
    }
    if pump.source == "transmitter":
        series["suction_pressure_abs_pa"] = np.where(held["suction"].bad, np.nan, phys.p_abs)
    else:
        series["level_m"] = np.where(held["level"].bad, np.nan, held["level"].value)
    if speed is not None:
        series["speed_rpm"] = np.where(held["speed"].bad, np.nan, speed)
    plot = plotdata.min_max_buckets(grid, fresh, series, start_ns, end_ns, plot_buckets)
    banded = code <= states.AMPLE_MARGIN
    points = plotdata.operating_points(
        np.where(banded, flow, np.nan), np.where(banded, npsha, np.nan),
        fresh / NS_PER_HOUR, curve.flow_max * (1 if speed is None else np.nanmax(
            np.append(ratio_n[banded], 1.0))),
    )  # fmt: skip
    return plot, points


def _series_frame(pump, timeline, run, phys, code, rcode, fresh, r_fresh, ratio) -> pd.DataFrame:
    """The per-piece series (SI columns) kept for the onset and what-if analyses."""
    running, speed = run.running, phys.speed
    frame = pd.DataFrame(
        {
            "time": pd.to_datetime(timeline.grid, utc=True),
            "hours": fresh / NS_PER_HOUR,
            "state": pd.Categorical.from_codes(code, categories=list(states.STATES)),
            "region": pd.Categorical.from_codes(rcode, categories=list(regions.REGIONS)),
            "region_hours": r_fresh / NS_PER_HOUR,
            "npsha_m": np.where(running, phys.npsha, np.nan),
            "npsh3_m": np.where(running, phys.npsh3, np.nan),
            "ratio": np.where(running, ratio, np.nan),
            "suction_pressure_abs_pa": phys.p_abs if pump.source == "transmitter" else np.nan,
            "temperature_k": phys.temp,
            "flow_m3_s": phys.flow,
            "speed_rpm": speed if speed is not None else np.nan,
            "barometric_pa": phys.baro,
        }
    )
    if pump.source != "transmitter":
        # surface pressure (p_v for a saturated vessel) and level of a vessel-fed pump
        frame["surface_pressure_abs_pa"] = phys.p_abs
        frame["level_m"] = timeline.held["level"].value
    if phys.line_flow is not None:
        frame["line_flow_m3_s"] = phys.line_flow  # a shared suction line's total flow
    return frame
