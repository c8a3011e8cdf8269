"""Drivers of lost NPSH margin: how much of the margin lost against a baseline period is due to
each input (suction pressure, or a vessel's surface pressure and level; temperature; flow; speed).

Method (one-at-a-time substitution, a documented choice of ours): the margin is
m = NPSHa − NPSH3 [m]. For each running sample, the share of input X is the margin it has
minus the margin it would have had with X put back at its baseline value (the median of the
baseline's running samples), all other inputs as recorded:

    Δ_X = m(x_1, ..., X, ...) − m(x_1, ..., X_baseline, ...)

Temperature acts through vapour pressure and density (and, with a Darcy–Weisbach suction line,
viscosity); flow through NPSH3, the velocity head or the suction-line loss; speed through NPSH3
(affinity laws); suction pressure, a vessel's surface pressure and its level directly. On a
shared suction line the line's loss is driven by the line's total flow (``line_flow``: the
header flow, or the sum of the running members' flows), the pump's own flow acting through
NPSH3 only. A
saturated vessel has no surface-pressure driver: its pressure term is zero whatever the
pressure. The shares do not add up exactly to the total change against the baseline's median
margin when inputs interact; the remainder is reported as ``interaction``.
"""

from __future__ import annotations

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


def driver_shares(
    series: pd.DataFrame,
    pump: PumpSpec,
    curve: Npsh3Curve,
    table: FluidTable,
    baseline_mask: np.ndarray,
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

    Returns
    -------
    DataFrame with ``time``, ``hours``, ``margin_m``, ``change_m`` (against the baseline's
    median margin) and one ``<driver>_m`` column per driver of :func:`drivers_for` plus
    ``interaction_m``; fresh running pieces in a margin band only.

    Raises
    ------
    ValueError
        When the baseline has no such piece.
    """
    names = drivers_for(pump)
    ok = series["state"].isin(BANDS).to_numpy() & (series["hours"].to_numpy() > 0)
    base = ok & baseline_mask
    if not base.any():
        raise ValueError("the baseline period has no running sample with a known margin")
    data = {k: series[COLUMNS[k]].to_numpy(dtype=np.float64)[ok] for k in names}
    ref = {k: float(np.median(series[COLUMNS[k]].to_numpy(dtype=np.float64)[base])) for k in names}
    actual = margin_m(pump, curve, table, data)
    out = pd.DataFrame(
        {
            "time": series["time"].to_numpy()[ok],
            "hours": series["hours"].to_numpy()[ok],
            "margin_m": actual,
        }
    )
    base_margin = float(np.median((series["npsha_m"] - series["npsh3_m"]).to_numpy()[base]))
    out["change_m"] = actual - base_margin
    total = np.zeros(len(actual))
    for k in names:
        swapped = dict(data)
        swapped[k] = np.full(len(actual), ref[k])
        share = actual - margin_m(pump, curve, table, swapped)
        out[f"{k}_m"] = share
        total += np.nan_to_num(share)
    out["interaction_m"] = out["change_m"] - total
    return out
