"""Generate the invented year-long history extract for pumpscreen's onset demonstrations.

Everything here is INVENTED: two made-up pumps of "Quillmere Demo Works" (which does not
exist), HX-701 and HX-702, sampled every 10 minutes from 2025-11-01 to 2026-11-01 UTC.
This extract is separate from the October demo plant (generate_demo.py).

Run from the repository root:  .venv/bin/python demo_exports/generate_history.py
The output is deterministic (fixed random state). The script (re)writes
  demo_exports/history/history_2025-11_2026-10.parquet  wide, "timestamp" (tz-aware UTC),
                                                        one float32 column per tag, zstd
  configs/demo_history_pumps.csv, configs/demo_history_curves.csv
configs/demo_history.toml is written by hand.

Planted onsets:
  HX-701  raw-water transfer: its suction strainer starts fouling on 2026-06-15 (a suction
          pressure loss that grows steadily from then on); the pump fails on 2026-09-20 and
          stays stopped (run 0) afterwards. Below guidance more and more often from August.
  HX-702  jacket cooling-water circulation: its cooling-water supply runs 12 K warmer from
          2026-04-10 on (a step: a new upstream heat load); its margin is about 1.8 m lower
          after that but stays above guidance except for two short hot spells (2026-07-04
          and 2026-10-09, a few hours each).

Physics (simple water correlations, standard atmosphere at 120 m, no barometer):
    NPSHa = (p_abs - p_vapour(T)) / (rho g) + v^2 / (2 g) + z_tap
NPSH3 at flow fraction q = Q / Q_bep:  NPSH3_bep (0.45 + 0.55 q^2.1).
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

RANDOM_STATE = 20251101

ROOT = Path(__file__).resolve().parent.parent
OUT_FILE = ROOT / "demo_exports" / "history" / "history_2025-11_2026-10.parquet"
PUMPS_FILE = ROOT / "configs" / "demo_history_pumps.csv"
CURVES_FILE = ROOT / "configs" / "demo_history_curves.csv"

START = pd.Timestamp("2025-11-01", tz="UTC")
END = pd.Timestamp("2026-11-01", tz="UTC")
STEP = "10min"
G = 9.80665
P_ATM = 99.89  # kPa, 1976 standard atmosphere at 120 m

FOULING_START = pd.Timestamp("2026-06-15", tz="UTC")
HX701_FAILURE = pd.Timestamp("2026-09-20 09:40", tz="UTC")  # on 2026-09-20, 11:40 local
HX702_STEP = pd.Timestamp("2026-04-10", tz="UTC")
HX702_STEP_K = 12.0

REGISTER_HEADER = (
    "pump_id,service,area,fluid,application,suction_pressure_tag,suction_pressure_unit,"
    "suction_pressure_reference,temperature_tag,temperature_unit,flow_tag,flow_unit,speed_tag,"
    "speed_unit,run_tag,tap_elevation [m],tap_bore [mm],rated_speed [rpm],bep_flow [m3/h],"
    "curve_id,npsh3_exponent,impeller_eyes,stale_limit,suction_source,level_tag,level_unit,"
    "level_zero_elevation [m],vessel_surface,vessel_pressure_tag,vessel_pressure_unit,"
    "vessel_pressure_reference,line_loss_head [m],line_loss_flow [m3/h],line_length [m],"
    "line_bore [mm],line_roughness [mm],line_fittings_k,min_stable_flow [m3/h],"
    "thermal_min_flow [m3/h],preferred_low,preferred_high,allowable_max_flow [m3/h],"
    "vapour_pressure"
).split(",")

PUMPS = [
    {
        "pump_id": "HX-701",
        "service": "Raw-water transfer from the settling tank",
        "area": "water treatment",
        "application": "water",
        "stem": "HX701",
        "tap_elevation": 0.5,
        "tap_bore": 200,
        "rated_speed": 1480,
        "bep_flow": 300.0,
        "curve_id": "HXP-300",
        "npsh3_bep": 3.2,
    },
    {
        "pump_id": "HX-702",
        "service": "Jacket cooling-water circulation from the hot tank",
        "area": "engine house",
        "application": "power",
        "stem": "HX702",
        "tap_elevation": 0.3,
        "tap_bore": 150,
        "rated_speed": 1480,
        "bep_flow": 180.0,
        "curve_id": "HXP-180",
        "npsh3_bep": 3.5,
    },
]
CURVE_POINTS = (0.25, 0.4, 0.55, 0.7, 0.85, 1.0, 1.15, 1.3)


def npsh3(npsh3_bep: float, q: np.ndarray) -> np.ndarray:
    """Invented NPSH3 curve [m] at flow fraction q."""
    return npsh3_bep * (0.45 + 0.55 * np.abs(q) ** 2.1)


def vapour_pressure_kpa(t_c: np.ndarray) -> np.ndarray:
    """Antoine correlation for water, 1-100 degC [kPa]."""
    return 0.133322 * 10 ** (8.07131 - 1730.63 / (233.426 + t_c))


def density(t_c: np.ndarray) -> np.ndarray:
    """Density of liquid water [kg/m3] (Tanaka-type fit)."""
    return 1000.0 * (1 - (t_c + 288.9414) / (508929.2 * (t_c + 68.12963)) * (t_c - 3.9863) ** 2)


def velocity_head(flow_m3h: np.ndarray, bore_mm: float) -> np.ndarray:
    v = flow_m3h / 3600.0 / (np.pi * (bore_mm / 2000.0) ** 2)
    return v**2 / (2 * G)


def smooth_noise(rng: np.random.Generator, n: int, sigma: float, hours: float) -> np.ndarray:
    """AR(1) noise with a correlation time of `hours` at 10-minute steps."""
    phi = np.exp(-1.0 / (hours * 6.0))
    e = rng.normal(0.0, sigma * np.sqrt(1 - phi**2), n)
    x = np.empty(n)
    x[0] = rng.normal(0.0, sigma)
    for i in range(1, n):
        x[i] = phi * x[i - 1] + e[i]
    return x


def stops(rng: np.random.Generator, n: int, per_month: float) -> np.ndarray:
    """Run status: 1 running, with a few random stops of 2-18 h."""
    run = np.ones(n, dtype=bool)
    count = rng.poisson(per_month * 12)
    for start in rng.integers(0, n, count):
        run[start : start + int(rng.integers(12, 109))] = False
    return run


def main() -> None:
    rng = np.random.default_rng(RANDOM_STATE)
    times = pd.date_range(START, END, freq=STEP, inclusive="left")
    n = len(times)
    local = times.tz_convert("Europe/Berlin")
    hour = local.hour.to_numpy() + local.minute.to_numpy() / 60.0
    doy = times.day_of_year.to_numpy()
    season = np.cos(2 * np.pi * (doy - 205) / 365.25)  # +1 late July, -1 late January
    afternoon = np.cos(2 * np.pi * (hour - 15.0) / 24.0)  # +1 at 15:00 local
    columns: dict[str, np.ndarray] = {}
    truth = {}

    # ---- HX-701: raw water from a settling tank; strainer fouls from 2026-06-15
    p = PUMPS[0]
    run = stops(rng, n, 2.0)
    run &= times < HX701_FAILURE
    q = 0.9 + 0.1 * np.cos(2 * np.pi * (hour - 10.0) / 24.0) + smooth_noise(rng, n, 0.04, 6)
    q = np.where(run, q, 0.0)
    flow = p["bep_flow"] * q + np.where(run, rng.normal(0, 1.0, n), rng.normal(0, 0.3, n))
    temp = 12.0 + 7.0 * season + 0.6 * afternoon + smooth_noise(rng, n, 0.8, 48)
    level = 0.35 * np.cos(2 * np.pi * hour / 24.0) + smooth_noise(rng, n, 0.3, 72)
    d = np.clip((times - FOULING_START) / pd.Timedelta("1D"), 0.0, None).to_numpy()
    fouling = 0.055 * d + 0.00017 * d**2  # strainer loss at BEP flow [m]
    head = 8.6 + level - (0.6 + fouling) * q**2  # NPSHa [m]
    rho = density(temp)
    p_abs = (head - p["tap_elevation"] - velocity_head(flow, p["tap_bore"])) * rho * G / 1000
    p_abs += vapour_pressure_kpa(temp)
    columns["HX701.SUCT_PRESS"] = p_abs - P_ATM + rng.normal(0, 0.15, n)
    columns["HX701.SUCT_TEMP"] = temp + rng.normal(0, 0.05, n)
    columns["HX701.FLOW"] = np.abs(flow)
    columns["HX701.RUN"] = run.astype(float)
    truth["HX-701"] = (head, npsh3(p["npsh3_bep"], q), run)

    # ---- HX-702: jacket cooling water; supply 12 K warmer from 2026-04-10
    p = PUMPS[1]
    run = stops(rng, n, 1.5)
    q = 0.92 + 0.06 * afternoon + smooth_noise(rng, n, 0.03, 4)
    q = np.where(run, q, 0.0)
    flow = p["bep_flow"] * q + np.where(run, rng.normal(0, 0.6, n), rng.normal(0, 0.2, n))
    temp = 60.0 + 5.0 * season + 3.5 * afternoon + smooth_noise(rng, n, 1.5, 72)
    temp += np.where(times >= HX702_STEP, HX702_STEP_K, 0.0)
    rho = density(temp)
    p_abs = 84.5 - 0.8 * q**2 + smooth_noise(rng, n, 0.4, 24)
    head = (p_abs - vapour_pressure_kpa(temp)) * 1000 / (rho * G)
    head += velocity_head(flow, p["tap_bore"]) + p["tap_elevation"]
    columns["HX702.SUCT_PRESS"] = p_abs - P_ATM + rng.normal(0, 0.1, n)
    columns["HX702.SUCT_TEMP"] = temp + rng.normal(0, 0.05, n)
    columns["HX702.FLOW"] = np.abs(flow)
    columns["HX702.RUN"] = run.astype(float)
    truth["HX-702"] = (head, npsh3(p["npsh3_bep"], q), run)

    decimals = {"SUCT_PRESS": 2, "SUCT_TEMP": 2, "FLOW": 1, "RUN": 0}
    arrays = [pa.array(times, type=pa.timestamp("ms", tz="UTC"))]
    names = ["timestamp"]
    for tag, values in columns.items():
        rounded = np.round(values, decimals[tag.split(".")[1]]).astype(np.float32)
        arrays.append(pa.array(rounded))
        names.append(tag)
    OUT_FILE.parent.mkdir(parents=True, exist_ok=True)
    pq.write_table(pa.Table.from_arrays(arrays, names=names), OUT_FILE, compression="zstd")

    with PUMPS_FILE.open("w", newline="") as f:
        writer = csv.DictWriter(f, fieldnames=REGISTER_HEADER, lineterminator="\n")
        writer.writeheader()
        for p in PUMPS:
            stem = p["stem"]
            writer.writerow({
                "pump_id": p["pump_id"], "service": p["service"], "area": p["area"],
                "fluid": "Water", "application": p["application"],
                "suction_pressure_tag": f"{stem}.SUCT_PRESS", "suction_pressure_unit": "kPa",
                "suction_pressure_reference": "gauge",
                "temperature_tag": f"{stem}.SUCT_TEMP", "temperature_unit": "degC",
                "flow_tag": f"{stem}.FLOW", "flow_unit": "m3/h", "run_tag": f"{stem}.RUN",
                "tap_elevation [m]": p["tap_elevation"], "tap_bore [mm]": p["tap_bore"],
                "rated_speed [rpm]": p["rated_speed"], "bep_flow [m3/h]": p["bep_flow"],
                "curve_id": p["curve_id"], "impeller_eyes": 1,
            })  # fmt: skip
    with CURVES_FILE.open("w", newline="") as f:
        writer = csv.writer(f, lineterminator="\n")
        writer.writerow(["curve_id", "flow", "flow_unit", "npsh3", "npsh3_unit"])
        for p in PUMPS:
            for frac in CURVE_POINTS:
                value = float(npsh3(p["npsh3_bep"], np.array(frac)))
                writer.writerow([p["curve_id"], round(p["bep_flow"] * frac, 1), "m3/h",
                                 round(value, 2), "m"])  # fmt: skip

    # generator's own truth: ratio and share of running time below guidance, per month
    print(f"wrote {OUT_FILE.relative_to(ROOT)} ({OUT_FILE.stat().st_size / 1e6:.2f} MB)")
    month = local.strftime("%Y-%m")
    for pump_id, (head, n3, run) in truth.items():
        required = np.maximum(1.2 * n3, n3 + 1.0)
        frame = pd.DataFrame({"month": month, "ratio": head / n3, "below": head < required})
        frame = (
            frame[run]
            .groupby("month")
            .agg(ratio_median=("ratio", "median"), below_pct=("below", "mean"))
        )
        frame["below_pct"] = (100 * frame["below_pct"]).round(1)
        print(pump_id)
        print(frame.round(2).to_string())


if __name__ == "__main__":
    main()
