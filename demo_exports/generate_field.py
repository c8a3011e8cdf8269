"""Field-evidence tags of the invented demo plant (called by generate_demo.py, after everything
else, from a random stream of its own: every other export keeps its bytes).

Everything here is INVENTED. Two pumps get field evidence:

* RW-502 (raw-water intake, whose strainer fouls through October): its impeller really needs
  about 1.3 times the vendor's NPSH3 (a true NPSH3 of 1.3 x the vendor curve at every flow and
  speed). Its head begins to fall at 1.25 x that true NPSH3 and is 3 % down at it:
      drop = 0.03 ((K - NPSHa) / (K - NPSH3_true))^1.3 for NPSHa < K = 1.25 NPSH3_true.
  A discharge transmitter at the pump's nozzle, RW502.NOZZLE_PRESS (psi g), and a drive-end
  bearing vibration transmitter, RW502.VIB_DE (mm/s RMS), logged every minute; the vibration
  rises as the margin falls (from about 1.6 x NPSH3_true down, and more once the head falls).
  The older RW502.DISCH_PRESS column of the raw-water file was made up before the field
  evidence existed, without any cavitation loss; it stays as it was (and unregistered).
* DH-202 (district-heating booster, variable speed, drive running fast 10-19..10-22): healthy
  (its true NPSH3 is the vendor's); the register names its existing DH202.DISCH_PRESS tag, a
  head of H_rated (1.2 s^2 - 0.2 q^2) that follows the affinity laws exactly.

Written to demo_exports/wide_parquet/field_evidence_2026-10.parquet ("time_utc", floats).
"""

from __future__ import annotations

import numpy as np

FIELD_STREAM = 3000  # own random stream: the pumps of generate_demo.py keep their numbers
FIELD_FILE = "field_evidence_2026-10.parquet"
TRUE_NPSH3_FACTOR = 1.3  # RW-502 needs 1.3 x the vendor's NPSH3
KNEE = 1.25  # its head begins to fall at 1.25 x its true NPSH3
DROP_POWER = 1.3
HEAD_DROP = 0.03
G = 9.80665
PSI = 6894.757293168

#: Register cells of the field-evidence columns (empty for every other pump).
REGISTER = {
    "RW-502": {
        "discharge_pressure_tag": "RW502.NOZZLE_PRESS",
        "discharge_pressure_unit": "psi",
        "discharge_pressure_reference": "gauge",
        "discharge_elevation [m]": "2.5 ft",
        "discharge_bore [mm]": "10 in",
        "vibration_tag": "RW502.VIB_DE",
        "vibration_unit": "mm/s",
    },
    "DH-202": {
        "discharge_pressure_tag": "DH202.DISCH_PRESS",
        "discharge_pressure_unit": "bar",
        "discharge_pressure_reference": "gauge",
        "discharge_elevation [m]": "0.6",
        "discharge_bore [mm]": "150",
    },
}
COLUMNS = (
    "discharge_pressure_tag",
    "discharge_pressure_unit",
    "discharge_pressure_reference",
    "discharge_elevation [m]",
    "discharge_bore [mm]",
    "vibration_tag",
    "vibration_unit",
)


def register_cells(pump_id: str) -> dict:
    """The field-evidence cells of one register row."""
    cells = REGISTER.get(pump_id, {})
    return {c: cells.get(c, "") for c in COLUMNS}


def head_drop(npsha: np.ndarray, npsh3_true: np.ndarray) -> np.ndarray:
    """Fraction of head lost [-] at NPSHa [m] for a pump whose true NPSH3 is ``npsh3_true`` [m]:
    0 above the knee K = 1.25 NPSH3_true, 3 % at NPSH3_true, growing below (capped at 40 %)."""
    knee = KNEE * npsh3_true
    with np.errstate(invalid="ignore"):
        depth = np.clip((knee - npsha) / (knee - npsh3_true), 0.0, None)
    drop = HEAD_DROP * depth**DROP_POWER
    return np.clip(np.nan_to_num(drop, nan=0.0), 0.0, 0.4)


def rw502_tags(
    clock,
    st,
    truth,
    baro: np.ndarray,
    rated_head: float,
    rho: np.ndarray,
    p_suction_abs: np.ndarray,
    rng: np.random.Generator,
) -> dict:
    """RW-502's nozzle discharge pressure [psi g] and bearing vibration [mm/s] per minute."""
    run = truth.run
    load = np.where(run, st.load, 0.0)
    speed = np.where(run, st.speed, 0.0)
    npsh3_true = TRUE_NPSH3_FACTOR * truth.npsh3  # NaN off curve or stopped: no drop there
    drop = np.where(run, head_drop(truth.npsha, npsh3_true), 0.0)
    head = rated_head * (1.2 * speed**2 - 0.2 * load**2) * (1.0 - drop)
    standing = np.where(run, 0.0, 0.35 * rated_head)  # the check valve holds the line
    p2 = p_suction_abs + rho * G * (head + standing) + rng.normal(0.0, 300.0, clock.n)
    discharge = np.round((p2 - baro) / PSI, 2) + 0.0
    # vibration: a steady 1.8 mm/s with slow wander; cavitation noise from 1.6 x NPSH3_true
    # down, and a stronger rise once the head falls
    with np.errstate(invalid="ignore"):
        onset = np.clip((1.6 * npsh3_true - truth.npsha) / (0.6 * npsh3_true), 0.0, 2.0)
    onset = np.nan_to_num(onset, nan=0.0)
    vib = 1.8 + clock.wander(rng, 0.15, 6) + 0.9 * onset + 25.0 * drop
    vib = np.where(run, vib + rng.normal(0.0, 0.08, clock.n), 0.15 + rng.normal(0, 0.02, clock.n))
    return {
        "RW502.NOZZLE_PRESS": discharge,
        "RW502.VIB_DE": np.round(np.clip(vib, 0.0, None), 2) + 0.0,
    }


def suction_pressure(p, st, truth, fluid_tables, cell_si) -> tuple[np.ndarray, np.ndarray]:
    """Liquid density [kg/m3] and absolute suction pressure at the tap [Pa] of a transmitter
    pump, back from the generator's truth: NPSHa = (p - p_v)/(rho g) + v^2/(2g) + z."""
    grid, pv_grid, rho_grid = fluid_tables(p.fluid, st.temp)
    pv, rho = np.interp(st.temp, grid, pv_grid), np.interp(st.temp, grid, rho_grid)
    bep = cell_si(p.bep_flow, "m3/h") / 3600.0
    bore, z = cell_si(p.tap_bore, "mm"), cell_si(p.tap_elevation, "m")
    v = np.where(truth.run, st.load, 0.0) * bep / (np.pi / 4 * bore**2)
    return rho, pv + rho * G * (truth.npsha - v**2 / (2 * G) - z)


def write(folder, clock, ops, truths, by_id, baro, rated_head, helpers) -> None:
    """Write the field-evidence export (see the module) and plant its events.

    ``helpers``: the generator's fluid_tables, cell_si, write_wide_parquet and planted."""
    fluid_tables, cell_si, write_wide_parquet, planted = helpers
    rng = np.random.default_rng([20261001, FIELD_STREAM])
    p = by_id["RW-502"]
    rho, p_abs = suction_pressure(p, ops["RW-502"], truths["RW-502"], fluid_tables, cell_si)
    tags = rw502_tags(
        clock, ops["RW-502"], truths["RW-502"], baro, rated_head[p.curve_id], rho, p_abs, rng
    )
    write_wide_parquet(folder / FIELD_FILE, clock, tags)
    planted_events(planted)


def planted_events(planted) -> None:
    """The field-evidence events in planted_events.csv."""
    planted(
        "RW-502",
        "impeller needs 1.3 x the vendor's NPSH3",
        "RW502.NOZZLE_PRESS",
        "2026-10-01 00:00",
        "2026-11-01 00:00",
        "true NPSH3 = 1.3 x vendor curve: head 3 % down at 1.3 x vendor NPSH3, falling from "
        "1.625 x; field NPSH3 about 1.3 x vendor near BEP flow; vibration RW502.VIB_DE rises "
        "as the margin falls",
    )
    planted(
        "DH-202",
        "healthy pump with a discharge pressure",
        "DH202.DISCH_PRESS",
        "2026-10-01 00:00",
        "2026-11-01 00:00",
        "no head loss while below guidance (drive running fast); field NPSH3 never reached",
    )
