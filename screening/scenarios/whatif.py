"""What a setpoint change would have bought: scenarios applied to recorded history, and the
setpoints that would have kept each pump at its guidance.

``screening.whatif(config, scenarios, start, end)`` screens the plant once (the scan's
calculator, unchanged) and, pump by pump while its per-piece series is in memory, applies each
scenario's changes to the recorded inputs (:mod:`screening.scenarios.scenario`), recomputes
NPSHa, NPSH3, the margin band and the operating region of every piece whose inputs changed (the
same functions as the calculator, :func:`screening.engine.drivers.npsh_pair`), and keeps only
small tables: hours per band and region before and after, the hours moved between them, what
each change did, and the required setpoints (:mod:`screening.scenarios.setpoints`).

Rules (documented in the README):

* Only running pieces with known inputs (a margin band or off the curve) are changed; stopped,
  no-data and bad-data pieces keep their state: a change cannot be applied to an unknown value,
  and their hours are reported as not evaluated.
* Whether the pump runs is never changed: the scenario changes the conditions of a running
  pump, not its schedule.
* A piece none of whose inputs changed keeps its state exactly, so a scenario that changes
  nothing reproduces the scan's hours exactly.
* A flow change on a pump with a shared suction line changes the line's total flow by as
  much (the other members' flows as recorded).
* A change to an input the pump does not have (a level on a pump read by a suction pressure
  transmitter, a speed cap on a fixed-speed pump, a pressure on a saturated vessel) is not
  applied, and the tables say why. A flow or speed cap that acts means the process did not get
  the flow it asked for: the tables say so, with the hours.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import partial
from pathlib import Path

import numpy as np
import pandas as pd

from screening.base import states
from screening.engine.calculator import PumpResult
from screening.engine.drivers import COLUMNS, drivers_for, npsh_pair
from screening.engine.scan import ScanResult, scan
from screening.inputs.plant import Plant, load_plant
from screening.physics import regions
from screening.physics.margin import margin_band
from screening.physics.properties import fluid_table
from screening.scenarios.scenario import Change, Scenario, read_scenarios
from screening.scenarios.setpoints import SENSITIVITY_COLUMNS, SETPOINT_COLUMNS, required_setpoints

#: States whose inputs are all known while running: the ones a change is applied to.
EVALUATED = states.RUNNING  # the four bands and off_curve


@dataclass
class WhatIfResult:
    """Tables of a what-if run (SI; hours [h])."""

    scan: ScanResult
    scenarios: list[Scenario]
    hours: pd.DataFrame  # scenario, pump_id, kind, state, before_h, after_h, change_h
    moves: pd.DataFrame  # scenario, pump_id, kind, from_state, to_state, hours
    changes: pd.DataFrame  # scenario, pump_id, change, input, acts_h, evaluated_h, ...
    setpoints: pd.DataFrame  # see screening.setpoints
    sensitivity: pd.DataFrame
    shares: tuple[float, ...] = (0.99, 1.0)
    notes: list[str] = field(default_factory=list)


def _not_applicable(pump, change: Change, names: tuple[str, ...]) -> str | None:
    """Why a change cannot apply to this pump, or None."""
    if change.input == "temperature" and pump.vessel_surface == "saturated":
        return (
            "saturated vessel: the liquid is at its boiling point at the surface pressure, so "
            "a cooler liquid means a lower pressure and the pressure term stays zero"
        )
    if change.input in names:
        return None
    if change.input == "level":
        return "the pump's suction is read by a pressure transmitter; it has no vessel level"
    if change.input == "suction_pressure":
        return "vessel-fed pump: change its level or vessel pressure instead"
    if change.input == "surface_pressure":
        if pump.source == "transmitter":
            return "the pump's suction is read by a pressure transmitter; it has no vessel"
        if pump.vessel_surface == "open":
            return "open vessel: its surface pressure is the atmosphere's"
        return "saturated vessel: the pressure term is zero whatever the pressure"
    if change.input == "speed":
        return "fixed-speed pump (no speed tag)"
    return f"input {change.input} not known for this pump"


def apply_changes(
    series: pd.DataFrame, pump, changes: list[Change]
) -> tuple[dict[str, np.ndarray], list[dict]]:
    """Apply changes to a pump's recorded inputs.

    Parameters
    ----------
    series : DataFrame
        The calculator's per-piece series (``keep_series=True``), SI columns of
        :data:`screening.engine.drivers.COLUMNS`, ``barometric_pa`` [Pa], ``state`` and
        ``hours`` [h].
    pump : PumpSpec
        The register row.
    changes : list of Change
        In the order they are applied.

    Returns
    -------
    (inputs, report)
        ``inputs``: the changed inputs by driver name (SI arrays over all pieces; pieces not
        evaluated keep their recorded values). ``report``: one dict per change with ``change``,
        ``input``, ``acts_h`` (evaluated hours in which it altered the input [h]) and ``note``.
    """
    names = drivers_for(pump)
    evaluated = series["state"].isin(EVALUATED).to_numpy()
    hours = series["hours"].to_numpy(dtype=np.float64)
    inputs = {k: series[COLUMNS[k]].to_numpy(dtype=np.float64).copy() for k in names}
    baro = series["barometric_pa"].to_numpy(dtype=np.float64)
    report = []
    for c in changes:
        reason = _not_applicable(pump, c, names)
        row = {"change": c.label, "input": c.input, "acts_h": 0.0, "note": reason or ""}
        if reason is None:
            old = inputs[c.input]
            if c.operation == "add":
                new = old + c.value
            elif c.operation == "floor":
                floor = c.value + baro if c.gauge and c.input.endswith("pressure") else c.value
                new = np.maximum(old, floor)
            else:  # cap
                new = np.minimum(old, c.value)
            new = np.where(evaluated, new, old)
            with np.errstate(invalid="ignore"):
                acts = evaluated & (new != old) & np.isfinite(old)
            row["acts_h"] = float(hours[acts].sum())
            inputs[c.input] = new
            if c.input == "flow" and "line_flow" in inputs:
                # a shared suction line carries the pump's flow: it changes by as much (the
                # other members' flows as recorded)
                inputs["line_flow"] = inputs["line_flow"] + np.where(acts, new - old, 0.0)
            if c.input in ("flow", "speed") and row["acts_h"] > 0:
                row["note"] = (
                    f"the process asked for more {c.input} than the cap during "
                    f"{row['acts_h']:.1f} h: that {c.input} would not have been delivered; "
                    "check the process can live with it"
                )
        report.append(row)
    return inputs, report


def _transitions(before: np.ndarray, after: np.ndarray, hours: np.ndarray, n: int) -> np.ndarray:
    """Hours [h] moved from each state (rows) to each state (columns)."""
    flat = np.bincount(before.astype(np.int64) * n + after, weights=hours, minlength=n * n)
    return flat.reshape(n, n)


def evaluate_pump(
    plant: Plant, result: PumpResult, scenarios: list[Scenario], shares: tuple[float, ...]
) -> dict:
    """The ``each_pump`` hook of :func:`screening.scan`: all scenarios for one pump.

    Returns a dict of small row lists (``hours``, ``moves``, ``changes``, ``setpoints``,
    ``sensitivity``) for :func:`whatif` to gather.
    """
    s = result.series
    pump = plant.pumps[result.pump_id]
    curve = plant.curves[pump.curve_id]
    guidance = plant.guidance[pump.pump_id]
    table = fluid_table(pump.fluid, pump.vapour_pressure)
    ample = plant.settings.policy.ample_ratio
    code = s["state"].cat.codes.to_numpy().astype(np.int64)
    rcode = s["region"].cat.codes.to_numpy().astype(np.int64)
    hours = s["hours"].to_numpy(dtype=np.float64)
    r_hours = s["region_hours"].to_numpy(dtype=np.float64)
    evaluated = np.isin(code, [states.STATES.index(x) for x in EVALUATED])
    r_running = np.isin(rcode, [regions.REGIONS.index(x) for x in regions.RUNNING_REGIONS])
    names = drivers_for(pump)
    recorded = {k: s[COLUMNS[k]].to_numpy(dtype=np.float64) for k in names}
    before_hours = {"margin": result.hours, "region": result.region_hours}
    not_evaluated = float(
        hours[~evaluated & ~np.isin(code, [states.STATES.index("stopped")])].sum()
    )
    out: dict[str, list] = {"hours": [], "moves": [], "changes": []}
    for sc in scenarios:
        changes = sc.changes_for(pump)
        if not changes:
            continue
        inputs, report = apply_changes(s, pump, changes)
        with np.errstate(invalid="ignore"):
            changed = np.zeros(len(s), dtype=bool)
            for k in names:
                changed |= inputs[k] != recorded[k]
        code_after = code.copy()
        idx = changed & evaluated
        if idx.any():
            a, r = npsh_pair(pump, curve, table, {k: v[idx] for k, v in inputs.items()})
            with np.errstate(invalid="ignore"):
                sub = margin_band(a, r, guidance, ample).astype(np.int64)
            sub[~(np.isfinite(a) & np.isfinite(r))] = states.OFF_CURVE
            code_after[idx] = sub
        rcode_after = rcode.copy()
        flow_changed = np.zeros(len(s), dtype=bool)
        for k in ("flow", "speed"):
            if k in inputs:
                with np.errstate(invalid="ignore"):
                    flow_changed |= inputs[k] != recorded[k]
        ridx = flow_changed & r_running
        if ridx.any():
            speed = inputs["speed"][ridx] if "speed" in inputs else None
            edges = regions.pump_region_edges(
                pump, curve.flow_max, speed, plant.settings.running.min_stable_flow_fraction
            )
            rcode_after[ridx] = regions.operating_region(inputs["flow"][ridx], edges)
        for kind, b, a_, w, names_ in (
            ("margin", code, code_after, hours, states.STATES),
            ("region", rcode, rcode_after, r_hours, regions.REGIONS),
        ):
            n = len(names_)
            moved = _transitions(b, a_, w, n)
            np.fill_diagonal(moved, 0.0)
            before = np.asarray(before_hours[kind], dtype=np.float64)
            after = before - moved.sum(axis=1) + moved.sum(axis=0)
            for i, state in enumerate(names_):
                out["hours"].append(
                    {"scenario": sc.name, "pump_id": pump.pump_id, "kind": kind, "state": state,
                     "before_h": before[i], "after_h": after[i], "change_h": after[i] - before[i]}
                )  # fmt: skip
            for i, j in zip(*np.nonzero(moved), strict=True):
                out["moves"].append(
                    {"scenario": sc.name, "pump_id": pump.pump_id, "kind": kind,
                     "from_state": names_[i], "to_state": names_[j], "hours": moved[i, j]}
                )  # fmt: skip
        for row in report:
            out["changes"].append(
                {"scenario": sc.name, "pump_id": pump.pump_id, **row,
                 "evaluated_h": float(hours[evaluated].sum()), "not_evaluated_h": not_evaluated}
            )  # fmt: skip
    setpoint_rows, sensitivity = required_setpoints(s, pump, curve, table, guidance, shares)
    out["setpoints"] = setpoint_rows
    out["sensitivity"] = [sensitivity] if sensitivity else []
    return out


HOURS_COLUMNS = ["scenario", "pump_id", "kind", "state", "before_h", "after_h", "change_h"]
MOVES_COLUMNS = ["scenario", "pump_id", "kind", "from_state", "to_state", "hours"]
CHANGES_COLUMNS = ["scenario", "pump_id", "change", "input", "acts_h", "evaluated_h",
                   "not_evaluated_h", "note"]  # fmt: skip


def whatif(
    config: str | Path | Plant,
    scenarios: str | Path | list[Scenario],
    start=None,
    end=None,
    pumps: list[str] | None = None,
    shares: tuple[float, ...] = (0.99, 1.0),
    progress=None,
) -> WhatIfResult:
    """Apply scenarios to a plant's recorded history and find the required setpoints.

    Parameters
    ----------
    config : str, Path or Plant
        The plant file or a loaded plant.
    scenarios : str, Path or list of Scenario
        A scenario file (see :mod:`screening.scenarios.scenario`) or scenarios already read.
    start, end : str or Timestamp, optional
        Window [start, end), as for :func:`screening.scan`.
    pumps : list of str, optional
        Only these pumps.
    shares : tuple of float
        Shares of the running hours [-] (0 < share <= 1) for which the required setpoints keep
        NPSHa at or above the guidance.
    progress : callable, optional
        As for :func:`screening.scan`: called with each batch of pumps as it completes.

    Returns
    -------
    WhatIfResult
    """
    for q in shares:
        if not (isinstance(q, int | float) and 0.0 < q <= 1.0):
            raise ValueError(f"shares must be fractions in (0, 1], got {q!r}")
    plant = config if isinstance(config, Plant) else load_plant(config)
    chosen = scenarios if isinstance(scenarios, list) else read_scenarios(scenarios)
    hook = partial(evaluate_pump, scenarios=chosen, shares=tuple(shares))
    result = scan(plant, start, end, pumps=pumps, each_pump=hook, progress=progress)
    rows: dict[str, list] = {"hours": [], "moves": [], "changes": [], "setpoints": [],
                             "sensitivity": []}  # fmt: skip
    for pid in sorted(result.extras):
        for k in rows:
            rows[k].extend(result.extras[pid][k])
    idle = [sc.name for sc in chosen if not any(map(sc.changes_for, plant.pumps.values()))]
    notes = [f"scenario {name!r} selects no pump of the register" for name in idle]
    if len(idle) == len(chosen):
        notes.append("no scenario selects any pump; only the required setpoints are shown")
    return WhatIfResult(
        result, chosen,
        pd.DataFrame(rows["hours"], columns=HOURS_COLUMNS),
        pd.DataFrame(rows["moves"], columns=MOVES_COLUMNS),
        pd.DataFrame(rows["changes"], columns=CHANGES_COLUMNS),
        pd.DataFrame(rows["setpoints"], columns=SETPOINT_COLUMNS),
        pd.DataFrame(rows["sensitivity"], columns=SENSITIVITY_COLUMNS),
        tuple(shares), notes,
    )  # fmt: skip
