"""When did it begin: onset investigation of one pump over a long window.

``screening.investigate(config, pump_id, start, end, failed_on=None, baseline=None)`` runs the
scan's calculator on one pump, then builds: hours per day (or week, for windows over 120 days)
in each margin band and region, cumulative exposure, episodes below the guidance with
hysteresis, the margin lost against a baseline split by input (:mod:`screening.engine.drivers`), the
onset estimated by a change-point method on the flow-normalised suction condition and on the
exposure rate (:mod:`screening.onset.episodes`), and, with a failure date, the exposure before it.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

from screening.engine.scan import scan
from screening.inputs.events import FAILURE, MAINTENANCE, events_for
from screening.inputs.plant import Plant, load_plant
from screening.inputs.window import check_iso, window_bounds
from screening.onset import changepoint as cp
from screening.onset import episodes as ep
from screening.onset import evidence, streamed
from screening.onset.finding import plain_finding


@dataclass
class OnsetResult:
    """Tables of an onset investigation (SI; hours in [h], margins in [m])."""

    pump_id: str
    start: pd.Timestamp
    end: pd.Timestamp
    period: str  # "day" or "week"
    hours: pd.DataFrame  # period, below_npsh3_h, below_guidance_h, running_h, cumulative
    episodes: pd.DataFrame
    drivers: pd.DataFrame  # period, mean margin change per driver [m]
    onset: dict
    onset_exposure: dict
    before_failure: pd.DataFrame | None
    finding: str
    baseline: tuple[pd.Timestamp, pd.Timestamp]
    notes: list[str] = field(default_factory=list)
    failed_on: pd.Timestamp | None = None
    ramp: dict = field(default_factory=dict)
    timezone: str = "UTC"  # the site's, for display
    #: date, residual_m: the daily flow-normalised suction condition the onset is sought in [m]
    daily: pd.DataFrame = field(default_factory=pd.DataFrame)
    #: the pump's known events in the window (UTC; :mod:`screening.inputs.events`)
    events: pd.DataFrame = field(default_factory=pd.DataFrame)
    #: the onset is sought from here (the window's start, or the last maintenance before the
    #: failure or the window's end) [UTC]
    search_from: pd.Timestamp | None = None
    #: where --failed-on came from: "given", "event" or None
    failed_on_source: str | None = None
    #: a step in the daily margin change itself (temperature, flow and suction together) [m]
    onset_margin: dict = field(default_factory=dict)
    #: the driver shares [m] on the days the onset was sought in (what the finding speaks of)
    sought_drivers: pd.DataFrame = field(default_factory=pd.DataFrame)

    def finding_in(self, length_unit: str = "m") -> str:
        """The finding with its lengths in ``length_unit`` (``m`` or ``ft``); ``finding`` is
        the same text in metres."""
        found = {"step": self.onset, "ramp": self.ramp, "margin": self.onset_margin,
                 "exposure": self.onset_exposure}  # fmt: skip
        return plain_finding(self.pump_id, found, self.sought_drivers, self.episodes,
                             self.before_failure, length_unit)  # fmt: skip


def _baseline(plant: Plant, start, end, baseline) -> tuple[pd.Timestamp, pd.Timestamp]:
    """The baseline period [UTC]: given, or the first ``baseline_days`` (at most a quarter) of
    the span [start, end) the onset is sought in."""
    if baseline is None:
        span = min(pd.Timedelta(days=plant.settings.onset.baseline_days), (end - start) / 4)
        return start, start + span
    a, b = baseline.split("..") if isinstance(baseline, str) else baseline
    return window_bounds(plant, a, b)


def investigate(
    config,
    pump_id: str,
    start,
    end,
    failed_on=None,
    baseline=None,
    enter_below: float | None = None,
    leave_above: float | None = None,
    min_duration_h: float | None = None,
    bridge_gap_h: float | None = None,
) -> OnsetResult:
    """Investigate when a pump's margin trouble began.

    Parameters
    ----------
    config : str, Path or Plant
        The plant file or a loaded plant.
    pump_id : str
    start, end : str or Timestamp
        Window (site time unless an offset is given).
    failed_on : str or Timestamp, optional
        Failure date: exposure in the 30, 90 and 180 days before it, and a year earlier; the
        onset is sought before it. Default: the last failure among the pump's known events in
        the window (``[register] events``), if any. A date outside the window is an error.
    baseline : str "FROM..TO" or (from, to), optional
        Baseline period; default the first ``[onset] baseline_days`` (21, at most a quarter)
        of the span the onset is sought in: from the window's start, or from the last
        maintenance event before the failure (or the window's end).
    enter_below, leave_above : float, optional
        Episode hysteresis on NPSHa / guidance head [-]: enter below, leave above.
    min_duration_h, bridge_gap_h : float, optional
        Shortest episode kept [h]; gaps shorter than this are bridged [h].

    Episode settings left as None come from the plant file's ``[onset]`` table (see
    :class:`screening.inputs.config.Onset` for the defaults).

    Raises
    ------
    ValueError
        For an unknown pump, a failure date outside the window, a window without a running
        sample with a known margin, or a baseline without one.
    """
    plant = config if isinstance(config, Plant) else load_plant(config)
    rules = plant.settings.onset
    enter_below = rules.enter_below if enter_below is None else enter_below
    leave_above = rules.leave_above if leave_above is None else leave_above
    min_duration_h = rules.min_hours if min_duration_h is None else min_duration_h
    bridge_gap_h = rules.bridge_hours if bridge_gap_h is None else bridge_gap_h
    win = window_bounds(plant, start, end)
    events, failed_on, source = _failure_date(plant, pump_id, win, failed_on)
    _check_pump(plant, pump_id)
    cut = win[1] if failed_on is None else failed_on
    search_from = _after_maintenance(events, win[0], cut)
    base_a, base_b = _baseline(plant, search_from, cut, baseline)
    eps_rules = (enter_below, leave_above, min_duration_h, bridge_gap_h)
    asked = ((base_a, base_b), search_from, cut, eps_rules)
    if streamed.in_chunks(plant, pump_id, win):  # one-second data: bounded memory
        result, ev = streamed.investigate_in_chunks(plant, pump_id, win, *asked)
    else:
        result = _scan_pump(plant, pump_id, start, end)
        ev = evidence.whole_series(plant, pump_id, result, *asked)
    eps, drivers, notes, daily_resid = ev["episodes"], ev["drivers"], ev["notes"], ev["resid"]
    # hours per day or week
    daily = _daily_hours(result.daily)
    period, table = _hours_per_period(daily, result.start, result.end)
    daily_resid, exposure = _sought(plant, daily_resid, daily, search_from, cut)
    found = _change_points(rules, daily_resid, exposure, drivers)
    daily_table = found.pop("daily")
    before = None
    if failed_on is not None:
        before = ep.exposure_before(daily, failed_on.tz_convert(plant.timezone).tz_localize(None))
    sought = drivers[pd.to_datetime(drivers["date"]).dt.tz_localize(None).isin(daily_table["date"])]
    finding = plain_finding(pump_id, found, sought, eps, before)
    notes += _event_notes(events, source, failed_on, search_from, result.start, plant.timezone)
    return OnsetResult(
        pump_id, result.start, result.end, period, table, eps, drivers, found["step"],
        found["exposure"], before, finding, (base_a, base_b), notes, failed_on, found["ramp"],
        plant.timezone, daily_table, events, search_from, source, found["margin"], sought,
    )  # fmt: skip


def _failure_date(plant: Plant, pump_id: str, win, failed_on):
    """The pump's events in the window and the failure instant [UTC] with its source: given
    (checked to lie in the window), else the last failure event in the window, else None."""
    start, end = win
    pump = plant.pumps.get(pump_id)
    area = pump.area if pump is not None else ""
    events = events_for(plant.events, pump_id, area, start, end)
    if failed_on is None:
        failures = events[events["kind"] == FAILURE]
        if failures.empty:
            return events, None, None
        return events, failures["time"].iloc[-1], "event"
    when = pd.Timestamp(check_iso(failed_on, "--failed-on") if isinstance(failed_on, str)
                        else failed_on)  # fmt: skip
    when = when.tz_localize(plant.timezone) if when.tzinfo is None else when
    when = when.tz_convert("UTC")
    local = "{:%Y-%m-%d %H:%M}".format
    if not start < when <= end:
        side = "after the window's end" if when > end else "at or before the window's start"
        raise ValueError(
            f"failure date {local(when.tz_convert(plant.timezone))} is {side} "
            f"({local(start.tz_convert(plant.timezone))} to "
            f"{local(end.tz_convert(plant.timezone))}, {plant.timezone}): the onset is sought "
            "before the failure inside the window; widen the window (--from/--to) or check "
            "--failed-on"
        )
    return events, when, "given"


def _after_maintenance(events: pd.DataFrame, start: pd.Timestamp, cut: pd.Timestamp):
    """Where the onset is sought from [UTC]: the last maintenance event before ``cut``, else
    the window's start (work on the pump resets its suction condition)."""
    work = events[events["kind"].isin(MAINTENANCE) & (events["time"] < cut)]
    return max(start, work["time"].iloc[-1]) if len(work) else start


def _event_notes(events, source, failed_on, search_from, start, tz) -> list[str]:
    """Notes on the page about what the known events changed."""
    notes = []
    local = lambda ts: f"{pd.Timestamp(ts).tz_convert(tz):%Y-%m-%d %H:%M}"  # noqa: E731
    if source == "event":
        notes.append(f"failure date {local(failed_on)} taken from the known events")
    if search_from > start:
        notes.append(
            f"the onset is sought after the last maintenance ({local(search_from)}); the "
            "baseline starts there"
        )
    return notes


def _check_pump(plant: Plant, pump_id: str) -> None:
    """A clear error for a pump that is not in the register or could not be read from it."""
    if pump_id not in plant.pumps:
        raise ValueError(
            f"pump {pump_id!r} cannot be investigated: "
            + plant.problems.get(pump_id, "not in the register")
        )


def _scan_pump(plant: Plant, pump_id: str, start, end):
    """Scan one pump over the window keeping its per-piece series; a clear error if it can't."""
    result = scan(plant, start, end, pumps=[pump_id], keep_series=True)
    evidence.scanned_or_raise(result, pump_id)
    return result


def _daily_hours(scan_daily: pd.DataFrame) -> pd.DataFrame:
    """Hours per day [h] below NPSH3, below guidance and running, from the scan's daily table."""
    d = scan_daily[(scan_daily.kind == "margin")]
    wide = d.pivot(index="date", columns="state", values="hours")
    return pd.DataFrame(
        {
            "date": pd.to_datetime(wide.index),
            "below_npsh3_h": wide["below_npsh3"].to_numpy(),
            "below_guidance_h": (wide["below_npsh3"] + wide["below_guidance"]).to_numpy(),
            "running_h": wide[["below_npsh3", "below_guidance", "meets_guidance",
                               "ample_margin", "off_curve"]].sum(axis=1).to_numpy(),
        }
    )  # fmt: skip


def _hours_per_period(
    daily: pd.DataFrame, start: pd.Timestamp, end: pd.Timestamp
) -> tuple[str, pd.DataFrame]:
    """The daily hours [h] summed by week for windows over 120 days, with cumulative exposure."""
    period = "week" if (end - start) > pd.Timedelta(days=120) else "day"
    table = daily
    if period == "week":
        table = daily.resample("W-MON", on="date", label="left", closed="left").sum()
        table = table.reset_index()
    return period, ep.cumulative_exposure(table)


def _sought(plant: Plant, daily_resid, daily: pd.DataFrame, since, cut):
    """The daily residual [m] and the daily hours below guidance [h] on the days sought."""
    # what happened at and after the failure (repair, cleaning) is not the onset; before the
    # last maintenance neither
    lo = pd.Timestamp(since).tz_convert(plant.timezone).tz_localize(None).normalize()
    hi = pd.Timestamp(cut).tz_convert(plant.timezone).tz_localize(None)
    exposure = daily.set_index("date")["below_guidance_h"]
    exposure = exposure[(exposure.index >= lo) & (exposure.index < hi.normalize())]
    idx = pd.to_datetime(daily_resid.index).tz_localize(None)
    daily_resid = daily_resid[(idx >= lo) & (idx < hi.normalize())]
    return daily_resid, exposure


def _margin_series(drivers: pd.DataFrame, days: pd.Index) -> pd.Series:
    """The daily time-weighted margin change against the baseline [m] on the days sought."""
    m = drivers.set_index(pd.to_datetime(drivers["date"]).dt.tz_localize(None))["change_m"]
    return m.reindex(pd.to_datetime(days).tz_localize(None)).dropna()


def _change_points(rules, daily_resid: pd.Series, exposure: pd.Series, drivers) -> dict:
    """Onset by a step in the residual [m], a ramp in it, a step in the margin change [m] and
    a step in exposure [h/day]; ``daily`` the daily table the page draws."""
    days = pd.to_datetime(daily_resid.index).tz_localize(None)
    onset = cp.estimate_onset(days, daily_resid.to_numpy(), min_change=rules.min_margin_change)
    onset_exposure = cp.estimate_onset(
        exposure.index, exposure.to_numpy(), min_change=rules.min_exposure_change
    )
    # a slow drift (a fouling strainer) is a ramp: where a hinge fits the margin better than a
    # step, the decline's start is the onset (see changepoint.estimate_ramp_onset)
    ramp = cp.estimate_ramp_onset(days, daily_resid.to_numpy(), min_change=rules.min_margin_change)
    ramp["chosen"] = bool(
        ramp["onset"] is not None and ramp["slope"] < 0 and ramp["sse"] < ramp["sse_step"]
    )
    # a change the normalisation explains (a hotter liquid) still moves the margin itself
    margin = _margin_series(drivers, daily_resid.index)
    onset_margin = cp.estimate_onset(
        margin.index, margin.to_numpy(), min_change=rules.min_margin_change
    )
    daily = pd.DataFrame({"date": days, "residual_m": daily_resid.to_numpy()})
    daily["margin_change_m"] = margin.reindex(days).to_numpy()
    return {"step": onset, "ramp": ramp, "margin": onset_margin, "exposure": onset_exposure,
            "daily": daily}  # fmt: skip
