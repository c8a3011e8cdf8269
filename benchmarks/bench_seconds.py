"""Benchmark of one-second data: a fleet-month on 2 cores, a pump-year in bounded memory.

Run from the repository root::

    .venv/bin/python benchmarks/bench_seconds.py                      # full size
    .venv/bin/python benchmarks/bench_seconds.py --pumps 4 --days 3 --year-days 20 --runs 1

The data (invented, built once with a fixed random state, cached in ``benchmarks/_data/``,
git-ignored; each pump's file written one local day per row group, so that building a
pump-year never holds more than a day of it)
    fleet   ``--pumps`` (50) water pumps x ``--days`` (30) days at one second: 130 M
            pump-samples at full size; one wide Parquet file per pump (zstd) with a UTC
            timestamp, suction pressure [kPa g], temperature [degC], flow [m3/h], run status.
            Margins differ per pump; daily swings, suction sags below NPSH3, stops, a
            historian outage and lost samples.
    year    one such pump over ``--year-days`` (365) days: 31.5 M samples per tag, across
            both clock changes of Europe/Berlin.

The measures (each in its own subprocess, so that each peak resident memory, ``ru_maxrss``
of the process and of its largest child, is its own; run ``--runs`` times, min and median)
    fleet        ``screening.scan(fleet, processes=2)``: the target is 60 s on 2 cores.
    year_scan    ``screening.scan(year, processes=1)``: a pump-year in time chunks of
                 ``[data] chunk_samples`` (default 500 000 samples per tag: 5 days at 1 s).
    year_onset   ``screening.investigate(year, pump, start, end)`` over the pump-year.
    month        the first 30 days of the year pump, chunked (as shipped) ...
    month_whole  ... and in one piece (``chunk_samples = 0``): the naive baseline.
    same         both month runs in one process, every table compared exactly (hours,
                 summary, daily, quality, per-piece series, plot buckets, operating points).
    ingest       ``pumpscreen ingest`` of the year pump's export (one wide Parquet file of
                 ``--year-days`` days) into a dataset in a temporary folder: each file read in
                 blocks of rows, each partition written tag by tag. ``--checkout`` measures
                 another checkout's code instead (the naive baseline: the whole-file ingest
                 before blocks, run only with a small ``--year-days``, since it holds the
                 whole file melted into rows: about 22 GB for a pump-year).

Load average is printed before and after (the machine may be shared: timings are noisy,
peaks are not). Targets are printed as PASS or MISS; the process never fails on a miss.
"""

from __future__ import annotations

import argparse
import json
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

# the checkout this script sits in is the one measured (a worktree beside an installed copy)
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
import runs  # noqa: E402  benchmarks/runs.py: the machine, the load, repeated runs

DATA = Path(__file__).resolve().parent / "_data"
FIXED_RANDOM_STATE = 20261203
GENERATOR_VERSION = 1  # bump when the generator changes, so cached plants are rebuilt
TZ = "Europe/Berlin"
FLEET_START = pd.Timestamp("2026-10-01", tz=TZ)
YEAR_START = pd.Timestamp("2026-01-01", tz=TZ)
G = 9.80665
P_ATM = 101_325.0

PLANT_TOML = """[site]
name = "Synthetic one-second plant (invented)"
elevation = "0 m"
timezone = "Europe/Berlin"

[register]
pumps = "pumps.csv"
curves = "curves.csv"

[data]
stale_limit = "10 s"
frozen_after = "2 h"
good_quality = ["good"]
{chunk}

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
ratio = 1.1
margin = "0.6 m"
"""

CURVES = """curve_id,flow,flow_unit,npsh3,npsh3_unit
C1,20,m3/h,2.0,m
C1,50,m3/h,2.5,m
C1,80,m3/h,3.2,m
C1,100,m3/h,4.0,m
C1,120,m3/h,5.2,m
"""

HEADER = (
    "pump_id,service,area,fluid,application,suction_pressure_tag,suction_pressure_unit,"
    "suction_pressure_reference,temperature_tag,temperature_unit,flow_tag,flow_unit,speed_tag,"
    "speed_unit,run_tag,tap_elevation [m],tap_bore [mm],rated_speed [rpm],bep_flow [m3/h],"
    "curve_id,npsh3_exponent,impeller_eyes,stale_limit"
)


# --- the synthetic plant -------------------------------------------------------------------
def _day(pid_seed: int, day: int, t: pd.DatetimeIndex, base: dict) -> dict[str, np.ndarray]:
    """One pump's columns over one local day of one-second times ``t``."""
    rng = np.random.default_rng([FIXED_RANDOM_STATE, pid_seed, day])
    n = len(t)
    s = np.arange(n) / 86_400.0
    phase = 2 * np.pi * (s + base["phase"])
    nodes = rng.normal(0, 1.0, 26)
    slow = np.interp(s * 24, np.arange(26), nodes)
    run = np.ones(n)
    if rng.random() < 0.3:  # a stop of up to a few hours
        a = int(rng.integers(0, n - 3600))
        run[a : a + int(rng.integers(600, 4 * 3600))] = 0
    ps = base["ps"] + 8 * np.sin(phase) + 2 * slow + rng.normal(0, 0.3, n)
    if rng.random() < 0.25:  # a suction sag (some below NPSH3)
        a = int(rng.integers(0, n - 7200))
        length = int(rng.integers(300, 7200))
        ps[a : a + length] -= rng.uniform(20, 60) * np.sin(np.linspace(0, np.pi, length))
    tt = base["tt"] + 3 * np.sin(phase + 1) + 0.5 * slow + rng.normal(0, 0.05, n)
    ft = (base["ft"] + 12 * np.sin(phase + 2) + 3 * slow + rng.normal(0, 0.5, n)) * run
    cols = {"PS": np.round(ps, 2), "TT": np.round(tt, 2), "FT": np.round(ft, 2), "RUN": run}
    if rng.random() < 0.05:  # a historian outage
        a = int(rng.integers(0, n - 3600))
        for v in cols.values():
            v[a : a + int(rng.integers(60, 3600))] = np.nan
    for v in cols.values():
        v[rng.random(n) < 2e-4] = np.nan
    return cols


def _build(folder: Path, pumps: int, start: pd.Timestamp, days: int) -> None:
    """Register, curves and one file per pump, one local day per row group."""
    (folder / "exports").mkdir(parents=True, exist_ok=True)
    rows = []
    rng = np.random.default_rng(FIXED_RANDOM_STATE)
    bases = []
    for i in range(pumps):
        pid = f"P{i + 1:03d}"
        bases.append({"phase": rng.uniform(), "ps": rng.uniform(-20, 60),
                      "tt": rng.uniform(15, 70), "ft": rng.uniform(50, 100)})  # fmt: skip
        rows.append(",".join([
            pid, "water service", "U1", "Water", "water", f"{pid}.PS", "kPa", "gauge",
            f"{pid}.TT", "degC", f"{pid}.FT", "m3/h", "", "", f"{pid}.RUN", "0", "100",
            "1480", "80", "C1", "", "", "",
        ]))  # fmt: skip
    (folder / "pumps.csv").write_text(HEADER + "\n" + "\n".join(rows) + "\n")
    (folder / "curves.csv").write_text(CURVES)
    for i, base in enumerate(bases):
        pid = f"P{i + 1:03d}"
        path = folder / "exports" / f"{pid}.parquet"
        writer = None
        for day in range(days):
            a = (start + pd.Timedelta(days=day)).normalize()
            a = pd.Timestamp(a.date(), tz=TZ)
            b = pd.Timestamp((a + pd.Timedelta(days=1, hours=2)).date(), tz=TZ)
            t = pd.date_range(a.tz_convert("UTC"), b.tz_convert("UTC"), freq="1s",
                              inclusive="left")  # fmt: skip
            cols = _day(i, day, t, base)
            table = pa.table({"timestamp": pa.array(t.as_unit("ns"), pa.timestamp("ns", tz="UTC")),
                              **{f"{pid}.{k}": v for k, v in cols.items()}})  # fmt: skip
            if writer is None:
                writer = pq.ParquetWriter(path, table.schema, compression="zstd")
            writer.write_table(table, row_group_size=len(t))
        writer.close()


def ensure(name: str, pumps: int, start: pd.Timestamp, days: int) -> Path:
    """Build a plant folder once (cached); return the folder."""
    folder = DATA / f"seconds_{name}_{pumps}p_{days}d"
    marker = folder / "complete.json"
    stamp = {"pumps": pumps, "days": days, "start": str(start), "version": GENERATOR_VERSION}
    if marker.exists() and json.loads(marker.read_text()) == stamp:
        return folder
    t0 = time.perf_counter()
    print(f"building {folder.name} (once) ...", flush=True)
    for old in (folder / "exports").glob("*.parquet"):
        old.unlink()
    _build(folder, pumps, start, days)
    marker.write_text(json.dumps(stamp))
    print(f"  built in {time.perf_counter() - t0:.0f} s", flush=True)
    return folder


def plant_file(folder: Path, name: str, start, days: int, chunk: int | None = None) -> Path:
    """A plant file in ``folder`` over ``days`` from ``start`` (``chunk``: chunk_samples)."""
    end = start + pd.Timedelta(days=days)
    text = PLANT_TOML.format(start=start.isoformat(), end=end.isoformat(),
                             chunk="" if chunk is None else f"chunk_samples = {chunk}")  # fmt: skip
    path = folder / f"{name}.toml"
    path.write_text(text)
    return path


# --- the measures, each run in a worker subprocess -----------------------------------------
def _peaks() -> dict:
    me = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    child = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0
    return {"peak_mb": max(me, child), "self_mb": me, "child_mb": child}


def measure(kind: str, args) -> dict:
    if args.checkout:  # the code measured is that checkout's
        sys.path.insert(0, str(Path(args.checkout).resolve()))
    import screening

    year = ensure("year", 1, YEAR_START, args.year_days)
    import_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    t = time.perf_counter()
    out: dict = {}
    if kind == "fleet":
        fleet = ensure("fleet", args.pumps, FLEET_START, args.days)
        r = screening.scan(plant_file(fleet, "fleet", FLEET_START, args.days), processes=2)
        out["samples"] = int(r.samples)
        out["screened"] = len(r.summary)
    elif kind in ("year_scan", "month", "month_whole"):
        days = args.year_days if kind == "year_scan" else min(30, args.year_days)
        chunk = 0 if kind == "month_whole" else None
        r = screening.scan(plant_file(year, kind, YEAR_START, days, chunk), processes=1)
        out["samples"] = int(r.samples)
    elif kind == "year_onset":
        toml = plant_file(year, "year_onset", YEAR_START, args.year_days)
        end = YEAR_START + pd.Timedelta(days=args.year_days)
        r = screening.investigate(toml, "P001", YEAR_START, end)
        out["episodes"] = len(r.episodes)
    elif kind == "ingest":
        from screening.inputs.ingest import ingest

        toml = plant_file(year, "ingest", YEAR_START, args.year_days)
        with tempfile.TemporaryDirectory(dir=DATA, prefix="ingest-") as tmp:
            s = ingest(toml, Path(tmp) / "dataset")
        out["rows"], out["partitions"], out["bytes_written"] = s.rows, s.partitions, s.bytes_written
        out["code"] = str(Path(screening.__file__).resolve().parents[1])
    elif kind == "same":
        days = min(30, args.year_days)
        runs = []
        for name, chunk in (("same_chunked", None), ("same_whole", 0)):
            toml = plant_file(year, name, YEAR_START, days, chunk)
            runs.append(screening.scan(toml, keep_series=True, plot_buckets=1500, processes=1))
        out["same"], out["differs"] = _compare(*runs)
    out["seconds"] = time.perf_counter() - t
    out.update(_peaks())
    out["import_mb"] = import_mb
    return out


def _compare(a, b) -> tuple[bool, str]:
    """Whether two scans' tables are identical (exactly), and the first that is not."""
    try:
        for name in ("hours", "summary", "daily", "quality", "problems"):
            pd.testing.assert_frame_equal(getattr(a, name), getattr(b, name), check_exact=True)
        for pid in b.series:
            pd.testing.assert_frame_equal(a.series[pid], b.series[pid], check_exact=True)
            pd.testing.assert_frame_equal(a.plots[pid], b.plots[pid], check_exact=True)
            for k in ("flow_edges", "npsha_edges", "hours"):
                np.testing.assert_array_equal(a.points[pid][k], b.points[pid][k])
    except AssertionError as exc:
        return False, str(exc).splitlines()[0]
    return True, ""


def run_worker(kind: str, args) -> dict | None:
    """Run one measure in a fresh interpreter; return its JSON result (None if it failed)."""
    opts = [f"--pumps={args.pumps}", f"--days={args.days}", f"--year-days={args.year_days}"]
    opts += [f"--checkout={args.checkout}"] if args.checkout else []
    proc = subprocess.run([sys.executable, __file__, "--worker", kind, *opts],
                          capture_output=True, text=True)  # fmt: skip
    lines = [ln for ln in proc.stdout.splitlines() if ln.startswith("RESULT ")]
    if proc.returncode != 0 or not lines:
        print(f"  {kind} failed (exit {proc.returncode}):\n{proc.stderr[-3000:]}", flush=True)
        return None
    return json.loads(lines[-1].removeprefix("RESULT "))


# --- the report ----------------------------------------------------------------------------
def report(args, r: dict[str, list[dict]]) -> None:
    """Print min and median of each measure and the targets (PASS or MISS)."""

    def stat(kind, key):
        values = [m[key] for m in r.get(kind, []) if m]
        return (min(values), statistics.median(values)) if values else None

    fleet_samples = args.pumps * args.days * 86_400
    print(f"\n{'measure':<44}{'runs':>5}{'s min':>9}{'s median':>10}{'M samp/s':>10}"
          f"{'peak MB':>9}")  # fmt: skip
    print("-" * 87)
    for kind, label, samples in (
        ("fleet", f"fleet {args.pumps} pumps x {args.days} d, 2 processes", fleet_samples),
        ("year_scan", f"pump-year scan ({args.year_days} d), chunked", args.year_days * 86_400),
        ("year_onset", f"pump-year onset ({args.year_days} d)", args.year_days * 86_400),
        ("month", "pump-month scan, chunked", min(30, args.year_days) * 86_400),
        ("month_whole", "pump-month scan, one piece (naive)", min(30, args.year_days) * 86_400),
        (
            "ingest",
            f"pump-year ingest ({args.year_days} d){' (--checkout)' * bool(args.checkout)}",
            args.year_days * 86_400,
        ),
    ):
        s, mb = stat(kind, "seconds"), stat(kind, "peak_mb")
        if s is None:
            continue
        rate = samples / s[1] / 1e6
        print(f"{label:<44}{len(r[kind]):>5}{s[0]:>9.1f}{s[1]:>10.1f}{rate:>10.2f}"
              f"{mb[1]:>9,.0f}")  # fmt: skip
    imports = [m["import_mb"] for runs in r.values() for m in runs if m]
    print(
        "\n(peak MB: median of the runs' largest of the measuring process and its largest "
        f"child; of which the interpreter and imports about {max(imports, default=0):,.0f} MB)"
    )
    checks = []
    s = stat("fleet", "seconds")
    if s:
        checks.append((s[1] <= 60, f"{args.pumps} pumps x {args.days} d x 1 s on 2 cores <= 60 s"
                       f" (median {s[1]:.1f} s, min {s[0]:.1f} s)"))  # fmt: skip
    for kind, label in (("year_scan", "scan"), ("year_onset", "onset"), ("ingest", "ingest")):
        mb = stat(kind, "peak_mb")
        if mb:
            checks.append((mb[1] <= 1024, f"pump-year ({args.year_days} d) {label} peak <= 1 GB"
                           f" ({mb[1]:,.0f} MB)"))  # fmt: skip
    same = [m for m in r.get("same", []) if m]
    if same:
        ok = all(m["same"] for m in same)
        why = "" if ok else f": {next(m['differs'] for m in same if not m['same'])}"
        checks.append((ok, f"chunked tables identical to one piece (pump-month){why}"))
    print("\ntargets")
    for ok, text in checks:
        print(f"  {'PASS' if ok else 'MISS'}  {text}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pumps", type=int, default=50)
    parser.add_argument("--days", type=int, default=30)
    parser.add_argument("--year-days", type=int, default=365)
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument(
        "--only", nargs="*",
        default=["fleet", "year_scan", "year_onset", "month", "month_whole", "same"],
        help="measures to run (fleet, year_scan, year_onset, month, month_whole, same, ingest)",
    )  # fmt: skip
    parser.add_argument("--checkout", help="measure the code of another checkout (ingest)")
    parser.add_argument("--worker", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.worker:
        print("RESULT " + json.dumps(measure(args.worker, args)), flush=True)
        return
    if "fleet" in args.only:
        ensure("fleet", args.pumps, FLEET_START, args.days)
    ensure("year", 1, YEAR_START, args.year_days)
    before, fresh_before = runs.load(), runs.fresh_memory_ms_per_mb()
    results: dict[str, list[dict]] = {}
    for kind in args.only:
        count = 1 if kind == "same" else args.runs
        for i in range(count):
            print(f"measuring {kind} ({i + 1}/{count}) ...", flush=True)
            results.setdefault(kind, []).append(run_worker(kind, args))
    print(runs.machine_text(before, runs.load(), (fresh_before, runs.fresh_memory_ms_per_mb())))
    report(args, results)


if __name__ == "__main__":
    main()
