"""One pump screened in time chunks: a year of one-second data in bounded memory.

A pump whose window holds more than ``[data] chunk_samples`` samples per tag (one-second data
over weeks) is read and calculated in consecutive chunks of whole local days, each read with
the scan's look-back before it and look-ahead after it (holds, frozen-value allowance, lines
to the next stored point), and each counting only what lies in its own part of the window.
Every local midnight is already a cut of the pump's timeline, so the pieces, their states and
their hours are those of one piece; what crosses a chunk edge is carried over:

- a frozen run of identical values (its start), and each tag's open gap stretch;
- the samples counted in the quality table: each in the one chunk that owns its time;
- the stretches below NPSH3 (the longest may span chunks) and the depth integrals, summed
  per quarter hour of UTC time as in one piece (:mod:`screening.engine.severity`);
- the worst margin and its time, the plot buckets' minimum and maximum (the whole window's
  buckets, :class:`~screening.engine.plotdata.BucketGrid`), the operating-point histogram
  (its edges need the whole window's largest flow and NPSHa: the running points are kept on
  disk until the last chunk, :class:`PointSpill`).

So the tables are identical to the unchunked run's (``tests/test_chunked.py``). Only pumps
whose tags are all in time-zone-aware Parquet files are chunked (their reads are filtered by
time in the file, row group by row group); pumps with field-evidence tags or a plant with a
settling time after starts are screened in one piece. CSV exports are read whole: a year of
one-second CSV goes through ``pumpscreen ingest`` first (docs/scale.md).
"""

from __future__ import annotations

import dataclasses
import tempfile
from dataclasses import dataclass, field

import numpy as np

from screening.engine import chunk_merge, plotdata
from screening.engine.one_pump import screen_pump
from screening.inputs.quality import gap_stretches

#: The longest chunk [days]: keeps a chunk's hour sums [ns] below 2**50 (exact in a float).
MAX_CHUNK_DAYS = 10


@dataclass
class ChunkPart:
    """What the chunks of one pump share: the window [ns], the current chunk (its end and the
    span whose samples it counts), and what each tag carries over a chunk edge (the frozen
    run and the open gap stretch, with the gaps found so far)."""

    start_ns: int
    end_ns: int
    a: int = 0
    end: int = 0
    count: tuple[int, int] = (0, 0)
    final: bool = False
    frozen: dict = field(default_factory=dict)
    gap_open: dict = field(default_factory=dict)
    gaps: dict = field(default_factory=dict)

    def add_gaps(self, key: str, times: np.ndarray, limit_ns: int) -> None:
        """The gap stretches of a tag's samples in this chunk (see
        :func:`screening.inputs.quality.gap_stretches`)."""
        found, self.gap_open[key] = gap_stretches(
            times, self.a, self.end, self.start_ns, self.end_ns, limit_ns,
            self.gap_open.get(key), self.final,
        )  # fmt: skip
        self.gaps.setdefault(key, []).append(found)


def chunk_days(plant, index, pump, start_ns: int, end_ns: int) -> int | None:
    """Whole local days per chunk for ``pump`` over the window [ns], or None to screen it in
    one piece: its densest tag holds at most ``[data] chunk_samples`` samples in the window
    (estimated from the Parquet files' row counts and time ranges), or it cannot be chunked
    (a tag outside time-zone-aware Parquet files, field-evidence tags, a settling time)."""
    bound = plant.settings.data.chunk_samples
    if not bound or pump.field_tags() or plant.settings.running.settle_after_start > 0:
        return None
    densest = 0.0
    for spec in [*pump.tags().values(), *pump.peer_tags().values()]:
        estimate = 0.0
        for info in index.file_infos(spec.tag):
            if info.fmt == "dataset":  # months of one folder, all its tags in each
                estimate += index.dataset_rows(info, start_ns, end_ns) / max(len(info.tags), 1)
                continue
            if info.fmt != "parquet" or not info.timestamp_typed or info.time_range is None:
                return None
            rows = index.row_count(info) / (len(info.tags) if info.source.layout == "long" else 1)
            lo, hi = info.time_range
            overlap = max(0, min(hi, end_ns) - max(lo, start_ns))
            estimate += rows * overlap / max(hi - lo, 1)
        densest = max(densest, estimate)
    if densest <= bound:
        return None
    per_day = densest / max((end_ns - start_ns) / 86_400e9, 1e-9)
    return int(max(1, min(MAX_CHUNK_DAYS, bound // per_day)))


def screen_chunked(plant, pump, index, barometer, settings, span, start_ns, end_ns, edges,
                   keep: bool, buckets: int, days: int, each_chunk=None):  # fmt: skip
    """Screen one pump in chunks of ``days`` local days (``edges``: the window's day edges
    [ns]; ``span``: the scan's read span with its look-back and look-ahead [ns]). Returns what
    :func:`screening.engine.one_pump.screen_pump` returns for the whole window, and the files
    that failed while read (path -> message) and what ``each_chunk(plant, chunk_result)``
    returned after each chunk, given its per-piece series (an empty list without it)."""
    known = index.known_tags()
    tags = [s.tag for s in [*pump.tags().values(), *pump.peer_tags().values()]
            if s.tag in known]  # fmt: skip
    back, ahead = start_ns - span[0], span[1] - end_ns
    part = ChunkPart(start_ns, end_ns)
    grid = plotdata.BucketGrid(start_ns, end_ns, buckets) if buckets else 0
    n_days = len(edges) - 1
    results, qualities, samples, problems = [], [], 0, {}
    carried: dict = {}  # tag -> its last sample before the next chunk
    extras: list = []
    with PointSpill(bool(buckets)) as spill:
        for i in range(0, n_days, days):
            j = min(i + days, n_days)
            a, b = int(edges[i]), int(edges[j])
            first, last = i == 0, j == n_days
            read = (span[0] if first else a - back, span[1] if last else b + ahead)
            part.a, part.end, part.final = a, b, last
            part.count = (read[0] if first else a, read[1] if last else b)
            raw, read_problems = index.read(tags, read, part.count)
            _carry_last(raw, carried, b)
            problems.update(read_problems)
            result, quality, n = screen_pump(
                plant, pump, index, raw, barometer, settings, a, b, edges[i : j + 1],
                keep or each_chunk is not None, grid, read_problems, part,
            )  # fmt: skip
            del raw
            if each_chunk is not None:
                extras.append(each_chunk(plant, result))
                if not keep:
                    result.series = None
            samples += n
            results.append(result)
            qualities.append(quality)
        merged = chunk_merge.merge_results(pump.pump_id, results, start_ns, end_ns, keep)
        if buckets:
            merged.points = spill.points()
    quality = chunk_merge.merge_quality(qualities, part.gaps, start_ns, index)
    return merged, quality, samples, problems, extras


def _carry_last(raw: dict, last: dict, end: int) -> None:
    """Each tag's last sample before the chunk's look-back (kept from the chunk before) put in
    front of its series, as one piece has it (a value held over a gap longer than the
    look-back); then the last sample before ``end`` [ns] kept for the next chunk. In place."""
    for tag, s in raw.items():
        kept = last.get(tag)
        if kept is not None and (len(s.times) == 0 or s.times[0] > kept[0]):
            raw[tag] = s = dataclasses.replace(
                s, times=np.concatenate(([kept[0]], s.times)),
                values=np.concatenate(([kept[1]], s.values)),
                bad=np.concatenate(([kept[2]], s.bad)),
            )  # fmt: skip
        i = int(np.searchsorted(s.times, end)) - 1
        if i >= 0:
            last[tag] = (s.times[i], s.values[i], s.bad[i])


class PointSpill:
    """The running points of every chunk (flow [m³/s], NPSHa [m], hours [h]) kept in a
    temporary folder until the last chunk, so that the operating-point histogram gets the
    whole window's edges: see :func:`screening.engine.plotdata.operating_points`."""

    def __init__(self, active: bool):
        self.active = active
        self.files: list = []
        self.flow_max = -np.inf
        self.tops = [0, 0.0, 1.0]  # points, largest flow and NPSHa (as operating_points has)

    def __enter__(self):
        if self.active:
            self._dir = tempfile.TemporaryDirectory(prefix="pumpscreen-points-")
            self._token = plotdata.POINT_SINK.set(self._keep)
        return self

    def __exit__(self, *exc):
        if self.active:
            plotdata.POINT_SINK.reset(self._token)
            self._dir.cleanup()
        return False

    def _keep(self, flow, npsha, weight, flow_max) -> None:
        ok = np.isfinite(flow) & np.isfinite(npsha) & (weight > 0)
        path = f"{self._dir.name}/{len(self.files)}.npy"
        np.save(path, np.stack([flow[ok], npsha[ok], weight[ok]]))
        self.files.append(path)
        self.flow_max = max(self.flow_max, flow_max)
        if ok.any():
            first = self.tops[0] == 0
            self.tops[0] += int(ok.sum())
            f_top, top = float(np.max(flow[ok])), float(np.max(npsha[ok]))
            self.tops[1] = f_top if first else max(self.tops[1], f_top)
            self.tops[2] = top if first else max(self.tops[2], top)

    def points(self) -> dict:
        """The histogram of :func:`~screening.engine.plotdata.operating_points` over every
        chunk's points, summed in the same order, one chunk's points in memory at a time."""
        parts = (np.load(p) for p in self.files)
        return plotdata.operating_points_parts(parts, self.flow_max, tops=tuple(self.tops))
