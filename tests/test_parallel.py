"""The scan gives the same tables wherever the work runs: in this process, in a pool of
processes, or on a local Dask cluster (invented plants; the reference is the in-process run)."""

from __future__ import annotations

import os
import re
import zipfile
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


def _plant(tmp_path, pumps: int = 5):
    """Five pumps (or ``pumps``) in three files over a window of 400 days (one pump per
    batch), one of them with a missing tag (a problem that must travel back the same way)."""
    frames = {}
    for k in range(pumps):
        f = steady_frame(f"P{k}", periods=2880, pressure_kpa=40.0 + 10 * k)
        f[f"P{k}.PS"] = f[f"P{k}.PS"] + np.sin(np.arange(2880) / 50.0) * 60.0
        frames.setdefault(f"f{k % 3}.csv", []).append(f.set_index("timestamp"))
    wide = {n: pd.concat(fs, axis=1).reset_index() for n, fs in frames.items()}
    wide["f0.csv"] = wide["f0.csv"].drop(columns=["P3.TT"])
    rows = [pump_row(f"P{k}") for k in range(pumps)]
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


def test_the_pools_last_batches_are_cut_keeping_lines_together():
    """The last batches of a pool are cut into pieces (the workers then finish within a piece
    of each other); every pump stays, once and in order, and a shared suction line's members
    stay in one piece."""
    from types import SimpleNamespace

    from screening.engine.execution import TAIL_PIECES, _finer_tail

    lines = {"P23": "L1", "P24": "L1", "P25": "L1", "P32": "L2", "P33": "L2"}
    ids = [f"P{k:02d}" for k in range(40)]
    plant = SimpleNamespace(pumps={p: SimpleNamespace(suction_line_id=lines.get(p)) for p in ids})
    batches = [ids[:10], ids[10:20], ids[20:30], ids[30:]]
    out = _finer_tail(plant, batches, 2)
    assert out[:2] == batches[:2]  # the first batches whole
    assert sum(out, []) == ids
    assert all(out)
    for line in ("L1", "L2"):
        members = [p for p, name in lines.items() if name == line]
        assert sum(any(m in piece for m in members) for piece in out) == 1
    # ten pumps, L1's three members one unit: eight units in four pieces of two units
    assert TAIL_PIECES == 4
    assert [len(piece) for piece in out[2:6]] == [2, 4, 2, 2]
    # L2's two members one unit: nine units in pieces of 2, 2, 2 and 3 units
    assert [len(piece) for piece in out[6:]] == [2, 3, 2, 3]
    # too few batches for two workers to share a tail: unchanged
    assert _finer_tail(plant, batches[:3], 2) == batches[:3]


def test_a_pool_with_cut_batches_gives_the_same_tables(tmp_path, monkeypatch):
    """Eight pumps in batches of two over a short window: the last two batches are cut into
    single pumps."""
    import screening.engine.scan as scan_module

    path = _plant(tmp_path, pumps=8)
    window = ("2026-01-01", "2026-01-04")
    one = screening.scan(path, *window, processes=1)
    monkeypatch.setattr(scan_module, "BATCH_PUMPS", 2)
    seen = []
    two = screening.scan(path, *window, processes=2, progress=lambda out: seen.append(out.pumps))
    assert sorted(seen) == [1, 1, 1, 1, 2, 2]
    _same(one, two)
    assert "P3" in set(two.problems["pump_id"])


def _arrow_allocator(plant, result) -> str:
    import pyarrow

    return pyarrow.default_memory_pool().backend_name


def test_pool_workers_keep_arrow_memory_and_this_process_is_left_alone(tmp_path):
    """A pool worker reads with Arrow's jemalloc pool where pyarrow has it
    (allocator.keep_arrow_memory); the caller's process keeps its own allocator."""
    import pyarrow

    path = _plant(tmp_path)
    before = pyarrow.default_memory_pool().backend_name
    two = screening.scan(path, processes=2, each_pump=_arrow_allocator)
    one = screening.scan(path, processes=1, each_pump=_arrow_allocator)
    try:
        pyarrow.jemalloc_memory_pool()
        expected = "jemalloc"
    except NotImplementedError:  # a pyarrow built without it: the default stays
        expected = before
    assert len(two.extras) == 4  # P3 lacks a tag
    assert set(two.extras.values()) == {expected}
    assert set(one.extras.values()) == {before}
    assert pyarrow.default_memory_pool().backend_name == before


SOME = ["CD-412", "RW-502", "DH-202", "CW-103"]


@pytest.fixture(scope="module")
def some_pumps():
    from screening.engine.plotdata import DEFAULT_BUCKETS

    return screening.scan(DEMO, plot_buckets=DEFAULT_BUCKETS, pumps=SOME)


def _shared(monkeypatch, cores: int) -> None:
    """Make the report's work shared among forked processes even for four pumps."""
    from screening.report import sharing

    monkeypatch.setattr(sharing, "PARALLEL_PAGES", 2)
    monkeypatch.setattr(sharing, "PAGES_PER_TAKE", 1)
    monkeypatch.setattr(sharing, "default_processes", lambda: cores)


def _same_files(one: Path, two: Path) -> None:
    """Every file of two report folders alike: the workbook's parts but its creation time,
    ``run.json`` and the overview but the time written, every other file byte for byte."""
    names = sorted(p.relative_to(one) for p in one.rglob("*") if p.is_file())
    assert names == sorted(p.relative_to(two) for p in two.rglob("*") if p.is_file())
    written = re.compile(rb"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ?(\+00:00)?")
    for name in names:
        a, b = one / name, two / name
        if name.suffix == ".xlsx":
            za, zb = zipfile.ZipFile(a), zipfile.ZipFile(b)
            assert za.namelist() == zb.namelist()
            for part in za.namelist():
                x, y = za.read(part), zb.read(part)
                if part == "docProps/core.xml":
                    x, y = written.sub(b"", x), written.sub(b"", y)
                assert x == y, f"{name}: {part}"
        elif name.suffix == ".parquet":
            pd.testing.assert_frame_equal(pd.read_parquet(a), pd.read_parquet(b), check_exact=True)
        else:
            x, y = a.read_bytes(), b.read_bytes()
            if name.name in ("run.json", "index.html"):
                x, y = written.sub(b"", x), written.sub(b"", y)
                x = re.sub(rb'"elapsed_s": [0-9.]+', b"", x)
                y = re.sub(rb'"elapsed_s": [0-9.]+', b"", y)
            assert x == y, name


@pytest.mark.parametrize("cores", [2, 3])
def test_a_report_written_by_forked_processes_is_the_same(tmp_path, monkeypatch, some_pumps,
                                                          cores):  # fmt: skip
    screening.write_report(some_pumps, tmp_path / "one")
    _shared(monkeypatch, cores)
    screening.write_report(some_pumps, tmp_path / "two")
    assert len(list((tmp_path / "two" / "pumps").iterdir())) == len(SOME)
    _same_files(tmp_path / "one", tmp_path / "two")


def test_a_page_failing_in_a_forked_process_stops_the_report(tmp_path, monkeypatch, some_pumps):
    from screening.report.pump_writer import PageWriter

    _shared(monkeypatch, 2)
    here, write = os.getpid(), PageWriter.write

    def failing(self, pid, name):
        if os.getpid() != here:  # only in the forked process
            raise RuntimeError(f"disk full writing {name}")
        write(self, pid, name)

    monkeypatch.setattr(PageWriter, "write", failing)
    # the main process takes no item, so that the forked one does them all whatever the timing
    # (else the main process may take every page before the fork has started)
    from screening.report import sharing

    take = sharing._Work.take
    monkeypatch.setattr(
        sharing._Work, "take",
        lambda self: take(self) if os.getpid() != here else len(self.jobs) + len(self.parts),
    )  # fmt: skip
    with pytest.raises(RuntimeError, match="disk full writing"):
        screening.write_report(some_pumps, tmp_path / "out")
    assert not (tmp_path / "out").exists()  # no report moved into place without every page


def test_a_failing_workbook_stops_the_report(tmp_path, monkeypatch, some_pumps):
    from screening.report import plant_report

    _shared(monkeypatch, 2)

    def failing(path, result, changes):
        raise OSError(f"{path.name}: no space left")

    monkeypatch.setattr(plant_report, "write_workbook", failing)
    with pytest.raises(OSError, match="summary.xlsx: no space left"):
        screening.write_report(some_pumps, tmp_path / "out")
    assert not (tmp_path / "out").exists()


def test_shared_work_does_every_item_once(tmp_path, monkeypatch):
    from screening.report import sharing

    monkeypatch.setattr(sharing, "PARALLEL_PAGES", 10)
    monkeypatch.setattr(sharing, "default_processes", lambda: 3)
    pages = {f"P{k}": f"P{k}.txt" for k in range(50)}

    def write_page(pid, name):
        with open(tmp_path / "log", "a") as log:  # O_APPEND: one line per write, any process
            log.write(f"{name} {os.getpid()}\n")

    def job():
        write_page("job", "job")

    with sharing.shared_work([job, job], pages, write_page):
        pass
    lines = (tmp_path / "log").read_text().split("\n")[:-1]
    assert sorted(line.split()[0] for line in lines) == sorted([*pages.values(), "job", "job"])
