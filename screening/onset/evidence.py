"""What the onset investigation draws from a pump's per-piece series: the baseline, the
episodes below the guidance with their drivers, the drivers per day and the daily
flow-normalised residual. Over the whole series at once (:func:`whole_series`), or chunk by
chunk with the same results (:mod:`screening.onset.streamed`)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from screening.engine.drivers import (
    driver_shares,
    drivers_for,
    expected_npsha,
    fit_baseline,
    known_pieces,
    weighted_median,
)
from screening.inputs.plant import Plant
from screening.inputs.window import local_day_starts
from screening.onset import episodes as ep
from screening.physics.properties import fluid_table


def whole_series(plant: Plant, pump_id: str, result, baseline, search_from, cut, eps_rules):
    """Episodes (with their drivers), drivers per day, notes and the daily flow-normalised
    residual of a pump from its whole per-piece series (``result.series``)."""
    series = result.series[pump_id]
    check_has_data(series, pump_id, result.start, result.end)
    pump = plant.pumps[pump_id]
    curve = plant.curves[pump.curve_id]
    base, known = baseline_pieces(series, pump_id, *baseline)
    model = fit_baseline(series, pump, base)
    eps = guidance_episodes(series, plant.guidance[pump_id], *eps_rules)
    notes = baseline_notes(series, base & known) + ([model.note] if model.note else [])
    table_ = fluid_table(pump.fluid, pump.vapour_pressure)
    drivers, shares, names = drivers_by_day(plant, pump, curve, table_, series, base, model)
    eps = episode_drivers(eps, shares, names)
    resid = series["npsha_m"].to_numpy(np.float64) - expected_npsha(
        series, pump, curve, table_, model
    )
    daily_resid = daily_residual(plant, series, resid, search_from, cut)
    return {"episodes": eps, "drivers": drivers, "notes": notes, "resid": daily_resid}


def scanned_or_raise(result, pump_id: str) -> None:
    """A clear error when the scan could not screen the pump (its problem's message)."""
    if pump_id not in result.extras and pump_id not in result.series:
        raise ValueError(f"pump {pump_id}: {result.problems['message'].iloc[0]}")


def check_has_data(series: pd.DataFrame, pump_id: str, start, end) -> None:
    """A clear error when the window holds no running sample with a known margin."""
    known = known_pieces(series)
    if not known.any():
        states = series.groupby("state")["hours"].sum().sort_values(ascending=False)
        found = ", ".join(f"{k} {v:.0f} h" for k, v in states.items() if v > 0)
        found = found or "no sample of the pump's tags at all"
        raise ValueError(
            f"pump {pump_id}: the window {start} to {end} (UTC) has no running sample with a "
            f"known margin (hours: {found}); check the window against the exports' time range"
        )


def baseline_pieces(
    series: pd.DataFrame, pump_id: str, base_a: pd.Timestamp, base_b: pd.Timestamp
) -> tuple[np.ndarray, np.ndarray]:
    """Masks of the pieces in the baseline and of those running with a known margin."""
    times = series["time"]
    base = ((times >= base_a) & (times < base_b)).to_numpy()
    known = known_pieces(series)
    if not (base & known).any():
        raise ValueError(
            f"pump {pump_id}: the baseline {base_a} to {base_b} (UTC) has no running sample with "
            "a known margin; choose a baseline when the pump ran (--baseline FROM..TO)"
        )
    return base, known


def guidance_episodes(
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


def baseline_notes(series: pd.DataFrame, usable: np.ndarray) -> list[str]:
    """A note when the baseline holds less than a week of running hours with a known margin."""
    notes: list[str] = []
    base_hours = float(series["hours"].to_numpy()[usable].sum())
    if base_hours < 7 * 24:
        notes.append(
            f"the baseline holds only {base_hours:.0f} running hours with a known margin; "
            "its medians and the flow-normalised fit rest on little data"
        )
    return notes


def drivers_by_day(plant: Plant, pump, curve, table, series: pd.DataFrame, base, model):
    """Each driver's share of the margin change [m], time-weighted per site day, and the shares."""
    names = drivers_for(pump)
    shares, grouped = driver_sums(plant, pump, curve, table, series, base, model)
    return drivers_of(grouped, names), shares, names


def driver_sums(plant: Plant, pump, curve, table, series: pd.DataFrame, base, model):
    """The per-piece shares and their hour-weighted sums per site day (hours summed too)."""
    # drivers over time: one input at a time put back at its baseline value
    names = drivers_for(pump)
    shares = driver_shares(series, pump, curve, table, base, model)
    shares["date"] = local_day_starts(shares["time"], plant.timezone)
    w = shares["hours"]
    cols = ["change_m"] + [f"{k}_m" for k in names] + ["interaction_m"]
    weighted = shares[cols].mul(w, axis=0).assign(date=shares["date"], hours=w)
    return shares, weighted.groupby("date").sum()


def drivers_of(grouped: pd.DataFrame, names) -> pd.DataFrame:
    """Time-weighted mean shares per day [m] from the sums of :func:`_driver_sums`."""
    cols = ["change_m"] + [f"{k}_m" for k in names] + ["interaction_m"]
    return grouped[cols].div(grouped["hours"].replace(0, np.nan), axis=0).reset_index()


def daily_residual(plant: Plant, series: pd.DataFrame, resid: np.ndarray, since, cut):
    """Daily time-weighted median flow-normalised residual [m] from ``since`` (the window's
    start or the last maintenance) to ``cut`` (the failure or the window's end) [UTC]."""
    # onset: change point in the flow-normalised suction condition and in the exposure rate
    times = series["time"]
    keep = ((times >= since) & (times < cut)).to_numpy() & np.isfinite(resid)
    keep &= series["hours"].to_numpy() > 0
    days = local_day_starts(times[keep], plant.timezone)
    rs = pd.DataFrame({"date": days, "r": resid[keep], "w": series["hours"].to_numpy()[keep]})
    return rs.groupby("date")[["r", "w"]].apply(
        lambda g: weighted_median(g["r"].to_numpy(), g["w"].to_numpy())
    )


def episode_drivers(eps: pd.DataFrame, shares: pd.DataFrame, names) -> pd.DataFrame:
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
