"""Readers of historian exports: CSV (plain or gzip) and Parquet, wide and long layouts.

The loader turns files into one time series per tag: sorted unique UTC times, the raw numbers
(in the tag's own unit; the calculator converts to SI), and a bad flag per sample. Nothing is
dropped silently: text in a numeric column, a bad quality word, a non-finite number, an
unplaceable timestamp, a duplicate or out-of-order row are all counted per tag in a
:class:`TagQuality` together with the first file and row where each was seen. Values that are
bad stay in the series as bad samples, so their time is counted as bad data.

Only the tags and the time span asked for are read: wide files by column, long Parquet files
with a filter on the tag column. The index of which file holds which tag is built once.
"""

from __future__ import annotations

import glob
from collections.abc import Mapping
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from screening.inputs import dataset as _dataset
from screening.inputs.config import ExportSource, PlantFile
from screening.inputs.export_files import (
    FileInfo,
    check_unique,
    csv_header,
    format_of,
    long_columns,
    not_regular,
    parquet_time_range,
    read_csv_rows,
)
from screening.inputs.export_reader import TagReader
from screening.inputs.tagdata import FILE_FAULTS, ExportError, TagSeries, status_words, unexpected


class ExportIndex:
    """The export files of a plant and the tags each holds; reads tags on demand.

    Parameters
    ----------
    plant : PlantFile
        Validated plant file.
    base : Path
        Folder the export globs are relative to.
    """

    def __init__(self, plant: PlantFile, base: Path):
        self.plant = plant
        self.timezone = plant.site.timezone
        self.good_quality = {q.strip().lower() for q in plant.data.good_quality}
        self.files: list[FileInfo] = []
        #: Files that could not be read at all: path -> message.
        self.file_problems: dict[str, str] = {}
        #: Files read only in part, and why (long-layout rows without a tag name).
        self.partly_read: dict[str, str] = {}
        self._by_tag: dict[str, list[FileInfo]] = {}
        self._known: frozenset[str] | None = None
        self._datasets: dict[Path, _dataset.Dataset] = {}  # folder -> its dataset
        #: Run-status tags and the words each may hold (tag -> word -> 1 or 0); see
        #: :func:`open_exports`.
        self.status_words: dict[str, dict[str, float]] = {}
        self._reader = TagReader(self)
        for source in plant.exports:
            if source.layout == "dataset":
                self._add_dataset(source, base)
                continue
            pattern = source.files
            if not Path(pattern).is_absolute():
                pattern = str(base / pattern)
            matches = sorted(glob.glob(pattern, recursive=True))
            if not matches:
                self.file_problems[pattern] = "no file matches this pattern"
            for name in matches:
                path = Path(name)
                special = not_regular(path)
                if special:
                    self.file_problems[str(path)] = special
                    continue
                try:
                    info = self._inspect(path, source)
                except ExportError as exc:
                    self.file_problems[str(path)] = str(exc)
                    continue
                except FILE_FAULTS as exc:  # the last line of defence: one file, not the run
                    self.file_problems[str(path)] = unexpected(path, exc)
                    continue
                self.files.append(info)
                for tag in info.tags:
                    self._by_tag.setdefault(tag, []).append(info)

    # -- discovery ---------------------------------------------------------------------------
    def _inspect(self, path: Path, source: ExportSource) -> FileInfo:
        fmt = format_of(path, source)
        pf = None  # the Parquet file opened once: its schema, then its time statistics
        if source.layout == "wide":
            if fmt == "parquet":
                try:
                    pf = pq.ParquetFile(path)
                    names = pf.schema_arrow.names
                except (pa.ArrowException, OSError) as exc:
                    raise ExportError(f"{path}: not a readable Parquet file ({exc})") from exc
            else:
                names = csv_header(path, source)
            check_unique(path, names)
            if source.time_column not in names:
                raise ExportError(
                    f"{path}: no time column {source.time_column!r} (columns: "
                    f"{', '.join(names[:8])}{', ...' if len(names) > 8 else ''})"
                )
            tags = frozenset(n for n in names if n != source.time_column)
        else:
            needed = long_columns(source)
            if fmt == "parquet":
                try:
                    pf = pq.ParquetFile(path)
                    names = pf.schema_arrow.names
                    check_unique(path, [n for n in names if n in needed])
                    missing = [c for c in needed if c not in names]
                    if missing:
                        raise ExportError(f"{path}: missing column(s) {', '.join(missing)}")
                    col = pq.read_table(path, columns=[source.tag_column]).column(0)
                    tags = frozenset(str(t) for t in pc.unique(col).to_pylist() if t is not None)
                    blank = pc.is_null(col)
                    if pa.types.is_string(col.type) or pa.types.is_large_string(col.type):
                        empty = pc.equal(pc.utf8_trim_whitespace(col), "")
                        blank = pc.or_(blank, pc.fill_null(empty, False))
                    self._untagged(path, source, blank.to_numpy(zero_copy_only=False), "row", 0)
                except (pa.ArrowException, OSError) as exc:
                    raise ExportError(f"{path}: not a readable Parquet file ({exc})") from exc
            else:
                names = csv_header(path, source)
                check_unique(path, [n for n in names if n in needed])
                missing = [c for c in needed if c not in names]
                if missing:
                    raise ExportError(
                        f"{path}: missing column(s) {', '.join(missing)} (found: "
                        f"{', '.join(names)})"
                    )
                frame, _, _ = read_csv_rows(path, source, [source.tag_column])
                stripped = frame[source.tag_column].str.strip()
                tags = frozenset(stripped.dropna().unique())
                blank = (stripped.isna() | (stripped == "")).to_numpy()
                self._untagged(path, source, blank, "data row", 1)
        typed, time_range, unit, zone = False, None, "ns", None
        if fmt == "parquet":
            try:
                pf = pf or pq.ParquetFile(path)
                field_type = pf.schema_arrow.field(source.time_column).type
                typed = pa.types.is_timestamp(field_type) and field_type.tz is not None
                if typed:
                    unit, zone = field_type.unit, field_type.tz
                    time_range = parquet_time_range(path, source.time_column, pf.metadata)
            except (KeyError, pa.ArrowException, OSError):
                typed = False
        return FileInfo(path, source, fmt, tags, typed, time_range, unit, zone)

    def _untagged(self, path: Path, source, blank: np.ndarray, label: str, first: int) -> None:
        """Note the rows of a long file that name no tag (or could not be read: NUL bytes,
        an over-long line): they belong to no pump and are not read, which the report says
        rather than dropping them without a word."""
        n = int(np.count_nonzero(blank))
        if n:
            at = int(np.flatnonzero(blank)[0]) + first
            self.partly_read[str(path)] = (
                f"{path}: {n} row(s) without a tag name in column {source.tag_column!r} (first at "
                f"{label} {at}); they belong to no tag and are not read"
            )

    def _add_dataset(self, source: ExportSource, base: Path) -> None:
        """Index a dataset written by ``pumpscreen ingest``: one entry per folder of tags."""
        root = Path(source.path)
        root = root if root.is_absolute() else base / root
        try:
            ds = _dataset.open_dataset(root)
        except _dataset.DatasetError as exc:
            self.file_problems[str(root)] = str(exc)
            return
        self.file_problems.update(ds.files_not_read)  # as the raw exports would report them
        for folder, tags in sorted(ds.folders().items()):
            info = FileInfo(root / folder, source, "dataset", frozenset(tags))
            self._datasets[info.path] = ds
            self.files.append(info)
            for tag in tags:
                self._by_tag.setdefault(tag, []).append(info)

    def known_tags(self) -> frozenset[str]:
        """Every tag found in any readable export file."""
        if self._known is None:
            self._known = frozenset(self._by_tag)
        return self._known

    def files_for(self, tag: str) -> list[Path]:
        """The files that hold ``tag`` (for a dataset: the export files it was ingested from)."""
        out = []
        for f in self._by_tag.get(tag, []):
            out += self._datasets[f.path].tag_files.get(tag, []) if f.fmt == "dataset" else [f.path]
        return out

    def file_infos(self, tag: str) -> list[FileInfo]:
        """The indexed files (or dataset folders) that hold ``tag``."""
        return list(self._by_tag.get(tag, []))

    def row_count(self, info: FileInfo) -> int:
        """Rows of a Parquet file from its footer (cached)."""
        counts = self.__dict__.setdefault("_rows", {})
        if info.path not in counts:
            counts[info.path] = pq.ParquetFile(info.path).metadata.num_rows
        return counts[info.path]

    def dataset_rows(self, info: FileInfo, start_ns: int, end_ns: int) -> float:
        """Rows of an ingested dataset's folder in the window [ns], from its months' footers
        (each month's rows prorated by its overlap with the window)."""
        total = 0.0
        for path, unplaced in _dataset.partitions(info.path, (start_ns, end_ns)):
            if unplaced:
                continue
            first = np.datetime64(path.parent.name.split("=", 1)[1], "M")
            lo, hi = (m.astype("datetime64[ns]").astype(np.int64) for m in (first, first + 1))
            share = max(0, min(hi, end_ns) - max(lo, start_ns)) / (hi - lo)
            total += self.row_count(FileInfo(path, info.source, "parquet", info.tags)) * share
        return total

    def max_interval_of(self, tag: str, override: str | None = None) -> float | None:
        """How ``tag`` is drawn between samples, from its export family (``[[exports]]
        reconstruction``) or ``override`` ("step" or "linear", the register's): None for steps,
        else the longest interval between stored points [s] (the family's ``max_interval``,
        else ``[data] max_interval``). A tag found in families that disagree needs the
        register's word.
        """
        default = self.plant.data.max_interval
        found = {
            (f.source.reconstruction, f.source.max_interval or default)
            for f in self._by_tag.get(tag, [])
        }
        if override is not None:
            intervals = {m for r, m in found if r == "linear"} or {default}
            return None if override == "step" else max(intervals)
        if len(found) > 1:
            files = ", ".join(str(f.path) for f in self._by_tag[tag][:4])
            raise ExportError(
                f"tag {tag} is in export families drawn differently ({files}): give its "
                "reconstruction ('step' or 'linear') in the register's reconstruction column"
            )
        if not found:
            return None
        how, interval = found.pop()
        return interval if how == "linear" else None

    def any_linear(self) -> bool:
        """Whether any export family is a compressed record drawn by lines."""
        return any(s.reconstruction == "linear" for s in self.plant.exports)

    def data_span(self) -> tuple[int, int] | None:
        """First and last placed sample time of all export files [ns, UTC], or None when they
        hold none. Reads every file's time column (or the Parquet statistics): for the message
        of a window without samples, not for the scan."""
        tags = sorted(self._by_tag)
        series, _ = self.read(tags)
        times = [s.times for s in series.values() if len(s.times)]
        if not times:
            return None
        return int(min(t[0] for t in times)), int(max(t[-1] for t in times))

    def read(
        self, tags: list[str], span: tuple[int, int] | None = None, count=None,
        lazy: bool = False,
    ) -> tuple[Mapping[str, TagSeries], dict[str, str]]:  # fmt: skip
        """Read ``tags`` from every file that holds them (see :meth:`TagReader.read`)."""
        return self._reader.read(tags, span, count, lazy)


def open_exports(plant) -> ExportIndex:
    """The export index of a :class:`~screening.inputs.plant.Plant`, knowing its run-status
    tags: their words (on/off, run/stop, true/false, yes/no, ... and the plant's own
    ``[running] on_words`` / ``off_words``) are read as 1 and 0."""
    index = ExportIndex(plant.settings, plant.base)
    running = plant.settings.running
    words = status_words(running.on_words, running.off_words)
    for pump in plant.pumps.values():
        if pump.run is not None:
            index.status_words[pump.run.tag] = words
    return index
