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

import csv
import glob
import gzip
import io
from collections import OrderedDict
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from . import dataset as _dataset
from .config import ExportSource, PlantFile
from .timestamps import parse_times


class ExportError(ValueError):
    """An export file that cannot be read; the message names the file and the column."""


#: Failures of a reading library on a malformed file that no check above foresaw: the file is
#: reported as not read (with the library's words) and the rest of the plant goes on.
_FILE_FAULTS = (
    ValueError, TypeError, KeyError, IndexError, OverflowError, UnicodeError, OSError,
    EOFError, csv.Error, pa.ArrowException,
)  # fmt: skip


def _unexpected(path, exc: BaseException) -> str:
    return f"{path}: cannot be read ({type(exc).__name__}: {exc})"


@dataclass
class TagQuality:
    """What the loader found for one tag (counts of samples, first place of each problem)."""

    tag: str
    samples: int = 0
    text_values: int = 0
    bad_quality: int = 0
    not_finite: int = 0
    bad_timestamps: int = 0
    duplicates: int = 0
    out_of_order: int = 0
    frozen: int = 0
    out_of_range: int = 0
    #: CSV rows with more or fewer fields than the header (a truncated or garbled line):
    #: every tag's value in such a row is a bad sample.
    malformed_rows: int = 0
    words: dict[str, int] = field(default_factory=dict)
    first_problem: dict[str, str] = field(default_factory=dict)

    def note(self, kind: str, where: str) -> None:
        """Remember the first place a problem of ``kind`` was seen."""
        self.first_problem.setdefault(kind, where)


@dataclass
class TagSeries:
    """One tag's samples: times [ns since epoch, UTC], raw values, bad flags."""

    tag: str
    times: np.ndarray
    values: np.ndarray
    bad: np.ndarray
    quality: TagQuality


@dataclass(frozen=True)
class _FileInfo:
    path: Path
    source: ExportSource
    fmt: str
    tags: frozenset[str]
    timestamp_typed: bool = False  # Parquet time column of a timestamp type (filterable)
    time_range: tuple[int, int] | None = None  # [ns] from the Parquet statistics


def _format_of(path: Path, source: ExportSource) -> str:
    if source.format:
        return source.format
    name = path.name.lower()
    if name.endswith(".parquet") or name.endswith(".pq"):
        return "parquet"
    if name.endswith(".csv") or name.endswith(".csv.gz") or name.endswith(".txt"):
        return "csv"
    raise ExportError(f"{path}: cannot tell the format from the name; set 'format' in [[exports]]")


def _csv_header(path: Path, source: ExportSource) -> list[str]:
    opener = gzip.open if path.name.lower().endswith(".gz") else open
    try:
        with opener(path, "rt", encoding=source.encoding, newline="") as fh:
            line = fh.readline()
    except UnicodeDecodeError as exc:
        raise ExportError(_encoding_message(path, source.encoding)) from exc
    except (OSError, EOFError, gzip.BadGzipFile) as exc:
        raise ExportError(f"{path}: cannot be read ({exc})") from exc
    line = line.lstrip("\ufeff").rstrip("\r\n")
    if not line:
        raise ExportError(f"{path}: empty file (no header line)")
    return [c.strip().strip('"') for c in line.split(source.delimiter)]


def _raw_bytes(path: Path) -> bytes:
    """The bytes of a file, uncompressed when its name ends in .gz."""
    if path.name.lower().endswith(".gz"):
        with gzip.open(path, "rb") as fh:
            return fh.read()
    return path.read_bytes()


def _encoding_message(path: Path, encoding: str) -> str:
    """Where a file stops being text in ``encoding``: its first undecodable line and byte."""
    try:
        data = _raw_bytes(path)
    except (OSError, EOFError, gzip.BadGzipFile) as exc:
        return f"{path}: cannot be read ({exc})"
    for number, raw in enumerate(data.split(b"\n"), start=1):
        try:
            raw.decode(encoding)
        except UnicodeDecodeError as exc:
            byte = raw[exc.start]
            return (
                f"{path} line {number}: not {encoding} text (byte 0x{byte:02x} at column "
                f"{exc.start + 1}; a Latin-1 or Windows-1252 character such as '°'?). Save "
                'the file as UTF-8, or set encoding = "latin-1" in its [[exports]] block'
            )
    return f"{path}: not {encoding} text; save it as UTF-8 or set encoding in [[exports]]"


def _check_unique(path: Path, names: list[str]) -> None:
    """A column named twice is ambiguous: which of the two holds the tag?"""
    seen: dict[str, int] = {}
    for i, name in enumerate(names, start=1):
        if name in seen:
            raise ExportError(
                f"{path}: column {name!r} appears twice (columns {seen[name]} and {i}); "
                "each tag and the time must have one column"
            )
        seen[name] = i


_ASCII_LIKE = {"utf8", "utf8sig", "latin1", "iso88591", "cp1252", "windows1252", "ascii"}
_BLANK = np.zeros(256, dtype=bool)
_BLANK[[9, 13, 32]] = True  # tab, carriage return, space: pandas skips lines of only these


def _record_layout(path: Path, source: ExportSource) -> tuple[np.ndarray, np.ndarray]:
    """Line number [-] and number of fields of every non-blank record of a CSV file.

    The first record is the header. Quote-free files in an ASCII-compatible encoding are
    counted with numpy; others through :mod:`csv`, which follows quoting.
    """
    data = _raw_bytes(path)
    enc = source.encoding.lower().replace("-", "").replace("_", "")
    delim = source.delimiter.encode(source.encoding)
    simple = (
        enc in _ASCII_LIKE
        and len(delim) == 1
        and b'"' not in data
        and data.count(b"\r") == data.count(b"\r\n")
    )
    if simple:
        buf = np.frombuffer(data, dtype=np.uint8)
        nl = np.flatnonzero(buf == 10)
        starts = np.concatenate(([0], nl + 1))
        ends = np.concatenate((nl, [len(buf)]))
        delims = np.concatenate(([0], np.cumsum(buf == delim[0])))
        content = np.concatenate(([0], np.cumsum(~_BLANK[buf])))
        keep = content[ends] > content[starts]
        lines = np.flatnonzero(keep) + 1
        return lines, (delims[ends] - delims[starts] + 1)[keep]
    text = data.decode(source.encoding)
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=source.delimiter)
    lines, fields, line = [], [], 1
    for record in reader:
        if any(c.strip() for c in record) or len(record) > 1:
            lines.append(line)
            fields.append(len(record))
        line = reader.line_num + 1
    return np.array(lines, dtype=np.int64), np.array(fields, dtype=np.int64)


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
        self.files: list[_FileInfo] = []
        #: Files that could not be read at all: path -> message.
        self.file_problems: dict[str, str] = {}
        #: Files read only in part, and why (long-layout rows without a tag name).
        self.partly_read: dict[str, str] = {}
        self._by_tag: dict[str, list[_FileInfo]] = {}
        self._known: frozenset[str] | None = None
        self._time_cache: OrderedDict[Path, tuple[np.ndarray, np.ndarray]] = OrderedDict()
        self._datasets: dict[Path, _dataset.Dataset] = {}  # folder -> its dataset
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
                try:
                    info = self._inspect(path, source)
                except ExportError as exc:
                    self.file_problems[str(path)] = str(exc)
                    continue
                except _FILE_FAULTS as exc:  # the last line of defence: one file, not the run
                    self.file_problems[str(path)] = _unexpected(path, exc)
                    continue
                self.files.append(info)
                for tag in info.tags:
                    self._by_tag.setdefault(tag, []).append(info)

    # -- discovery ---------------------------------------------------------------------------
    def _inspect(self, path: Path, source: ExportSource) -> _FileInfo:
        fmt = _format_of(path, source)
        if source.layout == "wide":
            if fmt == "parquet":
                try:
                    names = pq.read_schema(path).names
                except (pa.ArrowException, OSError) as exc:
                    raise ExportError(f"{path}: not a readable Parquet file ({exc})") from exc
            else:
                names = _csv_header(path, source)
            _check_unique(path, names)
            if source.time_column not in names:
                raise ExportError(
                    f"{path}: no time column {source.time_column!r} (columns: "
                    f"{', '.join(names[:8])}{', ...' if len(names) > 8 else ''})"
                )
            tags = frozenset(n for n in names if n != source.time_column)
        else:
            needed = [source.tag_column, source.time_column, source.value_column]
            if source.quality_column:
                needed.append(source.quality_column)
            if fmt == "parquet":
                try:
                    names = pq.read_schema(path).names
                    _check_unique(path, [n for n in names if n in needed])
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
                names = _csv_header(path, source)
                _check_unique(path, [n for n in names if n in needed])
                missing = [c for c in needed if c not in names]
                if missing:
                    raise ExportError(
                        f"{path}: missing column(s) {', '.join(missing)} (found: "
                        f"{', '.join(names)})"
                    )
                frame = self._read_csv(path, source, [source.tag_column])
                stripped = frame[source.tag_column].str.strip()
                tags = frozenset(stripped.dropna().unique())
                blank = (stripped.isna() | (stripped == "")).to_numpy()
                self._untagged(path, source, blank, "data row", 1)
        typed, time_range = False, None
        if fmt == "parquet":
            try:
                field_type = pq.read_schema(path).field(source.time_column).type
                typed = pa.types.is_timestamp(field_type) and field_type.tz is not None
                if typed:
                    time_range = _parquet_time_range(path, source.time_column)
            except (KeyError, pa.ArrowException, OSError):
                typed = False
        return _FileInfo(path, source, fmt, tags, typed, time_range)

    def _untagged(self, path: Path, source, blank: np.ndarray, label: str, first: int) -> None:
        """Note the rows of a long file that name no tag: they belong to no pump and are not
        read, which the report says rather than dropping them without a word."""
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
            info = _FileInfo(root / folder, source, "dataset", frozenset(tags))
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

    # -- reading -----------------------------------------------------------------------------
    def _read_csv(self, path: Path, source: ExportSource, columns: list[str]) -> pd.DataFrame:
        try:
            return pd.read_csv(
                path,
                usecols=lambda c: c.strip().strip('"').lstrip("\ufeff") in columns,
                index_col=False,  # never take a row with extra fields as an index
                dtype=str,
                keep_default_na=False,
                na_values=[""],
                sep=source.delimiter,
                encoding=source.encoding,
                skipinitialspace=True,
            ).rename(columns=lambda c: c.strip().strip('"').lstrip("\ufeff"))
        except UnicodeDecodeError as exc:
            raise ExportError(_encoding_message(path, source.encoding)) from exc
        except (pd.errors.ParserError, OSError, EOFError, ValueError) as exc:
            raise ExportError(f"{path}: cannot be read as CSV ({exc})") from exc

    def _read_csv_rows(
        self, path: Path, source: ExportSource, columns: list[str]
    ) -> tuple[pd.DataFrame, np.ndarray, np.ndarray]:
        """Read CSV columns with the line number of each row and whether the row is malformed
        (more or fewer fields than the header: a truncated copy or a garbled line)."""
        frame = self._read_csv(path, source, columns)
        try:
            lines, fields = _record_layout(path, source)
        except (csv.Error, UnicodeDecodeError, OSError, EOFError, ValueError) as exc:
            raise ExportError(f"{path}: cannot be read as CSV ({exc})") from exc
        if len(lines) != len(frame) + 1:
            raise ExportError(
                f"{path}: {len(frame)} rows read but {max(len(lines) - 1, 0)} data lines "
                "counted; check the quoting and the line endings of the file"
            )
        malformed = fields[1:] != fields[0]
        return frame, lines[1:], malformed

    def _wide_times(self, info: _FileInfo, raw: pd.Series) -> tuple[np.ndarray, np.ndarray]:
        cached = self._time_cache.get(info.path)
        if cached is None:
            cached = parse_times(raw, self.timezone)
            self._time_cache[info.path] = cached
            while len(self._time_cache) > 64:
                self._time_cache.popitem(last=False)
        return cached

    def read(
        self, tags: list[str], span: tuple[int, int] | None = None
    ) -> tuple[dict[str, TagSeries], dict[str, str]]:
        """Read ``tags`` from every file that holds them.

        Parameters
        ----------
        tags : list of str
            Tag names.
        span : (int, int), optional
            Keep only samples with ``span[0] <= time < span[1]`` [ns since epoch, UTC];
            time-zone-aware Parquet files are filtered while reading. Samples outside the span
            are not counted in the quality figures.

        Returns
        -------
        (series, problems)
            One :class:`TagSeries` per tag found, and file problems met while reading
            (path -> message); a tag whose every file failed is absent from ``series``.
        """
        wanted = [t for t in dict.fromkeys(tags) if t in self._by_tag]
        chunks: dict[str, list[tuple]] = {t: [] for t in wanted}
        quality = {t: TagQuality(t) for t in wanted}
        problems: dict[str, str] = {}
        files: dict[Path, tuple[_FileInfo, list[str]]] = {}
        for tag in wanted:
            for info in self._by_tag[tag]:
                files.setdefault(info.path, (info, []))[1].append(tag)
        # In the order of the index, so that "the last in file order" of a tag's duplicate
        # times never depends on which other tags are read with it.
        position = {f.path: i for i, f in enumerate(self.files)}
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
            except _FILE_FAULTS as exc:  # the last line of defence: one file, not the run
                problems[str(info.path)] = _unexpected(info.path, exc)
        series = {}
        failed = set(problems)
        for tag in wanted:
            if chunks[tag] or any(str(f.path) not in failed for f in self._by_tag[tag]):
                # a tag with no sample in the span is an empty series: no data, not an error
                series[tag] = _assemble(tag, chunks[tag], quality[tag])
        return series, problems

    def _time_filter(self, info: _FileInfo, span) -> list | None:
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
        lo = pa.scalar(span[0], type=pa.timestamp("ns", tz="UTC"))
        hi = pa.scalar(span[1], type=pa.timestamp("ns", tz="UTC"))
        return [(col, ">=", lo), (col, "<", hi)]

    def _read_wide(self, info, tags, chunks, quality, span=None) -> None:
        src = info.source
        cols = [src.time_column, *tags]
        if info.fmt == "parquet":
            filters = self._time_filter(info, span)
            if filters is None:
                return
            try:
                table = pq.read_table(info.path, columns=cols, filters=filters or None)
            except (pa.ArrowException, OSError) as exc:
                raise ExportError(f"{info.path}: cannot be read ({exc})") from exc
            if info.timestamp_typed:
                self._wide_arrow(info, table, tags, chunks, quality, span)
                return
            frame = table.to_pandas()
            rows = np.arange(len(frame))
            malformed = np.zeros(len(frame), dtype=bool)
        else:
            frame, rows, malformed = self._read_csv_rows(info.path, src, cols)
        if info.fmt == "parquet" and span is not None and info.timestamp_typed:
            times, ok = parse_times(frame[src.time_column], self.timezone)
        else:
            times, ok = self._wide_times(info, frame[src.time_column])
        label = "row" if info.fmt == "parquet" else "line"
        for tag in tags:
            raw = frame[tag]
            # an empty cell is "not sampled"; a malformed row is a bad sample of every tag
            present = raw.notna().to_numpy() | malformed
            _add_chunk(
                tag, info, raw[present], times[present], ok[present], rows[present],
                None, chunks, quality, self.good_quality, label, span, malformed[present],
            )  # fmt: skip

    def _wide_arrow(self, info, table: pa.Table, tags, chunks, quality, span) -> None:
        """Fast path: a wide Parquet file with a time-zone-aware time column, no pandas."""
        col = table.column(info.source.time_column).cast(pa.timestamp("ns", tz="UTC"))
        times = col.to_numpy(zero_copy_only=False).view(np.int64)
        ok = ~np.asarray(col.is_null().to_numpy(zero_copy_only=False), dtype=bool)
        rows = np.arange(len(times))
        for tag in tags:
            column = table.column(tag)
            if pa.types.is_floating(column.type) or pa.types.is_integer(column.type):
                raw = column.to_numpy(zero_copy_only=False).astype(np.float64, copy=False)
                present = ~np.isnan(raw)  # a null (or NaN) cell: not sampled at this instant
            else:
                raw = column.to_pandas()
                present = raw.notna().to_numpy()
            _add_chunk(
                tag, info, raw[present], times[present], ok[present], rows[present],
                None, chunks, quality, self.good_quality, "row", span,
            )  # fmt: skip

    def _read_dataset(self, info, tags, chunks, quality, span=None) -> None:
        """One folder of an ingested dataset: only the months that overlap ``span``."""
        ds = self._datasets[info.path]
        try:
            table = _dataset.read_rows(ds, info.path.name, tags, span)
            _dataset.add_chunks(ds, table, tags, chunks, quality, self.good_quality)
        except _dataset.DatasetError as exc:
            raise ExportError(str(exc)) from exc

    def _read_long(self, info, tags, chunks, quality, span=None) -> None:
        src = info.source
        cols = [src.tag_column, src.time_column, src.value_column]
        if src.quality_column:
            cols.append(src.quality_column)
        if info.fmt == "parquet":
            try:
                time_filters = self._time_filter(info, span)
                if time_filters is None:
                    return
                filters = [(src.tag_column, "in", list(tags)), *time_filters]
                table = pq.read_table(info.path, columns=cols, filters=filters)
            except (pa.ArrowException, OSError) as exc:
                raise ExportError(f"{info.path}: cannot be read ({exc})") from exc
            frame = table.to_pandas()
            rows = np.arange(len(frame))
            label = "row"
            malformed = np.zeros(len(frame), dtype=bool)
        else:
            frame, rows, malformed = self._read_csv_rows(info.path, src, cols)
            label = "line"
            frame[src.tag_column] = frame[src.tag_column].str.strip()
            keep = frame[src.tag_column].isin(tags).to_numpy()
            frame, rows, malformed = frame[keep], rows[keep], malformed[keep]
        frame = frame.reset_index(drop=True)
        times, ok = parse_times(frame[src.time_column], self.timezone, frame[src.tag_column])
        tag_col = frame[src.tag_column].astype(str).to_numpy()
        for tag in tags:
            sel = tag_col == tag
            qual = frame[src.quality_column][sel] if src.quality_column else None
            _add_chunk(
                tag, info, frame[src.value_column][sel], times[sel], ok[sel], rows[sel],
                qual, chunks, quality, self.good_quality, label, span, malformed[sel],
            )  # fmt: skip


def _as_text(value) -> str | None:
    """A cell of any type as text (bytes decoded, undecodable bytes replaced)."""
    if value is None or value is pd.NA or (isinstance(value, float) and np.isnan(value)):
        return None
    if isinstance(value, bytes | bytearray):
        return bytes(value).decode("utf-8", errors="replace")
    return str(value)


def _add_chunk(
    tag, info, raw, times, ok, rows, qual, chunks, quality, good, label="line", span=None,
    malformed=None,
):  # fmt: skip
    """Parse one file's values of one tag into numbers and bad flags; count the problems."""
    q: TagQuality = quality[tag]
    if malformed is None:
        malformed = np.zeros(len(raw), dtype=bool)
    if span is not None and len(raw):
        inside = ~ok | ((times >= span[0]) & (times < span[1]))
        if not inside.all():
            raw, times, ok, rows = raw[inside], times[inside], ok[inside], rows[inside]
            malformed = malformed[inside]
            if qual is not None:
                qual = qual[inside]
    if len(raw) == 0:
        return
    where = f"{info.path} {label} "
    if not ok.all():
        q.bad_timestamps += int((~ok).sum())
        q.note("bad timestamp", where + str(rows[~ok][0]))
    raw = raw[ok] if not ok.all() else raw
    times, rows, malformed = times[ok], rows[ok], malformed[ok]
    if qual is not None:
        qual = qual[ok]
    text = None
    if isinstance(raw, np.ndarray):
        values = raw.astype(np.float64, copy=False)
        is_text = np.zeros(len(values), dtype=bool)
    elif raw.dtype.kind in "fiub":  # numbers, and booleans (a run status) as 1 and 0
        values = raw.to_numpy(dtype=np.float64, na_value=np.nan)
        is_text = np.zeros(len(values), dtype=bool)
    else:
        try:
            text = raw.astype("string").str.strip()
        except (UnicodeDecodeError, TypeError, ValueError):
            text = pd.Series([_as_text(v) for v in raw], dtype="string").str.strip()
        if info.source.decimal != ".":
            text = text.str.replace(info.source.decimal, ".", regex=False)
        values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=np.float64, na_value=np.nan)
        is_text = np.isnan(values) & text.notna().to_numpy() & ~malformed
    bad_q = np.zeros(len(values), dtype=bool)
    if qual is not None:
        words = qual.astype("string").str.strip().str.lower().fillna("")
        bad_q = (~words.isin(good) & (words != "")).to_numpy()
    bad = count_samples(q, where, times, values, is_text, text, bad_q, rows, malformed)
    chunks[tag].append((times, values, bad))


def count_samples(q, where, times, values, is_text, text, bad_q, rows, malformed) -> np.ndarray:
    """Count one file's samples of one tag into ``q`` and return which are bad.

    The rules every reader shares (the raw exports here, the ingested dataset in
    :mod:`screening.dataset`): text values (with their words), rows with a wrong number of
    fields, missing or infinite values, bad quality words, samples out of time order; each
    kind's first place is noted as ``where`` plus the row. ``times`` [ns] hold only samples
    with a valid timestamp; ``text`` may be None when no value is text.
    """
    if is_text.any():
        q.text_values += int(is_text.sum())
        q.note("text value", where + str(rows[is_text][0]))
        for word, count in pd.Series(text[is_text]).value_counts().items():
            q.words[str(word)] = q.words.get(str(word), 0) + int(count)
    if malformed.any():
        q.malformed_rows += int(malformed.sum())
        q.note("row with a wrong number of fields", where + str(rows[malformed][0]))
    not_finite = ~np.isfinite(values) & ~is_text & ~malformed
    if not_finite.any():
        q.not_finite += int(not_finite.sum())
        q.note("missing or infinite value", where + str(rows[not_finite][0]))
    if bad_q.any():
        q.bad_quality += int(bad_q.sum())
        q.note("bad quality", where + str(rows[bad_q][0]))
    back = np.diff(times) < 0
    if back.any():
        q.out_of_order += int(back.sum())
        q.note("out of order", where + str(rows[1:][back][0]))
    q.samples += len(values)
    return is_text | not_finite | malformed | bad_q


def _parquet_time_range(path: Path, column: str) -> tuple[int, int] | None:
    """First and last time [ns, UTC] of a Parquet file from its statistics, if it has them."""
    meta = pq.ParquetFile(path).metadata
    idx = meta.schema.to_arrow_schema().get_field_index(column)
    lo = hi = None
    for i in range(meta.num_row_groups):
        stats = meta.row_group(i).column(idx).statistics
        if stats is None or not stats.has_min_max:
            return None
        a, b = pd.Timestamp(stats.min), pd.Timestamp(stats.max)
        if a.tzinfo is None:
            a, b = a.tz_localize("UTC"), b.tz_localize("UTC")
        lo = a.value if lo is None else min(lo, a.value)
        hi = b.value if hi is None else max(hi, b.value)
    return None if lo is None else (lo, hi)


def _assemble(tag: str, parts: list[tuple], q: TagQuality) -> TagSeries:
    """Merge a tag's chunks: sort by time (stable) and keep the last of duplicate times."""
    if len(parts) == 1:
        times, values, bad = parts[0]
    elif parts:
        times = np.concatenate([p[0] for p in parts])
        values = np.concatenate([p[1] for p in parts])
        bad = np.concatenate([p[2] for p in parts])
    else:
        times = np.zeros(0, np.int64)
        values = np.zeros(0)
        bad = np.zeros(0, bool)
    if len(times) > 1 and not np.all(times[1:] > times[:-1]):
        if np.any(times[1:] < times[:-1]):
            order = np.argsort(times, kind="stable")
            times, values, bad = times[order], values[order], bad[order]
        last = np.append(times[1:] != times[:-1], True)
        dup = int((~last).sum())
        if dup:
            # Several samples at one instant: the last in file order stands (a historian's
            # later correction); the others are counted as duplicates.
            q.duplicates += dup
            times, values, bad = times[last], values[last], bad[last]
    return TagSeries(tag, times, values, bad, q)
