"""Required setpoints: the low suction-pressure (or vessel-level) limit and the high liquid
temperature that would have kept NPSHa at or above the guidance for a share of the running
hours, from the recorded flow, temperature and speed.

Per running piece with a known margin, the guidance head G = guidance(NPSH3 at the piece's
flow and speed) does not depend on pressure, level or temperature, so each piece has its own
requirement:

* suction pressure: NPSHa is linear in it, (p − p_v)/(ρg) + ... (ISO 9906:2012 definition),
  so the piece needs p_req = p + (G − NPSHa)·ρ·g (in the transmitter's reference: gauge
  requirements subtract the piece's barometric pressure);
* vessel level: NPSHa moves one for one with the level (static head, ANSI/HI 1.3), so the
  piece needs level + (G − NPSHa);
* liquid temperature: the piece needs T at or below T_max, where NPSHa(T_max) = G, found by
  bisection between the fluid table's lowest temperature and the recorded temperature (60
  halvings: far below any transmitter's resolution). Where even the lowest temperature is not
  enough, cooling alone cannot meet the guidance for that piece.

A low limit (floor) L keeps a piece at its guidance when the piece met it anyway or L is at
least its requirement; the required floor for a share s is the smallest L for which the pieces
kept add up to s of the running hours (time weighting), so for s = 100 % it is the largest
requirement of the pieces below guidance and the worst piece sits exactly on the guidance. A
high limit (cap) is the mirror image. Each result is checked by applying it to the recorded
samples and recomputing NPSHa (``achieved_share``).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from screening.base.states import BANDS
from screening.engine.drivers import COLUMNS, drivers_for, npsh_pair
from screening.inputs.units import si_to
from screening.physics.npsh import G

SETPOINT_COLUMNS = [
    "pump_id", "input", "limit", "share", "required", "unit", "today_setpoint",
    "change_from_setpoint", "recorded", "achieved_share", "cannot_meet_h", "note",
    "set_by_one_sample", "required_99_9",
]  # fmt: skip
SENSITIVITY_COLUMNS = [
    "pump_id", "flow_m3_s", "temperature_k", "suction_pressure_pa", "level_m", "npsha_m",
    "guidance_m", "margin_per_kpa_m", "margin_per_m_level", "margin_per_k_cooler_m",
]  # fmt: skip
#: Relative tolerance when checking that a piece meets the guidance after a change [-].
REL_TOL = 1e-9


def weighted_quantile(values: np.ndarray, weights: np.ndarray, q: float) -> float:
    """Time-weighted quantile: the smallest value whose cumulative weight reaches q [-].

    Parameters
    ----------
    values : array of float
        The values [any unit].
    weights : array of float
        Weights [h], >= 0, not all zero.
    q : float
        Share of the total weight [-], 0 <= q <= 1.
    """
    order = np.argsort(values, kind="stable")
    cum = np.cumsum(weights[order])
    i = int(np.searchsorted(cum, q * cum[-1] * (1 - 1e-12), side="left"))
    return float(values[order][min(i, len(order) - 1)])


def floor_needed(need: np.ndarray, ok: np.ndarray, w: np.ndarray, share: float) -> float:
    """Smallest low limit keeping ``share`` of the hours at guidance; NaN if none is needed.

    Parameters
    ----------
    need : array of float
        Each piece's requirement [unit of the limit] (used where not ``ok``).
    ok : array of bool
        Pieces at or above the guidance as recorded.
    w : array of float
        Hours of each piece [h].
    share : float
        Share of the hours [-], 0 < share <= 1.
    """
    total, have = w.sum(), w[ok].sum()
    target = share * total * (1 - 1e-12)
    if have >= target:
        return np.nan
    bad = ~ok
    order = np.argsort(need[bad], kind="stable")
    cum = have + np.cumsum(w[bad][order])
    i = min(int(np.searchsorted(cum, target, side="left")), len(cum) - 1)
    return float(need[bad][order][i])


def one_sample(
    need: np.ndarray, ok: np.ndarray, w: np.ndarray, times: np.ndarray
) -> tuple[int, float] | None:
    """Whether the 100 % low limit is set by one piece (one recorded sample's hold or line):
    the index of that piece and the 99.9 % limit, or None.

    The 100 % limit is the largest requirement of the pieces below guidance
    (:func:`floor_needed`); when a single piece needs more than the 99.9 % limit, that one
    sample alone sets it, and the 99.9 % value says what the rest of the record asks for.
    Parameters are as :func:`floor_needed`; ``times`` [ns] are the pieces' starts.
    """
    strict = floor_needed(need, ok, w, 1.0)
    if not np.isfinite(strict):
        return None
    near = floor_needed(need, ok, w, 0.999)
    over = ~ok & (need > (near if np.isfinite(near) else -np.inf))
    if int(over.sum()) != 1:
        return None
    return int(np.flatnonzero(over)[0]), near


def _note_one_sample(row: dict, found, times, w, sign: float = 1.0) -> None:
    """Write into ``row`` when its 100 % limit is set by one sample (:func:`one_sample`) and
    the 99.9 % value [SI] beside it (``sign`` -1 for a high limit)."""
    if found is not None:
        i, near = found
        t = pd.Timestamp(times[i])
        when = (t.tz_localize("UTC") if t.tzinfo is None else t.tz_convert("UTC")).isoformat()
        row["set_by_one_sample"] = f"set by one sample at {when} ({w[i] * 3600:.0f} s)"
        row["required_99_9"] = sign * near


def cap_needed(limit: np.ndarray, ok: np.ndarray, w: np.ndarray, share: float) -> float:
    """Largest high limit keeping ``share`` of the hours at guidance; NaN if none is needed,
    -inf if no cap can (the pieces that cannot be helped weigh too much).

    Parameters are as :func:`floor_needed`, with ``limit`` each piece's highest allowed
    value (-inf where no value helps).
    """
    r = floor_needed(-limit, ok, w, share)
    return r if np.isnan(r) else -r


def _max_temperature(pump, curve, table, inputs: dict, guide: np.ndarray) -> np.ndarray:
    """Per piece, the temperature [K] at which NPSHa equals the guidance head, below the
    recorded one; -inf where even the table's lowest temperature leaves NPSHa short."""
    lo = np.full(len(guide), table.t_min)
    hi = inputs["temperature"].copy()

    def short(t):
        a, _ = npsh_pair(pump, curve, table, {**inputs, "temperature": t})
        return a < guide

    unreachable = short(lo)
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        s = short(mid)
        hi = np.where(s, mid, hi)
        lo = np.where(s, lo, mid)
    return np.where(unreachable, -np.inf, lo)


def required_setpoints(
    series: pd.DataFrame, pump, curve, table, guidance, shares=(0.99, 1.0)
) -> tuple[list[dict], dict | None]:
    """Required low and high limits of one pump, and its margin sensitivity.

    Parameters
    ----------
    series : DataFrame
        The calculator's per-piece series (``keep_series=True``): ``state``, ``hours`` [h],
        ``npsha_m``, ``npsh3_m`` [m], ``barometric_pa`` [Pa] and the SI input columns of
        :data:`screening.engine.drivers.COLUMNS`.
    pump, curve, table, guidance
        Register row, NPSH3 curve, fluid table and guidance of the pump.
    shares : sequence of float
        Shares of the running hours [-].

    Returns
    -------
    (rows, sensitivity)
        ``rows`` follow :data:`SETPOINT_COLUMNS` (required values in SI: [Pa] in the suction
        transmitter's reference, [m] of level in the level transmitter's frame, [K]);
        ``sensitivity`` follows :data:`SENSITIVITY_COLUMNS` (margin [m] gained per kPa of
        suction pressure, per metre of level and per kelvin cooler at the time-weighted
        median operating point), or None without running pieces.
    """
    names = drivers_for(pump)
    w_all = series["hours"].to_numpy(dtype=np.float64)
    keep = series["state"].isin(BANDS).to_numpy() & (w_all > 0)
    data = {k: series[COLUMNS[k]].to_numpy(dtype=np.float64) for k in names}
    for v in data.values():
        keep &= np.isfinite(v)
    if not keep.any():
        return [], None
    w = w_all[keep]
    inputs = {k: v[keep] for k, v in data.items()}
    a = series["npsha_m"].to_numpy(dtype=np.float64)[keep]
    guide = guidance.head(series["npsh3_m"].to_numpy(dtype=np.float64)[keep])
    ok = a >= guide
    baro = series["barometric_pa"].to_numpy(dtype=np.float64)[keep]
    times = series["time"].to_numpy()[keep] if "time" in series else np.zeros(len(w), "M8[ns]")
    rows = []

    as_recorded = float(w[a >= guide * (1 - REL_TOL)].sum() / w.sum())

    def met(changed: dict) -> float:
        a2, _ = npsh_pair(pump, curve, table, {**inputs, **changed})
        return float(w[a2 >= guide * (1 - REL_TOL)].sum() / w.sum())

    if pump.source == "transmitter":
        key, today = "suction_pressure", pump.low_pressure_setpoint
        _, rho = table.properties(inputs["temperature"])
        offset = baro if pump.gauge else 0.0
        need = inputs[key] + (guide - a) * rho * G - offset
        recorded_values = inputs[key] - offset
        unit = "Pa (gauge)" if pump.gauge else "Pa (absolute)"
    else:
        key, today = "level", pump.low_level_setpoint
        need = inputs[key] + (guide - a)
        recorded_values = inputs[key]
        offset = 0.0
        unit = "m (level transmitter)"
    recorded_low = weighted_quantile(recorded_values, w, 0.01)
    for share in shares:
        req = floor_needed(need, ok, w, share)
        note = ""
        if np.isnan(req):
            achieved = as_recorded
            note = f"met without a change: at or above guidance {100 * achieved:.2f} % of the time"
        else:
            achieved = met({key: np.maximum(inputs[key], req + offset)})
        rows.append(_row(pump, key, "low", share, req, unit, today, recorded_low, achieved, 0.0,
                         note))  # fmt: skip
        if share == 1.0:
            _note_one_sample(rows[-1], one_sample(need, ok, w, times), times, w)

    if pump.vessel_surface != "saturated":
        t_max = np.full(len(w), np.inf)
        if (~ok).any():
            sub = {k: v[~ok] for k, v in inputs.items()}
            t_max[~ok] = _max_temperature(pump, curve, table, sub, guide[~ok])
        cannot = float(w[~ok & np.isneginf(t_max)].sum())
        recorded_high = -weighted_quantile(-inputs["temperature"], w, 0.01)
        for share in shares:
            cap = cap_needed(t_max, ok, w, share)
            note = ""
            if np.isnan(cap):
                achieved = as_recorded
                note = (
                    f"met without a change: at or above guidance {100 * achieved:.2f} % of the time"
                )
            elif np.isneginf(cap):
                achieved = float("nan")
                note = (
                    f"cooling alone cannot reach this share: {cannot:.1f} h stay below the "
                    f"guidance even at {_degrees(table.t_min)}"
                )
            else:
                achieved = met({"temperature": np.minimum(inputs["temperature"], cap)})
            rows.append(_row(pump, "temperature", "high", share, cap, "K",
                             pump.high_temperature_setpoint, recorded_high, achieved, cannot,
                             note))  # fmt: skip
            if share == 1.0 and np.isfinite(cap):
                _note_one_sample(rows[-1], one_sample(-t_max, ok, w, times), times, w, -1.0)
    return rows, _sensitivity(pump, curve, table, guidance, inputs, w)


def _row(pump, key, limit, share, req, unit, today, recorded, achieved, cannot, note) -> dict:
    finite = np.isfinite(req)
    return {
        "pump_id": pump.pump_id,
        "input": key,
        "limit": limit,
        "share": share,
        "required": req if finite else np.nan,
        "unit": unit,
        "today_setpoint": np.nan if today is None else today,
        "change_from_setpoint": req - today if (finite and today is not None) else np.nan,
        "recorded": recorded,
        "achieved_share": achieved,
        "cannot_meet_h": cannot,
        "note": note,
        "set_by_one_sample": "",
        "required_99_9": np.nan,
    }


def _sensitivity(pump, curve, table, guidance, inputs: dict, w: np.ndarray) -> dict:
    """Margin gained per unit of each setpoint at the time-weighted median operating point,
    by central differences of NPSHa (±0.5 kPa, ±0.5 m, ±0.5 K)."""
    point = {k: np.array([weighted_quantile(v, w, 0.5)]) for k, v in inputs.items()}

    def npsha(**delta) -> float:
        moved = {k: v + delta.get(k, 0.0) for k, v in point.items()}
        return float(npsh_pair(pump, curve, table, moved)[0][0])

    a, r = npsh_pair(pump, curve, table, point)
    out = {c: np.nan for c in SENSITIVITY_COLUMNS}
    out.update(
        pump_id=pump.pump_id,
        flow_m3_s=float(point["flow"][0]),
        temperature_k=float(point["temperature"][0]),
        npsha_m=float(a[0]),
        guidance_m=float(guidance.head(r)[0]),
    )
    if pump.source == "transmitter":
        out["suction_pressure_pa"] = float(point["suction_pressure"][0])
        out["margin_per_kpa_m"] = npsha(suction_pressure=500.0) - npsha(suction_pressure=-500.0)
    else:
        out["level_m"] = float(point["level"][0])
        out["margin_per_m_level"] = npsha(level=0.5) - npsha(level=-0.5)
    if pump.vessel_surface != "saturated":
        out["margin_per_k_cooler_m"] = npsha(temperature=-0.5) - npsha(temperature=0.5)
    return out


def _degrees(kelvin: float) -> str:
    """A temperature [K] in both degrees Celsius and Fahrenheit, for notes read in either."""
    c, f = float(si_to(kelvin, "degC", "temperature")), float(si_to(kelvin, "degF", "temperature"))
    return f"{c:.1f} degC ({f:.1f} degF)"
