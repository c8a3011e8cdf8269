"""When did it begin: onset investigation of one pump over a long window.

``screening.investigate(config, pump_id, start, end, failed_on=None, baseline=None)`` runs the
scan's calculator on one pump, then builds: hours per day (or week, for windows over 120 days)
in each margin band and region, cumulative exposure, episodes below the guidance with
hysteresis, the margin lost against a baseline split by input (:mod:`screening.drivers`), the
onset estimated by a change-point method on the flow-normalised suction condition and on the
exposure rate (:mod:`screening.episodes`), and, with a failure date, the exposure before it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from . import episodes as ep
from .drivers import DRIVERS, driver_shares
from .plant import Plant, load_plant
from .properties import fluid_table
from .scan import scan, window_bounds


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


def _baseline(plant: Plant, start, end, baseline) -> tuple[pd.Timestamp, pd.Timestamp]:
    if baseline is None:
        span = min(pd.Timedelta(days=21), (end - start) / 4)
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
    enter_below: float = 1.0,
    leave_above: float = 1.05,
    min_duration_h: float = 0.5,
    bridge_gap_h: float = 1.0,
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
        Baseline period; default the first three weeks (at most a quarter of the window).
    enter_below, leave_above : float
        Episode hysteresis on NPSHa / guidance head [-]: enter below, leave above.
    min_duration_h, bridge_gap_h : float
        Shortest episode kept [h]; gaps shorter than this are bridged [h].
    """
    plant = config if isinstance(config, Plant) else load_plant(config)
    if pump_id not in plant.pumps:
        raise ValueError(
            f"pump {pump_id!r} cannot be investigated: "
            + plant.problems.get(pump_id, "not in the register")
        )
    result = scan(plant, start, end, pumps=[pump_id], keep_series=True)
    if pump_id not in result.series:
        raise ValueError(f"pump {pump_id}: {result.problems['message'].iloc[0]}")
    series = result.series[pump_id]
    pump = plant.pumps[pump_id]
    curve = plant.curves[pump.curve_id]
    g = plant.guidance[pump_id]
    base_a, base_b = _baseline(plant, result.start, result.end, baseline)
    times = series["time"]
    base = ((times >= base_a) & (times < base_b)).to_numpy()

    # hours per day or week
    d = result.daily[(result.daily.kind == "margin")]
    wide = d.pivot(index="date", columns="state", values="hours")
    daily = pd.DataFrame(
        {
            "date": pd.to_datetime(wide.index),
            "below_npsh3_h": wide["below_npsh3"].to_numpy(),
            "below_guidance_h": (wide["below_npsh3"] + wide["below_guidance"]).to_numpy(),
            "running_h": wide[["below_npsh3", "below_guidance", "meets_guidance",
                               "ample_margin", "off_curve"]].sum(axis=1).to_numpy(),
        }
    )  # fmt: skip
    period = "week" if (result.end - result.start) > pd.Timedelta(days=120) else "day"
    table = daily
    if period == "week":
        table = daily.resample("W-MON", on="date", label="left", closed="left").sum()
        table = table.reset_index()
    table = ep.cumulative_exposure(table)

    # episodes below the guidance, with hysteresis
    npsha = series["npsha_m"].to_numpy(dtype=np.float64)
    guide = g.head(series["npsh3_m"].to_numpy(dtype=np.float64))
    with np.errstate(invalid="ignore", divide="ignore"):
        r_guide = npsha / guide
    eps = ep.find_episodes(
        times.astype("int64").to_numpy() if times.dtype.kind == "M" else times.to_numpy(),
        series["hours"].to_numpy(), r_guide, enter_below, leave_above, min_duration_h,
        bridge_gap_h,
    )  # fmt: skip

    # drivers over time (transmitter pumps)
    notes: list[str] = []
    drivers = pd.DataFrame()
    if pump.source == "transmitter":
        shares = driver_shares(series, pump, curve, fluid_table(pump.fluid, pump.vapour_pressure),
                               base)  # fmt: skip
        shares["date"] = shares["time"].dt.tz_convert(plant.timezone).dt.floor("D")
        w = shares["hours"]
        cols = ["change_m"] + [f"{k}_m" for k in DRIVERS] + ["interaction_m"]
        weighted = shares[cols].mul(w, axis=0).assign(date=shares["date"], hours=w)
        grouped = weighted.groupby("date").sum()
        drivers = grouped[cols].div(grouped["hours"].replace(0, np.nan), axis=0).reset_index()
        eps = _episode_drivers(eps, shares)
    else:
        notes.append("margin drivers are computed for transmitter pumps only")

    # onset: change point in the flow-normalised suction condition and in the exposure rate
    resid = _residual(series, base)
    rs = pd.DataFrame({"date": times.dt.tz_convert(plant.timezone).dt.floor("D"), "r": resid})
    daily_resid = rs.dropna().groupby("date")["r"].median()
    exposure = daily.set_index("date")["below_guidance_h"]
    if failed_on is not None:
        # what happened at and after the failure (repair, cleaning) is not the onset
        cut = pd.Timestamp(failed_on).tz_localize(None).normalize()
        daily_resid = daily_resid[daily_resid.index.tz_localize(None) < cut]
        exposure = exposure[exposure.index < cut]
    onset = ep.estimate_onset(
        pd.to_datetime(daily_resid.index).tz_localize(None), daily_resid.to_numpy()
    )
    onset_exposure = ep.estimate_onset(exposure.index, exposure.to_numpy())
    # a slow drift (a fouling strainer) is a ramp: where a hinge fits the margin better than a
    # step, the decline's start is the onset (see episodes.estimate_ramp_onset)
    ramp = ep.estimate_ramp_onset(
        pd.to_datetime(daily_resid.index).tz_localize(None), daily_resid.to_numpy()
    )
    ramp["chosen"] = bool(
        onset.get("onset") is not None
        and ramp.get("onset") is not None
        and ramp["slope"] < 0
        and ramp["sse"] < ramp["sse_step"]
    )

    before = None
    if failed_on is not None:
        before = ep.exposure_before(daily, pd.Timestamp(failed_on))
    finding = _finding(pump_id, onset, onset_exposure, drivers, eps, before, ramp)
    return OnsetResult(
        pump_id, result.start, result.end, period, table, eps, drivers, onset, onset_exposure,
        before, finding, (base_a, base_b), notes,
        pd.Timestamp(failed_on) if failed_on is not None else None, ramp,
    )  # fmt: skip


def _episode_drivers(eps: pd.DataFrame, shares: pd.DataFrame) -> pd.DataFrame:
    """Add each driver's time-weighted mean margin change [m] inside every episode."""
    if eps.empty:
        for k in DRIVERS:
            eps[f"{k}_m"] = pd.Series(dtype=float)
        return eps
    t = shares["time"]
    out = eps.copy()
    for k in DRIVERS:
        values = []
        for e in eps.itertuples(index=False):
            inside = ((t >= e.start) & (t < e.end)).to_numpy()
            w = shares["hours"].to_numpy()[inside]
            v = shares[f"{k}_m"].to_numpy()[inside]
            values.append(float(np.sum(w * v) / np.sum(w)) if w.sum() > 0 else np.nan)
        out[f"{k}_m"] = values
    return out


def _finding(pump_id, onset, onset_exposure, drivers, eps, before, ramp=None) -> str:
    when = onset.get("onset") or onset_exposure.get("onset")
    if ramp and ramp.get("chosen"):
        text = (
            f"{pump_id}: the suction margin began to decline gradually from about "
            f"{pd.Timestamp(ramp['onset']):%Y-%m-%d} ({ramp['slope']:+.3f} m per day)"
        )
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
            shares = {k: float(late[f"{k}_m"].mean()) for k in DRIVERS}
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


def write_onset_report(result: OnsetResult, out: str | Path) -> Path:
    """Write the onset tables (CSV and Parquet) and an HTML page into ``out``."""
    from .onset_page import write_onset_page

    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    tables = {"onset_hours": result.hours, "episodes": result.episodes,
              "drivers": result.drivers}  # fmt: skip
    if result.before_failure is not None:
        tables["before_failure"] = result.before_failure
    for name, frame in tables.items():
        f = frame.copy()
        for c in f.columns:
            if f[c].dtype.kind == "M" or isinstance(f[c].dtype, pd.DatetimeTZDtype):
                f[c] = f[c].astype("string")
        f.to_csv(out / f"{name}.csv", index=False)
        f.to_parquet(out / f"{name}.parquet", index=False)
    return write_onset_page(result, out)
