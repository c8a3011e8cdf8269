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

import numpy as np
import pandas as pd

from screening.base.states import BANDS
from screening.engine.drivers import driver_shares, drivers_for
from screening.engine.scan import scan
from screening.inputs.plant import Plant, load_plant
from screening.inputs.window import local_day_starts, window_bounds
from screening.onset import changepoint as cp
from screening.onset import episodes as ep
from screening.physics.properties import fluid_table


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


def _baseline(plant: Plant, start, end, baseline) -> tuple[pd.Timestamp, pd.Timestamp]:
    if baseline is None:
        span = min(pd.Timedelta(days=plant.settings.onset.baseline_days), (end - start) / 4)
        return start, start + span
    a, b = baseline.split("..") if isinstance(baseline, str) else baseline
    return window_bounds(plant, a, b)


def _residual(series: pd.DataFrame, base: np.ndarray) -> np.ndarray:
    """NPSHa minus what the baseline predicts at the same flow and temperature [m].

    Baseline model: least squares NPSHa ≈ c0 + c1·Q² + c2·T on the baseline's running pieces
    (velocity head and friction go with Q², vapour pressure with T), a documented choice.
    """
    a = series["npsha_m"].to_numpy(dtype=np.float64)
    q = series["flow_m3_s"].to_numpy(dtype=np.float64)
    t = series["temperature_k"].to_numpy(dtype=np.float64)
    ok = np.isfinite(a) & np.isfinite(q) & np.isfinite(t) & (series["hours"].to_numpy() > 0)
    fit = ok & base
    x = np.column_stack([np.ones(fit.sum()), q[fit] ** 2, t[fit]])
    coef, *_ = np.linalg.lstsq(x, a[fit], rcond=None)
    pred = coef[0] + coef[1] * q**2 + coef[2] * t
    return np.where(ok, a - pred, np.nan)


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
        Failure date: exposure in the 30, 90 and 180 days before it, and a year earlier.
    baseline : str "FROM..TO" or (from, to), optional
        Baseline period; default the first ``[onset] baseline_days`` of the window (21, at
        most a quarter of the window).
    enter_below, leave_above : float, optional
        Episode hysteresis on NPSHa / guidance head [-]: enter below, leave above.
    min_duration_h, bridge_gap_h : float, optional
        Shortest episode kept [h]; gaps shorter than this are bridged [h].

    Episode settings left as None come from the plant file's ``[onset]`` table (see
    :class:`screening.inputs.config.Onset` for the defaults).
    """
    plant = config if isinstance(config, Plant) else load_plant(config)
    rules = plant.settings.onset
    enter_below = rules.enter_below if enter_below is None else enter_below
    leave_above = rules.leave_above if leave_above is None else leave_above
    min_duration_h = rules.min_hours if min_duration_h is None else min_duration_h
    bridge_gap_h = rules.bridge_hours if bridge_gap_h is None else bridge_gap_h
    result = _scan_pump(plant, pump_id, start, end)
    series = result.series[pump_id]
    pump = plant.pumps[pump_id]
    curve = plant.curves[pump.curve_id]
    g = plant.guidance[pump_id]
    base_a, base_b = _baseline(plant, result.start, result.end, baseline)
    base, known = _baseline_pieces(series, pump_id, base_a, base_b)

    # hours per day or week
    daily = _daily_hours(result.daily)
    period, table = _hours_per_period(daily, result.start, result.end)
    eps = _guidance_episodes(series, g, enter_below, leave_above, min_duration_h, bridge_gap_h)
    notes = _baseline_notes(series, base & known)
    drivers, shares, names = _drivers_by_day(plant, pump, curve, series, base)
    eps = _episode_drivers(eps, shares, names)
    daily_resid, exposure = _onset_series(plant, series, base, daily, failed_on)
    onset, onset_exposure, ramp = _change_points(rules, daily_resid, exposure)

    before = None
    if failed_on is not None:
        before = ep.exposure_before(daily, pd.Timestamp(failed_on))
    finding = _finding(pump_id, onset, onset_exposure, drivers, eps, before, ramp)
    return OnsetResult(
        pump_id, result.start, result.end, period, table, eps, drivers, onset, onset_exposure,
        before, finding, (base_a, base_b), notes,
        pd.Timestamp(failed_on) if failed_on is not None else None, ramp, plant.timezone,
    )  # fmt: skip


def _scan_pump(plant: Plant, pump_id: str, start, end):
    """Scan one pump over the window keeping its per-piece series; a clear error if it can't."""
    if pump_id not in plant.pumps:
        raise ValueError(
            f"pump {pump_id!r} cannot be investigated: "
            + plant.problems.get(pump_id, "not in the register")
        )
    result = scan(plant, start, end, pumps=[pump_id], keep_series=True)
    if pump_id not in result.series:
        raise ValueError(f"pump {pump_id}: {result.problems['message'].iloc[0]}")
    return result


def _baseline_pieces(
    series: pd.DataFrame, pump_id: str, base_a: pd.Timestamp, base_b: pd.Timestamp
) -> tuple[np.ndarray, np.ndarray]:
    """Masks of the pieces in the baseline and of those running with a known margin."""
    times = series["time"]
    base = ((times >= base_a) & (times < base_b)).to_numpy()
    known = series["state"].isin(BANDS).to_numpy() & (series["hours"].to_numpy() > 0)
    if not (base & known).any():
        raise ValueError(
            f"pump {pump_id}: the baseline {base_a} to {base_b} (UTC) has no running sample with "
            "a known margin; choose a baseline when the pump ran (--baseline FROM..TO)"
        )
    return base, known


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


def _guidance_episodes(
    series: pd.DataFrame, g, enter_below, leave_above, min_duration_h, bridge_gap_h
) -> pd.DataFrame:
    """Episodes below the guidance head (thresholds [-] on NPSHa/guidance, durations [h])."""
    # episodes below the guidance, with hysteresis
    times = series["time"]
    npsha = series["npsha_m"].to_numpy(dtype=np.float64)
    guide = g.head(series["npsh3_m"].to_numpy(dtype=np.float64))
    with np.errstate(invalid="ignore", divide="ignore"):
        r_guide = npsha / guide
    return ep.find_episodes(
        times.astype("int64").to_numpy() if times.dtype.kind == "M" else times.to_numpy(),
        series["hours"].to_numpy(), r_guide, enter_below, leave_above, min_duration_h,
        bridge_gap_h,
    )  # fmt: skip


def _baseline_notes(series: pd.DataFrame, usable: np.ndarray) -> list[str]:
    """A note when the baseline holds less than a week of running hours with a known margin."""
    notes: list[str] = []
    base_hours = float(series["hours"].to_numpy()[usable].sum())
    if base_hours < 7 * 24:
        notes.append(
            f"the baseline holds only {base_hours:.0f} running hours with a known margin; "
            "its medians and the flow-normalised fit rest on little data"
        )
    return notes


def _drivers_by_day(plant: Plant, pump, curve, series: pd.DataFrame, base: np.ndarray):
    """Each driver's share of the margin change [m], time-weighted per site day, and the shares."""
    # drivers over time: one input at a time put back at its baseline value
    names = drivers_for(pump)
    shares = driver_shares(series, pump, curve, fluid_table(pump.fluid, pump.vapour_pressure), base)
    shares["date"] = local_day_starts(shares["time"], plant.timezone)
    w = shares["hours"]
    cols = ["change_m"] + [f"{k}_m" for k in names] + ["interaction_m"]
    weighted = shares[cols].mul(w, axis=0).assign(date=shares["date"], hours=w)
    grouped = weighted.groupby("date").sum()
    drivers = grouped[cols].div(grouped["hours"].replace(0, np.nan), axis=0).reset_index()
    return drivers, shares, names


def _onset_series(
    plant: Plant, series: pd.DataFrame, base: np.ndarray, daily: pd.DataFrame, failed_on
) -> tuple[pd.Series, pd.Series]:
    """Daily median flow-normalised residual [m] and daily hours below guidance [h]."""
    # onset: change point in the flow-normalised suction condition and in the exposure rate
    times = series["time"]
    resid = _residual(series, base)
    rs = pd.DataFrame({"date": local_day_starts(times, plant.timezone), "r": resid})
    daily_resid = rs.dropna().groupby("date")["r"].median()
    exposure = daily.set_index("date")["below_guidance_h"]
    if failed_on is not None:
        # what happened at and after the failure (repair, cleaning) is not the onset
        cut = pd.Timestamp(failed_on).tz_localize(None).normalize()
        daily_resid = daily_resid[daily_resid.index.tz_localize(None) < cut]
        exposure = exposure[exposure.index < cut]
    return daily_resid, exposure


def _change_points(rules, daily_resid: pd.Series, exposure: pd.Series) -> tuple[dict, dict, dict]:
    """Onset by a step in the residual [m], a step in exposure [h], a ramp in the residual."""
    onset = cp.estimate_onset(
        pd.to_datetime(daily_resid.index).tz_localize(None), daily_resid.to_numpy(),
        min_change=rules.min_margin_change,
    )  # fmt: skip
    onset_exposure = cp.estimate_onset(
        exposure.index, exposure.to_numpy(), min_change=rules.min_exposure_change
    )
    # a slow drift (a fouling strainer) is a ramp: where a hinge fits the margin better than a
    # step, the decline's start is the onset (see changepoint.estimate_ramp_onset)
    ramp = cp.estimate_ramp_onset(
        pd.to_datetime(daily_resid.index).tz_localize(None), daily_resid.to_numpy(),
        min_change=rules.min_margin_change,
    )  # fmt: skip
    ramp["chosen"] = bool(
        ramp["onset"] is not None and ramp["slope"] < 0 and ramp["sse"] < ramp["sse_step"]
    )
    return onset, onset_exposure, ramp


def _episode_drivers(eps: pd.DataFrame, shares: pd.DataFrame, names) -> pd.DataFrame:
    """Add each driver's time-weighted mean margin change [m] inside every episode."""
    out = eps.copy()
    t = shares["time"]
    w_all = shares["hours"].to_numpy()
    for k in names:
        values = []
        for e in eps.itertuples(index=False):
            inside = ((t >= e.start) & (t < e.end)).to_numpy()
            w = w_all[inside]
            v = shares[f"{k}_m"].to_numpy()[inside]
            values.append(float(np.sum(w * v) / np.sum(w)) if w.sum() > 0 else np.nan)
        out[f"{k}_m"] = pd.Series(values, index=out.index, dtype=float)
    return out


def _finding(pump_id, onset, onset_exposure, drivers, eps, before, ramp=None) -> str:
    when = onset.get("onset") or onset_exposure.get("onset")
    if ramp and ramp.get("chosen"):
        text = (
            f"{pump_id}: the suction margin began to decline gradually from about "
            f"{pd.Timestamp(ramp['onset']):%Y-%m-%d}"
        )
        if ramp.get("interval"):
            lo, hi = ramp["interval"]
            text += f" (between {pd.Timestamp(lo):%Y-%m-%d} and {pd.Timestamp(hi):%Y-%m-%d})"
        text += f", by {-ramp['slope']:.3f} m a day"
    elif when is None:
        text = f"{pump_id}: no lasting change in suction margin found in the window"
    else:
        text = f"{pump_id}: the suction margin fell from about {pd.Timestamp(when):%Y-%m-%d}"
        lo, hi = onset.get("interval", (None, None)) if onset.get("onset") else (None, None)
        if lo is not None:
            text += f" (between {pd.Timestamp(lo):%Y-%m-%d} and {pd.Timestamp(hi):%Y-%m-%d})"
    if when is not None or (ramp and ramp.get("chosen")):
        if len(drivers):
            late = drivers.tail(max(1, len(drivers) // 4))
            names = [c[:-2] for c in drivers.columns if c not in ("date", "change_m",
                                                                  "interaction_m")]  # fmt: skip
            shares = {k: float(late[f"{k}_m"].mean()) for k in names}
            worst = min(shares, key=shares.get)
            if shares[worst] < 0:
                text += f", mostly from {worst.replace('_', ' ')} ({shares[worst]:+.2f} m)"
    text += f"; {len(eps)} episode(s) below the guidance"
    if before is not None and len(before):
        # the longest span the data cover (NaN where a span reaches outside the window)
        covered = before.dropna(subset=["below_guidance_h"])
        if len(covered):
            row = covered.iloc[-1]
            text += (
                f"; {row['below_guidance_h']:.1f} h below guidance in the "
                f"{int(row['span_days'])} days before the failure"
            )
    return text + "."
