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


#: Touches one byte in every 4 KiB page of a fresh 256 MiB array and prints the seconds.
_TOUCH = """
import time, numpy as np
a = np.empty(256 * 2**20, dtype=np.uint8)
t = time.perf_counter(); a[::4096] = 1; print(time.perf_counter() - t)
"""


def fresh_memory_ms_per_mb() -> float:
    """Milliseconds per MiB [ms] for a fresh process to write its first byte into each page of
    256 MiB it has just allocated (the kernel maps a zeroed page on the first write).

    On the 2-core AMD EPYC virtual machine the figures in docs/scale.md come from, it
    measured 0.3 ms right after another process had used and freed the memory, and 2.5 to
    3 ms on pages the machine had not used for a while: its host backs the guest's memory
    lazily and pays a page fault of its own on each first touch. Every measure that allocates
    varies with it (a scan of the benchmark plant allocates several hundred MiB). NaN if the
    child fails."""
    try:
        out = subprocess.run([sys.executable, "-c", _TOUCH], capture_output=True, text=True,
                             timeout=120, check=True)  # fmt: skip
        return float(out.stdout.strip()) * 1000.0 / 256.0
    except (subprocess.SubprocessError, ValueError, OSError):
        return float("nan")


def machine_text(
    before: tuple[float, float, float],
    after: tuple[float, float, float],
    fresh_memory: tuple[float, float] | None = None,
) -> str:
    """Lines naming the machine, Python, the load average before and after the runs and, when
    measured, the cost of fresh memory [ms per MiB] before and after
    (:func:`fresh_memory_ms_per_mb`)."""
    total, usable = cores()
    fmt = "{:.2f} / {:.2f} / {:.2f}".format
    text = (
        f"machine: {cpu_model()}, {total} cores ({usable} usable), Python "
        f"{platform.python_version()}, {platform.system()} {platform.release()}\n"
        f"load average (1 / 5 / 15 min): before {fmt(*before)}, after {fmt(*after)} "
        f"(other work on the machine slows every figure)"
    )
    if fresh_memory is not None:
        text += (
            f"\nfresh memory, first write per MiB: before {fresh_memory[0]:.2f} ms, after "
            f"{fresh_memory[1]:.2f} ms (0.3 ms where the pages were recently used; several ms: "
            f"the host backs this machine's memory lazily, and every figure varies with it)"
        )
    return text


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
