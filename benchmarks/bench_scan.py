"""Benchmark of the plant scan on a synthetic plant: speed, peak memory, and two yardsticks.

Run from the repository root::

    .venv/bin/python benchmarks/bench_scan.py                 # 500 pumps, 30 days (full size)
    .venv/bin/python benchmarks/bench_scan.py --pumps 20 --days 3 --repeat 1   # quick run

The data
    An invented plant of ``--pumps`` centrifugal pumps sampled every minute for ``--days`` days
    (500 x 30 x 1440 = 21.6 million pump-samples at full size), built once with a fixed random
    state and cached in ``benchmarks/_data/`` (git-ignored). Each pump has a gauge suction
    pressure (kPa or psi), a temperature (degC or degF), a flow (m3/h or gpm), a run status and,
    on every 5th pump, a speed. Mostly water (cold, warm, and hot saturated service), some
    methanol and toluene. Margins are set per pump and disturbed by daily swings, suction
    pressure sags, flow excursions past the curve and hot-vessel transients, so that some pumps
    dip below guidance and below NPSH3. A few gaps, missing samples and sentinel values are
    sprinkled in. The exports are wide Parquet files (zstd), 50 pumps per file, with a UTC
    ``timestamp`` column; the plant file, register and curves follow tests/plantmaker.py.

The measures (each in its own subprocess, so that each peak resident memory, ``ru_maxrss``,
is its own; the files are in the page cache, having just been written or read; ``--only``
picks some of the measures). Every subprocess imports the package of the checkout this file
sits in (``benchmarks/runs.py`` puts it first on ``PYTHONPATH``), not whatever the venv's
editable install points at.
    read    pyarrow.parquet.read_table of every file, all columns, to pandas, one file at a time
            (each frame dropped before the next; pyarrow uses its own thread pool).
    scan    ``screening.scan(plant_toml, start, end, processes=1)``. The calculation-only
            time is the sum of the wall time spent inside ``calculate_pump`` during that same
            scan: ``calculate_pump`` and ``prepare_tag`` of one pump, the scan's ``scan_tables``
            (with ``table_part``, each batch's rows) and the loader's ``ExportIndex.read`` are
            wrapped by timers (about a microsecond each, some 3 000 calls at full size). numpy
            runs these array operations on one thread, so that time is one core's. Peak memory
            includes the interpreter and imports (printed beside it).
    scan2   the same with ``processes=2`` (a process pool; the parts then run in the workers,
            so only the total is measured; "largest worker" is the peak of the biggest child).
    pace    the ``scan`` measure at a pool worker's pace: the whole plant in one process with
            Arrow on one thread and its jemalloc pool (``execution.read_as_pool_worker``), as
            each worker of ``scan2`` reads. ``scan2`` against it is how the pool scales per
            core; ``scan2`` against ``scan`` is what a user gains, lower because one process
            already decodes on two threads. Printed beside that: the most two workers can gain
            over one process when together they spend one process's CPU seconds and nothing
            runs alone, 2 x scan's seconds / scan's CPU seconds.
    pair    two ``scan`` measures started together, each in its own interpreter: the later
            one's seconds. Two workers can be no more than 2 x scan / pair times faster than
            one process on this machine (printed beside the two-worker target: a machine
            whose two cores share a memory bus, a cache or a host core gives two processes
            less than twice one's throughput, whatever the program does).
    halves  two one-process scans started together (after both have imported), each of half
            the plant's pumps with Arrow on one thread and its jemalloc pool
            (``execution.read_as_pool_worker``), as a pool worker runs: the pool's
            work without the pool (no fork, no pickled results, each its own set-up and
            memory). The later one's end, from the earlier start. A two-worker scan as fast
            as this loses nothing of its own: what is then left between it and one process is
            the machine's (two heaps of fresh memory for one plant's work, the cores' shared
            memory bandwidth and host) and the one process's own use of a second core (Arrow
            decodes on two threads).
    dask    the same on a local Dask cluster of 2 worker processes (``cluster=client``); the
            cluster's start-up is timed apart.
    cli     ``pumpscreen scan`` of this checkout as a child process (every core), including
            writing the report folder; inside it the scan and the report writing
            (``write_report``) are timed apart.
    naive   a Python loop over the first pump's samples calling CoolProp's PropsSI twice per
            sample (vapour pressure and density) plus the NPSHa formula, timed on a slice
            (``--naive-samples``, 20 000 by default) and scaled to the whole plant.

Each measure runs ``--repeat`` times (3 by default), the measures interleaved so that a busy
spell on the machine touches all of them; the table gives the median and the least seconds,
and the medians of the rest. The machine (CPU model from /proc/cpuinfo, cores) and the load
average before and after are printed: figures from a shared machine vary by tens of percent.
At full size with three runs the whole benchmark takes 2-3 minutes (104-180 s on the
project's shared 2-core machine, 2026-12-03, the longest in a slow spell), plus 10 s the first
time to build the plant.

Samples/s always means pump-samples (pumps x minutes) per second. "CPU s" is the user plus
system CPU time of the measure's process (above the wall time where pyarrow reads with more than
one thread). Targets (issue 20) are printed as PASS or MISS, judged on the medians; the process
never fails on a miss.
"""

from __future__ import annotations

import argparse
import concurrent.futures
import functools
import importlib
import json
import resource
import subprocess
import sys
import textwrap
import time
from collections import defaultdict
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import runs  # benchmarks/runs.py: the machine, the load, repeated runs

DATA = Path(__file__).resolve().parent / "_data"
FIXED_RANDOM_STATE = 20261001
GENERATOR_VERSION = 3  # bump when the generator changes, so cached plants are rebuilt
START = pd.Timestamp("2026-10-01T00:00:00Z")
PUMPS_PER_FILE = 50
G = 9.80665
SITE_ELEVATION_M = 120.0
P_ATM = 101_325.0 * (1 - 2.25577e-5 * SITE_ELEVATION_M) ** 5.25588  # standard atmosphere [Pa]
M3H_PER_GPM = 0.2271247
PA_PER_PSI = 6894.757

# Curve id, BEP flow [m3/h], NPSH3 at BEP [m], rated speed [rpm], units of the CSV rows.
CURVES = [
    ("K030", 30, 2.4, 2960, "m3/h", "m"),
    ("K060", 60, 3.0, 2960, "gpm", "ft"),
    ("K100", 100, 3.6, 2960, "m3/h", "m"),
    ("K160", 160, 3.2, 1480, "gpm", "ft"),
    ("K250", 250, 3.8, 1480, "m3/h", "m"),
    ("K400", 400, 4.5, 1480, "m3/h", "m"),
    ("K700", 700, 5.4, 1480, "gpm", "ft"),
]
CURVE_POINTS = (0.25, 0.4, 0.6, 0.8, 1.0, 1.1, 1.2, 1.3)  # fractions of BEP flow

PLANT_TOML = """[site]
name = "Synthetic benchmark plant (invented)"
elevation = "{elevation} m"
timezone = "Europe/Berlin"

[register]
pumps = "pumps.csv"
curves = "curves.csv"

[data]
stale_limit = "5 min"
frozen_after = "6 h"
good_quality = ["good"]

[running]
min_flow_fraction = 0.05
min_speed_fraction = 0.2

[window]
start = "{start}"
end = "{end}"

[[exports]]
files = "exports/*.parquet"
layout = "wide"
time_column = "timestamp"

[policy]
ample_ratio = 2.0
[[policy.rules]]
application = "water"
max_suction_specific_speed = 7500
ratio = 1.1
margin = "0.6 m"
[[policy.rules]]
application = "water"
min_suction_specific_speed = 7500
ratio = 1.2
margin = "1.0 m"
[[policy.rules]]
application = "hydrocarbon"
ratio = 1.1
margin = "1.0 m"
"""


# --- the synthetic plant -------------------------------------------------------------------
def npsh3_shape(x):
    """NPSH3 relative to its value at BEP, at flow fraction ``x`` of BEP (invented shape)."""
    return 0.55 + 0.45 * np.asarray(x) ** 2.5


@functools.cache
def saturation(fluid: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Generator's own coarse table of T [K], ln p_v [ln Pa], rho [kg/m3] (CoolProp, 0.5 K)."""
    from CoolProp.CoolProp import PropsSI

    temps = np.arange(275.0, 470.0, 0.5)
    p = np.array([PropsSI("P", "T", t, "Q", 0, fluid) for t in temps])
    rho = np.array([PropsSI("D", "T", t, "Q", 0, fluid) for t in temps])
    return temps, np.log(p), rho


def register(n_pumps: int, rng: np.random.Generator) -> pd.DataFrame:
    """The pump register: one row per pump, plus hidden columns (``_...``) for the generator."""
    rows = []
    for i in range(n_pumps):
        pid = f"P{i + 1:03d}"
        fluid = rng.choice(["Water", "Methanol", "Toluene"], p=[0.8, 0.1, 0.1])
        cid, bep, _, rated, _, _ = CURVES[rng.integers(len(CURVES))]
        kind = "subcooled"
        if fluid == "Water":
            temp_c, kind = [
                (rng.uniform(8, 35), "subcooled"),
                (rng.uniform(40, 85), "subcooled"),
                (rng.uniform(105, 150), "saturated"),
            ][rng.choice(3, p=[0.55, 0.3, 0.15])]
        else:
            temp_c = rng.uniform(15, 45) if fluid == "Methanol" else rng.uniform(25, 90)
        low = rng.random() < 0.06
        ratio = rng.uniform(0.9, 1.1) if low else 1.05 + rng.gamma(2.0, 0.45)
        bore_mm = 5 * round(1000 * np.sqrt(4 * bep / 3600 / (np.pi * 2.0)) / 5)
        speed_tag = i % 5 == 4
        rows.append(
            {
                "pump_id": pid,
                "service": f"{fluid.lower()} {kind} service {i % 7 + 1}",
                "area": f"U{i // 100 + 1}",
                "fluid": fluid,
                "application": "water" if fluid == "Water" else "hydrocarbon",
                "suction_pressure_tag": f"{pid}.PS",
                "suction_pressure_unit": rng.choice(["kPa", "psi"]),
                "suction_pressure_reference": "gauge",
                "temperature_tag": f"{pid}.TT",
                "temperature_unit": rng.choice(["degC", "degF"], p=[0.7, 0.3]),
                "flow_tag": f"{pid}.FT",
                "flow_unit": rng.choice(["m3/h", "gpm"], p=[0.6, 0.4]),
                "speed_tag": f"{pid}.SPD" if speed_tag else "",
                "speed_unit": "rpm" if speed_tag else "",
                "run_tag": f"{pid}.RUN",
                "tap_elevation [m]": round(rng.uniform(-0.5, 2.5), 1),
                "tap_bore [mm]": bore_mm,
                "rated_speed [rpm]": rated,
                "bep_flow [m3/h]": bep,
                "curve_id": cid,
                "npsh3_exponent": "",
                "impeller_eyes": "",
                "stale_limit": "",
                "_temp_k": temp_c + 273.15,
                "_kind": kind,
                "_ratio": ratio,
                "_duty": rng.choice(["duty", "cycling", "standby"], p=[0.6, 0.3, 0.1]),
            }
        )
    return pd.DataFrame(rows)


def _slow(rng, n, every, scale):
    """Smooth random variation: normal values every ``every`` minutes, linearly joined."""
    nodes = rng.normal(0.0, scale, n // every + 2)
    return np.interp(np.arange(n), np.arange(len(nodes)) * every, nodes)


def _episodes(rng, n, count, min_len, max_len):
    """Sum of ``count`` trapezoid-shaped episodes of height 1 at random times."""
    out = np.zeros(n)
    for _ in range(count):
        length = int(rng.integers(min_len, max_len))
        start = int(rng.integers(0, max(1, n - length)))
        ramp = max(1, length // 4)
        shape = np.minimum(
            1.0, np.minimum(np.arange(length) + 1, length - np.arange(length)) / ramp
        )
        out[start : start + length] = np.maximum(out[start : start + length], shape[: n - start])
    return out


def _run_status(rng, n, duty):
    on_mean, off_mean = {"duty": (20 * 1440, 360), "cycling": (1200, 480), "standby": (480, 7200)}[
        duty
    ]
    out, pos, state = np.zeros(n), 0, duty != "standby"
    while pos < n:
        d = int(rng.exponential(on_mean if state else off_mean)) + 30
        out[pos : pos + d] = float(state)
        pos, state = pos + d, not state
    return out


def pump_columns(p: pd.Series, n: int, rng: np.random.Generator) -> dict[str, np.ndarray]:
    """The export columns of one pump (in its register units) over ``n`` minutes."""
    cid, bep, npsh3_bep, rated, _, _ = next(c for c in CURVES if c[0] == p["curve_id"])
    phase = 2 * np.pi * np.arange(n) / 1440.0
    run = _run_status(rng, n, p["_duty"])
    x = (
        rng.uniform(0.55, 1.05)
        + 0.08 * np.sin(phase + rng.uniform(0, 6.3))
        + _slow(rng, n, 60, 0.04)
    )
    if rng.random() < 0.2:  # pushed out along the curve now and then, sometimes off it
        x = x + rng.uniform(0.2, 0.45) * _episodes(rng, n, rng.poisson(3), 60, 600)
    x = np.clip(x + rng.normal(0, 0.01, n), 0.15, 1.6) * run
    # temperature [K]; a hot saturated vessel's pump sees it about 10 min late
    t_vessel = p["_temp_k"] + rng.uniform(0.5, 4) * np.sin(phase + rng.uniform(0, 6.3))
    t_vessel += _slow(rng, n, 180, 0.8)
    if p["_kind"] == "saturated":  # load drops: the vessel cools by a few kelvin in minutes
        t_vessel -= rng.uniform(3, 8) * _episodes(rng, n, rng.poisson(4), 30, 180)
    t_pump = np.concatenate([np.full(10, t_vessel[0]), t_vessel[:-10]])
    temps, ln_pv, rho_tab = saturation(p["fluid"])
    rho = np.interp(p["_temp_k"], temps, rho_tab)
    # suction pressure [Pa abs]: the NPSHa aimed at, less friction growing with flow, less sags
    target = p["_ratio"] * npsh3_bep
    area = np.pi * (p["tap_bore [mm]"] / 1000) ** 2 / 4
    vh_bep = (bep / 3600 / area) ** 2 / (2 * G)
    h_fric = rng.uniform(0.2, 1.5)
    head = target - p["tap_elevation [m]"] - vh_bep + h_fric - h_fric * x**2
    head *= 1 + 0.03 * np.sin(phase + rng.uniform(0, 6.3)) + _slow(rng, n, 120, 0.02)
    head -= rng.uniform(0.1, 0.45) * target * _episodes(rng, n, rng.poisson(3 * n / 43200), 20, 240)
    if p["_kind"] == "saturated":
        p_surface = np.exp(np.interp(t_vessel, temps, ln_pv))
    else:
        p_surface = np.exp(np.interp(p["_temp_k"], temps, ln_pv))
    # a liquid cannot be held below its vapour pressure: the suction settles just above it
    floor = np.exp(np.interp(t_pump, temps, ln_pv)) + rho * G * (0.3 - p["tap_elevation [m]"])
    p_gauge = np.maximum(p_surface + rho * G * head, floor) - P_ATM + rng.normal(0, 150, n)
    cols = {}
    if p["suction_pressure_unit"] == "kPa":
        cols["PS"] = np.round(p_gauge / 1000, 2)
    else:
        cols["PS"] = np.round(p_gauge / PA_PER_PSI, 3)
    t_meas = t_pump + rng.normal(0, 0.05, n) - 273.15
    cols["TT"] = np.round(t_meas if p["temperature_unit"] == "degC" else t_meas * 1.8 + 32, 2)
    speed = (np.clip(0.5 + 0.45 * x, 0.6, 1.02) + rng.normal(0, 0.005, n)) * run
    flow = x * speed if p["speed_tag"] else x
    flow_m3h = flow * bep
    cols["FT"] = np.round(flow_m3h if p["flow_unit"] == "m3/h" else flow_m3h / M3H_PER_GPM, 2)
    if p["speed_tag"]:
        cols["SPD"] = np.round(speed * rated, 1)
    cols["RUN"] = run
    if rng.random() < 0.3:  # a historian outage of a few hours on all of the pump's tags
        lo = int(rng.integers(0, n - 60))
        for v in cols.values():
            v[lo : lo + int(rng.integers(60, 480))] = np.nan
    for v in cols.values():  # the odd lost sample, and a rare sentinel on temperature
        v[rng.random(n) < 5e-4] = np.nan
    cols["TT"][rng.random(n) < 1e-5] = -9999.0
    return {f"{p['pump_id']}.{k}": v for k, v in cols.items()}


def ensure_plant(pumps: int, days: int) -> Path:
    """Build the plant folder once (cached); return the plant file's path."""
    folder = DATA / f"plant_{pumps}p_{days}d"
    toml = folder / "plant.toml"
    marker = folder / "complete.json"
    stamp = {"pumps": pumps, "days": days, "version": GENERATOR_VERSION}
    if marker.exists() and json.loads(marker.read_text()) == stamp:
        return toml
    t0 = time.perf_counter()
    print(f"building the synthetic plant in {folder} (once) ...", flush=True)
    (folder / "exports").mkdir(parents=True, exist_ok=True)
    for old in (folder / "exports").glob("*.parquet"):
        old.unlink()
    rng = np.random.default_rng(FIXED_RANDOM_STATE)
    reg = register(pumps, rng)
    reg[[c for c in reg.columns if not c.startswith("_")]].to_csv(folder / "pumps.csv", index=False)
    lines = ["curve_id,flow,flow_unit,npsh3,npsh3_unit"]
    for cid, bep, npsh3, _, qu, hu in CURVES:
        for x in CURVE_POINTS:
            q = x * bep / (M3H_PER_GPM if qu == "gpm" else 1.0)
            h = float(npsh3_shape(x)) * npsh3 / (0.3048 if hu == "ft" else 1.0)
            lines.append(f"{cid},{q:.1f},{qu},{h:.2f},{hu}")
    (folder / "curves.csv").write_text("\n".join(lines) + "\n")
    end = START + pd.Timedelta(days=days)
    toml.write_text(
        PLANT_TOML.format(elevation=SITE_ELEVATION_M, start=START.isoformat(), end=end.isoformat())
    )
    n = days * 1440
    times = pa.array(pd.date_range(START, periods=n, freq="1min"), pa.timestamp("ms", tz="UTC"))
    for k, lo in enumerate(range(0, pumps, PUMPS_PER_FILE)):
        block = reg.iloc[lo : lo + PUMPS_PER_FILE]
        data = {"timestamp": times}
        for i, p in block.iterrows():
            data.update(pump_columns(p, n, np.random.default_rng([FIXED_RANDOM_STATE, i])))
        pq.write_table(
            pa.table(data), folder / "exports" / f"part_{k + 1:03d}.parquet", compression="zstd"
        )
    marker.write_text(json.dumps(stamp))
    print(f"  built in {time.perf_counter() - t0:.1f} s", flush=True)
    return toml


# --- the measures, each run in a worker subprocess -----------------------------------------
def peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def cpu_s(who=resource.RUSAGE_SELF) -> float:
    usage = resource.getrusage(who)
    return usage.ru_utime + usage.ru_stime


def _timed(fn, key, totals):
    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        t = time.perf_counter()
        try:
            return fn(*args, **kwargs)
        finally:
            totals[key] += time.perf_counter() - t

    return wrapper


def _margin_hours(hours: pd.DataFrame) -> dict:
    """Hours per margin state (the operating regions are a second kind with their own sum)."""
    if "kind" in hours.columns:
        hours = hours[hours["kind"] == "margin"]
    return hours.groupby("state", sort=False)["hours"].sum().to_dict()


def measure_scan(
    toml: Path, start, end, processes: int = 1, cluster=None, one_thread: bool = False
) -> dict:
    """The Python API scan. With one process the time is split by step (the steps run here);
    with more processes or a cluster they run elsewhere and only the total is measured.
    ``one_thread``: Arrow on one thread and its jemalloc pool, as a pool worker reads."""
    import screening
    from screening.engine.execution import read_as_pool_worker
    from screening.inputs import export_reader, loader

    if one_thread:
        read_as_pool_worker()

    scan_mod = importlib.import_module("screening.engine.scan")  # the module, not the function
    one_pump = importlib.import_module("screening.engine.one_pump")
    totals = defaultdict(float)
    for mod, name, key in ((one_pump, "calculate_pump", "calculate_pump"),
                           (one_pump, "prepare_tag", "prepare_tag"),
                           (scan_mod, "scan_tables", "scan_tables"),
                           (scan_mod, "table_part", "scan_tables")):  # fmt: skip
        setattr(mod, name, _timed(getattr(mod, name), key, totals))
    loader.ExportIndex.read = _timed(loader.ExportIndex.read, "read", totals)
    # a batch's series are made when each pump first asks for them (the lazy read): reading too
    export_reader.LazySeries.__getitem__ = _timed(export_reader.LazySeries.__getitem__, "read",
                                                  totals)  # fmt: skip
    base, cpu = peak_mb(), cpu_s()
    client = startup = None
    if cluster:
        from distributed import Client, LocalCluster

        t = time.perf_counter()
        client = Client(LocalCluster(n_workers=cluster, threads_per_worker=1,
                                     dashboard_address=None))  # fmt: skip
        startup = time.perf_counter() - t
    t = time.perf_counter()
    result = screening.scan(toml, start, end, processes=processes, cluster=client)
    seconds = time.perf_counter() - t
    if client is not None:
        client.close()
    return {
        "seconds": seconds,
        "startup_s": startup,
        "cpu_s": cpu_s() - cpu + cpu_s(resource.RUSAGE_CHILDREN),
        "peak_mb": peak_mb(),
        "worker_peak_mb": resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0,
        "import_mb": base,
        "parts": totals,
        "tag_samples": result.samples,
        "screened": len(result.summary),
        "not_screened": len(result.problems),
        "hours": _margin_hours(result.hours),
    }


#: Runs the command line of this checkout, timing its scan and its report writing apart (the
#: times go to stderr; the command itself is unchanged).
CLI_RUNNER = """
import sys, time
import screening.cli.scan_cmd as cmd

def timed(fn, key):
    def wrapper(*args, **kwargs):
        t = time.perf_counter()
        try:
            return fn(*args, **kwargs)
        finally:
            print(f"BENCH {key} {time.perf_counter() - t:.6f}", file=sys.stderr)
    return wrapper

cmd.scan = timed(cmd.scan, "scan_s")
cmd.write_report = timed(cmd.write_report, "report_s")
from screening.cli.main import app
sys.argv = ["pumpscreen", *sys.argv[1:]]
app()
"""


def measure_cli(toml: Path, start, end) -> dict:
    """``pumpscreen scan`` of this checkout as a child process (every core), report included;
    the scan and the report writing are timed inside it."""
    out = toml.parent / "report"
    args = ["scan", str(toml), "--from", str(start), "--to", str(end), "--out", str(out)]
    t = time.perf_counter()
    proc = subprocess.run(
        [sys.executable, "-c", CLI_RUNNER, *args, "--quiet"], capture_output=True, text=True,
        env=runs.child_env(), cwd=runs.ROOT,
    )  # fmt: skip
    seconds = time.perf_counter() - t
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0
    if proc.returncode not in (0, 3):
        raise RuntimeError(f"pumpscreen exited {proc.returncode}: {proc.stderr[-2000:]}")
    inner = {}
    for line in proc.stderr.splitlines():
        if line.startswith("BENCH "):
            _, key, value = line.split()
            inner[key] = float(value)
    return {"seconds": seconds, "cpu_s": cpu_s(resource.RUSAGE_CHILDREN), "peak_mb": peak,
            **inner}  # fmt: skip


def measure_naive(toml: Path, start, end, samples: int, samples_total: int) -> dict:
    """Time the per-sample loop on ``samples`` samples; scale to ``samples_total``."""
    from CoolProp.CoolProp import PropsSI

    from screening.inputs.units import to_si

    reg = pd.read_csv(toml.parent / "pumps.csv", keep_default_na=False)
    p = reg.iloc[0]
    first = sorted((toml.parent / "exports").glob("*.parquet"))[0]
    cols = [p["suction_pressure_tag"], p["temperature_tag"], p["flow_tag"]]
    frame = pq.read_table(first, columns=cols).to_pandas().dropna().head(samples)
    ps = to_si(frame[cols[0]].to_numpy(), p["suction_pressure_unit"], "pressure") + P_ATM
    ts = to_si(frame[cols[1]].to_numpy(), p["temperature_unit"], "temperature")
    qs = to_si(frame[cols[2]].to_numpy(), p["flow_unit"], "flow")
    area = np.pi * (p["tap_bore [mm]"] / 1000) ** 2 / 4
    z, fluid = float(p["tap_elevation [m]"]), p["fluid"]
    out = np.empty(len(ts))
    t, cpu = time.perf_counter(), cpu_s()
    for i in range(len(ts)):
        try:
            p_v = PropsSI("P", "T", ts[i], "Q", 0, fluid)
            rho = PropsSI("D", "T", ts[i], "Q", 0, fluid)
        except ValueError:  # a sentinel temperature outside the fluid's range
            out[i] = np.nan
            continue
        v = qs[i] / area
        out[i] = (ps[i] - p_v) / (rho * G) + v * v / (2 * G) + z
    seconds, cpu = time.perf_counter() - t, cpu_s() - cpu
    scale = samples_total / len(ts)
    return {
        "seconds": seconds * scale,
        "cpu_s": cpu * scale,
        "samples": len(ts),
        "fluid": fluid,
        "peak_mb": peak_mb(),
    }


def measure_read(toml: Path, start, end) -> dict:
    files = sorted((toml.parent / "exports").glob("*.parquet"))
    t, cpu = time.perf_counter(), cpu_s()
    values = 0
    for f in files:
        frame = pq.read_table(f).to_pandas()
        values += frame.size
        del frame
    seconds = time.perf_counter() - t
    size = sum(f.stat().st_size for f in files) / 2**20
    return {
        "seconds": seconds,
        "cpu_s": cpu_s() - cpu,
        "peak_mb": peak_mb(),
        "files": len(files),
        "values": values,
        "file_mb": size,
    }


def run_worker(kind: str, args) -> dict | None:
    """Run one measure in a fresh interpreter on this checkout's package; return its JSON
    result (None if it failed)."""
    if kind == "pair":
        return measure_pair(args)
    if kind == "halves":
        return measure_halves(args)
    opts = f"--pumps {args.pumps} --days {args.days} --naive-samples {args.naive_samples}"
    return runs.run_child([__file__, "--worker", kind, *opts.split()], kind)


def measure_pair(args) -> dict | None:
    """Two one-process scans of the plant started together, each in its own interpreter: what
    this machine gives two processes that share nothing. Two workers can be at most
    ``2 x (one scan alone) / (the later of the pair)`` times faster than one process: the
    machine's own ceiling for the two-worker target (its cores may share a memory bus, a
    cache or a host core)."""
    with concurrent.futures.ThreadPoolExecutor(2) as pool:
        pair = list(pool.map(lambda _: run_worker("scan", args), range(2)))
    if not all(pair):
        return None
    each = [p["seconds"] for p in pair]
    return {"seconds": max(each), "first_s": min(each), "cpu_s": sum(p["cpu_s"] for p in pair)}


def measure_halves(args) -> dict | None:
    """Two lone processes, each scanning half the plant's pumps with Arrow on one thread,
    started together once both have imported (a file each says ready, a third says go): the
    later end from the earlier start, and both processes' CPU seconds."""
    import tempfile
    import threading

    opts = f"--pumps {args.pumps} --days {args.days}".split()
    stop = threading.Event()  # both children have ended (a child that failed never says ready)
    with tempfile.TemporaryDirectory() as sync:

        def half(k: int):
            return runs.run_child(
                [__file__, "--worker", "half", "--half", str(k), "--sync", sync, *opts], "half"
            )

        def starter() -> None:
            while not stop.is_set():
                if all((Path(sync) / f"ready{k}").exists() for k in (0, 1)):
                    (Path(sync) / "go").touch()
                    return
                time.sleep(0.001)

        with concurrent.futures.ThreadPoolExecutor(3) as pool:
            pool.submit(starter)
            try:
                both = list(pool.map(half, (0, 1)))
            finally:
                stop.set()
    if not all(both):
        return None
    start = min(h["start"] for h in both)
    return {
        "seconds": max(h["end"] for h in both) - start,
        "skew_s": max(h["start"] for h in both) - start,
        "cpu_s": sum(h["cpu_s"] for h in both),
    }


def measure_half(toml: Path, start, end, half: int, sync: str) -> dict:
    """One of :func:`measure_halves`' processes: the first or the second half of the plant's
    pumps (sorted by id, as the scan's batches go), in this process, Arrow on one thread and
    its jemalloc pool, as a pool worker."""
    import screening
    from screening.engine.execution import read_as_pool_worker

    read_as_pool_worker()
    scan = screening.scan  # the package imports its engine on first use: before the start
    ids = sorted(screening.load_plant(toml).pumps)
    part = ids[: len(ids) // 2] if half == 0 else ids[len(ids) // 2 :]
    (Path(sync) / f"ready{half}").touch()
    waited = time.perf_counter()
    while not (Path(sync) / "go").exists():  # the other process never came: give up
        if time.perf_counter() - waited > 300:
            raise TimeoutError("the other half's process did not start within 300 s")
        time.sleep(0.001)
    cpu, t0 = cpu_s(), time.time()
    result = scan(toml, start, end, pumps=part, processes=1)
    return {
        "start": t0,
        "end": time.time(),
        "cpu_s": cpu_s() - cpu,
        "screened": len(result.summary),
    }


# --- the report ----------------------------------------------------------------------------
def _row(name: str, m: dict, samples: int, seconds=None, low=None, note: str = "") -> None:
    """One line of the table: median and least seconds, rate at the median, CPU, memory."""
    seconds = m.get("seconds") if seconds is None else seconds
    low = m.get("seconds_min") if low is None else low
    rate = f"{samples / seconds:>13,.0f}" if seconds else f"{'-':>13}"
    least = f"{low:>8.2f}" if low is not None else f"{'':>8}"
    cpu = f"{m['cpu_s']:>8.2f}" if "cpu_s" in m else f"{'':>8}"
    mb = f"{m['peak_mb']:>8,.0f}" if "peak_mb" in m else f"{'':>8}"
    print(f"{name:<46}{seconds:>8.2f}{least}{rate}{cpu}{mb}  {note}".rstrip())


def _scan_rows(scan: dict, samples: int) -> None:
    row = functools.partial(_row, samples=samples)
    row("scan, Python API screening.scan(processes=1)", scan,
        note=f"({scan['import_mb']:,.0f} MB after imports)")  # fmt: skip
    parts = scan["parts"]
    for key, label in (
        ("read", "reading exports, making series"),
        ("prepare_tag", "units, frozen, range (prepare_tag)"),
        ("calculate_pump", "calculation (calculate_pump)"),
        ("scan_tables", "result tables (scan_tables)"),
    ):
        row(f"  of which {label}", {}, seconds=parts.get(key, 0.0), low=None)
    rest = scan["seconds"] - sum(
        parts.get(k, 0.0) for k in ("read", "prepare_tag", "calculate_pump", "scan_tables")
    )
    row("  of which the rest (config, index, ...)", {}, seconds=rest)


def report(args, samples: int, r: dict, machine: str) -> None:
    """Print the machine, the table, the ratios and the targets (PASS or MISS on the medians;
    never an error exit)."""
    read, scan, cli, naive = (r.get(k) for k in ("read", "scan", "cli", "naive"))
    scan2, dask = r.get("scan2"), r.get("dask")
    row = functools.partial(_row, samples=samples)
    print(f"\npumpscreen scan benchmark: {args.pumps} pumps x {args.days} days x 1440 minutes")
    print(f"= {samples:,} pump-samples (the samples/s below are pump-samples per second)")
    print(machine)
    if read:
        print(f"exports: {read['files']} wide Parquet files, {read['file_mb']:,.0f} MB (zstd)")
    print(f"each measure run {args.repeat} time(s) in a fresh process; seconds: median and least;")
    print("samples/s, CPU s and peak MB: medians")
    print(f"\n{'measure':<46}{'median':>8}{'least':>8}{'samples/s':>13}{'CPU s':>8}{'peak MB':>8}")
    print("-" * 91)
    if read:
        row("bare read (pyarrow, all columns, to pandas)", read)
    if scan:
        _scan_rows(scan, samples)
    pace = r.get("pace")
    if pace:
        row("scan at a worker's pace (Arrow on 1 thread)", pace)
    if scan2:
        row("scan, 2 worker processes (the default here)" if runs.cores()[1] == 2
            else "scan, 2 worker processes", scan2,
            note=f"(largest worker {scan2['worker_peak_mb']:,.0f} MB)")  # fmt: skip
    pair = r.get("pair")
    if pair:
        row("two lone one-process scans at once (later)", pair, samples=2 * samples,
            note=f"(the first done in {pair['first_s']:.2f} s)")  # fmt: skip
    halves = r.get("halves")
    if halves:
        row("two lone processes, half the pumps each", halves,
            note=f"(started {halves['skew_s'] * 1000:.0f} ms apart)")  # fmt: skip
    if dask:
        row("scan, local Dask cluster of 2 workers", dask,
            note=f"(+ {dask['startup_s']:.1f} s to start the cluster)")  # fmt: skip
    if cli:
        row("pumpscreen scan (command line + report)", cli)
        for key, label in (("scan_s", "scan (every core)"), ("report_s", "writing the report")):
            if key in cli:
                row(f"  of which {label}", {}, seconds=cli[key])
    if naive:
        row("naive per-sample PropsSI loop (scaled)", naive,
            note=f"({naive['samples']:,} {naive['fluid']} samples timed)")  # fmt: skip
    if scan:
        print(f"\nscreened {scan['screened']} pumps ({scan['not_screened']} not screened), "
              f"{scan['tag_samples']:,} tag samples; share of pump-hours by state:")  # fmt: skip
        total = sum(scan["hours"].values())
        shares = ", ".join(f"{k} {100 * v / total:.1f} %" for k, v in scan["hours"].items())
        print(textwrap.fill(shares, 88, initial_indent="  ", subsequent_indent="  "))
    _ratios(r)
    _targets(samples, r)


def _ratios(r: dict) -> None:
    read, scan, cli, naive = (r.get(k) for k in ("read", "scan", "cli", "naive"))
    scan2, dask = r.get("scan2"), r.get("dask")
    calc = scan["parts"].get("calculate_pump", 0.0) if scan else 0.0
    print("\nratios of medians")
    if scan and read:
        print(f"  scan (1 process) / bare read:     {scan['seconds'] / read['seconds']:8.1f} x")
    if scan2 and read:
        print(f"  scan (2 processes) / bare read:   {scan2['seconds'] / read['seconds']:8.1f} x")
    if cli and read:
        print(f"  command line / bare read:         {cli['seconds'] / read['seconds']:8.1f} x")
    if scan and scan2:
        print(f"  2 workers against 1:              {scan['seconds'] / scan2['seconds']:8.2f} x")
    pace = r.get("pace")
    if pace and scan2:
        print(f"  2 workers against 1 at their pace:{pace['seconds'] / scan2['seconds']:8.2f} x  "
              "(the pool's scaling per core)")  # fmt: skip
    if scan:
        print(f"  most 2 can gain on one CPU's work: {_most(scan):7.2f} x  (2 x scan's seconds / "
              "its CPU seconds)")  # fmt: skip
    pair = r.get("pair")
    if scan and pair:
        ceiling = 2 * scan["seconds"] / pair["seconds"]
        print(f"  two lone scans at once against 1: {ceiling:8.2f} x  (two processes' throughput "
              "here)")  # fmt: skip
    halves = r.get("halves")
    if scan and halves:
        print(f"  halves in two lone processes / 1: {scan['seconds'] / halves['seconds']:8.2f} x  "
              "(the pool's work without the pool)")  # fmt: skip
    if scan2 and halves:
        print(f"  2 workers against the halves:     {halves['seconds'] / scan2['seconds']:8.2f} x  "
              "(above 1: the pool loses nothing of its own)")  # fmt: skip
    if scan2 and dask:
        print(f"  Dask (2 workers) / process pool:  {dask['seconds'] / scan2['seconds']:8.2f} x")
    if scan and naive:
        print(f"  scan speed-up over naive:         {naive['seconds'] / scan['seconds']:8.0f} x")
        if calc:
            print(f"  calculation speed-up over naive:  {naive['seconds'] / calc:8.0f} x")


def _most(scan: dict) -> float:
    """The most two workers can gain over one process [-] when together they spend the one
    process's CPU seconds and no part runs alone: 2 x its seconds / its CPU seconds. One
    process that already keeps a second core busy part of the time (Arrow decodes on two
    threads) leaves less to gain; any serial part or CPU lost to two busy cores, less still."""
    return 2 * scan["seconds"] / scan["cpu_s"]


def _targets(samples: int, r: dict) -> None:
    """The targets of issue 20, judged on the medians."""
    read, scan, scan2, cli = (r.get(k) for k in ("read", "scan", "scan2", "cli"))
    checks = []
    if scan:
        calc = scan["parts"].get("calculate_pump", 0.0)
        rate = samples / calc if calc else 0.0
        checks.append((rate >= 15e6, f"calculation >= 15 M samples/s, 1 core ({rate / 1e6:.1f} M)"))
        checks.append(
            (scan["peak_mb"] < 1024, f"scan peak memory < 1 GB ({scan['peak_mb']:,.0f} MB)")
        )
    best = scan2 if scan2 and runs.cores()[1] == 2 else scan
    if best and read:
        ratio = best["seconds"] / read["seconds"]
        checks.append(
            (ratio <= 3.0, f"screening.scan() (every core) <= 3 x bare read ({ratio:.1f} x)")
        )
    if scan and scan2:
        gain = scan["seconds"] / scan2["seconds"]
        halves, pace = r.get("halves"), r.get("pace")
        beside = [f"at most {_most(scan):.2f} x on one process's CPU seconds"]
        if halves:
            beside.append(f"half the plant in each of two lone processes: "
                          f"{scan['seconds'] / halves['seconds']:.2f} x")  # fmt: skip
        if pace:
            beside.append(f"against 1 at a worker's pace: "
                          f"{pace['seconds'] / scan2['seconds']:.2f} x")  # fmt: skip
        text = f"2 workers >= 1.8 x faster than 1 ({gain:.2f} x; " + "; ".join(beside) + ")"
        checks.append((gain >= 1.8, text))
    if cli:
        checks.append((cli["seconds"] <= 10.0,
                       f"command line incl. report <= 10 s ({cli['seconds']:.1f} s)"))  # fmt: skip
        if "report_s" in cli:
            rep = cli["report_s"]
            checks.append((rep <= 3.0, f"report writing <= 3 s of it ({rep:.1f} s)"))
        peak = cli["peak_mb"]
        checks.append((peak < 1024, f"command line peak < 1 GB ({peak:,.0f} MB)"))
    print("\ntargets (on the medians)")
    for ok, text in checks:
        print(f"  {'PASS' if ok else 'MISS'}  {text}")


MEASURES = ["read", "scan", "pace", "scan2", "pair", "halves", "dask", "cli", "naive"]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pumps", type=int, default=500)
    parser.add_argument("--days", type=int, default=30)
    parser.add_argument("--naive-samples", type=int, default=20_000)
    parser.add_argument("--repeat", type=int, default=3, help="runs of each measure (3)")
    parser.add_argument("--only", nargs="*", default=MEASURES,
                        help="measures to run (read, scan, pace, scan2, pair, halves, dask, "
                             "cli, naive)")  # fmt: skip
    parser.add_argument("--worker", help=argparse.SUPPRESS)
    parser.add_argument("--half", type=int, help=argparse.SUPPRESS)
    parser.add_argument("--sync", help=argparse.SUPPRESS)
    args = parser.parse_args()
    toml = ensure_plant(args.pumps, args.days)
    start, end = START, START + pd.Timedelta(days=args.days)
    samples = args.pumps * args.days * 1440
    if args.worker:
        if args.worker == "naive":
            out = measure_naive(toml, start, end, args.naive_samples, samples)
        elif args.worker == "half":
            out = measure_half(toml, start, end, args.half, args.sync)
        else:
            measures = {
                "scan": measure_scan,
                "pace": functools.partial(measure_scan, one_thread=True),
                "scan2": functools.partial(measure_scan, processes=2),
                "dask": functools.partial(measure_scan, cluster=2),
                "cli": measure_cli,
                "read": measure_read,
            }
            out = measures[args.worker](toml, start, end)
        print("RESULT " + json.dumps(out, default=float))
        return
    before, t0 = runs.load(), time.perf_counter()
    fresh_before = runs.fresh_memory_ms_per_mb()
    got: dict[str, list] = {k: [] for k in args.only}
    for i in range(args.repeat):  # interleaved, so that a busy spell touches every measure
        for k in args.only:
            print(f"measuring {k} (run {i + 1} of {args.repeat}) ...", flush=True)
            got[k].append(run_worker(k, args))
    results = {k: runs.summarise(v) for k, v in got.items()}
    machine = runs.machine_text(before, runs.load(), (fresh_before, runs.fresh_memory_ms_per_mb()))
    report(args, samples, {k: v for k, v in results.items() if v}, machine)
    print(f"\nthe benchmark took {time.perf_counter() - t0:.0f} s")


if __name__ == "__main__":
    main()
