"""Reading tags from the indexed export files: only the tags and the time span asked for
(wide files by column, long Parquet files with a filter on the tag column, an ingested dataset
by month), each file's values counted and merged per tag by :mod:`screening.inputs.tagdata`."""

from __future__ import annotations

from collections import OrderedDict
from collections.abc import Iterator, Mapping
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from screening.inputs import dataset as _dataset
from screening.inputs.export_files import (
    FileInfo,
    long_columns,
    read_csv_rows,
    read_parquet_rows,
    read_whole,
)
from screening.inputs.tagdata import (
    FILE_FAULTS,
    ExportError,
    TagQuality,
    TagSeries,
    add_chunk,
    add_numbers,
    as_text,
    assemble,
    placed_in_order,
    unexpected,
)
from screening.inputs.timestamps import DateNotes, parse_times

#: Nanoseconds per unit of an Arrow timestamp.
_NS_PER_UNIT = {"s": 1_000_000_000, "ms": 1_000_000, "us": 1_000, "ns": 1}


class TagReader:
    """Reads tags for an :class:`~screening.inputs.loader.ExportIndex` (its files, the tags
    each holds, the site time zone and the good quality words), keeping the parsed time
    columns of the last files read."""

    def __init__(self, index):
        self.index = index
        self._count: tuple[int, int] | None = None  # see read(count=)
        self._later: set[str] = set()  # see read(lazy=)
        self._time_cache: OrderedDict[Path, tuple[np.ndarray, np.ndarray]] = OrderedDict()

    def _times(self, info: FileInfo, raw: pd.Series, rows, label: str, groups=None):
        """Parse a time column to UTC [ns] with the file's declared date order; day-month dates
        that cannot be placed are named once per file (``index.partly_read``)."""
        notes = DateNotes()
        order = info.source.date_order
        times, ok = parse_times(raw, self.index.timezone, groups, order, notes)
        message = notes.message(info.path, label, rows, order)
        if message:
            self.index.partly_read[str(info.path)] = message
        return times, ok

    def _wide_times(self, info: FileInfo, raw: pd.Series, rows, label: str):
        cached = self._time_cache.get(info.path)
        if cached is None:
            cached = self._times(info, raw, rows, label)
            self._time_cache[info.path] = cached
            while len(self._time_cache) > 64:
                self._time_cache.popitem(last=False)
        return cached

    def read(
        self, tags: list[str], span: tuple[int, int] | None = None, count=None,
        lazy: bool = False,
    ) -> tuple[Mapping[str, TagSeries], dict[str, str]]:  # fmt: skip
        """Read ``tags`` from every file that holds them.

        Parameters
        ----------
        tags : list of str
            Tag names.
        span : (int, int), optional
            Keep only samples with ``span[0] <= time < span[1]`` [ns since epoch, UTC];
            time-zone-aware Parquet files are filtered while reading. Samples outside the span
            are not counted in the quality figures.
        count : (int, int), optional
            Count in the quality figures only the samples in this part of ``span`` [ns] (a
            time chunk's own part, :mod:`screening.engine.chunked`); only time-zone-aware
            Parquet files are read so.
        lazy : bool
            Return a :class:`LazySeries`: the columns of a tag held only in wide Parquet
            files are decoded from the file (read whole here) but made into its series when
            the tag is first asked for, so that a batch's series need not all be in memory at
            once. The series, counts and problems are those of an eager read.

        Returns
        -------
        (series, problems)
            One :class:`TagSeries` per tag found, and file problems met while reading
            (path -> message); a tag whose every file failed is absent from ``series``.
        """
        wanted = [t for t in dict.fromkeys(tags) if t in self.index._by_tag]
        chunks: dict[str, list[tuple]] = {t: [] for t in wanted}
        quality = {t: TagQuality(t) for t in wanted}
        problems: dict[str, str] = {}
        files: dict[Path, tuple[FileInfo, list[str]]] = {}
        self._count = count
        for tag in wanted:
            for info in self.index._by_tag[tag]:
                files.setdefault(info.path, (info, []))[1].append(tag)
        # tags whose every file is a wide Parquet file read without pandas: made later
        self._later = set()
        if lazy and count is None:
            self._later = {
                t for t in wanted
                if all(f.fmt == "parquet" and f.source.layout == "wide" and f.timestamp_typed
                       for f in self.index._by_tag[t])
            }  # fmt: skip
        # In the order of the index, so that "the last in file order" of a tag's duplicate
        # times never depends on which other tags are read with it.
        position = {f.path: i for i, f in enumerate(self.index.files)}
        for info, file_tags in sorted(files.values(), key=lambda v: position[v[0].path]):
            try:
                if info.source.layout == "wide":
                    self._read_wide(info, file_tags, chunks, quality, span)
                elif info.source.layout == "dataset":
                    self._read_dataset(info, file_tags, chunks, quality, span)
                else:
                    self._read_long(info, file_tags, chunks, quality, span)
            except ExportError as exc:
                problems[str(info.path)] = str(exc)
            except FILE_FAULTS as exc:  # the last line of defence: one file, not the run
                problems[str(info.path)] = unexpected(info.path, exc)
        series = LazySeries() if lazy else {}
        failed = set(problems)
        for tag in wanted:
            if any(str(f.path) in failed for f in self.index._by_tag[tag]):
                chunks[tag] = _made(chunks[tag])  # a series or not: by its samples
            if chunks[tag] or any(str(f.path) not in failed for f in self.index._by_tag[tag]):
                # a tag with no sample in the span is an empty series: no data, not an error
                if tag in self._later:
                    series.pending[tag] = (chunks[tag], quality[tag])
                else:
                    series[tag] = assemble(tag, chunks[tag], quality[tag], count)
        self._later = set()
        return series, problems

    def _time_filter(self, info: FileInfo, span) -> list | None:
        """Filters on the time column for a span; [] when none is needed, None to skip."""
        if span is None or not info.timestamp_typed:
            return []
        if info.time_range is not None:
            lo_t, hi_t = info.time_range
            if lo_t >= span[0] and hi_t < span[1]:
                return []  # the whole file is inside the span
            if hi_t < span[0] or lo_t >= span[1]:
                return None  # nothing of the file is inside
        col = info.source.time_column
        # in the column's own unit and zone (Arrow compares timestamps only within one type);
        # the bounds widened to whole units, the exact span is applied to every sample later
        per = _NS_PER_UNIT[info.time_unit]
        kind = pa.timestamp(info.time_unit, tz=info.time_zone)
        lo = pa.scalar(span[0] // per, type=kind)
        hi = pa.scalar(-(-span[1] // per), type=kind)
        return [(col, ">=", lo), (col, "<", hi)]

    def _read_wide(self, info, tags, chunks, quality, span=None) -> None:
        src = info.source
        cols = [src.time_column, *tags]
        if info.fmt == "parquet":
            filters = self._time_filter(info, span)
            if filters is None:
                return
            rows = None
            try:
                if filters and info.timestamp_typed:  # row groups in the span, rows numbered
                    table, rows = read_parquet_rows(info, cols, span)
                else:  # the whole file (a filter is only ever needed above)
                    table = read_whole(info.path, cols)
            except (pa.ArrowException, OSError, KeyError) as exc:
                raise ExportError(f"{info.path}: cannot be read ({exc})") from exc
            if info.timestamp_typed:
                self._wide_arrow(info, table, tags, chunks, quality, span, rows)
                return
            frame = table.to_pandas()
            rows = np.arange(len(frame))
            malformed = np.zeros(len(frame), dtype=bool)
        else:
            frame, rows, malformed = read_csv_rows(info.path, src, cols)
        label = "row" if info.fmt == "parquet" else "line"
        times, ok = self._wide_times(info, frame[src.time_column], rows, label)
        for tag in tags:
            raw = frame[tag]
            # an empty cell is "not sampled"; a malformed row is a bad sample of every tag
            present = raw.notna().to_numpy() | malformed
            add_chunk(
                tag, info, raw[present], times[present], ok[present], rows[present],
                None, chunks, quality, self.index.good_quality, label, span, malformed[present],
                self.index.status_words.get(tag),
            )  # fmt: skip

    def _wide_arrow(self, info, table: pa.Table, tags, chunks, quality, span, rows=None) -> None:
        """Fast path: a wide Parquet file with a time-zone-aware time column, no pandas."""
        col = table.column(info.source.time_column).cast(pa.timestamp("ns", tz="UTC"))
        times = col.to_numpy(zero_copy_only=False).view(np.int64)
        ok = ~np.asarray(col.is_null().to_numpy(zero_copy_only=False), dtype=bool)
        rows = np.arange(len(times), dtype=np.int64) if rows is None else rows
        if not times.flags.writeable:  # one writable copy for the file, shared by the tags
            times = times.copy()  # read whole (add_numbers), as a tag's own times are
        ordered = placed_in_order(times, ok)
        for tag in tags:
            column = table.column(tag)
            if pa.types.is_floating(column.type) or pa.types.is_integer(column.type):
                raw = column.to_numpy(zero_copy_only=False).astype(np.float64, copy=False)
                if self._count is None:  # a null (or NaN) cell: not sampled at this instant
                    if tag in self._later:
                        chunks[tag].append(
                            _Later((tag, info.path, raw, times, ok, rows, quality, span, ordered))
                        )
                    else:
                        add_numbers(
                            tag, info.path, raw, times, ok, rows, chunks, quality, span, ordered
                        )
                    continue
                present = ~np.isnan(raw)
            else:
                raw = column.to_pandas()
                present = raw.notna().to_numpy()
            if tag in self._later:  # made now, after its columns before this one
                self._later.discard(tag)
                chunks[tag] = _made(chunks[tag])
            add_chunk(
                tag, info, raw[present], times[present], ok[present], rows[present],
                None, chunks, quality, self.index.good_quality, "row", span, None,
                self.index.status_words.get(tag), self._count,
            )  # fmt: skip

    def _read_dataset(self, info, tags, chunks, quality, span=None) -> None:
        """One folder of an ingested dataset: only the months that overlap ``span``."""
        ds = self.index._datasets[info.path]
        try:
            table = _dataset.read_rows(ds, info.path.name, tags, span)
            count = self._count
            _dataset.add_chunks(
                ds, table, tags, chunks, quality, self.index.good_quality, self.index.status_words,
                count, count is None or span is None or count[0] <= span[0],
            )  # fmt: skip
        except _dataset.DatasetError as exc:
            raise ExportError(str(exc)) from exc

    def _read_long(self, info, tags, chunks, quality, span=None) -> None:
        src = info.source
        cols = long_columns(src)
        if info.fmt == "parquet":
            try:
                time_filters = self._time_filter(info, span)
                if time_filters is None:
                    return
                tag_type = pq.read_schema(info.path).field(src.tag_column).type
                textual = pa.types.is_string(tag_type) or pa.types.is_large_string(tag_type)
                # tags stored as numbers are matched as text (as the index names them)
                filters = [(src.tag_column, "in", list(tags))] if textual else []
                rows = None
                if info.timestamp_typed and textual:  # rows numbered as in the file
                    table, rows = read_parquet_rows(info, cols, span if time_filters else None,
                                                    tags)  # fmt: skip
                else:
                    table = pq.read_table(
                        info.path, columns=cols, filters=(filters + time_filters) or None
                    )
            except (pa.ArrowException, OSError) as exc:
                raise ExportError(f"{info.path}: cannot be read ({exc})") from exc
            frame = table.to_pandas()
            rows = np.arange(len(frame)) if rows is None else rows
            label = "row"
            malformed = np.zeros(len(frame), dtype=bool)
            if not textual:
                keep = frame[src.tag_column].map(as_text).isin(tags).to_numpy()
                frame, rows, malformed = frame[keep], rows[keep], malformed[keep]
                frame[src.tag_column] = frame[src.tag_column].map(as_text)
        else:
            frame, rows, malformed = read_csv_rows(info.path, src, cols)
            label = "line"
            frame[src.tag_column] = frame[src.tag_column].str.strip()
            keep = frame[src.tag_column].isin(tags).to_numpy()
            frame, rows, malformed = frame[keep], rows[keep], malformed[keep]
        frame = frame.reset_index(drop=True)
        times, ok = self._times(info, frame[src.time_column], rows, label, frame[src.tag_column])
        tag_col = frame[src.tag_column].astype(str).to_numpy()
        for tag in tags:
            sel = tag_col == tag
            qual = frame[src.quality_column][sel] if src.quality_column else None
            add_chunk(
                tag, info, frame[src.value_column][sel], times[sel], ok[sel], rows[sel],
                qual, chunks, quality, self.index.good_quality, label, span, malformed[sel],
                self.index.status_words.get(tag), self._count,
            )  # fmt: skip


class _Later:
    """A wide file's column of numbers for :func:`add_numbers`, made into its chunk when its
    tag is first asked for (``args`` are add_numbers' arguments but the chunks)."""

    __slots__ = ("args",)

    def __init__(self, args: tuple):
        self.args = args


def _made(parts: list) -> list:
    """A tag's chunks with every :class:`_Later` column made, in file order (a new list: the
    made arrays belong to the caller alone)."""
    out = []
    for part in parts:
        if isinstance(part, _Later):
            tag = part.args[0]
            made = {tag: []}  # add_numbers appends the column's chunk (none: nothing sampled)
            add_numbers(*part.args[:6], made, *part.args[6:])
            out.extend(made[tag])
        else:
            out.append(part)
    return out


class LazySeries(Mapping):
    """The series of a read with ``lazy=True``: a mapping of tag to :class:`TagSeries` whose
    series of wide Parquet columns are made when first asked for and kept until
    :meth:`forget`. Each is what the eager read gives, with the same counts."""

    def __init__(self):
        self.ready: dict[str, TagSeries] = {}
        self.pending: dict[str, tuple[list, TagQuality]] = {}

    def __getitem__(self, tag: str) -> TagSeries:
        if tag not in self.ready:
            parts, quality = self.pending.pop(tag)  # KeyError: not read
            self.ready[tag] = assemble(tag, _made(parts), quality)
        return self.ready[tag]

    def __setitem__(self, tag: str, series: TagSeries) -> None:
        self.ready[tag] = series

    def __contains__(self, tag) -> bool:
        return tag in self.ready or tag in self.pending

    def __iter__(self) -> Iterator[str]:
        return iter([*self.ready, *self.pending])

    def __len__(self) -> int:
        return len(self.ready) + len(self.pending)

    def forget(self, tags) -> None:
        """Drop these tags' series (made or not) to free their memory."""
        for tag in tags:
            self.ready.pop(tag, None)
            self.pending.pop(tag, None)
