"""Where the per-pump work runs: in this process, in a pool of processes on this machine, or on
a Dask distributed cluster. The work and its result are the same in all three.

The unit of work is a batch: a few pumps whose tags sit in the same export files (each file is
read once per batch) over the whole window. :func:`run_batch` screens one batch and returns
only small things: per pump its hour tables (and, when asked, plot data or the each-pump
hook's result), the loader's quality counts, and the problems met. Everything a batch needs
(the plant, the file index, the barometer series, the fluid tables) travels once per worker in
a :class:`BatchContext`, not once per batch.

Process pool: ``concurrent.futures.ProcessPoolExecutor``, forked on Linux (see
:func:`_pool_context`), spawned elsewhere. Dask: ``distributed.Client`` on
an existing scheduler, or a ``LocalCluster`` started for the run; the context is scattered to
every worker once and the batches mapped over it. Files must be readable at the same paths
on every Dask worker (a shared file system or the ingested dataset on shared storage).
"""

from __future__ import annotations

import multiprocessing
import os
import sys
from collections.abc import Callable, Iterator
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pyarrow

from screening.base.allocator import (
    keep_arrow_memory,
    keep_collector_off_imports,
    keep_freed_memory,
)
from screening.engine.calculator import PumpResult, Settings
from screening.engine.chunked import chunk_days, screen_chunked
from screening.engine.one_pump import quality_flags, quality_row, screen_pump
from screening.inputs.export_reader import LazySeries
from screening.inputs.loader import ExportIndex
from screening.inputs.plant import Plant
from screening.inputs.tagdata import ExportError, TagSeries
from screening.inputs.units import UnitError
from screening.physics.properties import FluidTable, adopt_fluid_tables


@dataclass
class BatchContext:
    """Everything a batch needs besides its pump ids (sent once per worker)."""

    plant: Plant
    index: ExportIndex
    settings: Settings
    barometer: TagSeries | None
    start_ns: int
    end_ns: int
    edges: np.ndarray
    span: tuple[int, int]
    keep_series: bool
    plot_buckets: int
    each_pump: Callable[[Plant, PumpResult], Any] | None
    tables: dict = field(default_factory=dict)  # (fluid, choice) -> FluidTable
    each_chunk: Callable[[Plant, PumpResult], Any] | None = None  # see scan(each_chunk=)


@dataclass
class BatchOutput:
    """What a batch sends back (small)."""

    results: list[PumpResult]
    extras: dict[str, Any]
    quality_rows: list[dict]
    problems: list[dict]
    file_problems: dict[str, str]
    samples: int
    pumps: int


def run_batch(ctx: BatchContext, batch: list[str]) -> BatchOutput:
    """Screen one batch of pumps (see :func:`screening.engine.scan.scan` for what is screened)."""

    keep_freed_memory()  # a Dask worker is a fresh process (and Dask asks glibc to trim)
    keep_collector_off_imports()
    adopt_fluid_tables(ctx.tables)
    plant, index = ctx.plant, ctx.index
    known = index.known_tags()
    # one-second data: pumps read and calculated in time chunks, each on its own
    days = {pid: chunk_days(plant, index, plant.pumps[pid], ctx.start_ns, ctx.end_ns)
            for pid in batch}  # fmt: skip
    tags = [t.tag for pid in batch if days[pid] is None for t in plant.pumps[pid].all_tags()
            if t.tag in known]  # fmt: skip
    # made into series pump by pump (the batch's columns stay as the file decoded them), and
    # each tag forgotten after the last pump that reads it (all_tags: its own, its field
    # evidence's and its suction line's other members'): a batch holds its decoded files and
    # one pump's series, not every series
    raw, read_problems = index.read(tags, ctx.span, lazy=True) if tags else (LazySeries(), {})
    last_use = {spec.tag: k for k, pid in enumerate(batch) for spec in plant.pumps[pid].all_tags()}
    done_after: dict[int, list[str]] = {}
    for tag, k in last_use.items():
        done_after.setdefault(k, []).append(tag)
    # files read in part (dates without a declared order): the worker's index says so
    out = BatchOutput([], {}, [], [], {**index.partly_read, **read_problems}, 0, len(batch))
    keep = ctx.keep_series or ctx.each_pump is not None
    for k, pid in enumerate(batch):
        raw.forget(done_after.get(k - 1, ()))  # the tags no pump from here on reads
        pump = plant.pumps[pid]
        try:
            if days[pid] is None:
                result, tag_quality, n = screen_pump(
                    plant, pump, index, raw, ctx.barometer, ctx.settings, ctx.start_ns,
                    ctx.end_ns, ctx.edges, keep or ctx.each_chunk is not None, ctx.plot_buckets,
                    read_problems,
                )  # fmt: skip
                if ctx.each_chunk is not None:
                    out.extras[pid] = [ctx.each_chunk(plant, result)]
                    if not keep:
                        result.series = None
            else:
                result, tag_quality, n, problems, extras = screen_chunked(
                    plant, pump, index, ctx.barometer, ctx.settings, ctx.span, ctx.start_ns,
                    ctx.end_ns, ctx.edges, keep, ctx.plot_buckets, days[pid], ctx.each_chunk,
                )  # fmt: skip
                out.file_problems.update(problems)
                if ctx.each_chunk is not None:
                    out.extras[pid] = extras
            if ctx.each_pump is not None:
                out.extras[pid] = ctx.each_pump(plant, result)
                if not ctx.keep_series:
                    result.series = None
        except (ExportError, UnitError, ValueError) as exc:
            out.problems.append({"pump_id": pid, "stage": "data", "message": str(exc)})
            continue
        out.samples += n
        out.results.append(result)
        for role, q in tag_quality.items():
            out.quality_rows.append(quality_row(pid, role, q, quality_flags(result, role)))
    return out


# ----------------------------------------------------------------------------- process pool

_WORKER_CTX: BatchContext | None = None


def _init_worker(ctx: BatchContext) -> None:
    global _WORKER_CTX
    _WORKER_CTX = ctx  # run_batch adopts its fluid tables
    read_as_pool_worker()


def read_as_pool_worker() -> None:
    """Arrow as each pool worker reads, for the rest of this process: on one thread (the pool
    already keeps every core busy, and Arrow's own decoding threads would only compete with
    the other workers) and from its jemalloc pool (:func:`keep_arrow_memory`: each batch's
    decoded files in the pages of the last). The benchmarks call it to run a worker's pace."""
    pyarrow.set_cpu_count(1)
    keep_arrow_memory()


def _run_in_worker(batch: list[str]) -> BatchOutput:
    assert _WORKER_CTX is not None, "worker not initialised"
    return run_batch(_WORKER_CTX, batch)


def default_processes() -> int:
    """Cores this process may use [-] (the CPU affinity where the system tells it)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not Linux
        return max(1, os.cpu_count() or 1)


def _pool_context():
    """Fork on Linux: the workers inherit the imported package and its compiled kernels (a
    fresh interpreter would spend seconds importing CoolProp and numba). Arrow registers
    at-fork handlers that rebuild its thread pools in the child (``arrow::internal::
    RegisterAtFork``). Elsewhere (macOS, Windows) fork is unsafe or absent: spawn."""
    if sys.platform.startswith("linux"):
        return multiprocessing.get_context("fork")
    return multiprocessing.get_context("spawn")


def _in_order(done: dict[int, BatchOutput], n: int) -> Iterator[BatchOutput]:
    for i in range(n):
        yield done.pop(i)


def check_workers(processes: int | None, cluster: Any) -> None:
    """Refuse a number of processes or of Dask workers [-] below 1 (or not a whole number)."""
    for name, value in (("processes", processes), ("workers", cluster)):
        if value is None or isinstance(value, str) or (name == "workers" and not _is_int(value)):
            continue
        if not _is_int(value) or value < 1:
            raise ValueError(f"{name} must be a whole number of 1 or more, got {value!r}")


def _is_int(value: Any) -> bool:
    return isinstance(value, int | np.integer) and not isinstance(value, bool)


def run_batches(
    ctx: BatchContext,
    batches: list[list[str]],
    processes: int | None = None,
    cluster: Any = None,
    progress: Callable[[BatchOutput], None] | None = None,
) -> list[BatchOutput]:
    """Run every batch and return their outputs in batch order.

    Parameters
    ----------
    ctx : BatchContext
        The shared context.
    batches : list of list of str
        Pump ids per batch.
    processes : int or None
        Worker processes on this machine [-]; None for every core; 1 runs in this process.
        Never more than there are batches.
    cluster : str, distributed.Client or int, optional
        A Dask scheduler address (``tcp://host:port``), a connected client, or a number of
        workers for a local Dask cluster started for this run. Overrides ``processes``.
    progress : callable, optional
        Called with each batch's output as it completes (in completion order).

    Raises
    ------
    ValueError
        ``processes`` or a number of workers below 1 (checked by :func:`check_workers`).
    """
    check_workers(processes, cluster)
    if cluster is not None:
        return _run_dask(ctx, batches, cluster, progress)
    n = min(processes or default_processes(), len(batches))
    if n <= 1:
        outputs = []
        for batch in batches:
            outputs.append(run_batch(ctx, batch))
            if progress:
                progress(outputs[-1])
        return outputs
    return _run_pool(ctx, _finer_tail(ctx.plant, batches, n), n, progress)


#: Pieces each of a pool's last batches is cut into (see :func:`_finer_tail`).
TAIL_PIECES = 4


def _finer_tail(plant: Plant, batches: list[list[str]], n: int) -> list[list[str]]:
    """The batches with the last ``n`` [-] each cut into :data:`TAIL_PIECES` (keeping a shared
    suction line's members together), so that the workers finish together: the last batches
    of a pool otherwise leave one worker idle for up to a batch's time, and with the pieces
    for up to a piece's. Results do not depend on the cut: what is read for a pump never
    depends on the pumps beside it."""
    if len(batches) < 2 * n:
        return batches
    out = batches[:-n]
    for batch in batches[-n:]:
        units: dict = {}
        for pid in batch:
            line = plant.pumps[pid].suction_line_id
            units.setdefault(pid if line is None else ("line", line), []).append(pid)
        groups = list(units.values())
        k = min(TAIL_PIECES, len(groups))
        cuts = [len(groups) * i // k for i in range(k + 1)]
        out.extend(sum(groups[a:b], []) for a, b in zip(cuts, cuts[1:], strict=False))
    return out


def _run_pool(ctx: BatchContext, batches, n: int, progress) -> list[BatchOutput]:
    """Run the batches in a pool of ``n`` forked worker processes; outputs in batch order."""
    done: dict[int, BatchOutput] = {}
    pool = ProcessPoolExecutor(
        max_workers=n, mp_context=_pool_context(), initializer=_init_worker, initargs=(ctx,)
    )
    try:
        futures = {pool.submit(_run_in_worker, b): i for i, b in enumerate(batches)}
        pending = set(futures)
        while pending:
            finished, pending = wait(pending, return_when=FIRST_COMPLETED)
            for f in finished:
                done[futures[f]] = f.result()
                if progress:
                    progress(done[futures[f]])
    finally:
        # every output is in (or the run failed): the workers' exit, the system unmapping
        # their memory, is not waited for (the pool's own thread joins them); the tables are
        # built meanwhile. Batches not started are dropped when one failed.
        pool.shutdown(wait=False, cancel_futures=True)
    return list(_in_order(done, len(batches)))


def _run_dask(ctx: BatchContext, batches, cluster, progress) -> list[BatchOutput]:
    try:
        from distributed import Client, LocalCluster, as_completed
    except ImportError as exc:  # pragma: no cover - depends on the installation
        raise RuntimeError(
            "running on a Dask cluster needs the 'distributed' package: "
            "pip install 'pumpscreen[cluster]'"
        ) from exc
    own_cluster = None
    if isinstance(cluster, Client):
        client = cluster
    elif isinstance(cluster, int) and not isinstance(cluster, bool):
        own_cluster = LocalCluster(
            n_workers=cluster, threads_per_worker=1, processes=True, dashboard_address=None
        )
        client = Client(own_cluster)
    else:
        client = Client(str(cluster))
    try:
        shared = client.scatter(ctx, broadcast=True)
        futures = client.map(run_batch, [shared] * len(batches), batches, pure=False)
        index = {f.key: i for i, f in enumerate(futures)}
        done: dict[int, BatchOutput] = {}
        for f in as_completed(futures):
            done[index[f.key]] = f.result()
            if progress:
                progress(done[index[f.key]])
        return list(_in_order(done, len(batches)))
    finally:
        if not isinstance(cluster, Client):
            client.close()
        if own_cluster is not None:
            own_cluster.close()


def fluid_tables_for(plant: Plant, pump_ids: list[str]) -> dict:
    """The fluid tables of these pumps, built here once so that workers need not rebuild them
    (a mixture's table takes seconds). A fluid that cannot be tabulated is left out: the pump
    then fails in its batch with the same message as in a single process."""
    from screening.physics.properties import fluid_table, normalise_choice

    tables: dict[tuple[str, str | None], FluidTable] = {}
    for pid in pump_ids:
        pump = plant.pumps[pid]
        key = (pump.fluid, normalise_choice(pump.vapour_pressure))
        if key in tables:
            continue
        try:
            tables[key] = fluid_table(pump.fluid, pump.vapour_pressure)
        except ValueError:
            continue
    return tables
