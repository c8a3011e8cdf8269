"""Drivers of lost NPSH margin: how much of the margin lost against a baseline period is due to
each input (suction pressure, temperature, flow, speed).

Method (one-at-a-time substitution, a documented choice of ours): the margin is
m = NPSHa − NPSH3 [m]. For each running sample, the share of input X is the margin it has
minus the margin it would have had with X put back at its baseline value (the median of the
baseline's running samples), all other inputs as recorded:

    Δ_X = m(x_1, ..., X, ...) − m(x_1, ..., X_baseline, ...)

Temperature acts through vapour pressure and density; flow through NPSH3 and the velocity
head; speed through NPSH3 (affinity laws); suction pressure directly. The shares do not add up
exactly to the total change against the baseline's median margin when inputs interact; the
remainder is reported as ``interaction``. Transmitter pumps only for now (a vessel pump's
level and surface pressure are a different set of inputs).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from . import npsh
from .curves import Npsh3Curve
from .properties import FluidTable
from .register import PumpSpec

DRIVERS = ("suction_pressure", "temperature", "flow", "speed")


def margin_m(pump: PumpSpec, curve: Npsh3Curve, table: FluidTable, p_abs, temp, flow, speed):
    """NPSHa − NPSH3 [m] of a transmitter pump from absolute suction pressure [Pa],
    temperature [K], flow [m³/s] and speed [rpm] (None: rated speed).

    NPSHa as in :func:`screening.npsh.npsha_from_pressure` (ISO 9906:2012); NPSH3 from the
    vendor curve scaled by the affinity laws (:meth:`Npsh3Curve.at_speed`).
    """
    p_v, rho = table.properties(temp)
    a = npsh.npsha_from_pressure(p_abs, p_v, rho, flow, pump.tap_bore, pump.tap_elevation)
    r = curve.at_speed(flow, speed, pump.rated_speed, pump.npsh3_exponent)
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
        The calculator's per-piece series (``keep_series=True``): ``suction_pressure_abs_pa``
        [Pa], ``temperature_k`` [K], ``flow_m3_s`` [m³/s], ``speed_rpm`` [rpm], ``npsha_m`` and
        ``npsh3_m`` [m].
    pump, curve, table
        The pump's register row, NPSH3 curve and fluid table.
    baseline_mask : numpy.ndarray of bool
        Pieces of the baseline period.

    Returns
    -------
    DataFrame with ``time``, ``hours``, ``margin_m``, ``change_m`` (against the baseline's
    median margin) and one ``<driver>_m`` column per driver plus ``interaction_m``; running
    pieces with a margin only.
    """
    if pump.source != "transmitter":
        raise ValueError(
            f"pump {pump.pump_id}: margin drivers are computed for transmitter pumps only"
        )
    cols = {
        "suction_pressure": "suction_pressure_abs_pa",
        "temperature": "temperature_k",
        "flow": "flow_m3_s",
        "speed": "speed_rpm",
    }
    ok = np.isfinite(series["npsha_m"].to_numpy()) & np.isfinite(series["npsh3_m"].to_numpy())
    ok &= series["hours"].to_numpy() > 0
    base = ok & baseline_mask
    if not base.any():
        raise ValueError("the baseline period has no running sample with a known margin")
    data = {k: series[c].to_numpy(dtype=np.float64)[ok] for k, c in cols.items()}
    has_speed = pump.speed is not None
    ref = {k: float(np.median(series[c].to_numpy(dtype=np.float64)[base])) for k, c in cols.items()}

    def m(values):
        return margin_m(
            pump, curve, table, values["suction_pressure"], values["temperature"],
            values["flow"], values["speed"] if has_speed else None,
        )  # fmt: skip

    actual = m(data)
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
    for k in DRIVERS:
        if k == "speed" and not has_speed:
            out["speed_m"] = 0.0
            continue
        swapped = dict(data)
        swapped[k] = np.full(len(actual), ref[k])
        share = actual - m(swapped)
        out[f"{k}_m"] = share
        total += np.nan_to_num(share)
    out["interaction_m"] = out["change_m"] - total
    return out
