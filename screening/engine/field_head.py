"""Field evidence: is the pump actually losing head when its margin is low?

NPSH3 is defined by a 3 % drop of the first-stage head (ANSI/HI 1.6; ISO 9906:2012): the
recorded history of a pump with suction and discharge pressure holds the same experiment, done
slowly by the process. For a pump whose register names a discharge pressure tag this module
computes, on the pieces the calculator has already cut and classified (nothing is added to the
accounting of states; pumps without the tag never come here):

1. the developed head at every running instant (ISO 9906:2012 §3.2, :mod:`screening.physics.
   head`), moved to rated speed by the affinity laws;
2. the pump's own baseline head at each flow, a quadratic fitted by Huber's IRLS on running
   time at ample margin (or the vendor's head curve), and the head ratio H / baseline;
3. the head loss observed: hours with the head ratio at least 3 % below the baseline while the
   margin was below the guidance, and the largest loss;
4. the field NPSH3 per flow bin: the margin ratio at which a broken-stick fit of head ratio
   against NPSHa/NPSH3 falls by 3 %, with a block-bootstrap 5-95 % interval, compared with the
   vendor's NPSH3 as a ratio; where the history never fell that far, a bound, never an
   extrapolation;
5. with a vibration tag, its distribution per band of margin ratio and its trend as the margin
   falls.

A head that falls can also come from wear, recirculation, entrained gas or a failing
transmitter; a field estimate is not an NPSH test to ISO 9906.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from screening.base import states
from screening.base.kernels import hold
from screening.engine import field_vibration
from screening.engine.field_fit import (
    HEAD_DROP,
    Baseline,
    block_bootstrap_counts,
    broken_stick,
    huber_polyfit,
    weighted_quantile,
)
from screening.inputs.tagdata import TagSeries
from screening.physics import head as headphys
from screening.physics.npsh import absolute_pressure

NS_PER_HOUR = 3_600_000_000_000
_NEVER = np.iinfo(np.int64).min // 4
#: Flow bins of the field NPSH3 [-, of BEP flow at rated speed]: centres 40 %, 60 % ... 140 %.
FLOW_BIN_EDGES = (0.3, 0.5, 0.7, 0.9, 1.1, 1.3, 1.5)
#: Running hours at ample margin the fitted baseline needs [h] (our choice: a day).
MIN_BASELINE_HOURS = 24.0
#: Running hours a flow bin needs for a field NPSH3 [h] (our choice).
MIN_BIN_HOURS = 12.0
#: Width of the margin-ratio cells the broken stick is fitted to [-] and the largest ratio
#: used (above it the head is flat for any pump: more cells would only cost time).
RATIO_CELL = 0.02
RATIO_MAX = 3.0
#: Hours a cell needs to count as reached [h]: a single stray sample does not.
MIN_CELL_HOURS = 0.25
#: Bootstrap replicates and the fixed random state (the same data give the same interval).
REPLICATES = 200
RANDOM_STATE = 20261001
#: Head-ratio cells of the figure [-].
HEAD_RATIO_EDGES = np.round(np.arange(0.85, 1.0501, 0.005), 4)

NPSH3_COLUMNS = [
    "pump_id", "flow_fraction_low", "flow_fraction_high", "hours", "lowest_margin_ratio",
    "status", "field_to_vendor", "field_to_vendor_p05", "field_to_vendor_p95",
    "bootstrap_share_reached", "fall_begins_margin_ratio", "vendor_npsh3_m", "field_npsh3_m",
    "field_npsh3_p05_m", "field_npsh3_p95_m", "note",
]  # fmt: skip


@dataclass
class FieldInputs:
    """What the field evidence reads besides the calculator's pieces: the prepared (SI) tags by
    role, their stale limits [ns], and notes on tags that could not be used."""

    tags: dict[str, TagSeries]
    stale_ns: dict[str, int]
    notes: list[str] = field(default_factory=list)


@dataclass
class FieldEvidence:
    """One pump's field evidence (hours [h], ratios [-], SI tables; see the module)."""

    pump_id: str
    baseline: str  # "fitted", "vendor" or "none"
    baseline_note: str = ""
    baseline_fit: Baseline | None = None
    head_hours: float = 0.0  # running in a margin band with a head ratio
    below_guidance_head_hours: float = 0.0  # of which below the guidance
    head_loss_hours: float = 0.0  # head ratio <= 0.97 while below the guidance
    head_loss_worst: float = np.nan  # largest loss 1 − H/baseline while below the guidance
    low_head_ample_hours: float = 0.0  # head ratio <= 0.97 at ample margin (scatter)
    npsh3: pd.DataFrame | None = None
    cells: pd.DataFrame | None = None
    baseline_points: pd.DataFrame | None = None
    vibration: pd.DataFrame | None = None
    vibration_trend: dict | None = None
    notes: list[str] = field(default_factory=list)


def _held(series: TagSeries | None, grid: np.ndarray, stale_ns: int):
    """A tag's last sample on each piece [SI], whether bad, and until when fresh [ns]."""
    if series is None or len(series.times) == 0:
        n = len(grid)
        return np.full(n, np.nan), np.zeros(n, bool), np.full(n, _NEVER, dtype=np.int64)
    return hold(series.times, series.values, series.bad, grid, np.int64(stale_ns),
                np.int64(_NEVER))  # fmt: skip


def piece_hours(grid, t_next, code, until, series, stale_ns) -> tuple[np.ndarray, np.ndarray]:
    """The held values of a field tag [SI] and the hours [h] of each piece on which the pump
    ran in a margin band with the tag fresh and good (zero elsewhere)."""
    value, bad, t_until = _held(series, grid, stale_ns)
    end = np.minimum(np.minimum(until, t_next), t_until)
    w = np.clip(end - grid, 0, None) / NS_PER_HOUR
    ok = (code <= states.AMPLE_MARGIN) & ~bad & np.isfinite(value)
    return value, np.where(ok, w, 0.0)


def field_evidence(pump, curve, grid, t_next, code, until, phys, inputs: FieldInputs):
    """The field evidence of one pump on the calculator's pieces.

    Parameters
    ----------
    pump : PumpSpec
        Register row (SI), with ``discharge`` and/or ``vibration`` tags.
    curve : Npsh3Curve
        Vendor NPSH3 curve at rated speed (and head curve where given).
    grid, t_next : numpy.ndarray
        Piece starts and ends [ns].
    code, until : numpy.ndarray
        Margin state code of each piece and the time until which it holds [ns].
    phys : object
        The calculator's SI values per piece: ``p_abs`` [Pa], ``p_v`` [Pa], ``rho`` [kg/m³],
        ``flow`` [m³/s], ``npsha``, ``npsh3`` [m], ``speed`` [rpm] or None, ``baro`` [Pa].
    inputs : FieldInputs
        The prepared field tags.
    """
    ev = FieldEvidence(pump.pump_id, "none", notes=list(inputs.notes))
    with np.errstate(divide="ignore", invalid="ignore"):
        sigma = phys.npsha / phys.npsh3
    blocks = grid // NS_PER_HOUR  # clock hours: the bootstrap's blocks are runs of them
    if "discharge_pressure" in inputs.tags:
        _head_evidence(ev, pump, curve, grid, t_next, code, until, phys, sigma, blocks, inputs)
    if "vibration" in inputs.tags:
        vib, w = piece_hours(grid, t_next, code, until, inputs.tags["vibration"],
                             inputs.stale_ns["vibration"])  # fmt: skip
        ev.vibration, ev.vibration_trend = field_vibration.by_margin(
            pump.pump_id, vib, sigma, w, blocks
        )
    return ev


def _head_evidence(ev, pump, curve, grid, t_next, code, until, phys, sigma, blocks, inputs):
    """Items 1-4 of the module: head, baseline, head loss, field NPSH3 (in place on ``ev``)."""
    p2, w = piece_hours(grid, t_next, code, until, inputs.tags["discharge_pressure"],
                        inputs.stale_ns["discharge_pressure"])  # fmt: skip
    p2 = absolute_pressure(p2, phys.baro, pump.discharge_gauge)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        if pump.source == "transmitter":
            head = headphys.developed_head(
                phys.p_abs, p2, phys.rho, phys.flow, pump.tap_bore, pump.discharge_bore,
                pump.tap_elevation, pump.discharge_elevation,
            )  # fmt: skip
        else:  # no suction transmitter: the inlet's total head from NPSHa
            head = headphys.outlet_total_head(
                p2, phys.rho, phys.flow, pump.discharge_bore, pump.discharge_elevation
            ) - headphys.inlet_total_head(phys.npsha, phys.p_v, phys.rho)
        n_ratio = 1.0 if phys.speed is None else phys.speed / pump.rated_speed
        q_rated, h_rated = headphys.to_rated_speed(phys.flow, head, n_ratio)
        x = q_rated / pump.bep_flow
    ok = (w > 0) & np.isfinite(head) & np.isfinite(x) & (x > 0)
    w = np.where(ok, w, 0.0)
    if not ok.any():
        ev.notes.append("no running time in a margin band with a good discharge pressure")
        return
    baseline = _baseline(ev, pump, curve, x, h_rated, w, code)
    if baseline is None:
        return
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = h_rated / baseline
    valid = ok & np.isfinite(ratio)
    wv = np.where(valid, w, 0.0)
    low = valid & (ratio <= 1.0 - HEAD_DROP)
    below = valid & (code <= states.BELOW_GUIDANCE)
    ev.head_hours = float(wv.sum())
    ev.below_guidance_head_hours = float(wv[below].sum())
    ev.head_loss_hours = float(wv[below & low].sum())
    ev.low_head_ample_hours = float(wv[low & (code == states.AMPLE_MARGIN)].sum())
    if below.any():
        ev.head_loss_worst = float(np.max(1.0 - ratio[below]))
    ev.cells = _cells(pump.pump_id, phys.npsha[valid], ratio[valid], wv[valid])
    ev.npsh3 = field_npsh3_table(
        pump.pump_id, x[valid], sigma[valid], ratio[valid], wv[valid], blocks[valid],
        lambda q: curve.at_reference_speed(q * pump.bep_flow),
    )  # fmt: skip


def _baseline(ev, pump, curve, x, h_rated, w, code) -> np.ndarray | None:
    """The baseline head [m] at each piece's flow (NaN where it does not reach), set on
    ``ev``: the vendor's head curve where the register asks for it, else the pump's own fit
    on running time at ample margin (:func:`fit_baseline`)."""
    if pump.head_baseline == "vendor":
        if curve.head is None:
            ev.notes.append(
                f"head_baseline = vendor, but curve {curve.curve_id!r} has no head column: "
                "no head ratio"
            )
            return None
        ev.baseline = "vendor"
        ev.baseline_note = f"vendor head curve {curve.curve_id} at rated speed (PCHIP)"
        return headphys.HeadCurve(curve.curve_id, curve.flow, curve.head).at(x * pump.bep_flow)
    ample = (code == states.AMPLE_MARGIN) & (w > 0)
    hours = float(w[ample].sum())
    if hours < MIN_BASELINE_HOURS:
        ev.notes.append(
            f"no baseline: {hours:.1f} h of running time at ample margin with a discharge "
            f"pressure, {MIN_BASELINE_HOURS:.0f} h needed"
        )
        return None
    fit = fit_baseline(x[ample], h_rated[ample], w[ample])
    ev.baseline, ev.baseline_fit = "fitted", fit
    ev.baseline_note = (
        f"fitted on {hours:.0f} h at ample margin: degree-{len(fit.coef) - 1} polynomial in "
        f"Q/Q_BEP by Huber IRLS, valid from {100 * fit.x_low:.0f} to {100 * fit.x_high:.0f} % "
        f"of BEP flow, robust scatter {fit.scale:.2f} m"
    )
    ev.baseline_points = _baseline_points(pump.pump_id, fit, x[ample], h_rated[ample], w[ample])
    return fit.at(x)


def fit_baseline(x, head, w) -> Baseline:
    """The pump's own head-flow baseline [m] from samples at ample margin: a polynomial in
    x = Q/Q_BEP [-] at rated speed by Huber IRLS (:func:`huber_polyfit`), of degree 2 where
    the flows spread over at least 20 % of BEP flow (5-95 % of the hours), 1 from 8 %, else 0
    (a flat line: a pump held at one duty point cannot show a curve's shape); valid between
    the 0.5 % and 99.5 % time-weighted quantiles of the flow (never extrapolated).

    Parameters
    ----------
    x : array_like
        Flow fraction of BEP at rated speed [-].
    head : array_like
        Developed head at rated speed [m].
    w : array_like
        Hours of each sample [h].
    """
    lo5, hi95, x_low, x_high = weighted_quantile(x, w, [0.05, 0.95, 0.005, 0.995])
    spread = hi95 - lo5
    degree = 2 if spread >= 0.20 else 1 if spread >= 0.08 else 0  # our choice
    coef, scale = huber_polyfit(x, head, w, degree)
    return Baseline(tuple(float(c) for c in coef), float(x_low), float(x_high), scale,
                    float(np.sum(w)))  # fmt: skip


def _baseline_points(pid, fit: Baseline, x, head, w) -> pd.DataFrame:
    """The baseline's samples binned for the page: median head [m] per 2 % of BEP flow, with
    hours, and the fitted head there."""
    cell = np.floor(x / 0.02).astype(np.int64)
    rows = []
    for c in np.unique(cell):
        m = cell == c
        if w[m].sum() < MIN_CELL_HOURS:
            continue
        xc = (c + 0.5) * 0.02
        rows.append({"pump_id": pid, "flow_fraction": xc, "hours": float(w[m].sum()),
                     "head_median_m": float(weighted_quantile(head[m], w[m], 0.5)),
                     "baseline_m": float(fit.at(xc))})  # fmt: skip
    return pd.DataFrame(rows)


def _cells(pid: str, npsha, ratio, w) -> pd.DataFrame:
    """Running hours per cell of NPSHa [m] and head ratio [-] (the page's first figure)."""
    if not len(npsha):
        return pd.DataFrame()
    lo, hi = weighted_quantile(npsha, w, [0.001, 0.999])
    edges = np.linspace(lo, max(hi, lo + 1e-3), 61)
    i = np.clip(np.searchsorted(edges, npsha, side="right") - 1, 0, 59)
    r = np.clip(np.searchsorted(HEAD_RATIO_EDGES, ratio, side="right") - 1, 0,
                len(HEAD_RATIO_EDGES) - 2)  # fmt: skip
    n_r = len(HEAD_RATIO_EDGES) - 1
    hours = np.bincount(i * n_r + r, weights=w, minlength=60 * n_r).reshape(60, n_r)
    fi, ri = np.nonzero(hours)
    return pd.DataFrame({
        "pump_id": pid, "npsha_low_m": edges[fi], "npsha_high_m": edges[fi + 1],
        "head_ratio_low": HEAD_RATIO_EDGES[ri], "head_ratio_high": HEAD_RATIO_EDGES[ri + 1],
        "hours": hours[fi, ri],
    })  # fmt: skip


def block_length_hours(hours: float) -> int:
    """Bootstrap block length [h]: about n^(1/3) of the hours (Künsch 1989; Hall, Horowitz and
    Jing 1995, Biometrika 82, 561-574, for the n^(1/3) rate), at least one hour."""
    return max(1, int(round(hours ** (1.0 / 3.0))))


def field_npsh3_table(pid, x, sigma, ratio, w, blocks, vendor_at) -> pd.DataFrame:
    """The field NPSH3 per flow bin (:data:`FLOW_BIN_EDGES`), one row each (see
    :data:`NPSH3_COLUMNS`; :func:`field_npsh3_bin` for the method).

    Parameters
    ----------
    x : array_like
        Flow fraction of BEP at rated speed [-] per piece.
    sigma : array_like
        Margin ratio NPSHa / vendor NPSH3 at the running point [-].
    ratio : array_like
        Head ratio H / baseline [-].
    w : array_like
        Hours [h].
    blocks : array_like
        Clock hour of each piece [h since the epoch].
    vendor_at : callable
        Vendor NPSH3 at rated speed [m] at a flow fraction [-].
    """
    rows = []
    for lo, hi in zip(FLOW_BIN_EDGES[:-1], FLOW_BIN_EDGES[1:], strict=True):
        m = (x >= lo) & (x < hi) & np.isfinite(sigma) & (sigma <= RATIO_MAX) & (w > 0)
        row = field_npsh3_bin(sigma[m], ratio[m], w[m], blocks[m])
        vendor = float(vendor_at(np.array([(lo + hi) / 2]))[0])
        row.update({"pump_id": pid, "flow_fraction_low": lo, "flow_fraction_high": hi,
                    "vendor_npsh3_m": vendor})  # fmt: skip
        for key, src in (("field_npsh3_m", "field_to_vendor"),
                         ("field_npsh3_p05_m", "field_to_vendor_p05"),
                         ("field_npsh3_p95_m", "field_to_vendor_p95")):  # fmt: skip
            row[key] = row[src] * vendor
        rows.append(row)
    return pd.DataFrame(rows, columns=NPSH3_COLUMNS)


def _cell_sums(sigma, ratio, w, blocks):
    """Hours and hours × head ratio per bootstrap block and margin-ratio cell, and the cells'
    centres [-]."""
    cell = np.floor(sigma / RATIO_CELL).astype(np.int64)
    first = int(cell.min())
    cell -= first
    n_cells = int(cell.max()) + 1
    size = block_length_hours(float(w.sum()))
    _, b = np.unique(blocks // size, return_inverse=True)
    n_blocks = int(b.max()) + 1
    key = b * n_cells + cell
    mw = np.bincount(key, weights=w, minlength=n_blocks * n_cells).reshape(n_blocks, n_cells)
    mwy = np.bincount(key, weights=w * ratio, minlength=n_blocks * n_cells).reshape(
        n_blocks, n_cells
    )
    centres = (np.arange(n_cells) + first + 0.5) * RATIO_CELL
    return mw, mwy, centres


def _drop_point(hours, hours_y, centres, lowest: float) -> float:
    """The margin ratio of the 3 % drop of one set of cell sums, or NaN where the broken stick
    is not significant or its drop point lies below the lowest ratio reached."""
    used = hours > 0
    if used.sum() < 4:
        return np.nan
    fit = broken_stick(centres[used], hours_y[used] / hours[used], hours[used])
    if not (fit.significant and np.isfinite(fit.x3) and fit.x3 >= lowest):
        return np.nan
    return fit.x3


def field_npsh3_bin(sigma, ratio, w, blocks) -> dict:
    """The field NPSH3 of one flow bin as a multiple of the vendor's [-].

    Head ratio against margin ratio σ = NPSHa / NPSH3_vendor is averaged per cell of 0.02 in σ
    (hour-weighted) and fitted with a broken stick (flat, then falling; :func:`broken_stick`);
    the field NPSH3 is the σ where the fitted line is 3 % below its flat level, accepted only
    when the fall beats a flat line (Schwarz criterion) and the history reached that σ (at
    least 0.25 h in a cell at or below it). Otherwise the history never went low enough: the
    field NPSH3 is only known to lie below the lowest σ reached, a bound, never an
    extrapolation. The 5-95 % interval comes from a block bootstrap over runs of clock hours
    (:func:`block_bootstrap_counts`); ``bootstrap_share_reached`` is the share of replicates
    that found a drop.

    Parameters
    ----------
    sigma, ratio, w, blocks : numpy.ndarray
        Margin ratio [-], head ratio [-], hours [h] and clock hour [h] of the pieces in the
        bin.
    """
    out = {"hours": float(w.sum()), "lowest_margin_ratio": np.nan, "status": "too_few_hours",
           "field_to_vendor": np.nan, "field_to_vendor_p05": np.nan,
           "field_to_vendor_p95": np.nan, "bootstrap_share_reached": np.nan,
           "fall_begins_margin_ratio": np.nan, "note": ""}  # fmt: skip
    if out["hours"] < MIN_BIN_HOURS:
        out["note"] = f"{out['hours']:.1f} h in this flow bin, {MIN_BIN_HOURS:.0f} h needed"
        return out
    mw, mwy, centres = _cell_sums(sigma, ratio, w, blocks)
    hours, hours_y = mw.sum(axis=0), mwy.sum(axis=0)
    reached = np.flatnonzero(hours >= MIN_CELL_HOURS)
    lowest = float(centres[reached[0]]) if reached.size else float(centres[-1])
    out["lowest_margin_ratio"] = lowest
    used = hours > 0
    fit = broken_stick(centres[used], hours_y[used] / hours[used], hours[used])
    x3 = _drop_point(hours, hours_y, centres, lowest)
    counts = block_bootstrap_counts(mw.shape[0], REPLICATES, RANDOM_STATE)
    boot_h, boot_hy = counts @ mw, counts @ mwy
    reps = np.array([_drop_point(boot_h[i], boot_hy[i], centres, lowest)
                     for i in range(REPLICATES)])  # fmt: skip
    found = reps[np.isfinite(reps)]
    out["bootstrap_share_reached"] = found.size / REPLICATES
    if np.isnan(x3):
        out["status"] = "not_reached"
        out["note"] = (
            f"no 3 % head drop down to a margin ratio of {lowest:.2f}: the field NPSH3 is "
            f"below {lowest:.2f} times the vendor's (a bound; the history never went lower)"
        )
        return out
    out.update({"status": "estimated", "field_to_vendor": x3,
                "fall_begins_margin_ratio": fit.b})  # fmt: skip
    if found.size:
        out["field_to_vendor_p05"], out["field_to_vendor_p95"] = np.percentile(found, [5, 95])
    out["note"] = (
        f"3 % head drop at {x3:.2f} times the vendor's NPSH3 (head begins to fall at "
        f"{fit.b:.2f}); lowest margin ratio reached {lowest:.2f}"
    )
    return out
