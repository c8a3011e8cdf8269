"""The scan gives the same tables wherever the work runs: in this process, in a pool of
processes, or on a local Dask cluster (invented plants; the reference is the in-process run)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from plantmaker import make_plant, pump_row, steady_frame

import screening
from screening.engine.scan import _batches

DEMO = Path(__file__).resolve().parents[1] / "configs" / "demo_plant.toml"
TABLES = ("hours", "summary", "daily", "quality", "problems", "file_problems")


def _same(a, b) -> None:
    for name in TABLES:
        pd.testing.assert_frame_equal(getattr(a, name), getattr(b, name), check_exact=True)
    assert a.samples == b.samples


def _plant(tmp_path):
    """Five pumps in three files over a window of 400 days (one pump per batch), one of them
    with a missing tag (a problem that must travel back the same way)."""
    frames = {}
    for k in range(5):
        f = steady_frame(f"P{k}", periods=2880, pressure_kpa=40.0 + 10 * k)
        f[f"P{k}.PS"] = f[f"P{k}.PS"] + np.sin(np.arange(2880) / 50.0) * 60.0
        frames.setdefault(f"f{k % 3}.csv", []).append(f.set_index("timestamp"))
    wide = {n: pd.concat(fs, axis=1).reset_index() for n, fs in frames.items()}
    wide["f0.csv"] = wide["f0.csv"].drop(columns=["P3.TT"])
    rows = [pump_row(f"P{k}") for k in range(5)]
    return make_plant(tmp_path, wide=wide, rows=rows, start="2026-01-01", end="2027-02-05")


def test_long_windows_get_small_batches(tmp_path):
    path = _plant(tmp_path)
    plant = screening.load_plant(path)
    from screening.inputs.loader import ExportIndex

    index = ExportIndex(plant.settings, plant.base)
    assert len(_batches(plant, index, list(plant.pumps), pd.Timedelta(days=400))) == 5
    assert len(_batches(plant, index, list(plant.pumps), pd.Timedelta(days=31))) == 1


def test_process_pool_gives_the_same_tables(tmp_path):
    path = _plant(tmp_path)
    one = screening.scan(path, processes=1, plot_buckets=200)
    two = screening.scan(path, processes=2, plot_buckets=200)
    _same(one, two)
    assert "P3" in set(one.problems["pump_id"])
    for pid, plot in one.plots.items():
        pd.testing.assert_frame_equal(plot, two.plots[pid])


def test_process_pool_on_the_demo_plant():
    one = screening.scan(DEMO, processes=1)
    two = screening.scan(DEMO, processes=2)
    _same(one, two)


def test_local_dask_cluster_gives_the_same_tables(tmp_path):
    pytest.importorskip("distributed")
    path = _plant(tmp_path)
    one = screening.scan(path, processes=1)
    dask = screening.scan(path, cluster=2)  # a local Dask cluster of two worker processes
    _same(one, dask)


def test_progress_is_reported_per_batch(tmp_path):
    path = _plant(tmp_path)
    seen = []
    screening.scan(path, processes=2, progress=lambda out: seen.append((out.pumps, out.samples)))
    assert sum(p for p, _ in seen) == 5
    assert sum(s for _, s in seen) == screening.scan(path, processes=1).samples


def test_pump_pages_written_in_parallel_are_the_same(tmp_path, monkeypatch):
    from screening.engine.plotdata import DEFAULT_BUCKETS
    from screening.report import plant_report as report

    some = ["CD-412", "RW-502", "DH-202", "CW-103"]
    result = screening.scan(DEMO, plot_buckets=DEFAULT_BUCKETS, pumps=some)
    screening.write_report(result, tmp_path / "one")
    monkeypatch.setattr(report, "PARALLEL_PAGES", 2)
    monkeypatch.setattr(report, "default_processes", lambda: 2)
    screening.write_report(result, tmp_path / "two")
    one = sorted((tmp_path / "one" / "pumps").iterdir())
    two = sorted((tmp_path / "two" / "pumps").iterdir())
    assert [p.name for p in one] == [p.name for p in two] and len(one) == 4
    for a, b in zip(one, two, strict=True):
        assert a.read_bytes() == b.read_bytes()
