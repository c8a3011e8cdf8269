"""What every benchmark records beside its figures: the machine, its load, repeated runs.

Wall times on a shared machine vary by tens of percent from run to run, so a figure without
the machine and its load says little, and one run says less. The benchmarks therefore run each
measure several times in a fresh process, print the minimum (the least disturbed run) and the
median (what is judged against a target), and name the CPU, the cores and the load average
before and after.
"""

from __future__ import annotations

import json
import os
import platform
import statistics
import subprocess
import sys
from pathlib import Path

#: The checkout this file sits in: measures run its package, not an installed one.
ROOT = Path(__file__).resolve().parents[1]


def child_env() -> dict[str, str]:
    """The environment for a measure's child process: the checkout's package first on the path
    (``import screening`` must measure the code under test, not the venv's editable install
    of another checkout)."""
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH")) if p)
    return env


def cpu_model() -> str:
    """The CPU's model name from /proc/cpuinfo (Linux), else what the platform says."""
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or platform.machine() or "unknown"


def cores() -> tuple[int, int]:
    """Cores of the machine and cores this process may use (CPU affinity) [-]."""
    total = os.cpu_count() or 1
    try:
        usable = len(os.sched_getaffinity(0))
    except AttributeError:  # not Linux
        usable = total
    return total, usable


def load() -> tuple[float, float, float]:
    """Load average over 1, 5 and 15 minutes [-] (runnable processes)."""
    try:
        return os.getloadavg()
    except OSError:
        return (float("nan"),) * 3


def machine_text(before: tuple[float, float, float], after: tuple[float, float, float]) -> str:
    """Lines naming the machine, Python and the load average before and after the runs."""
    total, usable = cores()
    fmt = "{:.2f} / {:.2f} / {:.2f}".format
    return (
        f"machine: {cpu_model()}, {total} cores ({usable} usable), Python "
        f"{platform.python_version()}, {platform.system()} {platform.release()}\n"
        f"load average (1 / 5 / 15 min): before {fmt(*before)}, after {fmt(*after)} "
        f"(other work on the machine slows every figure)"
    )


def run_child(args: list[str], label: str) -> dict | None:
    """Run one measure in a fresh interpreter (``python args...``), return the JSON it prints
    on a line starting ``RESULT `` (None, saying why, if it failed)."""
    proc = subprocess.run(
        [sys.executable, *args], capture_output=True, text=True, env=child_env(), cwd=ROOT
    )
    lines = [ln for ln in proc.stdout.splitlines() if ln.startswith("RESULT ")]
    if proc.returncode != 0 or not lines:
        print(f"  {label} failed (exit {proc.returncode}):\n{proc.stderr[-3000:]}", flush=True)
        return None
    return json.loads(lines[-1].removeprefix("RESULT "))


def summarise(runs: list[dict]) -> dict | None:
    """One measure's runs as one result: every number the median of the runs (the last run's
    value for anything else), with ``runs`` (count) and ``seconds_min``, ``seconds_all``
    [s] beside; None without any successful run."""
    runs = [r for r in runs if r]
    if not runs:
        return None
    out = _median_of(runs)
    out["runs"] = len(runs)
    out["seconds_all"] = [r["seconds"] for r in runs]
    out["seconds_min"] = min(out["seconds_all"])
    return out


def _median_of(runs: list):
    first = runs[-1]
    if isinstance(first, dict):
        keys = [k for k in first if all(isinstance(r, dict) and k in r for r in runs)]
        return {k: _median_of([r[k] for r in runs]) for k in keys}
    if all(isinstance(v, int) and not isinstance(v, bool) for v in runs):
        return statistics.median_low(runs)  # counts stay whole
    if all(isinstance(v, int | float) and not isinstance(v, bool) for v in runs):
        return statistics.median(runs)
    return first
