"""Drivers of lost NPSH margin: how much of the margin lost against a baseline period is due to
each input (suction pressure, or a vessel's surface pressure and level; temperature; flow; speed).

Method (one-at-a-time substitution, a documented choice of ours): the margin is
m = NPSHa − NPSH3 [m]. For each running sample, the share of input X is the margin it has
minus the margin it would have had with X put back at its baseline value (the time-weighted
median of the baseline's running pieces: each piece weighs its hours), all other inputs as
recorded:

    Δ_X = m(x_1, ..., X, ...) − m(x_1, ..., X_baseline, ...)

Temperature acts through vapour pressure and density (and, with a Darcy–Weisbach suction line,
viscosity); flow through NPSH3, the velocity head or the suction-line loss; speed through NPSH3
(affinity laws); suction pressure, a vessel's surface pressure and its level directly. On a
shared suction line the line's loss is driven by the line's total flow (``line_flow``: the
header flow, or the sum of the running members' flows), the pump's own flow acting through
NPSH3 only. A
saturated vessel has no surface-pressure driver: its pressure term is zero whatever the
pressure.

Suction-line friction belongs to flow. A transmitter reads the suction pressure after the
suction line, so the pressure itself falls as the flow (or, on a shared line, the line's flow)
rises: p_s = p_0 + c·Q² (Darcy–Weisbach and k·Q² losses both go with Q²; Crane TP-410). The
baseline fits c by time-weighted least squares (c <= 0: kept at 0 where the baseline's flow
hardly varies or the fit says the pressure rises with flow), and the suction-pressure driver is
the flow-free part p_0 = p_s − c·Q², the flow driver carrying the friction. The shares do not
add up exactly to the total change against the baseline's median margin when inputs interact;
the remainder is reported as ``interaction``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from screening.base.states import BANDS
from screening.inputs.register import PumpSpec
from screening.physics import npsh, suction
from screening.physics.curves import Npsh3Curve
from screening.physics.properties import FluidTable

#: Every driver name, in report order; :func:`drivers_for` picks a pump's own.
DRIVERS = (
    "suction_pressure", "surface_pressure", "level", "temperature", "flow", "line_flow", "speed",
)  # fmt: skip
#: Series column of each driver's input (SI units, see calculator ``keep_series``).
COLUMNS = {
    "suction_pressure": "suction_pressure_abs_pa",
    "surface_pressure": "surface_pressure_abs_pa",
    "level": "level_m",
    "temperature": "temperature_k",
    "flow": "flow_m3_s",
    "line_flow": "line_flow_m3_s",
    "speed": "speed_rpm",
}


def known_pieces(series: pd.DataFrame) -> np.ndarray:
    """Which pieces of a per-piece series ran with a known margin: a margin band as their
    state and some time [h] in the window."""
    return series["state"].isin(BANDS).to_numpy() & (series["hours"].to_numpy() > 0)


def drivers_for(pump: PumpSpec) -> tuple[str, ...]:
    """The inputs that move a pump's margin, in report order."""
    if pump.source == "transmitter":
        names = ["suction_pressure"]
    elif pump.vessel_surface == "saturated":
        names = ["level"]
    else:
        names = ["surface_pressure", "level"]
    names += ["temperature", "flow"] + (["line_flow"] if pump.shared_line is not None else [])
    names += ["speed"] if pump.speed is not None else []
    return tuple(names)


def npsh_pair(
    pump: PumpSpec, curve: Npsh3Curve, table: FluidTable, inputs: dict
) -> tuple[np.ndarray, np.ndarray]:
    """NPSHa and NPSH3 [m] from a pump's inputs, the same way the calculator computes them.

    ``inputs`` holds arrays by driver name (see :data:`COLUMNS`): ``suction_pressure`` [Pa
    absolute] for a transmitter pump, ``surface_pressure`` [Pa absolute] and ``level`` [m] for
    a vessel-fed pump, ``temperature`` [K], ``flow`` [m³/s], ``speed`` [rpm] (absent:
    rated speed) and, for a pump on a shared suction line, ``line_flow`` [m³/s], the line's
    total flow at which its loss is taken (as the calculator does; the pump's own flow then
    sets NPSH3 and a can's loss). NPSHa as in
    :func:`screening.physics.npsh.npsha_from_pressure` (ISO 9906:2012) or
    :func:`screening.physics.suction.npsha_from_vessel` (ANSI/HI 1.3); NPSH3 from the vendor
    curve scaled by the affinity laws (:meth:`Npsh3Curve.at_speed`).
    """
    temp, flow = inputs["temperature"], inputs["flow"]
    p_v, rho = table.properties(temp)
    if pump.source == "transmitter":
        a = npsh.npsha_from_pressure(
            inputs["suction_pressure"], p_v, rho, flow, pump.tap_bore, pump.tap_elevation
        ) - suction.can_loss(pump.can_loss_k, flow)
    else:
        if pump.shared_line is not None and "line_flow" not in inputs:
            raise ValueError(f"pump {pump.pump_id} is on a shared suction line: give line_flow")
        line_q = inputs["line_flow"] if pump.shared_line is not None else flow
        loss = suction.line_loss(pump.suction_line, line_q, rho, temp, table.fluid)
        loss = loss + suction.can_loss(pump.can_loss_k, flow)
        surface = (
            suction.SATURATED if pump.vessel_surface == "saturated" else inputs["surface_pressure"]
        )
        a = suction.npsha_from_vessel(
            surface, p_v, rho, inputs["level"], pump.level_zero_elevation, loss
        )
    r = curve.at_speed(flow, inputs.get("speed"), pump.rated_speed, pump.npsh3_exponent)
    return a, r


def margin_m(pump: PumpSpec, curve: Npsh3Curve, table: FluidTable, inputs: dict) -> np.ndarray:
    """NPSHa − NPSH3 [m] from a pump's inputs (see :func:`npsh_pair`)."""
    a, r = npsh_pair(pump, curve, table, inputs)
    return a - r


def weighted_median(values: np.ndarray, weights: np.ndarray) -> float:
    """Time-weighted median [unit of values]: the smallest value at or above which half the
    weight [h] lies (the lower weighted median; NaN values and zero weights are left out)."""
    v = np.asarray(values, dtype=np.float64)
    w = np.asarray(weights, dtype=np.float64)
    keep = np.isfinite(v) & (w > 0)
    if not keep.any():
        return float("nan")
    v, w = v[keep], w[keep]
    order = np.argsort(v, kind="stable")
    cum = np.cumsum(w[order])
    return float(v[order][np.searchsorted(cum, 0.5 * cum[-1])])


#: The baseline's flow must vary by at least this share (of mean Q²) to fit friction [-].
MIN_FLOW_SPREAD = 0.05


@dataclass(frozen=True)
class SuctionBaseline:
    """What a pump's suction looked like in the baseline period (SI).

    ``refs`` are the time-weighted medians of each driver's input (for a transmitter pump the
    flow-free suction pressure p_0 [Pa]); ``friction`` is c [Pa/(m³/s)²] of p_s = p_0 + c·Q²
    (0 when not fitted) and ``friction_flow`` the driver whose flow it goes with;
    ``margin_m`` the time-weighted median margin [m]; ``note`` says why friction was not fitted.
    """

    refs: dict
    friction: float
    friction_flow: str
    margin_m: float
    note: str = ""


def _friction_fit(p: np.ndarray, q: np.ndarray, w: np.ndarray) -> tuple[float, str]:
    """c [Pa/(m³/s)²] of p = p_0 + c·Q² by weighted least squares, and a note when it is 0."""
    ok = np.isfinite(p) & np.isfinite(q) & (w > 0)
    q2, p, w = q[ok] ** 2, p[ok], w[ok]
    if len(q2) < 3 or np.average(q2, weights=w) <= 0:
        return 0.0, "too few baseline pieces with a flow to fit suction-line friction"
    mean = np.average(q2, weights=w)
    spread = np.sqrt(np.average((q2 - mean) ** 2, weights=w))
    if spread < MIN_FLOW_SPREAD * mean:
        return 0.0, "the baseline's flow hardly varies: suction-line friction not fitted"
    c = np.sum(w * (q2 - mean) * (p - np.average(p, weights=w))) / np.sum(w * (q2 - mean) ** 2)
    if c > 0:
        return 0.0, "suction pressure rises with flow in the baseline: no friction term"
    return float(c), ""


def fit_baseline(
    series: pd.DataFrame, pump: PumpSpec, baseline_mask: np.ndarray
) -> SuctionBaseline:
    """The baseline of :func:`driver_shares` and of the onset's normalised suction condition.

    Parameters
    ----------
    series : DataFrame
        The calculator's per-piece series (see :func:`driver_shares`).
    pump : PumpSpec
        The pump's register row.
    baseline_mask : numpy.ndarray of bool
        Pieces of the baseline period.

    Raises
    ------
    ValueError
        When the baseline has no running piece with a known margin.
    """
    names = drivers_for(pump)
    ok = known_pieces(series)
    base = ok & baseline_mask
    if not base.any():
        raise ValueError("the baseline period has no running sample with a known margin")
    w = series["hours"].to_numpy(dtype=np.float64)[base]
    col = {k: series[COLUMNS[k]].to_numpy(dtype=np.float64)[base] for k in names}
    friction, flow_name, note = 0.0, "flow", ""
    if pump.source == "transmitter":
        flow_name = "line_flow" if "line_flow" in names else "flow"
        friction, note = _friction_fit(col["suction_pressure"], col[flow_name], w)
        col["suction_pressure"] = col["suction_pressure"] - friction * col[flow_name] ** 2
    refs = {k: weighted_median(v, w) for k, v in col.items()}
    margin = (series["npsha_m"] - series["npsh3_m"]).to_numpy(dtype=np.float64)[base]
    return SuctionBaseline(refs, friction, flow_name, weighted_median(margin, w), note)


def _with_friction(model: SuctionBaseline, inputs: dict) -> dict:
    """Inputs with the flow-free suction pressure p_0 turned back into p_s = p_0 + c·Q² [Pa]."""
    if model.friction == 0.0 or "suction_pressure" not in inputs:
        return inputs
    out = dict(inputs)
    q = np.asarray(inputs[model.friction_flow], dtype=np.float64)
    out["suction_pressure"] = inputs["suction_pressure"] + model.friction * q**2
    return out


def expected_npsha(
    series: pd.DataFrame,
    pump: PumpSpec,
    curve: Npsh3Curve,
    table: FluidTable,
    model: SuctionBaseline,
) -> np.ndarray:
    """NPSHa [m] each piece would have had with the baseline's suction (its flow-free suction
    pressure, or its vessel surface pressure and level) at the recorded temperature, flow(s)
    and speed: the calculator's own functions (:func:`npsh_pair`), so that vapour pressure and
    density follow the recorded temperature exactly (IAPWS-IF97 through CoolProp for water),
    whatever the baseline's temperature range. NaN where an input is missing."""
    n = len(series)
    inputs = {k: series[COLUMNS[k]].to_numpy(dtype=np.float64) for k in drivers_for(pump)}
    for k in ("suction_pressure", "surface_pressure", "level"):
        if k in inputs:
            inputs[k] = np.full(n, model.refs[k])
    a, _ = npsh_pair(pump, curve, table, _with_friction(model, inputs))
    return np.asarray(a, dtype=np.float64)


def driver_shares(
    series: pd.DataFrame,
    pump: PumpSpec,
    curve: Npsh3Curve,
    table: FluidTable,
    baseline_mask: np.ndarray,
    model: SuctionBaseline | None = None,
) -> pd.DataFrame:
    """Per-sample margin change [m] against the baseline, split by input.

    Parameters
    ----------
    series : DataFrame
        The calculator's per-piece series (``keep_series=True``): ``state``, ``hours`` [h],
        ``npsha_m`` and ``npsh3_m`` [m] and the input columns of :data:`COLUMNS` (SI).
    pump, curve, table
        The pump's register row, NPSH3 curve and fluid table.
    baseline_mask : numpy.ndarray of bool
        Pieces of the baseline period.
    model : SuctionBaseline, optional
        The baseline (:func:`fit_baseline` of the same mask when not given).

    Returns
    -------
    DataFrame with ``time``, ``hours``, ``margin_m``, ``change_m`` (against the baseline's
    time-weighted median margin) and one ``<driver>_m`` column per driver of
    :func:`drivers_for` plus ``interaction_m``; fresh running pieces in a margin band only.
    For a transmitter pump the suction-pressure share is that of the flow-free pressure p_0
    and the flow share carries the suction line's friction (module docstring).

    Raises
    ------
    ValueError
        When the baseline has no such piece.
    """
    names = drivers_for(pump)
    model = model or fit_baseline(series, pump, baseline_mask)
    ok = known_pieces(series)
    data = {k: series[COLUMNS[k]].to_numpy(dtype=np.float64)[ok] for k in names}
    if model.friction != 0.0:
        data["suction_pressure"] = (
            data["suction_pressure"] - model.friction * data[model.friction_flow] ** 2
        )
    actual = margin_m(pump, curve, table, _with_friction(model, data))
    out = pd.DataFrame(
        {
            "time": series["time"].array[ok],  # tz-aware, without a Timestamp object each
            "hours": series["hours"].to_numpy()[ok],
            "margin_m": actual,
        }
    )
    out["change_m"] = actual - model.margin_m
    total = np.zeros(len(actual))
    for k in names:
        swapped = dict(data)
        swapped[k] = np.full(len(actual), model.refs[k])
        share = actual - margin_m(pump, curve, table, _with_friction(model, swapped))
        out[f"{k}_m"] = share
        total += np.nan_to_num(share)
    out["interaction_m"] = out["change_m"] - total
    return out
