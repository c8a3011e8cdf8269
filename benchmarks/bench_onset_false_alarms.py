"""False alarms and detections of the onset tests on simulated days that depend on each other.

Run from the repository root::

    .venv/bin/python benchmarks/bench_onset_false_alarms.py      # 400 noise, 200 planted
    .venv/bin/python benchmarks/bench_onset_false_alarms.py --series 50 --null-series 100

The series (invented, fixed random states): 365 daily values of a flow-normalised suction
condition [m], AR(1) noise x_t = φ·x_{t−1} + e_t started from its stationary distribution, with
a marginal standard deviation of ``--sd`` (0.2 m by default, about what the demo history's daily
medians show) and lag-one correlation φ = 0, 0.5 and 0.8. Three cases per φ:

    none    noise only: every accepted change is a false alarm;
    step    a 0.5 m loss from day 200 on;
    ramp    a steady decline of 0.01 m a day (0.3 m a month) from day 245 on (1.2 m by the end).

Each series goes through :func:`screening.onset.changepoint.estimate_onset` (the step) and
:func:`estimate_ramp_onset` (the broken stick) at their default settings (penalty 2·ln n,
segments of at least 5 days, no smallest change) with one bootstrap refit: the bootstrap gives
the interval only, not the decision. Beside them, the naive test the tool used before (days taken
as independent: n·ln(SSE0/SSE1) > 2·ln n on the same least-squares fits). Rates are the share of
series in which a change is accepted (400 noise-only series per φ, so that a rate near 5 % is
known to about ±1 %, one binomial standard error); a detection of the step counts apart when
its date is within 14 days of the planted one. The time per series (both estimators, and the
naive test) is the median of three runs over 20 series with a step at φ = 0.5. Targets: false
alarms <= 5 % for each φ, detections >= 90 %. Printed as PASS or MISS; the script never fails
on a miss.
"""

from __future__ import annotations

import argparse
import math
import platform
import statistics
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's package
from screening.onset.changepoint import (  # noqa: E402
    _hinge_fits,
    _single_split,
    _sse,
    estimate_onset,
    estimate_ramp_onset,
)

DAYS = pd.date_range("2026-01-01", periods=365, freq="D")
STEP_DAY, RAMP_DAY, STEP, SLOPE = 200, 245, 0.5, 0.01


def cpu_model() -> str:
    """The CPU's model name from /proc/cpuinfo (else platform.processor())."""
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as f:
            for line in f:
                if line.startswith("model name"):
                    return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or "unknown"


def ar1(n: int, phi: float, sd: float, rng: np.random.Generator) -> np.ndarray:
    """AR(1) noise with marginal standard deviation ``sd`` [m] and lag-one correlation phi."""
    e = rng.normal(0.0, sd * math.sqrt(1.0 - phi**2), n)
    x = np.empty(n)
    x[0] = rng.normal(0.0, sd)
    for i in range(1, n):
        x[i] = phi * x[i - 1] + e[i]
    return x


def series(case: str, phi: float, sd: float, state: int) -> np.ndarray:
    """One simulated year [m] of the given case."""
    t = np.arange(365.0)
    y = 3.0 + ar1(365, phi, sd, np.random.default_rng(state))
    if case == "step":
        y -= STEP * (t >= STEP_DAY)
    elif case == "ramp":
        y -= SLOPE * np.maximum(0.0, t - RAMP_DAY)
    return y


def naive(y: np.ndarray) -> tuple[bool, bool]:
    """The independent-days test on the same fits: (step accepted, ramp accepted)."""
    n, pen = len(y), 2 * math.log(len(y))
    sse0 = _sse(y)
    k = _single_split(y, 5)
    step = n * math.log(sse0 / (_sse(y[:k]) + _sse(y[k:]))) > pen
    t = np.arange(n, dtype=np.float64)
    sse, slope, _ = _hinge_fits(t, y[None, :], np.arange(5, n - 5))
    j = int(np.argmin(sse[0]))
    return step, n * math.log(sse0 / sse[0, j]) > pen


def run_case(case: str, phi: float, sd: float, count: int) -> dict[str, float]:
    """Acceptance rates of both estimators and of the naive test over ``count`` series."""
    hits = {"step": 0, "step_near": 0, "ramp": 0, "naive_step": 0, "naive_ramp": 0}
    for s in range(count):
        y = series(case, phi, sd, 1000 * int(10 * phi) + s)
        st = estimate_onset(DAYS, y, n_bootstrap=1)
        rp = estimate_ramp_onset(DAYS, y, n_bootstrap=1)
        hits["step"] += st["onset"] is not None
        near = st["onset"] is not None and abs((st["onset"] - DAYS[STEP_DAY]).days) <= 14
        hits["step_near"] += near
        hits["ramp"] += rp["onset"] is not None
        ns, nr = naive(y)
        hits["naive_step"] += ns
        hits["naive_ramp"] += nr
    return {k: v / count for k, v in hits.items()}


def time_per_series(phi: float, sd: float) -> tuple[float, float]:
    """Median of three runs of the time [s] for both estimators on one series (one bootstrap
    refit), and the same for the naive test beside it."""
    ys = [series("step", phi, sd, s) for s in range(20)]
    ours, plain = [], []
    for _ in range(3):
        t0 = time.perf_counter()
        for y in ys:
            estimate_onset(DAYS, y, n_bootstrap=1)
            estimate_ramp_onset(DAYS, y, n_bootstrap=1)
        t1 = time.perf_counter()
        for y in ys:
            naive(y)
        t2 = time.perf_counter()
        ours.append((t1 - t0) / len(ys))
        plain.append((t2 - t1) / len(ys))
    return statistics.median(ours), statistics.median(plain)


def main() -> None:
    """Print the rates per φ and case, the targets and the CPU model."""
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--series", type=int, default=200, help="series per planted case (200)")
    ap.add_argument("--null-series", type=int, default=400,
                    help="noise-only series per correlation (400: a rate of 5 %% is known to "
                    "about +-2 %%)")  # fmt: skip
    ap.add_argument("--sd", type=float, default=0.2, help="marginal noise sd [m] (0.2)")
    args = ap.parse_args()
    print(f"CPU: {cpu_model()}; series of 365 days: {args.null_series} of noise only and "
          f"{args.series} with a planted change per correlation; noise sd {args.sd} m")  # fmt: skip
    print(f"{'phi':>4} {'case':>5} {'step':>6} {'(±14 d)':>8} {'ramp':>6} {'naive step':>11} "
          f"{'naive ramp':>11}")  # fmt: skip
    verdicts = []
    for phi in (0.0, 0.5, 0.8):
        for case in ("none", "step", "ramp"):
            r = run_case(case, phi, args.sd, args.null_series if case == "none" else args.series)
            cells = [r[k] for k in ("step", "step_near", "ramp", "naive_step", "naive_ramp")]
            widths = (6, 8, 6, 11, 11)
            print(
                f"{phi:>4.1f} {case:>5} "
                + " ".join(f"{v:>{w}.1%}" for v, w in zip(cells, widths, strict=True))
            )
            if case == "none":
                verdicts.append((f"false alarms, step, phi {phi}", r["step"] <= 0.05))
                verdicts.append((f"false alarms, ramp, phi {phi}", r["ramp"] <= 0.05))
            elif case == "step":
                verdicts.append((f"step detected near its day, phi {phi}", r["step_near"] >= 0.9))
            else:
                verdicts.append((f"ramp detected, phi {phi}", r["ramp"] >= 0.9))
    ours, plain = time_per_series(0.5, args.sd)
    print(f"time per series with a 0.5 m step, both estimators (median of 3 runs): "
          f"{1000 * ours:.1f} ms; naive test: {1000 * plain:.1f} ms")  # fmt: skip
    for what, ok in verdicts:
        print(f"{'PASS' if ok else 'MISS'}  {what}")


if __name__ == "__main__":
    main()
