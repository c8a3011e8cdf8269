"""The plant scan: every pump of a plant over one window, as tidy tables.

This is the Python API the command line uses: ``screening.scan(config, start, end)`` returns a
:class:`ScanResult` of pandas data frames.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pandas as pd

from screening.base.allocator import keep_collector_off_imports, keep_freed_memory
from screening.engine.calculator import PumpResult
from screening.engine.execution import (
    BatchContext,
    BatchOutput,
    check_workers,
    fluid_tables_for,
    run_batches,
)
from screening.engine.one_pump import quality_row, read_barometer, settings_for
from screening.engine.tables import ScanResult, scan_tables, table_part
from screening.inputs.loader import ExportIndex, open_exports
from screening.inputs.plant import Plant, load_plant
from screening.inputs.window import day_edges, window_bounds


def scan(
    config: str | Path | Plant,
    start=None,
    end=None,
    pumps: list[str] | None = None,
    keep_series: bool = False,
    plot_buckets: int = 0,
    each_pump: Callable[[Plant, PumpResult], Any] | None = None,
    processes: int | None = None,
    cluster: Any = None,
    progress: Callable[[BatchOutput], None] | None = None,
    each_chunk: Callable[[Plant, PumpResult], Any] | None = None,
) -> ScanResult:
    """Screen every pump of a plant over a window.

    Parameters
    ----------
    config : str, Path or Plant
        The plant file, or a loaded :class:`Plant`.
    start, end : str or Timestamp, optional
        Window [start, end); dates without an offset are in the site time zone; default from
        the plant file.
    pumps : list of str, optional
        Screen only these pump ids (an id given twice is screened once).
    keep_series : bool
        Keep each pump's time series (NPSHa, NPSH3, ratio, state) in ``ScanResult.series``.
    plot_buckets : int
        Time buckets of the report's plot data (minimum and maximum per bucket) kept per pump
        in ``ScanResult.plots``; 0 (the default) keeps none. The command line asks for
        :data:`screening.engine.plotdata.DEFAULT_BUCKETS` to draw the pump pages.
    each_pump : callable, optional
        Called as ``each_pump(plant, result)`` right after each pump is screened, with its
        per-piece series in ``result.series``; what it returns is kept in
        ``ScanResult.extras[pump_id]`` and the series is then dropped (unless
        ``keep_series``), so memory stays bounded by one pump. A ``ValueError`` it raises
        makes that pump a problem, as bad data does. The what-if analysis uses it. With
        several processes it must be picklable (a module-level function or a partial of one).
    processes : int or None
        Worker processes on this machine [-]: None (the default) for every core, 1 to run in
        this process. A plant that fits in one batch always runs in this process.
    cluster : str, distributed.Client or int, optional
        Run the batches on Dask distributed instead: a scheduler address
        (``tcp://host:port``), a connected client, or a number of workers for a local Dask
        cluster started for this run (see :mod:`screening.engine.execution`).
    progress : callable, optional
        Called with each batch's output (``pumps``, ``samples``) as it completes.
    each_chunk : callable, optional
        Like ``each_pump``, but called for each time chunk of a pump screened in chunks
        (one-second data, :mod:`screening.engine.chunked`) with that chunk's result and
        per-piece series, in time order, and once with the whole result for a pump screened
        in one piece; what it returns is kept in a list in ``ScanResult.extras[pump_id]``.
        The onset analysis uses it to stay within bounded memory.

    The results do not depend on where the work ran.

    Returns
    -------
    ScanResult
    """
    t0 = time.perf_counter()
    check_workers(processes, cluster)  # before any work
    keep_freed_memory()
    keep_collector_off_imports()
    plant = config if isinstance(config, Plant) else load_plant(config)
    start_ts, end_ts = window_bounds(plant, start, end)
    start_ns, end_ns = start_ts.value, end_ts.value
    edges = day_edges(start_ts, end_ts, plant.timezone)
    settings = settings_for(plant)
    index = open_exports(plant)
    problems: list[dict] = [
        {"pump_id": pid, "stage": "config", "message": msg} for pid, msg in plant.problems.items()
    ]
    if pumps is not None:
        pumps = list(dict.fromkeys(pumps))  # a pump named twice is screened once
    selected = list(plant.pumps) if pumps is None else pumps
    unknown = [p for p in selected if p not in plant.pumps and p not in plant.problems]
    for pid in unknown:
        problems.append({"pump_id": pid, "stage": "config", "message": "not in the register"})
    selected = [p for p in selected if p in plant.pumps]
    if pumps is not None:
        problems = [p for p in problems if p["pump_id"] in pumps]

    baro_span = (start_ns - int(settings.barometer_stale_limit * 1e9) - 1, end_ns)
    barometer, baro_quality = read_barometer(plant, index, settings, baro_span)
    span = _read_span(plant, settings, selected, start_ns, end_ns)
    batches = _batches(plant, index, selected, end_ts - start_ts)
    ctx = BatchContext(
        plant, index, settings, barometer, start_ns, end_ns, edges, span, keep_series,
        plot_buckets, each_pump,
        fluid_tables_for(plant, selected) if len(batches) > 1 else {}, each_chunk,
    )  # fmt: skip
    parts = {}  # each batch's rows of the tables, built as it comes back (the others still run)

    def arrived(o: BatchOutput) -> None:
        parts[id(o)] = table_part(plant, o.results)
        if progress is not None:
            progress(o)

    outputs = run_batches(ctx, batches, processes, cluster, arrived)
    results: list[PumpResult] = []
    extras: dict[str, Any] = {}
    quality_rows: list[dict] = []
    file_problems = {**index.file_problems, **index.partly_read}
    samples = 0
    for o in outputs:
        results.extend(o.results)
        extras.update(o.extras)
        quality_rows.extend(o.quality_rows)
        problems.extend(o.problems)
        file_problems.update(o.file_problems)
        samples += o.samples
    if baro_quality is not None:
        quality_rows.append(quality_row("(site)", "barometer", baro_quality))
    out = scan_tables(
        plant, results, start_ts, end_ts, edges, quality_rows, problems, file_problems,
        [parts[id(o)] for o in outputs],
    )  # fmt: skip
    out.series = {r.pump_id: r.series for r in results if r.series is not None}
    out.extras = extras
    out.plots = {r.pump_id: r.plot for r in results if r.plot is not None}
    out.points = {r.pump_id: r.points for r in results if r.points is not None}
    out.evidence = {r.pump_id: r.evidence for r in results if r.evidence is not None}
    out.export_files = [str(f.path) for f in index.files] + [
        p for p in index.file_problems if Path(p).is_file()
    ]
    out.samples = samples
    if samples == 0 and selected:
        span = index.data_span()
        if span is not None:
            out.data_span = (pd.Timestamp(span[0], tz="UTC"), pd.Timestamp(span[1], tz="UTC"))
    out.elapsed_s = time.perf_counter() - t0
    return out


def _read_span(plant: Plant, settings, selected: list[str], start_ns: int, end_ns: int):
    """The span read for every pump [ns]: the window with one look-back for the whole plant,
    so that what is read (and counted) never depends on which pumps share a batch."""
    # the longest hold or frozen allowance of any tag
    longest = max(
        [settings.stale_limit, settings.frozen_after or 0.0]
        + [t.stale_limit or 0.0 for p in selected for t in plant.pumps[p].all_tags()]
    )
    # a compressed record also needs the stored point after the window's end to draw the
    # line up to it, and the point before its start within the longest interval
    default = plant.settings.data.max_interval
    linear = [s.max_interval or default for s in plant.settings.exports
              if s.reconstruction == "linear"] or [0.0]  # fmt: skip
    if any(t.reconstruction == "linear" for p in selected for t in plant.pumps[p].all_tags()):
        # a tag drawn by lines by the register's word, whatever its family says
        linear += [s.max_interval or default for s in plant.settings.exports] + [default]
    span = (start_ns - int(max(longest, max(linear)) * 1e9) - 1,
            end_ns + int(max(linear) * 1e9))  # fmt: skip
    return span


#: Pumps read together for a window of a month: the files they share are read once per batch.
#: Memory grows with the batch, not with the plant; longer windows get fewer pumps per batch.
BATCH_PUMPS = 25
BATCH_PUMP_DAYS = BATCH_PUMPS * 31


def _batches(
    plant: Plant, index: ExportIndex, selected: list[str], window: pd.Timedelta | None = None
) -> list[list[str]]:
    """Pumps grouped by the files holding their tags, in batches of at most BATCH_PUMPS pumps
    and BATCH_PUMP_DAYS pump-days, so that a batch's memory stays about the same whatever the
    window's length (a year-long window: two pumps per batch). The selected members of a
    shared suction line stay in one batch (which may then exceed the size): each reads the
    others' flow and run tags, so they are read once."""
    size = BATCH_PUMPS
    if window is not None:
        days = max(window / pd.Timedelta(days=1), 1.0)
        size = int(min(BATCH_PUMPS, max(1, BATCH_PUMP_DAYS // days)))

    def key(pid: str):
        files = sorted({str(f) for t in plant.pumps[pid].all_tags()
                        for f in index.files_for(t.tag)})  # fmt: skip
        return (files, pid)

    # a unit of work: a pump alone, or the selected members of one shared suction line
    units: dict[tuple[str, str], list[str]] = {}
    for pid in sorted(selected, key=key):
        line = plant.pumps[pid].suction_line_id
        units.setdefault(("pump", pid) if line is None else ("line", line), []).append(pid)
    batches: list[list[str]] = [[]]
    for unit in units.values():
        if batches[-1] and len(batches[-1]) + len(unit) > size:
            batches.append([])
        batches[-1].extend(unit)
    return [b for b in batches if b]
